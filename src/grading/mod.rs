//! Electrode potentials from the grading network.
//!
//! Input: a `model::Model` (potential specifications, columns and their resistor chains).
//! Output: one potential in volts per conductor, in conductor order. A uniform resistor chain
//! divides the end-to-end voltage of a column equally between its gaps; "stage:N" potentials
//! take the loaded stage voltages of the multiplier model, which the caller supplies.

pub mod leakage;
mod network;
pub mod summary;

pub use network::{Network, NetworkError, NetworkSolution, ProtectiveGap};

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
    #[error(transparent)]
    Network(#[from] NetworkError),
}

/// Resolves every conductor potential to volts. `stage_v[k]` is the loaded mean voltage of
/// multiplier stage node k (index 0 = stage 1), when a ladder model is available.
///
/// The grading nodes of each column take the DC solution of its network as the design gives
/// it (`Network::from_column`): equal shares for the uniform chains that design files describe.
/// The column ends are resolved first (an end that is itself a grading node of another column
/// takes that column's equal share).
pub fn potentials(model: &Model, stage_v: Option<&[f64]>) -> Result<Vec<f64>, GradingError> {
    let ends = potentials_inner(model, stage_v, None)?;
    let mut node_v = Vec::with_capacity(model.columns.len());
    for (c, col) in model.columns.iter().enumerate() {
        let end = |k: Option<usize>| k.and_then(|k| ends.get(k)).copied().unwrap_or(0.0);
        let net = Network::from_column(model, c)?;
        node_v.push(net.solve(end(col.from), end(col.to))?.node_v);
    }
    potentials_inner(model, stage_v, Some(&node_v))
}

/// Resolves every conductor potential to volts, with the grading nodes of each column taken
/// from a solved network: `node_v[column][node]`, nodes 0 (the `from` end) to the gap count
/// (the `to` end). A column whose entry is empty keeps equal shares.
pub fn potentials_with_nodes(
    model: &Model,
    stage_v: Option<&[f64]>,
    node_v: &[Vec<f64>],
) -> Result<Vec<f64>, GradingError> {
    potentials_inner(model, stage_v, Some(node_v))
}

fn potentials_inner(
    model: &Model,
    stage_v: Option<&[f64]>,
    node_v: Option<&[Vec<f64>]>,
) -> Result<Vec<f64>, GradingError> {
    let n = model.conductors.len();
    let mut out: Vec<Option<f64>> = vec![None; n];
    for k in 0..n {
        resolve(model, stage_v, node_v, k, &mut out, 0)?;
    }
    Ok(out.into_iter().map(|v| v.unwrap_or(0.0)).collect())
}

/// The potentials of the two ends of column `column` (from, to), V; a missing end is the tank.
pub fn column_ends(
    model: &Model,
    stage_v: Option<&[f64]>,
    column: usize,
) -> Result<(f64, f64), GradingError> {
    let v = potentials_inner(model, stage_v, None)?;
    let Some(col) = model.columns.get(column) else {
        return Err(GradingError::NoSuchColumn {
            conductor: String::from("(column ends)"),
            column,
            columns: model.columns.len(),
        });
    };
    let end = |c: Option<usize>| c.and_then(|c| v.get(c).copied()).unwrap_or(0.0);
    Ok((end(col.from), end(col.to)))
}

fn resolve(
    model: &Model,
    stage_v: Option<&[f64]>,
    node_v: Option<&[Vec<f64>]>,
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
                    Some(c) => resolve(model, stage_v, node_v, c, out, depth + 1),
                }
            };
            if let Some(v) = node_v
                .and_then(|nv| nv.get(column))
                .and_then(|nv| nv.get(node))
            {
                out[k] = Some(*v);
                return Ok(*v);
            }
            let v0 = end(col.from, out)?;
            let v1 = end(col.to, out)?;
            v0 + (v1 - v0) * node as f64 / gaps as f64
        }
    };
    out[k] = Some(v);
    Ok(v)
}
