//! The terminal rendering of a report: conductor peaks, probes, the ranked margins and the
//! hold-off voltage, solver figures, cautions (always last).

use crate::breakdown::LimitKind;
use crate::margin::{MarginRow, Status};
use crate::report::Report;
use comfy_table::{Cell, CellAlignment, ContentArrangement, Table};
use comfy_table::{ContentLineStyle, LineStyle, TableStyle};
use std::fmt::Write;

/// The layout of every terminal table: a rule of `=` above and below, column heads
/// underlined by a `-` rule per column, columns set apart by blank space, no side borders:
///
/// ```text
/// ====================================
///  conductor   potential kV   peak E
///  ---------   ------------   ------
///  terminal          200.00    1.234
/// ====================================
/// ```
pub const STYLE: TableStyle = TableStyle::new()
    .top_border(LineStyle::none().fill('=').junction('='))
    .header_lines(ContentLineStyle::none().junction(' '))
    .header_separator(LineStyle::none().fill('-').junction(' '))
    .content_lines(ContentLineStyle::none().junction(' '))
    .bottom_border(LineStyle::none().fill('=').junction('='));

fn kv_per_mm(v: f64) -> String {
    format!("{:.3}", v / 1e6)
}

fn mm(v: f64) -> String {
    format!("{:.1}", v * 1e3)
}

fn kv(v: f64) -> String {
    format!("{:.2}", v / 1e3)
}

/// Renders the report for a terminal; the margin table lists `rows` rows (every row with
/// `None`), and never fewer than the rows that do not pass.
pub fn render(report: &Report, rows: Option<usize>) -> String {
    let mut out = String::new();
    let _ = writeln!(out, "{}", report.design.title);
    let _ = writeln!(
        out,
        "design {}  sha256 {}",
        report.design.file,
        &report.design.sha256[..16.min(report.design.sha256.len())]
    );
    let _ = writeln!(
        out,
        "terminal {} kV\n",
        kv(report.design.terminal_voltage_v)
    );

    let mut t = Table::new();
    t.load_style(STYLE)
        .set_content_arrangement(ContentArrangement::Dynamic);
    let study = report.grid_study.is_some();
    let mut header = vec![
        "conductor",
        "potential kV",
        "peak E kV/mm",
        "at r, z mm",
        "medium",
    ];
    if study {
        header.push("num. error kV/mm");
    }
    t.set_header(header);
    let mut order: Vec<usize> = (0..report.conductors.len()).collect();
    order.sort_by(|&a, &b| {
        report.conductors[b]
            .peak_surface_field_v_per_m
            .total_cmp(&report.conductors[a].peak_surface_field_v_per_m)
    });
    for k in order {
        let c = &report.conductors[k];
        let medium = match c.medium {
            crate::field::Medium::Gas => "gas".to_string(),
            crate::field::Medium::Vacuum => "vacuum".to_string(),
            crate::field::Medium::Dielectric { index } => format!("dielectric {}", index + 1),
        };
        let mut row = vec![
            Cell::new(&c.name),
            Cell::new(kv(c.potential_v)).set_alignment(CellAlignment::Right),
            Cell::new(kv_per_mm(c.peak_surface_field_v_per_m)).set_alignment(CellAlignment::Right),
            Cell::new(format!("{}, {}", mm(c.at_m[0]), mm(c.at_m[1])))
                .set_alignment(CellAlignment::Right),
            Cell::new(medium),
        ];
        if study {
            row.push(
                Cell::new(
                    c.numerical_error_v_per_m
                        .map_or("-".to_string(), |e| format!("±{:.4}", e / 1e6)),
                )
                .set_alignment(CellAlignment::Right),
            );
        }
        t.add_row(row);
    }
    let _ = writeln!(out, "{t}");

    if !report.probes.is_empty() {
        let mut p = Table::new();
        p.load_style(STYLE)
            .set_content_arrangement(ContentArrangement::Dynamic);
        p.set_header(vec![
            "probe",
            "r, z mm",
            "potential kV",
            "E_r kV/mm",
            "E_z kV/mm",
            "|E| kV/mm",
        ]);
        for pr in &report.probes {
            p.add_row(vec![
                Cell::new(&pr.name),
                Cell::new(format!("{}, {}", mm(pr.at_m[0]), mm(pr.at_m[1]))),
                Cell::new(kv(pr.potential_v)).set_alignment(CellAlignment::Right),
                Cell::new(kv_per_mm(pr.field_v_per_m[0])).set_alignment(CellAlignment::Right),
                Cell::new(kv_per_mm(pr.field_v_per_m[1])).set_alignment(CellAlignment::Right),
                Cell::new(kv_per_mm(pr.field_magnitude_v_per_m))
                    .set_alignment(CellAlignment::Right),
            ]);
        }
        let _ = writeln!(out, "{p}");
    }

    render_margins(report, rows, &mut out);

    if !report.grading.is_empty() {
        let _ = writeln!(out, "Grading at nominal");
        for g in &report.grading {
            let (head, details) = super::grading::lines(g);
            let _ = writeln!(out, "- {head}");
            for d in details {
                let _ = writeln!(out, "    {d}");
            }
        }
        let _ = writeln!(out);
    }

    let s = &report.solver;
    let _ = writeln!(
        out,
        "mesh {} x {} = {} nodes ({} unknowns), spacing {}–{} mm",
        report.mesh.nr,
        report.mesh.nz,
        report.mesh.nodes,
        report.mesh.unknowns,
        mm(report.mesh.min_spacing_m),
        mm(report.mesh.max_spacing_m)
    );
    let _ = writeln!(
        out,
        "solver {}: {} iterations, relative residual {:.2e}, {} levels; assembly {:.3} s, multigrid setup {:.3} s, solve {:.3} s",
        s.method,
        s.iterations,
        s.relative_residual,
        s.multigrid_levels,
        s.time.assembly_s,
        s.time.multigrid_setup_s,
        s.time.solve_s
    );
    if let Some(gs) = &report.grid_study {
        let _ = writeln!(
            out,
            "grid study: every spacing ×1, ×√2, ×2 (cell {} / {} / {} mm, finer on curved parts); errors by Richardson extrapolation with Roache's grid convergence index, plus the sampling scatter",
            mm(gs.cells_m[0]),
            mm(gs.cells_m[1]),
            mm(gs.cells_m[2])
        );
        if let Some(a) = &gs.accuracy {
            let _ = writeln!(out, "{}", a.describe());
        }
    }
    let _ = writeln!(out, "field energy {:.3} J\n", report.field_energy_j);
    let _ = writeln!(out, "Cautions");
    for c in &report.cautions {
        let _ = writeln!(out, "- {}: {}", c.topic, c.text);
    }
    out
}

