//! The results model and its renderers.
//!
//! Input: a model, the fine `Analysis`, the grid study and the design text. Output: one
//! `Report` value (serde `Serialize`, stable keys with SI units in their names), rendered as a
//! terminal table (`table`) or JSON (`json`). Rendering never computes physics.

pub mod cautions;
pub mod faults;
pub mod fieldmap;
pub mod finite;
pub mod grading;
pub mod html;
pub mod ladder;
pub mod markdown;
pub mod plot;
pub mod svg;
pub mod table;

use crate::analysis::Analysis;
use crate::margin::{Holdoff, LineSummary, MarginRow, Margins, Status};
use crate::model::Model;
use crate::study::GridStudy;
use cautions::{Caution, CautionInputs};
use serde::Serialize;
use sha2::{Digest, Sha256};

/// Tool name and version.
#[derive(Debug, Clone, Serialize)]
pub struct ToolInfo {
    pub name: &'static str,
    pub version: &'static str,
}

/// What was analysed.
#[derive(Debug, Clone, Serialize)]
pub struct DesignInfo {
    pub title: String,
    pub file: String,
    pub sha256: String,
    pub terminal_voltage_v: f64,
}

impl DesignInfo {
    /// The design section of every command's JSON: title, file, SHA-256 of the text, terminal
    /// voltage.
    pub fn of(model: &Model, file: &str, text: &str) -> DesignInfo {
        DesignInfo {
            title: model.title.clone(),
            file: file.to_string(),
            sha256: sha256_hex(text),
            terminal_voltage_v: model.terminal_voltage,
        }
    }
}

/// The grid.
#[derive(Debug, Clone, Serialize)]
pub struct MeshInfo {
    pub nr: usize,
    pub nz: usize,
    pub nodes: usize,
    pub unknowns: usize,
    pub cell_m: f64,
    pub min_spacing_m: f64,
    pub max_spacing_m: f64,
    pub surface_samples: usize,
}

/// Solver figures (the JSON section `solver`).
#[derive(Debug, Clone, Serialize)]
pub struct SolverSeconds {
    pub assembly_s: f64,
    pub multigrid_setup_s: f64,
    pub solve_s: f64,
}

#[derive(Debug, Clone, Serialize)]
pub struct SolverInfo {
    pub method: crate::solve::SolveMethod,
    pub scheme: crate::solve::operator::Scheme,
    pub unknowns: usize,
    pub multigrid_levels: usize,
    pub iterations: usize,
    pub relative_residual: f64,
    pub tolerance: f64,
    pub time: SolverSeconds,
    pub memory_bytes: usize,
}

/// One conductor's peak (the JSON section `conductors`).
#[derive(Debug, Clone, Serialize)]
pub struct ConductorRow {
    pub name: String,
    pub potential_v: f64,
    pub peak_surface_field_v_per_m: f64,
    pub at_m: [f64; 2],
    pub medium: crate::field::Medium,
    /// Estimated numerical error of the peak from the grid study, V/m.
    pub numerical_error_v_per_m: Option<f64>,
    pub extrapolated_peak_v_per_m: Option<f64>,
}

/// One probe (the JSON section `probes`).
#[derive(Debug, Clone, Serialize)]
pub struct ProbeRow {
    pub name: String,
    pub at_m: [f64; 2],
    pub potential_v: f64,
    pub field_v_per_m: [f64; 2],
    pub field_magnitude_v_per_m: f64,
}

