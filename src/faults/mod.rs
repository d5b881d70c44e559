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
//!
//! Files: `basis` (unit solves, superposition), `results` (what a replay gives), `scenarios`
//! (the DC cases), `screen` (which conductor rows a scenario must form), `transient` (the
//! spark transient), `clamp` (the protective gaps through it), `firing` (repetitive firing),
//! `notes` (the replay's stated assumptions, as data); this file runs the replay in stages.

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

mod basis;
mod clamp;
mod firing;
mod notes;
mod results;
mod scenarios;
mod screen;
mod transient;
pub(crate) use basis::Basis;
use basis::*;
#[cfg(test)]
pub(crate) use basis::{mirror_partners, mirrored_in_z};
#[cfg(test)]
pub(crate) use clamp::{GapLink, clamped_step};
pub use firing::RepetitiveFiring;
#[cfg(test)]
pub(crate) use firing::transfer_capacitance;
pub use notes::ReplayNote;
use notes::network_notes;
pub use results::*;
#[cfg(test)]
pub(crate) use transient::fast_step;
pub(crate) use transient::node_electrode;

/// Why the fast transient after a spark cannot be formed.
#[derive(Debug, Error)]
pub enum TransientError {
    #[error("the design has no conductor off ground potential")]
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
    #[error("no conductor apart from the grading electrodes is off ground potential")]
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

/// Loads one set of conductor potentials into the work analysis `work`: the field formed
/// from the basis unless `phi` gives it already (from [`Basis::fields_from`]) and its surface
/// samples, all that the margin rows read (the peaks, probes and energy of an analysis are
/// left empty: a scenario reports its worst row only).
fn load_field(
    model: &Model,
    basis: &Basis,
    work: &mut Analysis,
    potentials: Vec<f64>,
    phi: Option<Vec<f64>>,
) {
    let phi = phi.unwrap_or_else(|| basis.field(&basis.electrode_potentials(&potentials)));
    // The node-field table belongs to the field it was formed from: a new field empties it,
    // and the samples and the margins then share one table formed from this field.
    work.node_fields = std::sync::OnceLock::new();
    work.samples = FieldMap::sharing(&work.mesh, model, &phi, &potentials, &work.node_fields)
        .surface_samples_planned(&basis.surface_plan);
    work.peaks.clear();
    work.probes.clear();
    work.energy_j = 0.0;
    work.potentials = potentials;
    work.solution.phi = phi;
}

/// The worst row of a ranked set: its margin, item and criterion.
fn worst_of(rows: &[margin::MarginRow]) -> Worst {
    match screen::worst_row(rows) {
        Some(r) => (
            r.margin,
            Some(r.item.clone()),
            Some(r.criterion_name.clone()),
        ),
        None => (None, None, None),
    }
}

/// The field checks of one set of conductor potentials, every row of them (the direct path).
fn field_margins(
    model: &Model,
    basis: &Basis,
    work: &mut Analysis,
    potentials: Vec<f64>,
    phi: Option<Vec<f64>>,
) -> Result<Worst, FaultError> {
    load_field(model, basis, work, potentials, phi);
    Ok(worst_of(&evaluate_halves(model, work)?.rows))
}

/// Every row of the field loaded in `work`, as [`margin::evaluate`] gives them, formed in two
/// halves side by side (alternate conductors; the insulators with the first), then ranked
/// together. A tie for the smallest margin between rows of the two halves, whose order only
/// one evaluation settles, is evaluated again in one piece.
fn evaluate_halves(model: &Model, work: &Analysis) -> Result<margin::Margins, FaultError> {
    let (a, b) = rayon::join(
        || margin::evaluate_selected(model, work, None, &|c| c % 2 == 0, true),
        || margin::evaluate_selected(model, work, None, &|c| c % 2 == 1, false),
    );
    let (mut a, b) = (a?, b?);
    a.rows.extend(b.rows);
    a.field_lines.extend(b.field_lines);
    margin::rank(&mut a.rows);
    if screen::tied(&a.rows) {
        return Ok(margin::evaluate(model, work, None)?);
    }
    Ok(a)
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
    // The solvers' hierarchies are freed now; hand their pages back before the scenarios
    // allocate theirs (glibc keeps freed memory by default: 40 MB on the tandem).
    #[cfg(all(target_os = "linux", target_env = "gnu"))]
    // SAFETY: malloc_trim only returns free heap pages to the system; no live allocation is
    // touched.
    unsafe {
        libc::malloc_trim(0);
    }
    let basis_seconds = t_basis.elapsed().as_secs_f64();
    let t_scenarios = std::time::Instant::now();
    progress(0);
    // One copy of the mesh shared by every work analysis of the scenarios (its insulator
    // sites and fits then formed once for all of them).
    let work_mesh = std::sync::Arc::new(mesh.clone());

    let set = scenarios::cases(model, &networks, options, &mut notes)?;
    let done = std::sync::atomic::AtomicUsize::new(0);
    let tick = || {
        let k = done.fetch_add(1, std::sync::atomic::Ordering::Relaxed) + 1;
        progress(k);
    };
    let (raw, shared_evaluations) = scenarios::evaluate(
        model,
        &work_mesh,
        &basis,
        stage_v,
        &set.cases,
        options.exhaustive,
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
        &mut scenarios::work_analysis(&work_mesh, &basis),
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

/// Sorts worst margin first (no number last, in their order) and numbers the ranks. Margins
/// are compared to 24 significant bits (a part in 1.7e7): scenarios whose margins differ by
/// rounding only (every one that leaves the worst row's field unchanged) keep the order of
/// the scenarios, instead of an order that a change in the last bits of a sum would shuffle.
fn rank(results: &mut [ScenarioResult]) {
    let key = |x: f64| f64::from_bits(x.to_bits() & !((1u64 << 29) - 1));
    results.sort_by(|a, b| match (a.worst_margin, b.worst_margin) {
        (Some(x), Some(y)) => key(x).total_cmp(&key(y)),
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
pub(crate) fn column_nodes(model: &Model, conductor_v: &[f64]) -> Vec<Vec<f64>> {
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
