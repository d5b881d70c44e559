//! Rows of conductor surfaces in gas: limiting field, streamer integral along the worst field
//! lines, gap voltage against uniform-field breakdown (floored at the Paschen minimum), and
//! Peek's corona onset in air.

use super::*;
use crate::geometry::local_radius;

pub(super) fn gas_derating(ctx: &Ctx, state: &GasState) -> Result<Derating, MarginError> {
    if let Some(f) = override_of(ctx.model, "area_derating") {
        return Derating::user(f, "[checks] area_derating").map_err(|e| MarginError::Override {
            key: "area_derating",
            value: f,
            reason: e,
        });
    }
    Ok(Derating::large_area(&state.kind.label()))
}

pub(super) fn user_limit(
    limit: Limit,
    key: &'static str,
    value: f64,
) -> Result<Limit, MarginError> {
    limit
        .with_user_value(value)
        .map_err(|e| MarginError::Override {
            key,
            value,
            reason: e,
        })
}

/// Most field lines integrated for the streamer criterion of one conductor.
pub const STREAMER_MAX_LINES: usize = 32;

/// One field line of the streamer criterion and its inception.
pub(super) struct StreamerLine {
    start: SurfaceSample,
    line: FieldLine,
    inception: streamer::Inception,
}

/// The worst field lines of one conductor for the streamer criterion: the worst line whose
/// integral is inside the fits' validity (its row has a number and enters the hold-off), a worse
/// line outside validity if there is one (its row is shown without a number), and the first
/// reason a line gave no inception.
#[derive(Default)]
pub(super) struct WorstLines {
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
pub(super) fn worst_streamer_line(
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

/// What the gas rows of one hotspot share: its gas, its name and its field line.
struct GasHotspot<'a> {
    ctx: &'a Ctx<'a>,
    gas: &'a Gas,
    state: &'a GasState,
    hot: &'a SurfaceSample,
    name: String,
    derating: Derating,
    /// The field line from the hotspot; `reached` when it ends on an opposite surface, at
    /// `to`.
    line: FieldLine,
    reached: bool,
    to: String,
    /// Relative numerical error of the hotspot's conductor peak, from the grid study.
    err: Option<f64>,
}

impl GasHotspot<'_> {
    /// A gas row of this hotspot's conductor at its peak surface field (the item, medium and
    /// error filled in).
    fn surface_row(&self, at: Point, user_set: bool, scaling: Scaling, note: String) -> RowSpec {
        RowSpec {
            item: self.name.clone(),
            medium: RowMedium::Gas,
            peak: self.hot.e,
            at,
            numerical_error: self.err,
            user_set,
            scaling,
            in_holdoff: true,
            note: Some(note),
        }
    }
}

/// The gas rows of one conductor hotspot.
pub(super) fn gas_rows(
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
    let derating = gas_derating(ctx, state)?;
    let line = fieldline::trace(fm, hot, &TraceParams::default());
    let reached = !matches!(line.end, LineEnd::Stalled) && line.length_m > 0.0;
    let to = end_name(model, line.end);
    lines.push(summary(model, &line, hot, &to));
    let h = GasHotspot {
        ctx,
        gas,
        state,
        hot,
        name: name_of(model, hot.conductor),
        derating,
        line,
        reached,
        to,
        err: ctx.relative_error(hot.conductor),
    };
    rows.extend(limiting_field_row(&h)?);
    streamer_rows(&h, fm, samples, lines, rows)?;
    rows.extend(gap_voltage_row(&h)?);
    peek_row(&h, rows)?;
    if h.reached && h.line.voltage_v > 0.0 {
        below_paschen_minimum(&mut rows[first_row..], h.line.voltage_v, state.kind);
    }
    Ok(())
}

/// Row 1, the peak surface field against the limiting field: SF6 and its mixtures, the critical
/// field (the standard SF6 design check); other gases only with a user-set `gas_field_limit`
/// (their surface checks are the streamer integral and, in air, Peek; the long-gap limit
/// against a small-radius surface field would mislead).
fn limiting_field_row(h: &GasHotspot) -> Result<Option<MarginRow>, MarginError> {
    let ctx = h.ctx;
    let user_field = override_of(ctx.model, "gas_field_limit");
    if !(h.state.kind.is_sf6_based() || user_field.is_some()) {
        return Ok(None);
    }
    let mut limit = uniform::critical_field(h.gas, &ctx.options)?;
    let mut user_set = false;
    if let Some(v) = user_field {
        limit = user_limit(limit, "gas_field_limit", v)?;
        user_set = true;
    }
    let gas_label = format!(
        "{} at {:.3} bar",
        h.state.kind.label(),
        h.state.pressure_pa / 1e5
    );
    Ok(Some(row(
        ctx,
        h.surface_row(
            h.hot.at,
            user_set,
            Scaling::Linear,
            format!("peak surface field in {gas_label}"),
        ),
        &limit.derated(h.derating.clone()),
    )))
}

