//! The multiplier stack of a design: ladder parameters from `[multiplier]`, node strays (a
//! given value, or "auto" from the capacitance matrix of the drawn stack), the simulation and
//! the closed forms beside it.
//!
//! Input: a `model::Model`. Output: a `StackAnalysis` whose stage voltages feed `"stage:N"`
//! potentials and whose summary goes into the `ladder` section of the reports. With
//! `stray_capacitance = "auto"` the stack must be drawn: conductors with potential
//! `"stage:N"` for every stage N. Their capacitance matrix comes from unit-potential solves
//! on the design's own mesh (the one loop the architecture allows, passing plain numbers).

// The capacitance types a stack analysis and a fault replay carry, named here for the
// library's users.
use crate::capacitance::capacitance_matrix;
pub use crate::capacitance::{CapacitanceMatrix, Electrode};
use crate::ladder::{
    ClosedForm, Column, LadderError, LadderParams, LadderResult, SimControls, closed_form, simulate,
};
use crate::mesh::{Mesh, MeshError};
use crate::model::{Model, PotentialSpec};
use crate::solve::{SolveError, SolverParams};
use serde::Serialize;
use thiserror::Error;

#[derive(Debug, Error)]
pub enum StackError {
    #[error(transparent)]
    Ladder(#[from] LadderError),
    #[error(
        "[multiplier] stray_capacitance = \"auto\" takes the node strays from the drawn stack, but no conductor has potential \"stage:N\" for stage(s) {missing}; draw a ring per stage with potential = \"stage:N\", or give a value such as stray_capacitance = \"4 pF\""
    )]
    StackNotDrawn { missing: String },
    #[error(transparent)]
    Mesh(#[from] MeshError),
    #[error(transparent)]
    Solve(#[from] SolveError),
}

/// Where the node strays came from.
#[derive(Debug, Clone, Serialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum StraySource {
    /// One value for every node, from the design file.
    Given {
        #[serde(rename = "per_node_f")]
        farads: f64,
    },
    /// From the capacitance matrix of the drawn stack: each smoothing node's capacitance to
    /// everything outside the stack; the oscillating nodes of a stage are given the value of
    /// their stage's smoothing node (they are not drawn).
    FieldSolution {
        per_stage_f: Vec<f64>,
        unit_solves: usize,
        reciprocity_error: f64,
    },
}

/// The simulated stack with its closed forms.
#[derive(Debug, Clone, Serialize)]
pub struct StackAnalysis {
    pub params: LadderParams,
    pub strays: StraySource,
    pub result: LadderResult,
    pub closed_form: ClosedForm,
    /// Energy in every stage capacitor at no load, J ([`multiplier_stored_energy_j`]); `None`
    /// for an unknown topology.
    #[serde(skip)]
    pub stored_no_load_j: Option<f64>,
}

impl StackAnalysis {
    /// Loaded cycle-mean voltage of each stage node, stage 1 first (for "stage:N").
    pub fn stage_voltages(&self) -> Vec<f64> {
        self.result.stages.iter().map(|s| s.mean_v).collect()
    }
}

/// The conductors drawn for each stage (index 0 = stage 1).
pub fn stage_conductors(model: &Model, stages: usize) -> Vec<Vec<usize>> {
    let mut out = vec![Vec::new(); stages];
    for (k, c) in model.conductors.iter().enumerate() {
        if let PotentialSpec::Stage { stage } = c.potential
            && (1..=stages).contains(&stage)
        {
            out[stage - 1].push(k);
        }
    }
    out
}

