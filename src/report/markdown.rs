//! The pre-commissioning review note as Markdown: scope, inputs, the modelled geometry,
//! ranked margins with numerical error, hold-off voltage, the multiplier stack, assumptions,
//! the source of every criterion used, cautions and blank sign-off fields.
//!
//! Input: a `Report` (the same numbers as `check --json`), the expansion listing and the design
//! text. The note is reproducible: the same design file gives the same text.

use crate::design::ListingRow;
use crate::margin::Status;
use crate::report::Report;
use crate::report::table::value_with_unit;
use std::collections::BTreeSet;
use std::fmt::Write;

fn kv(v: f64) -> String {
    format!("{:.1} kV", v / 1e3)
}

fn cell(s: &str) -> String {
    s.replace('|', "\\|")
}

/// Renders the note, one section after another.
pub fn render(
    report: &Report,
    listing: &[ListingRow],
    design_text: &str,
    faults: Option<&crate::faults::FaultReplay>,
) -> String {
    let mut o = String::new();
    title(&mut o, report);
    scope(&mut o, report);
    modelled(&mut o, listing);
    field_solution(&mut o, report);
    margins(&mut o, report);
    if let Some(l) = &report.ladder {
        stack(&mut o, l);
    }
    if !report.grading.is_empty() {
        grading(&mut o, report);
    }
    if let Some(f) = faults {
        fault_section(&mut o, report, f);
    }
    assumptions(&mut o);
    sources(&mut o, report);
    cautions(&mut o, report);
    sign_off(&mut o, design_text);
    o
}

/// The title and the provenance line.
fn title(o: &mut String, report: &Report) {
    let d = &report.design;
    let _ = writeln!(o, "# High-voltage review note: {}\n", cell(&d.title));
    let _ = writeln!(
        o,
        "Prepared with {} {} from the design file `{}` (SHA-256 `{}`). This note is a design aid computed from an idealised axisymmetric model; it is not a certification. Local electrical codes, pressure-vessel codes, radiation rules and the facility's licensed high-voltage safety practice take precedence.\n",
        report.tool.name, report.tool.version, d.file, d.sha256
    );
}

/// Section 1: the voltage reviewed, the design factor, the multiplier.
fn scope(o: &mut String, report: &Report) {
    let _ = writeln!(o, "## 1. Scope and ratings\n");
    let _ = writeln!(
        o,
        "- Terminal voltage reviewed: {}",
        kv(report.design.terminal_voltage_v)
    );
    let _ = writeln!(o, "- Design factor: {}", report.design_factor);
    if let Some(l) = &report.ladder {
        let _ = writeln!(
            o,
            "- Multiplier: {}, {} stages, {} at load, ripple {:.1} V p-p",
            l.topology,
            l.stages,
            kv(l.output_at_load_v),
            l.ripple_pp_v
        );
    }
    let _ = writeln!(o);
}

/// Section 2: every primitive modelled.
fn modelled(o: &mut String, listing: &[ListingRow]) {
    let _ = writeln!(o, "## 2. What was modelled\n");
    let _ = writeln!(
        o,
        "| primitive | kind | shape (mm) | potential | from | notes |"
    );
    let _ = writeln!(o, "|---|---|---|---|---|---|");
    for r in listing {
        let _ = writeln!(
            o,
            "| {} | {} | {} | {} | {} | {} |",
            cell(&r.name),
            r.kind,
            cell(&r.shape),
            cell(r.potential.as_deref().unwrap_or("-")),
            cell(&r.origin),
            cell(&r.notes.join("; "))
        );
    }
    let _ = writeln!(o);
}

