//! The single-table sections of the design file: `[tank]`, `[gas]`, `[multiplier]`,
//! `[checks]`, `[mesh]`, `[[probe]]`, and the permittivity of a `[[dielectric]]`.
//!
//! Input: the raw table with its spans. Output: the `model` value in SI units, or located
//! problems (unknown gas, pressure or temperature out of range, design factor below 1, ...).

use super::problem::nearest;
use super::read::{At, Reader};
use super::schema::{RawChecks, RawGas, RawMesh, RawMultiplier, RawProbe, RawTank, RawValue};
use crate::geometry::Point;
use crate::materials;
use crate::model::{Checks, Gas, MeshSpec, Multiplier, Probe, Tank};
use crate::units::{Dimension, format_si};
use std::ops::Range;
use toml::Spanned;

/// The gases with built-in data, in their canonical spelling.
pub const GASES: &[&str] = &["air", "N2", "CO2", "SF6"];

/// The overrides `[checks]` accepts, with what each is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum OverrideKind {
    /// An electric field, given with a unit.
    Field,
    /// A plain number in (0, 1].
    Fraction,
    /// A plain positive number in the SI unit named.
    Number(&'static str),
}

/// The fixed list of `[checks]` overrides, in the order they are stored in `Checks.overrides`.
pub const OVERRIDES: &[(&str, OverrideKind)] = &[
    ("gas_field_limit", OverrideKind::Field),
    ("area_derating", OverrideKind::Fraction),
    ("vacuum_field_limit", OverrideKind::Field),
    ("cranberg_constant", OverrideKind::Number("V^2/m")),
    ("insulator_vacuum_limit", OverrideKind::Field),
    ("insulator_gas_fraction", OverrideKind::Fraction),
    ("corona_surface_factor", OverrideKind::Fraction),
];

pub(crate) fn read_tank(rd: &mut Reader, t: &Spanned<RawTank>) -> Option<Tank> {
    let at = At::new("tank", t.span());
    let raw = t.get_ref();
    let shape = match &raw.shape {
        None => Some("cylinder".to_string()),
        Some(v) => rd
            .string(v, "tank.shape", "\"cylinder\" or \"sphere\"")
            .and_then(|s| {
                if s == "cylinder" || s == "sphere" {
                    Some(s)
                } else {
                    rd.push(
                        "unknown-shape",
                        "tank.shape",
                        v.span(),
                        format!("unknown tank shape \"{s}\""),
                        Some(
                            "the tank is a \"cylinder\" (the default) or a \"sphere\"".to_string(),
                        ),
                    );
                    None
                }
            }),
    }?;
    let radius = rd.req_quantity(&raw.inner_radius, &at, "inner_radius", Dimension::Length);
    let radius = rd.check(
        radius,
        raw.inner_radius.as_ref(),
        "tank.inner_radius",
        |x| x > 0.0,
        "must be greater than zero",
    );
    if shape == "sphere" {
        if let Some(v) = &raw.length {
            rd.push(
                "unused-key",
                "tank.length",
                v.span(),
                "a spherical tank has no `length`",
                Some("a spherical tank is given by inner_radius alone".to_string()),
            );
        }
        return Some(Tank::Sphere {
            inner_radius: radius?,
        });
    }
    let length = rd.req_quantity(&raw.length, &at, "length", Dimension::Length);
    let length = rd.check(
        length,
        raw.length.as_ref(),
        "tank.length",
        |x| x > 0.0,
        "must be greater than zero",
    );
    Some(Tank::Cylinder {
        inner_radius: radius?,
        length: length?,
    })
}

pub(crate) fn gas_name(s: &str) -> Option<&'static str> {
    GASES
        .iter()
        .copied()
        .find(|g| g.eq_ignore_ascii_case(s.trim()))
}

pub(crate) fn unknown_gas(rd: &mut Reader, key: &str, span: Range<usize>, s: &str) {
    let help = match nearest(s, GASES) {
        Some(g) => format!(
            "did you mean \"{g}\"? gases: {}, or a mixture such as species = {{ SF6 = 0.5, N2 = 0.5 }}",
            GASES.join(", ")
        ),
        None => format!(
            "gases: {}, or a mixture such as species = {{ SF6 = 0.5, N2 = 0.5 }}",
            GASES.join(", ")
        ),
    };
    rd.push(
        "unknown-gas",
        key,
        span,
        format!("unknown gas \"{s}\""),
        Some(help),
    );
}

