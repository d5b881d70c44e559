//! Rows of insulator surfaces (gas and vacuum side, tangential field against the flashover
//! gradient) and of triple junctions.

use super::*;

/// The surface-flashover limit of an insulator side.
pub(super) fn surface_limit(
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
pub(super) fn insulator_rows(
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
