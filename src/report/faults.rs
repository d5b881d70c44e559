//! The `faults` section: scenarios ranked by their worst margin, then the details of the
//! worst few, the Monte Carlo spread, the transient and the spark energies.

use crate::faults::{FaultReplay, Kind, ScenarioResult};
pub use notes::{note_text, notes};

mod notes;
use comfy_table::{Cell, CellAlignment, ContentArrangement, Table};
use serde::Serialize;
use std::fmt::Write;

/// The `faults` section as written to JSON.
#[derive(Debug, Clone, Serialize)]
pub struct FaultSection {
    /// Title, file and SHA-256 of the design, as in every command's JSON.
    pub design: crate::report::DesignInfo,
    #[serde(flatten)]
    pub replay: FaultReplay,
    /// The replay's stated assumptions, in words.
    pub notes: Vec<String>,
    /// Wall-clock seconds of the replay (basis and every scenario).
    #[serde(rename = "total_s")]
    pub seconds: f64,
    /// Of which the unit solves and the scenarios' field checks.
    #[serde(rename = "basis_s")]
    pub basis_seconds: f64,
    #[serde(rename = "scenarios_s")]
    pub scenario_seconds: f64,
    /// The scenarios against the design factor and the resistor ratings.
    pub verdict: FaultVerdict,
    /// The high-voltage cautions that end the run (stored energy from the electrode
    /// capacitances at nominal, plus the multiplier stack when modelled).
    pub cautions: Vec<crate::report::cautions::Caution>,
    /// What the multiplier stack adds to a terminal spark, when a stack is modelled.
    pub stack_spark: Option<crate::stack::StackSpark>,
}

impl FaultSection {
    /// The section of a replay of `model`, its verdict against the design factor and its
    /// cautions.
    pub fn new(
        model: &crate::model::Model,
        file: &str,
        text: &str,
        replay: FaultReplay,
        seconds: f64,
        stack: Option<&crate::stack::StackAnalysis>,
    ) -> FaultSection {
        use crate::report::cautions::{CautionInputs, cautions};
        use crate::stack::stored_energy;
        let stored = replay
            .spark_energy
            .as_ref()
            .map(|e| stored_energy(model, e.stored_j));
        FaultSection {
            design: crate::report::DesignInfo::of(model, file, text),
            basis_seconds: replay.basis_seconds,
            scenario_seconds: replay.scenario_seconds,
            verdict: FaultVerdict::of(&replay, model.checks.design_factor),
            cautions: cautions(&CautionInputs::for_model(
                model,
                replay.terminal_voltage_v,
                stored,
            )),
            stack_spark: stack.map(crate::stack::stack_spark),
            notes: notes(&replay),
            replay,
            seconds,
        }
    }
}

/// How many scenarios fall below the design factor or overstress a resistor.
#[derive(Debug, Clone, Serialize)]
pub struct FaultVerdict {
    pub design_factor: f64,
    /// Scenarios whose worst margin is below the design factor.
    pub below_design_factor: Vec<String>,
    /// Scenarios in which a resistor exceeds its voltage or power rating.
    pub rating_exceeded: Vec<String>,
    pub pass: bool,
}

impl FaultVerdict {
    pub fn of(replay: &FaultReplay, design_factor: f64) -> FaultVerdict {
        let below: Vec<String> = replay
            .scenarios
            .iter()
            .filter(|s| s.worst_margin.is_some_and(|m| m < design_factor))
            .map(|s| s.name.clone())
            .collect();
        let over: Vec<String> = replay
            .scenarios
            .iter()
            .filter(|s| s.resistor_rating_exceeded)
            .map(|s| s.name.clone())
            .collect();
        FaultVerdict {
            design_factor,
            pass: below.is_empty() && over.is_empty(),
            below_design_factor: below,
            rating_exceeded: over,
        }
    }

