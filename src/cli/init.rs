//! `holdoff init [FILE]`: writes a commented starting design.

use anyhow::{Context, Result, bail};
use clap::Args;
use holdoff::report::write_atomic;
use std::path::PathBuf;
use std::process::ExitCode;

/// The template design: every section and key with its unit and default, around a small
/// invented 200 kV column in nitrogen. `holdoff check` accepts it (tests/init.rs).
pub const TEMPLATE: &str = include_str!("template.toml");

#[derive(Debug, Args)]
pub struct InitArgs {
    /// Where to write the template; standard output when left out.
    pub file: Option<PathBuf>,
    /// Overwrite FILE when it exists.
    #[arg(long, requires = "file")]
    pub force: bool,
}

pub fn run(args: &InitArgs) -> Result<ExitCode> {
    let Some(path) = &args.file else {
        print!("{TEMPLATE}");
        return Ok(ExitCode::SUCCESS);
    };
    if path.is_dir() {
        bail!(
            "{} is a directory; give the name of the design file to write, e.g. {}",
            path.display(),
            path.join("design.toml").display()
        );
    }
    if path.exists() && !args.force {
        bail!(
            "{} already exists and was left unchanged; choose another name, or add --force to \
             overwrite it",
            path.display()
        );
    }
    write_atomic(path, TEMPLATE.as_bytes())
        .with_context(|| format!("cannot write the template design {}", path.display()))?;
    eprintln!(
        "wrote {}: a commented template design (an invented 200 kV column); review it with \
         `holdoff check {}`",
        path.display(),
        path.display()
    );
    Ok(ExitCode::SUCCESS)
}
