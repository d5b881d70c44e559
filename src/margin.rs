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

/// Pass, review or fail against the design factor, or no number.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Status {
    Fail,
    Review,
    Pass,
    /// The criterion is outside its range of validity: the row gives the reason, not a number.
    OutsideValidity,
}

impl Status {
    pub fn label(self) -> &'static str {
        match self {
            Status::Pass => "pass",
            Status::Review => "review",
            Status::Fail => "FAIL",
            Status::OutsideValidity => "outside validity",
        }
    }

    /// The status of `margin` against `design_factor`.
    pub fn of(margin: f64, design_factor: f64) -> Status {
        if margin < design_factor {
            Status::Fail
        } else if margin < REVIEW_BAND * design_factor {
            Status::Review
        } else {
            Status::Pass
        }
    }
}

/// The medium (or surface type) a row checks.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum RowMedium {
    Gas,
    Vacuum,
    InsulatorGasSide,
    InsulatorVacuumSide,
    TripleJunctionGas,
    TripleJunctionVacuum,
}

impl RowMedium {
    pub fn label(self) -> &'static str {
        match self {
            RowMedium::Gas => "gas",
            RowMedium::Vacuum => "vacuum",
            RowMedium::InsulatorGasSide => "insulator, gas side",
            RowMedium::InsulatorVacuumSide => "insulator, vacuum side",
            RowMedium::TripleJunctionGas => "triple junction, gas",
            RowMedium::TripleJunctionVacuum => "triple junction, vacuum",
        }
    }
}

/// How the margin of a row follows the terminal voltage (all three are exact: margin ∝ 1/V).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Scaling {
    /// Criterion linear in the field: margin = limit ÷ peak.
    Linear,
    /// Cranberg's V·E, quadratic in the field: margin = √(C/(V·E)), closed form.
    SquareRoot,
    /// Streamer integral: the inception factor, found by bisection.
    Bisection,
}

/// One check.
#[derive(Debug, Clone, Serialize)]
pub struct MarginRow {
    /// 1 = worst.
    pub rank: usize,
    pub item: String,
    pub medium: RowMedium,
    pub criterion: Criterion,
    /// The criterion as named in the output, with its constants.
    pub criterion_name: String,
    pub source: String,
    pub mark: Mark,
    /// The unit of `peak` and `limit`: `field_v_per_m` or `voltage_v`.
    pub kind: LimitKind,
    /// The computed value at the design terminal voltage.
    pub peak: f64,
    /// The limit as used (derated where the row is derated); `None` outside validity.
    pub limit: Option<f64>,
    /// The ideal (undrated) limit; `None` outside validity.
    pub limit_ideal: Option<f64>,
    /// Factor to the criterion at the limit as used; `None` outside validity.
    pub margin: Option<f64>,
    pub margin_ideal: Option<f64>,
    /// The derating of the limit (factor 1 = ideal), with its basis.
    pub derating: Derating,
    pub status: Status,
    pub at_m: [f64; 2],
    /// Estimated relative numerical error of the peak (grid study), when known.
    pub numerical_error: Option<f64>,
    /// A `[checks]` override entered this row.
    pub user_set: bool,
    pub validity: Validity,
    pub scaling: Scaling,
    /// Whether the row enters the hold-off voltage.
    pub in_holdoff: bool,
    /// A cross-check shown beside the criterion that governs here (chosen by the geometry, see
    /// [`GAP_TO_RADIUS`]): neither in the hold-off voltage nor in the worst status.
    pub cross_check: bool,
    /// Further notes: field-line end, assumptions, junction advice.
    pub note: Option<String>,
}

/// The hold-off voltage and the row that sets it.
#[derive(Debug, Clone, Serialize)]
pub struct Holdoff {
    pub voltage_v: f64,
    pub item: String,
    pub criterion: Criterion,
    pub criterion_name: String,
    pub rank: usize,
}

/// A field line traced for the margins, summarised for the report.
#[derive(Debug, Clone, Serialize)]
pub struct LineSummary {
    pub from: String,
    pub to: String,
    pub medium: Medium,
    pub start_m: [f64; 2],
    pub end_m: [f64; 2],
    pub length_m: f64,
    pub voltage_v: f64,
    pub samples: usize,
}

/// All margins of a run.
#[derive(Debug, Clone, Serialize)]
pub struct Margins {
    pub design_factor: f64,
    pub terminal_voltage_v: f64,
    pub rows: Vec<MarginRow>,
    /// Hold-off voltage with the limits as used (derated where gas rows are derated).
    pub holdoff: Option<Holdoff>,
    /// Hold-off voltage with every limit ideal.
    pub holdoff_ideal: Option<Holdoff>,
    /// How the hold-off voltage was found, and its assumptions.
    pub holdoff_notes: Vec<String>,
    pub field_lines: Vec<LineSummary>,
    /// Checks that could not be made, and why.
    pub notes: Vec<String>,
}

impl Margins {
    /// The worst status of the rows with a number (`Pass` when there are none); cross-checks
    /// do not count.
    pub fn worst_status(&self) -> Status {
        self.rows
            .iter()
            .filter(|r| !r.cross_check)
            .map(|r| r.status)
            .filter(|s| *s != Status::OutsideValidity)
            .min()
            .unwrap_or(Status::Pass)
    }

    /// True when any row fails the design factor.
    pub fn any_fail(&self) -> bool {
        self.worst_status() == Status::Fail
    }
}

