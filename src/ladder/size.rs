//! Sizing search: stage count and stage capacitance for a terminal voltage, load, ripple limit
//! and drive, every returned design simulated and checked against every limit.
//!
//! For each stage count from the smallest that can reach the target, the impulse-model drop
//! and ripple (see `closed`) give the least capacitance that leaves the required headroom;
//! candidates from there upward (the offered values, or a continuous value rounded up to three
//! significant figures and raised by the simulated shortfall) are simulated until one meets
//! every limit. Designs are ranked by stored energy (the safety-relevant figure, docs/practice.md
//! §4.3), then by stage count.

use super::assemble::{loaded_output, simulate};
use super::error::LadderError;
use super::params::{
    DiodeParams, LadderParams, MAX_STAGES, Topology, check_non_negative, check_positive,
};
use super::sim::SimControls;
use serde::Serialize;

/// What the stack must deliver, and the limits a design must meet.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SizeTarget {
    pub topology: Topology,
    /// Cycle-mean terminal voltage required at load, V.
    pub terminal_v: f64,
    pub load_current_a: f64,
    /// Largest peak-to-peak ripple allowed at load, V.
    pub ripple_limit_pp_v: f64,
    pub drive_peak_v: f64,
    pub drive_frequency_hz: f64,
    /// Capacitances on offer; empty = any value (rounded up to three significant figures).
    pub capacitor_values_f: Vec<f64>,
    /// Column gradient limit, V/m: gives the stack height needed for the no-load voltage.
    pub gradient_limit_v_per_m: Option<f64>,
    /// Largest working voltage allowed on a stage capacitor, V.
    pub capacitor_rating_v: Option<f64>,
    /// Largest peak inverse voltage allowed on a rectifier, V.
    pub diode_piv_rating_v: Option<f64>,
    /// Stray capacitance to earth on every node, F (0 for none).
    pub stray_capacitance_f: f64,
    /// Rectifier model; None = near-ideal, scaled to each candidate.
    pub diode: Option<DiodeParams>,
    /// Largest stage count searched; None = 2·n_min + 4.
    pub max_stages: Option<usize>,
    pub controls: SimControls,
}

/// A design that met every limit in simulation.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SizedDesign {
    /// 1 = least stored energy.
    pub rank: usize,
    pub topology: Topology,
    pub stages: usize,
    pub capacitance_f: f64,
    pub output_at_load_v: f64,
    pub no_load_v: f64,
    pub drop_v: f64,
    pub ripple_pp_v: f64,
    pub stored_energy_j: f64,
    /// No-load voltage over the gradient limit, m.
    pub stack_height_m: Option<f64>,
    pub capacitor_max_v: f64,
    pub diode_piv_v: f64,
    pub diode_peak_current_a: f64,
    pub diode_mean_current_a: f64,
    /// The simulated parameters, to re-run the design.
    pub params: LadderParams,
}

const TRIES: usize = 8;

/// Searches stage counts and capacitances; returns the feasible designs, best first.
pub fn size(target: &SizeTarget) -> Result<Vec<SizedDesign>, LadderError> {
    validate(target)?;
    let v0 = target.drive_peak_v;
    let vf = target.diode.map_or(0.0, |d| d.forward_drop_v);
    let per_stage = 2.0 * (v0 - vf);
    let n_min = (target.terminal_v / per_stage).floor() as usize + 1;
    let n_max = target.max_stages.unwrap_or(2 * n_min + 4).min(MAX_STAGES);
    if n_min > n_max {
        return Err(LadderError::invalid(
            "size.max_stages",
            n_max,
            &format!("at least {n_min}, the fewest stages that can reach the target"),
        ));
    }
    let q = target.load_current_a / target.drive_frequency_hz;
    let mut offered = target.capacitor_values_f.clone();
    offered.sort_by(f64::total_cmp);
    let mut designs = Vec::new();
    for n in n_min..=n_max {
        let nf = n as f64;
        let (k_drop, k_ripple) = match target.topology {
            Topology::HalfWave => (
                2.0 * nf.powi(3) / 3.0 + nf * nf / 2.0 + nf / 3.0,
                nf * (nf + 1.0) / 2.0,
            ),
            Topology::Symmetric => (nf.powi(3) / 6.0 + nf * nf / 4.0 + nf / 3.0, nf / 2.0),
        };
        let headroom = nf * per_stage - target.terminal_v;
        let c0 = (k_drop * q / headroom).max(k_ripple * q / target.ripple_limit_pp_v);
        if let Some(d) = first_feasible(target, n, c0, &offered)? {
            designs.push(d);
        }
    }
    designs.sort_by(|a, b| {
        a.stored_energy_j
            .total_cmp(&b.stored_energy_j)
            .then(a.stages.cmp(&b.stages))
    });
    for (i, d) in designs.iter_mut().enumerate() {
        d.rank = i + 1;
    }
    Ok(designs)
}

