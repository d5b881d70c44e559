//! Closed forms beside the simulation, each with its source and validity, and the ideal
//! impulse-charge model that starts the simulation.
//!
//! Notation: n stages, V₀ peak drive per phase, f frequency, C stage capacitance, I load,
//! q = I/f the charge drawn per cycle.
//!
//! *Impulse-charge model* (derived here, the project's own algebra): ideal diodes conduct
//! instantaneously at the drive peaks; between peaks only the load current flows, through the
//! smoothing column. Charge balance per cycle gives, for the half-wave cascade, the smoothing
//! voltage step b_k = 2u_k − 2V_f − q[Σ_{j≤k}(n−j+1)/C_j + Σ_{j<k}(n−j+½)/C′_j] (u_k the
//! drive amplitude reaching node o_k, V₀ without strays) and, for the symmetric cascade,
//! b_k = 2u_k − 2V_f − (q/2)Σ_{j≤k}(n−j+1)/C_j. With equal C this is a peak drop of
//! (q/C)(2n³/3 + n²/4 + n/12) and a mean drop of (q/C)(2n³/3 + n²/2 + n/3) (half-wave), and
//! (q/C)(n³/6 + n²/4 + n/12) peak, (q/C)(n³/6 + n²/4 + n/3) mean (symmetric) — the last is the
//! form that docs/references.md §8/§14 fitted to time-domain runs. The textbook half-wave drop
//! (I/fC)(2n³/3 + n²/2 − n/6) lies between the peak and the mean drop.

use super::error::LadderError;
use super::params::{
    Capacitors, Column, LadderParams, Load, Topology, Waveform, check_non_negative,
};
use serde::Serialize;

/// Half-wave textbook forms (docs/references.md §8: Kuffel, Zaengl & Kuffel 2000 Ch. 2; Naidu &
/// Kamaraju Ch. 6). Valid for small ripple, equal C, no strays, ideal diodes, sine drive.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HalfWaveForms {
    /// ΔV = (I/fC)(2n³/3 + n²/2 − n/6).
    pub drop_v: f64,
    /// δV (peak-to-peak) = (I/fC)·n(n+1)/2.
    pub ripple_pp_v: f64,
    /// 2nV₀ − ΔV.
    pub output_v: f64,
    /// n_opt = √(V₀fC/I) (from d(2nV₀ − ΔV)/dn = 0 with the n³ term); infinite at no load.
    pub n_opt: f64,
    /// ≈ (4/3)·n_opt·V₀, the output at n_opt (docs/references.md §8 [M/D]).
    pub max_output_v: f64,
}

/// Symmetric-cascade forms.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SymmetricForms {
    /// ΔV = (I/6fC)(n³ + 2n): a secondary compilation, **not confirmed** against a textbook
    /// and 10–50 % below time-domain runs (docs/references.md §8, open items).
    pub drop_compilation_v: f64,
    /// δV (peak-to-peak) = I·n/(2fC), same compilation, unconfirmed (holds within ~7 %).
    pub ripple_pp_compilation_v: f64,
    /// ΔV ≈ (I/fC)(n³/6 + n²/4 + n/3): fitted to ideal-diode time-domain runs (docs/references.md
    /// §14, docs/practice.md §4.1, derived) and equal to the impulse-model mean drop.
    pub drop_time_domain_v: f64,
}

/// Greinacher doubler with oscillating C1 and smoothing C2 (docs/references.md §8/§12 ex. 3, an
/// open textbook-companion worked example, Ex. 1).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DoublerForms {
    /// I/(fC2).
    pub ripple_pp_v: f64,
    /// (I/f)(1/C1 + 1/(2C2)).
    pub mean_drop_v: f64,
    /// 2V₀ − mean drop.
    pub mean_output_v: f64,
}

