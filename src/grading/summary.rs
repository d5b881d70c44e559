//! What a review note says about each grading column at its nominal DC state: values,
//! currents, resistor voltages and dissipation against their ratings, protective-gap settings
//! and insulator leakage.
//!
//! Input: a `model::Model` and the multiplier stage voltages when there are any. Output: one
//! [`ColumnSummary`] per column, from the network of `Network::from_column` solved between the
//! column's end potentials.

use super::{GradingError, Network, column_ends, leakage};
use crate::model::{LeakageSpec, Model};
use serde::Serialize;

/// The usual setting of a protective gap as a multiple of the nominal voltage across its span
/// (common practice, no source: docs/practice.md §2.3 gives about 1.3–1.6 ×).
pub const PROTECTIVE_SETTING_RANGE: (f64, f64) = (1.3, 1.6);

/// Protective gaps of a column as set against the nominal voltage across their spans.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ProtectiveSummary {
    pub firing_v: f64,
    pub band: f64,
    pub span: usize,
    pub count: usize,
    /// Firing voltage ÷ the largest nominal voltage across one span.
    pub setting_ratio: f64,
    /// Whether any protective gap is clamped (fired) in the nominal state.
    pub fired_at_nominal: bool,
    /// Voltage a fired gap falls to before its arc goes out, V, when given.
    pub arc_floor_v: Option<f64>,
}

/// The nominal DC state of one column's grading network.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ColumnSummary {
    #[serde(serialize_with = "crate::units::from_one")]
    pub column: usize,
    pub name: String,
    pub gaps: usize,
    pub strings: usize,
    /// One resistor, Ohm (None: equal resistors stand in, the division only).
    pub resistor_ohm: Option<f64>,
    pub tolerance: Option<f64>,
    /// Voltage from the `from` end to the `to` end, V.
    pub end_to_end_v: f64,
    /// Current into the chain at its `to` end (all strings and leakage), A.
    pub chain_current_a: Option<f64>,
    #[serde(rename = "gap_min_v")]
    pub gap_v_min: f64,
    #[serde(rename = "gap_max_v")]
    pub gap_v_max: f64,
    /// Largest voltage across and dissipation in one resistor, V and W.
    #[serde(rename = "resistor_max_v")]
    pub resistor_v_max: f64,
    #[serde(rename = "resistor_max_power_w")]
    pub resistor_power_w_max: Option<f64>,
    pub rating_v: Option<f64>,
    pub power_rating_w: Option<f64>,
    /// Short-pulse rating of one resistor, V, when given (for the spark transient).
    pub impulse_rating_v: Option<f64>,
    /// Rating ÷ the largest value (None without a rating).
    pub rating_margin: Option<f64>,
    pub power_margin: Option<f64>,
    pub protective: Option<ProtectiveSummary>,
    /// How the leakage is set: "from materials", "none" or "given".
    pub leakage_source: &'static str,
    /// The least leakage resistance across a gap, Ohm, and its share of that gap's current.
    pub leakage_least_ohm: Option<f64>,
    pub leakage_share: Option<f64>,
    /// Sum of the currents drawn at the electrodes, A.
    pub node_current_total_a: f64,
    /// What a reviewer should look at.
    pub notes: Vec<String>,
}

/// The nominal state of every column.
pub fn summarize(
    model: &Model,
    stage_v: Option<&[f64]>,
) -> Result<Vec<ColumnSummary>, GradingError> {
    (0..model.columns.len())
        .map(|c| summarize_column(model, stage_v, c))
        .collect()
}

