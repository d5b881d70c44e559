//! Fault replay of the grading network: every single-resistor failure, resistor tolerance,
//! and the fast transient after a terminal-to-tank spark, each with its margins.
//!
//! Input: a model, its mesh and solver settings, and optional multiplier stage voltages.
//! Output: one `ScenarioResult` per scenario (gap voltages, worst margin, protective gaps),
//! ranked worst first, the capacitance matrix of the electrodes and the spark energies.
//!
//! The field is linear in the electrode potentials, so it is solved once per electrode at unit
//! potential (one operator and multigrid hierarchy, each solve warm-started from the previous
//! one) and any scenario's field is the weighted sum φ = Σ_e V_e φ_e. The same unit solves give
//! the Maxwell capacitance matrix by Gauss's law on each electrode, from which the transient
//! follows: just after the terminal collapses, the column electrodes float (the resistors act
//! on a time scale of R·C, milliseconds, against nanoseconds for the spark), so their charges
//! are conserved: C_FF ΔV_F + C_FH ΔV_H = 0.

use crate::analysis::Analysis;
use crate::capacitance::{CapacitanceMatrix, Electrode, conductor_charges, electrodes};
use crate::field::FieldMap;
use crate::grading::{self, GradingError, Network, NetworkError, NetworkSolution};
use crate::margin::{self, MarginError};
use crate::mesh::Mesh;
use crate::model::{Model, PotentialSpec};
use crate::solve::{SolveError, SolveInfo, Solver, SolverParams};
use rayon::prelude::*;
use serde::Serialize;
use thiserror::Error;

mod firing;
mod scenarios;
mod transient;
pub use firing::{RepetitiveFiring, transfer_capacitance};
pub use transient::{
    ClampedStep, GapLink, clamped_step, fast_step, gap_links, node_electrode, spark_energy_with,
};

/// Why the fast transient after a spark cannot be formed.
#[derive(Debug, Error)]
pub enum TransientError {
    #[error("the design has no conductor off earth potential")]
    NothingOffEarth,
    #[error(
        "{electrodes} electrodes in the capacitance matrix, but {floating} / {before} / {after} entries given"
    )]
    Lengths {
        electrodes: usize,
        floating: usize,
        before: usize,
        after: usize,
    },
    #[error("the floating part of the capacitance matrix is singular")]
    Singular,
    #[error(
        "a protective gap joins electrode {a:?} and {b:?}, but there are {electrodes} electrodes"
    )]
    GapElectrode {
        a: Option<usize>,
        b: Option<usize>,
        electrodes: usize,
    },
    #[error("a protective gap clamps at {clamp_v} V; a positive voltage is needed")]
    GapClamp { clamp_v: f64 },
    #[error("the protective gaps found no consistent set of conducting gaps in {passes} passes")]
    GapsInconsistent { passes: usize },
    #[error("the capacitance matrix with the conducting protective gaps is singular")]
    SingularWithGaps,
    #[error("no conductor apart from the grading electrodes is off earth potential")]
    NoStrayConductor,
    /// Columns and gaps counted from 1, as the user names them.
    #[error("shorted section names column {column}, but the design has {columns} columns")]
    SectionColumn { column: usize, columns: usize },
    #[error(
        "shorted section of column {column}: gaps {first} to {last} are not within 1 to {gaps}"
    )]
    SectionGaps {
        column: usize,
        first: usize,
        last: usize,
        gaps: usize,
    },
}

