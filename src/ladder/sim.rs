//! Periodic steady state by time stepping, cycle after cycle, until it is detected.
//!
//! The start is the impulse-charge model of `closed` (strays, diode drop and load included),
//! scaled down slightly so that the stack charges upward as after switch-on: a state above the
//! periodic one, with every diode reverse-biased, would persist at no load. For the same reason
//! the steps per cycle are a multiple of 4, so that the discrete drive reaches its true peaks
//! and the discrete stack charges to the closed-form no-load state, not below it.
//!
//! A stack relaxes to steady state with a slowest decay factor per cycle of about
//! 1 − 0.6/n² (n = 6: 0.983; n = 30: 0.998), so plain cycling needs thousands of cycles for
//! tall stacks. Acceleration (on by default) is shooting Newton on the one-cycle map Φ: one
//! cycle carries the exact sensitivity M = ∂Φ/∂x of the backward-Euler steps, and
//! x ← x + (I − M)⁻¹(Φ(x) − x); one or two steps usually reach 10⁻¹⁰ V.
//!
//! Detection is the same with or without it: cycles are run and each yields the cycle-mean
//! output and its peak-to-peak ripple. With d the change of the mean between the last two
//! cycles and r the slowest decay factor per cycle — the spectral radius of M when known, else
//! the last three ratios of successive changes once they agree — the drift still to come is
//! bounded by |d|/(1 − r); steady state is declared when that bound, and the same bound on the
//! ripple change, fall below the tolerances. A run that never gets there is an error carrying
//! the last changes.

use super::circuit::Netlist;
use super::closed::{closed_form_unchecked, impulse_state};
use super::error::LadderError;
use super::params::{LadderParams, Load};
use super::result::RunInfo;
use super::stepper::{INTEGRATOR, Stepper, TerminalLoad};
use serde::Serialize;

/// Where the run starts.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Start {
    /// Impulse-model node voltages (strays, diode drop and load included) times
    /// (1 − undershoot).
    ClosedForm { undershoot: f64 },
    /// Every node at 0 V (switch-on of a discharged stack).
    Zero,
}

/// Controls of the periodic-steady-state run.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct SimControls {
    /// Time steps per drive period.
    pub steps_per_cycle: usize,
    /// Tolerance on the estimated remaining drift of the cycle-mean output, relative to 2nV₀.
    pub rel_tol: f64,
    /// Tolerance on the estimated remaining change of the ripple, relative to the ripple.
    pub ripple_rel_tol: f64,
    pub min_cycles: usize,
    pub max_cycles: usize,
    pub start: Start,
    /// Shooting-Newton acceleration before the detection cycles (see module docs).
    pub accelerate: bool,
    /// Largest number of shooting-Newton iterations.
    pub max_newton: usize,
    /// Keep the terminal voltage of the reported cycle.
    pub record_waveform: bool,
}

impl Default for SimControls {
    /// 400 steps per cycle, remaining drift < 1e-7·2nV₀, ripple to 1e-3, closed-form
    /// start 10⁻⁶ low, shooting acceleration (≤ 8 Newton steps), 5 to 50 000 cycles.
    fn default() -> Self {
        Self {
            steps_per_cycle: 400,
            rel_tol: 1e-7,
            ripple_rel_tol: 1e-3,
            min_cycles: 5,
            max_cycles: 50_000,
            start: Start::ClosedForm { undershoot: 1e-6 },
            accelerate: true,
            max_newton: 8,
            record_waveform: false,
        }
    }
}

impl SimControls {
    pub fn validate(&self) -> Result<(), LadderError> {
        if self.steps_per_cycle < 16 || !self.steps_per_cycle.is_multiple_of(4) {
            return Err(LadderError::invalid(
                "steps_per_cycle",
                self.steps_per_cycle,
                "a multiple of 4, at least 16, so that the drive peaks fall on time steps",
            ));
        }
        if !(self.rel_tol > 0.0 && self.rel_tol < 1.0) {
            return Err(LadderError::invalid(
                "rel_tol",
                self.rel_tol,
                "a value in (0, 1)",
            ));
        }
        if !(self.ripple_rel_tol > 0.0 && self.ripple_rel_tol < 1.0) {
            return Err(LadderError::invalid(
                "ripple_rel_tol",
                self.ripple_rel_tol,
                "a value in (0, 1)",
            ));
        }
        if self.min_cycles < 4 || self.max_cycles < self.min_cycles {
            return Err(LadderError::invalid(
                "min_cycles/max_cycles",
                format!("{}/{}", self.min_cycles, self.max_cycles),
                "min_cycles ≥ 4 and max_cycles ≥ min_cycles",
            ));
        }
        if let Start::ClosedForm { undershoot } = self.start
            && !(0.0..0.5).contains(&undershoot)
        {
            return Err(LadderError::invalid(
                "start.undershoot",
                undershoot,
                "a fraction in [0, 0.5)",
            ));
        }
        Ok(())
    }
}

