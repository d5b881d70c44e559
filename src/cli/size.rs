//! `holdoff size`: search stage count and stage capacitance for a terminal voltage, load and
//! ripple; list the feasible designs, each re-simulated against every limit.

use anyhow::{Result, anyhow};
use clap::Args;
use holdoff::ladder::{SimControls, SizeTarget, Topology, size};
use holdoff::units::{Dimension, parse};
use std::process::ExitCode;

#[derive(Debug, Args)]
pub struct SizeArgs {
    /// Terminal voltage required at load, e.g. "800 kV".
    #[arg(long)]
    pub voltage: String,
    /// Load current, e.g. "10 mA" (the file key `multiplier.load_current`).
    #[arg(long)]
    pub load_current: String,
    /// Largest peak-to-peak ripple at load, e.g. "1 kV".
    #[arg(long)]
    pub ripple: String,
    /// Peak drive voltage per phase, e.g. "50 kV".
    #[arg(long)]
    pub drive_peak: String,
    /// Drive frequency, e.g. "50 kHz" (the file key `multiplier.drive_frequency`).
    #[arg(long)]
    pub drive_frequency: String,
    /// "half-wave" or "symmetric".
    #[arg(long, default_value = "symmetric")]
    pub topology: String,
    /// Stage capacitances on offer, comma-separated (e.g. "4.7 nF,6.8 nF,10 nF"); any value
    /// when absent (the file key `multiplier.stage_capacitance`).
    #[arg(long, value_delimiter = ',')]
    pub stage_capacitance: Vec<String>,
    /// Column gradient limit for the stack height, e.g. "1 MV/m".
    #[arg(long)]
    pub gradient: Option<String>,
    /// Largest working voltage of a stage capacitor, e.g. "100 kV".
    #[arg(long)]
    pub capacitor_rating: Option<String>,
    /// Largest peak inverse voltage of a rectifier, e.g. "150 kV".
    #[arg(long)]
    pub diode_piv: Option<String>,
    /// Stray capacitance of every node to ground, e.g. "4 pF" (the file key
    /// `multiplier.stray_capacitance`).
    #[arg(long, default_value = "0 pF")]
    pub stray_capacitance: String,
    /// How many designs the table lists, or `all`.
    #[arg(long, value_name = "N|all", default_value = "10", value_parser = super::parse_rows)]
    pub rows: super::Rows,
    #[command(flatten)]
    pub json: super::JsonArg,
}

fn q(option: &str, text: &str, dim: Dimension) -> Result<f64> {
    parse(text, dim).map_err(|e| anyhow!("--{option} {text:?}: {e}"))
}

pub fn run(a: &SizeArgs) -> Result<ExitCode> {
    a.json.check()?;
    let topology = match a.topology.as_str() {
        "half-wave" => Topology::HalfWave,
        "symmetric" => Topology::Symmetric,
        other => {
            return Err(anyhow!(
                "--topology {other:?}: accepted are \"half-wave\" and \"symmetric\""
            ));
        }
    };
    let mut capacitors = Vec::new();
    for c in &a.stage_capacitance {
        capacitors.push(q("stage-capacitance", c.trim(), Dimension::Capacitance)?);
    }
    let target = SizeTarget {
        topology,
        terminal_v: q("voltage", &a.voltage, Dimension::Voltage)?,
        load_current_a: q("load-current", &a.load_current, Dimension::Current)?,
        ripple_limit_pp_v: q("ripple", &a.ripple, Dimension::Voltage)?,
        drive_peak_v: q("drive-peak", &a.drive_peak, Dimension::Voltage)?,
        drive_frequency_hz: q("drive-frequency", &a.drive_frequency, Dimension::Frequency)?,
        capacitor_values_f: capacitors,
        gradient_limit_v_per_m: a
            .gradient
            .as_deref()
            .map(|g| q("gradient", g, Dimension::Field))
            .transpose()?,
        capacitor_rating_v: a
            .capacitor_rating
            .as_deref()
            .map(|g| q("capacitor-rating", g, Dimension::Voltage))
            .transpose()?,
        diode_piv_rating_v: a
            .diode_piv
            .as_deref()
            .map(|g| q("diode-piv", g, Dimension::Voltage))
            .transpose()?,
        stray_capacitance_f: q(
            "stray-capacitance",
            &a.stray_capacitance,
            Dimension::Capacitance,
        )?,
        diode: None,
        max_stages: None,
        controls: SimControls::default(),
    };
    let designs = size(&target)?;
    a.json.write(&designs)?;
    if a.json.to_stdout() {
        return Ok(if designs.is_empty() {
            ExitCode::from(1)
        } else {
            ExitCode::SUCCESS
        });
    }
    if designs.is_empty() {
        println!("no design meets every limit within the searched stage counts");
        return Ok(ExitCode::from(1));
    }
    let mut t = comfy_table::Table::new();
    t.load_style(holdoff::report::table::STYLE);
    t.set_header(vec![
        "rank",
        "stages",
        "C nF",
        "at load kV",
        "no-load kV",
        "drop kV",
        "ripple V p-p",
        "energy J",
        "height m",
        "cap. max kV",
        "diode PIV kV",
        "diode peak A",
    ]);
    for d in designs.iter().take(a.rows.of(designs.len())) {
        t.add_row(vec![
            d.rank.to_string(),
            d.stages.to_string(),
            format!("{:.3}", d.capacitance_f * 1e9),
            format!("{:.2}", d.output_at_load_v / 1e3),
            format!("{:.2}", d.no_load_v / 1e3),
            format!("{:.2}", d.drop_v / 1e3),
            format!("{:.1}", d.ripple_pp_v),
            format!("{:.1}", d.stored_energy_j),
            d.stack_height_m.map_or("-".into(), |h| format!("{h:.2}")),
            format!("{:.2}", d.capacitor_max_v / 1e3),
            format!("{:.2}", d.diode_piv_v / 1e3),
            format!("{:.3}", d.diode_peak_current_a),
        ]);
    }
    println!("{t}");
    println!(
        "{} feasible designs, ranked by stored energy; each re-simulated to periodic steady state and checked against every limit given. Ripple is peak to peak.",
        designs.len()
    );
    println!(
        "Caution: the stack stores lethal energy (column 'energy J'); discharge and ground it before contact, under the facility's high-voltage rules."
    );
    Ok(ExitCode::SUCCESS)
}