/// Everything a check run reports.
#[derive(Debug, Clone, Serialize)]
pub struct Report {
    pub tool: ToolInfo,
    pub design: DesignInfo,
    pub mesh: MeshInfo,
    pub solver: SolverInfo,
    pub conductors: Vec<ConductorRow>,
    pub probes: Vec<ProbeRow>,
    pub grid_study: Option<GridStudy>,
    /// Electrostatic energy of the solved field, ½∫εE²dV, J.
    pub field_energy_j: f64,
    /// The multiplier stack, when the design has one (the JSON section `ladder`).
    pub ladder: Option<ladder::LadderSection>,
    /// The terminal voltage against the multiplier's output, when a stack is modelled.
    pub terminal_reconciliation: Option<crate::stack::TerminalReconciliation>,
    /// Ranked margin rows, worst first (the JSON section `margins`); empty until margins are
    /// added.
    #[serde(serialize_with = "margin_rows")]
    pub margins: Vec<MarginRow>,
    /// Hold-off voltage with the limits as used (gas rows derated where they are), V.
    pub holdoff_voltage_v: Option<f64>,
    /// The row that sets `holdoff_voltage_v`.
    pub holdoff_limiting: Option<Holdoff>,
    /// Hold-off voltage with every limit ideal (no derating), V.
    pub holdoff_voltage_ideal_v: Option<f64>,
    /// The row that sets `holdoff_voltage_ideal_v`.
    pub holdoff_ideal_limiting: Option<Holdoff>,
    /// How the hold-off voltage was found, and its assumptions.
    pub holdoff_notes: Vec<String>,
    /// The design factor the statuses are judged against.
    pub design_factor: f64,
    /// Worst status of the margin rows: "pass", "review" or "fail".
    pub worst_status: Status,
    /// The field lines traced from the hotspots.
    pub field_lines: Vec<LineSummary>,
    /// The nominal DC state of each grading column (values, currents, ratings, protective
    /// gaps, leakage).
    pub grading: Vec<crate::grading::summary::ColumnSummary>,
    /// Checks that could not be made, and why.
    pub margin_notes: Vec<String>,
    pub cautions: Vec<Caution>,
}

/// A margin row as written to the JSON: the row's own keys, its criterion label, and peak and
/// limits with the unit of the row in their keys (`peak_v_per_m` for a field, `peak_v` for a
/// voltage).
#[derive(Serialize)]
struct RowJson<'a> {
    #[serde(flatten)]
    row: &'a MarginRow,
    criterion_label: String,
    #[serde(flatten)]
    values: RowValues<'a>,
}

struct RowValues<'a>(&'a MarginRow);

impl Serialize for RowValues<'_> {
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        use serde::ser::SerializeMap;
        let r = self.0;
        let [peak, limit, ideal] = match r.kind {
            crate::breakdown::LimitKind::Field => {
                ["peak_v_per_m", "limit_v_per_m", "limit_ideal_v_per_m"]
            }
            crate::breakdown::LimitKind::Voltage => ["peak_v", "limit_v", "limit_ideal_v"],
        };
        let mut m = s.serialize_map(Some(3))?;
        m.serialize_entry(peak, &r.peak)?;
        m.serialize_entry(limit, &r.limit)?;
        m.serialize_entry(ideal, &r.limit_ideal)?;
        m.end()
    }
}

fn margin_rows<S: serde::Serializer>(rows: &[MarginRow], s: S) -> Result<S::Ok, S::Error> {
    s.collect_seq(rows.iter().map(|row| RowJson {
        row,
        criterion_label: row.criterion_label_qualified(),
        values: RowValues(row),
    }))
}

pub use crate::units::kv_three_significant;

/// What follows a hold-off voltage: nothing for a positive terminal; for a negative one, that
/// the hold-off is a magnitude (the terminal would reach minus that).
pub fn holdoff_polarity(terminal_v: f64) -> &'static str {
    if terminal_v < 0.0 {
        "; a magnitude, the terminal is negative"
    } else {
        ""
    }
}

/// SHA-256 of the design text, hex.
pub fn sha256_hex(text: &str) -> String {
    let digest = Sha256::digest(text.as_bytes());
    digest.iter().map(|b| format!("{b:02x}")).collect()
}

