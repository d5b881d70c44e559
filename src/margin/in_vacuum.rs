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

/// The vacuum rows of one cathodic hotspot.
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

/// The highest-field sample of each conductor in `medium` (cathodic only, when asked), with
/// the field and place of the smooth profile's maximum around it (`FieldMap::peak_near`).
pub(super) fn hotspots(fm: &FieldMap, samples: &[SurfaceSample], gas: bool) -> Vec<SurfaceSample> {
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
