//! Argument definitions and dispatch; one file per command.

mod bench;
mod check;
mod compare;
mod faults;
mod init;
mod ladder;
mod report;
mod size;
mod sweep;

use anyhow::Context;
use clap::{Parser, Subcommand};
use std::path::Path;
use std::process::ExitCode;

/// A design file read and validated.
pub(crate) struct Loaded {
    pub model: holdoff::model::Model,
    pub text: String,
    pub file: String,
}

/// Reads and validates a design file; `None` once its diagnostics are printed (exit code 2).
pub(crate) fn load_design(path: &Path) -> anyhow::Result<Option<Loaded>> {
    let text = std::fs::read_to_string(path)
        .with_context(|| format!("cannot read design file {}", path.display()))?;
    let file = path.display().to_string();
    match holdoff::design::from_str(&text, &file) {
        Ok(model) => Ok(Some(Loaded { model, text, file })),
        Err(e) => {
            eprint!(
                "{}",
                holdoff::design::diagnostic::render_for_stderr(&e, &text)
            );
            Ok(None)
        }
    }
}

/// Electrostatic field and breakdown-margin review of DC accelerator columns.
#[derive(Debug, Parser)]
#[command(name = "holdoff", version, about, long_about = None)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Debug, Subcommand)]
pub enum Command {
    /// Write a commented template design (every section and key) to FILE or standard output.
    Init(init::InitArgs),
    /// Solve the field of a design file and report peak surface fields.
    Check(check::CheckArgs),
    /// Run `check` on the built-in demo design (an invented 750 kV SF6 column).
    Demo(check::DemoArgs),
    /// Compare the margins of two designs, the rows that got worse first.
    Compare(compare::CompareArgs),
    /// Write the pre-commissioning review note of a design (Markdown).
    Report(report::ReportArgs),
    /// Simulate the multiplier stack of a design file beside its closed forms.
    Ladder(ladder::LadderArgs),
    /// Search stage count and capacitance for a terminal voltage, load and ripple.
    Size(Box<size::SizeArgs>),
    /// Vary one design value over a range; optionally find the least value that passes.
    Sweep(sweep::SweepArgs),
    /// Replay every grading-resistor failure, tolerance and the spark transient, ranked.
    Faults(faults::FaultsArgs),
    /// Time the field solver on a standard problem at several sizes.
    Bench(bench::BenchArgs),
}

pub fn run() -> anyhow::Result<ExitCode> {
    dispatch(Cli::parse())
}

/// Runs one parsed command line.
pub(crate) fn dispatch(cli: Cli) -> anyhow::Result<ExitCode> {
    match cli.command {
        Command::Init(a) => init::run(&a),
        Command::Check(a) => check::run_check(&a),
        Command::Demo(a) => check::run_demo(&a),
        Command::Compare(a) => compare::run(&a),
        Command::Report(a) => report::run(&a),
        Command::Ladder(a) => ladder::run(&a),
        Command::Size(a) => size::run(&a),
        Command::Sweep(a) => sweep::run(&a),
        Command::Faults(a) => faults::run(&a),
        Command::Bench(a) => bench::run(&a),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use clap::CommandFactory;

    #[test]
    fn command_line_definition_is_consistent() {
        Cli::command().debug_assert();
    }
}