fn first_feasible(
    target: &SizeTarget,
    n: usize,
    c0: f64,
    offered: &[f64],
) -> Result<Option<SizedDesign>, LadderError> {
    let ctl = &target.controls;
    if offered.is_empty() {
        let mut c = round_up_3sig(c0);
        for _ in 0..TRIES {
            let p = params(target, n, c)?;
            let (mean, ripple) = loaded_output(&p, ctl)?;
            if meets_output(target, mean, ripple) {
                return check(target, p, c);
            }
            // raise C by the shortfall: drop and ripple scale as 1/C
            let drop = n as f64 * 2.0 * target.drive_peak_v - mean;
            let allowed = n as f64 * 2.0 * target.drive_peak_v - target.terminal_v;
            let factor = (drop / allowed).max(ripple / target.ripple_limit_pp_v);
            c = round_up_3sig(c * factor.max(1.0) * 1.01);
        }
        return Ok(None);
    }
    let start = offered.partition_point(|&c| c < 0.9 * c0);
    for &c in offered[start..].iter().take(TRIES) {
        let p = params(target, n, c)?;
        let (mean, ripple) = loaded_output(&p, ctl)?;
        if meets_output(target, mean, ripple) {
            return check(target, p, c);
        }
    }
    Ok(None)
}

fn meets_output(target: &SizeTarget, mean: f64, ripple: f64) -> bool {
    mean >= target.terminal_v && ripple <= target.ripple_limit_pp_v
}

/// Full simulation of a candidate that met the output limits; None if a rating is exceeded
/// (ratings hardly depend on C, so a larger C would not help).
fn check(target: &SizeTarget, p: LadderParams, c: f64) -> Result<Option<SizedDesign>, LadderError> {
    let r = simulate(&p, &target.controls)?;
    let cap_max = r.max_capacitor_v();
    let piv = r.max_diode_piv_v();
    let ok = meets_output(target, r.output.loaded_mean_v, r.output.ripple_pp_v)
        && target.capacitor_rating_v.is_none_or(|v| cap_max <= v)
        && target.diode_piv_rating_v.is_none_or(|v| piv <= v);
    if !ok {
        return Ok(None);
    }
    let (peak_i, mean_i) = r.max_diode_currents_a();
    Ok(Some(SizedDesign {
        rank: 0,
        topology: target.topology,
        stages: p.stages,
        capacitance_f: c,
        output_at_load_v: r.output.loaded_mean_v,
        no_load_v: r.output.no_load_v,
        drop_v: r.output.drop_v,
        ripple_pp_v: r.output.ripple_pp_v,
        stored_energy_j: r.energy.total_j,
        stack_height_m: target
            .gradient_limit_v_per_m
            .map(|g| r.output.no_load_v / g),
        capacitor_max_v: cap_max,
        diode_piv_v: piv,
        diode_peak_current_a: peak_i,
        diode_mean_current_a: mean_i,
        params: p,
    }))
}

fn params(target: &SizeTarget, n: usize, c: f64) -> Result<LadderParams, LadderError> {
    let mut p = LadderParams::uniform(
        target.topology,
        n,
        c,
        target.drive_peak_v,
        target.drive_frequency_hz,
        target.load_current_a,
    )?
    .with_uniform_strays(target.stray_capacitance_f);
    if let Some(d) = target.diode {
        p.diode = d;
    }
    Ok(p)
}

fn round_up_3sig(x: f64) -> f64 {
    let scale = 10f64.powi(x.log10().floor() as i32 - 2);
    (x / scale - 1e-9).ceil() * scale
}

fn validate(t: &SizeTarget) -> Result<(), LadderError> {
    check_positive("size.terminal_voltage", t.terminal_v, "V")?;
    check_positive("size.load_current", t.load_current_a, "A")?;
    check_positive("size.ripple_limit", t.ripple_limit_pp_v, "V")?;
    check_positive("size.drive_peak", t.drive_peak_v, "V")?;
    check_positive("size.drive_frequency", t.drive_frequency_hz, "Hz")?;
    check_non_negative("size.stray_capacitance", t.stray_capacitance_f, "F")?;
    for (i, &c) in t.capacitor_values_f.iter().enumerate() {
        check_positive(&format!("size.capacitor_values[{}]", i + 1), c, "F")?;
    }
    for (field, v, unit) in [
        ("size.gradient_limit", t.gradient_limit_v_per_m, "V/m"),
        ("size.capacitor_rating", t.capacitor_rating_v, "V"),
        ("size.diode_piv_rating", t.diode_piv_rating_v, "V"),
    ] {
        if let Some(v) = v {
            check_positive(field, v, unit)?;
        }
    }
    if let Some(d) = t.diode
        && !(d.forward_drop_v >= 0.0 && d.forward_drop_v < t.drive_peak_v)
    {
        return Err(LadderError::invalid(
            "diode.forward_drop",
            format!("{} V", d.forward_drop_v),
            "a drop ≥ 0 V and below the drive peak",
        ));
    }
    t.controls.validate()
}

#[cfg(test)]
mod tests {
    use super::round_up_3sig;

    #[test]
    fn rounding_up_to_three_figures() {
        assert!((round_up_3sig(2.1e-9) - 2.1e-9).abs() < 1e-21);
        assert!((round_up_3sig(2.1001e-9) - 2.11e-9).abs() < 1e-21);
        assert!((round_up_3sig(0.99999) - 1.0).abs() < 1e-12);
    }
}