/// Efficiency of a ladder with strays to ground at no load, η = V_out/(2nV₀).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StrayForms {
    /// Discrete capacitive ladder of the oscillating column(s) (docs/references.md §8 "discrete
    /// model", [D], matches circuit simulation exactly).
    pub efficiency_discrete: f64,
    /// Continuum limit tanh(αn)/(αn), α = √(C_s/C) with the column means (Everhart & Lorrain
    /// 1953 as transmission line; over-predicts the discrete ladder by 3–10 %).
    pub efficiency_continuum: f64,
    /// α = √(C_s/C) per stage.
    pub alpha: f64,
}

/// Ideal impulse-charge model (derived; see module docs), per-capacitor values allowed.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ImpulseForms {
    /// No-load output including strays and diode drops, 2Σu_k − 2nV_f.
    pub no_load_v: f64,
    /// No-load minus the cycle-mean output.
    pub mean_drop_v: f64,
    /// No-load minus the cycle maximum of the output.
    pub peak_drop_v: f64,
    /// Peak-to-peak ripple of the output.
    pub ripple_pp_v: f64,
    /// Cycle-mean voltage of each smoothing node s1..sn.
    pub stage_mean_v: Vec<f64>,
}

/// Every closed form that applies to the parameters, with notes on validity.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ClosedForm {
    pub topology: Topology,
    pub stages: usize,
    /// The load current used (for a resistive load, the current at the impulse-model output).
    pub load_current_a: f64,
    /// 2nV₀ (docs/references.md §8 [C]).
    pub ideal_no_load_v: f64,
    /// 2n·V_f, the forward-drop loss (docs/references.md §8, informal note [C]).
    pub diode_drop_loss_v: f64,
    /// Present when all capacitors are equal and the cascade is half-wave.
    pub half_wave: Option<HalfWaveForms>,
    /// Present when all capacitors are equal and the cascade is symmetric.
    pub symmetric: Option<SymmetricForms>,
    /// Present for a one-stage half-wave cascade.
    pub doubler: Option<DoublerForms>,
    /// Present when any node has a stray capacitance.
    pub strays: Option<StrayForms>,
    pub impulse_model: ImpulseForms,
    pub notes: Vec<String>,
}

/// Closed forms for `p` (no simulation); the parameters are validated first.
pub fn closed_form(p: &LadderParams) -> Result<ClosedForm, LadderError> {
    p.validate()?;
    Ok(closed_form_unchecked(p))
}