#[derive(Debug, Error)]
pub enum FaultError {
    #[error(transparent)]
    Grading(#[from] GradingError),
    #[error(transparent)]
    Network(#[from] NetworkError),
    #[error(transparent)]
    Solve(#[from] SolveError),
    #[error(transparent)]
    Margin(#[from] MarginError),
    #[error("the design has no [[column]]: there is no grading network to replay faults on")]
    NoColumns,
    #[error("the fast transient cannot be formed: {0}")]
    Transient(#[from] TransientError),
    #[error(
        "the fault replay needs {electrodes} unit solutions of {nodes} nodes, about {gib:.2} GiB, more than {budget}; set [mesh] cell coarser (the memory falls with its square) or replay fewer electrodes"
    )]
    TooLarge {
        electrodes: usize,
        nodes: usize,
        gib: f64,
        budget: String,
    },
}

/// Runs of unit solves the basis makes side by side (fixed, so that the warm starts and hence
/// the basis do not depend on the machine's thread count).
const BASIS_STREAMS: usize = 2;

/// Free nodes summed together in one block of a superposition, so that the blocks of the
/// results stay in cache while every unit solution streams through them once.
const SUM_BLOCK: usize = 2048;

/// The unit-potential solutions of the electrodes, with their capacitance matrix.
///
/// Each unit solution is held on the free nodes only (a fixed node's potential is its
/// conductor's) and in single precision: its rounding, 6e-8 of the unit potential, lies far
/// below the solver's own error and the discretisation error (tests/faults.rs
/// `basis_field_equals_a_direct_solve` measures the whole difference against direct solves).
/// The sums are formed in double precision.
pub struct Basis {
    pub electrodes: Vec<Electrode>,
    /// Electrode of each conductor (None for earthed conductors).
    pub conductor_electrode: Vec<Option<usize>>,
    /// Mesh nodes that are free, in order; the unit solutions are stored on these.
    free: Vec<u32>,
    /// Fixed id of every mesh node (`FixedId::FREE` for a free node).
    fixed: Vec<crate::mesh::FixedId>,
    /// Unit solution of each electrode on the free nodes.
    phi: Vec<Vec<f32>>,
    pub capacitance: CapacitanceMatrix,
    /// Figures of the last unit solve (for the analyses formed from the basis).
    pub info: SolveInfo,
}

impl Basis {
    /// One unit solve per electrode on `mesh`, reusing one operator and hierarchy.
    pub fn build(model: &Model, mesh: &Mesh, params: &SolverParams) -> Result<Basis, FaultError> {
        Self::build_within(model, mesh, params, crate::mesh::Budget::of_machine())
    }

    /// As [`Basis::build`], refusing a basis that would not fit `budget`.
    pub fn build_within(
        model: &Model,
        mesh: &Mesh,
        params: &SolverParams,
        budget: crate::mesh::Budget,
    ) -> Result<Basis, FaultError> {
        let groups = electrodes(model);
        let n = groups.len();
        let free: Vec<u32> = (0..mesh.nodes())
            .filter(|&k| mesh.fixed[k].is_free())
            .map(|k| k as u32)
            .collect();
        // The unit solutions (single precision, free nodes), plus one field per worker thread
        // while the scenarios run.
        let need = (n * free.len() * 4 + rayon::current_num_threads() * mesh.nodes() * 8) as f64;
        if need > budget.bytes() {
            return Err(FaultError::TooLarge {
                electrodes: n,
                nodes: mesh.nodes(),
                gib: need / (1024.0 * 1024.0 * 1024.0),
                budget: budget.describe(),
            });
        }
        let mut conductor_electrode = vec![None; model.conductors.len()];
        for (e, g) in groups.iter().enumerate() {
            for &k in &g.conductors {
                conductor_electrode[k] = Some(e);
            }
        }
        // The unit solves run in BASIS_STREAMS contiguous runs side by side, all on one
        // operator and one multigrid hierarchy, set up once (each run has its own copy of the
        // hierarchy's work vectors), and each solve warm-started from the previous one of its
        // run. The split does not depend on the thread count, so the basis is the same
        // everywhere.
        let per = n.div_ceil(BASIS_STREAMS).max(1);
        let runs: Vec<Vec<(usize, &Electrode)>> = groups
            .iter()
            .enumerate()
            .collect::<Vec<_>>()
            .chunks(per)
            .map(|c| c.to_vec())
            .collect();
        let setup = Solver::new(mesh, *params);
        let free_ref = &free;
        type Unit = (usize, Vec<f32>, Vec<f64>, SolveInfo);
        let solved: Vec<Vec<Unit>> = runs
            .par_iter()
            .map(|run| -> Result<Vec<Unit>, FaultError> {
                let mut solver = setup.clone();
                let mut out: Vec<Unit> = Vec::with_capacity(run.len());
                let mut last: Option<Vec<f64>> = None;
                for &(j, g) in run {
                    let mut pots = vec![0.0; model.conductors.len()];
                    for &k in &g.conductors {
                        pots[k] = 1.0;
                    }
                    let sol = solver.solve(&pots, last.as_deref())?;
                    let q = conductor_charges(mesh, &sol.phi, &pots);
                    let unit: Vec<f32> = free_ref
                        .iter()
                        .map(|&k| sol.phi[k as usize] as f32)
                        .collect();
                    out.push((j, unit, q, sol.info));
                    last = Some(sol.phi);
                }
                Ok(out)
            })
            .collect::<Result<_, _>>()?;
        drop(setup);
        let mut c_f = vec![vec![0.0; n]; n];
        let mut phi: Vec<Vec<f32>> = Vec::with_capacity(n);
        let mut iterations = 0;
        let mut info = None;
        for (j, unit_phi, q, unit_info) in solved.into_iter().flatten() {
            iterations += unit_info.iterations;
            for (i, gi) in groups.iter().enumerate() {
                c_f[i][j] = gi.conductors.iter().map(|&k| q[k]).sum();
            }
            info = Some(unit_info);
            phi.push(unit_phi);
        }
        let Some(info) = info else {
            return Err(TransientError::NothingOffEarth.into());
        };
        let scale = (0..n).map(|i| c_f[i][i].abs()).fold(0.0, f64::max);
        let mut asymmetry: f64 = 0.0;
        for (i, row) in c_f.iter().enumerate() {
            for (j, &cij) in row.iter().enumerate().take(i) {
                asymmetry = asymmetry.max((cij - c_f[j][i]).abs());
            }
        }
        Ok(Basis {
            electrodes: groups.clone(),
            conductor_electrode,
            free,
            fixed: mesh.fixed.clone(),
            phi,
            capacitance: CapacitanceMatrix {
                electrodes: groups,
                c_f,
                asymmetry: if scale > 0.0 { asymmetry / scale } else { 0.0 },
                iterations,
            },
            info,
        })
    }

    /// Electrode potentials from conductor potentials (the first conductor of each electrode).
    pub fn electrode_potentials(&self, potentials: &[f64]) -> Vec<f64> {
        self.electrodes
            .iter()
            .map(|e| {
                e.conductors
                    .first()
                    .and_then(|&k| potentials.get(k))
                    .copied()
                    .unwrap_or(0.0)
            })
            .collect()
    }

    /// Conductor potentials from electrode potentials (earthed conductors at 0).
    pub fn conductor_potentials(&self, electrode_v: &[f64]) -> Vec<f64> {
        self.conductor_electrode
            .iter()
            .map(|e| e.and_then(|e| electrode_v.get(e)).copied().unwrap_or(0.0))
            .collect()
    }

    /// The field of the given electrode potentials: φ = Σ_e V_e φ_e.
    pub fn field(&self, electrode_v: &[f64]) -> Vec<f64> {
        let zero_v = vec![0.0; self.electrodes.len()];
        let zero_phi = vec![0.0; self.fixed.len()];
        self.field_from(&zero_phi, &zero_v, electrode_v)
    }

    /// The field of `electrode_v` from a known one, `base_phi` at `base_v`: φ = φ_base +
    /// Σ_e (V_e − V_base,e) φ_e over the electrodes whose potential differs, which for a
    /// fault in one column of several leaves the others out of the sum.
    pub fn field_from(&self, base_phi: &[f64], base_v: &[f64], electrode_v: &[f64]) -> Vec<f64> {
        self.fields_from(
            base_phi,
            base_v,
            std::slice::from_ref(&electrode_v.to_vec()),
        )
        .pop()
        .unwrap_or_default()
    }

    /// The fields of many sets of electrode potentials from one known field, as
    /// [`Basis::field_from`] for each: every unit solution streams through memory once for the
    /// whole set (block by block of free nodes, the blocks in parallel), not once per field.
    pub fn fields_from(
        &self,
        base_phi: &[f64],
        base_v: &[f64],
        sets: &[Vec<f64>],
    ) -> Vec<Vec<f64>> {
        let ne = self.phi.len();
        // Weights per set and electrode, and the electrodes any set moves.
        let weights: Vec<Vec<f64>> = sets
            .iter()
            .map(|ev| {
                (0..ne)
                    .map(|e| {
                        let v = ev.get(e).copied().unwrap_or(0.0);
                        let b = base_v.get(e).copied().unwrap_or(0.0);
                        if v != b { v - b } else { 0.0 }
                    })
                    .collect()
            })
            .collect();
        let moved: Vec<usize> = (0..ne)
            .filter(|&e| weights.iter().any(|w| w[e] != 0.0))
            .collect();
        let m = sets.len();
        let nf = self.free.len();
        // Sums on the free nodes, laid out block by block: block b holds the m partial sums
        // of its free nodes one after another.
        let mut acc = vec![0.0f64; nf * m];
        let kernel = |(b, chunk): (usize, &mut [f64])| {
            let start = b * SUM_BLOCK;
            let len = SUM_BLOCK.min(nf - start);
            for &e in &moved {
                let p = &self.phi[e][start..start + len];
                for (s, w) in weights.iter().enumerate() {
                    let w = w[e];
                    if w == 0.0 {
                        continue;
                    }
                    chunk[s * len..(s + 1) * len]
                        .iter_mut()
                        .zip(p)
                        .for_each(|(o, &x)| *o += w * f64::from(x));
                }
            }
        };
        acc.par_chunks_mut(SUM_BLOCK * m.max(1))
            .enumerate()
            .for_each(kernel);
        let fixed_shift = |k: usize, w: &[f64]| -> f64 {
            let Some(c) = self.fixed[k].conductor_index() else {
                return 0.0;
            };
            self.conductor_electrode
                .get(c)
                .copied()
                .flatten()
                .map_or(0.0, |e| w[e])
        };
        weights
            .par_iter()
            .enumerate()
            .map(|(s, w)| {
                let mut out = base_phi.to_vec();
                for (k, o) in out.iter_mut().enumerate() {
                    *o += fixed_shift(k, w);
                }
                for (f, &k) in self.free.iter().enumerate() {
                    let (b, i) = (f / SUM_BLOCK, f % SUM_BLOCK);
                    let len = SUM_BLOCK.min(nf - b * SUM_BLOCK);
                    out[k as usize] += acc[b * SUM_BLOCK * m + s * len + i];
                }
                out
            })
            .collect()
    }

    /// Electrostatic energy of the electrodes at the given potentials, ½ VᵀCV, J.
    pub fn energy_j(&self, electrode_v: &[f64]) -> f64 {
        quadratic(&self.capacitance.c_f, electrode_v)
    }

    /// Bytes held by the unit solutions.
    pub fn memory_bytes(&self) -> usize {
        self.phi.iter().map(|p| p.len() * 4).sum::<usize>() + self.free.len() * 4
    }
}

fn quadratic(c: &[Vec<f64>], v: &[f64]) -> f64 {
    let mut e = 0.0;
    for (row, vi) in c.iter().zip(v) {
        for (cij, vj) in row.iter().zip(v) {
            e += vi * cij * vj;
        }
    }
    0.5 * e
}

/// What a scenario changes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Kind {
    Nominal,
    Open,
    Short,
    Tolerance,
    Transient,
}

/// A resistor of a column: gap g (between nodes g and g + 1) of string s.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub struct ResistorRef {
    /// Running index over all resistors of all columns (column-major, gap, then string).
    pub index: usize,
    pub column: usize,
    pub gap: usize,
    pub string: usize,
}

/// A protective gap that fired (or may fire, within its band) in a scenario.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FiredGap {
    pub column: usize,
    pub from_node: usize,
    pub to_node: usize,
    pub voltage_v: f64,
    pub firing_v: f64,
}

