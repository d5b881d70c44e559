//! `holdoff report FILE --out NOTES.md`: the self-contained review note.

use anyhow::{Context, Result, bail};
use clap::Args;
use holdoff::report::{Report, fieldmap, html, markdown, plot, write_atomic};
use holdoff::solve::SolverParams;
use std::path::{Path, PathBuf};
use std::process::ExitCode;

#[derive(Debug, Args)]
pub struct ReportArgs {
    /// The design file (TOML).
    pub file: PathBuf,
    /// The note to write: a self-contained HTML page with figures (`.html`) or Markdown
    /// (`.md`).
    #[arg(long)]
    pub out: PathBuf,
    /// Leave out the grading-fault replay (every resistor open and shorted, tolerance draws,
    /// the spark transient).
    #[arg(long)]
    pub no_faults: bool,
}

pub fn run(a: &ReportArgs) -> Result<ExitCode> {
    let ext = a
        .out
        .extension()
        .and_then(|e| e.to_str())
        .unwrap_or("")
        .to_ascii_lowercase();
    if ext != "md" && ext != "html" {
        bail!(
            "--out {}: the review note is written as HTML or Markdown; give a file name ending in .html or .md",
            a.out.display()
        );
    }
    let Some(super::Loaded { model, text, file }) = super::load_design(&a.file)? else {
        return Ok(ExitCode::from(2));
    };
    super::check_output(&a.out, "the review note")?;
    let run = holdoff::review::review(&model, &SolverParams::default(), true)?;
    let failed = run.margins.any_fail();
    let report = Report::new(&model, &file, &text, &run.fine, run.study)
        .with_margins(run.margins)
        .with_ladder(run.stack.as_ref())
        .with_grading(run.grading);
    holdoff::report::finite::ensure_finite(&report)?;
    let listing = holdoff::design::expansion_listing(&model);
    let faults = if a.no_faults || model.columns.is_empty() {
        None
    } else {
        // The fine analysis already holds the design's mesh.
        let stage_v = run.stack.as_ref().map(|s| s.stage_voltages());
        Some(holdoff::faults::replay(
            &model,
            &run.fine.mesh,
            &SolverParams::default(),
            stage_v.as_deref(),
            &holdoff::faults::ReplayOptions::default(),
            &|_| {},
        )?)
    };
    // The note's fault section fails the run as `holdoff faults` would.
    let fault_verdict = faults
        .as_ref()
        .map(|f| holdoff::report::faults::FaultVerdict::of(f, model.checks.design_factor));
    let faults_failed = fault_verdict.as_ref().is_some_and(|v| !v.pass);
    let mut note = markdown::render(&report, &listing, &text, faults.as_ref());
    if ext == "html" {
        let map = fieldmap::field_map(&model, &run.fine, &report)?;
        let column = plot::column_field(&report)?;
        let along = plot::surface_profiles(&model, &run.fine, 3)?;
        let bars = plot::margin_bars(&report, 30)?;
        let mut figures = vec![
            ("The modelled geometry from its true outlines (conductors grey, dielectrics brown, vacuum regions blue with a dashed edge) with |E| in colour (scale in kV/mm at the right) and equipotentials labelled in kV; the circle marks the worst hotspot (rank 1 of the margins).".to_string(), map),
            ("Peak surface field of every conductor against the height of its peak.".to_string(), column),
            ("The surface field along the three most stressed conductors, by angle around each conductor's centre.".to_string(), along),
            ("The worst margins with the design factor marked; red bars fail, amber bars are under review.".to_string(), bars),
        ];
        if let Some(zoom) = fieldmap::hotspot_zoom(&model, &run.fine, &report) {
            figures.insert(
                1,
                ("The neighbourhood of the worst hotspot (rank 1 of the margins, circled), with its own colour scale and equipotential steps.".to_string(), zoom?),
            );
        }
        note = html::render(&model.title, &note, &figures);
    }
    write_atomic(Path::new(&a.out), note.as_bytes())
        .with_context(|| format!("cannot write the review note {}", a.out.display()))?;
    println!(
        "wrote {} ({} margin rows)",
        a.out.display(),
        report.margins.len()
    );
    if failed {
        println!("Margins: some row is below the design factor (section 4 of the note).");
    }
    if let Some(v) = &fault_verdict {
        println!("Grading faults (section 5b of the note): {}", v.line());
    }
    Ok(if failed || faults_failed {
        ExitCode::from(1)
    } else {
        ExitCode::SUCCESS
    })
}
