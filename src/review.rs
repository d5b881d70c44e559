//! One whole review of a design: the stack, the field solve, the grid study, the margins and
//! the nominal state of the grading columns.
//!
//! Input: a validated model. Output: a `Review` holding each stage's plain result, used by
//! `check`, `compare` and `sweep` alike so that all three see the same numbers.

// The result types a review holds, named here for the library's users.
pub use crate::analysis::{Analysis, AnalysisError, ProbeResult};
pub use crate::field::{
    ConductorPeak, InsulatorPeak, InsulatorSample, JunctionSample, Medium, PointField,
    SurfaceSample,
};
pub use crate::grading::summary::{ColumnSummary, ProtectiveSummary};
pub use crate::grading::{GradingError, Network, NetworkError, NetworkSolution, ProtectiveGap};
pub use crate::margin::{
    Holdoff, LineSummary, MarginError, MarginRow, Margins, RowMedium, Scaling, Status,
};
pub use crate::mesh::{FixedId, Holder, Mesh, MeshError, builds as meshes_built};

use crate::analysis::{analyze_on, interpolated};
use crate::grading::summary::summarize;
use crate::margin::evaluate;
use crate::model::Model;
use crate::solve::SolverParams;
use crate::stack::{StackAnalysis, StackError, analyze_stack_keeping_mesh};
use crate::study::grid_study;
pub use crate::study::{Accuracy, GridStudy, InsulatorStudy, JunctionStudy, PeakStudy};
use thiserror::Error;

