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
    /// Load current, e.g. "10 mA".
    #[arg(long)]
    pub current: String,
    /// Largest peak-to-peak ripple at load, e.g. "1 kV".
    #[arg(long)]
    pub ripple: String,
    /// Peak drive voltage per phase, e.g. "50 kV".
    #[arg(long)]
    pub drive_peak: String,
    /// Drive frequency, e.g. "50 kHz".
    #[arg(long)]
    pub frequency: String,
    /// "half-wave" or "symmetric".
    #[arg(long, default_value = "symmetric")]
    pub topology: String,
    /// Capacitor values on offer, comma-separated (e.g. "4.7 nF,6.8 nF,10 nF"); any value when absent.
    #[arg(long, value_delimiter = ',')]
    pub capacitors: Vec<String>,
    /// Column gradient limit for the stack height, e.g. "1 MV/m".
    #[arg(long)]
    pub gradient: Option<String>,
    /// Largest working voltage of a stage capacitor, e.g. "100 kV".
    #[arg(long)]
    pub capacitor_rating: Option<String>,
    /// Largest peak inverse voltage of a rectifier, e.g. "150 kV".
    #[arg(long)]
    pub diode_piv: Option<String>,
    /// Stray capacitance of every node to earth, e.g. "4 pF".
    #[arg(long, default_value = "0 pF")]
    pub stray: String,
    /// Rows to list.
    #[arg(long, default_value_t = 10)]
    pub top: usize,
    /// Write the designs as JSON to standard output.
    #[arg(long)]
    pub json: bool,
}

fn q(option: &str, text: &str, dim: Dimension) -> Result<f64> {
    parse(text, dim).map_err(|e| anyhow!("--{option} {text:?}: {e}"))
}

pub fn run(a: &SizeArgs) -> Result<ExitCode> {
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
    for c in &a.capacitors {
        capacitors.push(q("capacitors", c.trim(), Dimension::Capacitance)?);
    }
    let target = SizeTarget {
        topology,
        terminal_v: q("voltage", &a.voltage, Dimension::Voltage)?,
        load_current_a: q("current", &a.current, Dimension::Current)?,
        ripple_limit_pp_v: q("ripple", &a.ripple, Dimension::Voltage)?,
        drive_peak_v: q("drive-peak", &a.drive_peak, Dimension::Voltage)?,
        drive_frequency_hz: q("frequency", &a.frequency, Dimension::Frequency)?,
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
        stray_capacitance_f: q("stray", &a.stray, Dimension::Capacitance)?,
        diode: None,
        max_stages: None,
        controls: SimControls::default(),
    };
    let designs = size(&target)?;
    if a.json {
        println!("{}", serde_json::to_string_pretty(&designs)?);
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
    t.load_style(comfy_table::presets::UTF8_FULL_CONDENSED);
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
    for d in designs.iter().take(a.top) {
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
        "Caution: the stack stores lethal energy (column 'energy J'); discharge and earth it before contact, under the facility's high-voltage rules."
    );
    Ok(ExitCode::SUCCESS)
}