pub(crate) fn read_gas(rd: &mut Reader, g: &Spanned<RawGas>) -> Option<Gas> {
    let at = At::new("gas", g.span());
    let raw = g.get_ref();
    let species = rd
        .required(&raw.species, &at, "species", "\"SF6\"")
        .and_then(|v| match v.get_ref() {
            RawValue::Str(s) => match gas_name(s) {
                Some(name) => Some((name.to_string(), vec![(name.to_string(), 1.0)])),
                None => {
                    unknown_gas(rd, "gas.species", v.span(), s);
                    None
                }
            },
            RawValue::Table(entries) => read_mixture(rd, v, entries),
            other => {
                rd.push(
                    "wrong-type",
                    "gas.species",
                    v.span(),
                    format!(
                        "`gas.species` must be a gas name or a mixture table, found {}",
                        other.kind()
                    ),
                    Some(format!(
                        "write species = \"SF6\" ({}) or species = {{ SF6 = 0.5, N2 = 0.5 }}",
                        GASES.join(", ")
                    )),
                );
                None
            }
        });
    let p = rd.req_quantity(&raw.pressure, &at, "pressure", Dimension::Pressure);
    let p = rd.check(
        p,
        raw.pressure.as_ref(),
        "gas.pressure",
        |x| x > 0.0,
        "must be greater than zero (pressures are absolute)",
    );
    // Outside these bounds no gas criterion of holdoff is applied (common practice for
    // insulating gases in accelerator tanks; the fits themselves are narrower, and each row
    // states its own validity).
    let p = rd.check(
        p,
        raw.pressure.as_ref(),
        "gas.pressure",
        |x| (GAS_PRESSURE_PA.0..=GAS_PRESSURE_PA.1).contains(&x),
        "is outside 1 mbar to 100 bar absolute, where holdoff's gas criteria are applied",
    );
    let t = rd.req_quantity(&raw.temperature, &at, "temperature", Dimension::Temperature);
    let t = rd.check(
        t,
        raw.temperature.as_ref(),
        "gas.temperature",
        |x| x > 0.0,
        "is at or below absolute zero",
    );
    let t = rd.check(
        t,
        raw.temperature.as_ref(),
        "gas.temperature",
        |x| (GAS_TEMPERATURE_K.0..=GAS_TEMPERATURE_K.1).contains(&x),
        "is outside -100 degC to 200 degC, where holdoff's gas criteria are applied",
    );
    let t_min = rd.opt_quantity(
        &raw.min_temperature,
        &at,
        "min_temperature",
        Dimension::Temperature,
    );
    let t_min = rd.check(
        t_min,
        raw.min_temperature.as_ref(),
        "gas.min_temperature",
        |x| (GAS_TEMPERATURE_K.0..=GAS_TEMPERATURE_K.1).contains(&x),
        "is outside -100 degC to 200 degC, where holdoff's gas criteria are applied",
    );
    if let (Some(t), Some(t_min), Some(v)) = (t, t_min, raw.min_temperature.as_ref())
        && t_min > t
    {
        rd.out_of_range(
            v,
            "gas.min_temperature",
            format!(
                "`gas.min_temperature = {}` is above `gas.temperature` ({:.2} degC)",
                v.get_ref().show(),
                t - 273.15
            ),
            Some(
                "give the lowest temperature the machine sees, at or below the operating \
                 temperature"
                    .to_string(),
            ),
        );
        return None;
    }
    let (species, components) = species?;
    let (p, t) = (p?, t?);
    // The gas must be a gas at the operating temperature and at the lowest one: the filling
    // (its density) stays, so at the lowest temperature the pressure is that of the same
    // density there.
    let states = [(t, "gas.pressure", raw.pressure.as_ref(), p)]
        .into_iter()
        .chain(t_min.map(|tm| {
            let p_cold = crate::thermo::same_density_pressure_pa(&components, p, t, tm);
            (
                tm,
                "gas.min_temperature",
                raw.min_temperature.as_ref(),
                p_cold,
            )
        }));
    for (temp, key, leaf, p_at) in states {
        let Some(c) = crate::thermo::condensation(&components, p_at, temp) else {
            continue;
        };
        let Some(v) = leaf.or(raw.pressure.as_ref()) else {
            continue;
        };
        rd.push(
            "condensation",
            key,
            v.span(),
            format!(
                "`{key} = {}`: at {:.2} degC the gas is at {:.3} bar and {}",
                v.get_ref().show(),
                temp - 273.15,
                p_at / 1e5,
                c.describe()
            ),
            Some(
                "lower gas.pressure, raise the (lowest) temperature, or use a mixture with a \
                 lower fraction of the condensable gas"
                    .to_string(),
            ),
        );
        return None;
    }
    Some(Gas {
        species,
        components,
        pressure_pa: p,
        temperature_k: t,
    })
}

