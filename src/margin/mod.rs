//! Breakdown margins: one row per check, ranked worst first, and the hold-off voltage.
//!
//! Input: the model, the fine field analysis and (optionally) the grid study. Output:
//! [`Margins`] — rows with item, medium, criterion, source, peak, limit, margin, status,
//! location, numerical error, user-set flag and validity note; the hold-off voltage with the
//! limits as used and with every limit ideal, each with its limiting row.
//!
//! Checks made:
//!
//! - every conductor surface in gas, at its hotspot (highest surface field): the peak surface
//!   field against the limiting field of the gas (SF6 and mixtures: the critical field; air, N2,
//!   CO2: the uniform-field breakdown field of a gap the length of the hotspot's field line);
//!   the streamer (ionisation) integral along that field line; the voltage across the gap
//!   against its uniform-field breakdown by the criterion valid at that pd (Paschen, Schumann or
//!   the SF6 fit); and in air, Peek's corona onset at the local radius of curvature;
//! - every conductor surface in vacuum, at its cathodic hotspot: the cathode surface field; the
//!   gap voltage against the total-voltage fit; Cranberg's product of voltage and field;
//! - every insulator surface, gas side and vacuum side: the peak tangential field against the
//!   surface-flashover gradient; and every triple junction (conductor, insulator, gas or vacuum)
//!   flagged with its field.
//!
//! **Margin** is always the factor by which the terminal voltage may be raised before the
//! criterion is reached: limit ÷ peak for fields and for gap voltages (criteria linear in the
//! field); the voltage form √(C/(V·E)) for Cranberg's V·E criterion (quadratic in the field, so
//! its limit is given as the gap voltage at which V·E = C); and the inception factor found by
//! bisection for the streamer integral (not linear in the field). Every margin therefore halves
//! when the terminal voltage doubles, and the **hold-off voltage** is the terminal voltage times
//! the smallest margin of the rows that enter it. Gas rows of every gas are derated alike for
//! stressed area and roughness ([`Derating::large_area`], 0.6, common practice; or
//! `[checks] area_derating`); the ideal hold-off uses every limit without derating.
//!
//! **Status** against `[checks] design_factor` f: fail below f, review from f to 1.1·f
//! ([`REVIEW_BAND`]), pass above; a row whose criterion is outside its range of validity has no
//! number and the status "outside validity".
//!
//! Files: `row` (row record, status, ranking, hold-off, sharp corners), `in_gas`, `in_vacuum`
//! and `on_insulator` (the row builders of each medium); this file holds the shared context and
//! [`evaluate`], which runs them.

mod in_gas;
mod in_vacuum;
mod on_insulator;
mod row;

use in_gas::*;
use in_vacuum::*;
use on_insulator::*;
use row::*;
pub use row::{
    Holdoff, LineSummary, MarginRow, Margins, RowMedium, Scaling, Status, holdoff, rank,
    sharp_corners,
};

use serde::Serialize;
use std::fmt::Write;
use thiserror::Error;

use crate::analysis::Analysis;
use crate::breakdown::convert::BAR_CM_PA_M;
use crate::breakdown::corona::{self, PeekGeometry};
use crate::breakdown::gas::GasKind;
use crate::breakdown::insulator::{self, JunctionClass, VacuumSurface};
use crate::breakdown::ionisation::EffectiveIonisation;
use crate::breakdown::vacuum::{self, CathodeClass, TotalVoltageFit};
use crate::breakdown::{
    BreakdownError, Criterion, Derating, GasOptions, GasState, Limit, LimitKind, Mark, Validity,
    paschen, streamer, uniform,
};
use crate::field::{FieldMap, InsulatorSample, Medium, SurfaceSample};
use crate::fieldline::{self, FieldLine, LineEnd, TraceParams};
use crate::geometry::{Point, Shape};
use crate::mesh::{FixedId, Holder};
use crate::model::{Gas, Model, PotentialSpec};
use crate::study::GridStudy;

/// A row within this factor above the design factor is "review" (10 %).
pub const REVIEW_BAND: f64 = 1.1;

/// Peek's surface factor used when `[checks] corona_surface_factor` is not set: 1, polished
/// electrodes (Peek 1929 via docs/references.md §5 \[C\]); accelerator electrodes are polished.
pub const DEFAULT_CORONA_SURFACE_FACTOR: f64 = corona::SURFACE_POLISHED;

