//! From the raw design to the validated `model::Model`: units to SI, names resolved, columns
//! expanded, values and geometry checked.
//!
//! Input: a [`RawDesign`] and the file text (for line numbers). Output: the `Model`, or every
//! problem found. The raw stage only knows keys and spans; everything that needs the meaning
//! of a key, or the whole picture (references between tables, geometry), is here.

use super::checks::{self, Body, Canon, Group, Kind};
use super::generators::{self, ColumnSpec};
use super::materials;
use super::potential::{self, PotentialText};
use super::problem::{LineIndex, Problems, nearest};
use super::read::{At, Reader};
use super::schema::{
    RawChecks, RawDesign, RawGas, RawMesh, RawMultiplier, RawProbe, RawTank, RawValue,
};
use super::shapes;
use crate::geometry::{Point, Shape};
use crate::model::{
    Checks, Column, Conductor, Dielectric, Gas, MeshSpec, Model, Multiplier, Origin, PotentialSpec,
    Probe, Tank, VacuumRegion, Wall,
};
use crate::units::{Dimension, format_si};
use std::collections::HashMap;
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

struct DirectConductor {
    name: Option<String>,
    shape: Option<Shape>,
    potential: Option<(PotentialText, Range<usize>)>,
    at: At,
    line: usize,
    name_span: Range<usize>,
}

struct Region {
    name: String,
    shape: Option<Shape>,
    eps: Option<(f64, Option<String>, String)>,
    at: At,
    line: usize,
    name_span: Range<usize>,
}