    /// One line for the end of the report.
    pub fn line(&self) -> String {
        if self.pass {
            return format!(
                "Result: every scenario meets the design factor {} and no resistor exceeds its rating.",
                self.design_factor
            );
        }
        let list = |v: &[String]| {
            let mut t = v.iter().take(3).cloned().collect::<Vec<_>>().join("; ");
            if v.len() > 3 {
                t.push_str(&format!("; and {} more", v.len() - 3));
            }
            t
        };
        let mut parts = Vec::new();
        if !self.below_design_factor.is_empty() {
            parts.push(format!(
                "{} scenario(s) below the design factor {} ({})",
                self.below_design_factor.len(),
                self.design_factor,
                list(&self.below_design_factor)
            ));
        }
        if !self.rating_exceeded.is_empty() {
            parts.push(format!(
                "{} scenario(s) with a resistor over its rating ({})",
                self.rating_exceeded.len(),
                list(&self.rating_exceeded)
            ));
        }
        format!("Result: {}.", parts.join("; "))
    }
}

fn kind_label(k: Kind) -> &'static str {
    match k {
        Kind::Nominal => "nominal",
        Kind::Open => "open",
        Kind::Short => "short",
        Kind::Tolerance => "tolerance",
        Kind::Transient => "transient",
    }
}

fn opt(v: Option<f64>, digits: usize) -> String {
    v.map_or_else(|| "-".to_string(), |x| format!("{x:.digits$}"))
}

/// The resistor column of the scenario tables: the largest voltage on one resistor (clamped
/// by the protective gaps) with its rating margin (rating over stress, the lesser of the voltage
/// and the power rating), and whether a rating is exceeded.
pub fn resistor_cell(sc: &ScenarioResult) -> String {
    let rc = &sc.resistors;
    let mut t = format!("{:.1} kV", rc.clamped_max_v / 1e3);
    let m = match (rc.rating_margin, rc.power_margin) {
        (Some(a), Some(b)) => Some(a.min(b)),
        (a, b) => a.or(b),
    };
    if let Some(m) = m {
        let _ = write!(t, ", margin {m:.2}");
    }
    if sc.resistor_rating_exceeded {
        t.push_str(" OVER RATING");
    }
    t
}

/// The spark transient with and without the protective gaps conducting, when both were
/// formed.
pub fn transient_line(r: &crate::faults::FaultReplay) -> Option<String> {
    let (bare, held) = (r.transient(false)?, r.transient(true)?);
    let worst = |s: &ScenarioResult| {
        format!(
            "{} ({})",
            opt(s.worst_margin, 3),
            s.worst_item.as_deref().unwrap_or("-")
        )
    };
    Some(format!(
        "Spark transient: worst margin {} with the column floating, {} once the protective gaps \
         it drives past their band conduct (largest gap {:.1} kV, against {:.1} kV without them)",
        worst(bare),
        worst(held),
        held.max_gap_v / 1e3,
        bare.max_gap_v / 1e3
    ))
}

/// A gap's repetitive firing in words.
fn repetition(r: &crate::faults::RepetitiveFiring) -> String {
    let (least, most) = if r.arc_floor_given {
        ("", "")
    } else {
        ("at least ", "at most ")
    };
    format!(
        "fires over and over on {:.1} µA: {least}{:.1} sparks/s of {most}{:.1} mJ ({:.1} pF \
         across it), {least}{:.2} W",
        r.current_a * 1e6,
        r.rate_hz,
        r.energy_per_spark_j * 1e3,
        r.capacitance_f * 1e12,
        r.power_w
    )
}

/// The DC scenarios in which a protective gap holds the fault and fires over and over, with
/// the most energetic spark among them.
pub fn repetition_line(r: &crate::faults::FaultReplay) -> Option<String> {
    let with: Vec<&ScenarioResult> = r
        .scenarios
        .iter()
        .filter(|s| !s.repetitive_firing.is_empty())
        .collect();
    let (sc, worst) = with
        .iter()
        .flat_map(|s| s.repetitive_firing.iter().map(move |f| (*s, f)))
        .max_by(|a, b| a.1.energy_per_spark_j.total_cmp(&b.1.energy_per_spark_j))?;
    Some(format!(
        "Repetitive firing: in {} DC scenario(s) a protective gap holds the fault; the most \
         energetic, {} (column {} nodes {}–{}), {} ({})",
        with.len(),
        sc.name,
        worst.column + 1,
        worst.from_node,
        worst.to_node,
        repetition(worst),
        if worst.arc_floor_given {
            format!(
                "each spark falling to the {:.1} kV arc floor",
                worst.arc_floor_v / 1e3
            )
        } else {
            "each spark taken to fall to 0 V; give protective_gap.arc_floor for the figures \
             themselves"
                .to_string()
        }
    ))
}