/// Node strays of the drawn stack from its capacitance matrix.
fn auto_strays(
    model: &Model,
    stages: usize,
    solver: &SolverParams,
) -> Result<(Vec<f64>, CapacitanceMatrix, Mesh), StackError> {
    let drawn = stage_conductors(model, stages);
    let missing: Vec<String> = drawn
        .iter()
        .enumerate()
        .filter(|(_, v)| v.is_empty())
        .map(|(k, _)| (k + 1).to_string())
        .collect();
    if !missing.is_empty() {
        return Err(StackError::StackNotDrawn {
            missing: missing.join(", "),
        });
    }
    let mesh = Mesh::build(model)?;
    let cm = capacitance_matrix(model, &mesh, solver)?;
    // Electrode index of each stage.
    let stage_electrode: Vec<Option<usize>> = drawn
        .iter()
        .map(|conds| {
            cm.electrodes
                .iter()
                .position(|e| e.conductors.iter().any(|c| conds.contains(c)))
        })
        .collect();
    let ladder_set: Vec<usize> = stage_electrode.iter().flatten().copied().collect();
    let per_stage = stage_electrode
        .iter()
        .map(|e| {
            e.map_or(0.0, |i| {
                ladder_set
                    .iter()
                    .map(|&j| cm.c_f[i][j])
                    .sum::<f64>()
                    .max(0.0)
            })
        })
        .collect();
    Ok((per_stage, cm, mesh))
}

/// Builds, and simulates, the stack of a design; `None` when it has no `[multiplier]`.
pub fn analyze_stack(
    model: &Model,
    solver: &SolverParams,
    controls: &SimControls,
) -> Result<Option<StackAnalysis>, StackError> {
    analyze_stack_keeping_mesh(model, solver, controls).map(|(stack, _)| stack)
}

/// As [`analyze_stack`], also handing back the design's mesh when the automatic strays built
/// it (so that a review solves the field on it instead of meshing the design again).
pub fn analyze_stack_keeping_mesh(
    model: &Model,
    solver: &SolverParams,
    controls: &SimControls,
) -> Result<(Option<StackAnalysis>, Option<Mesh>), StackError> {
    let Some(m) = &model.multiplier else {
        return Ok((None, None));
    };
    let mut mesh = None;
    let (params, strays) = match m.stray_capacitance_f {
        Some(c) => (
            LadderParams::from_multiplier(m, None)?,
            StraySource::Given { farads: c },
        ),
        None => {
            let (per_stage, cm, built) = auto_strays(model, m.stages, solver)?;
            mesh = Some(built);
            let mut drawn = m.clone();
            drawn.stray_capacitance_f = Some(0.0);
            let mut p = LadderParams::from_multiplier(&drawn, None)?;
            let mut strays = vec![0.0; p.node_count()];
            for (k, &c) in per_stage.iter().enumerate() {
                let stage = k + 1;
                for col in [Column::Oscillating, Column::OscillatingB, Column::Smoothing] {
                    if let Some(i) = p.node_index(col, stage) {
                        strays[i] = c;
                    }
                }
            }
            p.strays_f = strays;
            p.validate()?;
            (
                p,
                StraySource::FieldSolution {
                    per_stage_f: per_stage,
                    unit_solves: cm.electrodes.len(),
                    reciprocity_error: cm.asymmetry,
                },
            )
        }
    };
    let result = simulate(&params, controls)?;
    let closed_form = closed_form(&params)?;
    Ok((
        Some(StackAnalysis {
            params,
            strays,
            result,
            closed_form,
            stored_no_load_j: multiplier_stored_energy_j(m),
        }),
        mesh,
    ))
}

/// A mismatch between the design's `terminal.voltage` and the multiplier's output beyond this
/// fraction is a caution with both numbers (common practice, no source: about the accuracy of
/// a terminal voltmeter).
pub const TERMINAL_MISMATCH_TOLERANCE: f64 = 0.01;

/// The design's terminal voltage against the multiplier's output. The field is solved at
/// `terminal.voltage`, which governs every margin; the multiplier's no-load output (its highest)
/// and its loaded output are stated beside it.
#[derive(Debug, Clone, Serialize)]
pub struct TerminalReconciliation {
    /// `terminal.voltage`, V (signed).
    pub terminal_v: f64,
    /// The multiplier's simulated no-load and cycle-mean loaded output, V (magnitudes).
    pub no_load_v: f64,
    pub loaded_v: f64,
    /// (no-load − |terminal|)/|terminal|.
    pub relative: f64,
    pub tolerance: f64,
    pub within_tolerance: bool,
    /// One sentence, the same in every command.
    pub text: String,
}