/// Validates a raw design. Returns the model only when no problem was found.
pub(crate) fn validate(
    raw: &RawDesign,
    text: &str,
    file_name: &str,
    problems: &mut Problems,
) -> Option<Model> {
    let lines = LineIndex::new(text);
    let line_of = |span: &Range<usize>| lines.locate(span.start).0;
    let mut rd = Reader { problems };
    let root = At::new("", 0..0);

    let title = match &raw.title {
        Some(v) => rd.string(v, "title", "a title in quotes"),
        None => Some(file_name.to_string()),
    };
    let tank = match &raw.tank {
        Some(t) => read_tank(&mut rd, t),
        None => {
            rd.missing(
                &root,
                "[tank]",
                "a [tank] section with inner_radius and length",
            );
            None
        }
    };
    let gas = raw.gas.as_ref().map(|g| read_gas(&mut rd, g));
    let terminal_voltage = match &raw.terminal {
        Some(t) => {
            let at = At::new("terminal", t.span());
            let v = rd.req_quantity(&t.get_ref().voltage, &at, "voltage", Dimension::Voltage);
            rd.check(
                v,
                t.get_ref().voltage.as_ref(),
                "terminal.voltage",
                |v| v != 0.0,
                "is zero: give the working terminal voltage",
            )
        }
        None => {
            rd.missing(
                &root,
                "[terminal]",
                "a [terminal] section with voltage = \"750 kV\"",
            );
            None
        }
    };
    let multiplier = raw.multiplier.as_ref().map(|m| read_multiplier(&mut rd, m));
    let checks = match &raw.checks {
        Some(c) => read_checks(&mut rd, c),
        None => Some(Checks::default()),
    };

    // Direct conductors.
    let mut direct: Vec<DirectConductor> = Vec::new();
    for (k, c) in raw.conductor.iter().enumerate() {
        let at = At::new(format!("conductor[{}]", k + 1), c.span());
        let line = line_of(&c.span());
        let cr = c.get_ref();
        let name_span = cr.name.as_ref().map_or(c.span(), |v| v.span());
        let name = rd
            .required(&cr.name, &at, "name", "\"terminal\"")
            .and_then(|v| rd.name(v, &at.key("name")));
        if let (Some(n), Some(v)) = (&name, &cr.name)
            && n.eq_ignore_ascii_case("ground")
        {
            rd.push(
                "reserved-name",
                at.key("name"),
                v.span(),
                "\"ground\" is reserved for the tank in `from`/`to`; a conductor cannot use it",
                Some("name the conductor after what it is, e.g. \"ground-end shield\"".to_string()),
            );
        }
        let shape = shapes::read_shape(&mut rd, &cr.shape_keys(), &at);
        let potential = rd
            .required(&cr.potential, &at, "potential", "\"ground\"")
            .and_then(|v| {
                let s = rd.string(v, &at.key("potential"), potential::ACCEPTED)?;
                match potential::parse(&s) {
                    Ok(p) => Some((p, v.span())),
                    Err((msg, help)) => {
                        rd.push(
                            "bad-potential",
                            at.key("potential"),
                            v.span(),
                            msg,
                            Some(help),
                        );
                        None
                    }
                }
            });
        direct.push(DirectConductor {
            name,
            shape,
            potential,
            at,
            line,
            name_span,
        });
    }

    // Dielectrics and vacuum regions.
    let mut dielectrics: Vec<Region> = Vec::new();
    for (k, d) in raw.dielectric.iter().enumerate() {
        let at = At::new(format!("dielectric[{}]", k + 1), d.span());
        let dr = d.get_ref();
        let (name, name_span) = region_name(&mut rd, &dr.name, &at, "dielectric", k, d.span());
        let shape = shapes::read_shape(&mut rd, &dr.shape_keys(), &at);
        let eps = read_permittivity(&mut rd, &dr.material, &dr.eps_r, &at, line_of(&d.span()));
        dielectrics.push(Region {
            name,
            shape,
            eps,
            at,
            line: line_of(&d.span()),
            name_span,
        });
    }
    let mut vacuum: Vec<Region> = Vec::new();
    for (k, v) in raw.vacuum.iter().enumerate() {
        let at = At::new(format!("vacuum[{}]", k + 1), v.span());
        let vr = v.get_ref();
        let (name, name_span) = region_name(&mut rd, &vr.name, &at, "vacuum", k, v.span());
        let shape = shapes::read_shape(&mut rd, &vr.shape_keys(), &at);
        vacuum.push(Region {
            name,
            shape,
            eps: None,
            at,
            line: line_of(&v.span()),
            name_span,
        });
    }

    // Columns.
    let several = raw.column.len() > 1;
    let mut columns: Vec<Option<ColumnSpec>> = Vec::new();
    for (k, c) in raw.column.iter().enumerate() {
        let at = At::new(format!("column[{}]", k + 1), c.span());
        let line = line_of(&c.span());
        columns.push(generators::read_column(
            &mut rd,
            c.get_ref(),
            at,
            line,
            several,
        ));
    }
    let column_names: Vec<Option<String>> = raw
        .column
        .iter()
        .zip(&columns)
        .map(|(r, c)| {
            c.as_ref().map(|c| c.name.clone()).or_else(|| {
                r.get_ref().name.as_ref().and_then(|v| match v.get_ref() {
                    RawValue::Str(s) => Some(s.trim().to_string()),
                    _ => None,
                })
            })
        })
        .collect();

    // Resolve the column ends to conductor indices (direct conductors come first in the model).
    let conductor_names: Vec<Option<String>> = direct.iter().map(|d| d.name.clone()).collect();
    let mut ends: Vec<Option<(Option<usize>, Option<usize>)>> = Vec::new();
    for spec in &columns {
        let Some(spec) = spec else {
            ends.push(None);
            continue;
        };
        let from = resolve_end(&mut rd, &conductor_names, &spec.from, &spec.at.key("from"));
        let to = resolve_end(&mut rd, &conductor_names, &spec.to, &spec.at.key("to"));
        if let (Some(f), Some(t)) = (from, to)
            && f.is_some()
            && f == t
        {
            rd.push(
                "column-fit",
                spec.at.key("to"),
                spec.to.1.clone(),
                format!(
                    "column `{}` starts and ends on the same conductor",
                    spec.name
                ),
                Some(
                    "`from` and `to` name the conductors at the two ends of the column".to_string(),
                ),
            );
        }
        ends.push(match (from, to) {
            (Some(f), Some(t)) => Some((f, t)),
            _ => None,
        });
    }

    // Resolve the direct conductors' potentials.
    let stages = multiplier
        .as_ref()
        .and_then(|m| m.as_ref().map(|m| m.stages));
    let mut specs: Vec<Option<PotentialSpec>> = Vec::new();
    for d in &direct {
        let Some((p, span)) = &d.potential else {
            specs.push(None);
            continue;
        };
        let key = d.at.key("potential");
        specs.push(resolve_potential(
            &mut rd,
            p,
            span,
            &key,
            &column_names,
            &columns,
            stages,
            multiplier.is_some(),
        ));
    }

    // Canonical potentials, for overlap and wall checks.
    let vt = terminal_voltage.unwrap_or(1.0);
    let canon_of_direct = |i: usize| -> Option<Canon> {
        canon(specs.get(i)?.as_ref()?, vt, &ends, &columns, &specs, 0)
    };

    // Bodies: direct conductors, generated electrodes, dielectrics, vacuum.
    let mut bodies: Vec<Body> = Vec::new();
    let mut model_conductors: Vec<Conductor> = Vec::new();
    let mut complete = true;
    for (i, d) in direct.iter().enumerate() {
        match (&d.name, &d.shape, &specs[i]) {
            (Some(name), Some(shape), Some(spec)) => {
                let c = canon_of_direct(i);
                bodies.push(Body {
                    name: name.clone(),
                    kind: Kind::Conductor,
                    shape: shape.clone(),
                    canon: c,
                    potential_text: potential_text(spec, &column_names, vt),
                    is_terminal: matches!(d.potential, Some((PotentialText::Terminal(f), _)) if f == 1.0),
                    key: d.at.path.clone(),
                    span: d.name_span.clone(),
                    line: d.line,
                    group: Group::Direct(i),
                });
                model_conductors.push(Conductor {
                    name: name.clone(),
                    shape: shape.clone(),
                    potential: spec.clone(),
                    origin: Origin::Direct { line: Some(d.line) },
                });
            }
            _ => complete = false,
        }
    }
    let mut model_columns: Vec<Column> = Vec::new();
    for (ci, spec) in columns.iter().enumerate() {
        let (Some(spec), Some((from, to))) = (spec, ends[ci]) else {
            complete = false;
            continue;
        };
        let mut electrodes = Vec::with_capacity(spec.electrodes);
        let generated = generators::expand(spec, ci, several);
        for (c, hoop) in generated {
            if hoop {
                electrodes.push(model_conductors.len());
            }
            let node = match c.potential {
                PotentialSpec::Grading { node, .. } => node,
                _ => 0,
            };
            bodies.push(Body {
                name: c.name.clone(),
                kind: Kind::Conductor,
                shape: c.shape.clone(),
                canon: Some(Canon::Node { column: ci, node }),
                potential_text: potential_text(&c.potential, &column_names, vt),
                is_terminal: false,
                key: spec.at.path.clone(),
                span: spec.at.span.clone(),
                line: spec.line,
                group: Group::Column(ci),
            });
            model_conductors.push(c);
        }
        model_columns.push(Column {
            name: spec.name.clone(),
            from,
            to,
            electrodes,
            resistor_ohm: spec.resistor_ohm,
            tolerance: spec.tolerance,
            strings: spec.strings,
            protective_gap_v: spec.protective_gap_v,
        });
    }
    let mut model_dielectrics = Vec::new();
    for d in &dielectrics {
        match (&d.shape, &d.eps) {
            (Some(shape), Some((eps_r, material, source))) => {
                bodies.push(region_body(d, shape, Kind::Dielectric));
                model_dielectrics.push(Dielectric {
                    name: d.name.clone(),
                    shape: shape.clone(),
                    eps_r: *eps_r,
                    material: material.clone(),
                    source: source.clone(),
                    origin: Origin::Direct { line: Some(d.line) },
                });
            }
            _ => complete = false,
        }
    }
    let mut model_vacuum = Vec::new();
    for v in &vacuum {
        match &v.shape {
            Some(shape) => {
                bodies.push(region_body(v, shape, Kind::Vacuum));
                model_vacuum.push(VacuumRegion {
                    name: v.name.clone(),
                    shape: shape.clone(),
                    origin: Origin::Direct { line: Some(v.line) },
                });
            }
            None => complete = false,
        }
    }

    check_duplicates(&mut rd, &bodies, &columns);

    // Geometry.
    let samples = checks::samples(&bodies);
    if let Some(tank) = &tank {
        checks::check_tank(&mut rd, tank, &bodies, &samples);
    }
    checks::check_overlaps(&mut rd, &bodies, &samples);
    for (ci, spec) in columns.iter().enumerate() {
        if let (Some(spec), Some((from, to))) = (spec, ends[ci]) {
            check_column_fit(&mut rd, spec, ci, from, to, &bodies);
        }
    }

    let mesh = match (&raw.mesh, &tank) {
        (Some(m), Some(t)) => read_mesh(&mut rd, m, t),
        (None, Some(t)) => Some(MeshSpec::default_for(&t.bbox())),
        _ => None,
    };
    let probes: Vec<Option<Probe>> = raw
        .probe
        .iter()
        .enumerate()
        .map(|(k, p)| read_probe(&mut rd, p, k, tank.as_ref()))
        .collect();

    if !rd.problems.is_empty() || !complete {
        return None;
    }
    let mut model = Model::new(&title?, tank?, terminal_voltage?);
    model.ends = Wall::Grounded;
    model.side = Wall::Grounded;
    model.gas = match gas {
        Some(g) => Some(g?),
        None => None,
    };
    model.conductors = model_conductors;
    model.dielectrics = model_dielectrics;
    model.vacuum = model_vacuum;
    model.columns = model_columns;
    model.multiplier = match multiplier {
        Some(m) => Some(m?),
        None => None,
    };
    model.checks = checks?;
    model.mesh = mesh?;
    model.probes = probes.into_iter().collect::<Option<Vec<_>>>()?;
    Some(model)
}