/// Section 3: mesh, solver, grid study and the conductors' peaks.
fn field_solution(o: &mut String, report: &Report) {
    let _ = writeln!(o, "## 3. Field solution\n");
    let m = &report.mesh;
    let s = &report.solver;
    let _ = writeln!(
        o,
        "- Mesh: {} × {} = {} nodes ({} unknowns), spacing {:.2}–{:.2} mm",
        m.nr,
        m.nz,
        m.nodes,
        m.unknowns,
        m.min_spacing_m * 1e3,
        m.max_spacing_m * 1e3
    );
    let _ = writeln!(
        o,
        "- Solver: {}, {} iterations, relative residual {:.2e}",
        s.method, s.iterations, s.relative_residual
    );
    if let Some(gs) = &report.grid_study {
        let _ = writeln!(
            o,
            "- Grid study: every spacing ×1, ×√2, ×2 (cell {:.2} / {:.2} / {:.2} mm, finer on curved parts); numerical errors by Richardson extrapolation with Roache's grid convergence index, plus the sampling scatter",
            gs.cells_m[0] * 1e3,
            gs.cells_m[1] * 1e3,
            gs.cells_m[2] * 1e3
        );
        if let Some(a) = &gs.accuracy {
            let _ = writeln!(o, "- Mesh: {}", a.describe());
        }
    }
    let _ = writeln!(
        o,
        "- Electrostatic field energy: {:.2} J\n",
        report.field_energy_j
    );
    let _ = writeln!(
        o,
        "| conductor | potential | peak surface field | at r, z (mm) | numerical error |"
    );
    let _ = writeln!(o, "|---|---:|---:|---:|---:|");
    let mut cond: Vec<_> = report.conductors.iter().collect();
    cond.sort_by(|a, b| {
        b.peak_surface_field_v_per_m
            .total_cmp(&a.peak_surface_field_v_per_m)
    });
    for c in cond {
        let _ = writeln!(
            o,
            "| {} | {} | {:.3} kV/mm | {:.1}, {:.1} | {} |",
            cell(&c.name),
            kv(c.potential_v),
            c.peak_surface_field_v_per_m / 1e6,
            c.at_m[0] * 1e3,
            c.at_m[1] * 1e3,
            c.numerical_error_v_per_m
                .map_or("-".to_string(), |e| format!("±{:.4} kV/mm", e / 1e6))
        );
    }
    let _ = writeln!(o);
}

/// Section 4: the ranked margins and the hold-off voltage.
fn margins(o: &mut String, report: &Report) {
    let _ = writeln!(o, "## 4. Margins, worst first\n");
    let _ = writeln!(
        o,
        "| rank | item | medium | criterion | peak | limit | margin | ideal margin | status | numerical error |"
    );
    let _ = writeln!(o, "|---:|---|---|---|---:|---:|---:|---:|---|---:|");
    for r in &report.margins {
        let _ = writeln!(
            o,
            "| {} | {} | {} | {} | {} | {} | {} | {} | {} | {} |",
            r.rank,
            cell(&r.item),
            r.medium.label(),
            cell(&r.criterion_label_qualified()),
            value_with_unit(r.kind, r.peak),
            r.limit
                .map_or("outside validity".into(), |l| value_with_unit(r.kind, l)),
            r.margin.map_or("-".into(), |m| format!("{m:.2}")),
            r.margin_ideal.map_or("-".into(), |m| format!("{m:.2}")),
            if r.status == Status::Fail {
                "**FAIL**"
            } else {
                r.status.label()
            },
            r.numerical_error
                .map_or("-".into(), |e| format!("±{:.1} %", e * 100.0))
        );
    }
    let _ = writeln!(o);
    let hv = |v: Option<f64>| {
        v.map_or(
            "not reached".to_string(),
            crate::report::kv_three_significant,
        )
    };
    let _ = writeln!(
        o,
        "Hold-off voltage: {} with the limits as used ({}); {} with every limit ideal ({}){}.\n",
        hv(report.holdoff_voltage_v),
        report
            .holdoff_limiting
            .as_ref()
            .map_or("-".into(), |h| format!(
                "{}, {}",
                h.item,
                report.holdoff_label(h, false)
            )),
        hv(report.holdoff_voltage_ideal_v),
        report
            .holdoff_ideal_limiting
            .as_ref()
            .map_or("-".into(), |h| format!(
                "{}, {}",
                h.item,
                report.holdoff_label(h, true)
            )),
        crate::report::holdoff_polarity(report.design.terminal_voltage_v),
    );
    for n in report.holdoff_notes.iter().chain(&report.margin_notes) {
        let _ = writeln!(o, "- {}", cell(n));
    }
    let _ = writeln!(o);
}

