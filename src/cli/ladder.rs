//! `holdoff ladder FILE`: the multiplier stack of a design, simulated, beside its closed forms.

use anyhow::{Result, bail};
use clap::Args;
use holdoff::ladder::SimControls;
use holdoff::report::cautions::{CautionInputs, cautions};
use holdoff::report::ladder::{LadderSection, render};
use holdoff::solve::SolverParams;
use holdoff::stack::analyze_stack;
use std::path::PathBuf;
use std::process::ExitCode;

#[derive(Debug, Args)]
pub struct LadderArgs {
    /// The design file (TOML) with a [multiplier] table.
    pub file: PathBuf,
    #[command(flatten)]
    pub json: super::JsonArg,
}

pub fn run(args: &LadderArgs) -> Result<ExitCode> {
    let Some(loaded) = super::load_design(&args.file)? else {
        return Ok(ExitCode::from(2));
    };
    args.json.check()?;
    let (model, file) = (&loaded.model, &loaded.file);
    let Some(stack) = analyze_stack(model, &SolverParams::default(), &SimControls::default())?
    else {
        bail!("{file} has no [multiplier] table: nothing to simulate");
    };
    let section = LadderSection::new(&stack);
    holdoff::report::finite::ensure_finite(&section)?;
    args.json.write(&super::WithDesign {
        design: loaded.design_info(),
        body: &section,
    })?;
    if args.json.to_stdout() {
        return Ok(ExitCode::SUCCESS);
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
    let stored = stack
        .stored_no_load_j
        .map(|j| (j, holdoff::stack::STACK_ENERGY_BASIS.to_string()));
    for c in cautions(&CautionInputs::for_model(
        model,
        section.output_no_load_v.abs() * model.terminal_voltage.signum(),
        stored,
    )) {
        println!("- {}: {}", c.topic, c.text);
    }
    Ok(ExitCode::SUCCESS)
}
