//! `holdoff faults FILE`: every single-resistor failure, resistor tolerance and the fast
//! transient of a spark, each with its margins, ranked.

use anyhow::Result;
use clap::Args;
use holdoff::faults::{ReplayOptions, Section, replay, scenario_count};
use holdoff::mesh::Mesh;
use holdoff::report::faults::{FaultSection, render};
use holdoff::solve::SolverParams;
use std::io::IsTerminal;
use std::path::PathBuf;
use std::process::ExitCode;

#[derive(Debug, Args)]
pub struct FaultsArgs {
    /// The design file (TOML) with at least one [[column]].
    pub file: PathBuf,
    #[command(flatten)]
    pub json: super::JsonArg,
    /// Monte Carlo draws of the resistor tolerance.
    #[arg(long, value_name = "N", default_value_t = 200)]
    pub samples: usize,
    /// Seed of the Monte Carlo draws.
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
    /// Short gaps FIRST to LAST (1-based, inclusive) of column COLUMN for the conditioning
    /// spark energy, as COLUMN:FIRST-LAST; repeatable.
    #[arg(long = "short-section", value_name = "COLUMN:FIRST-LAST", value_parser = parse_section)]
    pub short_sections: Vec<Section>,
    /// Evaluate every margin row of every scenario instead of screening out the conductors
    /// whose rows cannot set a scenario's worst margin (the same results, slower).
    #[arg(long)]
    pub exhaustive: bool,
    /// How many of the worst scenarios to show in detail.
    #[arg(long, value_name = "N", default_value_t = 3)]
    pub details: usize,
    /// How many of the ranked scenarios the table lists, or `all`.
    #[arg(long, value_name = "N|all", default_value = "40", value_parser = super::parse_rows)]
    pub rows: super::Rows,
}

pub fn run(args: &FaultsArgs) -> Result<ExitCode> {
    let Some(super::Loaded { model, text, file }) = super::load_design(&args.file)? else {
        return Ok(ExitCode::from(2));
    };
    args.json.check()?;
    let params = SolverParams::default();
    let stack = holdoff::stack::analyze_stack(&model, &params, &Default::default())?;
    let stage_v = stack.as_ref().map(|s| s.stage_voltages());
    let mesh = Mesh::build(&model)?;
    let options = ReplayOptions {
        samples: args.samples,
        seed: args.seed,
        shorted_sections: args.short_sections.clone(),
        exhaustive: args.exhaustive,
    };
    let total = scenario_count(&model, args.samples);
    let show = std::io::stderr().is_terminal();
    let bar = show.then(|| {
        let b = indicatif::ProgressBar::new(total as u64);
        if let Ok(style) = indicatif::ProgressStyle::with_template(
            "{msg} [{bar:40}] {pos}/{len} scenarios, {elapsed}",
        ) {
            b.set_style(style.progress_chars("=> "));
        }
        b.set_message("fault replay");
        b
    });
    let progress = |k: usize| {
        if let Some(b) = &bar {
            b.set_position(k as u64);
        }
    };
    let t0 = std::time::Instant::now();
    let r = replay(
        &model,
        &mesh,
        &params,
        stage_v.as_deref(),
        &options,
        &progress,
    )?;
    if let Some(b) = &bar {
        b.finish_and_clear();
    }
    let section = FaultSection::new(
        &model,
        &file,
        &text,
        r,
        t0.elapsed().as_secs_f64(),
        stack.as_ref(),
    );
    let code = if section.verdict.pass {
        ExitCode::SUCCESS
    } else {
        ExitCode::from(1)
    };
    holdoff::report::finite::ensure_finite(&section)?;
    args.json.write(&section)?;
    if args.json.to_stdout() {
        return Ok(code);
    }
    print!("{}", render(&section, args.details, args.rows.0));
    Ok(code)
}

/// Parses COLUMN:FIRST-LAST (1-based) into a 0-based section.
fn parse_section(text: &str) -> std::result::Result<Section, String> {
    let bad = || {
        format!(
            "--short-section {text:?}: expected COLUMN:FIRST-LAST with 1-based whole numbers, \
             FIRST <= LAST, e.g. 1:3-5"
        )
    };
    let (c, range) = text.split_once(':').ok_or_else(bad)?;
    let (a, b) = range.split_once('-').ok_or_else(bad)?;
    let num = |s: &str| s.trim().parse::<usize>().ok().filter(|n| *n >= 1);
    let (Some(c), Some(a), Some(b)) = (num(c), num(a), num(b)) else {
        return Err(bad());
    };
    if a > b {
        return Err(bad());
    }
    Ok(Section {
        column: c - 1,
        first_gap: a - 1,
        last_gap: b - 1,
    })
}
