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
    println!("\nCautions");
    for c in cautions(&CautionInputs {
        terminal_voltage_v: section.output_no_load_v,
        stored_energy_j: Some((
            section.stored_energy_j,
            "stage capacitors of the multiplier at load".to_string(),
        )),
        gas: model
            .gas
            .as_ref()
            .map(|g| (g.species.clone(), g.pressure_pa)),
        sf6: model.gas.as_ref().is_some_and(|g| {
            g.components
                .iter()
                .any(|(s, f)| s.eq_ignore_ascii_case("SF6") && *f > 0.0)
        }),
    }) {
        println!("- {}: {}", c.topic, c.text);
    }
    Ok(ExitCode::SUCCESS)
}