#[derive(Debug, Error)]
pub enum ReviewError {
    #[error(transparent)]
    Stack(#[from] StackError),
    #[error(transparent)]
    Analysis(#[from] AnalysisError),
    #[error(transparent)]
    Margin(#[from] MarginError),
    #[error(transparent)]
    Grading(#[from] GradingError),
}

/// The results of one review.
pub struct Review {
    pub stack: Option<StackAnalysis>,
    pub fine: Analysis,
    pub study: Option<GridStudy>,
    pub margins: Margins,
    /// The nominal DC state of each grading column.
    pub grading: Vec<ColumnSummary>,
}

/// Refinement rounds the accuracy target may add after the first mesh.
pub const MAX_REFINEMENTS: usize = 3;

/// The fine grid may grow to this many times the unknowns of the first mesh while the
/// accuracy target is pursued (a bound on the run time of a review).
pub const MAX_GROWTH: f64 = 16.0;

/// Margin rows within this factor of the worst margin have their peaks held to the
/// accuracy target.
pub const COUNTED_WITHIN: f64 = 2.0;

/// Runs the stack (its loaded stage voltages feed "stage:N" potentials), the field solve, the
/// grid study when asked, and the margins. With the study and a geometry-derived mesh, the
/// neighbourhoods of the conductors and dielectrics whose peaks (surface field; tangential
/// field along an insulator surface) enter a margin row within a factor 2 of the worst and
/// miss the accuracy target are refined (spacing × 1/√2 or finer) and the review is run
/// again, up to `MAX_REFINEMENTS` times and `MAX_GROWTH` times the first mesh's
/// unknowns; the study then says whether the target was reached.
pub fn review(
    model: &Model,
    params: &SolverParams,
    with_study: bool,
) -> Result<Review, ReviewError> {
    // The automatic strays mesh the design; the first round solves the field on that mesh.
    let (stack, mut first_mesh) = analyze_stack_keeping_mesh(model, params, &Default::default())?;
    let stage_v = stack.as_ref().map(|s| s.stage_voltages());
    let mut m = model.clone();
    let mut unknowns = Vec::new();
    let mut round = 0;
    // The previous round's design and field: the next round's solve starts from it.
    let mut previous: Option<(Model, Analysis)> = None;
    loop {
        let mesh = match first_mesh.take() {
            Some(mesh) => mesh,
            None => Mesh::build(&m).map_err(AnalysisError::from)?,
        };
        // A refinement round starts from the round before; that field is let go once
        // interpolated, before the solve.
        let start = previous.take().map(|(pm, a)| interpolated(&mesh, &pm, &a));
        let potentials =
            crate::grading::potentials(&m, stage_v.as_deref()).map_err(AnalysisError::from)?;
        let fine = analyze_on(&m, mesh, potentials, params, start.as_deref())?;
        unknowns.push(fine.solution.info.unknowns);
        let study = if with_study {
            Some(grid_study(&m, &fine, params, stage_v.as_deref())?)
        } else {
            None
        };
        let margins = evaluate(&m, &fine, study.as_ref())?;
        let Some(mut study) = study else {
            let grading = summarize(model, stage_v.as_deref())?;
            return Ok(Review {
                stack,
                fine,
                study: None,
                margins,
                grading,
            });
        };
        let (counted, misses, worst) = judge(&m, &margins, &study);
        let adaptive = m.mesh.adaptive();
        let reached = misses.is_empty();
        let growth = unknowns[round] as f64 / unknowns[0].max(1) as f64;
        let stop = if reached || !adaptive {
            None
        } else if round >= MAX_REFINEMENTS {
            Some(format!("{MAX_REFINEMENTS} refinements made"))
        } else if growth * 2.0 > MAX_GROWTH {
            Some(format!(
                "the next refinement would pass {MAX_GROWTH:.0} times the first mesh"
            ))
        } else if !fits_after_refining(&m, &misses) {
            Some("the next refinement would not fit the memory budget".to_string())
        } else {
            // Refine each missing conductor's neighbourhood by the factor that a second-order
            // error asks for, at least 1/√2 and at most 1/2 in one round.
            let before = m.clone();
            m.mesh = refined(&m, &misses);
            previous = Some((before, fine));
            round += 1;
            continue;
        };
        study.accuracy = Some(Accuracy {
            target: m.mesh.accuracy,
            reached,
            worst_relative_error: worst.as_ref().map_or(0.0, |w| w.1),
            worst_item: worst.map(|w| w.0),
            counted,
            refinements: round,
            unknowns,
            adaptive,
            stopped: stop,
        });
        let grading = summarize(model, stage_v.as_deref())?;
        return Ok(Review {
            stack,
            fine,
            study: Some(study),
            margins,
            grading,
        });
    }
}

/// A surface whose peak is held to the accuracy target: a conductor, or one side of a
/// dielectric's free surface (its peak tangential field).
#[derive(Debug, Clone, Copy, PartialEq)]
enum Item {
    Conductor(usize),
    Insulator(usize, Medium),
}

impl Item {
    fn name(self, model: &Model) -> String {
        match self {
            Item::Conductor(k) => model.conductors[k].name.clone(),
            Item::Insulator(k, side) => format!(
                "{} ({} side)",
                model.dielectrics[k].name,
                if side == Medium::Vacuum {
                    "vacuum"
                } else {
                    "gas"
                }
            ),
        }
    }

    /// The item a margin row's peak belongs to (triple-junction rows belong to none: they
    /// are flags whose field depends on the contact geometry, see `margin::on_insulator`).
    fn of_row(model: &Model, row: &MarginRow) -> Option<Item> {
        let dielectric = || model.dielectrics.iter().position(|d| d.name == row.item);
        match row.medium {
            RowMedium::Gas | RowMedium::Vacuum => model
                .conductors
                .iter()
                .position(|c| c.name == row.item)
                .map(Item::Conductor),
            RowMedium::InsulatorGasSide => dielectric().map(|k| Item::Insulator(k, Medium::Gas)),
            RowMedium::InsulatorVacuumSide => {
                dielectric().map(|k| Item::Insulator(k, Medium::Vacuum))
            }
            RowMedium::TripleJunctionGas | RowMedium::TripleJunctionVacuum => None,
        }
    }

    /// The estimated relative error of the item's peak in the study, when it has one.
    fn error(self, study: &GridStudy) -> Option<f64> {
        match self {
            Item::Conductor(k) => study
                .peaks
                .iter()
                .find(|p| p.conductor == k)
                .map(|p| p.relative_error),
            Item::Insulator(k, side) => study
                .insulator_peaks
                .iter()
                .find(|p| p.dielectric == k && p.side == side)
                .map(|p| p.relative_error),
        }
    }
}

/// Counted items' names, the misses (item, relative error) and the worst counted error with
/// its item's name.
type Judgement = (Vec<String>, Vec<(Item, f64)>, Option<(String, f64)>);

/// The peaks that count for the accuracy target (conductor and insulator-surface rows within
/// `COUNTED_WITHIN` of the worst margin of the rows that enter the hold-off voltage; every
/// conductor when there are no such rows), those that miss it (item, relative error) and the
/// worst counted error with its item.
fn judge(model: &Model, margins: &Margins, study: &GridStudy) -> Judgement {
    let worst_margin = margins
        .rows
        .iter()
        .filter(|r| r.in_holdoff)
        .filter_map(|r| r.margin)
        .fold(f64::INFINITY, f64::min);
    let mut counted: Vec<Item> = Vec::new();
    if worst_margin.is_infinite() {
        // No margin row (no gas, no criteria): every conductor's peak is held to the target.
        counted = (0..model.conductors.len()).map(Item::Conductor).collect();
    } else {
        let rows = margins
            .rows
            .iter()
            .filter(|r| r.margin.is_some_and(|x| x <= COUNTED_WITHIN * worst_margin));
        for item in rows.filter_map(|r| Item::of_row(model, r)) {
            if !counted.contains(&item) {
                counted.push(item);
            }
        }
    }
    let mut misses = Vec::new();
    let mut worst: Option<(String, f64)> = None;
    for &item in &counted {
        let Some(e) = item.error(study) else {
            continue;
        };
        if worst.as_ref().is_none_or(|w| e > w.1) {
            worst = Some((item.name(model), e));
        }
        if e > model.mesh.accuracy {
            misses.push((item, e));
        }
    }
    let names = counted.iter().map(|i| i.name(model)).collect();
    (names, misses, worst)
}

/// The mesh controls with each missing item's neighbourhood (a conductor's, or a
/// dielectric's for its surface) refined by the factor a second-order error asks for, at
/// least 1/√2 and at most 1/2.9 in one round.
fn refined(model: &Model, misses: &[(Item, f64)]) -> crate::model::MeshSpec {
    let mut spec = model.mesh.clone();
    spec.refine
        .resize(model.conductors.len().max(spec.refine.len()), 1.0);
    spec.refine_dielectric.resize(
        model.dielectrics.len().max(spec.refine_dielectric.len()),
        1.0,
    );
    for &(item, err) in misses {
        let factor = (spec.accuracy / err).sqrt().clamp(0.35, 0.707);
        match item {
            Item::Conductor(k) => spec.refine[k] *= factor,
            Item::Insulator(k, _) => spec.refine_dielectric[k] *= factor,
        }
    }
    spec
}

/// Would the refined mesh (with its solve and grid study) fit this machine's memory budget?
fn fits_after_refining(model: &Model, misses: &[(Item, f64)]) -> bool {
    let mut trial = model.clone();
    trial.mesh = refined(model, misses);
    crate::mesh::estimate(&trial, crate::mesh::Budget::of_machine())
        .is_ok_and(|e| e.exact && e.total_bytes() <= crate::mesh::Budget::of_machine().bytes())
}