/// The result of one scenario.
#[derive(Debug, Clone, Serialize)]
pub struct ScenarioResult {
    /// 1 = worst.
    pub rank: usize,
    pub name: String,
    pub kind: Kind,
    pub resistor: Option<ResistorRef>,
    /// Gap voltages per column, V (node g + 1 minus node g).
    pub gap_voltages_v: Vec<Vec<f64>>,
    /// Smallest margin of the field checks (`margin::evaluate`), when any row has a number.
    pub worst_margin: Option<f64>,
    pub worst_item: Option<String>,
    /// Criterion of the worst row.
    pub worst_criterion: Option<String>,
    /// Worst margin relative to the nominal one, minus 1 (−0.05 = 5 % less margin).
    pub change_from_nominal: Option<f64>,
    /// True when any protective gap fired (or reached the bottom of its firing band).
    pub protective_gap_fired: bool,
    pub fired_gaps: Vec<FiredGap>,
    /// Largest |gap voltage| over all columns, V, and the largest ratio to the nominal DC
    /// voltage of the same gap.
    pub max_gap_v: f64,
    pub max_gap_ratio_to_nominal: f64,
    /// Smallest (bottom-of-band firing voltage)/|span voltage| over the protective gaps.
    pub protective_gap_margin: Option<f64>,
    /// Resistor voltages and dissipation against the columns' ratings.
    pub resistors: ResistorCheck,
    /// True when a resistor's voltage (after any protective gap clamps, for the transient) or
    /// its dissipation exceeds its rating.
    pub resistor_rating_exceeded: bool,
    /// Protective gaps that hold a DC fault and so fire over and over (DC scenarios only).
    pub repetitive_firing: Vec<RepetitiveFiring>,
    /// True for the transient with the protective gaps conducting (`clamped_step`); false for
    /// every other scenario, the bare transient included.
    pub protective_gaps_conducting: bool,
}