/// Reconciles the terminal voltage with the stack's output.
pub fn reconcile(terminal_v: f64, stack: &StackAnalysis) -> TerminalReconciliation {
    let no_load_v = stack.result.output.no_load_v.abs();
    let loaded_v = stack.result.output.loaded_mean_v.abs();
    let v = terminal_v.abs();
    let relative = if v > 0.0 {
        (no_load_v - v) / v
    } else {
        f64::INFINITY
    };
    let within_tolerance = relative.abs() <= TERMINAL_MISMATCH_TOLERANCE;
    let kv = crate::units::kv_three_significant;
    // The multiplier's diodes set its polarity; it is stated in the terminal's.
    let sign = if terminal_v < 0.0 { -1.0 } else { 1.0 };
    let head = format!(
        "The field is solved at terminal.voltage = {}, which governs every margin; the \
         multiplier gives {} at no load and {} at load ({:+.1} % at no load, tolerance {:.0} %)",
        kv(terminal_v),
        kv(sign * no_load_v),
        kv(sign * loaded_v),
        100.0 * relative,
        100.0 * TERMINAL_MISMATCH_TOLERANCE
    );
    let text = if within_tolerance {
        format!("{head}.")
    } else if relative > 0.0 {
        format!(
            "{head}: at no load the terminal can reach {}, where every margin is {:.3} x the \
             printed one (the field scales with the voltage); set terminal.voltage to the \
             no-load output or limit the drive.",
            kv(sign * no_load_v),
            v / no_load_v
        )
    } else {
        format!(
            "{head}: the stack as given does not reach the terminal voltage solved; the margins \
             hold for {} but the machine reaches at most {}.",
            kv(terminal_v),
            kv(sign * no_load_v)
        )
    };
    TerminalReconciliation {
        terminal_v,
        no_load_v,
        loaded_v,
        relative,
        tolerance: TERMINAL_MISMATCH_TOLERANCE,
        within_tolerance,
        text,
    }
}

/// What the stack can add to a terminal spark. The charge reaches the terminal through the
/// smoothing column, its capacitors in series: C_s = 1/Σ(1/C_k), charged to the no-load
/// output V, delivers at most ½·C_s·V² (at no load, the highest; every capacitor at 2·V_m this
/// is n·½·C·(2V_m)², the smoothing column's own energy). The oscillating columns reach the
/// terminal only through the diodes and the drive; their energy is part of the stack total,
/// the upper bound. With no output resistor in the design, nothing else limits the discharge
/// into the spark; after the drive stops the stack decays through the divider (and dump
/// resistor) with τ = R·C_s.
#[derive(Debug, Clone, Serialize)]
pub struct StackSpark {
    pub series_capacitance_f: f64,
    pub no_load_v: f64,
    /// ½·C_s·V², J.
    pub deliverable_j: f64,
    /// Every stage capacitor at no load (closed form), J: the upper bound.
    pub stored_no_load_j: Option<f64>,
    /// Discharge time constant through the divider and dump resistor, s, when modelled.
    pub discharge_tau_s: Option<f64>,
    pub convention: &'static str,
}

/// The stack's share of a terminal spark.
pub fn stack_spark(stack: &StackAnalysis) -> StackSpark {
    let inv: f64 = stack
        .params
        .capacitors
        .smoothing_f
        .iter()
        .map(|c| 1.0 / c)
        .sum();
    let c_s = if inv > 0.0 { 1.0 / inv } else { 0.0 };
    let v = stack.result.output.no_load_v.abs();
    StackSpark {
        series_capacitance_f: c_s,
        no_load_v: v,
        deliverable_j: 0.5 * c_s * v * v,
        stored_no_load_j: stack.stored_no_load_j,
        discharge_tau_s: stack.result.discharge.as_ref().map(|d| d.tau_s),
        convention: "at no load (the multiplier's highest output), the same in every command",
    }
}

