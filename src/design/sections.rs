//! The single-table sections of the design file: `[tank]`, `[multiplier]`,
//! `[checks]`, `[mesh]`, `[[probe]]`, and the permittivity of a `[[dielectric]]`.
//!
//! Input: the raw table with its spans. Output: the `model` value in SI units, or located
//! problems (unknown gas, pressure or temperature out of range, design factor below 1, ...).

use super::problem::nearest;
use super::read::{At, Reader};
use super::schema::{RawChecks, RawMesh, RawMultiplier, RawProbe, RawTank, RawValue};
use crate::geometry::Point;
use crate::materials;
use crate::model::{Checks, MeshSpec, Multiplier, Probe, Tank};
use crate::units::{Dimension, format_si};
use toml::Spanned;

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
