//! `holdoff report FILE --out NOTES.md`: the self-contained review note.

use anyhow::{Context, Result, bail};
use clap::Args;
use holdoff::report::{Report, markdown, write_atomic};
use holdoff::solve::SolverParams;
use std::path::{Path, PathBuf};
use std::process::ExitCode;

#[derive(Debug, Args)]
pub struct ReportArgs {
    /// The design file (TOML).
    pub file: PathBuf,
    /// The note to write: a Markdown file (`.md`).
    #[arg(long)]
    pub out: PathBuf,
}

pub fn run(a: &ReportArgs) -> Result<ExitCode> {
    let ext = a.out.extension().and_then(|e| e.to_str()).unwrap_or("");
    if !ext.eq_ignore_ascii_case("md") {
        bail!(
            "--out {}: the review note is written as Markdown; give a file name ending in .md",
            a.out.display()
        );
    }
    let Some(super::Loaded { model, text, file }) = super::load_design(&a.file)? else {
        return Ok(ExitCode::from(2));
    };
    let run = holdoff::review::review(&model, &SolverParams::default(), true)?;
    let failed = run.margins.any_fail();
    let report = Report::new(&model, &file, &text, &run.fine, run.study)
        .with_margins(run.margins)
        .with_ladder(run.stack.as_ref());
    holdoff::report::finite::ensure_finite(&report)?;
    let listing = holdoff::design::expansion_listing(&model);
    let note = markdown::render(&report, &listing, &text);
    write_atomic(Path::new(&a.out), note.as_bytes())
        .with_context(|| format!("cannot write the review note {}", a.out.display()))?;
    println!(
        "wrote {} ({} margin rows)",
        a.out.display(),
        report.margins.len()
    );
    Ok(if failed {
        ExitCode::from(1)
    } else {
        ExitCode::SUCCESS
    })
}