impl Report {
    pub fn new(
        model: &Model,
        file: &str,
        text: &str,
        fine: &Analysis,
        study: Option<GridStudy>,
    ) -> Report {
        let info = &fine.solution.info;
        let (min_r, max_r) = fine.mesh.r.spacing_range();
        let (min_z, max_z) = fine.mesh.z.spacing_range();
        let conductors = fine
            .peaks
            .iter()
            .map(|p| {
                let st = study
                    .as_ref()
                    .and_then(|s| s.peaks.iter().find(|q| q.conductor == p.index));
                ConductorRow {
                    name: p.name.clone(),
                    potential_v: p.potential_v,
                    peak_surface_field_v_per_m: p.peak_surface_field_v_per_m,
                    at_m: [p.at.r, p.at.z],
                    medium: p.medium,
                    numerical_error_v_per_m: st.map(|s| s.error_v_per_m),
                    extrapolated_peak_v_per_m: st.map(|s| s.extrapolated_v_per_m),
                }
            })
            .collect();
        let probes = fine
            .probes
            .iter()
            .map(|p| ProbeRow {
                name: p.name.clone(),
                at_m: [p.field.at.r, p.field.at.z],
                potential_v: p.field.potential_v,
                field_v_per_m: p.field.field,
                field_magnitude_v_per_m: p.field.field[0].hypot(p.field.field[1]),
            })
            .collect();
        let mut cautions = cautions::cautions(&CautionInputs::for_model(
            model,
            model.terminal_voltage,
            Some(crate::stack::stored_energy(model, fine.energy_j)),
        ));
        if let Some(a) = study.as_ref().and_then(|s| s.accuracy.as_ref())
            && !a.reached
        {
            cautions.push(Caution {
                topic: "numerical accuracy",
                text: a.describe(),
            });
        }
        Report {
            tool: ToolInfo {
                name: "holdoff",
                version: env!("CARGO_PKG_VERSION"),
            },
            design: DesignInfo::of(model, file, text),
            mesh: MeshInfo {
                nr: fine.mesh.nr(),
                nz: fine.mesh.nz(),
                nodes: fine.mesh.nodes(),
                unknowns: info.unknowns,
                cell_m: fine.mesh.cell,
                min_spacing_m: min_r.min(min_z),
                max_spacing_m: max_r.max(max_z),
                surface_samples: fine.samples.len(),
            },
            solver: SolverInfo {
                method: info.method,
                scheme: info.scheme,
                unknowns: info.unknowns,
                multigrid_levels: info.multigrid_levels,
                iterations: info.iterations,
                relative_residual: info.relative_residual,
                tolerance: info.tolerance,
                time: SolverSeconds {
                    assembly_s: info.seconds_assembly,
                    multigrid_setup_s: info.seconds_multigrid_setup,
                    solve_s: info.seconds_solve,
                },
                memory_bytes: info.memory_bytes,
            },
            conductors,
            probes,
            grid_study: study,
            field_energy_j: fine.energy_j,
            ladder: None,
            terminal_reconciliation: None,
            margins: Vec::new(),
            holdoff_voltage_v: None,
            holdoff_limiting: None,
            holdoff_voltage_ideal_v: None,
            holdoff_ideal_limiting: None,
            holdoff_notes: Vec::new(),
            design_factor: model.checks.design_factor,
            worst_status: Status::Pass,
            field_lines: Vec::new(),
            grading: Vec::new(),
            margin_notes: Vec::new(),
            cautions,
        }
    }

    /// Adds the multiplier stack: its section, and the reconciliation of the terminal voltage
    /// with its output (a caution when they differ beyond the tolerance). The stored-energy
    /// caution already counts the stack at no load ([`crate::stack::stored_energy`]).
    pub fn with_ladder(mut self, stack: Option<&crate::stack::StackAnalysis>) -> Report {
        if let Some(st) = stack {
            let r = crate::stack::reconcile(self.design.terminal_voltage_v, st);
            if !r.within_tolerance {
                self.cautions.insert(
                    1,
                    cautions::Caution {
                        topic: "terminal voltage",
                        text: r.text.clone(),
                    },
                );
            }
            self.terminal_reconciliation = Some(r);
            self.ladder = Some(ladder::LadderSection::new(st));
        }
        self
    }

