//! `holdoff check FILE` and `holdoff demo`.

use anyhow::{Context, Result};
use clap::Args;
use holdoff::report::{Report, table, write_atomic};
use holdoff::solve::SolverParams;
use std::path::{Path, PathBuf};
use std::process::ExitCode;

/// The built-in demo design, embedded so that `holdoff demo` works from any directory.
pub const DEMO_DESIGN: &str = include_str!("../../examples/demo_750kv.toml");

#[derive(Debug, Args)]
pub struct CheckArgs {
    /// The design file (TOML).
    pub file: PathBuf,
    #[command(flatten)]
    pub out: OutputArgs,
}

#[derive(Debug, Args)]
pub struct DemoArgs {
    #[command(flatten)]
    pub out: OutputArgs,
}

#[derive(Debug, Args)]
pub struct OutputArgs {
    /// Write the JSON report to FILE, or to standard output with `-`.
    #[arg(long, value_name = "FILE")]
    pub json: Option<String>,
    /// List the primitives the generators made (what was modelled), then continue.
    #[arg(long)]
    pub expand: bool,
    /// Skip the grid study (no numerical-error estimates).
    #[arg(long)]
    pub no_grid_study: bool,
}

pub fn run_check(args: &CheckArgs) -> Result<ExitCode> {
    let text = std::fs::read_to_string(&args.file)
        .with_context(|| format!("cannot read design file {}", args.file.display()))?;
    run_text(&text, &args.file.display().to_string(), &args.out)
}

pub fn run_demo(args: &DemoArgs) -> Result<ExitCode> {
    run_text(DEMO_DESIGN, "demo_750kv.toml (built in)", &args.out)
}

fn run_text(text: &str, file: &str, out: &OutputArgs) -> Result<ExitCode> {
    let model = match holdoff::design::from_str(text, file) {
        Ok(m) => m,
        Err(e) => {
            eprint!(
                "{}",
                holdoff::design::diagnostic::render_for_stderr(&e, text)
            );
            return Ok(ExitCode::from(2));
        }
    };
    let json_to_stdout = out.json.as_deref() == Some("-");
    if out.expand {
        let listing = holdoff::design::expansion_listing(&model);
        let target: &mut dyn std::io::Write = if json_to_stdout {
            &mut std::io::stderr()
        } else {
            &mut std::io::stdout()
        };
        write!(target, "{}", table::render_listing(&listing))?;
    }
    let params = SolverParams::default();
    let run = holdoff::review::review(&model, &params, !out.no_grid_study)?;
    let failed = run.margins.any_fail();
    let report = Report::new(&model, file, text, &run.fine, run.study)
        .with_margins(run.margins)
        .with_ladder(run.stack.as_ref())
        .with_grading(run.grading);
    holdoff::report::finite::ensure_finite(&report)?;
    if let Some(target) = &out.json {
        let json = report
            .to_json()
            .context("cannot serialise the JSON report")?;
        if target == "-" {
            println!("{json}");
        } else {
            write_atomic(Path::new(target), json.as_bytes())
                .with_context(|| format!("cannot write JSON report {target}"))?;
        }
    }
    if !json_to_stdout {
        print!("{}", table::render(&report));
    }
    Ok(if failed {
        ExitCode::from(1)
    } else {
        ExitCode::SUCCESS
    })
}
