//! The terminal rendering of a report: conductor peaks, probes, solver figures, cautions.

use crate::report::Report;
use comfy_table::{Cell, CellAlignment, ContentArrangement, Table, presets::UTF8_FULL_CONDENSED};
use std::fmt::Write;

fn kv_per_mm(v: f64) -> String {
    format!("{:.3}", v / 1e6)
}

fn mm(v: f64) -> String {
    format!("{:.1}", v * 1e3)
}

fn kv(v: f64) -> String {
    format!("{:.2}", v / 1e3)
}

/// Renders the report for a terminal.
pub fn render(report: &Report) -> String {
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
    t.load_style(UTF8_FULL_CONDENSED)
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
        p.load_style(UTF8_FULL_CONDENSED)
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
        s.seconds.assembly,
        s.seconds.multigrid_setup,
        s.seconds.solve
    );
    if let Some(gs) = &report.grid_study {
        let _ = writeln!(
            out,
            "grid study: cells {} / {} / {} mm; errors by Richardson extrapolation with Roache's grid convergence index",
            mm(gs.cells_m[0]),
            mm(gs.cells_m[1]),
            mm(gs.cells_m[2])
        );
    }
    let _ = writeln!(out, "field energy {:.3} J\n", report.field_energy_j);
    let _ = writeln!(out, "Cautions");
    for c in &report.cautions {
        let _ = writeln!(out, "- {}: {}", c.topic, c.text);
    }
    out
}

/// Renders the expanded model (what was modelled) as a table.
pub fn render_listing(rows: &[crate::design::ListingRow]) -> String {
    let mut t = Table::new();
    t.load_style(UTF8_FULL_CONDENSED)
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