pub(crate) fn closed_form_unchecked(p: &LadderParams) -> ClosedForm {
    let n = p.stages;
    let nf = n as f64;
    let v0 = p.drive.peak_v;
    let f = p.drive.frequency_hz;
    let ideal_no_load_v = 2.0 * nf * v0;
    // A resistive load: the current at the impulse-model output (fixed point, converges fast
    // because the output depends weakly on the current).
    let mut current = p.load_current_at(ideal_no_load_v);
    let mut impulse = impulse_model(p, current);
    if let Load::Resistance { .. } = p.load {
        for _ in 0..50 {
            let v_mean = impulse.no_load_v - impulse.mean_drop_v;
            let next = p.load_current_at(v_mean.max(0.0));
            let done = (next - current).abs() <= 1e-12 * next.abs().max(1e-300);
            current = next;
            impulse = impulse_model(p, current);
            if done {
                break;
            }
        }
    }
    let a = current / f; // q, the charge per cycle
    let mut notes = vec![
        "closed forms assume small ripple, ideal diodes and (except the stray forms) no \
         strays; the simulation is the answer, these check it"
            .to_string(),
        "ripple is peak-to-peak (Kuffel's δV is half of it); drop is the no-load output minus \
         the cycle-mean output"
            .to_string(),
    ];
    if let Waveform::Square { .. } = p.drive.waveform {
        notes.push(
            "square drive: the closed forms are derived for sinusoidal drive; with flat tops \
             the diodes conduct over the whole plateau and ripple and drop are smaller"
                .to_string(),
        );
    }
    let common = p.capacitors.common_value();
    let (mut half_wave, mut symmetric) = (None, None);
    match (common, p.topology) {
        (Some(c), Topology::HalfWave) => {
            let u = a / c;
            let drop_v = u * (2.0 * nf.powi(3) / 3.0 + nf * nf / 2.0 - nf / 6.0);
            let n_opt = if current > 0.0 {
                (v0 * f * c / current).sqrt()
            } else {
                f64::INFINITY
            };
            half_wave = Some(HalfWaveForms {
                drop_v,
                ripple_pp_v: u * nf * (nf + 1.0) / 2.0,
                output_v: ideal_no_load_v - drop_v,
                n_opt,
                max_output_v: 4.0 / 3.0 * n_opt * v0,
            });
            if n <= 4 {
                notes.push(format!(
                    "n = {n}: the finite conduction angle adds 4-14 % to the textbook drop at \
                     n = 2-4 (docs/practice.md §4.1)"
                ));
            }
        }
        (Some(c), Topology::Symmetric) => {
            let u = a / c;
            symmetric = Some(SymmetricForms {
                drop_compilation_v: u / 6.0 * (nf.powi(3) + 2.0 * nf),
                ripple_pp_compilation_v: u * nf / 2.0,
                drop_time_domain_v: u * (nf.powi(3) / 6.0 + nf * nf / 4.0 + nf / 3.0),
            });
            notes.push(
                "symmetric drop (n³+2n)/6 is an unconfirmed compilation formula; \
                 (n³/6+n²/4+n/3) fits time-domain runs (docs/references.md §8 open item)"
                    .to_string(),
            );
        }
        (None, _) => notes.push(
            "unequal capacitors: textbook forms omitted; the impulse model covers per-capacitor \
             values"
                .to_string(),
        ),
    }
    let doubler = (n == 1 && p.topology == Topology::HalfWave).then(|| {
        let c1 = p.capacitors.oscillating_f[0];
        let c2 = p.capacitors.smoothing_f[0];
        let mean_drop_v = a * (1.0 / c1 + 1.0 / (2.0 * c2));
        DoublerForms {
            ripple_pp_v: a / c2,
            mean_drop_v,
            mean_output_v: 2.0 * v0 - mean_drop_v,
        }
    });
    let strays = p.strays_f.iter().any(|&c| c > 0.0).then(|| stray_forms(p));
    ClosedForm {
        topology: p.topology,
        stages: n,
        load_current_a: current,
        ideal_no_load_v,
        diode_drop_loss_v: 2.0 * nf * p.diode.forward_drop_v,
        half_wave,
        symmetric,
        doubler,
        strays,
        impulse_model: impulse,
        notes,
    }
}

/// Discrete stray-ladder efficiency for n equal stages with C_s/C = `ratio` on each
/// oscillating node (docs/references.md §8 discrete model, rows 34–35).
pub fn stray_efficiency_discrete(stages: usize, ratio: f64) -> Result<f64, LadderError> {
    check_stray_args(stages, ratio)?;
    let u = ac_amplitudes(&vec![1.0; stages], &vec![ratio; stages], 1.0);
    Ok(u.iter().sum::<f64>() / stages as f64)
}

/// Continuum stray efficiency tanh(αn)/(αn), α = √ratio (docs/references.md §8, docs/practice.md §4.4).
pub fn stray_efficiency_continuum(stages: usize, ratio: f64) -> Result<f64, LadderError> {
    check_stray_args(stages, ratio)?;
    Ok(continuum(stages, ratio))
}

fn continuum(stages: usize, ratio: f64) -> f64 {
    let x = ratio.sqrt() * stages as f64;
    if x < 1e-8 { 1.0 } else { x.tanh() / x }
}

fn check_stray_args(stages: usize, ratio: f64) -> Result<(), LadderError> {
    if stages == 0 {
        return Err(LadderError::invalid("stages", 0, "at least 1"));
    }
    check_non_negative("stray ratio C_s/C", ratio, "")
}

