//! One whole review of a design: the stack, the field solve, the grid study, the margins and
//! the nominal state of the grading columns.
//!
//! Input: a validated model. Output: a `Review` holding each stage's plain result, used by
//! `check`, `compare` and `sweep` alike so that all three see the same numbers.

use crate::analysis::{Analysis, AnalysisError, analyze};
use crate::grading::GradingError;
use crate::grading::summary::{ColumnSummary, summarize};
use crate::margin::{MarginError, Margins, evaluate};
use crate::model::Model;
use crate::solve::SolverParams;
use crate::stack::{StackAnalysis, StackError, analyze_stack};
use crate::study::{GridStudy, grid_study};
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

/// Runs the stack (its loaded stage voltages feed "stage:N" potentials), the field solve, the
/// grid study when asked, and the margins.
pub fn review(
    model: &Model,
    params: &SolverParams,
    with_study: bool,
) -> Result<Review, ReviewError> {
    let stack = analyze_stack(model, params, &Default::default())?;
    let stage_v = stack.as_ref().map(|s| s.stage_voltages());
    let fine = analyze(model, params, stage_v.as_deref())?;
    let study = if with_study {
        Some(grid_study(model, &fine, params, stage_v.as_deref())?)
    } else {
        None
    };
    let margins = evaluate(model, &fine, study.as_ref())?;
    let grading = summarize(model, stage_v.as_deref())?;
    Ok(Review {
        stack,
        fine,
        study,
        margins,
        grading,
    })
}