/// A sharp convex corner of a conductor exposed to the field: the field there is singular.
#[derive(Debug, Clone, Serialize)]
pub struct SharpCorner {
    pub conductor: String,
    pub at: Point,
}

impl SharpCorner {
    fn location(&self) -> String {
        format!("r, z = {:.1}, {:.1} mm", self.at.r * 1e3, self.at.z * 1e3)
    }

    fn describe(&self) -> String {
        format!(
            "FIELD SINGULARITY: conductor '{}' has a sharp corner at {}; the field at a sharp \
             edge grows without bound as the mesh is refined, so it has no finite peak, margin \
             or hold-off voltage: give the corner a radius (`corner_radius`, `fillet`)",
            self.conductor,
            self.location()
        )
    }
}

/// The sharp corners of every conductor that face the field: not buried in another conductor,
/// not on another conductor's surface and not on the tank wall (a corner against a wall or a
/// touching conductor is a junction, where the field goes to zero instead).
pub fn sharp_corners(model: &Model) -> Vec<SharpCorner> {
    let mut out = Vec::new();
    for (index, c) in model.conductors.iter().enumerate() {
        let tol = 1e-6 * (1.0 + c.shape.scale());
        for at in c.shape.sharp_corners() {
            let touches = model
                .conductors
                .iter()
                .enumerate()
                .any(|(other, o)| other != index && o.shape.sdf(at) <= tol);
            let on_wall = match model.tank {
                crate::model::Tank::Cylinder {
                    inner_radius,
                    length,
                } => at.z <= tol || at.z >= length - tol || at.r >= inner_radius - tol,
                crate::model::Tank::Sphere { inner_radius } => {
                    crate::geometry::magnitude(at.r, at.z - inner_radius) >= inner_radius - tol
                }
            };
            if !touches && !on_wall {
                out.push(SharpCorner {
                    conductor: c.name.clone(),
                    at,
                });
            }
        }
    }
    out
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

fn gas_derating(ctx: &Ctx, state: &GasState) -> Result<Derating, MarginError> {
    if let Some(f) = override_of(ctx.model, "area_derating") {
        return Derating::user(f, "[checks] area_derating").map_err(|e| MarginError::Override {
            key: "area_derating",
            value: f,
            reason: e,
        });
    }
    Ok(Derating::large_area(&state.kind.label()))
}

fn user_limit(limit: Limit, key: &'static str, value: f64) -> Result<Limit, MarginError> {
    limit
        .with_user_value(value)
        .map_err(|e| MarginError::Override {
            key,
            value,
            reason: e,
        })
}

/// In-plane radius of curvature of `shape` at the surface point `p`, from the Laplacian of its
/// signed distance (= 1/R for a distance function); `None` on a flat face or a sharp edge.
fn local_radius(shape: &Shape, p: Point) -> Option<f64> {
    let rc = shape.min_radius_of_curvature();
    if rc.is_nan() || rc <= 0.0 {
        return None;
    }
    let h = 1e-3 * rc;
    let f = |r: f64, z: f64| shape.sdf(Point::new(r, z));
    let lap = (f(p.r + h, p.z) + f(p.r - h, p.z) + f(p.r, p.z + h) + f(p.r, p.z - h)
        - 4.0 * f(p.r, p.z))
        / (h * h);
    let scale = shape.scale().max(rc);
    if !(lap.is_finite() && lap * scale > 1e-2) {
        return None;
    }
    Some(1.0 / lap)
}

/// Most field lines integrated for the streamer criterion of one conductor.
pub const STREAMER_MAX_LINES: usize = 32;

/// One field line of the streamer criterion and its inception.
struct StreamerLine {
    start: SurfaceSample,
    line: FieldLine,
    inception: streamer::Inception,
}

/// The worst field lines of one conductor for the streamer criterion: the worst line whose
/// integral is inside the fits' validity (its row has a number and enters the hold-off), a worse
/// line outside validity if there is one (its row is shown without a number), and the first
/// reason a line gave no inception.
#[derive(Default)]
struct WorstLines {
    valid: Option<StreamerLine>,
    outside: Option<StreamerLine>,
    error: Option<String>,
}

impl WorstLines {
    fn least_factor(&self) -> Option<f64> {
        [&self.valid, &self.outside]
            .into_iter()
            .flatten()
            .map(|l| l.inception.factor)
            .min_by(f64::total_cmp)
    }
}

/// The streamer criterion along field lines from the stressed surface of the hotspot's
/// conductor: the hotspot's line, then the lines from the conductor's other gas samples in
/// falling surface field, each at least 1/[`STREAMER_MAX_LINES`] of the conductor's extent from
/// the samples already used, up to [`STREAMER_MAX_LINES`] lines, while a sample's field times
/// the smallest inception factor so far exceeds the stop field of the model (where α − η ≤ 0:
/// below it a line whose field does not rise above its surface value has a zero integral at that
/// factor, so it cannot be worse). Returns the worst lines and the number of lines integrated.
fn worst_streamer_line(
    fm: &FieldMap,
    samples: &[SurfaceSample],
    hot: &SurfaceSample,
    hot_line: &FieldLine,
    gas: &Gas,
    model_ion: &EffectiveIonisation,
    p: f64,
) -> (WorstLines, usize) {
    let reaches = |l: &FieldLine| !matches!(l.end, LineEnd::Stalled) && l.length_m > 0.0;
    let mut surface: Vec<SurfaceSample> = samples
        .iter()
        .filter(|s| s.conductor == hot.conductor && s.medium == Medium::Gas)
        .filter(|s| s.e.is_finite() && s.e > 0.0 && s.at != hot.at)
        .copied()
        .collect();
    surface.sort_by(|a, b| b.e.total_cmp(&a.e));
    let (lo, hi) = surface.iter().fold((hot.at, hot.at), |(lo, hi), s| {
        (
            Point::new(lo.r.min(s.at.r), lo.z.min(s.at.z)),
            Point::new(hi.r.max(s.at.r), hi.z.max(s.at.z)),
        )
    });
    let spacing = (hi.r - lo.r).hypot(hi.z - lo.z) / STREAMER_MAX_LINES as f64;
    let e_stop = model_ion.stop_field(p);
    let mut used = vec![hot.at];
    let mut best = WorstLines::default();
    let consider = |start: SurfaceSample, line: FieldLine, best: &mut WorstLines| {
        if !reaches(&line) {
            best.error.get_or_insert_with(|| {
                format!(
                    "the field line from r, z = {:.1}, {:.1} mm reached no opposite surface",
                    start.at.r * 1e3,
                    start.at.z * 1e3
                )
            });
            return;
        }
        match streamer::inception(&line.profile(), gas, model_ion) {
            Ok(inception) => {
                let slot = if inception.integral.validity.is_valid() {
                    &mut best.valid
                } else {
                    &mut best.outside
                };
                if slot
                    .as_ref()
                    .is_none_or(|b| inception.factor < b.inception.factor)
                {
                    *slot = Some(StreamerLine {
                        start,
                        line,
                        inception,
                    });
                }
            }
            Err(e) => {
                best.error.get_or_insert_with(|| e.to_string());
            }
        }
    };
    consider(*hot, hot_line.clone(), &mut best);
    for s in surface {
        if used.len() >= STREAMER_MAX_LINES {
            break;
        }
        if best.least_factor().is_some_and(|f| f * s.e <= e_stop) {
            break;
        }
        if used
            .iter()
            .any(|u| (u.r - s.at.r).hypot(u.z - s.at.z) < spacing)
        {
            continue;
        }
        used.push(s.at);
        let line = fieldline::trace(fm, &s, &TraceParams::default());
        consider(s, line, &mut best);
    }
    // A line outside validity is kept only when it is worse than every valid one.
    if let (Some(v), Some(o)) = (&best.valid, &best.outside)
        && o.inception.factor >= v.inception.factor
    {
        best.outside = None;
    }
    (best, used.len())
}

/// The gas rows of one conductor hotspot.
fn gas_rows(
    ctx: &Ctx,
    fm: &FieldMap,
    samples: &[SurfaceSample],
    hot: &SurfaceSample,
    lines: &mut Vec<LineSummary>,
    rows: &mut Vec<MarginRow>,
) -> Result<(), MarginError> {
    let Some((gas, state)) = &ctx.gas else {
        return Ok(());
    };
    let first_row = rows.len();
    let model = ctx.model;
    let name = name_of(model, hot.conductor);
    let derating = gas_derating(ctx, state)?;
    let line = fieldline::trace(fm, hot, &TraceParams::default());
    let reached = !matches!(line.end, LineEnd::Stalled) && line.length_m > 0.0;
    let to = end_name(model, line.end);
    lines.push(summary(model, &line, hot, &to));
    let err = ctx.relative_error(hot.conductor);
    let gas_label = format!(
        "{} at {:.3} bar",
        state.kind.label(),
        state.pressure_pa / 1e5
    );

    // 1. Peak surface field against the limiting field: SF6 and its mixtures, the critical
    // field (the standard SF6 design check); other gases only with a user-set
    // `gas_field_limit` (their surface checks are the streamer integral and, in air, Peek; the
    // long-gap limit against a small-radius surface field would mislead).
    let long_gap = reached
        && !state.kind.is_sf6_based()
        && state.reduced_pd(line.length_m) / BAR_CM_PA_M > uniform::SCHUMANN_PD_RANGE_BAR_CM.1;
    let user_field = override_of(model, "gas_field_limit");
    if state.kind.is_sf6_based() || user_field.is_some() {
        let mut limit = uniform::critical_field(gas, &ctx.options)?;
        let mut user_set = false;
        if let Some(v) = user_field {
            limit = user_limit(limit, "gas_field_limit", v)?;
            user_set = true;
        }
        rows.push(row(
            ctx,
            RowSpec {
                item: name.clone(),
                medium: RowMedium::Gas,
                peak: hot.e,
                at: hot.at,
                numerical_error: err,
                user_set,
                scaling: Scaling::Linear,
                in_holdoff: true,
                note: Some(format!("peak surface field in {gas_label}")),
            },
            &limit.derated(derating.clone()),
        ));
    }

    // 2. Streamer integral along the field line.
    // N2 at tank pressures is in the streamer regime, below the window of its Townsend fit:
    // the scaled-air model is used there (the stated alternative of the ionisation table).
    let model_ion =
        if state.kind == GasKind::N2 && state.reduced_pressure_pa >= N2_SCALED_AIR_FROM_PA {
            EffectiveIonisation::n2_scaled_air()
        } else {
            EffectiveIonisation::for_gas(gas, &ctx.options)?
        };
    let p = state.reduced_pressure_pa;
    let (worst, integrated) = worst_streamer_line(fm, samples, hot, &line, gas, &model_ion, p);
    let e_ref = line.profile().first().map_or(hot.e, |&(_, e)| e);
    let mut streamer_rows = Vec::new();
    if worst.valid.is_none() && worst.outside.is_none() {
        let reason = worst
            .error
            .clone()
            .unwrap_or_else(|| "no field line from the stressed surface".to_string());
        let limit = unavailable(
            Criterion::StreamerIntegral,
            "streamer inception (ionisation integral)",
            LimitKind::Field,
            reason,
            &model_ion.source,
        );
        let note = format!(
            "no field line from the stressed surface reached inception ({integrated} integrated)"
        );
        streamer_rows.push((limit, hot.at, note));
    }
    for w in [&worst.valid, &worst.outside].into_iter().flatten() {
        // Every line's limit is the hotspot's surface field at that line's inception factor, so
        // that the margin of the row is the line's factor.
        let limit = w.inception.field_limit();
        let limit = limit
            .clone()
            .scaled(w.inception.factor * e_ref / limit.ideal);
        let w_to = end_name(model, w.line.end);
        let note = if w.start.at == hot.at {
            format!(
                "integral along the {:.1} mm field line to {w_to} (the worst of {integrated} \
                 lines from the stressed surface); the limit is the surface field at inception",
                w.line.length_m * 1e3
            )
        } else {
            lines.push(summary(model, &w.line, &w.start, &w_to));
            format!(
                "worst of {integrated} field lines from the stressed surface: the {:.1} mm line \
                 to {w_to} from r, z = {:.1}, {:.1} mm (surface field {:.2} of the peak); the \
                 limit is the peak surface field at that line's inception",
                w.line.length_m * 1e3,
                w.start.at.r * 1e3,
                w.start.at.z * 1e3,
                w.start.e / hot.e
            )
        };
        streamer_rows.push((limit, w.start.at, note));
    }
    for (limit, at, note) in streamer_rows {
        rows.push(row(
            ctx,
            RowSpec {
                item: name.clone(),
                medium: RowMedium::Gas,
                peak: hot.e,
                at,
                numerical_error: err,
                user_set: false,
                scaling: Scaling::Bisection,
                in_holdoff: true,
                note: Some(note),
            },
            &limit.derated(derating.clone()),
        ));
    }

    // 3. Gap voltage against the uniform-field breakdown of the same gap.
    if reached && line.voltage_v > 0.0 {
        let gap_limit = if long_gap {
            let crit = uniform::critical_field(gas, &ctx.options)?;
            Limit::new(
                crit.criterion,
                format!(
                    "long-gap uniform-field limit ({} x field-line length; pd above the \
                     Schumann range)",
                    crit.name
                ),
                crit.source.clone(),
                crit.mark,
                LimitKind::Voltage,
                crit.ideal * line.length_m,
                crit.validity.clone(),
            )
        } else {
            match uniform::uniform_breakdown(gas, line.length_m, &ctx.options) {
                Ok(u) => u.voltage,
                Err(e) => unavailable(
                    Criterion::Paschen,
                    "uniform-field gap breakdown",
                    LimitKind::Voltage,
                    e.to_string(),
                    "docs/references.md §1-3",
                ),
            }
        };
        let mut note = format!(
            "voltage across the {:.1} mm field-line gap to {to}; the uniform-field value is an \
             upper bound for a non-uniform gap (the streamer row covers that)",
            line.length_m * 1e3
        );
        if matches!(line.end, LineEnd::Dielectric { .. }) {
            note.push_str("; the line ends on an insulator surface, not an electrode");
        }
        rows.push(row(
            ctx,
            RowSpec {
                item: format!("gap {name} → {to}"),
                medium: RowMedium::Gas,
                peak: line.voltage_v,
                at: hot.at,
                numerical_error: None,
                user_set: false,
                scaling: Scaling::Linear,
                in_holdoff: true,
                note: Some(note),
            },
            &gap_limit.derated(derating.clone()),
        ));
    }

    // 4. Corona onset in air (Peek) at the local radius of curvature; by the geometry either
    // beside the streamer integral (an isolated conductor) or a cross-check (a gap).
    if state.kind == GasKind::Air
        && let Some(c) = hot.conductor.conductor_index()
    {
        let shape = &model.conductors[c].shape;
        let (m, m_user) = match override_of(model, "corona_surface_factor") {
            Some(v) => (v, true),
            None => (DEFAULT_CORONA_SURFACE_FACTOR, false),
        };
        let geometry = match shape {
            Shape::Sphere { .. } => PeekGeometry::Sphere,
            _ => PeekGeometry::Coaxial,
        };
        let radius = local_radius(shape, hot.at);
        let peek = match radius {
            Some(radius) => {
                let mut l = corona::onset_field_in_gas(geometry, radius, gas, m).map_err(|e| {
                    MarginError::Override {
                        key: "corona_surface_factor",
                        value: m,
                        reason: e,
                    }
                })?;
                l.name = format!("{} at local radius {:.2} mm", l.name, radius * 1e3);
                if m_user {
                    l.source = format!("{}; surface factor m = {m}, user-set", l.source);
                }
                l
            }
            None => unavailable(
                Criterion::PeekCorona,
                "Peek corona onset",
                LimitKind::Field,
                "the hotspot is on a flat face or a sharp edge: Peek's law needs a finite \
                 conductor radius"
                    .to_string(),
                "Peek (1929), docs/references.md §5",
            ),
        };
        let form = match geometry {
            PeekGeometry::Sphere => "Peek's sphere form",
            _ => "Peek's coaxial (cylinder) form at the in-plane radius of the hotspot",
        };
        let gap = match radius {
            Some(r) if faces_electrode(&line) && line.length_m <= GAP_TO_RADIUS * r => Some(r),
            _ => None,
        };
        let note = match (gap, radius) {
            (Some(r), _) => format!(
                "{form}; cross-check, not in the hold-off or the status: the field line reaches \
                 {to} after {:.1} mm, within {GAP_TO_RADIUS} local radii ({:.1} mm), so this is \
                 a gap and the streamer criterion along the field line governs (Peek's formula \
                 is for a conductor far from others)",
                line.length_m * 1e3,
                r * 1e3
            ),
            (None, Some(r)) => format!(
                "{form}; isolated conductor (no opposite electrode within {GAP_TO_RADIUS} local \
                 radii, {:.1} mm): Peek's onset enters beside the streamer integral",
                GAP_TO_RADIUS * r * 1e3
            ),
            (None, None) => form.to_string(),
        };
        let mut peek_row = row(
            ctx,
            RowSpec {
                item: name,
                medium: RowMedium::Gas,
                peak: hot.e,
                at: hot.at,
                numerical_error: err,
                user_set: m_user,
                scaling: Scaling::Linear,
                in_holdoff: gap.is_none(),
                note: Some(note),
            },
            &peek,
        );
        if gap.is_some() {
            peek_row.cross_check = true;
            peek_row.criterion_name = format!(
                "{} (cross-check: the streamer criterion governs this gap)",
                peek_row.criterion_name
            );
            for n in rows
                .iter_mut()
                .filter(|r| r.criterion == Criterion::StreamerIntegral && r.item == peek_row.item)
                .filter_map(|r| r.note.as_mut())
            {
                n.push_str(&format!(
                    "; governs this gap (field line within {GAP_TO_RADIUS} local radii; Peek \
                     shown as a cross-check)"
                ));
            }
        }
        rows.push(peek_row);
    }
    if reached && line.voltage_v > 0.0 {
        below_paschen_minimum(&mut rows[first_row..], line.voltage_v, state.kind);
    }
    Ok(())
}

/// The lowest measured minimum sparking potential of a gas (docs/references.md §1): for an
/// SF6–N2 mixture the lower of its components' (N2).
fn paschen_floor(kind: GasKind) -> Option<&'static paschen::MeasuredMinimum> {
    paschen::measured_minimum(match kind {
        GasKind::Air => "air",
        GasKind::N2 | GasKind::Sf6N2 { .. } => "N2",
        GasKind::Co2 => "CO2",
        GasKind::Sf6 => "SF6",
    })
}