/// A peak or limit in the unit of its row: kV/mm for fields, kV for voltages.
pub(crate) fn value_with_unit(kind: LimitKind, v: f64) -> String {
    match kind {
        LimitKind::Field => format!("{:.3} kV/mm", v / 1e6),
        LimitKind::Voltage => format!("{:.1} kV", v / 1e3),
    }
}

fn margin_row_cells(r: &MarginRow) -> Vec<Cell> {
    let right = |s: String| Cell::new(s).set_alignment(CellAlignment::Right);
    let criterion = r.criterion_label_qualified();
    vec![
        right(r.rank.to_string()),
        Cell::new(&r.item),
        Cell::new(r.medium.label()),
        Cell::new(criterion),
        right(value_with_unit(r.kind, r.peak)),
        right(r.limit.map_or("-".into(), |l| value_with_unit(r.kind, l))),
        right(r.margin.map_or("-".into(), |m| format!("{m:.2}"))),
        right(r.margin_ideal.map_or("-".into(), |m| format!("{m:.2}"))),
        Cell::new(r.status.label()),
        right(format!("{}, {}", mm(r.at_m[0]), mm(r.at_m[1]))),
        right(
            r.numerical_error
                .map_or("-".into(), |e| format!("±{:.1} %", 100.0 * e)),
        ),
    ]
}