/// One column as the uniform capacitive ladder of the hand estimates.
pub fn ladder_line(l: &crate::faults::LadderEquivalent) -> String {
    format!(
        "Column '{}' as a capacitive ladder: series {:.2} pF between neighbouring electrodes, \
         {:.2} pF from each to ground, α = √(C_p/C_s) = {:.3} per gap, αN = {:.2}; the ladder puts \
         {:.1} kV on the terminal-end gap just after a spark (it keeps only neighbour and ground \
         capacitances; the transient scenario uses the whole matrix)",
        l.name,
        l.series_f * 1e12,
        l.shunt_f * 1e12,
        l.alpha_per_gap,
        l.alpha_n,
        l.ladder_end_gap_v / 1e3
    )
}

fn pct(v: Option<f64>) -> String {
    v.map_or_else(|| "-".to_string(), |x| signed_percent(x, 2))
}

/// A relative change as a signed percentage; a change that rounds to zero is shown as 0, so
/// the table does not print "-0.00 %".
pub fn signed_percent(x: f64, digits: usize) -> String {
    let shown = format!("{:.digits$}", 100.0 * x);
    if shown
        .trim_start_matches('-')
        .chars()
        .all(|c| c == '0' || c == '.')
    {
        format!("{:.digits$} %", 0.0)
    } else {
        format!("{:+.digits$} %", 100.0 * x)
    }
}

/// Renders the section for a terminal; `details` worst scenarios get their gap voltages.
/// `rows` limits the ranked table to the worst so many scenarios (None: every one).
pub fn render(s: &FaultSection, details: usize, rows: Option<usize>) -> String {
    let r = &s.replay;
    let mut out = String::new();
    let _ = writeln!(out, "{}", s.design.title);
    let _ = writeln!(
        out,
        "design {}  sha256 {}",
        s.design.file,
        &s.design.sha256[..16.min(s.design.sha256.len())]
    );
    let _ = writeln!(
        out,
        "terminal {:.2} kV, nominal worst margin {}\n",
        r.terminal_voltage_v / 1e3,
        opt(r.nominal_worst_margin, 3)
    );
    ranked_table(&mut out, r, rows);
    summary_lines(&mut out, s);
    let _ = writeln!(
        out,
        "\nWorst {} scenarios in detail",
        details.min(r.scenarios.len())
    );
    for sc in r.scenarios.iter().take(details) {
        detail(&mut out, sc);
    }
    if !s.notes.is_empty() {
        let _ = writeln!(out, "\nNotes");
        for n in &s.notes {
            let _ = writeln!(out, "- {n}");
        }
    }
    let _ = writeln!(out, "\n{}", s.verdict.line());
    let _ = writeln!(
        out,
        "\n{} scenarios{} in {:.1} s ({:.1} s for {} unit solves, {:.1} s for the scenarios, {} \
         shared with an identical one); capacitance matrix of {} electrodes (asymmetry {:.1e})",
        r.scenarios.len(),
        r.monte_carlo
            .as_ref()
            .map_or_else(String::new, |mc| format!(
                " and {} Monte Carlo draws (the worst kept as a scenario)",
                mc.draws
            )),
        s.seconds,
        s.basis_seconds,
        r.electrodes.len(),
        s.scenario_seconds,
        r.shared_evaluations,
        r.electrodes.len(),
        r.capacitance_asymmetry
    );
    let _ = writeln!(out, "\nCautions");
    for c in &s.cautions {
        let _ = writeln!(out, "- {}: {}", c.topic, c.text);
    }
    out
}