/// Accumulated statistics of one cycle.
#[derive(Debug, Clone)]
pub(crate) struct CycleStats {
    pub samples: usize,
    pub node_sum: Vec<f64>,
    pub node_sq: Vec<f64>,
    pub node_min: Vec<f64>,
    pub node_max: Vec<f64>,
    pub cap_sum: Vec<f64>,
    pub cap_sq: Vec<f64>,
    pub cap_absmax: Vec<f64>,
    pub diode_charge: Vec<f64>,
    pub diode_peak: Vec<f64>,
    pub diode_piv: Vec<f64>,
    pub load_charge: f64,
    pub wave: Vec<(f64, f64)>,
}

impl CycleStats {
    fn new(net: &Netlist) -> Self {
        let (m, c, d) = (net.nodes, net.caps.len(), net.diodes.len());
        Self {
            samples: 0,
            node_sum: vec![0.0; m],
            node_sq: vec![0.0; m],
            node_min: vec![f64::INFINITY; m],
            node_max: vec![f64::NEG_INFINITY; m],
            cap_sum: vec![0.0; c],
            cap_sq: vec![0.0; c],
            cap_absmax: vec![0.0; c],
            diode_charge: vec![0.0; d],
            diode_peak: vec![0.0; d],
            diode_piv: vec![f64::NEG_INFINITY; d],
            load_charge: 0.0,
            wave: Vec::new(),
        }
    }

    fn reset(&mut self) {
        self.samples = 0;
        for v in [
            &mut self.node_sum,
            &mut self.node_sq,
            &mut self.cap_sum,
            &mut self.cap_sq,
            &mut self.cap_absmax,
            &mut self.diode_charge,
            &mut self.diode_peak,
        ] {
            v.iter_mut().for_each(|x| *x = 0.0);
        }
        self.node_min.iter_mut().for_each(|x| *x = f64::INFINITY);
        self.node_max
            .iter_mut()
            .for_each(|x| *x = f64::NEG_INFINITY);
        self.diode_piv
            .iter_mut()
            .for_each(|x| *x = f64::NEG_INFINITY);
        self.load_charge = 0.0;
        self.wave.clear();
    }

    pub(crate) fn mean(&self, i: usize) -> f64 {
        self.node_sum[i] / self.samples as f64
    }

    pub(crate) fn pp(&self, i: usize) -> f64 {
        self.node_max[i] - self.node_min[i]
    }
}

pub(crate) struct Periodic {
    pub info: RunInfo,
    pub stats: CycleStats,
    pub final_state: Vec<f64>,
}

pub(crate) fn terminal_load(load: Load) -> TerminalLoad {
    match load {
        Load::Current { amps } => TerminalLoad {
            current_a: amps,
            conductance_s: 0.0,
        },
        Load::Resistance { ohms } => TerminalLoad {
            current_a: 0.0,
            conductance_s: 1.0 / ohms,
        },
    }
}

/// Newton update below which a step is converged: 10⁻¹² of 2nV₀, a few thousand rounding
/// units of the largest node voltage, so that solver noise stays far below the steady-state
/// tolerances.
pub(crate) fn newton_tol(p: &LadderParams) -> f64 {
    1e-12 * 2.0 * p.stages as f64 * p.drive.peak_v
}