/// The grading resistors of a scenario against their ratings.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct ResistorCheck {
    /// Largest voltage across one resistor, V, and its place (column, gap; 0-based).
    pub max_v: f64,
    pub max_at: Option<(usize, usize)>,
    /// The same with protective gaps clamping at the top of their firing band, V: across a
    /// gap bridged by a protective gap (alone or within its section) the resistor sees at
    /// most that gap's clamp voltage. Equal to `max_v` without protective gaps.
    pub clamped_max_v: f64,
    pub clamped_max_at: Option<(usize, usize)>,
    /// Voltage rating ÷ clamped voltage, smallest over the columns that give a rating (for
    /// the transient the impulse rating, or the DC rating when none is given).
    pub rating_margin: Option<f64>,
    /// Largest steady dissipation of one resistor, W (DC scenarios only).
    pub max_power_w: Option<f64>,
    /// Power rating ÷ dissipation, smallest over the columns that give a power rating.
    pub power_margin: Option<f64>,
}

/// What one scenario's evaluation gives, before it is named and ranked.
struct Evaluated {
    gap_v: Vec<Vec<f64>>,
    fired: Vec<FiredGap>,
    gap_margin: Option<f64>,
    worst: Worst,
    resistors: (ResistorCheck, bool),
    repetitive: Vec<RepetitiveFiring>,
}

impl ScenarioResult {
    fn assemble(
        name: String,
        kind: Kind,
        resistor: Option<ResistorRef>,
        e: Evaluated,
        nominal_gaps: &[Vec<f64>],
        nominal_worst: Option<f64>,
    ) -> ScenarioResult {
        let (wm, wi, wc) = e.worst;
        ScenarioResult {
            rank: 0,
            name,
            kind,
            resistor,
            max_gap_v: max_abs(&e.gap_v),
            max_gap_ratio_to_nominal: max_ratio(&e.gap_v, nominal_gaps),
            gap_voltages_v: e.gap_v,
            worst_margin: wm,
            worst_item: wi,
            worst_criterion: wc,
            change_from_nominal: match (wm, nominal_worst) {
                (Some(a), Some(b)) if b != 0.0 => Some(a / b - 1.0),
                _ => None,
            },
            protective_gap_fired: !e.fired.is_empty(),
            fired_gaps: e.fired,
            protective_gap_margin: e.gap_margin,
            resistors: e.resistors.0,
            resistor_rating_exceeded: e.resistors.1,
            repetitive_firing: e.repetitive,
            protective_gaps_conducting: false,
        }
    }
}

/// Spread of the worst margin over the Monte Carlo draws.
#[derive(Debug, Clone, Serialize)]
pub struct MonteCarlo {
    pub draws: usize,
    pub seed: u64,
    /// How each resistor was drawn.
    pub distribution: String,
    pub worst_margin_min: Option<f64>,
    pub worst_margin_mean: Option<f64>,
    pub worst_margin_max: Option<f64>,
    /// Standard deviation of the worst margin over the draws.
    pub worst_margin_std: Option<f64>,
    /// Draw (0-based) with the smallest worst margin.
    pub worst_draw: Option<usize>,
    pub max_gap_v: f64,
    /// The most loaded gap of each draw against its nominal DC voltage (the draw's
    /// `max_gap_ratio_to_nominal`): mean and largest over the draws.
    pub gap_ratio_mean: f64,
    pub gap_ratio_max: f64,
}

/// Energies of a terminal-to-tank spark, J.
#[derive(Debug, Clone, Serialize)]
pub struct SparkEnergy {
    /// The column sections shorted (empty for the machine as designed).
    pub shorted_sections: Vec<Section>,
    /// Electrostatic energy of the electrodes before the spark, ½VᵀCV.
    pub stored_j: f64,
    /// Released in the fast collapse (stored minus what the floating column still holds).
    pub released_fast_j: f64,
}