/// Marks outside validity every gas row whose ideal limit puts the breakdown of the field-line
/// gap (voltage `line_voltage_v` at the design voltage) below the gas's minimum sparking
/// potential: no gas gap breaks down below it, so a criterion that says so is outside the
/// density and gap range it holds for (e.g. the SF6 critical field at 1 mbar).
fn below_paschen_minimum(rows: &mut [MarginRow], line_voltage_v: f64, kind: GasKind) {
    let Some(floor) = paschen_floor(kind) else {
        return;
    };
    for r in rows {
        let Some(m) = r.margin_ideal else {
            continue;
        };
        let at_limit = m * line_voltage_v;
        if at_limit < floor.v_min_v {
            r.validity = r.validity.clone().and(Validity::OutsideValidity {
                reason: format!(
                    "the criterion puts breakdown of the field-line gap at {at_limit:.0} V, below \
                     the minimum sparking potential of {} ({:.0} V, {}): outside the density \
                     and gap range of the criterion",
                    floor.gas, floor.v_min_v, floor.source
                ),
            });
            r.limit = None;
            r.limit_ideal = None;
            r.margin = None;
            r.margin_ideal = None;
            r.status = Status::OutsideValidity;
        }
    }
}

/// True when the field line ends on an electrode (a conductor or the tank).
fn faces_electrode(line: &FieldLine) -> bool {
    matches!(line.end, LineEnd::Conductor { .. } | LineEnd::Tank) && line.length_m > 0.0
}