/// Gas pressures accepted, Pa (1 mbar to 100 bar absolute).
pub const GAS_PRESSURE_PA: (f64, f64) = (1e2, 1e7);
/// Gas temperatures accepted, K (−100 °C to 200 °C).
pub const GAS_TEMPERATURE_K: (f64, f64) = (173.15, 473.15);

/// A mixture `{ SF6 = 0.5, N2 = 0.5 }` (mole fractions, numbers or percentages) summing to 1.
pub(crate) fn read_mixture(
    rd: &mut Reader,
    v: &Spanned<RawValue>,
    entries: &[(Spanned<String>, Spanned<RawValue>)],
) -> Option<(String, Vec<(String, f64)>)> {
    let mut comps = Vec::new();
    let mut ok = true;
    // In the order written (the parser keeps table keys sorted).
    let mut entries: Vec<&(Spanned<String>, Spanned<RawValue>)> = entries.iter().collect();
    entries.sort_by_key(|(k, _)| k.span().start);
    for (name, frac) in entries {
        let key = format!("gas.species.{}", name.get_ref());
        let Some(g) = gas_name(name.get_ref()) else {
            unknown_gas(rd, &key, name.span(), name.get_ref());
            ok = false;
            continue;
        };
        let x = match frac.get_ref() {
            RawValue::Str(_) => rd.quantity(frac, &key, Dimension::Ratio),
            _ => rd.number(frac, &key),
        };
        match rd.check(
            x,
            Some(frac),
            &key,
            |x| x > 0.0 && x <= 1.0,
            "must be a mole fraction in (0, 1]",
        ) {
            Some(x) => comps.push((g.to_string(), x)),
            None => ok = false,
        }
    }
    if !ok {
        return None;
    }
    if comps.is_empty() {
        rd.push(
            "out-of-range",
            "gas.species",
            v.span(),
            "the gas mixture is empty",
            Some("write species = { SF6 = 0.5, N2 = 0.5 }".to_string()),
        );
        return None;
    }
    let sum: f64 = comps.iter().map(|c| c.1).sum();
    if (sum - 1.0).abs() > 1e-6 {
        rd.push(
            "mixture-sum",
            "gas.species",
            v.span(),
            format!("the mole fractions of the gas mixture add up to {sum}, not 1"),
            Some("give fractions that sum to 1, e.g. { SF6 = 0.2, N2 = 0.8 }".to_string()),
        );
        return None;
    }
    let label = comps
        .iter()
        .map(|(g, x)| format!("{g}:{x}"))
        .collect::<Vec<_>>()
        .join(",");
    let label = if comps.len() == 1 {
        comps[0].0.clone()
    } else {
        label
    };
    Some((label, comps))
}

pub(crate) fn read_multiplier(rd: &mut Reader, m: &Spanned<RawMultiplier>) -> Option<Multiplier> {
    let at = At::new("multiplier", m.span());
    let raw = m.get_ref();
    let topology = rd
        .required(&raw.topology, &at, "topology", "\"half-wave\"")
        .and_then(|v| {
            let s = rd.string(v, "multiplier.topology", "\"half-wave\" or \"symmetric\"")?;
            if s == "half-wave" || s == "symmetric" {
                Some(s)
            } else {
                rd.push(
                    "unknown-topology",
                    "multiplier.topology",
                    v.span(),
                    format!("unknown multiplier topology \"{s}\""),
                    Some("topologies: \"half-wave\", \"symmetric\"".to_string()),
                );
                None
            }
        });
    let stages = rd
        .required(&raw.stages, &at, "stages", "10")
        .and_then(|v| rd.count(v, "multiplier.stages", 1));
    let mut pos = |leaf: &Option<Spanned<RawValue>>, key: &str, dim: Dimension, zero_ok: bool| {
        let x = rd.req_quantity(leaf, &at, key, dim);
        let rule = if zero_ok {
            "must not be negative"
        } else {
            "must be greater than zero"
        };
        rd.check(
            x,
            leaf.as_ref(),
            &at.key(key),
            |x| if zero_ok { x >= 0.0 } else { x > 0.0 },
            rule,
        )
    };
    let c = pos(
        &raw.stage_capacitance,
        "stage_capacitance",
        Dimension::Capacitance,
        false,
    );
    let f = pos(
        &raw.drive_frequency,
        "drive_frequency",
        Dimension::Frequency,
        false,
    );
    let v = pos(&raw.drive_peak, "drive_peak", Dimension::Voltage, false);
    let i = pos(&raw.load_current, "load_current", Dimension::Current, true);
    let stray = match &raw.stray_capacitance {
        None => Some(None),
        Some(s) if matches!(s.get_ref(), RawValue::Str(t) if t.trim() == "auto") => Some(None),
        Some(s) => {
            let x = rd.quantity(s, "multiplier.stray_capacitance", Dimension::Capacitance);
            rd.check(
                x,
                Some(s),
                "multiplier.stray_capacitance",
                |x| x >= 0.0,
                "must not be negative",
            )
            .map(Some)
        }
    };
    Some(Multiplier {
        topology: topology?,
        stages: stages?,
        stage_capacitance_f: c?,
        drive_frequency_hz: f?,
        drive_peak_v: v?,
        load_current_a: i?,
        stray_capacitance_f: stray?,
    })
}