/// What the fault replay computes.
#[derive(Debug, Clone, Serialize)]
pub struct FaultReplay {
    /// The terminal voltage of the design, or, when no conductor is tied to it (a stage-fed
    /// terminal), the highest conductor potential of the nominal state, V.
    pub terminal_voltage_v: f64,
    pub nominal_worst_margin: Option<f64>,
    /// Ranked worst first.
    pub scenarios: Vec<ScenarioResult>,
    pub monte_carlo: Option<MonteCarlo>,
    pub electrodes: Vec<String>,
    pub capacitance_matrix_f: Vec<Vec<f64>>,
    pub capacitance_asymmetry: f64,
    /// Each column as a uniform capacitive ladder (for comparison with hand estimates).
    pub ladder_equivalents: Vec<LadderEquivalent>,
    pub spark_energy: Option<SparkEnergy>,
    /// The spark energy with the chosen column sections shorted, as during conditioning.
    pub spark_energy_conditioning: Option<SparkEnergy>,
    pub networks: Vec<Network>,
    pub basis_memory_bytes: usize,
    /// Wall-clock seconds of the unit solves (basis and capacitance matrix) and of the
    /// scenarios' field checks (not serialized, so that a rerun gives the same JSON).
    #[serde(skip)]
    pub basis_seconds: f64,
    #[serde(skip)]
    pub scenario_seconds: f64,
    /// Scenarios whose field checks were shared with an identical one (the same resistor in
    /// another string).
    pub shared_evaluations: usize,
    pub notes: Vec<String>,
}

impl FaultReplay {
    /// The spark transient: the bare one (column floating) or, with `gaps_conducting`, the
    /// one with the protective gaps conducting, when it was formed.
    pub fn transient(&self, gaps_conducting: bool) -> Option<&ScenarioResult> {
        self.scenarios
            .iter()
            .find(|s| s.kind == Kind::Transient && s.protective_gaps_conducting == gaps_conducting)
    }
}

/// A column seen as the uniform capacitive ladder of the hand estimates, from the solved
/// capacitance matrix: series capacitance between neighbouring electrodes, shunt capacitance
/// of each electrode to earth, and α = √(C_p/C_s) per gap.
#[derive(Debug, Clone, Serialize)]
pub struct LadderEquivalent {
    pub column: usize,
    pub name: String,
    /// Mean mutual capacitance between neighbouring electrodes, F.
    pub series_f: f64,
    /// Mean capacitance of an electrode to earth (its row sum of the Maxwell matrix), F.
    pub shunt_f: f64,
    pub alpha_per_gap: f64,
    /// α times the gap count: the hand estimates' steepness of the transient distribution.
    pub alpha_n: f64,
    /// The ladder's voltage across the gap at the `to` end just after that end falls to
    /// earth, V: −V(N−1)/N + V·sinh(α(N−1))/sinh(αN) for a uniform chain of N gaps at end-to-end
    /// voltage V (the node shift −V·sinh(αx)/sinh(αN), docs/practice.md §2.5, added to the linear
    /// profile). It keeps only neighbour and earth capacitances; the transient scenario uses
    /// the whole matrix.
    pub ladder_end_gap_v: f64,
}

/// The voltage across the end gap of a uniform capacitive ladder of `gaps` gaps at
/// end-to-end voltage `v` just after that end falls to earth: −v(N−1)/N + v·sinh(α(N−1))/
/// sinh(αN), with the ratio written as e^{−α}(1 − e^{−2α(N−1)})/(1 − e^{−2αN}) so that it stays
/// finite for any αN.
pub fn ladder_end_gap(v: f64, alpha: f64, gaps: f64) -> f64 {
    let ratio = (-alpha).exp() * (1.0 - (-2.0 * alpha * (gaps - 1.0)).exp())
        / (1.0 - (-2.0 * alpha * gaps).exp());
    -v * (gaps - 1.0) / gaps + v * ratio
}

/// The ladder equivalents of every column whose electrodes are in the basis.
pub fn ladder_equivalents(
    model: &Model,
    basis: &Basis,
    stage_v: Option<&[f64]>,
) -> Result<Vec<LadderEquivalent>, FaultError> {
    let c = &basis.capacitance.c_f;
    model
        .columns
        .iter()
        .enumerate()
        .filter_map(|(ci, col)| {
            let e: Vec<usize> = col
                .electrodes
                .iter()
                .filter_map(|&k| basis.conductor_electrode.get(k).copied().flatten())
                .collect();
            if e.len() < 2 || e.len() != col.electrodes.len() {
                return None;
            }
            let series: Vec<f64> = e.windows(2).map(|w| -c[w[0]][w[1]]).collect();
            let shunt: Vec<f64> = e.iter().map(|&i| c[i].iter().sum::<f64>()).collect();
            let cs = series.iter().sum::<f64>() / series.len() as f64;
            let cp = shunt.iter().sum::<f64>() / shunt.len() as f64;
            if cs.is_nan() || cp.is_nan() || cs <= 0.0 || cp <= 0.0 {
                return None;
            }
            let alpha = (cp / cs).sqrt();
            let gaps = (col.electrodes.len() + 1) as f64;
            let (v0, v1) = match grading::column_ends(model, stage_v, ci) {
                Ok(ends) => ends,
                Err(e) => return Some(Err(e.into())),
            };
            let ladder_end_gap_v = ladder_end_gap(v1 - v0, alpha, gaps);
            Some(Ok(LadderEquivalent {
                column: ci,
                name: col.name.clone(),
                series_f: cs,
                shunt_f: cp,
                alpha_per_gap: alpha,
                alpha_n: alpha * gaps,
                ladder_end_gap_v,
            }))
        })
        .collect()
}