fn summary(model: &Model, line: &FieldLine, from: &SurfaceSample, to: &str) -> LineSummary {
    let end = line.samples.last().map_or(from.at, |s| s.at);
    LineSummary {
        from: name_of(model, from.conductor),
        to: to.to_string(),
        medium: line.medium,
        start_m: [from.at.r, from.at.z],
        end_m: [end.r, end.z],
        length_m: line.length_m,
        voltage_v: line.voltage_v,
        samples: line.samples.len(),
    }
}

/// The vacuum rows of one cathodic hotspot.
fn vacuum_rows(
    ctx: &Ctx,
    fm: &FieldMap,
    hot: &SurfaceSample,
    samples: &[SurfaceSample],
    lines: &mut Vec<LineSummary>,
    rows: &mut Vec<MarginRow>,
) -> Result<(), MarginError> {
    let model = ctx.model;
    let name = name_of(model, hot.conductor);
    let err = ctx.relative_error(hot.conductor);
    let (c, c_user) = match override_of(model, "cranberg_constant") {
        Some(v) => (v, true),
        None => (vacuum::CRANBERG_C_DEFAULT, false),
    };
    let bad_c = |e: BreakdownError| MarginError::Override {
        key: "cranberg_constant",
        value: c,
        reason: e,
    };

    // 1. Cathode surface field.
    let mut limit = vacuum::cathode_surface_field_limit(CathodeClass::LargeArea);
    let mut user_set = false;
    if let Some(v) = override_of(model, "vacuum_field_limit") {
        limit = user_limit(limit, "vacuum_field_limit", v)?;
        user_set = true;
    }
    rows.push(row(
        ctx,
        RowSpec {
            item: format!("{name} (cathode)"),
            medium: RowMedium::Vacuum,
            peak: hot.e,
            at: hot.at,
            numerical_error: err,
            user_set,
            scaling: Scaling::Linear,
            in_holdoff: true,
            note: Some("peak cathodic surface field in vacuum".to_string()),
        },
        &limit,
    ));

    let (line, start, first_end) = vacuum_gap_line(fm, hot, samples);
    let to = end_name(model, line.end);
    lines.push(summary(model, &line, &start, &to));
    let reached = gap_reached(&line);
    let gap_item = format!("vacuum gap {name} → {to}");
    // When the peak's own line leaves the vacuum (e.g. into the insulator beside it), the gap
    // rows come from the strongest cathodic point whose line reaches an electrode.
    let from_note = match first_end {
        Some(end) => format!(
            "; from the cathode point at ({:.1}, {:.1}) mm ({:.3} MV/m): the line from the peak \
             reached {}",
            start.at.r * 1e3,
            start.at.z * 1e3,
            start.e / 1e6,
            end_name(model, end)
        ),
        None => String::new(),
    };
    let hot = &start;

    // 2. Total-voltage effect: gap voltage against V = k d^alpha (Cranberg's case by default).
    let fit = TotalVoltageFit::cranberg(c).map_err(bad_c)?;
    let tv = if reached {
        fit.voltage(line.length_m).map_err(bad_c)?
    } else {
        unavailable(
            Criterion::TotalVoltage,
            "total-voltage fit",
            LimitKind::Voltage,
            format!("the field line from the cathode reached {to}, not an electrode"),
            &fit.source,
        )
    };
    let gap_note = format!(
        "voltage across the {:.1} mm vacuum field-line gap to {to}{from_note}",
        line.length_m * 1e3
    );
    rows.push(row(
        ctx,
        RowSpec {
            item: gap_item.clone(),
            medium: RowMedium::Vacuum,
            peak: line.voltage_v,
            at: hot.at,
            numerical_error: None,
            user_set: c_user,
            scaling: Scaling::Linear,
            in_holdoff: true,
            note: Some(gap_note.clone()),
        },
        &tv,
    ));

    // 3. Cranberg's V·E = C, in voltage form.
    let cr = if reached {
        let scale = (c / (line.voltage_v * hot.e)).sqrt();
        let v_lim = scale * line.voltage_v;
        let f = vacuum::cranberg_field_limit(v_lim, c).map_err(bad_c)?;
        let gap = vacuum::cranberg_gap_voltage(line.length_m, c).map_err(bad_c)?;
        let mut l = Limit::new(
            Criterion::Cranberg,
            format!(
                "Cranberg V x E = C (C = {c:.2e} V^2/m): gap voltage at which V x E_cathode \
                 reaches C"
            ),
            f.source.clone(),
            f.mark,
            LimitKind::Voltage,
            v_lim,
            f.validity.clone(),
        );
        // Only the gap-length range of the supporting data is added (the voltage range is
        // checked at the limit itself).
        if let Validity::OutsideValidity { reason } = gap.validity
            && reason.starts_with("gap")
        {
            l.validity = l.validity.and(Validity::OutsideValidity { reason });
        }
        l
    } else {
        unavailable(
            Criterion::Cranberg,
            "Cranberg V x E criterion",
            LimitKind::Voltage,
            format!("the field line from the cathode reached {to}, not an electrode"),
            "Cranberg, J. Appl. Phys. 23, 518 (1952)",
        )
    };
    rows.push(row(
        ctx,
        RowSpec {
            item: gap_item,
            medium: RowMedium::Vacuum,
            peak: line.voltage_v,
            at: hot.at,
            numerical_error: err,
            user_set: c_user,
            scaling: Scaling::SquareRoot,
            in_holdoff: true,
            note: Some(format!(
                "{gap_note}; cathode field {:.3} MV/m; margin sqrt(C/(V E))",
                hot.e / 1e6
            )),
        },
        &cr,
    ));
    Ok(())
}