/// Runs cycles from the controls' start until periodic steady state is detected.
pub(crate) fn run_periodic(
    p: &LadderParams,
    net: &Netlist,
    load: TerminalLoad,
    ctl: &SimControls,
) -> Result<Periodic, LadderError> {
    let v_scale = 2.0 * p.stages as f64 * p.drive.peak_v;
    let init = match ctl.start {
        Start::Zero => vec![0.0; net.nodes],
        Start::ClosedForm { undershoot } => {
            let current = if load.current_a == 0.0 && load.conductance_s == 0.0 {
                0.0
            } else {
                closed_form_unchecked(p).load_current_a
            };
            let (state, _) = impulse_state(p, current);
            state.into_iter().map(|v| v * (1.0 - undershoot)).collect()
        }
    };
    let period = p.drive.period_s();
    let nsteps = ctl.steps_per_cycle;
    let h = period / nsteps as f64;
    let vs0 = p.drive.value(0.0);
    let mut st = Stepper::new(net, p.diode, load, h, init.clone(), vs0, newton_tol(p));
    let tol_v = ctl.rel_tol * v_scale;
    let mut shooting = ShootInfo::default();
    let mut rho = None;
    if ctl.accelerate {
        let (x, info) = shoot(p, &mut st, init, nsteps, h, tol_v, ctl.max_newton)?;
        st.reset(&x, vs0);
        rho = info.spectral_radius;
        shooting = info;
    }
    let out = net.output();
    let floor = 1e-12 * v_scale;
    let mut stats = CycleStats::new(net);
    let (mut prev_mean, mut prev_ripple) = (f64::NAN, f64::NAN);
    let mut prev_d = f64::NAN;
    let mut ratios: Vec<f64> = Vec::new();
    let (mut d, mut dr, mut est) = (f64::NAN, f64::NAN, f64::INFINITY);
    for cycle in 1..=ctl.max_cycles {
        stats.reset();
        for s in 1..=nsteps {
            let t = s as f64 * h;
            let vs = p.drive.value(t);
            st.step(t, vs)?;
            accumulate(&mut stats, &st, net, load, vs, h);
            if ctl.record_waveform {
                stats.wave.push((t, st.v[out]));
            }
        }
        let mean = stats.mean(out);
        let ripple = stats.pp(out);
        if cycle > 1 {
            d = mean - prev_mean;
            dr = ripple - prev_ripple;
            if cycle > 2 && prev_d != 0.0 {
                ratios.push(d / prev_d);
                if ratios.len() > 3 {
                    ratios.remove(0);
                }
            }
            prev_d = d;
            // slowest decay rate per cycle: from the one-cycle map when known, else from the
            // ratios of successive changes
            let r = match rho {
                Some(r) => Some(r),
                None => stable_ratio(&ratios),
            };
            let bound = |x: f64| {
                if x.abs() <= floor {
                    x.abs()
                } else {
                    match r {
                        Some(r) if r < 1.0 => x.abs() / (1.0 - r.max(0.0)),
                        _ => f64::INFINITY,
                    }
                }
            };
            est = bound(d);
            let est_r = bound(dr);
            if cycle >= ctl.min_cycles
                && est <= tol_v
                && est_r <= (ctl.ripple_rel_tol * ripple).max(tol_v)
            {
                let info = RunInfo {
                    cycles: cycle + shooting.cycles,
                    shooting_iterations: shooting.iterations,
                    shooting_residual_v: shooting.residual_v,
                    decay_per_cycle: r,
                    steps_per_cycle: nsteps,
                    time_step_s: h,
                    integrator: INTEGRATOR,
                    final_mean_change_v: d,
                    final_ripple_change_v: dr,
                    estimated_remaining_v: est,
                    tolerance_v: tol_v,
                    newton_iterations_max: st.max_iterations,
                    newton_iterations_mean: st.total_iterations as f64 / st.steps as f64,
                };
                return Ok(Periodic {
                    info,
                    stats,
                    final_state: st.v.clone(),
                });
            }
        }
        prev_mean = mean;
        prev_ripple = ripple;
    }
    Err(LadderError::NotConverged {
        cycles: ctl.max_cycles,
        last_mean_change_v: d,
        last_ripple_change_v: dr,
        estimated_remaining_v: est,
        tolerance_v: tol_v,
    })
}

/// The decay factor from the last three ratios of successive changes, when they describe one
/// geometric mode: all in (0, 1) and their distances from 1 within a factor 1.5. Early cycles
/// (charge fronts moving up the stack) give scattered ratios and no estimate.
fn stable_ratio(ratios: &[f64]) -> Option<f64> {
    if ratios.len() < 3 || ratios.iter().any(|&r| !(r > 0.0 && r < 1.0)) {
        return None;
    }
    let gaps: Vec<f64> = ratios.iter().map(|r| 1.0 - r).collect();
    let (lo, hi) = gaps.iter().fold((f64::INFINITY, 0.0_f64), |(lo, hi), &g| {
        (lo.min(g), hi.max(g))
    });
    (hi <= 1.5 * lo).then_some(1.0 - lo)
}

#[derive(Debug, Clone, Default)]
struct ShootInfo {
    iterations: usize,
    cycles: usize,
    residual_v: Option<f64>,
    spectral_radius: Option<f64>,
}