/// Consecutive gaps of a column shorted together, as during conditioning: gaps `first_gap` to
/// `last_gap` (0-based, inclusive) of column `column`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub struct Section {
    pub column: usize,
    pub first_gap: usize,
    pub last_gap: usize,
}

/// Settings of a replay.
#[derive(Debug, Clone)]
pub struct ReplayOptions {
    /// Monte Carlo draws of the resistor tolerance (0 = none).
    pub samples: usize,
    pub seed: u64,
    /// Sections shorted for the conditioning spark energy (empty = none).
    pub shorted_sections: Vec<Section>,
}

impl Default for ReplayOptions {
    fn default() -> Self {
        Self {
            samples: 200,
            seed: 1,
            shorted_sections: Vec::new(),
        }
    }
}

/// Per-column DC solution of a set of networks.
fn solve_networks(
    model: &Model,
    stage_v: Option<&[f64]>,
    networks: &[Network],
) -> Result<Vec<NetworkSolution>, FaultError> {
    networks
        .iter()
        .map(|n| {
            let (v0, v1) = grading::column_ends(model, stage_v, n.column)?;
            Ok(n.solve(v0, v1)?)
        })
        .collect()
}

/// Fired protective gaps of node potentials per column.
fn fired_gaps(networks: &[Network], node_v: &[Vec<f64>]) -> (Vec<FiredGap>, Option<f64>) {
    let mut fired = Vec::new();
    let mut margin: Option<f64> = None;
    for (n, v) in networks.iter().zip(node_v) {
        for p in &n.protective {
            let (Some(a), Some(b)) = (v.get(p.from_node), v.get(p.to_node)) else {
                continue;
            };
            let dv = (b - a).abs();
            if dv > 0.0 {
                let m = p.firing_low_v() / dv;
                margin = Some(margin.map_or(m, |x: f64| x.min(m)));
            }
            // A clamped gap holds 1e-6 below its firing voltage at most.
            if dv >= p.firing_low_v() * (1.0 - 1e-6) {
                fired.push(FiredGap {
                    column: n.column,
                    from_node: p.from_node,
                    to_node: p.to_node,
                    voltage_v: b - a,
                    firing_v: p.firing_v,
                });
            }
        }
    }
    (fired, margin)
}

/// The resistors of every column against their ratings, for gap voltages `gap_v` (per
/// column, per gap). `steady` says whether the voltages are a DC state (dissipation is then
/// checked; a transient lasts too short for it).
fn resistor_check(
    model: &Model,
    networks: &[Network],
    gap_v: &[Vec<f64>],
    steady: bool,
) -> (ResistorCheck, bool) {
    let mut out = ResistorCheck::default();
    let mut exceeded = false;
    let mut max_power: Option<f64> = None;
    for (n, gv) in networks.iter().zip(gap_v) {
        let col = model.columns.get(n.column);
        // A spark's transient is short: the impulse rating holds there when one is given.
        let rating = col.and_then(|c| {
            if steady {
                c.resistor_rating_v
            } else {
                c.resistor_impulse_v.or(c.resistor_rating_v)
            }
        });
        let power_rating = col.and_then(|c| c.resistor_power_w);
        for (g, &v) in gv.iter().enumerate() {
            let a = v.abs();
            if a > out.max_v {
                out.max_v = a;
                out.max_at = Some((n.column, g));
            }
            let clamp = n
                .protective
                .iter()
                .filter(|p| p.from_node <= g && g < p.to_node)
                .map(|p| p.firing_high_v())
                .reduce(f64::min);
            let c = clamp.map_or(a, |f| a.min(f));
            if c > out.clamped_max_v {
                out.clamped_max_v = c;
                out.clamped_max_at = Some((n.column, g));
            }
            if let Some(r) = rating
                && c > 0.0
            {
                let m = r / c;
                out.rating_margin = Some(out.rating_margin.map_or(m, |x| x.min(m)));
                exceeded |= m < 1.0;
            }
            if steady && !n.relative {
                for &r in n.resistors_ohm.get(g).into_iter().flatten() {
                    let p = if r.is_finite() { v * v / r } else { 0.0 };
                    max_power = Some(max_power.map_or(p, |x| x.max(p)));
                    if let Some(pr) = power_rating
                        && p > 0.0
                    {
                        let m = pr / p;
                        out.power_margin = Some(out.power_margin.map_or(m, |x| x.min(m)));
                        exceeded |= m < 1.0;
                    }
                }
            }
        }
    }
    out.max_power_w = max_power;
    (out, exceeded)
}

/// Worst margin, its item and its criterion.
type Worst = (Option<f64>, Option<String>, Option<String>);

/// The field checks of one set of conductor potentials, their field formed from the basis
/// unless `phi` gives it already (from [`Basis::fields_from`]).
fn field_margins(
    model: &Model,
    basis: &Basis,
    work: &mut Analysis,
    potentials: Vec<f64>,
    phi: Option<Vec<f64>>,
) -> Result<Worst, FaultError> {
    let ev = basis.electrode_potentials(&potentials);
    let phi = phi.unwrap_or_else(|| basis.field(&ev));
    {
        let fm = FieldMap::new(&work.mesh, model, &phi, &potentials);
        let samples = fm.surface_samples();
        work.peaks = fm.conductor_peaks(&samples);
        work.samples = samples;
        work.probes = model
            .probes
            .iter()
            .map(|p| crate::analysis::ProbeResult {
                name: p.name.clone(),
                field: fm.at(p.at),
            })
            .collect();
    }
    work.energy_j = basis.energy_j(&ev);
    work.potentials = potentials;
    work.solution.phi = phi;
    let m = margin::evaluate(model, work, None)?;
    let worst = m
        .rows
        .iter()
        .filter_map(|r| r.margin.map(|x| (x, r)))
        .min_by(|a, b| a.0.total_cmp(&b.0));
    Ok(match worst {
        Some((x, r)) => (
            Some(x),
            Some(r.item.clone()),
            Some(r.criterion_name.clone()),
        ),
        None => (None, None, None),
    })
}