/// Row 2, the streamer integral along the field lines of the hotspot's conductor: a row per worst
/// line (inside and outside the fits' validity), or one row saying why none gave inception.
fn streamer_rows(
    h: &GasHotspot,
    fm: &FieldMap,
    samples: &[SurfaceSample],
    lines: &mut Vec<LineSummary>,
    rows: &mut Vec<MarginRow>,
) -> Result<(), MarginError> {
    let (ctx, hot, model) = (h.ctx, h.hot, h.ctx.model);
    // N2 at tank pressures is in the streamer regime, below the window of its Townsend fit:
    // the scaled-air model is used there (the stated alternative of the ionisation table).
    let model_ion =
        if h.state.kind == GasKind::N2 && h.state.reduced_pressure_pa >= N2_SCALED_AIR_FROM_PA {
            EffectiveIonisation::n2_scaled_air()
        } else {
            EffectiveIonisation::for_gas(h.gas, &ctx.options)?
        };
    let p = h.state.reduced_pressure_pa;
    let (worst, integrated) = worst_streamer_line(fm, samples, hot, &h.line, h.gas, &model_ion, p);
    let e_ref = h.line.profile().first().map_or(hot.e, |&(_, e)| e);
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
            h.surface_row(at, false, Scaling::Bisection, note),
            &limit.derated(h.derating.clone()),
        ));
    }
    Ok(())
}

/// Row 3, the gap voltage against the uniform-field breakdown of the same gap (the long-gap limit
/// above the Schumann range), when the field line reaches an opposite surface.
fn gap_voltage_row(h: &GasHotspot) -> Result<Option<MarginRow>, MarginError> {
    let (ctx, gas, line, to) = (h.ctx, h.gas, &h.line, &h.to);
    if !(h.reached && line.voltage_v > 0.0) {
        return Ok(None);
    }
    let long_gap = !h.state.kind.is_sf6_based()
        && h.state.reduced_pd(line.length_m) / BAR_CM_PA_M > uniform::SCHUMANN_PD_RANGE_BAR_CM.1;
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
    Ok(Some(row(
        ctx,
        RowSpec {
            item: format!("gap {} → {to}", h.name),
            medium: RowMedium::Gas,
            peak: line.voltage_v,
            at: h.hot.at,
            numerical_error: None,
            user_set: false,
            scaling: Scaling::Linear,
            in_holdoff: true,
            note: Some(note),
        },
        &gap_limit.derated(h.derating.clone()),
    )))
}

/// Row 4, corona onset in air (Peek) at the local radius of curvature; by the geometry either
/// beside the streamer integral (an isolated conductor) or a cross-check (a gap), when it also
/// marks the streamer rows of the conductor as governing.
fn peek_row(h: &GasHotspot, rows: &mut Vec<MarginRow>) -> Result<(), MarginError> {
    let (ctx, hot, line, to) = (h.ctx, h.hot, &h.line, &h.to);
    let model = ctx.model;
    if h.state.kind != GasKind::Air {
        return Ok(());
    }
    let Some(c) = hot.conductor.conductor_index() else {
        return Ok(());
    };
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
            let mut l = corona::onset_field_in_gas(geometry, radius, h.gas, m).map_err(|e| {
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
        Some(r) if faces_electrode(line) && line.length_m <= GAP_TO_RADIUS * r => Some(r),
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
    let mut spec = h.surface_row(hot.at, m_user, Scaling::Linear, note);
    spec.in_holdoff = gap.is_none();
    let mut peek_row = row(ctx, spec, &peek);
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
    Ok(())
}

/// The lowest measured minimum sparking potential of a gas (docs/references.md §1): for an
/// SF6–N2 mixture the lower of its components' (N2).
pub(super) fn paschen_floor(kind: GasKind) -> Option<&'static paschen::MeasuredMinimum> {
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
pub(super) fn below_paschen_minimum(rows: &mut [MarginRow], line_voltage_v: f64, kind: GasKind) {
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
