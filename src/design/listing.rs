//! The expansion listing: every primitive of a validated model, as `holdoff check --expand`
//! shows it, so the user sees exactly what was modelled.
//!
//! Input: a `model::Model`. Output: one [`ListingRow`] per conductor, dielectric and vacuum
//! region, with its shape in millimetres, its potential, where it came from, and notes (a
//! conductor that cuts through a dielectric, which is allowed: the conductor takes precedence).

use super::checks;
use super::samples::boundary_samples;
use super::shapes::describe;
use crate::model::{Model, Origin, PotentialSpec};
use crate::units::{Dimension, format_si};
use serde::Serialize;

/// What a row is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum ListingKind {
    Conductor,
    Dielectric,
    Vacuum,
}

impl std::fmt::Display for ListingKind {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(match self {
            ListingKind::Conductor => "conductor",
            ListingKind::Dielectric => "dielectric",
            ListingKind::Vacuum => "vacuum",
        })
    }
}

/// One primitive of the expanded model.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ListingRow {
    pub name: String,
    pub kind: ListingKind,
    /// The shape in millimetres.
    pub shape: String,
    /// The potential as specified (conductors only).
    pub potential: Option<String>,
    /// Where it came from: a line of the file, or a generator.
    pub origin: String,
    pub notes: Vec<String>,
}

fn origin_text(model: &Model, origin: &Origin) -> String {
    match origin {
        Origin::Direct { line: Some(l) } => format!("line {l}"),
        Origin::Direct { line: None } => "design file".to_string(),
        Origin::Column {
            column,
            electrode,
            line,
        } => {
            let name = model
                .columns
                .get(*column)
                .map_or_else(|| format!("{}", column + 1), |c| c.name.clone());
            match line {
                Some(l) => format!("column `{name}` electrode {electrode} (line {l})"),
                None => format!("column `{name}` electrode {electrode}"),
            }
        }
        Origin::Program => "program".to_string(),
    }
}

/// The potential as specified, in words.
pub fn potential_words(model: &Model, spec: &PotentialSpec) -> String {
    match spec {
        PotentialSpec::Ground => "ground".to_string(),
        PotentialSpec::Terminal { fraction } if *fraction == 1.0 => format!(
            "terminal ({})",
            format_si(model.terminal_voltage, Dimension::Voltage)
        ),
        PotentialSpec::Terminal { fraction } => format!(
            "{fraction} x terminal ({})",
            format_si(fraction * model.terminal_voltage, Dimension::Voltage)
        ),
        PotentialSpec::Absolute { volts } => format_si(*volts, Dimension::Voltage),
        PotentialSpec::Grading { column, node } => {
            let name = model
                .columns
                .get(*column)
                .map_or_else(|| format!("{}", column + 1), |c| c.name.clone());
            format!("grading node {node} of column `{name}`")
        }
        PotentialSpec::Stage { stage } => format!("multiplier stage {stage}"),
    }
}

/// Lists every primitive of the model in order: conductors, dielectrics, vacuum regions.
pub fn expansion_listing(model: &Model) -> Vec<ListingRow> {
    const N: usize = 48;
    let diel_samples: Vec<_> = model
        .dielectrics
        .iter()
        .map(|d| boundary_samples(&d.shape, N))
        .collect();
    let diel: Vec<(&str, &crate::geometry::Shape, &[crate::geometry::Point])> = model
        .dielectrics
        .iter()
        .zip(&diel_samples)
        .map(|(d, s)| (d.name.as_str(), &d.shape, s.as_slice()))
        .collect();
    let mut rows = Vec::new();
    for c in &model.conductors {
        let pc = boundary_samples(&c.shape, N);
        let notes = checks::cut_dielectrics(&c.shape, &pc, &diel)
            .into_iter()
            .map(|d| format!("cuts through dielectric `{d}`; the conductor takes precedence there"))
            .collect();
        rows.push(ListingRow {
            name: c.name.clone(),
            kind: ListingKind::Conductor,
            shape: describe(&c.shape),
            potential: Some(potential_words(model, &c.potential)),
            origin: origin_text(model, &c.origin),
            notes,
        });
    }
    for (k, d) in model.dielectrics.iter().enumerate() {
        let what = match &d.material {
            Some(m) => format!("eps_r {} ({m}); source: {}", d.eps_r, d.source),
            None => format!("eps_r {}; source: {}", d.eps_r, d.source),
        };
        rows.push(ListingRow {
            name: d.name.clone(),
            kind: ListingKind::Dielectric,
            shape: describe(&d.shape),
            potential: None,
            origin: origin_text(model, &d.origin),
            notes: {
                let mut notes = vec![what];
                // Where dielectrics overlap, the one listed later holds (`Model::eps_r_at`).
                for (j, other) in model.dielectrics.iter().enumerate().skip(k + 1) {
                    if checks::overlap(&d.shape, &diel_samples[k], &other.shape, &diel_samples[j])
                        .is_some()
                    {
                        notes.push(format!(
                            "overlaps dielectric `{}`, which is listed later and holds there",
                            other.name
                        ));
                    }
                }
                notes
            },
        });
    }
    for v in &model.vacuum {
        rows.push(ListingRow {
            name: v.name.clone(),
            kind: ListingKind::Vacuum,
            shape: describe(&v.shape),
            potential: None,
            origin: origin_text(model, &v.origin),
            notes: Vec::new(),
        });
    }
    rows
}
