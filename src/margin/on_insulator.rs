//! Rows of insulator surfaces (gas and vacuum side, tangential field against the flashover
//! gradient) and of triple junctions.

use super::*;

impl Ctx<'_> {
    /// The grid study of the triple junction of `conductor` with dielectric `index` on
    /// `side`, when the study was made.
    fn junction_study(
        &self,
        conductor: FixedId,
        index: usize,
        side: Medium,
    ) -> Option<&crate::study::JunctionStudy> {
        self.study?.junctions.iter().find(|j| {
            Some(j.conductor) == conductor.conductor_index()
                && j.dielectric == index
                && j.side == side
        })
    }

    /// The grid study's relative error of the peak tangential field along one side of
    /// dielectric `index`, when the study was made.
    fn insulator_error(&self, index: usize, side: Medium) -> Option<f64> {
        self.study?
            .insulator_peaks
            .iter()
            .find(|p| p.dielectric == index && p.side == side)
            .map(|p| p.relative_error)
    }
}

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
        let Some(peak) = fm.insulator_peak(&surface, side) else {
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
                numerical_error: ctx.insulator_error(index, side),
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

    // Triple junctions: per conductor and side the highest conductor-surface field within
    // 1.5 cells of this insulator. Its number is the field at the metal next to the junction;
    // it has an error bar only when the grid study shows it converging, and is reported as
    // not resolved when it grows with every refinement (a singular contact).
    for j in fm.junction_samples(samples, index) {
        let (conductor, side, s) = (j.conductor, j.side, j.sample);
        let Some((limit, user_set)) = surface_limit(ctx, side, length)? else {
            continue;
        };
        let study = ctx.junction_study(conductor, index, side);
        let err = study.and_then(|js| js.relative_error);
        let growing = study.filter(|js| {
            js.relative_error.is_none() && js.fields_v_per_m.iter().all(|v| v.is_finite())
        });
        let flag = insulator::classify_triple_junction(
            s.e,
            limit.value,
            err.or(growing.map(|_| f64::INFINITY)),
            s.e_normal < 0.0,
        )?;
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
        let grids = match growing {
            Some(js) => format!(
                "; it grows with every refinement ({:.3}, {:.3}, {:.3} MV/m on the grids 2h, \
                 √2h, h): no converged value",
                js.fields_v_per_m[2] / 1e6,
                js.fields_v_per_m[1] / 1e6,
                js.fields_v_per_m[0] / 1e6
            ),
            None => String::new(),
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
                    "field on the conductor within {:.1} cells of the triple junction {:.3} \
                     MV/m{grids}: {} (a flag, not in the hold-off voltage: the field there \
                     depends on the contact geometry and the grid)",
                    crate::field::JUNCTION_REACH_CELLS,
                    s.e / 1e6,
                    flag.note
                )),
            },
            &limit,
        ));
    }
    Ok(())
}