pub(crate) fn read_checks(rd: &mut Reader, c: &Spanned<RawChecks>) -> Option<Checks> {
    let raw = c.get_ref();
    let mut ok = true;
    let design_factor = match &raw.design_factor {
        None => Checks::default().design_factor,
        Some(v) => {
            let x = rd.number(v, "checks.design_factor");
            match rd.check(
                x,
                Some(v),
                "checks.design_factor",
                |x| x >= 1.0,
                "must be at least 1 (a limit divided by a peak)",
            ) {
                Some(x) => x,
                None => {
                    ok = false;
                    0.0
                }
            }
        }
    };
    let leaves: [&Option<Spanned<RawValue>>; 7] = [
        &raw.gas_field_limit,
        &raw.area_derating,
        &raw.vacuum_field_limit,
        &raw.cranberg_constant,
        &raw.insulator_vacuum_limit,
        &raw.insulator_gas_fraction,
        &raw.corona_surface_factor,
    ];
    let mut overrides = Vec::new();
    for ((key, kind), leaf) in OVERRIDES.iter().zip(leaves) {
        let Some(v) = leaf else { continue };
        let path = format!("checks.{key}");
        let x = match kind {
            OverrideKind::Field => {
                let x = rd.quantity(v, &path, Dimension::Field);
                rd.check(x, Some(v), &path, |x| x > 0.0, "must be greater than zero")
            }
            OverrideKind::Fraction => {
                let x = rd.number(v, &path);
                rd.check(
                    x,
                    Some(v),
                    &path,
                    |x| x > 0.0 && x <= 1.0,
                    "must be a number in (0, 1]",
                )
            }
            OverrideKind::Number(unit) => {
                let x = rd.number(v, &path);
                rd.check(
                    x,
                    Some(v),
                    &path,
                    |x| x > 0.0,
                    &format!("must be a positive number (in {unit})"),
                )
            }
        };
        match x {
            Some(x) => overrides.push((key.to_string(), x)),
            None => ok = false,
        }
    }
    ok.then_some(Checks {
        design_factor,
        overrides,
    })
}

pub(crate) fn read_mesh(rd: &mut Reader, m: &Spanned<RawMesh>, tank: &Tank) -> Option<MeshSpec> {
    let raw = m.get_ref();
    let default = MeshSpec::default_for(&tank.bbox());
    let b = tank.bbox();
    let size = (b.r_max - b.r_min).max(b.z_max - b.z_min);
    let cell = match &raw.cell {
        None => Some(default.cell),
        Some(v) => {
            let x = rd.quantity(v, "mesh.cell", Dimension::Length);
            let x = rd.check(
                x,
                Some(v),
                "mesh.cell",
                |x| x > 0.0,
                "must be greater than zero",
            );
            let x = rd.check(
                x,
                Some(v),
                "mesh.cell",
                |x| x < size,
                "is larger than the tank",
            );
            // Finer than 1e-5 of the domain would need over 1e10 cells: a unit mistake.
            rd.check(
                x,
                Some(v),
                "mesh.cell",
                |x| x >= 1e-5 * size,
                &format!(
                    "is finer than 1/100000 of the tank ({}); check the unit",
                    format_si(size, Dimension::Length)
                ),
            )
        }
    };
    let max_cell = match (&raw.max_cell, cell) {
        (None, Some(c)) => Some(if raw.cell.is_some() {
            8.0 * c
        } else {
            default.max_cell
        }),
        (None, None) => None,
        (Some(v), c) => {
            let x = rd.quantity(v, "mesh.max_cell", Dimension::Length);
            let rule = format!(
                "must not be smaller than the cell ({})",
                c.map_or("?".to_string(), |c| format_si(c, Dimension::Length))
            );
            rd.check(
                x,
                Some(v),
                "mesh.max_cell",
                |x| c.is_none_or(|c| x >= c),
                &rule,
            )
        }
    };
    let growth = match &raw.growth {
        None => Some(default.growth),
        Some(v) => {
            let x = rd.number(v, "mesh.growth");
            rd.check(
                x,
                Some(v),
                "mesh.growth",
                |x| x > 1.0 && x <= 2.0,
                "must be a ratio above 1 and at most 2",
            )
        }
    };
    let accuracy = match &raw.accuracy {
        None => Some(default.accuracy),
        Some(v) => {
            let x = rd.quantity(v, "mesh.accuracy", Dimension::Ratio);
            rd.check(
                x,
                Some(v),
                "mesh.accuracy",
                |x| (0.0005..=0.2).contains(&x),
                "must be a relative error between 0.05 % and 20 %",
            )
        }
    };
    // A hand-set cell is the expert override: it holds on every surface and is not refined.
    let cells_per_radius = if raw.cell.is_some() {
        0.0
    } else {
        default.cells_per_radius
    };
    Some(MeshSpec {
        accuracy: accuracy?,
        cells_per_radius,
        ..MeshSpec::graded(cell?, max_cell?, growth?)
    })
}