/// A conductor surface whose field line reaches an opposite electrode within this many local
/// radii of curvature faces a **gap**: the streamer (ionisation-integral) criterion along the
/// field line governs, and Peek's onset, a formula for an isolated conductor far from others
/// (docs/references.md §5), is shown as a cross-check. Farther (or with no opposite electrode) the
/// conductor is **isolated** and Peek's onset enters beside the streamer integral. 2 radii, i.e.
/// a gap up to the diameter: holdoff's choice, common practice, no source (docs/references.md §16;
/// sphere gaps with d/D ≤ 0.5 agree with the calibration tables by the streamer criterion).
pub const GAP_TO_RADIUS: f64 = 2.0;

/// Density-reduced pressure from which N2 streamer integrals use the scaled-air model
/// ([`EffectiveIonisation::n2_scaled_air`]) instead of the Townsend α fit, whose window
/// (E/p ≥ 100 V/(cm·Torr)) is not reached at tank pressures: 0.1 bar (holdoff's choice).
pub const N2_SCALED_AIR_FROM_PA: f64 = 1.0e4;

#[derive(Debug, Error)]
pub enum MarginError {
    #[error("breakdown criteria: {0}")]
    Breakdown(#[from] BreakdownError),
    /// A `[checks]` override the criterion refuses, with the criterion's own error (shown in
    /// the message, so not also given as the source: the CLI prints the chain).
    #[error("[checks] {key} = {value}: {reason}")]
    Override {
        key: &'static str,
        value: f64,
        reason: BreakdownError,
    },
}

fn override_of(model: &Model, key: &str) -> Option<f64> {
    model
        .checks
        .overrides
        .iter()
        .find(|(k, _)| k == key)
        .map(|(_, v)| *v)
}

/// Names a fixed surface.
fn name_of(model: &Model, id: FixedId) -> String {
    match id.holder() {
        Holder::Tank => "tank".to_string(),
        Holder::Conductor(c) => model
            .conductors
            .get(c)
            .map_or_else(|| format!("conductor {c}"), |c| c.name.clone()),
        Holder::Free => "no conductor".to_string(),
    }
}

fn end_name(model: &Model, end: LineEnd) -> String {
    match end {
        LineEnd::Conductor { index } => name_of(model, FixedId::conductor(index)),
        LineEnd::Tank => "tank".to_string(),
        LineEnd::Dielectric { index } => format!(
            "insulator '{}'",
            model
                .dielectrics
                .get(index)
                .map_or("?", |d| d.name.as_str())
        ),
        LineEnd::MediumBoundary => "the edge of the vacuum region".to_string(),
        LineEnd::Stalled => "no opposite surface".to_string(),
    }
}

/// What every row builder needs.
struct Ctx<'a> {
    model: &'a Model,
    design_factor: f64,
    gas: Option<(Gas, GasState)>,
    options: GasOptions,
    study: Option<&'a GridStudy>,
}

impl Ctx<'_> {
    fn relative_error(&self, conductor: FixedId) -> Option<f64> {
        self.study?
            .peaks
            .iter()
            .find(|p| Some(p.conductor) == conductor.conductor_index())
            .map(|p| p.relative_error)
    }
}

/// Options of a row being built.
struct RowSpec {
    item: String,
    medium: RowMedium,
    peak: f64,
    at: Point,
    numerical_error: Option<f64>,
    user_set: bool,
    scaling: Scaling,
    in_holdoff: bool,
    note: Option<String>,
}

fn row(ctx: &Ctx, spec: RowSpec, limit: &Limit) -> MarginRow {
    let valid = limit.validity.is_valid() && spec.peak.is_finite() && spec.peak > 0.0;
    let user_set =
        spec.user_set || limit.mark == Mark::UserSet || limit.derating.mark == Some(Mark::UserSet);
    let (lim, lim_ideal, margin, margin_ideal, status) = if valid {
        let m = limit.value / spec.peak;
        (
            Some(limit.value),
            Some(limit.ideal),
            Some(m),
            Some(limit.ideal / spec.peak),
            Status::of(m, ctx.design_factor),
        )
    } else {
        (None, None, None, None, Status::OutsideValidity)
    };
    MarginRow {
        rank: 0,
        item: spec.item,
        medium: spec.medium,
        criterion: limit.criterion,
        criterion_name: limit.name.clone(),
        source: limit.source.clone(),
        mark: limit.mark,
        kind: limit.kind,
        peak: spec.peak,
        limit: lim,
        limit_ideal: lim_ideal,
        margin,
        margin_ideal,
        derating: limit.derating.clone(),
        status,
        at_m: [spec.at.r, spec.at.z],
        numerical_error: spec.numerical_error,
        user_set,
        validity: limit.validity.clone(),
        scaling: spec.scaling,
        in_holdoff: spec.in_holdoff,
        cross_check: false,
        note: spec.note,
    }
}

