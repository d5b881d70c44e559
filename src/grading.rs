//! Electrode potentials from the grading network.
//!
//! Input: a `model::Model` (potential specifications, columns and their resistor chains).
//! Output: one potential in volts per conductor, in conductor order. A uniform resistor chain
//! divides the end-to-end voltage of a column equally between its gaps; "stage:N" potentials
//! take the loaded stage voltages of the multiplier model, which the caller supplies.

use crate::model::{Model, PotentialSpec};
use thiserror::Error;

#[derive(Debug, Error, Clone, PartialEq)]
pub enum GradingError {
    #[error(
        "conductor '{conductor}' has potential \"stage:{stage}\", but no multiplier stage voltages are available; add a [multiplier] table or give the potential in volts"
    )]
    StageUnavailable { conductor: String, stage: usize },
    #[error(
        "conductor '{conductor}' refers to grading node {node} of column {column}, which has nodes 0 to {last}"
    )]
    NodeOutOfRange {
        conductor: String,
        column: usize,
        node: usize,
        last: usize,
    },
    #[error(
        "conductor '{conductor}' refers to column {column}, but the design has {columns} columns"
    )]
    NoSuchColumn {
        conductor: String,
        column: usize,
        columns: usize,
    },
    #[error("the potentials of '{conductor}' depend on each other in a loop")]
    Loop { conductor: String },
}

/// Resolves every conductor potential to volts. `stage_v[k]` is the loaded mean voltage of
/// multiplier stage node k (index 0 = stage 1), when a ladder model is available.
pub fn potentials(model: &Model, stage_v: Option<&[f64]>) -> Result<Vec<f64>, GradingError> {
    let n = model.conductors.len();
    let mut out: Vec<Option<f64>> = vec![None; n];
    for k in 0..n {
        resolve(model, stage_v, k, &mut out, 0)?;
    }
    Ok(out.into_iter().map(|v| v.unwrap_or(0.0)).collect())
}

fn resolve(
    model: &Model,
    stage_v: Option<&[f64]>,
    k: usize,
    out: &mut [Option<f64>],
    depth: usize,
) -> Result<f64, GradingError> {
    if let Some(v) = out[k] {
        return Ok(v);
    }
    let cond = &model.conductors[k];
    if depth > model.conductors.len() + 1 {
        return Err(GradingError::Loop {
            conductor: cond.name.clone(),
        });
    }
    let v = match cond.potential {
        PotentialSpec::Ground => 0.0,
        PotentialSpec::Terminal { fraction } => fraction * model.terminal_voltage,
        PotentialSpec::Absolute { volts } => volts,
        PotentialSpec::Stage { stage } => match stage_v {
            Some(sv) if stage >= 1 && stage <= sv.len() => sv[stage - 1],
            _ => {
                return Err(GradingError::StageUnavailable {
                    conductor: cond.name.clone(),
                    stage,
                });
            }
        },
        PotentialSpec::Grading { column, node } => {
            let Some(col) = model.columns.get(column) else {
                return Err(GradingError::NoSuchColumn {
                    conductor: cond.name.clone(),
                    column,
                    columns: model.columns.len(),
                });
            };
            let gaps = col.electrodes.len() + 1;
            if node > gaps {
                return Err(GradingError::NodeOutOfRange {
                    conductor: cond.name.clone(),
                    column,
                    node,
                    last: gaps,
                });
            }
            let end = |c: Option<usize>, out: &mut [Option<f64>]| -> Result<f64, GradingError> {
                match c {
                    None => Ok(0.0),
                    Some(c) => resolve(model, stage_v, c, out, depth + 1),
                }
            };
            let v0 = end(col.from, out)?;
            let v1 = end(col.to, out)?;
            v0 + (v1 - v0) * node as f64 / gaps as f64
        }
    };
    out[k] = Some(v);
    Ok(v)
}