/// Energy ½CV² of a capacitor (docs/references.md §13, row 40).
pub fn capacitor_energy_j(capacitance_f: f64, voltage_v: f64) -> f64 {
    0.5 * capacitance_f * voltage_v * voltage_v
}

fn stray_forms(p: &LadderParams) -> StrayForms {
    let n = p.stages;
    let amps = oscillating_amplitudes(p);
    let sum: f64 = amps.iter().map(|u| u.iter().sum::<f64>()).sum();
    let efficiency_discrete = sum / amps.len() as f64 / (n as f64 * p.drive.peak_v);
    let osc: Vec<f64> = osc_columns(p.topology)
        .iter()
        .flat_map(|&col| (1..=n).filter_map(move |k| p.node_index(col, k).map(|i| p.strays_f[i])))
        .collect();
    let cs = osc.iter().sum::<f64>() / osc.len() as f64;
    let caps = &p.capacitors;
    let all: Vec<f64> = caps
        .oscillating_f
        .iter()
        .chain(&caps.oscillating_b_f)
        .copied()
        .collect();
    let c = all.iter().sum::<f64>() / all.len() as f64;
    StrayForms {
        efficiency_discrete,
        efficiency_continuum: continuum(n, cs / c),
        alpha: (cs / c).sqrt(),
    }
}

pub(crate) fn osc_columns(t: Topology) -> &'static [Column] {
    match t {
        Topology::HalfWave => &[Column::Oscillating],
        Topology::Symmetric => &[Column::Oscillating, Column::OscillatingB],
    }
}

fn osc_caps(caps: &Capacitors, col: Column) -> &[f64] {
    match col {
        Column::OscillatingB => &caps.oscillating_b_f,
        _ => &caps.oscillating_f,
    }
}

/// Drive amplitude u_k reaching each oscillating node through the capacitive ladder with
/// strays: C_k(u_{k−1} − u_k) = C_{k+1}(u_k − u_{k+1}) + C_s,k·u_k, u_0 = V₀, C_{n+1} = 0.
fn ac_amplitudes(c: &[f64], cs: &[f64], v0: f64) -> Vec<f64> {
    let n = c.len();
    let mut diag = vec![0.0; n];
    let mut upper = vec![0.0; n];
    let mut rhs = vec![0.0; n];
    for k in 0..n {
        let above = if k + 1 < n { c[k + 1] } else { 0.0 };
        diag[k] = c[k] + above + cs[k];
        upper[k] = -above;
    }
    rhs[0] = c[0] * v0;
    // Thomas algorithm; the system is symmetric and diagonally dominant.
    for k in 1..n {
        let m = upper[k - 1] / diag[k - 1];
        diag[k] -= m * upper[k - 1];
        rhs[k] -= m * rhs[k - 1];
    }
    let mut u = vec![0.0; n];
    u[n - 1] = rhs[n - 1] / diag[n - 1];
    for k in (0..n - 1).rev() {
        u[k] = (rhs[k] - upper[k] * u[k + 1]) / diag[k];
    }
    u
}

/// u_k for each oscillating column of `p`.
pub(crate) fn oscillating_amplitudes(p: &LadderParams) -> Vec<Vec<f64>> {
    osc_columns(p.topology)
        .iter()
        .map(|&col| {
            let cs: Vec<f64> = (1..=p.stages)
                .map(|k| p.node_index(col, k).map_or(0.0, |i| p.strays_f[i]))
                .collect();
            ac_amplitudes(osc_caps(&p.capacitors, col), &cs, p.drive.peak_v)
        })
        .collect()
}

