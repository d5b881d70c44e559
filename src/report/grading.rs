//! The grading columns' nominal state in words, shared by the terminal report and the review
//! note: one heading line and a few detail lines per column.

use crate::grading::summary::ColumnSummary;
use crate::units::{Dimension, format_si};

fn opt_si(v: Option<f64>, dim: Dimension) -> String {
    v.map_or_else(|| "-".to_string(), |x| format_si(x, dim))
}

/// The chain current as a magnitude with its direction in words: positive into the `to` end
/// (conventional current from the terminal down the chain), negative out of it (a negative
/// terminal draws it up the chain from the grounded end).
fn chain_current(a: Option<f64>) -> String {
    match a {
        None => "-".to_string(),
        Some(a) if a < 0.0 => format!(
            "{} (from the grounded end up to the negative end)",
            format_si(-a, Dimension::Current)
        ),
        Some(a) => format_si(a, Dimension::Current),
    }
}

/// The heading line of a column, then its detail lines.
pub fn lines(s: &ColumnSummary) -> (String, Vec<String>) {
    let strings = if s.strings > 1 {
        format!(" in each of {} strings", s.strings)
    } else {
        String::new()
    };
    let head = format!(
        "column '{}': {} gaps over {}, {}{} per gap{}",
        s.name,
        s.gaps,
        format_si(s.end_to_end_v, Dimension::Voltage),
        opt_si(s.resistor_ohm, Dimension::Resistance),
        strings,
        s.tolerance
            .map_or_else(String::new, |t| format!(" ± {:.1} %", 100.0 * t)),
    );
    let mut d = Vec::new();
    d.push(format!(
        "gap voltage {} to {}; chain current {}",
        format_si(s.gap_v_min, Dimension::Voltage),
        format_si(s.gap_v_max, Dimension::Voltage),
        chain_current(s.chain_current_a)
    ));
    let mut rating = match (s.rating_v, s.rating_margin) {
        (Some(r), Some(m)) => format!(
            "{} rating, {m:.2} × margin",
            format_si(r, Dimension::Voltage)
        ),
        _ => "no voltage rating given".to_string(),
    };
    if let Some(i) = s.impulse_rating_v {
        rating.push_str(&format!(
            "; {} impulse rating",
            format_si(i, Dimension::Voltage)
        ));
    }
    let power = match (s.resistor_power_w_max, s.power_rating_w, s.power_margin) {
        (Some(p), Some(r), Some(m)) => format!(
            "{} dissipated against {} rating, {m:.2} × margin",
            format_si(p, Dimension::Power),
            format_si(r, Dimension::Power)
        ),
        (Some(p), None, _) => format!(
            "{} dissipated, no power rating given",
            format_si(p, Dimension::Power)
        ),
        _ => "dissipation not known without a resistor value".to_string(),
    };
    d.push(format!(
        "one resistor: {} across it ({rating}); {power}",
        format_si(s.resistor_v_max, Dimension::Voltage)
    ));
    d.push(match &s.protective {
        Some(p) => format!(
            "protective gaps: {}, {}, firing {} ± {:.0} %{}, {:.2} × the nominal span voltage{}",
            p.count,
            if p.span == 1 {
                "one across every gap".to_string()
            } else {
                format!("one across every {} gaps", p.span)
            },
            format_si(p.firing_v, Dimension::Voltage),
            100.0 * p.band,
            p.arc_floor_v.map_or_else(String::new, |a| format!(
                ", arc floor {}",
                format_si(a, Dimension::Voltage)
            )),
            p.setting_ratio,
            if p.fired_at_nominal {
                "; one fires at nominal"
            } else {
                ""
            }
        ),
        None => "protective gaps: none".to_string(),
    });
    d.push(match (s.leakage_least_ohm, s.leakage_share) {
        (Some(l), share) => format!(
            "insulator leakage ({}): {} per gap at the least{}",
            s.leakage_source,
            format_si(l, Dimension::Resistance),
            share.map_or_else(String::new, |x| format!(", {x:.1e} of the gap current"))
        ),
        (None, _) => format!("insulator leakage ({}): none modelled", s.leakage_source),
    });
    if s.node_current_total_a != 0.0 {
        d.push(format!(
            "current drawn at the electrodes: {} in all",
            format_si(s.node_current_total_a, Dimension::Current)
        ));
    }
    d.extend(s.notes.iter().map(|n| format!("review: {n}")));
    (head, d)
}