/// Shooting Newton on the one-cycle map Φ: x ← x + (I − M)⁻¹(Φ(x) − x), with M = ∂Φ/∂x
/// carried exactly through the backward-Euler steps of one cycle. Later steps reuse the
/// factorised I − M (chord steps, one plain cycle each) while the residual falls at least
/// threefold per step, and rebuild M otherwise. Returns the best state found; a step that
/// raises the residual tenfold ends the iteration (the detection cycles follow anyway).
fn shoot(
    p: &LadderParams,
    st: &mut Stepper<'_>,
    x0: Vec<f64>,
    nsteps: usize,
    h: f64,
    tol_v: f64,
    max_newton: usize,
) -> Result<(Vec<f64>, ShootInfo), LadderError> {
    let m = x0.len();
    let vs0 = p.drive.value(0.0);
    let mut x = x0;
    let mut best = (f64::INFINITY, x.clone());
    let mut info = ShootInfo::default();
    let mut sens = vec![0.0; m * m];
    let mut lu: Option<nalgebra::LU<f64, nalgebra::Dyn, nalgebra::Dyn>> = None;
    let mut builds = 0;
    let mut last_res = f64::INFINITY;
    for _ in 0..4 * max_newton {
        let build = lu.is_none();
        st.reset(&x, vs0);
        if build {
            if builds == max_newton {
                break;
            }
            builds += 1;
            sens.iter_mut().for_each(|s| *s = 0.0);
            for i in 0..m {
                sens[i * m + i] = 1.0;
            }
        }
        for s in 1..=nsteps {
            let t = s as f64 * h;
            if build {
                st.step_sensitivity(t, p.drive.value(t), &mut sens)?;
            } else {
                st.step(t, p.drive.value(t))?;
            }
        }
        info.cycles += 1;
        let phi = st.v.clone();
        let r: Vec<f64> = phi.iter().zip(&x).map(|(a, b)| a - b).collect();
        let res = r.iter().fold(0.0_f64, |a, v| a.max(v.abs()));
        if res < best.0 {
            best = (res, phi.clone());
        } else if res > 10.0 * best.0 {
            break;
        }
        info.residual_v = Some(res);
        if res <= 1e-3 * tol_v {
            break;
        }
        if !build && res > last_res / 3.0 {
            // the chord has stalled: rebuild M at this state next time round
            lu = None;
            last_res = res;
            continue;
        }
        last_res = res;
        if build {
            info.spectral_radius = spectral_radius(&sens, m);
            let mut a = nalgebra::DMatrix::from_column_slice(m, m, &sens);
            a.neg_mut();
            for i in 0..m {
                a[(i, i)] += 1.0;
            }
            lu = Some(a.lu());
        }
        let Some(delta) = lu
            .as_ref()
            .and_then(|f| f.solve(&nalgebra::DVector::from_vec(r)))
        else {
            break;
        };
        info.iterations += 1;
        x.iter_mut().zip(delta.iter()).for_each(|(a, b)| *a += b);
    }
    Ok((best.1, info))
}

/// Spectral radius of the dense column-major m × m monodromy matrix: the slowest decay per
/// cycle of a perturbation (real Schur form; the matrix is far from normal, so power iteration
/// is unreliable here). None if the QR iteration does not converge.
fn spectral_radius(a: &[f64], m: usize) -> Option<f64> {
    let mat = nalgebra::DMatrix::from_column_slice(m, m, a);
    let schur = nalgebra::linalg::Schur::try_new(mat, f64::EPSILON, 100 * m.max(10))?;
    Some(
        schur
            .complex_eigenvalues()
            .iter()
            .map(|z| z.norm())
            .fold(0.0, f64::max),
    )
}

fn accumulate(
    stats: &mut CycleStats,
    st: &Stepper<'_>,
    net: &Netlist,
    load: TerminalLoad,
    vs: f64,
    h: f64,
) {
    stats.samples += 1;
    for (i, &v) in st.v.iter().enumerate() {
        stats.node_sum[i] += v;
        stats.node_sq[i] += v * v;
        stats.node_min[i] = stats.node_min[i].min(v);
        stats.node_max[i] = stats.node_max[i].max(v);
    }
    for (k, c) in net.caps.iter().enumerate() {
        let v = c.hi.voltage(&st.v, vs) - c.lo.voltage(&st.v, vs);
        stats.cap_sum[k] += v;
        stats.cap_sq[k] += v * v;
        stats.cap_absmax[k] = stats.cap_absmax[k].max(v.abs());
    }
    for k in 0..net.diodes.len() {
        let (i, vd) = st.diode_current(k, vs);
        stats.diode_charge[k] += i * h;
        stats.diode_peak[k] = stats.diode_peak[k].max(i);
        stats.diode_piv[k] = stats.diode_piv[k].max(-vd);
    }
    stats.load_charge += (load.current_a + load.conductance_s * st.v[net.output()]) * h;
}