    /// The same report with the nominal state of the grading columns.
    pub fn with_grading(mut self, g: Vec<crate::grading::summary::ColumnSummary>) -> Report {
        self.grading = g;
        self
    }

    /// The same report with the margins of the run.
    pub fn with_margins(mut self, m: Margins) -> Report {
        self.worst_status = m.worst_status();
        self.design_factor = m.design_factor;
        self.holdoff_voltage_v = m.holdoff.as_ref().map(|h| h.voltage_v);
        self.holdoff_voltage_ideal_v = m.holdoff_ideal.as_ref().map(|h| h.voltage_v);
        self.holdoff_limiting = m.holdoff;
        self.holdoff_ideal_limiting = m.holdoff_ideal;
        self.holdoff_notes = m.holdoff_notes;
        self.margins = m.rows;
        self.field_lines = m.field_lines;
        self.margin_notes = m.notes;
        self
    }

    /// The criterion label of the row that sets a hold-off voltage (docs/glossary.md), with
    /// its derating unless `ideal`; the long name when the row is not among the margins.
    pub fn holdoff_label(&self, h: &Holdoff, ideal: bool) -> String {
        let row = self.margins.iter().find(|r| r.rank == h.rank);
        match row {
            Some(r) if ideal => r.criterion_label(),
            Some(r) => r.criterion_label_qualified(),
            None => h.criterion_name.clone(),
        }
    }

    /// The report as pretty JSON; a value serde cannot write is an error, never a stand-in
    /// document.
    pub fn to_json(&self) -> Result<String, serde_json::Error> {
        serde_json::to_string_pretty(self)
    }
}

/// Checks before any work that [`write_atomic`] will be able to write `path`: the path is not
/// a directory and a file can be created (and is removed again) in its directory. The file at
/// `path` itself is neither created nor changed.
pub fn check_writable(path: &std::path::Path) -> std::io::Result<()> {
    if path.is_dir() {
        return Err(std::io::Error::new(
            std::io::ErrorKind::IsADirectory,
            "is a directory",
        ));
    }
    let tmp = temporary_beside(path);
    std::fs::File::create(&tmp)?;
    std::fs::remove_file(&tmp)
}

/// The temporary file beside `path` that [`write_atomic`] writes first.
fn temporary_beside(path: &std::path::Path) -> std::path::PathBuf {
    let dir = path
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or_else(|| std::path::Path::new("."));
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "output".into());
    dir.join(format!(".{name}.{}.tmp", std::process::id()))
}

/// Writes `bytes` to `path` through a temporary file beside it, renamed into place when
/// complete, so that a failed run never leaves a partial file or truncates an existing one.
pub fn write_atomic(path: &std::path::Path, bytes: &[u8]) -> std::io::Result<()> {
    use std::io::Write;
    let tmp = temporary_beside(path);
    let result = (|| {
        let mut f = std::fs::File::create(&tmp)?;
        f.write_all(bytes)?;
        f.sync_all()?;
        std::fs::rename(&tmp, path)
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result
}

#[cfg(test)]
mod tests {
    use super::kv_three_significant;

    #[test]
    fn hold_off_voltages_print_to_three_significant_figures() {
        assert_eq!(kv_three_significant(1673.88e3), "1670 kV");
        assert_eq!(kv_three_significant(851.2e3), "851 kV");
        assert_eq!(kv_three_significant(95.34e3), "95.3 kV");
        assert_eq!(kv_three_significant(4.2e6), "4200 kV");
        assert_eq!(kv_three_significant(-433.4e3), "-433 kV");
        // Read back, the printed value is within half a unit of the third figure (< 0.5 %).
        for v in [1.234e3, 12.34e3, 987.6e3, 1673.88e3, 2.4913e6] {
            let text = kv_three_significant(v);
            let back: f64 = text.trim_end_matches(" kV").parse().unwrap();
            assert!(((back * 1e3 - v) / v).abs() < 0.005, "{v} -> {text}");
        }
    }
}
