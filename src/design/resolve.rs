//! References between tables: column ends to conductor indices, potential strings to
//! `PotentialSpec`s, and potentials reduced to what decides whether two conductors are at the
//! same potential.
//!
//! Input: the parsed potentials, the column specs and the conductor names. Output: resolved
//! values, or located problems (unknown conductor, unknown column, node or stage out of range).

use super::checks::Canon;
use super::generators::ColumnSpec;
use super::potential::PotentialText;
use super::problem::nearest;
use super::read::Reader;
use crate::model::PotentialSpec;
use crate::units::{Dimension, format_si};
use std::ops::Range;

pub(crate) fn resolve_end(
    rd: &mut Reader,
    names: &[Option<String>],
    end: &(String, Range<usize>),
    key: &str,
) -> Option<Option<usize>> {
    if end.0.eq_ignore_ascii_case("ground") {
        return Some(None);
    }
    // Indices among the conductors that will enter the model (every direct conductor is valid
    // when the model is built).
    if let Some(i) = names
        .iter()
        .position(|n| n.as_deref() == Some(end.0.as_str()))
    {
        return Some(Some(i));
    }
    let known: Vec<&str> = names.iter().flatten().map(String::as_str).collect();
    let help = match nearest(&end.0, &known) {
        Some(n) => format!(
            "did you mean \"{n}\"? conductors: {}; or \"ground\" for the tank",
            known.join(", ")
        ),
        None => format!(
            "conductors: {}; or \"ground\" for the tank",
            if known.is_empty() {
                "none".to_string()
            } else {
                known.join(", ")
            }
        ),
    };
    rd.push(
        "unknown-conductor",
        key,
        end.1.clone(),
        format!("`{key}`: no conductor is named \"{}\"", end.0),
        Some(help),
    );
    None
}

#[allow(clippy::too_many_arguments)]
pub(crate) fn resolve_potential(
    rd: &mut Reader,
    p: &PotentialText,
    span: &Range<usize>,
    key: &str,
    column_names: &[Option<String>],
    columns: &[Option<ColumnSpec>],
    stages: Option<usize>,
    has_multiplier: bool,
) -> Option<PotentialSpec> {
    match p {
        PotentialText::Ground => Some(PotentialSpec::Ground),
        PotentialText::Absolute(v) => Some(PotentialSpec::Absolute { volts: *v }),
        PotentialText::Terminal(f) => {
            if (0.0..=1.0).contains(f) {
                Some(PotentialSpec::Terminal { fraction: *f })
            } else {
                rd.push("out-of-range", key, span.clone(), format!("`{key}`: a fraction of the terminal voltage must lie between 0 and 1, found {f}"), Some("for other potentials give a voltage, e.g. \"-5 kV\"".to_string()));
                None
            }
        }
        PotentialText::Grading { column, node } => {
            let index = match column {
                None if column_names.is_empty() => {
                    rd.push(
                        "unknown-column",
                        key,
                        span.clone(),
                        format!("`{key}` refers to a grading node, but the file has no [[column]]"),
                        Some("add a [[column]], or give the potential as a voltage".to_string()),
                    );
                    return None;
                }
                None => 0,
                Some(name) => match column_names
                    .iter()
                    .position(|n| n.as_deref() == Some(name.as_str()))
                {
                    Some(i) => i,
                    None => {
                        let known: Vec<&str> =
                            column_names.iter().flatten().map(String::as_str).collect();
                        let help = match nearest(name, &known) {
                            Some(n) => {
                                format!("did you mean \"{n}\"? columns: {}", known.join(", "))
                            }
                            None => format!(
                                "columns: {}",
                                if known.is_empty() {
                                    "none".to_string()
                                } else {
                                    known.join(", ")
                                }
                            ),
                        };
                        rd.push(
                            "unknown-column",
                            key,
                            span.clone(),
                            format!("`{key}`: no column is named \"{name}\""),
                            Some(help),
                        );
                        return None;
                    }
                },
            };
            let spec = columns.get(index)?.as_ref()?;
            let last = spec.electrodes + 1;
            if *node > last {
                rd.push(
                    "out-of-range",
                    key,
                    span.clone(),
                    format!(
                        "`{key}`: column `{}` has nodes 0 to {last}, not {node}",
                        spec.name
                    ),
                    Some(format!(
                        "node 0 is the `from` end ({}), node {last} the `to` end ({})",
                        spec.from.0, spec.to.0
                    )),
                );
                return None;
            }
            Some(PotentialSpec::Grading {
                column: index,
                node: *node,
            })
        }
        PotentialText::Stage(s) => {
            if !has_multiplier {
                rd.push(
                    "unknown-stage",
                    key,
                    span.clone(),
                    format!(
                        "`{key}` refers to a multiplier stage, but the file has no [multiplier]"
                    ),
                    Some(
                        "add a [multiplier] section, or give the potential as a voltage"
                            .to_string(),
                    ),
                );
                return None;
            }
            let n = stages?;
            if *s < 1 || *s > n {
                rd.push(
                    "unknown-stage",
                    key,
                    span.clone(),
                    format!("`{key}`: the multiplier has stages 1 to {n}, not {s}"),
                    None,
                );
                return None;
            }
            Some(PotentialSpec::Stage { stage: *s })
        }
    }
}

/// The canonical potential of a spec (column end nodes are the end conductors' potentials).
pub(crate) fn canon(
    spec: &PotentialSpec,
    vt: f64,
    ends: &[Option<(Option<usize>, Option<usize>)>],
    columns: &[Option<ColumnSpec>],
    specs: &[Option<PotentialSpec>],
    depth: usize,
) -> Option<Canon> {
    match *spec {
        PotentialSpec::Ground => Some(Canon::Volts(0.0)),
        PotentialSpec::Terminal { fraction } => Some(Canon::Volts(fraction * vt)),
        PotentialSpec::Absolute { volts } => Some(Canon::Volts(volts)),
        PotentialSpec::Stage { stage } => Some(Canon::Stage(stage)),
        PotentialSpec::Grading { column, node } => {
            let n = columns.get(column)?.as_ref()?.electrodes;
            let (from, to) = (*ends.get(column)?)?;
            let end = if node == 0 {
                Some(from)
            } else if node == n + 1 {
                Some(to)
            } else {
                None
            };
            match end {
                None => Some(Canon::Node { column, node }),
                Some(None) => Some(Canon::Volts(0.0)),
                Some(Some(i)) if depth < 4 => {
                    canon(specs.get(i)?.as_ref()?, vt, ends, columns, specs, depth + 1)
                }
                Some(Some(_)) => Some(Canon::Node { column, node }),
            }
        }
    }
}

/// The potential in words, for messages.
pub(crate) fn potential_text(
    spec: &PotentialSpec,
    column_names: &[Option<String>],
    vt: f64,
) -> String {
    match spec {
        PotentialSpec::Ground => "ground".to_string(),
        PotentialSpec::Terminal { fraction } if *fraction == 1.0 => "terminal".to_string(),
        PotentialSpec::Terminal { fraction } => format!(
            "{fraction} of the terminal voltage ({})",
            format_si(fraction * vt, Dimension::Voltage)
        ),
        PotentialSpec::Absolute { volts } => format_si(*volts, Dimension::Voltage),
        PotentialSpec::Grading { column, node } => {
            let name = column_names
                .get(*column)
                .and_then(|n| n.clone())
                .unwrap_or_else(|| format!("{}", column + 1));
            format!("grading node {node} of column `{name}`")
        }
        PotentialSpec::Stage { stage } => format!("multiplier stage {stage}"),
    }
}