/// The ranked table of the worst `rows` scenarios (None: every one), and a line on the rest.
fn ranked_table(out: &mut String, r: &FaultReplay, rows: Option<usize>) {
    let mut t = Table::new();
    t.load_style(crate::report::table::STYLE)
        .set_content_arrangement(ContentArrangement::Dynamic);
    t.set_header(vec![
        "rank",
        "scenario",
        "kind",
        "worst item",
        "margin",
        "vs nominal",
        "max gap kV",
        "protective gap",
        "resistor kV, rating margin",
    ]);
    let shown = rows.unwrap_or(r.scenarios.len()).min(r.scenarios.len());
    for sc in &r.scenarios[..shown] {
        t.add_row(vec![
            Cell::new(sc.rank).set_alignment(CellAlignment::Right),
            Cell::new(&sc.name),
            Cell::new(kind_label(sc.kind)),
            Cell::new(sc.worst_item.as_deref().unwrap_or("-")),
            Cell::new(opt(sc.worst_margin, 3)).set_alignment(CellAlignment::Right),
            Cell::new(pct(sc.change_from_nominal)).set_alignment(CellAlignment::Right),
            Cell::new(format!("{:.2}", sc.max_gap_v / 1e3)).set_alignment(CellAlignment::Right),
            Cell::new(if sc.protective_gap_fired {
                format!("fired ({})", sc.fired_gaps.len())
            } else {
                "-".to_string()
            }),
            Cell::new(resistor_cell(sc)),
        ]);
    }
    let _ = writeln!(out, "{t}");
    let rest = &r.scenarios[shown..];
    if !rest.is_empty() {
        let m: Vec<f64> = rest.iter().filter_map(|sc| sc.worst_margin).collect();
        let range = match (
            m.iter().copied().reduce(f64::min),
            m.iter().copied().reduce(f64::max),
        ) {
            (Some(a), Some(b)) => format!(", worst margins {a:.3} to {b:.3}"),
            _ => String::new(),
        };
        let _ = writeln!(
            out,
            "… and {} more scenario(s){range}; --rows all lists them, --json gives every one",
            rest.len()
        );
    }
}

/// The lines under the table: the Monte Carlo spread, the ladder equivalents, the spark
/// energies, the transient and the repetitive firing.
fn summary_lines(out: &mut String, s: &FaultSection) {
    let r = &s.replay;
    if let Some(mc) = &r.monte_carlo {
        let _ = writeln!(
            out,
            "\nMonte Carlo: {} draws, seed {} ({}): worst margin min {}, mean {}, max {}, \
             std {}; largest gap {:.2} kV; the most loaded gap of a draw at {:.4} × its nominal \
             on average, {:.4} × at most",
            mc.draws,
            mc.seed,
            mc.distribution,
            opt(mc.worst_margin_min, 4),
            opt(mc.worst_margin_mean, 4),
            opt(mc.worst_margin_max, 4),
            mc.worst_margin_std
                .map_or_else(|| "-".to_string(), |x| format!("{x:.2e}")),
            mc.max_gap_v / 1e3,
            mc.gap_ratio_mean,
            mc.gap_ratio_max
        );
    }
    for l in &r.ladder_equivalents {
        let _ = writeln!(out, "{}", ladder_line(l));
    }
    if let Some(e) = &r.spark_energy {
        let _ = writeln!(
            out,
            "Spark energy: {:.2} J stored in the electrode capacitances, {:.2} J released in \
             the fast collapse of the terminal",
            e.stored_j, e.released_fast_j
        );
        if let Some(sp) = &s.stack_spark {
            let _ = writeln!(out, "{}", stack_spark_line(e.released_fast_j, sp));
        }
    }
    if let Some(l) = transient_line(r) {
        let _ = writeln!(out, "{l}");
    }
    if let Some(l) = repetition_line(r) {
        let _ = writeln!(out, "{l}");
    }

    if let Some(e) = &r.spark_energy_conditioning {
        let list: Vec<String> = e
            .shorted_sections
            .iter()
            .map(|s| {
                format!(
                    "column {} gaps {}–{}",
                    s.column + 1,
                    s.first_gap + 1,
                    s.last_gap + 1
                )
            })
            .collect();
        let _ = writeln!(
            out,
            "Spark energy with {} shorted (conditioning): {:.2} J stored, {:.2} J released in \
             the fast collapse",
            list.join(", "),
            e.stored_j,
            e.released_fast_j
        );
    }
}