/// The surface-flashover limit of an insulator side.
fn surface_limit(
    ctx: &Ctx,
    side: Medium,
    length_m: f64,
) -> Result<Option<(Limit, bool)>, MarginError> {
    match side {
        Medium::Vacuum => {
            let l = insulator::vacuum_surface_limit(VacuumSurface::Plain);
            Ok(Some(
                match override_of(ctx.model, "insulator_vacuum_limit") {
                    Some(v) => (user_limit(l, "insulator_vacuum_limit", v)?, true),
                    None => (l, false),
                },
            ))
        }
        Medium::Gas => {
            let Some((gas, _)) = &ctx.gas else {
                return Ok(None);
            };
            let fraction = override_of(ctx.model, "insulator_gas_fraction");
            let l = insulator::gas_surface_limit(gas, length_m, fraction, &ctx.options).map_err(
                |e| match fraction {
                    Some(f) => MarginError::Override {
                        key: "insulator_gas_fraction",
                        value: f,
                        reason: e,
                    },
                    None => MarginError::Breakdown(e),
                },
            )?;
            Ok(Some((l, fraction.is_some())))
        }
        Medium::Dielectric { .. } => Ok(None),
    }
}

/// Insulator surface rows (tangential field) and triple-junction rows of one dielectric.
fn insulator_rows(
    ctx: &Ctx,
    fm: &FieldMap,
    index: usize,
    samples: &[SurfaceSample],
    rows: &mut Vec<MarginRow>,
) -> Result<(), MarginError> {
    let model = ctx.model;
    let diel = &model.dielectrics[index];
    let b = diel.shape.bbox();
    let tank = model.tank.bbox();
    // The flashover path: the insulator's longer extent inside the tank (conservative for the
    // gas limit, which falls with length).
    let length = (b.z_max.min(tank.z_max) - b.z_min.max(tank.z_min))
        .max(b.r_max.min(tank.r_max) - b.r_min.max(tank.r_min))
        .max(fm.mesh.cell);
    let surface: Vec<InsulatorSample> = fm.insulator_samples(index);
    for side in [Medium::Gas, Medium::Vacuum] {
        let Some(peak) = surface
            .iter()
            .filter(|s| s.side == side)
            .max_by(|a, b| a.e_tangential.total_cmp(&b.e_tangential))
        else {
            continue;
        };
        let Some((limit, user_set)) = surface_limit(ctx, side, length)? else {
            continue;
        };
        let medium = if side == Medium::Vacuum {
            RowMedium::InsulatorVacuumSide
        } else {
            RowMedium::InsulatorGasSide
        };
        rows.push(row(
            ctx,
            RowSpec {
                item: diel.name.clone(),
                medium,
                peak: peak.e_tangential,
                at: peak.at,
                numerical_error: None,
                user_set,
                scaling: Scaling::Linear,
                in_holdoff: true,
                note: Some(format!(
                    "peak tangential field along the surface ({:.0} mm flashover length)",
                    length * 1e3
                )),
            },
            &limit,
        ));
    }

    // Triple junctions: conductor surface samples in gas or vacuum within 1.5 cells of this
    // insulator; per conductor and side the highest field.
    let reach = 1.5 * fm.mesh.cell;
    let mut best: Vec<(FixedId, Medium, SurfaceSample)> = Vec::new();
    for s in samples {
        if s.conductor.is_tank() || !matches!(s.medium, Medium::Gas | Medium::Vacuum) {
            continue;
        }
        if diel.shape.sdf(s.at).abs() > reach {
            continue;
        }
        match best
            .iter_mut()
            .find(|(c, m, _)| *c == s.conductor && *m == s.medium)
        {
            Some(entry) if entry.2.e < s.e => entry.2 = *s,
            Some(_) => {}
            None => best.push((s.conductor, s.medium, *s)),
        }
    }
    for (conductor, side, s) in best {
        let Some((limit, user_set)) = surface_limit(ctx, side, length)? else {
            continue;
        };
        let err = ctx
            .relative_error(conductor)
            .filter(|_| is_conductor_peak(samples, &s));
        let flag = insulator::classify_triple_junction(s.e, limit.value, err, s.e_normal < 0.0)?;
        let mut limit = limit;
        if flag.class == JunctionClass::Unresolved {
            limit.validity = limit.validity.and(Validity::OutsideValidity {
                reason: flag.note.clone(),
            });
        }
        let medium = if side == Medium::Vacuum {
            RowMedium::TripleJunctionVacuum
        } else {
            RowMedium::TripleJunctionGas
        };
        rows.push(row(
            ctx,
            RowSpec {
                item: format!("{} / {}", name_of(model, conductor), diel.name),
                medium,
                peak: s.e,
                at: s.at,
                numerical_error: err,
                user_set,
                scaling: Scaling::Linear,
                in_holdoff: false,
                note: Some(format!(
                    "field at the triple junction {:.3} MV/m: {} (a flag, not in the hold-off \
                     voltage: the field there depends on the contact geometry and the grid)",
                    s.e / 1e6,
                    flag.note
                )),
            },
            &limit,
        ));
    }
    Ok(())
}

