//! Before/after comparison of two designs: the margin rows matched by item and criterion.
//!
//! Input: the margins of two reviews. Output: the worst margin of each design and the row
//! that sets it, and one `CompareRow` per matched (or unmatched) row, ordered as an engineer
//! reads a change: first the rows that govern either design (the worst row of the design
//! before and of the design after, whatever their change), then the rows that crossed below
//! the design factor, then the largest changes of margin either way.

use crate::breakdown::LimitKind;
use crate::margin::{MarginRow, Margins, Status};
use serde::Serialize;

/// Why a row leads the comparison.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Role {
    /// The worst row of both designs.
    WorstBoth,
    /// The worst row of the design before the change.
    WorstBefore,
    /// The worst row of the design after the change.
    WorstAfter,
    /// Neither design's worst row.
    Other,
}

impl Role {
    pub fn label(self) -> &'static str {
        match self {
            Role::WorstBoth => "worst, both",
            Role::WorstBefore => "worst before",
            Role::WorstAfter => "worst after",
            Role::Other => "",
        }
    }
}

/// A peak of one row in its unit: a field (V/m) or a voltage (V).
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize)]
pub struct Peak {
    #[serde(skip_serializing_if = "Option::is_none")]
    pub field_v_per_m: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub voltage_v: Option<f64>,
}

impl Peak {
    fn of(r: &MarginRow) -> Peak {
        match r.kind {
            LimitKind::Field => Peak {
                field_v_per_m: Some(r.peak),
                voltage_v: None,
            },
            LimitKind::Voltage => Peak {
                field_v_per_m: None,
                voltage_v: Some(r.peak),
            },
        }
    }
}

/// One row of the comparison.
#[derive(Debug, Clone, Serialize)]
pub struct CompareRow {
    pub role: Role,
    pub item: String,
    /// The criterion's label (docs/glossary.md), qualified by derating and cross-check.
    pub criterion: String,
    /// The peak before and after, each in the unit of its criterion.
    pub peak_before: Option<Peak>,
    pub peak_after: Option<Peak>,
    pub margin_before: Option<f64>,
    pub margin_after: Option<f64>,
    /// margin_after / margin_before − 1.
    pub change: Option<f64>,
    pub status_before: Option<Status>,
    pub status_after: Option<Status>,
    /// The row passed the design factor before and does not after (or is new and fails).
    pub crossed_below: bool,
}

/// The worst row of one design.
#[derive(Debug, Clone, Serialize)]
pub struct Worst {
    pub margin: f64,
    pub item: String,
    pub criterion: String,
}

/// The whole comparison.
#[derive(Debug, Clone, Serialize)]
pub struct Comparison {
    pub design_factor: f64,
    /// The worst margin of each design (rows with a number, cross-checks left out).
    pub worst_before: Option<Worst>,
    pub worst_after: Option<Worst>,
    pub holdoff_before_v: Option<f64>,
    pub holdoff_after_v: Option<f64>,
    pub any_crossed_below: bool,
    pub rows: Vec<CompareRow>,
}

/// The row that governs a design: the worst margin with a number, cross-checks left out (the
/// rows are ranked worst first).
fn governing(m: &Margins) -> Option<(f64, &MarginRow)> {
    m.rows
        .iter()
        .filter(|r| !r.cross_check)
        .filter_map(|r| Some((r.margin?, r)))
        .min_by(|a, b| a.0.total_cmp(&b.0))
}

fn below(status: Status) -> bool {
    status == Status::Fail
}

fn same_row(a: &MarginRow, b: &MarginRow) -> bool {
    a.item == b.item
        && a.criterion == b.criterion
        && a.kind == b.kind
        && a.cross_check == b.cross_check
}

/// Pairs every row of `before` with the first unpaired row of `after` of the same item and
/// criterion; the unpaired rows of `after` follow as new rows.
fn pairs<'a>(
    before: &'a Margins,
    after: &'a Margins,
) -> Vec<(Option<&'a MarginRow>, Option<&'a MarginRow>)> {
    let mut used = vec![false; after.rows.len()];
    let mut out = Vec::new();
    for b in &before.rows {
        let k = (0..after.rows.len()).find(|&k| !used[k] && same_row(b, &after.rows[k]));
        if let Some(k) = k {
            used[k] = true;
        }
        out.push((Some(b), k.map(|k| &after.rows[k])));
    }
    for (k, a) in after.rows.iter().enumerate() {
        if !used[k] {
            out.push((None, Some(a)));
        }
    }
    out
}

/// Matches the rows of `before` and `after` and orders them: the governing rows of either
/// design, the rows that crossed below the design factor, then by the size of the change.
pub fn compare(before: &Margins, after: &Margins) -> Comparison {
    let (wb, wa) = (governing(before), governing(after));
    let (gb, ga) = (wb.map(|w| w.1), wa.map(|w| w.1));
    let is = |g: Option<&MarginRow>, r: Option<&MarginRow>| match (g, r) {
        (Some(g), Some(r)) => std::ptr::eq(g, r),
        _ => false,
    };
    let mut rows: Vec<CompareRow> = pairs(before, after)
        .into_iter()
        .filter_map(|(b, a)| {
            let role = match (is(gb, b), is(ga, a)) {
                (true, true) => Role::WorstBoth,
                (true, false) => Role::WorstBefore,
                (false, true) => Role::WorstAfter,
                (false, false) => Role::Other,
            };
            let change = match (b.and_then(|r| r.margin), a.and_then(|r| r.margin)) {
                (Some(mb), Some(ma)) if mb > 0.0 => Some(ma / mb - 1.0),
                _ => None,
            };
            let crossed_below = match (b, a) {
                (Some(b), Some(a)) => below(a.status) && !below(b.status),
                (None, Some(a)) => below(a.status),
                _ => false,
            };
            let row = a.or(b)?;
            Some(CompareRow {
                role,
                item: row.item.clone(),
                criterion: row.criterion_label_qualified(),
                peak_before: b.map(Peak::of),
                peak_after: a.map(Peak::of),
                margin_before: b.and_then(|r| r.margin),
                margin_after: a.and_then(|r| r.margin),
                change,
                status_before: b.map(|r| r.status),
                status_after: a.map(|r| r.status),
                crossed_below,
            })
        })
        .collect();
    rows.sort_by(|x, y| {
        x.role
            .cmp(&y.role)
            .then_with(|| y.crossed_below.cmp(&x.crossed_below))
            .then_with(|| match (x.change, y.change) {
                (Some(a), Some(b)) => b.abs().total_cmp(&a.abs()),
                (Some(_), None) => std::cmp::Ordering::Less,
                (None, Some(_)) => std::cmp::Ordering::Greater,
                (None, None) => std::cmp::Ordering::Equal,
            })
    });
    let worst = |g: Option<(f64, &MarginRow)>| {
        g.map(|(margin, r)| Worst {
            margin,
            item: r.item.clone(),
            criterion: r.criterion_label_qualified(),
        })
    };
    Comparison {
        design_factor: after.design_factor,
        worst_before: worst(wb),
        worst_after: worst(wa),
        holdoff_before_v: before.holdoff.as_ref().map(|h| h.voltage_v),
        holdoff_after_v: after.holdoff.as_ref().map(|h| h.voltage_v),
        any_crossed_below: rows.iter().any(|r| r.crossed_below),
        rows,
    }
}
