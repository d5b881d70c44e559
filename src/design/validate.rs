//! From the raw design to the validated `model::Model`: units to SI, names resolved, columns
//! expanded, values and geometry checked.
//!
//! Input: a [`RawDesign`] and the file text (for line numbers). Output: the `Model`, or every
//! problem found. The raw stage only knows keys and spans; everything that needs the meaning
//! of a key, or the whole picture (references between tables, geometry), is here.

use super::checks::{self, Body, Canon, Group, Kind};
use super::gas::read_gas;
use super::generators::{self, ColumnSpec};
use super::potential::{self, PotentialText};
use super::problem::{LineIndex, Problems};
use super::read::{At, Reader};
use super::resolve::{canon, potential_text, resolve_end, resolve_potential};
use super::schema::{RawDesign, RawValue};
use super::sections::{
    read_checks, read_mesh, read_multiplier, read_permittivity, read_probe, read_tank,
};
use super::shapes;
use crate::geometry::Shape;
use crate::model::{
    Checks, Column, Conductor, Dielectric, Gas, MeshSpec, Model, Multiplier, Origin, PotentialSpec,
    Probe, Tank, VacuumRegion, Wall,
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
    let base = std::path::Path::new(file_name)
        .parent()
        .unwrap_or(std::path::Path::new(""));
    let mut rd = Reader { problems, base };
    let tables = read_tables(&mut rd, raw, file_name);
    let direct = read_direct_conductors(&mut rd, raw, &lines);
    let (dielectrics, vacuum) = read_regions(&mut rd, raw, &lines);
    let columns = read_columns(&mut rd, raw, &lines);
    let column_names = column_names(raw, &columns);
    let conductor_names: Vec<Option<String>> = direct.iter().map(|d| d.name.clone()).collect();
    let ends = resolve_ends(&mut rd, &columns, &conductor_names);
    let stages = tables
        .multiplier
        .as_ref()
        .and_then(|m| m.as_ref().map(|m| m.stages));
    let specs = direct_potentials(
        &mut rd,
        &direct,
        &column_names,
        &columns,
        stages,
        tables.multiplier.is_some(),
    );
    let names = Names {
        columns: &column_names,
        terminal_v: tables.terminal_voltage.unwrap_or(1.0),
    };
    let mut parts = Parts::default();
    parts.add_direct(&direct, &specs, &ends, &columns, &names);
    parts.add_columns(&columns, &ends, &names);
    parts.add_regions(&dielectrics, &vacuum);
    check_geometry(&mut rd, &tables.tank, &parts.bodies, &columns, &ends);
    let mesh = match (&raw.mesh, &tables.tank) {
        (Some(m), Some(t)) => read_mesh(&mut rd, m, t),
        (None, Some(t)) => Some(MeshSpec::default_for(&t.bbox())),
        _ => None,
    };
    let probes: Vec<Option<Probe>> = raw
        .probe
        .iter()
        .enumerate()
        .map(|(k, p)| read_probe(&mut rd, p, k, tables.tank.as_ref()))
        .collect();
    if !rd.problems.is_empty() || !parts.complete {
        return None;
    }
    let mut model = Model::new(&tables.title?, tables.tank?, tables.terminal_voltage?);
    model.ends = Wall::Grounded;
    model.side = Wall::Grounded;
    model.gas = match tables.gas {
        Some(g) => Some(g?),
        None => None,
    };
    model.conductors = parts.conductors;
    model.dielectrics = parts.dielectrics;
    model.vacuum = parts.vacuum;
    model.columns = parts.columns;
    model.multiplier = match tables.multiplier {
        Some(m) => Some(m?),
        None => None,
    };
    model.checks = tables.checks?;
    model.mesh = mesh?;
    model.probes = probes.into_iter().collect::<Option<Vec<_>>>()?;
    Some(model)
}

/// The single tables of a design, each read or `None` where it has a problem (an absent
/// optional table is `None` in the outer option).
struct Tables {
    title: Option<String>,
    tank: Option<Tank>,
    gas: Option<Option<Gas>>,
    terminal_voltage: Option<f64>,
    multiplier: Option<Option<Multiplier>>,
    checks: Option<Checks>,
}

/// `title`, `[tank]`, `[gas]`, `[terminal]`, `[multiplier]` and `[checks]`.
fn read_tables(rd: &mut Reader, raw: &RawDesign, file_name: &str) -> Tables {
    let root = At::new("", 0..0);
    let title = match &raw.title {
        Some(v) => rd.string(v, "title", "a title in quotes"),
        None => Some(file_name.to_string()),
    };
    let tank = match &raw.tank {
        Some(t) => read_tank(rd, t),
        None => {
            rd.missing(
                &root,
                "[tank]",
                "a [tank] section with inner_radius and length",
            );
            None
        }
    };
    let gas = raw.gas.as_ref().map(|g| read_gas(rd, g));
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
    let multiplier = raw.multiplier.as_ref().map(|m| read_multiplier(rd, m));
    let checks = match &raw.checks {
        Some(c) => read_checks(rd, c),
        None => Some(Checks::default()),
    };
    Tables {
        title,
        tank,
        gas,
        terminal_voltage,
        multiplier,
        checks,
    }
}

