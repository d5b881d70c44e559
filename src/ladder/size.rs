//! Sizing search: stage count and stage capacitance for a terminal voltage, load, ripple limit
//! and drive, every returned design simulated and checked against every limit.
//!
//! For each stage count from the smallest that can reach the target, the impulse-model drop
//! and ripple (see `closed`) give the least capacitance that leaves the required headroom;
//! candidates from there upward (the offered values, or a continuous value rounded up to three
//! significant figures and raised by the simulated shortfall) are simulated until one meets
//! every limit. A stack that would give more than the request at full drive runs with its
//! drive turned down to the request (its voltages, ratings and stored energy are then those of
//! the request), so every design listed meets the request. Stage counts that give no design
//! name the limit that blocked them. Designs are ranked by stored energy (the safety-relevant figure, docs/practice.md
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
    /// Stray capacitance to ground on every node, F (0 for none).
    pub stray_capacitance_f: f64,
    /// Rectifier model; None = near-ideal, scaled to each candidate.
    pub diode: Option<DiodeParams>,
    /// Largest stage count searched; None = 2·n_min + 4, or 4 more than request / rating
    /// when a voltage rating asks for more stages.
    pub max_stages: Option<usize>,
    #[serde(skip)]
    pub controls: SimControls,
}

/// A design that meets the request in simulation: the requested voltage at load (the drive
/// turned down where the stack would give more), the ripple and every rating.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SizedDesign {
    /// 1 = least stored energy.
    pub rank: usize,
    pub topology: Topology,
    pub stages: usize,
    pub capacitance_f: f64,
    /// The drive peak the design runs at: the one requested, or less when the stack at full
    /// drive would exceed the requested voltage by more than [`OVERSHOOT`].
    pub drive_peak_v: f64,
    /// The drive had to be turned down below the requested peak to give the voltage.
    pub drive_turned_down: bool,
    /// Cycle-mean terminal voltage at load.
    pub output_at_load_v: f64,
    /// Cycle-mean terminal voltage with the load removed.
    pub output_no_load_v: f64,
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

/// A limit that kept a stage count from meeting the request.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Blocking {
    /// The ripple at load stays above its limit.
    Ripple,
    /// The voltage at load stays below the request: the drop under load (regulation) is too
    /// large for the drive.
    Regulation,
    /// The capacitance needed lies outside the values offered.
    CapacitanceRange,
    /// A stage capacitor would see more than its rating.
    CapacitorRating,
    /// A rectifier would see more than its peak inverse voltage rating.
    DiodeRating,
}

impl Blocking {
    pub fn label(self) -> &'static str {
        match self {
            Blocking::Ripple => "ripple",
            Blocking::Regulation => "regulation (drop at load)",
            Blocking::CapacitanceRange => "capacitance range",
            Blocking::CapacitorRating => "stage voltage rating (capacitor)",
            Blocking::DiodeRating => "stage voltage rating (rectifier PIV)",
        }
    }

    /// What would lift the limit.
    pub fn advice(self) -> &'static str {
        match self {
            Blocking::Ripple | Blocking::Regulation => {
                "a larger stage capacitance or a higher drive frequency lowers drop and ripple \
                 (both go as I/(f·C))"
            }
            Blocking::CapacitanceRange => {
                "offer larger stage capacitances, or raise the drive frequency"
            }
            Blocking::CapacitorRating | Blocking::DiodeRating => {
                "more stages at a lower drive (the stage voltage is about twice the drive peak), \
                 or parts of a higher rating"
            }
        }
    }
}

/// Why one stage count gave no design.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Rejection {
    pub stages: usize,
    pub limit: Blocking,
    /// The figures: what the best candidate reached against the limit.
    pub detail: String,
}

/// The outcome of a sizing search.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Sizing {
    /// The stage counts searched, first and last.
    pub stages_searched: [usize; 2],
    /// The designs that meet the request, least stored energy first.
    pub designs: Vec<SizedDesign>,
    /// The stage counts that gave no design, and the limit that blocked each.
    pub rejected: Vec<Rejection>,
}

impl Sizing {
    /// The limits that blocked a stage count, each with the number of stage counts it blocked.
    pub fn blocking(&self) -> Vec<(Blocking, usize)> {
        let mut out: Vec<(Blocking, usize)> = Vec::new();
        for r in &self.rejected {
            match out.iter_mut().find(|(b, _)| *b == r.limit) {
                Some((_, k)) => *k += 1,
                None => out.push((r.limit, 1)),
            }
        }
        out.sort_by(|a, b| b.1.cmp(&a.1).then(a.0.cmp(&b.0)));
        out
    }
}

const TRIES: usize = 8;

/// A stack whose voltage at load at full drive exceeds the request by more than this fraction
/// runs with its drive turned down to the request.
pub const OVERSHOOT: f64 = 0.01;

/// The turned-down drive aims this fraction above the request, so the simulated voltage at
/// load lands on or just above it.
const AIM: f64 = 5e-4;

