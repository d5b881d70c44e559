//! Discharge of the stack through the divider and an optional dump resistor once the drive is
//! removed (drive nodes held at 0 V, a low-impedance source switched off) and the load has
//! stopped with it (beam off): only the resistors discharge the stack, from the loaded state
//! at the end of a cycle.
//!
//! τ = R·C_eff with C_eff the smoothing column in series (docs/practice.md §4.5, §8.1: the
//! divider-only discharge is set mainly by the smoothing column). The oscillating columns keep
//! their charge until the falling smoothing nodes forward-bias the transfer diodes, then return
//! it, so the simulated time to 1 % exceeds τ·ln 100.

use super::circuit::Netlist;
use super::error::LadderError;
use super::params::LadderParams;
use super::result::Discharge;
use super::sim::newton_tol;
use super::stepper::{Stepper, TerminalLoad};

const STEPS_PER_TAU: usize = 200;
const MAX_TAU: usize = 80;

pub(crate) fn discharge(
    p: &LadderParams,
    net: &Netlist,
    start: &[f64],
) -> Result<Discharge, LadderError> {
    let g: f64 = [p.divider_ohm, p.dump_ohm]
        .iter()
        .flatten()
        .map(|r| 1.0 / r)
        .sum();
    let r = 1.0 / g;
    let c_eff = 1.0
        / p.capacitors
            .smoothing_f
            .iter()
            .map(|c| 1.0 / c)
            .sum::<f64>();
    let tau = r * c_eff;
    let h = tau / STEPS_PER_TAU as f64;
    let load = TerminalLoad {
        current_a: 0.0,
        conductance_s: g,
    };
    let mut st = Stepper::new(net, p.diode, load, h, start.to_vec(), 0.0, newton_tol(p));
    let out = net.output();
    let v0 = start[out];
    let target = 0.01 * v0;
    let mut v_prev = v0;
    for s in 1..=STEPS_PER_TAU * MAX_TAU {
        let t = s as f64 * h;
        st.step(t, 0.0)?;
        let v = st.v[out];
        if v <= target {
            // linear interpolation inside the step
            let frac = (v_prev - target) / (v_prev - v);
            return Ok(Discharge {
                divider_ohm: p.divider_ohm,
                dump_ohm: p.dump_ohm,
                resistance_ohm: r,
                c_eff_f: c_eff,
                tau_s: tau,
                time_to_1pct_formula_s: tau * 100f64.ln(),
                time_to_1pct_simulated_s: t - h + frac * h,
            });
        }
        v_prev = v;
    }
    Err(LadderError::DischargeIncomplete {
        time_s: (STEPS_PER_TAU * MAX_TAU) as f64 * h,
    })
}
