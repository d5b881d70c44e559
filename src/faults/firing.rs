//! Repetitive firing of a protective gap that holds a DC fault, such as an open resistor under
//! it: the column current charges the capacitance across the gap to its firing voltage, the
//! gap sparks and discharges it, and the cycle repeats (a failed resistor under a gap shows as
//! repetitive sparking, not as a clean open).
//!
//! The capacitance across the gap is the one a spark sees, nanoseconds long: the other column
//! electrodes float with their charges conserved, the terminal and the tank hold. From the
//! Maxwell matrix, C = q / (ΔV_b − ΔV_a) for a charge q moved from end a to end b. Each spark
//! falls to the arc floor V_min (`protective_gap.arc_floor`) and releases ½·C·(V_f² − V_min²);
//! the gap fires I/(C·(V_f − V_min)) times a second and dissipates ½·I·(V_f + V_min) on average.
//! Without a floor it is taken as 0 V: the energy of a spark is then an upper bound, the rate
//! and the power lower bounds (the power at most I·V_f).

use super::{Basis, node_electrode};
use crate::grading::{Network, NetworkSolution};
use crate::model::Model;
use serde::Serialize;

/// A protective gap firing over and over in a DC scenario.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RepetitiveFiring {
    #[serde(serialize_with = "crate::units::from_one")]
    pub column: usize,
    pub from_node: usize,
    pub to_node: usize,
    /// Mean current the gap passes, A.
    pub current_a: f64,
    /// Capacitance across the gap with the other column electrodes floating, F.
    pub capacitance_f: f64,
    /// Voltage each spark falls to, V, and whether the design gives it (0 V when not).
    pub arc_floor_v: f64,
    pub arc_floor_given: bool,
    /// Energy of one spark, ½·C·(V_f² − V_min²), J.
    pub energy_per_spark_j: f64,
    /// Sparks per second, I/(C·(V_f − V_min)), Hz.
    pub rate_hz: f64,
    /// Mean power in the sparks, ½·I·(V_f + V_min), W.
    pub power_w: f64,
}

/// Capacitance across electrodes `a` and `b` (None = ground) just after a fast charge
/// transfer between them, the electrodes marked `floating` keeping their charges and the rest
/// holding: C = q/(ΔV_b − ΔV_a) with ΔV_F = C_FF⁻¹·Δq. None when neither end floats.
pub fn transfer_capacitance(
    c_ff: &nalgebra::LU<f64, nalgebra::Dyn, nalgebra::Dyn>,
    row: &[Option<usize>],
    a: Option<usize>,
    b: Option<usize>,
) -> Option<f64> {
    let (ra, rb) = (a.and_then(|e| row[e]), b.and_then(|e| row[e]));
    if ra.is_none() && rb.is_none() {
        return None;
    }
    let m = row.iter().flatten().count();
    let mut q = nalgebra::DVector::<f64>::zeros(m);
    if let Some(r) = ra {
        q[r] -= 1.0;
    }
    if let Some(r) = rb {
        q[r] += 1.0;
    }
    let dv = c_ff.solve(&q)?;
    let at = |r: Option<usize>| r.map_or(0.0, |r| dv[r]);
    let c = 1.0 / (at(rb) - at(ra));
    (c.is_finite() && c > 0.0).then_some(c)
}

/// The capacitance across every protective gap of every column (`[network][gap]`), formed
/// once per replay: the Maxwell matrix does not change between DC scenarios. None where
/// neither end floats or the matrix is singular.
pub fn gap_capacitances(
    model: &Model,
    basis: &Basis,
    networks: &[Network],
) -> Vec<Vec<Option<f64>>> {
    let floating = super::transient::floating_electrodes(model, basis);
    let (f, row) = super::clamp::floating_rows(&floating);
    let c = &basis.capacitance.c_f;
    // A singular matrix leaves every gap without a capacitance (and no repetition figures).
    let lu = nalgebra::DMatrix::from_fn(f.len(), f.len(), |i, j| c[f[i]][f[j]]).lu();
    networks
        .iter()
        .map(|n| {
            n.protective
                .iter()
                .map(|p| {
                    transfer_capacitance(
                        &lu,
                        &row,
                        node_electrode(model, basis, n.column, p.from_node),
                        node_electrode(model, basis, n.column, p.to_node),
                    )
                })
                .collect()
        })
        .collect()
}

/// The protective gaps clamped in a DC solution, as repetitive firing (none for a column
/// that gives no resistor value: its currents are not known).
pub fn repetitive_firing(
    model: &Model,
    networks: &[Network],
    solutions: &[NetworkSolution],
    capacitance: &[Vec<Option<f64>>],
) -> Vec<RepetitiveFiring> {
    let mut out = Vec::new();
    for ((n, s), caps) in networks.iter().zip(solutions).zip(capacitance) {
        // Without resistor values the network's currents are in arbitrary units.
        if n.relative {
            continue;
        }
        let floor = model
            .columns
            .get(n.column)
            .and_then(|c| c.protective_gap.as_ref())
            .and_then(|p| p.arc_floor_v);
        let vm = floor.unwrap_or(0.0);
        for ((p, &i), c) in n.protective.iter().zip(&s.protective_current_a).zip(caps) {
            let (current, vf) = (i.abs(), p.firing_v);
            let Some(c) = *c else { continue };
            if current <= 0.0 || vf <= vm {
                continue;
            }
            out.push(RepetitiveFiring {
                column: n.column,
                from_node: p.from_node,
                to_node: p.to_node,
                current_a: current,
                capacitance_f: c,
                arc_floor_v: vm,
                arc_floor_given: floor.is_some(),
                energy_per_spark_j: 0.5 * c * (vf * vf - vm * vm),
                rate_hz: current / (c * (vf - vm)),
                power_w: 0.5 * current * (vf + vm),
            });
        }
    }
    out
}
