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

impl Loaded {
    /// The design section of the JSON (title, file, SHA-256).
    pub fn design_info(&self) -> holdoff::report::DesignInfo {
        holdoff::report::DesignInfo::of(&self.model, &self.file, &self.text)
    }
}

/// A command's JSON body with the design section first, in the same place in every command.
#[derive(serde::Serialize)]
pub(crate) struct WithDesign<'a, D: serde::Serialize, T: serde::Serialize> {
    pub design: D,
    #[serde(flatten)]
    pub body: &'a T,
}

/// `--json FILE|-`, the same in every command: the JSON goes to FILE (written whole or not at
/// all), or to standard output with `-`, in which case the text output is left out.
#[derive(Debug, Clone, clap::Args)]
pub struct JsonArg {
    /// Write the JSON to FILE, or to standard output with `-` (then without the text output).
    #[arg(long, value_name = "FILE|-")]
    pub json: Option<String>,
}

impl JsonArg {
    /// Whether the JSON goes to standard output (and the text output is left out).
    pub fn to_stdout(&self) -> bool {
        self.json.as_deref() == Some("-")
    }

    /// Fails before any work when the JSON file could not be written.
    pub fn check(&self) -> anyhow::Result<()> {
        match self.json.as_deref() {
            Some(target) if target != "-" => check_output(Path::new(target), "the JSON file"),
            _ => Ok(()),
        }
    }

    /// Writes `value` as pretty JSON where `--json` asked; nothing without `--json`.
    pub fn write<T: serde::Serialize>(&self, value: &T) -> anyhow::Result<()> {
        let Some(target) = self.json.as_deref() else {
            return Ok(());
        };
        let json = serde_json::to_string_pretty(value)?;
        if target == "-" {
            println!("{json}");
            Ok(())
        } else {
            holdoff::report::write_atomic(Path::new(target), json.as_bytes())
                .with_context(|| format!("cannot write the JSON file {target}"))
        }
    }
}

/// Fails, before any computing, when `path` could not be written (`what` names it in the
/// message).
pub(crate) fn check_output(path: &Path, what: &str) -> anyhow::Result<()> {
    holdoff::report::check_writable(path)
        .with_context(|| format!("cannot write {what} {}", path.display()))
}

/// A progress bar on standard error, only when standard error is a terminal (never in a pipe,
/// a log or the JSON): `len` steps of `unit`, headed by `what`.
pub(crate) fn progress_bar(len: usize, what: &str, unit: &str) -> Option<indicatif::ProgressBar> {
    std::io::IsTerminal::is_terminal(&std::io::stderr()).then(|| {
        let b = indicatif::ProgressBar::new(len as u64);
        if let Ok(style) = indicatif::ProgressStyle::with_template(&format!(
            "{{msg}} [{{bar:40}}] {{pos}}/{{len}} {unit}, {{elapsed}}"
        )) {
            b.set_style(style.progress_chars("=> "));
        }
        b.set_message(what.to_string());
        b
    })
}

/// `--rows N|all`, the one row limit of every table: a count, or every row.
#[derive(Debug, Clone, Copy)]
pub struct Rows(pub Option<usize>);

impl Rows {
    /// The rows of `n` that are shown.
    pub fn of(self, n: usize) -> usize {
        self.0.map_or(n, |k| k.min(n))
    }
}

pub(crate) fn parse_rows(text: &str) -> std::result::Result<Rows, String> {
    if text.trim().eq_ignore_ascii_case("all") {
        return Ok(Rows(None));
    }
    text.trim()
        .parse::<usize>()
        .ok()
        .filter(|n| *n >= 1)
        .map(|n| Rows(Some(n)))
        .ok_or_else(|| format!("--rows {text:?}: expected a whole number of at least 1, or `all`"))
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
    /// Compare the margins of two designs: the worst margin before and after, the governing rows first.
    Compare(compare::CompareArgs),
    /// Write the pre-commissioning review note of a design (HTML with figures, or Markdown).
    Report(report::ReportArgs),
    /// Simulate the multiplier stack of a design file beside its closed forms.
    Ladder(ladder::LadderArgs),
    /// Search stage count and capacitance for a terminal voltage, load and ripple; the designs that meet it.
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