fn max_abs(v: &[Vec<f64>]) -> f64 {
    v.iter().flatten().fold(0.0, |m, x| m.max(x.abs()))
}

fn max_ratio(v: &[Vec<f64>], nominal: &[Vec<f64>]) -> f64 {
    let mut r: f64 = 0.0;
    for (a, b) in v.iter().zip(nominal) {
        for (x, y) in a.iter().zip(b) {
            if y.abs() > 0.0 {
                r = r.max(x.abs() / y.abs());
            }
        }
    }
    r
}

/// Replays every scenario of the model's grading networks. `progress` is called once per
/// finished scenario (from worker threads).
pub fn replay(
    model: &Model,
    mesh: &Mesh,
    params: &SolverParams,
    stage_v: Option<&[f64]>,
    options: &ReplayOptions,
    progress: &(dyn Fn(usize) + Sync),
) -> Result<FaultReplay, FaultError> {
    if model.columns.is_empty() {
        return Err(FaultError::NoColumns);
    }
    let networks: Vec<Network> = (0..model.columns.len())
        .map(|c| Network::from_column(model, c))
        .collect::<Result<_, _>>()?;
    let mut notes = network_notes(model, &networks);
    let t_basis = std::time::Instant::now();
    let basis = Basis::build(model, mesh, params)?;
    let basis_seconds = t_basis.elapsed().as_secs_f64();
    let t_scenarios = std::time::Instant::now();
    progress(0);

    let set = scenarios::cases(model, &networks, options, &mut notes)?;
    let done = std::sync::atomic::AtomicUsize::new(0);
    let tick = || {
        let k = done.fetch_add(1, std::sync::atomic::Ordering::Relaxed) + 1;
        progress(k);
    };
    let gap_capacitance = firing::gap_capacitances(model, &basis, &networks);
    let (raw, shared_evaluations) = scenarios::evaluate(
        model,
        mesh,
        &basis,
        stage_v,
        &set.cases,
        &gap_capacitance,
        &tick,
    )?;
    let nominal_gaps = raw[0].gap_v.clone();
    let nominal_worst = raw[0].worst.0;
    let mut results: Vec<ScenarioResult> = set
        .cases
        .iter()
        .zip(raw)
        .map(|(case, e)| {
            ScenarioResult::assemble(
                case.name.clone(),
                case.kind,
                case.resistor,
                e,
                &nominal_gaps,
                nominal_worst,
            )
        })
        .collect();
    let monte_carlo = scenarios::monte_carlo(&mut results, set.fixed, options.seed);

    let nominal_pot = {
        let sols = solve_networks(model, stage_v, &networks)?;
        let node_v: Vec<Vec<f64>> = sols.iter().map(|s| s.node_v.clone()).collect();
        grading::potentials_with_nodes(model, stage_v, &node_v)?
    };
    let before = basis.electrode_potentials(&nominal_pot);
    let spark = transient::scenarios(
        model,
        &basis,
        &networks,
        &before,
        &mut scenarios::work_analysis(mesh, &basis),
        (&nominal_gaps, nominal_worst),
    )?;
    // A spark's energy, when anything can spark.
    let (spark_energy, spark_energy_conditioning) = if spark.scenarios.is_empty() {
        (None, None)
    } else {
        let (e, c) =
            transient::energies(model, &basis, stage_v, &networks, &options.shorted_sections)?;
        (Some(e), c)
    };
    results.extend(spark.scenarios);
    notes.extend(spark.notes);
    progress(done.load(std::sync::atomic::Ordering::Relaxed) + 1);

    rank(&mut results);
    Ok(FaultReplay {
        terminal_voltage_v: if model
            .conductors
            .iter()
            .any(|c| matches!(c.potential, PotentialSpec::Terminal { .. }))
        {
            model.terminal_voltage
        } else {
            // A stage-fed terminal: the highest conductor potential of the nominal state.
            nominal_pot
                .iter()
                .copied()
                .fold(0.0, |a: f64, v| if v.abs() > a.abs() { v } else { a })
        },
        nominal_worst_margin: nominal_worst,
        scenarios: results,
        monte_carlo,
        electrodes: basis.electrodes.iter().map(|e| e.name.clone()).collect(),
        capacitance_matrix_f: basis.capacitance.c_f.clone(),
        capacitance_asymmetry: basis.capacitance.asymmetry,
        ladder_equivalents: ladder_equivalents(model, &basis, stage_v)?,
        spark_energy,
        spark_energy_conditioning,
        networks,
        basis_memory_bytes: basis.memory_bytes(),
        basis_seconds,
        scenario_seconds: t_scenarios.elapsed().as_secs_f64(),
        shared_evaluations,
        notes,
    })
}