/// Does a traced line span a gap between two electrodes?
fn gap_reached(line: &FieldLine) -> bool {
    matches!(line.end, LineEnd::Conductor { .. } | LineEnd::Tank)
        && line.length_m > 0.0
        && line.voltage_v > 0.0
}

/// Cathodic points of a conductor tried, in falling field, when the peak's own field line
/// does not reach an electrode.
const VACUUM_RETRIES: usize = 16;

/// The field line of a vacuum gap from the cathodic hotspot `hot`: its own line when that
/// reaches an electrode; otherwise the line of the strongest other cathodic vacuum sample of
/// the same conductor (at least a fifth of the peak field) that does, with the end the peak's line
/// met. When none does, the peak's line (the rows then say where it ended).
fn vacuum_gap_line(
    fm: &FieldMap,
    hot: &SurfaceSample,
    samples: &[SurfaceSample],
) -> (FieldLine, SurfaceSample, Option<LineEnd>) {
    let params = TraceParams::default();
    let first = fieldline::trace(fm, hot, &params);
    if gap_reached(&first) {
        return (first, *hot, None);
    }
    let mut others: Vec<&SurfaceSample> = samples
        .iter()
        .filter(|s| {
            s.conductor == hot.conductor
                && s.medium == Medium::Vacuum
                && s.e_normal < 0.0
                && s.e >= 0.2 * hot.e
                && (s.at.r != hot.at.r || s.at.z != hot.at.z)
        })
        .collect();
    others.sort_by(|a, b| b.e.total_cmp(&a.e));
    for s in others.into_iter().take(VACUUM_RETRIES) {
        let line = fieldline::trace(fm, s, &params);
        if gap_reached(&line) {
            return (line, *s, Some(first.end));
        }
    }
    (first, *hot, None)
}