/// Section 5: the multiplier stack.
fn stack(o: &mut String, l: &crate::report::ladder::LadderSection) {
    let _ = writeln!(o, "## 5. Multiplier stack\n");
    let _ = writeln!(
        o,
        "No-load {} , at load {} (drop {}), ripple {:.1} V p-p, stored energy {:.1} J.\n",
        kv(l.output_no_load_v),
        kv(l.output_at_load_v),
        kv(l.drop_v),
        l.ripple_pp_v,
        l.stored_energy_j
    );
    let _ = writeln!(
        o,
        "| stage | mean | ripple V p-p | capacitor max | diode PIV | energy J |"
    );
    let _ = writeln!(o, "|---:|---:|---:|---:|---:|---:|");
    for n in &l.per_stage {
        let _ = writeln!(
            o,
            "| {} | {} | {:.1} | {} | {} | {:.2} |",
            n.stage,
            kv(n.mean_v),
            n.ripple_pp_v,
            kv(n.capacitor_max_v),
            kv(n.diode_piv_v),
            n.stored_energy_j
        );
    }
    let _ = writeln!(o);
}

/// Section 5a: each grading column at nominal.
fn grading(o: &mut String, report: &Report) {
    let _ = writeln!(o, "## 5a. Grading network at nominal\n");
    for g in &report.grading {
        let (head, details) = crate::report::grading::lines(g);
        let _ = writeln!(o, "- **{}**", cell(&head));
        for d in details {
            let _ = writeln!(o, "  - {}", cell(&d));
        }
    }
    let _ = writeln!(o);
}

/// Section 5b: the grading faults and the spark transient.
fn fault_section(o: &mut String, report: &Report, f: &crate::faults::FaultReplay) {
    let _ = writeln!(o, "## 5b. Grading faults and the spark transient\n");
    let _ = writeln!(
        o,
        "Every grading resistor open and shorted, tolerance worst cases and the capacitive distribution just after a terminal-to-tank spark, each with its worst field margin (nominal worst margin {}). The worst 15:\n",
        f.nominal_worst_margin
            .map_or("-".into(), |m| format!("{m:.3}"))
    );
    let _ = writeln!(
        o,
        "| rank | scenario | worst item | margin | vs nominal | max gap | protective gap | largest resistor voltage, rating margin |"
    );
    let _ = writeln!(o, "|---:|---|---|---:|---:|---:|---|---|");
    for sc in f.scenarios.iter().take(15) {
        let _ = writeln!(
            o,
            "| {} | {} | {} | {} | {} | {} | {} | {} |",
            sc.rank,
            cell(&sc.name),
            cell(sc.worst_item.as_deref().unwrap_or("-")),
            sc.worst_margin.map_or("-".into(), |m| format!("{m:.3}")),
            sc.change_from_nominal
                .map_or("-".into(), |c| crate::report::faults::signed_percent(c, 1)),
            kv(sc.max_gap_v),
            if sc.protective_gap_fired {
                format!("fired ({})", sc.fired_gaps.len())
            } else {
                "-".into()
            },
            cell(&crate::report::faults::resistor_cell(sc))
        );
    }
    let over: Vec<&str> = f
        .scenarios
        .iter()
        .filter(|sc| sc.resistor_rating_exceeded)
        .map(|sc| sc.name.as_str())
        .collect();
    if !over.is_empty() {
        let _ = writeln!(
            o,
            "\n**Resistor ratings exceeded** in {} scenario(s): {}.",
            over.len(),
            cell(&over.join("; "))
        );
    }
    if let Some(tr) = f.transient(false) {
        let rc = &tr.resistors;
        let _ = writeln!(
            o,
            "\nJust after a spark one grading resistor sees up to {} ({} with the protective gaps clamping at the top of their band); rating margin {}.",
            kv(rc.max_v),
            kv(rc.clamped_max_v),
            rc.rating_margin
                .map_or("- (no rating given)".into(), |m| format!("{m:.2}"))
        );
    }
    for l in [
        crate::report::faults::transient_line(f),
        crate::report::faults::repetition_line(f),
    ]
    .into_iter()
    .flatten()
    {
        let _ = writeln!(o, "\n{}.", cell(&l));
    }
    if let Some(mc) = &f.monte_carlo {
        let _ = writeln!(
            o,
            "\nMonte Carlo, {} draws (seed {}, {}): worst margin {} to {}, mean {}; the most loaded gap of a draw at {:.4} × its nominal on average, {:.4} × at most.",
            mc.draws,
            mc.seed,
            cell(&mc.distribution),
            mc.worst_margin_min
                .map_or("-".into(), |m| format!("{m:.3}")),
            mc.worst_margin_max
                .map_or("-".into(), |m| format!("{m:.3}")),
            mc.worst_margin_mean
                .map_or("-".into(), |m| format!("{m:.3}")),
            mc.gap_ratio_mean,
            mc.gap_ratio_max
        );
    }
    for l in &f.ladder_equivalents {
        let _ = writeln!(o, "\n{}.", cell(&crate::report::faults::ladder_line(l)));
    }
    if let Some(se) = &f.spark_energy {
        let _ = writeln!(
            o,
            "\nA terminal-to-tank spark: {:.1} J stored in the electrodes, {:.1} J released in the fast collapse.",
            se.stored_j, se.released_fast_j
        );
    }
    let _ = writeln!(
        o,
        "\n**{}**\n",
        cell(&crate::report::faults::FaultVerdict::of(f, report.design_factor).line())
    );
    for n in &crate::report::faults::notes(f) {
        let _ = writeln!(o, "- {}", cell(n));
    }
    let _ = writeln!(o);
}