/// Searches stage counts and capacitances; returns the designs that meet the request, best
/// first, and why the other stage counts did not.
pub fn size(target: &SizeTarget) -> Result<Sizing, LadderError> {
    size_with_progress(target, &|_, _| {})
}

/// As [`size`], calling `progress(done, total)` after each stage count (from several threads;
/// the stage counts are searched in parallel, and the result does not depend on their order).
pub fn size_with_progress(
    target: &SizeTarget,
    progress: &(dyn Fn(usize, usize) + Sync),
) -> Result<Sizing, LadderError> {
    use rayon::prelude::*;
    validate(target)?;
    let v0 = target.drive_peak_v;
    let vf = target.diode.map_or(0.0, |d| d.forward_drop_v);
    let per_stage = 2.0 * (v0 - vf);
    let n_min = (target.terminal_v / per_stage).floor() as usize + 1;
    // A stage stands about twice the drive peak, so a voltage rating asks for at least
    // request / rating stages (run at a lower drive); the default range reaches past that.
    let rating = [target.capacitor_rating_v, target.diode_piv_rating_v]
        .into_iter()
        .flatten()
        .fold(f64::INFINITY, f64::min);
    let n_rating = (target.terminal_v / rating).ceil() as usize;
    let n_max = target
        .max_stages
        .unwrap_or((2 * n_min + 4).max(n_rating + 4))
        .min(MAX_STAGES);
    if n_min > n_max {
        return Err(LadderError::invalid(
            "size.max_stages",
            n_max,
            &format!("at least {n_min}, the fewest stages that can reach the target"),
        ));
    }
    let mut offered = target.capacitor_values_f.clone();
    offered.sort_by(f64::total_cmp);
    let total = n_max - n_min + 1;
    let done = std::sync::atomic::AtomicUsize::new(0);
    let outcomes = (n_min..=n_max)
        .into_par_iter()
        .map(|n| {
            let c0 = least_capacitance(target, n, per_stage);
            let outcome = stage_count(target, n, c0, &offered);
            let k = done.fetch_add(1, std::sync::atomic::Ordering::Relaxed) + 1;
            progress(k, total);
            outcome
        })
        .collect::<Result<Vec<_>, LadderError>>()?;
    let mut designs = Vec::new();
    let mut rejected = Vec::new();
    for o in outcomes {
        match o {
            Ok(d) => designs.push(d),
            Err(r) => rejected.push(r),
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
    Ok(Sizing {
        stages_searched: [n_min, n_max],
        designs,
        rejected,
    })
}

/// The least capacitance of `n` stages that leaves the headroom for the impulse-model drop
/// and meets the ripple limit (see `closed`).
fn least_capacitance(target: &SizeTarget, n: usize, per_stage: f64) -> f64 {
    let q = target.load_current_a / target.drive_frequency_hz;
    let nf = n as f64;
    let (k_drop, k_ripple) = match target.topology {
        Topology::HalfWave => (
            2.0 * nf.powi(3) / 3.0 + nf * nf / 2.0 + nf / 3.0,
            nf * (nf + 1.0) / 2.0,
        ),
        Topology::Symmetric => (nf.powi(3) / 6.0 + nf * nf / 4.0 + nf / 3.0, nf / 2.0),
    };
    let headroom = nf * per_stage - target.terminal_v;
    (k_drop * q / headroom).max(k_ripple * q / target.ripple_limit_pp_v)
}

fn kv(v: f64) -> String {
    format!("{:.2} kV", v / 1e3)
}

fn nf(c: f64) -> String {
    format!("{:.3} nF", c * 1e9)
}

/// The design of `n` stages with the least capacitance that meets the output limits, or the
/// limit that blocked it.
fn stage_count(
    target: &SizeTarget,
    n: usize,
    c0: f64,
    offered: &[f64],
) -> Result<Result<SizedDesign, Rejection>, LadderError> {
    let ctl = &target.controls;
    let v0 = target.drive_peak_v;
    let reject = |limit, detail: String| {
        Ok(Err(Rejection {
            stages: n,
            limit,
            detail,
        }))
    };
    let candidates: Vec<f64> = if offered.is_empty() {
        Vec::new()
    } else {
        let start = offered.partition_point(|&c| c < 0.9 * c0);
        if start == offered.len() {
            return reject(
                Blocking::CapacitanceRange,
                format!(
                    "needs about {} per stage; the largest offered is {}",
                    nf(c0),
                    nf(offered[offered.len() - 1])
                ),
            );
        }
        offered[start..].iter().take(TRIES).copied().collect()
    };
    let mut c = round_up_3sig(c0);
    let mut last = None;
    for k in 0..TRIES {
        if !offered.is_empty() {
            match candidates.get(k) {
                Some(&value) => c = value,
                None => break,
            }
        }
        let p = params(target, n, c, v0)?;
        let (mean, ripple) = loaded_output(&p, ctl)?;
        if meets_output(target, mean, ripple) {
            return finish(target, n, c, mean);
        }
        last = Some((c, mean, ripple));
        // raise C by the shortfall: drop and ripple scale as 1/C
        let drop = n as f64 * 2.0 * v0 - mean;
        let allowed = n as f64 * 2.0 * v0 - target.terminal_v;
        let factor = (drop / allowed).max(ripple / target.ripple_limit_pp_v);
        c = round_up_3sig(c * factor.max(1.0) * 1.01);
    }
    let Some((c, mean, ripple)) = last else {
        return reject(Blocking::CapacitanceRange, "no capacitance tried".into());
    };
    let exhausted = !offered.is_empty() && candidates.len() < TRIES;
    let (limit, what) = if ripple > target.ripple_limit_pp_v {
        (
            Blocking::Ripple,
            format!(
                "ripple {:.1} V p-p at {} (limit {:.1} V)",
                ripple,
                nf(c),
                target.ripple_limit_pp_v
            ),
        )
    } else {
        (
            Blocking::Regulation,
            format!(
                "{} at load at full drive with {} (request {})",
                kv(mean),
                nf(c),
                kv(target.terminal_v)
            ),
        )
    };
    if exhausted {
        reject(
            Blocking::CapacitanceRange,
            format!("{what}, the largest value offered"),
        )
    } else {
        reject(limit, what)
    }
}

fn meets_output(target: &SizeTarget, mean: f64, ripple: f64) -> bool {
    mean >= target.terminal_v && ripple <= target.ripple_limit_pp_v
}

/// Turns the drive down when the stack of `n` stages and capacitance `c` gives more than the
/// request at full drive (`mean_full` at load), simulates the design in full and checks it
/// against every limit.
fn finish(
    target: &SizeTarget,
    n: usize,
    c: f64,
    mean_full: f64,
) -> Result<Result<SizedDesign, Rejection>, LadderError> {
    let ctl = &target.controls;
    let v_full = target.drive_peak_v;
    let request = target.terminal_v;
    let mut v = v_full;
    if mean_full > request * (1.0 + OVERSHOOT) {
        // The output at load is affine in the drive peak (the drop depends on the load, not on
        // the drive): a first guess in proportion, then a secant step through both runs.
        let v1 = v_full * request / mean_full;
        let (m1, _) = loaded_output(&params(target, n, c, v1)?, ctl)?;
        let aim = request * (1.0 + AIM);
        v = (v1 + (aim - m1) * (v_full - v1) / (mean_full - m1)).min(v_full);
    }
    let mut p = params(target, n, c, v)?;
    let mut r = simulate(&p, ctl)?;
    if r.output.loaded_mean_v < request && v < v_full {
        v = (v * request * (1.0 + AIM) / r.output.loaded_mean_v).min(v_full);
        p = params(target, n, c, v)?;
        r = simulate(&p, ctl)?;
    }
    let reject = |limit, detail: String| {
        Ok(Err(Rejection {
            stages: n,
            limit,
            detail,
        }))
    };
    if !meets_output(target, r.output.loaded_mean_v, r.output.ripple_pp_v) {
        return if r.output.ripple_pp_v > target.ripple_limit_pp_v {
            reject(
                Blocking::Ripple,
                format!(
                    "ripple {:.1} V p-p at {} (limit {:.1} V)",
                    r.output.ripple_pp_v,
                    nf(c),
                    target.ripple_limit_pp_v
                ),
            )
        } else {
            reject(
                Blocking::Regulation,
                format!("{} at load with {}", kv(r.output.loaded_mean_v), nf(c)),
            )
        };
    }
    let cap_max = r.max_capacitor_v();
    let piv = r.max_diode_piv_v();
    if let Some(rating) = target.capacitor_rating_v.filter(|&v| cap_max > v) {
        return reject(
            Blocking::CapacitorRating,
            format!(
                "{} on a stage capacitor at drive {} (rating {})",
                kv(cap_max),
                kv(v),
                kv(rating)
            ),
        );
    }
    if let Some(rating) = target.diode_piv_rating_v.filter(|&v| piv > v) {
        return reject(
            Blocking::DiodeRating,
            format!(
                "{} peak inverse voltage at drive {} (rating {})",
                kv(piv),
                kv(v),
                kv(rating)
            ),
        );
    }
    let (peak_i, mean_i) = r.max_diode_currents_a();
    Ok(Ok(SizedDesign {
        rank: 0,
        topology: target.topology,
        stages: p.stages,
        capacitance_f: c,
        drive_peak_v: v,
        drive_turned_down: v < v_full,
        output_at_load_v: r.output.loaded_mean_v,
        output_no_load_v: r.output.no_load_v,
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

fn params(
    target: &SizeTarget,
    n: usize,
    c: f64,
    drive_peak_v: f64,
) -> Result<LadderParams, LadderError> {
    let mut p = LadderParams::uniform(
        target.topology,
        n,
        c,
        drive_peak_v,
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