fn summarize_column(
    model: &Model,
    stage_v: Option<&[f64]>,
    column: usize,
) -> Result<ColumnSummary, GradingError> {
    let col = &model.columns[column];
    let net = Network::from_column(model, column)?;
    let (v0, v1) = column_ends(model, stage_v, column)?;
    let sol = net.solve(v0, v1)?;
    let gaps = net.gaps();
    let abs_gaps: Vec<f64> = sol.gap_v.iter().map(|v| v.abs()).collect();
    let gap_v_min = abs_gaps.iter().copied().fold(f64::INFINITY, f64::min);
    let gap_v_max = abs_gaps.iter().copied().fold(0.0, f64::max);
    let mut notes = Vec::new();

    let absolute = !net.relative;
    let chain_current_a = absolute.then(|| {
        let last = gaps - 1;
        let strings: f64 = sol.resistor_current_a[last].iter().sum();
        let leak = net.leakage_ohm[last].map_or(0.0, |l| sol.gap_v[last] / l);
        strings + leak
    });
    let resistor_power_w_max = absolute.then(|| {
        net.resistors_ohm
            .iter()
            .zip(&sol.gap_v)
            .flat_map(|(rs, v)| rs.iter().map(move |r| v * v / r))
            .fold(0.0, f64::max)
    });
    let rating_margin = col
        .resistor_rating_v
        .filter(|_| gap_v_max > 0.0)
        .map(|r| r / gap_v_max);
    let power_margin = match (col.resistor_power_w, resistor_power_w_max) {
        (Some(r), Some(p)) if p > 0.0 => Some(r / p),
        _ => None,
    };
    if rating_margin.is_some_and(|m| m < 1.0) {
        notes.push(format!(
            "a resistor runs above its voltage rating at nominal ({:.2} × rating)",
            1.0 / rating_margin.unwrap_or(1.0)
        ));
    }
    if power_margin.is_some_and(|m| m < 1.0) {
        notes.push(format!(
            "a resistor dissipates above its power rating at nominal ({:.2} × rating)",
            1.0 / power_margin.unwrap_or(1.0)
        ));
    }

    let protective = col.protective_gap.map(|p| {
        let span_v = net
            .protective
            .iter()
            .map(|g| (sol.node_v[g.to_node] - sol.node_v[g.from_node]).abs())
            .fold(0.0, f64::max);
        let setting_ratio = if span_v > 0.0 {
            p.firing_v / span_v
        } else {
            f64::INFINITY
        };
        let (lo, hi) = PROTECTIVE_SETTING_RANGE;
        if setting_ratio < lo {
            notes.push(format!(
                "protective gaps are set at {setting_ratio:.2} × the nominal voltage across \
                 their span, below the usual {lo}–{hi} × (common practice): they may fire in \
                 normal running"
            ));
        } else if setting_ratio > hi {
            notes.push(format!(
                "protective gaps are set at {setting_ratio:.2} × the nominal voltage across \
                 their span, above the usual {lo}–{hi} × (common practice): check that they \
                 clamp before the resistors and insulators are overstressed"
            ));
        }
        ProtectiveSummary {
            firing_v: p.firing_v,
            band: p.band,
            span: p.span,
            count: net.protective.len(),
            setting_ratio,
            fired_at_nominal: sol.fired.iter().any(|f| *f),
            arc_floor_v: p.arc_floor_v,
        }
    });
    if protective.as_ref().is_some_and(|p| p.fired_at_nominal) {
        notes.push("a protective gap fires in the nominal DC state".to_string());
    }
    if protective.is_none() {
        notes.push(
            "no protective gaps: a spark transient reaches the resistors and insulators \
             unclamped"
                .to_string(),
        );
    }

    let leakage_source = match col.leakage {
        LeakageSpec::FromMaterials => "from materials",
        LeakageSpec::None => "none",
        LeakageSpec::PerGap(_) => "given",
    };
    let leakage_least_ohm = net.leakage_ohm.iter().flatten().copied().reduce(f64::min);
    let leakage_share = leakage_least_ohm.and_then(|l| {
        let g_strings = net
            .resistors_ohm
            .iter()
            .map(|rs| rs.iter().map(|r| 1.0 / r).sum::<f64>())
            .fold(f64::INFINITY, f64::min);
        (absolute && g_strings.is_finite()).then(|| (1.0 / l) / (g_strings + 1.0 / l))
    });
    if matches!(col.leakage, LeakageSpec::FromMaterials) && absolute {
        notes.extend(leakage::from_materials(model, column).notes);
    }

    Ok(ColumnSummary {
        column,
        name: col.name.clone(),
        gaps,
        strings: net.strings(),
        resistor_ohm: col.resistor_ohm,
        tolerance: col.tolerance,
        end_to_end_v: v1 - v0,
        chain_current_a,
        gap_v_min,
        gap_v_max,
        resistor_v_max: gap_v_max,
        resistor_power_w_max,
        rating_v: col.resistor_rating_v,
        power_rating_w: col.resistor_power_w,
        impulse_rating_v: col.resistor_impulse_v,
        rating_margin,
        power_margin,
        protective,
        leakage_source,
        leakage_least_ohm,
        leakage_share,
        node_current_total_a: col.node_current_a.iter().sum(),
        notes,
    })
}
