//! `holdoff size`: search stage count and stage capacitance for a terminal voltage, load and
//! ripple; list the designs that meet the request (the drive turned down where a stack would
//! give more), each re-simulated against every limit, or say which limit blocked each stage
//! count.

use anyhow::{Result, anyhow};
use clap::Args;
use holdoff::ladder::{OVERSHOOT, SimControls, SizeTarget, Sizing, Topology, size_with_progress};
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
    /// The most stages searched (default: twice the fewest that reach the request, plus 4,
    /// or more when a voltage rating asks for more stages).
    #[arg(long, value_name = "N")]
    pub max_stages: Option<usize>,
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
        max_stages: a.max_stages,
        controls: SimControls::default(),
    };
    let bar = super::progress_bar(0, "size", "stage counts");
    let progress = |done: usize, total: usize| {
        if let Some(b) = &bar {
            b.set_length(total as u64);
            b.set_position(done as u64);
        }
    };
    let sizing = size_with_progress(&target, &progress)?;
    if let Some(b) = &bar {
        b.finish_and_clear();
    }
    a.json.write(&SizeJson {
        request: &target,
        sizing: &sizing,
    })?;
    let code = if sizing.designs.is_empty() {
        ExitCode::from(1)
    } else {
        ExitCode::SUCCESS
    };
    if !a.json.to_stdout() {
        print!("{}", render(&target, &sizing, a.rows));
    }
    Ok(code)
}

/// The JSON of `size`: the request as read, then the outcome.
#[derive(serde::Serialize)]
struct SizeJson<'a> {
    request: &'a SizeTarget,
    #[serde(flatten)]
    sizing: &'a Sizing,
}

fn kv(v: f64) -> String {
    format!("{:.2}", v / 1e3)
}

/// The listing: the designs that meet the request, or the limits that blocked every stage
/// count.
fn render(target: &SizeTarget, sizing: &Sizing, rows: super::Rows) -> String {
    let [first, last] = sizing.stages_searched;
    let mut out = format!(
        "request {} kV at load, {} mA, ripple at most {:.1} V p-p; drive {} kV peak at {:.1} kHz ({}); {}–{} stages searched\n",
        kv(target.terminal_v),
        target.load_current_a * 1e3,
        target.ripple_limit_pp_v,
        kv(target.drive_peak_v),
        target.drive_frequency_hz / 1e3,
        target.topology.as_str(),
        first,
        last
    );
    if sizing.designs.is_empty() {
        out += "No design meets the request. What blocked each stage count:\n";
        for (limit, count) in sizing.blocking() {
            out += &format!(
                "- {} ({} of {} stage counts): {}\n",
                limit.label(),
                count,
                last - first + 1,
                limit.advice()
            );
        }
        for r in &sizing.rejected {
            out += &format!(
                "  {} stages: {} — {}\n",
                r.stages,
                r.limit.label(),
                r.detail
            );
        }
        return out;
    }
    let mut t = comfy_table::Table::new();
    t.load_style(holdoff::report::table::STYLE);
    t.set_header(vec![
        "rank",
        "stages",
        "C nF",
        "drive kV",
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
    let right =
        |s: String| comfy_table::Cell::new(s).set_alignment(comfy_table::CellAlignment::Right);
    for d in sizing.designs.iter().take(rows.of(sizing.designs.len())) {
        t.add_row(vec![
            right(d.rank.to_string()),
            right(d.stages.to_string()),
            right(format!("{:.3}", d.capacitance_f * 1e9)),
            right(format!(
                "{}{}",
                kv(d.drive_peak_v),
                if d.drive_turned_down { " *" } else { "" }
            )),
            right(kv(d.output_at_load_v)),
            right(kv(d.output_no_load_v)),
            right(kv(d.drop_v)),
            right(format!("{:.1}", d.ripple_pp_v)),
            right(format!("{:.1}", d.stored_energy_j)),
            right(d.stack_height_m.map_or("-".into(), |h| format!("{h:.2}"))),
            right(kv(d.capacitor_max_v)),
            right(kv(d.diode_piv_v)),
            right(format!("{:.3}", d.diode_peak_current_a)),
        ]);
    }
    out += &format!("{t}\n");
    out += &format!(
        "{} designs meet the request, ranked by stored energy; each re-simulated to periodic steady state and checked against every limit given. Ripple is peak to peak.\n",
        sizing.designs.len()
    );
    if sizing.designs.iter().any(|d| d.drive_turned_down) {
        out += &format!(
            "* drive turned down below the {} kV asked for: at full drive that stack would give more than the request (by over {:.0} %); its voltages, ratings and energy are those at the drive shown.\n",
            kv(target.drive_peak_v),
            OVERSHOOT * 100.0
        );
    }
    if !sizing.rejected.is_empty() {
        let blocked: Vec<String> = sizing
            .blocking()
            .iter()
            .map(|(l, k)| format!("{} ({k})", l.label()))
            .collect();
        out += &format!(
            "{} other stage counts gave no design: {}.\n",
            sizing.rejected.len(),
            blocked.join(", ")
        );
    }
    out += "Caution: the stack stores lethal energy (column 'energy J'); discharge and ground it before contact, under the facility's high-voltage rules.\n";
    out
}