/// A row for a criterion that could not be evaluated: outside validity with the reason.
fn unavailable(
    criterion: Criterion,
    name: &str,
    kind: LimitKind,
    reason: String,
    source: &str,
) -> Limit {
    Limit::new(
        criterion,
        name,
        source,
        Mark::Derived,
        kind,
        f64::NAN,
        Validity::OutsideValidity { reason },
    )
}

/// Notes on the gas state the criteria use: the mixing rule of a mixture without its own, and
/// the real-gas compressibility when it is applied.
fn gas_state_notes(ctx: &Ctx) -> Vec<String> {
    let Some((gas, state)) = &ctx.gas else {
        return Vec::new();
    };
    let mut notes = Vec::new();
    if let Some(rule) = crate::breakdown::gas::mixture_rule(gas) {
        notes.push(format!(
            "gas {}: {rule}; the rows name {}",
            gas.species,
            state.kind.label()
        ));
    }
    if state.compressibility != 1.0 {
        notes.push(format!(
            "gas {}: real gas, compressibility Z = {:.3} at {:.3} bar (ideal gas off by more \
             than 1 %); the criteria use the density-reduced pressure {:.3} bar at 20 degC",
            gas.species,
            state.compressibility,
            state.pressure_pa / 1e5,
            state.reduced_pressure_pa / 1e5
        ));
    }
    notes
}

/// Evaluates every check of the model on its fine analysis.
pub fn evaluate(
    model: &Model,
    fine: &Analysis,
    study: Option<&GridStudy>,
) -> Result<Margins, MarginError> {
    evaluate_selected(model, fine, study, &|_| true, true)
}