/// How the stack's stored energy is counted, the same in every command and in SAFETY.md: at no
/// load, the highest.
pub const STACK_ENERGY_BASIS: &str =
    "multiplier stack at no load (the highest; 1/2 C V^2, stage capacitors at 2 Vm)";

/// The stored energy of a run: the electrostatic energy of the solved field (J) plus the
/// multiplier stack's at no load when the design has one, with what it covers.
pub fn stored_energy(model: &crate::model::Model, field_energy_j: f64) -> (f64, String) {
    match model
        .multiplier
        .as_ref()
        .and_then(multiplier_stored_energy_j)
    {
        Some(stack) => (
            stack + field_energy_j,
            format!(
                "{STACK_ENERGY_BASIS}: {:.1} J, plus {:.1} J electrostatic energy of the solved field",
                stack, field_energy_j
            ),
        ),
        None => (
            field_energy_j,
            "electrostatic energy of the solved field, 1/2 integral of eps E^2; no multiplier is modelled"
                .to_string(),
        ),
    }
}

/// No-load stored energy of a Cockcroft–Walton stack, J: ½·C·V² over its capacitors, with
/// every stage capacitor charged to 2·V_m except the first capacitor of each oscillating column,
/// which holds V_m (docs/references.md §8, \[M\]; Kuffel et al. 2000, Ch. 2). A half-wave stack has
/// one oscillating and one smoothing column of `stages` capacitors each; a symmetric stack has
/// two oscillating columns and one smoothing column (the same rule applied to each column,
/// \[D\]). `None` for an unknown topology or non-finite inputs.
pub fn multiplier_stored_energy_j(m: &crate::model::Multiplier) -> Option<f64> {
    let n = m.stages as f64;
    let (c, vm) = (m.stage_capacitance_f, m.drive_peak_v);
    if m.stages == 0 || !(c.is_finite() && c > 0.0 && vm.is_finite() && vm > 0.0) {
        return None;
    }
    let full = 0.5 * c * (2.0 * vm).powi(2);
    let first = 0.5 * c * vm * vm;
    let oscillating = first + (n - 1.0) * full;
    let smoothing = n * full;
    match m.topology.as_str() {
        "half-wave" => Some(smoothing + oscillating),
        "symmetric" => Some(smoothing + 2.0 * oscillating),
        _ => None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn stack(topology: &str) -> crate::model::Multiplier {
        crate::model::Multiplier {
            topology: topology.into(),
            stages: 8,
            stage_capacitance_f: 6.8e-9,
            drive_frequency_hz: 50e3,
            drive_peak_v: 50e3,
            load_current_a: 10.3e-3,
            stray_capacitance_f: None,
        }
    }

    #[test]
    fn stack_energy_by_half_c_v_squared() {
        // ½CV² per capacitor (docs/references.md §13; 1 nF at 1 MV = 500 J, row 40), with the
        // charging rule of §8: half-wave 8 x 2Vm + (Vm + 7 x 2Vm) over 6.8 nF at Vm = 50 kV.
        let half = 0.5 * 6.8e-9 * (8.0 * 1e10 + 2.5e9 + 7.0 * 1e10);
        assert!((multiplier_stored_energy_j(&stack("half-wave")).unwrap() - half).abs() < 1e-9);
        let sym = 0.5 * 6.8e-9 * (8.0 * 1e10 + 2.0 * (2.5e9 + 7.0 * 1e10));
        assert!((multiplier_stored_energy_j(&stack("symmetric")).unwrap() - sym).abs() < 1e-9);
        assert!(multiplier_stored_energy_j(&stack("other")).is_none());
    }
}
