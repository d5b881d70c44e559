//! Rows of conductor surfaces in vacuum: cathode surface field, total-voltage fit and
//! Cranberg's V·E along the field line of each cathodic hotspot; and the hotspots of both media.

use super::*;

/// True when the field line ends on an electrode (a conductor or the tank).
pub(super) fn faces_electrode(line: &FieldLine) -> bool {
    matches!(line.end, LineEnd::Conductor { .. } | LineEnd::Tank) && line.length_m > 0.0
}

pub(super) fn summary(
    model: &Model,
    line: &FieldLine,
    from: &SurfaceSample,
    to: &str,
) -> LineSummary {
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

/// The vacuum rows of one cathodic hotspot: its surface field, then the total-voltage and
/// Cranberg rows of the vacuum gap its field line spans.
pub(super) fn vacuum_rows(
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
    rows.push(cathode_field_row(ctx, hot, &name, err)?);
    let (line, start, first_end) = vacuum_gap_line(fm, hot, samples);
    let to = end_name(model, line.end);
    lines.push(summary(model, &line, &start, &to));
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
    let (c, c_user) = match override_of(model, "cranberg_constant") {
        Some(v) => (v, true),
        None => (vacuum::CRANBERG_C_DEFAULT, false),
    };
    let gap = VacuumGap {
        reached: gap_reached(&line),
        item: format!("vacuum gap {name} → {to}"),
        note: format!(
            "voltage across the {:.1} mm vacuum field-line gap to {to}{from_note}",
            line.length_m * 1e3
        ),
        line,
        cathode: start,
        to,
        c,
        c_user,
    };
    rows.push(total_voltage_row(ctx, &gap)?);
    rows.push(cranberg_row(ctx, &gap, err)?);
    Ok(())
}

/// Row 1, the cathode surface field against the large-area limit (or `vacuum_field_limit`).
fn cathode_field_row(
    ctx: &Ctx,
    hot: &SurfaceSample,
    name: &str,
    err: Option<f64>,
) -> Result<MarginRow, MarginError> {
    let mut limit = vacuum::cathode_surface_field_limit(CathodeClass::LargeArea);
    let mut user_set = false;
    if let Some(v) = override_of(ctx.model, "vacuum_field_limit") {
        limit = user_limit(limit, "vacuum_field_limit", v)?;
        user_set = true;
    }
    Ok(row(
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
    ))
}

/// The vacuum gap of a cathodic hotspot: the field line from the cathode point, where it
/// ends, and Cranberg's constant (`cranberg_constant` when user-set).
struct VacuumGap {
    line: FieldLine,
    /// The cathode point the line starts from (the hotspot, or the point used instead).
    cathode: SurfaceSample,
    to: String,
    reached: bool,
    item: String,
    note: String,
    c: f64,
    c_user: bool,
}

impl VacuumGap {
    fn bad_c(&self, e: BreakdownError) -> MarginError {
        MarginError::Override {
            key: "cranberg_constant",
            value: self.c,
            reason: e,
        }
    }
}

/// Row 2, the total-voltage effect: gap voltage against V = k d^alpha (Cranberg's case by default).
fn total_voltage_row(ctx: &Ctx, gap: &VacuumGap) -> Result<MarginRow, MarginError> {
    let line = &gap.line;
    let fit = TotalVoltageFit::cranberg(gap.c).map_err(|e| gap.bad_c(e))?;
    let tv = if gap.reached {
        fit.voltage(line.length_m).map_err(|e| gap.bad_c(e))?
    } else {
        unavailable(
            Criterion::TotalVoltage,
            "total-voltage fit",
            LimitKind::Voltage,
            format!(
                "the field line from the cathode reached {}, not an electrode",
                gap.to
            ),
            &fit.source,
        )
    };
    Ok(row(
        ctx,
        RowSpec {
            item: gap.item.clone(),
            medium: RowMedium::Vacuum,
            peak: line.voltage_v,
            at: gap.cathode.at,
            numerical_error: None,
            user_set: gap.c_user,
            scaling: Scaling::Linear,
            in_holdoff: true,
            note: Some(gap.note.clone()),
        },
        &tv,
    ))
}

/// Row 3, Cranberg's V·E = C, in voltage form.
fn cranberg_row(ctx: &Ctx, gap: &VacuumGap, err: Option<f64>) -> Result<MarginRow, MarginError> {
    let (line, hot, c) = (&gap.line, &gap.cathode, gap.c);
    let cr = if gap.reached {
        let scale = (c / (line.voltage_v * hot.e)).sqrt();
        let v_lim = scale * line.voltage_v;
        let f = vacuum::cranberg_field_limit(v_lim, c).map_err(|e| gap.bad_c(e))?;
        let gap_v = vacuum::cranberg_gap_voltage(line.length_m, c).map_err(|e| gap.bad_c(e))?;
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
        if let Validity::OutsideValidity { reason } = gap_v.validity
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
            format!(
                "the field line from the cathode reached {}, not an electrode",
                gap.to
            ),
            "Cranberg, J. Appl. Phys. 23, 518 (1952)",
        )
    };
    Ok(row(
        ctx,
        RowSpec {
            item: gap.item.clone(),
            medium: RowMedium::Vacuum,
            peak: line.voltage_v,
            at: hot.at,
            numerical_error: err,
            user_set: gap.c_user,
            scaling: Scaling::SquareRoot,
            in_holdoff: true,
            note: Some(format!(
                "{}; cathode field {:.3} MV/m; margin sqrt(C/(V E))",
                gap.note,
                hot.e / 1e6
            )),
        },
        &cr,
    ))
}

/// Does a traced line span a gap between two electrodes?
pub(super) fn gap_reached(line: &FieldLine) -> bool {
    matches!(line.end, LineEnd::Conductor { .. } | LineEnd::Tank)
        && line.length_m > 0.0
        && line.voltage_v > 0.0
}

/// Cathodic points of a conductor tried, in falling field, when the peak's own field line
/// does not reach an electrode.
pub(super) const VACUUM_RETRIES: usize = 16;

/// The field line of a vacuum gap from the cathodic hotspot `hot`: its own line when that
/// reaches an electrode; otherwise the line of the strongest other cathodic vacuum sample of
/// the same conductor (at least a fifth of the peak field) that does, with the end the peak's line
/// met. When none does, the peak's line (the rows then say where it ended).
pub(super) fn vacuum_gap_line(
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

/// The highest-field sample of each conductor that `keep` keeps (by index) in `medium`
/// (cathodic only, when asked), with the field and place of the smooth profile's maximum
/// around it (`FieldMap::peak_near`).
pub(super) fn hotspots(
    fm: &FieldMap,
    samples: &[SurfaceSample],
    gas: bool,
    keep: &dyn Fn(usize) -> bool,
) -> Vec<SurfaceSample> {
    let model = fm.model;
    let mut best: Vec<Option<SurfaceSample>> = vec![None; model.conductors.len()];
    for s in samples {
        let Some(c) = s.conductor.conductor_index().filter(|&c| keep(c)) else {
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