pub(crate) fn read_probe(
    rd: &mut Reader,
    p: &Spanned<RawProbe>,
    k: usize,
    tank: Option<&Tank>,
) -> Option<Probe> {
    let at = At::new(format!("probe[{}]", k + 1), p.span());
    let raw = p.get_ref();
    let name = match &raw.name {
        Some(v) => rd.name(v, &at.key("name")),
        None => Some(format!("probe {}", k + 1)),
    };
    let v = rd.required(&raw.at, &at, "at", "[\"0 mm\", \"900 mm\"]")?;
    let [r, z] = rd.pair(v, &at.key("at"), Dimension::Length)?;
    let point = Point::new(r, z);
    if r < 0.0 {
        rd.out_of_range(
            v,
            &at.key("at"),
            format!("`{}` has a negative radius", at.key("at")),
            Some("points are [r, z] with r >= 0".to_string()),
        );
        return None;
    }
    if let Some(t) = tank
        && t.sdf_inside(point) > 0.0
    {
        rd.push(
            "outside-tank",
            at.key("at"),
            v.span(),
            format!(
                "probe at r = {}, z = {} is outside the tank",
                format_si(r, Dimension::Length),
                format_si(z, Dimension::Length)
            ),
            None,
        );
        return None;
    }
    Some(Probe {
        name: name?,
        at: point,
    })
}

pub(crate) fn read_permittivity(
    rd: &mut Reader,
    material: &Option<Spanned<RawValue>>,
    eps_r: &Option<Spanned<RawValue>>,
    at: &At,
    line: usize,
) -> Option<(f64, Option<String>, String)> {
    match (material, eps_r) {
        (Some(m), Some(e)) => {
            rd.push(
                "conflicting-keys",
                at.key("eps_r"),
                e.span(),
                format!("`{}` gives both `material` and `eps_r`", at.path),
                Some("give one: a material from the built-in table, or eps_r".to_string()),
            );
            let _ = m;
            None
        }
        (None, None) => {
            rd.missing(at, "material", "\"alumina\" (or eps_r = 9.4)");
            None
        }
        (Some(m), None) => {
            let s = rd.string(
                m,
                &at.key("material"),
                "a material name such as \"alumina\"",
            )?;
            match materials::lookup(&s) {
                Some(mat) => Some((mat.eps_r, Some(mat.name.to_string()), mat.source_text())),
                None => {
                    let names = materials::names();
                    let help = match nearest(&s, &names) {
                        Some(n) => format!(
                            "did you mean \"{n}\"? materials: {}; or give eps_r",
                            names.join(", ")
                        ),
                        None => format!("materials: {}; or give eps_r", names.join(", ")),
                    };
                    rd.push(
                        "unknown-material",
                        at.key("material"),
                        m.span(),
                        format!("unknown material \"{s}\""),
                        Some(help),
                    );
                    None
                }
            }
        }
        (None, Some(e)) => {
            let key = at.key("eps_r");
            let x = rd.number(e, &key);
            let x = rd.check(
                x,
                Some(e),
                &key,
                |x| x >= 1.0,
                "must be at least 1 (relative permittivity)",
            )?;
            Some((
                x,
                None,
                format!("eps_r given in the design file (line {line})"),
            ))
        }
    }
}