/// The ranked margin table, the hold-off voltages and the rows outside validity.
fn render_margins(report: &Report, rows: Option<usize>, out: &mut String) {
    if report.margins.is_empty() {
        for n in &report.margin_notes {
            let _ = writeln!(out, "note: {n}");
        }
        return;
    }
    let mut t = Table::new();
    t.load_style(STYLE)
        .set_content_arrangement(ContentArrangement::Dynamic);
    t.set_header(vec![
        "rank",
        "item",
        "medium",
        "criterion",
        "peak",
        "limit",
        "margin",
        "ideal margin",
        "status",
        "at r, z mm",
        "num. error",
    ]);
    let numbered: Vec<&MarginRow> = report
        .margins
        .iter()
        .filter(|r| r.margin.is_some())
        .collect();
    let not_pass = numbered.iter().filter(|r| r.status != Status::Pass).count();
    let shown = numbered.len().min(rows.unwrap_or(usize::MAX).max(not_pass));
    for r in &numbered[..shown] {
        t.add_row(margin_row_cells(r));
    }
    let _ = writeln!(
        out,
        "Margins (design factor {}; review below {:.2}), worst first",
        report.design_factor,
        crate::margin::REVIEW_BAND * report.design_factor
    );
    let _ = writeln!(out, "{t}");
    if shown < numbered.len() {
        let _ = writeln!(
            out,
            "{} more rows, all passing: --rows all lists them, and the JSON report (--json) has every row.",
            numbered.len() - shown
        );
    }
    let outside: Vec<&MarginRow> = report
        .margins
        .iter()
        .filter(|r| r.margin.is_none())
        .collect();
    if !outside.is_empty() {
        let _ = writeln!(
            out,
            "{} rows outside validity (no number given):",
            outside.len()
        );
        let mut reasons: Vec<(String, Vec<usize>)> = Vec::new();
        for r in &outside {
            let reason = match &r.validity {
                crate::breakdown::Validity::OutsideValidity { reason } => reason.clone(),
                crate::breakdown::Validity::Valid => "no peak value".to_string(),
            };
            let key = format!("{}: {}", r.criterion_label(), reason);
            match reasons.iter_mut().find(|(k, _)| *k == key) {
                Some((_, ranks)) => ranks.push(r.rank),
                None => reasons.push((key, vec![r.rank])),
            }
        }
        for (reason, ranks) in reasons.iter().take(12) {
            let list: Vec<String> = ranks.iter().take(6).map(|k| k.to_string()).collect();
            let more = if ranks.len() > 6 { ", ..." } else { "" };
            let _ = writeln!(out, "- rank {}{more}: {reason}", list.join(", "));
        }
        if reasons.len() > 12 {
            let _ = writeln!(
                out,
                "- {} further reasons in the JSON report",
                reasons.len() - 12
            );
        }
    }
    let derated = report.margins.iter().find(|r| r.derating.factor != 1.0);
    if let Some(r) = derated {
        let _ = writeln!(out, "derating: {}", r.derating.basis);
    }
    let polarity = super::holdoff_polarity(report.design.terminal_voltage_v);
    match (&report.holdoff_limiting, &report.holdoff_ideal_limiting) {
        (Some(h), hi) => {
            let _ = writeln!(
                out,
                "\nHold-off voltage {} (limits as used{polarity}), limiting: {} — {}",
                super::kv_three_significant(h.voltage_v),
                h.item,
                report.holdoff_label(h, false)
            );
            if let Some(hi) = hi {
                let _ = writeln!(
                    out,
                    "Hold-off voltage {} (every limit ideal{polarity}), limiting: {} — {}",
                    super::kv_three_significant(hi.voltage_v),
                    hi.item,
                    report.holdoff_label(hi, true)
                );
            }
        }
        (None, _) => {
            let _ = writeln!(out, "\nNo hold-off voltage.");
        }
    }
    for n in &report.holdoff_notes {
        if n.starts_with("assumption") || n.starts_with("no ") || n.starts_with("scaling to") {
            let _ = writeln!(out, "{n}");
        }
    }
    for n in &report.margin_notes {
        let _ = writeln!(out, "note: {n}");
    }
    let worst = match report.worst_status {
        Status::Fail => "at least one row FAILS the design factor",
        Status::Review => "no row fails; some rows are within 10 % of the design factor (review)",
        _ => "every row with a number passes the design factor",
    };
    let _ = writeln!(out, "Result: {worst}.\n");
}

/// Renders the expanded model (what was modelled) as a table.
pub fn render_listing(rows: &[crate::design::ListingRow]) -> String {
    let mut t = Table::new();
    t.load_style(STYLE)
        .set_content_arrangement(ContentArrangement::Dynamic);
    t.set_header(vec![
        "primitive",
        "kind",
        "shape (mm)",
        "potential",
        "from",
        "notes",
    ]);
    for r in rows {
        t.add_row(vec![
            Cell::new(&r.name),
            Cell::new(r.kind.to_string()),
            Cell::new(&r.shape),
            Cell::new(r.potential.as_deref().unwrap_or("-")),
            Cell::new(&r.origin),
            Cell::new(r.notes.join("; ")),
        ]);
    }
    format!("{t}\n")
}