fn region_name(
    rd: &mut Reader,
    leaf: &Option<Spanned<RawValue>>,
    at: &At,
    what: &str,
    k: usize,
    span: Range<usize>,
) -> (String, Range<usize>) {
    match leaf {
        Some(v) => (
            rd.name(v, &at.key("name"))
                .unwrap_or_else(|| format!("{what} {}", k + 1)),
            v.span(),
        ),
        None => (format!("{what} {}", k + 1), span),
    }
}

fn region_body(r: &Region, shape: &Shape, kind: Kind) -> Body {
    Body {
        name: r.name.clone(),
        kind,
        shape: shape.clone(),
        canon: None,
        potential_text: String::new(),
        is_terminal: false,
        key: r.at.path.clone(),
        span: r.name_span.clone(),
        line: r.line,
        group: Group::Direct(usize::MAX),
    }
}

fn read_tank(rd: &mut Reader, t: &Spanned<RawTank>) -> Option<Tank> {
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

fn gas_name(s: &str) -> Option<&'static str> {
    GASES
        .iter()
        .copied()
        .find(|g| g.eq_ignore_ascii_case(s.trim()))
}

fn unknown_gas(rd: &mut Reader, key: &str, span: Range<usize>, s: &str) {
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

fn read_gas(rd: &mut Reader, g: &Spanned<RawGas>) -> Option<Gas> {
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
    let t = rd.req_quantity(&raw.temperature, &at, "temperature", Dimension::Temperature);
    let t = rd.check(
        t,
        raw.temperature.as_ref(),
        "gas.temperature",
        |x| x > 0.0,
        "is at or below absolute zero",
    );
    let (species, components) = species?;
    Some(Gas {
        species,
        components,
        pressure_pa: p?,
        temperature_k: t?,
    })
}

/// A mixture `{ SF6 = 0.5, N2 = 0.5 }` (mole fractions, numbers or percentages) summing to 1.
fn read_mixture(
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

fn read_multiplier(rd: &mut Reader, m: &Spanned<RawMultiplier>) -> Option<Multiplier> {
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

fn read_checks(rd: &mut Reader, c: &Spanned<RawChecks>) -> Option<Checks> {
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

fn read_mesh(rd: &mut Reader, m: &Spanned<RawMesh>, tank: &Tank) -> Option<MeshSpec> {
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
    Some(MeshSpec {
        cell: cell?,
        max_cell: max_cell?,
        growth: growth?,
    })
}

fn read_probe(
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

fn read_permittivity(
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

fn resolve_end(
    rd: &mut Reader,
    names: &[Option<String>],
    end: &(String, Range<usize>),
    key: &str,
) -> Option<Option<usize>> {
    if end.0.eq_ignore_ascii_case("ground") {
        return Some(None);
    }
    // Indices among the conductors that will enter the model (every direct conductor is valid
    // when the model is built).
    if let Some(i) = names
        .iter()
        .position(|n| n.as_deref() == Some(end.0.as_str()))
    {
        return Some(Some(i));
    }
    let known: Vec<&str> = names.iter().flatten().map(String::as_str).collect();
    let help = match nearest(&end.0, &known) {
        Some(n) => format!(
            "did you mean \"{n}\"? conductors: {}; or \"ground\" for the tank",
            known.join(", ")
        ),
        None => format!(
            "conductors: {}; or \"ground\" for the tank",
            if known.is_empty() {
                "none".to_string()
            } else {
                known.join(", ")
            }
        ),
    };
    rd.push(
        "unknown-conductor",
        key,
        end.1.clone(),
        format!("`{key}`: no conductor is named \"{}\"", end.0),
        Some(help),
    );
    None
}

#[allow(clippy::too_many_arguments)]
fn resolve_potential(
    rd: &mut Reader,
    p: &PotentialText,
    span: &Range<usize>,
    key: &str,
    column_names: &[Option<String>],
    columns: &[Option<ColumnSpec>],
    stages: Option<usize>,
    has_multiplier: bool,
) -> Option<PotentialSpec> {
    match p {
        PotentialText::Ground => Some(PotentialSpec::Ground),
        PotentialText::Absolute(v) => Some(PotentialSpec::Absolute { volts: *v }),
        PotentialText::Terminal(f) => {
            if (0.0..=1.0).contains(f) {
                Some(PotentialSpec::Terminal { fraction: *f })
            } else {
                rd.push("out-of-range", key, span.clone(), format!("`{key}`: a fraction of the terminal voltage must lie between 0 and 1, found {f}"), Some("for other potentials give a voltage, e.g. \"-5 kV\"".to_string()));
                None
            }
        }
        PotentialText::Grading { column, node } => {
            let index = match column {
                None if column_names.is_empty() => {
                    rd.push(
                        "unknown-column",
                        key,
                        span.clone(),
                        format!("`{key}` refers to a grading node, but the file has no [[column]]"),
                        Some("add a [[column]], or give the potential as a voltage".to_string()),
                    );
                    return None;
                }
                None => 0,
                Some(name) => match column_names
                    .iter()
                    .position(|n| n.as_deref() == Some(name.as_str()))
                {
                    Some(i) => i,
                    None => {
                        let known: Vec<&str> =
                            column_names.iter().flatten().map(String::as_str).collect();
                        let help = match nearest(name, &known) {
                            Some(n) => {
                                format!("did you mean \"{n}\"? columns: {}", known.join(", "))
                            }
                            None => format!(
                                "columns: {}",
                                if known.is_empty() {
                                    "none".to_string()
                                } else {
                                    known.join(", ")
                                }
                            ),
                        };
                        rd.push(
                            "unknown-column",
                            key,
                            span.clone(),
                            format!("`{key}`: no column is named \"{name}\""),
                            Some(help),
                        );
                        return None;
                    }
                },
            };
            let spec = columns.get(index)?.as_ref()?;
            let last = spec.electrodes + 1;
            if *node > last {
                rd.push(
                    "out-of-range",
                    key,
                    span.clone(),
                    format!(
                        "`{key}`: column `{}` has nodes 0 to {last}, not {node}",
                        spec.name
                    ),
                    Some(format!(
                        "node 0 is the `from` end ({}), node {last} the `to` end ({})",
                        spec.from.0, spec.to.0
                    )),
                );
                return None;
            }
            Some(PotentialSpec::Grading {
                column: index,
                node: *node,
            })
        }
        PotentialText::Stage(s) => {
            if !has_multiplier {
                rd.push(
                    "unknown-stage",
                    key,
                    span.clone(),
                    format!(
                        "`{key}` refers to a multiplier stage, but the file has no [multiplier]"
                    ),
                    Some(
                        "add a [multiplier] section, or give the potential as a voltage"
                            .to_string(),
                    ),
                );
                return None;
            }
            let n = stages?;
            if *s < 1 || *s > n {
                rd.push(
                    "unknown-stage",
                    key,
                    span.clone(),
                    format!("`{key}`: the multiplier has stages 1 to {n}, not {s}"),
                    None,
                );
                return None;
            }
            Some(PotentialSpec::Stage { stage: *s })
        }
    }
}

/// The canonical potential of a spec (column end nodes are the end conductors' potentials).
fn canon(
    spec: &PotentialSpec,
    vt: f64,
    ends: &[Option<(Option<usize>, Option<usize>)>],
    columns: &[Option<ColumnSpec>],
    specs: &[Option<PotentialSpec>],
    depth: usize,
) -> Option<Canon> {
    match *spec {
        PotentialSpec::Ground => Some(Canon::Volts(0.0)),
        PotentialSpec::Terminal { fraction } => Some(Canon::Volts(fraction * vt)),
        PotentialSpec::Absolute { volts } => Some(Canon::Volts(volts)),
        PotentialSpec::Stage { stage } => Some(Canon::Stage(stage)),
        PotentialSpec::Grading { column, node } => {
            let n = columns.get(column)?.as_ref()?.electrodes;
            let (from, to) = (*ends.get(column)?)?;
            let end = if node == 0 {
                Some(from)
            } else if node == n + 1 {
                Some(to)
            } else {
                None
            };
            match end {
                None => Some(Canon::Node { column, node }),
                Some(None) => Some(Canon::Volts(0.0)),
                Some(Some(i)) if depth < 4 => {
                    canon(specs.get(i)?.as_ref()?, vt, ends, columns, specs, depth + 1)
                }
                Some(Some(_)) => Some(Canon::Node { column, node }),
            }
        }
    }
}

/// The potential in words, for messages.
pub(crate) fn potential_text(
    spec: &PotentialSpec,
    column_names: &[Option<String>],
    vt: f64,
) -> String {
    match spec {
        PotentialSpec::Ground => "ground".to_string(),
        PotentialSpec::Terminal { fraction } if *fraction == 1.0 => "terminal".to_string(),
        PotentialSpec::Terminal { fraction } => format!(
            "{fraction} of the terminal voltage ({})",
            format_si(fraction * vt, Dimension::Voltage)
        ),
        PotentialSpec::Absolute { volts } => format_si(*volts, Dimension::Voltage),
        PotentialSpec::Grading { column, node } => {
            let name = column_names
                .get(*column)
                .and_then(|n| n.clone())
                .unwrap_or_else(|| format!("{}", column + 1));
            format!("grading node {node} of column `{name}`")
        }
        PotentialSpec::Stage { stage } => format!("multiplier stage {stage}"),
    }
}

fn check_duplicates(rd: &mut Reader, bodies: &[Body], columns: &[Option<ColumnSpec>]) {
    let mut seen: HashMap<&str, &Body> = HashMap::new();
    for b in bodies {
        match seen.get(b.name.as_str()) {
            Some(first) => rd.push(
                "duplicate-name",
                format!("{}.name", b.key),
                b.span.clone(),
                format!(
                    "the name `{}` is used twice (first on line {})",
                    b.name, first.line
                ),
                Some(
                    "every conductor, dielectric and vacuum region needs its own name".to_string(),
                ),
            ),
            None => {
                seen.insert(b.name.as_str(), b);
            }
        }
    }
    let mut names: HashMap<&str, usize> = HashMap::new();
    for c in columns.iter().flatten() {
        match names.get(c.name.as_str()) {
            Some(line) => rd.push(
                "duplicate-name",
                c.at.key("name"),
                c.at.span.clone(),
                format!("two columns are named `{}` (first on line {line})", c.name),
                None,
            ),
            None => {
                names.insert(c.name.as_str(), c.line);
            }
        }
    }
}

/// The column must lie between its end conductors along z, in the direction of its pitch.
fn check_column_fit(
    rd: &mut Reader,
    spec: &ColumnSpec,
    ci: usize,
    from: Option<usize>,
    to: Option<usize>,
    bodies: &[Body],
) {
    let own = bodies
        .iter()
        .filter(|b| b.group == Group::Column(ci))
        .map(|b| &b.shape);
    let Some((lo, hi)) = checks::z_extent(own) else {
        return;
    };
    let l = |x: f64| format_si(x, Dimension::Length);
    let up = spec.pitch > 0.0;
    let direct = |i: usize| {
        bodies
            .iter()
            .find(|b| b.group == Group::Direct(i) && b.kind == Kind::Conductor)
    };
    let tol = 1e-7;
    for (end, which, at_start) in [(from, "from", true), (to, "to", false)] {
        let Some(i) = end else { continue };
        let Some(b) = direct(i) else { continue };
        let bb = b.shape.bbox();
        // The `from` end lies before the first electrode in the direction of the pitch, the
        // `to` end after the last.
        let before = at_start == up;
        let fits = if before {
            bb.z_max <= lo + tol
        } else {
            bb.z_min >= hi - tol
        };
        if !fits {
            let (span, key) = if which == "from" {
                (&spec.from.1, spec.at.key("from"))
            } else {
                (&spec.to.1, spec.at.key("to"))
            };
            let detail = if before {
                format!(
                    "`{}` reaches z = {} but the column's electrodes start at z = {}",
                    b.name,
                    l(bb.z_max),
                    l(lo)
                )
            } else {
                format!(
                    "`{}` starts at z = {} but the column's electrodes reach z = {}",
                    b.name,
                    l(bb.z_min),
                    l(hi)
                )
            };
            rd.push(
                "column-fit",
                key,
                span.clone(),
                format!("column `{}` does not fit between its end conductors: {detail}", spec.name),
                Some(format!(
                    "electrode k sits at z_first + (k - 1) * pitch; the column runs from `from` to `to` {} (check z_first, pitch, electrodes and the ends)",
                    if up { "towards larger z" } else { "towards smaller z" }
                )),
            );
        }
    }
}