fn detail(out: &mut String, sc: &ScenarioResult) {
    let _ = writeln!(
        out,
        "\n{}. {} — worst: {} ({}), margin {}",
        sc.rank,
        sc.name,
        sc.worst_item.as_deref().unwrap_or("-"),
        sc.worst_criterion.as_deref().unwrap_or("-"),
        opt(sc.worst_margin, 3)
    );
    for (c, gaps) in sc.gap_voltages_v.iter().enumerate() {
        let list: Vec<String> = gaps.iter().map(|v| format!("{:.1}", v / 1e3)).collect();
        let _ = writeln!(
            out,
            "   column {} gap voltages kV: {}",
            c + 1,
            list.join(" ")
        );
    }
    let _ = writeln!(
        out,
        "   largest gap {:.2} kV, {:.2} × its nominal; protective-gap margin {}",
        sc.max_gap_v / 1e3,
        sc.max_gap_ratio_to_nominal,
        opt(sc.protective_gap_margin, 3)
    );
    let rc = &sc.resistors;
    let at = |a: Option<(usize, usize)>| {
        a.map_or_else(String::new, |(c, g)| {
            format!(" (column {} gap {})", c + 1, g + 1)
        })
    };
    let clamped = if sc.fired_gaps.is_empty() {
        String::new()
    } else {
        format!(
            ", {:.2} kV{} with the protective gaps clamping",
            rc.clamped_max_v / 1e3,
            at(rc.clamped_max_at)
        )
    };
    let dissipation = match (sc.kind, rc.max_power_w) {
        (Kind::Transient, _) => {
            "dissipation not assessed (a transient, not a steady state)".to_string()
        }
        (_, Some(p)) => format!(
            "dissipation {p:.3} W (power margin {})",
            opt(rc.power_margin, 3)
        ),
        (_, None) => "dissipation - (no power rating or resistance given)".to_string(),
    };
    let _ = writeln!(
        out,
        "   resistors: largest {:.2} kV{}{}; rating margin {}; {}{}",
        rc.max_v / 1e3,
        at(rc.max_at),
        clamped,
        opt(rc.rating_margin, 3),
        dissipation,
        if sc.resistor_rating_exceeded {
            "; OVER RATING"
        } else {
            ""
        }
    );
    for f in &sc.fired_gaps {
        let repeats = sc
            .repetitive_firing
            .iter()
            .find(|r| (r.column, r.from_node, r.to_node) == (f.column, f.from_node, f.to_node))
            .map_or_else(String::new, |r| format!("; {}", repetition(r)));
        let _ = writeln!(
            out,
            "   protective gap column {} nodes {}–{} at {:.1} kV (firing {:.1} kV){repeats}",
            f.column + 1,
            f.from_node,
            f.to_node,
            f.voltage_v / 1e3,
            f.firing_v / 1e3
        );
    }
}

/// The stack's share of a terminal spark, beside the column's.
pub fn stack_spark_line(column_j: f64, sp: &crate::stack::StackSpark) -> String {
    let mut line = format!(
        "Spark energy with the stack: {:.2} J from the column plus up to {:.1} J from the \
         multiplier through its smoothing column ({:.3} nF in series at {:.0} kV, at no load) = \
         {:.1} J",
        column_j,
        sp.deliverable_j,
        sp.series_capacitance_f * 1e9,
        sp.no_load_v / 1e3,
        column_j + sp.deliverable_j
    );
    if let Some(all) = sp.stored_no_load_j {
        let _ = write!(
            line,
            "; the whole stack stores {all:.1} J at no load (upper bound)"
        );
    }
    match sp.discharge_tau_s {
        Some(t) => {
            let _ = write!(
                line,
                "; with no output resistor nothing else limits the discharge into the spark, and \
                 after the drive stops the stack decays with tau = {t:.3} s"
            );
        }
        None => line.push_str(
            "; with no output resistor nothing else limits the discharge into the spark, and \
             with no divider or dump resistor the stack holds its charge",
        ),
    }
    line
}
