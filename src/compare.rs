//! Before/after comparison of two designs: the margin rows matched by item and criterion,
//! the rows that got worse first.
//!
//! Input: the margins of two reviews. Output: one `CompareRow` per matched (or unmatched) row
//! and whether any row crossed below the design factor.

use crate::margin::{MarginRow, Margins, Status};
use serde::Serialize;

/// One row of the comparison.
#[derive(Debug, Clone, Serialize)]
pub struct CompareRow {
    pub item: String,
    pub criterion: String,
    /// Peak before and after (field in V/m or voltage in V, as the criterion is).
    pub peak_before: Option<f64>,
    pub peak_after: Option<f64>,
    pub margin_before: Option<f64>,
    pub margin_after: Option<f64>,
    /// margin_after / margin_before − 1.
    pub change: Option<f64>,
    pub status_before: Option<Status>,
    pub status_after: Option<Status>,
    /// The row passed the design factor before and does not after (or is new and fails).
    pub crossed_below: bool,
}

/// The whole comparison.
#[derive(Debug, Clone, Serialize)]
pub struct Comparison {
    pub design_factor: f64,
    pub rows: Vec<CompareRow>,
    pub any_crossed_below: bool,
    pub holdoff_before_v: Option<f64>,
    pub holdoff_after_v: Option<f64>,
}

fn key(r: &MarginRow) -> (String, String) {
    (r.item.clone(), r.criterion_name.clone())
}

fn below(status: Status) -> bool {
    status == Status::Fail
}

/// Matches the rows of `before` and `after` and ranks them, worst change first.
pub fn compare(before: &Margins, after: &Margins) -> Comparison {
    let mut rows = Vec::new();
    for b in &before.rows {
        let a = after.rows.iter().find(|r| key(r) == key(b));
        let change = match (b.margin, a.and_then(|r| r.margin)) {
            (Some(mb), Some(ma)) if mb > 0.0 => Some(ma / mb - 1.0),
            _ => None,
        };
        let crossed = a.is_some_and(|r| below(r.status) && !below(b.status));
        rows.push(CompareRow {
            item: b.item.clone(),
            criterion: b.criterion_name.clone(),
            peak_before: Some(b.peak),
            peak_after: a.map(|r| r.peak),
            margin_before: b.margin,
            margin_after: a.and_then(|r| r.margin),
            change,
            status_before: Some(b.status),
            status_after: a.map(|r| r.status),
            crossed_below: crossed,
        });
    }
    for a in &after.rows {
        if before.rows.iter().any(|r| key(r) == key(a)) {
            continue;
        }
        rows.push(CompareRow {
            item: a.item.clone(),
            criterion: a.criterion_name.clone(),
            peak_before: None,
            peak_after: Some(a.peak),
            margin_before: None,
            margin_after: a.margin,
            change: None,
            status_before: None,
            status_after: Some(a.status),
            crossed_below: below(a.status),
        });
    }
    // Crossings first, then the largest loss of margin, then rows without a change figure.
    rows.sort_by(|x, y| {
        y.crossed_below
            .cmp(&x.crossed_below)
            .then_with(|| match (x.change, y.change) {
                (Some(a), Some(b)) => a.total_cmp(&b),
                (Some(_), None) => std::cmp::Ordering::Less,
                (None, Some(_)) => std::cmp::Ordering::Greater,
                (None, None) => std::cmp::Ordering::Equal,
            })
    });
    let any_crossed_below = rows.iter().any(|r| r.crossed_below);
    Comparison {
        design_factor: after.design_factor,
        rows,
        any_crossed_below,
        holdoff_before_v: before.holdoff.as_ref().map(|h| h.voltage_v),
        holdoff_after_v: after.holdoff.as_ref().map(|h| h.voltage_v),
    }
}
