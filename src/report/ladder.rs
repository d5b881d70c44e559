//! The `ladder` section of the reports: the simulated stack beside its closed forms.

use crate::ladder::ClosedForm;
use crate::stack::{StackAnalysis, StraySource};
use comfy_table::{Cell, CellAlignment, ContentArrangement, Table};
use serde::Serialize;
use std::fmt::Write;

/// Ratings and voltages of one stage.
#[derive(Debug, Clone, Serialize)]
pub struct StageRow {
    pub stage: usize,
    pub mean_v: f64,
    pub ripple_pp_v: f64,
    /// Largest working voltage of the stage's capacitors, V.
    pub capacitor_max_v: f64,
    /// Largest peak inverse voltage of the stage's rectifiers, V.
    pub diode_piv_v: f64,
    pub diode_peak_current_a: f64,
    pub diode_mean_current_a: f64,
    pub stored_energy_j: f64,
}

/// The section (the JSON section `ladder`; stable keys, SI units).
#[derive(Debug, Clone, Serialize)]
pub struct LadderSection {
    pub topology: String,
    pub stages: usize,
    pub output_no_load_v: f64,
    /// Cycle-mean output at load.
    pub output_at_load_v: f64,
    pub drop_v: f64,
    pub regulation: f64,
    /// Peak-to-peak ripple of the output at load.
    pub ripple_pp_v: f64,
    pub stored_energy_j: f64,
    pub discharge_tau_s: Option<f64>,
    pub strays: StraySource,
    pub closed_form: ClosedForm,
    /// One row per stage, from the ground end.
    pub per_stage: Vec<StageRow>,
    pub conventions: Vec<&'static str>,
    pub cycles_simulated: usize,
}

impl LadderSection {
    pub fn new(s: &StackAnalysis) -> LadderSection {
        let r = &s.result;
        let nodes = r
            .stages
            .iter()
            .map(|st| StageRow {
                stage: st.stage,
                mean_v: st.mean_v,
                ripple_pp_v: st.ripple_pp_v,
                capacitor_max_v: st.capacitors.iter().map(|c| c.max_v).fold(0.0, f64::max),
                diode_piv_v: st
                    .diodes
                    .iter()
                    .map(|d| d.peak_inverse_v)
                    .fold(0.0, f64::max),
                diode_peak_current_a: st
                    .diodes
                    .iter()
                    .map(|d| d.peak_current_a)
                    .fold(0.0, f64::max),
                diode_mean_current_a: st
                    .diodes
                    .iter()
                    .map(|d| d.mean_current_a)
                    .fold(0.0, f64::max),
                stored_energy_j: st.stored_energy_j,
            })
            .collect();
        LadderSection {
            topology: r.topology.as_str().to_string(),
            stages: r.stage_count,
            output_no_load_v: r.output.no_load_v,
            output_at_load_v: r.output.loaded_mean_v,
            drop_v: r.output.drop_v,
            regulation: r.output.regulation,
            ripple_pp_v: r.output.ripple_pp_v,
            stored_energy_j: r.energy.total_j,
            discharge_tau_s: r.discharge.as_ref().map(|d| d.tau_s),
            strays: s.strays.clone(),
            closed_form: s.closed_form.clone(),
            per_stage: nodes,
            conventions: r.conventions.clone(),
            cycles_simulated: r.convergence.loaded.cycles,
        }
    }
}

/// Terminal rendering of the section.
pub fn render(l: &LadderSection) -> String {
    let mut out = String::new();
    let mut t = Table::new();
    t.load_style(crate::report::table::STYLE)
        .set_content_arrangement(ContentArrangement::Dynamic);
    t.set_header(vec![
        "stage",
        "mean kV",
        "ripple V p-p",
        "capacitor max kV",
        "diode PIV kV",
        "diode peak A",
        "diode mean mA",
        "energy J",
    ]);
    for n in &l.per_stage {
        let right = |s: String| Cell::new(s).set_alignment(CellAlignment::Right);
        t.add_row(vec![
            right(n.stage.to_string()),
            right(format!("{:.3}", n.mean_v / 1e3)),
            right(format!("{:.1}", n.ripple_pp_v)),
            right(format!("{:.2}", n.capacitor_max_v / 1e3)),
            right(format!("{:.2}", n.diode_piv_v / 1e3)),
            right(format!("{:.3}", n.diode_peak_current_a)),
            right(format!("{:.3}", n.diode_mean_current_a * 1e3)),
            right(format!("{:.2}", n.stored_energy_j)),
        ]);
    }
    let _ = writeln!(out, "{t}");
    let _ = writeln!(
        out,
        "{} multiplier, {} stages: no-load {:.2} kV, at load {:.2} kV (drop {:.2} kV, regulation {:.2} %), ripple {:.1} V p-p; stored energy {:.1} J",
        l.topology,
        l.stages,
        l.output_no_load_v / 1e3,
        l.output_at_load_v / 1e3,
        l.drop_v / 1e3,
        l.regulation * 100.0,
        l.ripple_pp_v,
        l.stored_energy_j
    );
    match &l.strays {
        StraySource::Given { farads } => {
            let _ = writeln!(
                out,
                "node strays: {:.2} pF on every node (design file)",
                farads * 1e12
            );
        }
        StraySource::FieldSolution { per_stage_f, .. } => {
            let list: Vec<String> = per_stage_f
                .iter()
                .map(|c| format!("{:.2}", c * 1e12))
                .collect();
            let _ = writeln!(
                out,
                "node strays from the field solution, pF per stage: {} (oscillating nodes taken equal to their stage's smoothing node)",
                list.join(", ")
            );
        }
    }
    let cf = &l.closed_form;
    let _ = writeln!(
        out,
        "closed forms (small ripple, no strays, ideal diodes): no-load 2nV0 = {:.2} kV",
        cf.ideal_no_load_v / 1e3
    );
    if let Some(h) = &cf.half_wave {
        let _ = writeln!(
            out,
            "  half-wave: drop (I/fC)(2n³/3 + n²/2 − n/6) = {:.2} kV, ripple (I/fC)n(n+1)/2 = {:.1} V p-p, n_opt = √(V0fC/I) = {:.1}",
            h.drop_v / 1e3,
            h.ripple_pp_v,
            h.n_opt
        );
    }
    if let Some(sy) = &cf.symmetric {
        let _ = writeln!(
            out,
            "  symmetric: drop by the time-domain fit (I/fC)(n³/6 + n²/4 + n/3) = {:.2} kV; the circulating compilation's (I/6fC)(n³ + 2n) = {:.2} kV and ripple In/(2fC) = {:.1} V p-p are unconfirmed",
            sy.drop_time_domain_v / 1e3,
            sy.drop_compilation_v / 1e3,
            sy.ripple_pp_compilation_v
        );
    }
    for note in &cf.notes {
        let _ = writeln!(out, "  - {note}");
    }
    for c in &l.conventions {
        let _ = writeln!(out, "convention: {c}");
    }
    out
}