/// As [`evaluate`], with the rows of a conductor surface only for the conductors (by index)
/// that `conductor` keeps, and the insulator rows only when `insulators` is set. A row depends
/// only on the field and on the surface samples of its own conductor (or insulator), so every
/// row made is the one [`evaluate`] makes.
pub fn evaluate_selected(
    model: &Model,
    fine: &Analysis,
    study: Option<&GridStudy>,
    conductor: &dyn Fn(usize) -> bool,
    insulators: bool,
) -> Result<Margins, MarginError> {
    let fm = fine.field_map(model);
    let gas = match &model.gas {
        Some(g) => Some((g.clone(), GasState::resolve(g)?)),
        None => None,
    };
    let ctx = Ctx {
        model,
        design_factor: model.checks.design_factor,
        gas,
        options: GasOptions::default(),
        study,
    };
    let mut rows = Vec::new();
    let mut lines = Vec::new();
    let mut notes = Vec::new();
    let gas_hot = hotspots(&fm, &fine.samples, true, conductor);
    if ctx.gas.is_none() && !gas_hot.is_empty() {
        notes.push(
            "the design has no [gas] table: conductor surfaces outside vacuum regions and \
             dielectrics were not checked against gas criteria"
                .to_string(),
        );
    } else {
        notes.extend(gas_state_notes(&ctx));
        for hot in &gas_hot {
            gas_rows(&ctx, &fm, &fine.samples, hot, &mut lines, &mut rows)?;
        }
    }
    for hot in &hotspots(&fm, &fine.samples, false, conductor) {
        vacuum_rows(&ctx, &fm, hot, &fine.samples, &mut lines, &mut rows)?;
    }
    for index in (0..model.dielectrics.len()).filter(|_| insulators) {
        insulator_rows(&ctx, &fm, index, &fine.samples, &mut rows)?;
    }
    let singular = sharp_corners(model);
    for corner in &singular {
        notes.push(corner.describe());
        // No finite margin stands for a conductor whose surface field is unbounded.
        for r in rows.iter_mut().filter(|r| r.item == corner.conductor) {
            r.margin = None;
            r.margin_ideal = None;
            r.status = Status::Fail;
            r.in_holdoff = false;
            r.note = Some(format!(
                "field singularity at the sharp corner at {}: no finite peak; give the corner a \
                 radius",
                corner.location()
            ));
        }
    }
    rank(&mut rows);

    let v = model.terminal_voltage;
    let mut holdoff_notes = vec![
        "the field scales with the terminal voltage, so each row's margin is the factor to its \
         criterion (limit/peak; sqrt(C/(V E)) for Cranberg; the inception factor by bisection \
         for the streamer integral); the hold-off voltage is the terminal voltage times the \
         smallest margin of the rows that enter it"
            .to_string(),
        "rows outside validity and triple-junction flags do not enter the hold-off voltage"
            .to_string(),
    ];
    let fixed: Vec<&str> = model
        .conductors
        .iter()
        .filter(|c| match c.potential {
            PotentialSpec::Absolute { volts } => volts != 0.0,
            PotentialSpec::Stage { .. } => true,
            _ => false,
        })
        .map(|c| c.name.as_str())
        .collect();
    if !fixed.is_empty() {
        holdoff_notes.push(format!(
            "assumption: {} conductor(s) at fixed potentials (absolute volts or multiplier \
             stages: {}) are scaled with the terminal voltage as well",
            fixed.len(),
            fixed.join(", ")
        ));
    }
    // The field scales with the terminal voltage whatever its sign: the hold-off voltage is a
    // magnitude, at the design's polarity (a negative terminal holds off −|V|).
    let (h, hi) = if !singular.is_empty() {
        holdoff_notes.push(format!(
            "no hold-off voltage: {} sharp conductor corner(s) make the peak field unbounded \
             (a field singularity), so no terminal voltage is known to be safe",
            singular.len()
        ));
        (None, None)
    } else if v != 0.0 && v.is_finite() {
        if v < 0.0 {
            holdoff_notes.push(
                "negative terminal: the hold-off voltage is the magnitude at this polarity; \
                 cathodic surfaces are those where the field points into the metal, and the \
                 vacuum cathode-field and Cranberg rows are taken there; the gas criteria used \
                 (Paschen, critical reduced field, streamer integral, Peek's onset) carry no \
                 polarity term as published, so the gas rows are the same at either polarity"
                    .to_string(),
            );
        }
        (
            holdoff(&rows, v.abs(), false),
            holdoff(&rows, v.abs(), true),
        )
    } else {
        holdoff_notes.push(format!(
            "no hold-off voltage: the terminal voltage is {v} V; the scaling needs a non-zero \
             terminal voltage"
        ));
        (None, None)
    };
    if let Some(h) = &h {
        holdoff_notes.push(scaling_note(&rows, h.voltage_v, v.abs()));
    }
    if h.is_none() && v != 0.0 && singular.is_empty() {
        holdoff_notes.push("no row with a number enters the hold-off voltage".to_string());
    }
    Ok(Margins {
        design_factor: model.checks.design_factor,
        terminal_voltage_v: v,
        rows,
        holdoff: h,
        holdoff_ideal: hi,
        holdoff_notes,
        field_lines: lines,
        notes,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn status_bands() {
        assert_eq!(Status::of(1.49, 1.5), Status::Fail);
        assert_eq!(Status::of(1.5, 1.5), Status::Review);
        assert_eq!(Status::of(1.64, 1.5), Status::Review);
        assert_eq!(Status::of(1.66, 1.5), Status::Pass);
    }

    fn sample(margin: Option<f64>, in_holdoff: bool) -> MarginRow {
        MarginRow {
            rank: 0,
            item: format!("{margin:?}"),
            medium: RowMedium::Gas,
            criterion: Criterion::CriticalField,
            criterion_name: String::new(),
            source: String::new(),
            mark: Mark::Derived,
            kind: LimitKind::Field,
            peak: 1.0,
            limit: margin,
            limit_ideal: margin.map(|m| 2.0 * m),
            margin,
            margin_ideal: margin.map(|m| 2.0 * m),
            derating: Derating::none(),
            status: margin.map_or(Status::OutsideValidity, |m| Status::of(m, 1.5)),
            at_m: [0.0, 0.0],
            numerical_error: None,
            user_set: false,
            validity: Validity::Valid,
            scaling: Scaling::Linear,
            in_holdoff,
            cross_check: false,
            note: None,
        }
    }

    #[test]
    fn ranking_puts_rows_without_a_number_last() {
        let mut rows = vec![
            sample(None, true),
            sample(Some(3.0), true),
            sample(Some(0.5), false),
            sample(Some(2.0), true),
        ];
        rank(&mut rows);
        let ms: Vec<Option<f64>> = rows.iter().map(|r| r.margin).collect();
        assert_eq!(ms, vec![Some(0.5), Some(2.0), Some(3.0), None]);
        assert_eq!(rows[3].rank, 4);
        // The flag row (0.5) does not enter the hold-off; the ideal one uses the ideal margins.
        let h = holdoff(&rows, 100.0, false).unwrap();
        assert_eq!(h.voltage_v, 200.0);
        assert_eq!(h.rank, 2);
        assert_eq!(holdoff(&rows, 100.0, true).unwrap().voltage_v, 400.0);
    }
}
