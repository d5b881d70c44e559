//! `holdoff ladder FILE`: the multiplier stack of a design, simulated, beside its closed forms.

use anyhow::{Context, Result, bail};
use clap::Args;
use holdoff::ladder::SimControls;
use holdoff::report::cautions::{CautionInputs, cautions};
use holdoff::report::ladder::{LadderSection, render};
use holdoff::report::write_atomic;
use holdoff::solve::SolverParams;
use holdoff::stack::analyze_stack;
use std::path::{Path, PathBuf};
use std::process::ExitCode;

#[derive(Debug, Args)]
pub struct LadderArgs {
    /// The design file (TOML) with a [multiplier] table.
    pub file: PathBuf,
    /// Write the `ladder` section as JSON to FILE, or to standard output with `-`.
    #[arg(long, value_name = "FILE")]
    pub json: Option<String>,
}

pub fn run(args: &LadderArgs) -> Result<ExitCode> {
    let Some(super::Loaded { model, file, .. }) = super::load_design(&args.file)? else {
        return Ok(ExitCode::from(2));
    };
    let Some(stack) = analyze_stack(&model, &SolverParams::default(), &SimControls::default())?
    else {
        bail!("{file} has no [multiplier] table: nothing to simulate");
    };
    let section = LadderSection::new(&stack);
    holdoff::report::finite::ensure_finite(&section)?;
    if let Some(target) = &args.json {
        let json = serde_json::to_string_pretty(&section)?;
        if target == "-" {
            println!("{json}");
            return Ok(ExitCode::SUCCESS);
        }
        write_atomic(Path::new(target), json.as_bytes())
            .with_context(|| format!("cannot write JSON {target}"))?;
    }
    println!("{}\n", model.title);
    print!("{}", render(&section));
    if model.terminal_voltage < 0.0 {
        println!(
            "polarity: negative terminal (diodes reversed); the stage voltages above are magnitudes"
        );
    }
    println!("\nCautions");
    let reconciled = holdoff::stack::reconcile(model.terminal_voltage, &stack);
    if !reconciled.within_tolerance {
        println!("- terminal voltage: {}", reconciled.text);
    }
    let stored = model
        .multiplier
        .as_ref()
        .and_then(holdoff::report::cautions::multiplier_stored_energy_j)
        .map(|j| (j, holdoff::report::cautions::STACK_ENERGY_BASIS.to_string()));
    for c in cautions(&CautionInputs::for_model(
        &model,
        section.output_no_load_v.abs() * model.terminal_voltage.signum(),
        stored,
    )) {
        println!("- {}: {}", c.topic, c.text);
    }
    Ok(ExitCode::SUCCESS)
}
