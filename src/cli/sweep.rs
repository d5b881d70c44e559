//! `holdoff sweep FILE --vary PATH --from X --to Y`: one design value over a range, the worst
//! margins at each value, and optionally the least value that meets the design factor.

use anyhow::{Context, Result};
use clap::Args;
use comfy_table::{Cell, CellAlignment, ContentArrangement, Table};
use holdoff::sweep::{
    InUnit, LeastValue, SweepPoint, least_value_sampled, range, sweep_with_progress,
};
use serde::Serialize;
use std::path::PathBuf;
use std::process::ExitCode;

#[derive(Debug, Args)]
pub struct SweepArgs {
    /// The design file (TOML).
    pub file: PathBuf,
    /// The value to vary, by its path in the design file: gas.pressure, terminal.voltage,
    /// conductor[terminal].corner_radius, column[1].minor_radius, ...
    #[arg(long)]
    pub vary: String,
    /// First value, with its unit (e.g. "2 bar", "-600 kV").
    #[arg(long, allow_hyphen_values = true)]
    pub from: String,
    /// Last value, with its unit (e.g. "4 bar", "-800 kV").
    #[arg(long, allow_hyphen_values = true)]
    pub to: String,
    /// Number of values, ends included.
    #[arg(long, default_value_t = 9)]
    pub steps: usize,
    /// Also find by bisection the least value in the range that meets the design factor.
    #[arg(long)]
    pub least: bool,
    #[command(flatten)]
    pub json: super::JsonArg,
    /// Also draw the worst margin against the swept value into an SVG file.
    #[arg(long, value_name = "FILE.svg")]
    pub plot: Option<PathBuf>,
}

#[derive(Serialize)]
struct SweepOut<'a> {
    parameter: &'a str,
    points: Vec<PointJson<'a>>,
    least: Option<LeastJson<'a>>,
}

/// A point of the sweep with its value under the unit suffix of the swept quantity.
#[derive(Serialize)]
struct PointJson<'a> {
    #[serde(flatten)]
    value: InUnit,
    #[serde(flatten)]
    point: &'a SweepPoint,
}

/// The least value with its value and bracket under the unit suffix of the swept quantity.
#[derive(Serialize)]
struct LeastJson<'a> {
    #[serde(flatten)]
    value: InUnit,
    #[serde(flatten)]
    tolerance: InUnit,
    #[serde(flatten)]
    least: &'a LeastValue,
}

pub fn run(a: &SweepArgs) -> Result<ExitCode> {
    let Some(super::Loaded { model, text, file }) = super::load_design(&a.file)? else {
        return Ok(ExitCode::from(2));
    };
    a.json.check()?;
    if let Some(path) = &a.plot {
        super::check_output(path, "the plot")?;
    }
    let span = range(&a.from, &a.to)?;
    let bar = super::progress_bar(a.steps.max(2), "sweep", "values");
    let progress = |k: usize| {
        if let Some(b) = &bar {
            b.set_position(k as u64);
        }
    };
    let points = sweep_with_progress(&text, &file, &a.vary, span, a.steps, &progress)?;
    if let Some(b) = &bar {
        b.finish_and_clear();
    }
    // A value at which the design cannot be built is reported and the sweep goes on; when no
    // value can be built there is nothing to show.
    let broken: Vec<&str> = points
        .iter()
        .filter_map(|p| p.unbuildable.as_deref())
        .collect();
    for why in &broken {
        eprintln!("warning: {why}");
    }
    if broken.len() == points.len() {
        eprintln!(
            "error: the design cannot be built at any value of {} from {} to {}",
            a.vary, a.from, a.to
        );
        return Ok(ExitCode::from(2));
    }
    let least = if a.least {
        least_value_sampled(&text, &file, &a.vary, span, 1e-3, &points)?
    } else {
        None
    };
    let dim = span.2;
    let out = SweepOut {
        parameter: &a.vary,
        points: points
            .iter()
            .map(|point| PointJson {
                value: InUnit {
                    name: "value",
                    dim,
                    value: point.value_si,
                },
                point,
            })
            .collect(),
        least: least.as_ref().map(|least| LeastJson {
            value: InUnit {
                name: "value",
                dim,
                value: least.value_si,
            },
            tolerance: InUnit {
                name: "tolerance",
                dim,
                value: least.tolerance_si,
            },
            least,
        }),
    };
    if let Some(note) = least.as_ref().and_then(|l| l.note.as_ref()) {
        eprintln!("warning: {note}");
    }
    holdoff::report::finite::ensure_finite(&out)?;
    if let Some(path) = &a.plot {
        // The axis in the engineer's unit of the quantity.
        let shown = holdoff::units::format_si(points[0].value_si, span.2);
        let unit = shown.split_whitespace().last().unwrap_or("").to_string();
        let (scale, unit) = match holdoff::units::parse(&format!("1 {unit}"), span.2) {
            Ok(s) => (s, unit),
            Err(_) => (1.0, "SI".to_string()),
        };
        let design_factor = model.checks.design_factor;
        let svg = holdoff::report::plot::sweep_plot(&a.vary, scale, &unit, &points, design_factor)?;
        holdoff::report::write_atomic(path, svg.as_bytes())
            .with_context(|| format!("cannot write the plot {}", path.display()))?;
    }
    a.json.write(&super::WithDesign {
        design: holdoff::report::DesignInfo::of(&model, &file, &text),
        body: &out,
    })?;
    if a.json.to_stdout() {
        return Ok(ExitCode::SUCCESS);
    }
    let mut t = Table::new();
    t.load_style(holdoff::report::table::STYLE)
        .set_content_arrangement(ContentArrangement::Dynamic);
    t.set_header(vec![
        &a.vary as &str,
        "worst margin",
        "worst item",
        "worst gas margin",
        "hold-off",
        "meets design factor",
    ]);
    let num = |v: Option<f64>| v.map_or("-".to_string(), |m| format!("{m:.3}"));
    for p in &points {
        let right = |s: String| Cell::new(s).set_alignment(CellAlignment::Right);
        t.add_row(vec![
            Cell::new(holdoff::units::format_si(p.value_si, span.2)),
            right(num(p.worst_margin)),
            Cell::new(if p.unbuildable.is_some() {
                "unbuildable (see the warning above)"
            } else {
                p.worst_item.as_deref().unwrap_or("-")
            }),
            right(num(p.worst_gas_margin)),
            right(
                p.holdoff_voltage_v
                    .map_or("-".into(), holdoff::units::kv_three_significant),
            ),
            Cell::new(if p.meets_design_factor { "yes" } else { "no" }),
        ]);
    }
    println!("{t}");
    if a.least {
        match &least {
            Some(l) => println!(
                "least {} meeting the design factor: {} (bracket {}, {} reviews); worst margin there {}",
                a.vary,
                holdoff::units::format_si(l.value_si, span.2),
                holdoff::units::format_si(l.tolerance_si, span.2),
                l.evaluations,
                num(l.worst_margin)
            ),
            None => println!(
                "no value of {} from {} to {} meets the design factor",
                a.vary, a.from, a.to
            ),
        }
    }
    println!(
        "Caution: the margins are a design aid for an idealised model, not a certification; local codes and the facility's licensed high-voltage practice take precedence."
    );
    Ok(ExitCode::SUCCESS)
}