fn line_of(lines: &LineIndex, span: &Range<usize>) -> usize {
    lines.locate(span.start).0
}

/// Every `[[conductor]]`: name, shape and potential as written.
fn read_direct_conductors(
    rd: &mut Reader,
    raw: &RawDesign,
    lines: &LineIndex,
) -> Vec<DirectConductor> {
    let mut direct: Vec<DirectConductor> = Vec::new();
    for (k, c) in raw.conductor.iter().enumerate() {
        let at = At::new(format!("conductor[{}]", k + 1), c.span());
        let line = line_of(lines, &c.span());
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
        let shape = shapes::read_shape(rd, &cr.shape_keys(), &at);
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
    direct
}

/// Every `[[dielectric]]` and `[[vacuum]]` region.
fn read_regions(rd: &mut Reader, raw: &RawDesign, lines: &LineIndex) -> (Vec<Region>, Vec<Region>) {
    let mut dielectrics: Vec<Region> = Vec::new();
    for (k, d) in raw.dielectric.iter().enumerate() {
        let at = At::new(format!("dielectric[{}]", k + 1), d.span());
        let dr = d.get_ref();
        let (name, name_span) = region_name(rd, &dr.name, &at, "dielectric", k, d.span());
        let shape = shapes::read_shape(rd, &dr.shape_keys(), &at);
        let line = line_of(lines, &d.span());
        let eps = read_permittivity(rd, &dr.material, &dr.eps_r, &at, line);
        dielectrics.push(Region {
            name,
            shape,
            eps,
            at,
            line,
            name_span,
        });
    }
    let mut vacuum: Vec<Region> = Vec::new();
    for (k, v) in raw.vacuum.iter().enumerate() {
        let at = At::new(format!("vacuum[{}]", k + 1), v.span());
        let vr = v.get_ref();
        let (name, name_span) = region_name(rd, &vr.name, &at, "vacuum", k, v.span());
        let shape = shapes::read_shape(rd, &vr.shape_keys(), &at);
        vacuum.push(Region {
            name,
            shape,
            eps: None,
            at,
            line: line_of(lines, &v.span()),
            name_span,
        });
    }
    (dielectrics, vacuum)
}

/// Every `[[column]]`, read with its generator keys.
fn read_columns(rd: &mut Reader, raw: &RawDesign, lines: &LineIndex) -> Vec<Option<ColumnSpec>> {
    let several = raw.column.len() > 1;
    raw.column
        .iter()
        .enumerate()
        .map(|(k, c)| {
            let at = At::new(format!("column[{}]", k + 1), c.span());
            let line = line_of(lines, &c.span());
            generators::read_column(rd, c.get_ref(), at, line, several)
        })
        .collect()
}

/// Each column's name: as read, or as written when the column has a problem.
fn column_names(raw: &RawDesign, columns: &[Option<ColumnSpec>]) -> Vec<Option<String>> {
    raw.column
        .iter()
        .zip(columns)
        .map(|(r, c)| {
            c.as_ref().map(|c| c.name.clone()).or_else(|| {
                r.get_ref().name.as_ref().and_then(|v| match v.get_ref() {
                    RawValue::Str(s) => Some(s.trim().to_string()),
                    _ => None,
                })
            })
        })
        .collect()
}

/// A column's two ends: conductor indices (direct conductors come first in the model), `None`
/// for the tank.
type Ends = Option<(Option<usize>, Option<usize>)>;

/// The column ends resolved to conductor indices.
fn resolve_ends(
    rd: &mut Reader,
    columns: &[Option<ColumnSpec>],
    conductor_names: &[Option<String>],
) -> Vec<Ends> {
    let mut ends: Vec<Ends> = Vec::new();
    for spec in columns {
        let Some(spec) = spec else {
            ends.push(None);
            continue;
        };
        let from = resolve_end(rd, conductor_names, &spec.from, &spec.at.key("from"));
        let to = resolve_end(rd, conductor_names, &spec.to, &spec.at.key("to"));
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
    ends
}

/// The direct conductors' potentials resolved against the columns and the multiplier.
fn direct_potentials(
    rd: &mut Reader,
    direct: &[DirectConductor],
    column_names: &[Option<String>],
    columns: &[Option<ColumnSpec>],
    stages: Option<usize>,
    has_multiplier: bool,
) -> Vec<Option<PotentialSpec>> {
    let mut specs: Vec<Option<PotentialSpec>> = Vec::new();
    for d in direct {
        let Some((p, span)) = &d.potential else {
            specs.push(None);
            continue;
        };
        let key = d.at.key("potential");
        specs.push(resolve_potential(
            rd,
            p,
            span,
            &key,
            column_names,
            columns,
            stages,
            has_multiplier,
        ));
    }
    specs
}

/// What the potential texts of the bodies are written against.
struct Names<'a> {
    columns: &'a [Option<String>],
    /// Terminal voltage (1 V when it has a problem), for the canonical potentials.
    terminal_v: f64,
}

/// The bodies for the overlap and wall checks, and the model's parts, built together;
/// `complete` is false when a part could not be built (its problem is already reported).
struct Parts {
    bodies: Vec<Body>,
    conductors: Vec<Conductor>,
    columns: Vec<Column>,
    dielectrics: Vec<Dielectric>,
    vacuum: Vec<VacuumRegion>,
    complete: bool,
}

impl Default for Parts {
    fn default() -> Self {
        Parts {
            bodies: Vec::new(),
            conductors: Vec::new(),
            columns: Vec::new(),
            dielectrics: Vec::new(),
            vacuum: Vec::new(),
            complete: true,
        }
    }
}

impl Parts {
    /// The direct conductors, with their canonical potentials.
    fn add_direct(
        &mut self,
        direct: &[DirectConductor],
        specs: &[Option<PotentialSpec>],
        ends: &[Ends],
        columns: &[Option<ColumnSpec>],
        names: &Names,
    ) {
        let vt = names.terminal_v;
        let canon_of_direct = |i: usize| -> Option<Canon> {
            canon(specs.get(i)?.as_ref()?, vt, ends, columns, specs, 0)
        };
        for (i, d) in direct.iter().enumerate() {
            match (&d.name, &d.shape, &specs[i]) {
                (Some(name), Some(shape), Some(spec)) => {
                    let c = canon_of_direct(i);
                    self.bodies.push(Body {
                        name: name.clone(),
                        kind: Kind::Conductor,
                        shape: shape.clone(),
                        canon: c,
                        potential_text: potential_text(spec, names.columns, vt),
                        is_terminal: matches!(d.potential, Some((PotentialText::Terminal(f), _)) if f == 1.0),
                        key: d.at.path.clone(),
                        span: d.name_span.clone(),
                        line: d.line,
                        group: Group::Direct(i),
                    });
                    self.conductors.push(Conductor {
                        name: name.clone(),
                        shape: shape.clone(),
                        potential: spec.clone(),
                        origin: Origin::Direct { line: Some(d.line) },
                    });
                }
                _ => self.complete = false,
            }
        }
    }

    /// The columns, each with its generated electrodes and insulators.
    fn add_columns(&mut self, columns: &[Option<ColumnSpec>], ends: &[Ends], names: &Names) {
        let several = columns.len() > 1;
        for (ci, spec) in columns.iter().enumerate() {
            let (Some(spec), Some((from, to))) = (spec, ends[ci]) else {
                self.complete = false;
                continue;
            };
            let mut electrodes = Vec::with_capacity(spec.electrodes);
            let generated = generators::expand(spec, ci, several);
            for (c, hoop) in generated {
                if hoop {
                    electrodes.push(self.conductors.len());
                }
                let node = match c.potential {
                    PotentialSpec::Grading { node, .. } => node,
                    _ => 0,
                };
                self.bodies.push(Body {
                    name: c.name.clone(),
                    kind: Kind::Conductor,
                    shape: c.shape.clone(),
                    canon: Some(Canon::Node { column: ci, node }),
                    potential_text: potential_text(&c.potential, names.columns, names.terminal_v),
                    is_terminal: false,
                    key: spec.at.path.clone(),
                    span: spec.at.span.clone(),
                    line: spec.line,
                    group: Group::Column(ci),
                });
                self.conductors.push(c);
            }
            self.columns.push(Column {
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
    }

    /// The dielectric and vacuum regions.
    fn add_regions(&mut self, dielectrics: &[Region], vacuum: &[Region]) {
        for d in dielectrics {
            match (&d.shape, &d.eps) {
                (Some(shape), Some((eps_r, material, source))) => {
                    self.bodies.push(region_body(d, shape, Kind::Dielectric));
                    self.dielectrics.push(Dielectric {
                        name: d.name.clone(),
                        shape: shape.clone(),
                        eps_r: *eps_r,
                        material: material.clone(),
                        source: source.clone(),
                        origin: Origin::Direct { line: Some(d.line) },
                    });
                }
                _ => self.complete = false,
            }
        }
        for v in vacuum {
            match &v.shape {
                Some(shape) => {
                    self.bodies.push(region_body(v, shape, Kind::Vacuum));
                    self.vacuum.push(VacuumRegion {
                        name: v.name.clone(),
                        shape: shape.clone(),
                        origin: Origin::Direct { line: Some(v.line) },
                    });
                }
                None => self.complete = false,
            }
        }
    }
}

/// Duplicate names, then the geometry: bodies inside the tank, no overlaps, each column fits
/// between its ends.
fn check_geometry(
    rd: &mut Reader,
    tank: &Option<Tank>,
    bodies: &[Body],
    columns: &[Option<ColumnSpec>],
    ends: &[Ends],
) {
    checks::check_duplicates(rd, bodies, columns);
    let samples = checks::samples(bodies);
    if let Some(tank) = tank {
        checks::check_tank(rd, tank, bodies, &samples);
    }
    checks::check_overlaps(rd, bodies, &samples);
    for (ci, spec) in columns.iter().enumerate() {
        if let (Some(spec), Some((from, to))) = (spec, ends[ci]) {
            checks::check_column_fit(rd, spec, ci, from, to, bodies);
        }
    }
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