/// Node voltages of the impulse model at the start of a cycle (t = 0, drive rising through
/// zero), in node order; and its summary.
pub(crate) fn impulse_state(p: &LadderParams, current: f64) -> (Vec<f64>, ImpulseForms) {
    let n = p.stages;
    let q = current / p.drive.frequency_hz;
    let vf = p.diode.forward_drop_v;
    let cp = &p.capacitors.smoothing_f;
    let amps = oscillating_amplitudes(p);
    let nf = n as f64;
    let mut state = vec![0.0; p.node_count()];
    let mut s_p = vec![0.0; n + 1]; // smoothing node right after the positive peak
    let mut s_n = vec![0.0; n + 1]; // … right after the negative peak
    let mut s0 = vec![0.0; n + 1]; // … at t = 0
    let mut mean = vec![0.0; n + 1];
    let mut ripple = vec![0.0; n + 1];
    let mut no_load = 0.0;
    match p.topology {
        Topology::HalfWave => {
            let c = &p.capacitors.oscillating_f;
            let u = &amps[0];
            let (mut sum_osc, mut sum_smooth) = (0.0, 0.0);
            for k in 1..=n {
                let kf = k as f64;
                sum_osc += (nf - kf + 1.0) / c[k - 1];
                let b = 2.0 * u[k - 1] - 2.0 * vf - q * (sum_osc + sum_smooth);
                sum_smooth += (nf - kf + 0.5) / cp[k - 1];
                no_load += 2.0 * u[k - 1] - 2.0 * vf;
                s_p[k] = s_p[k - 1] + b;
                let ck = q / cp[k - 1];
                s_n[k] = s_n[k - 1] + b - ck * (nf - kf + 0.5);
                s0[k] = s0[k - 1] + b - ck * (nf - kf + 0.75);
                mean[k] = mean[k - 1] + b - ck * (nf - kf + 1.0) / 2.0;
                ripple[k] = ripple[k - 1] + ck * (nf - kf + 1.0);
            }
            for k in 1..=n {
                let o_n = s_n[k - 1] - vf;
                if let Some(i) = p.node_index(Column::Oscillating, k) {
                    state[i] = o_n + u[k - 1];
                }
            }
        }
        Topology::Symmetric => {
            let ca = &p.capacitors.oscillating_f;
            let cb = &p.capacitors.oscillating_b_f;
            let mut sum_osc = 0.0;
            for k in 1..=n {
                let kf = k as f64;
                let u = 0.5 * (amps[0][k - 1] + amps[1][k - 1]);
                sum_osc += (nf - kf + 1.0) * 0.5 * (1.0 / ca[k - 1] + 1.0 / cb[k - 1]);
                let b = 2.0 * u - 2.0 * vf - 0.5 * q * sum_osc;
                no_load += 2.0 * u - 2.0 * vf;
                let ck = q / cp[k - 1];
                s_p[k] = s_p[k - 1] + b;
                s_n[k] = s_p[k];
                s0[k] = s0[k - 1] + b - 0.25 * ck;
                mean[k] = mean[k - 1] + b - 0.25 * ck;
                ripple[k] = ripple[k - 1] + 0.5 * ck;
            }
            for k in 1..=n {
                if let Some(i) = p.node_index(Column::Oscillating, k) {
                    state[i] = s_n[k - 1] - vf + amps[0][k - 1];
                }
                if let Some(i) = p.node_index(Column::OscillatingB, k) {
                    state[i] = s_n[k] + vf - amps[1][k - 1];
                }
            }
        }
    }
    for (k, &v) in s0.iter().enumerate().skip(1) {
        if let Some(i) = p.node_index(Column::Smoothing, k) {
            state[i] = v;
        }
    }
    let forms = ImpulseForms {
        no_load_v: no_load,
        mean_drop_v: no_load - mean[n],
        peak_drop_v: no_load - s_p[n],
        ripple_pp_v: ripple[n],
        stage_mean_v: mean[1..].to_vec(),
    };
    (state, forms)
}

fn impulse_model(p: &LadderParams, current: f64) -> ImpulseForms {
    impulse_state(p, current).1
}