/// Section 6: the modelling assumptions.
fn assumptions(o: &mut String) {
    let _ = writeln!(o, "## 6. Assumptions\n");
    let _ = writeln!(
        o,
        "- The structure is modelled as axisymmetric: posts, chains, belts, pulleys, side-mounted stacks, manways and feedthroughs are equivalent bodies of revolution or absent; inclined or spiral tube electrodes are modelled flat."
    );
    let _ = writeln!(
        o,
        "- Gas and vacuum are taken at ε_r = 1; dielectric permittivities are the values listed in section 2."
    );
    let _ = writeln!(
        o,
        "- Breakdown limits are for clean electrodes; large stressed areas, roughness, particles, humidity and conditioning history lower the hold-off (see the derating in the criterion column).\n"
    );
}

/// Section 7: the source of every criterion used.
fn sources(o: &mut String, report: &Report) {
    let _ = writeln!(o, "## 7. Sources of the criteria used\n");
    let sources: BTreeSet<(String, &str)> = report
        .margins
        .iter()
        .map(|r| (r.criterion_label(), r.source.as_str()))
        .collect();
    for (label, src) in sources {
        let _ = writeln!(o, "- **{}**: {}", cell(&label), cell(src));
    }
    let _ = writeln!(o);
}

/// Section 8: the high-voltage cautions.
fn cautions(o: &mut String, report: &Report) {
    let _ = writeln!(o, "## 8. Cautions\n");
    for c in &report.cautions {
        let _ = writeln!(o, "- **{}**: {}", c.topic, c.text);
    }
    let _ = writeln!(o);
}

/// Section 9: blank sign-off fields, and the design file as an appendix.
fn sign_off(o: &mut String, design_text: &str) {
    let _ = writeln!(o, "## 9. Sign-off\n");
    let _ = writeln!(o, "| role | name | signature | date |");
    let _ = writeln!(o, "|---|---|---|---|");
    for role in [
        "Preparer (design or high-voltage engineer)",
        "Independent technical reviewer",
        "High-voltage / electrical-safety authority",
        "Radiation safety officer",
        "Pressure-systems competent person",
        "Responsible manager",
    ] {
        let _ = writeln!(o, "| {role} | | | |");
    }
    let _ = writeln!(o, "\n## Appendix: design file\n");
    let _ = writeln!(o, "```toml\n{}\n```", design_text.trim_end());
}