fn is_conductor_peak(samples: &[SurfaceSample], s: &SurfaceSample) -> bool {
    samples
        .iter()
        .filter(|o| o.conductor == s.conductor)
        .all(|o| o.e <= s.e)
}

/// The highest-field sample of each conductor in `medium` (cathodic only, when asked), with
/// the field and place of the smooth profile's maximum around it (`FieldMap::peak_near`).
fn hotspots(fm: &FieldMap, samples: &[SurfaceSample], gas: bool) -> Vec<SurfaceSample> {
    let model = fm.model;
    let mut best: Vec<Option<SurfaceSample>> = vec![None; model.conductors.len()];
    for s in samples {
        let Some(c) = s.conductor.conductor_index() else {
            continue;
        };
        if !(s.e.is_finite() && s.e > 0.0) {
            continue;
        }
        let wanted = if gas {
            s.medium == Medium::Gas
        } else {
            s.medium == Medium::Vacuum && s.e_normal < 0.0
        };
        if !wanted {
            continue;
        }
        let slot = &mut best[c];
        if slot.is_none_or(|b| s.e > b.e) {
            *slot = Some(*s);
        }
    }
    best.into_iter()
        .flatten()
        .map(|b| fm.peak_near(samples, &b))
        .collect()
}

/// Ranks rows worst first (rows with a margin by margin, then the rows outside validity) and
/// numbers them.
pub fn rank(rows: &mut [MarginRow]) {
    rows.sort_by(|a, b| match (a.margin, b.margin) {
        (Some(x), Some(y)) => x.total_cmp(&y),
        (Some(_), None) => std::cmp::Ordering::Less,
        (None, Some(_)) => std::cmp::Ordering::Greater,
        (None, None) => std::cmp::Ordering::Equal,
    });
    for (k, r) in rows.iter_mut().enumerate() {
        r.rank = k + 1;
    }
}

