//! From the raw design to the validated `model::Model`: units to SI, names resolved, columns
//! expanded, values and geometry checked.
//!
//! Input: a [`RawDesign`] and the file text (for line numbers). Output: the `Model`, or every
//! problem found. The raw stage only knows keys and spans; everything that needs the meaning
//! of a key, or the whole picture (references between tables, geometry), is here.

use super::checks::{self, Body, Canon, Group, Kind};
use super::generators::{self, ColumnSpec};
use super::potential::{self, PotentialText};
use super::problem::{LineIndex, Problems};
use super::read::{At, Reader};
use super::resolve::{canon, potential_text, resolve_end, resolve_potential};
use super::schema::{RawDesign, RawValue};
use super::sections::{
    read_checks, read_gas, read_mesh, read_multiplier, read_permittivity, read_probe, read_tank,
};
use super::shapes;
use crate::geometry::Shape;
use crate::model::{
    Checks, Column, Conductor, Dielectric, MeshSpec, Model, Origin, PotentialSpec, Probe,
    VacuumRegion, Wall,
};
use crate::units::Dimension;
use std::ops::Range;
use toml::Spanned;

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
    let base = std::path::Path::new(file_name)
        .parent()
        .unwrap_or(std::path::Path::new(""));
    let mut rd = Reader { problems, base };
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
            resistor_rating_v: spec.rating_v,
            resistor_power_w: spec.power_rating_w,
            resistor_impulse_v: spec.impulse_rating_v,
            protective_gap: spec.protective,
            leakage: spec.leakage,
            node_current_a: spec.node_current_a.clone(),
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

    checks::check_duplicates(&mut rd, &bodies, &columns);

    // Geometry.
    let samples = checks::samples(&bodies);
    if let Some(tank) = &tank {
        checks::check_tank(&mut rd, tank, &bodies, &samples);
    }
    checks::check_overlaps(&mut rd, &bodies, &samples);
    for (ci, spec) in columns.iter().enumerate() {
        if let (Some(spec), Some((from, to))) = (spec, ends[ci]) {
            checks::check_column_fit(&mut rd, spec, ci, from, to, &bodies);
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