/// What the replay assumes about leakage, ratings and node currents, per column.
fn network_notes(model: &Model, networks: &[Network]) -> Vec<String> {
    let mut notes = Vec::new();
    for n in networks {
        if n.relative {
            notes.push(format!(
                "column '{}' gives no resistor value: equal resistors stand in, so the division \
                 is right but no currents are reported",
                n.name
            ));
        }
        if !n.protective.is_empty() {
            notes.push(format!(
                "column '{}': protective gaps clamp at their firing voltage; a gap counts as \
                 fired from the bottom of its ±{:.0} % band (common practice, no source)",
                n.name,
                100.0 * n.protective[0].band
            ));
        }
    }
    for n in networks {
        let Some(col) = model.columns.get(n.column) else {
            continue;
        };
        if !n.relative {
            match col.leakage {
                crate::model::LeakageSpec::None => notes.push(format!(
                    "column '{}': no insulator leakage (leakage = \"none\")",
                    n.name
                )),
                crate::model::LeakageSpec::PerGap(r) => notes.push(format!(
                    "column '{}': insulator leakage {} across every gap, as the design gives it",
                    n.name,
                    crate::units::format_si(r, crate::units::Dimension::Resistance)
                )),
                crate::model::LeakageSpec::FromMaterials => {
                    let l = grading::leakage::from_materials(model, n.column);
                    let names: Vec<String> = l
                        .paths
                        .iter()
                        .map(|p| {
                            format!(
                                "'{}' ({}, {:.0e} Ohm m)",
                                p.dielectric, p.material, p.resistivity_ohm_m
                            )
                        })
                        .collect();
                    let r_min = l.per_gap_ohm.iter().flatten().copied().reduce(f64::min);
                    let chain = n
                        .resistors_ohm
                        .first()
                        .map(|rs| 1.0 / rs.iter().map(|r| 1.0 / r).sum::<f64>());
                    match (r_min, chain) {
                        (Some(rl), Some(rc)) => notes.push(format!(
                            "column '{}': bulk insulator leakage through {}: {} per gap at the \
                             least, {:.2e} of the chain's gap current; {} (common practice)",
                            n.name,
                            names.join(", "),
                            crate::units::format_si(rl, crate::units::Dimension::Resistance),
                            rc / rl,
                            crate::materials::RESISTIVITY_SOURCE
                        )),
                        _ => notes.push(format!(
                            "column '{}': no insulator with a known material spans its gaps, so \
                             no leakage is modelled",
                            n.name
                        )),
                    }
                    notes.extend(l.notes.iter().map(|x| format!("column '{}': {x}", n.name)));
                }
            }
        }
        match (col.resistor_impulse_v, col.resistor_rating_v) {
            (Some(i), _) => notes.push(format!(
                "column '{}': resistor voltages just after a spark are checked against the \
                 impulse rating {:.1} kV",
                n.name,
                i / 1e3
            )),
            (None, Some(r)) => notes.push(format!(
                "column '{}' gives no impulse rating: resistor voltages just after a spark are \
                 checked against the DC rating {:.1} kV (conservative; add \
                 grading.impulse_rating from the resistor's pulse data)",
                n.name,
                r / 1e3
            )),
            (None, None) => {}
        }
        if col.resistor_rating_v.is_none() && col.resistor_power_w.is_none() {
            notes.push(format!(
                "column '{}' gives no resistor rating: resistor voltages are reported but not \
                 checked (add grading.rating and grading.power_rating)",
                n.name
            ));
        }
        if n.node_current_a.iter().any(|i| *i != 0.0) {
            let total: f64 = n.node_current_a.iter().sum();
            notes.push(format!(
                "column '{}': {} drawn from its electrodes to ground in every scenario",
                n.name,
                crate::units::format_si(total, crate::units::Dimension::Current)
            ));
        }
    }
    notes
}

/// Number of scenarios `replay` evaluates through the field (for a progress bar): nominal,
/// open and short per resistor, tolerance worst case per gap, the draws.
pub fn scenario_count(model: &Model, samples: usize) -> usize {
    let mut n = 1;
    let mut any_tol = false;
    for c in &model.columns {
        let gaps = c.electrodes.len() + 1;
        n += 2 * gaps * c.strings.max(1);
        if c.tolerance.unwrap_or(0.0) > 0.0 {
            n += gaps;
            any_tol = true;
        }
    }
    if any_tol {
        n += samples;
    }
    n + 1
}

/// Sorts worst margin first (no number last, in their order) and numbers the ranks.
fn rank(results: &mut [ScenarioResult]) {
    results.sort_by(|a, b| match (a.worst_margin, b.worst_margin) {
        (Some(x), Some(y)) => x.total_cmp(&y),
        (Some(_), None) => std::cmp::Ordering::Less,
        (None, Some(_)) => std::cmp::Ordering::Greater,
        (None, None) => std::cmp::Ordering::Equal,
    });
    for (k, r) in results.iter_mut().enumerate() {
        r.rank = k + 1;
    }
}

/// Node potentials of every column from conductor potentials: node 0 the `from` end, the
/// electrodes in order, the last node the `to` end (the tank when an end is missing).
pub fn column_nodes(model: &Model, conductor_v: &[f64]) -> Vec<Vec<f64>> {
    let at = |c: Option<usize>| c.and_then(|c| conductor_v.get(c)).copied().unwrap_or(0.0);
    model
        .columns
        .iter()
        .map(|col| {
            let mut v = vec![at(col.from)];
            v.extend(col.electrodes.iter().map(|&k| at(Some(k))));
            v.push(at(col.to));
            v
        })
        .collect()
}