/// The hold-off voltage: the terminal voltage times the smallest margin (as used, or ideal) of
/// the rows that enter it.
pub fn holdoff(rows: &[MarginRow], terminal_voltage_v: f64, ideal: bool) -> Option<Holdoff> {
    rows.iter()
        .filter(|r| r.in_holdoff)
        .filter_map(|r| {
            let m = if ideal { r.margin_ideal } else { r.margin }?;
            Some((m, r))
        })
        .min_by(|a, b| a.0.total_cmp(&b.0))
        .map(|(m, r)| Holdoff {
            voltage_v: m * terminal_voltage_v,
            item: r.item.clone(),
            criterion: r.criterion,
            criterion_name: r.criterion_name.clone(),
            rank: r.rank,
        })
}

/// Where the linear scaling from the design voltage `v_design` to the hold-off `holdoff_v`
/// stays inside the criteria's validity and where it leaves it (both magnitudes, V).
fn scaling_note(rows: &[MarginRow], holdoff_v: f64, v_design: f64) -> String {
    let f = holdoff_v / v_design;
    let mut text = format!(
        "scaling to {f:.2} x the design voltage ({}): the field limits of the gas, corona and \
         insulator rows do not depend on the terminal voltage (their validity in gap, pd, \
         density and uniformity holds at any voltage), and the streamer integral is evaluated \
         at its own inception voltage",
        crate::units::kv_three_significant(holdoff_v)
    );
    if rows.iter().any(|r| r.criterion == Criterion::Cranberg) {
        let (lo, hi) = crate::breakdown::vacuum::CRANBERG_VOLTAGE_RANGE_V;
        let _ = write!(
            text,
            "; Cranberg's vacuum rows rest on gap voltages of {} to {} and were checked at \
             the design gap voltages: scaled {f:.2} x, a gap above {} at the design voltage \
             leaves that range",
            crate::units::kv_three_significant(lo),
            crate::units::kv_three_significant(hi),
            crate::units::kv_three_significant(hi / f)
        );
    }
    if f > 1.0 {
        let _ = write!(
            text,
            "; outside the field, the scaling leaves what was checked: the grading resistors, \
             protective gaps, multiplier and stack were checked at the design voltage only, and \
             at the hold-off they see {f:.2} x their voltage ({:.2} x the resistor dissipation) \
             and the stored energy is {:.2} x as large",
            f * f,
            f * f
        );
    }
    text
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
    let fm = FieldMap::new(&fine.mesh, model, &fine.solution.phi, &fine.potentials);
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
    let gas_hot = hotspots(&fm, &fine.samples, true);
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
    for hot in hotspots(&fm, &fine.samples, false) {
        vacuum_rows(&ctx, &fm, &hot, &fine.samples, &mut lines, &mut rows)?;
    }
    for index in 0..model.dielectrics.len() {
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
                 cathodic surfaces are those where the field points into the metal"
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
