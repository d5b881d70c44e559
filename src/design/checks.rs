//! Geometry checks on the expanded design: every shape inside the tank, no conductor off
//! ground touching the wall, the terminal enclosed, no two conductors at different potentials
//! overlapping, each column between its end conductors, no name used twice.
//!
//! Input: the expanded bodies with their resolved potentials. Output: located problems. The
//! tests sample each surface at a modest number of points (bounding boxes first, then sample
//! points of one shape strictly inside the other), which finds every overlap deeper than the
//! sample spacing; that is enough for drawing mistakes, which is what these checks are for.

use super::generators::ColumnSpec;
use super::read::Reader;
use super::samples::boundary_samples;
use crate::geometry::{BBox, Point, Shape};
use crate::model::Tank;
use crate::units::{Dimension, format_si};
use std::collections::HashMap;
use std::ops::Range;

/// Points sampled on each surface.
const SAMPLES: usize = 48;

/// A potential reduced to what decides whether two conductors are at the same potential.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) enum Canon {
    Volts(f64),
    Node { column: usize, node: usize },
    Stage(usize),
}

impl Canon {
    fn same(self, other: Canon) -> bool {
        match (self, other) {
            (Canon::Volts(a), Canon::Volts(b)) => {
                (a - b).abs() <= 1e-9 * a.abs().max(b.abs()).max(1.0)
            }
            (a, b) => a == b,
        }
    }

    fn is_ground(self) -> bool {
        self.same(Canon::Volts(0.0))
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub(crate) enum Group {
    Direct(usize),
    Column(usize),
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Kind {
    Conductor,
    Dielectric,
    Vacuum,
}

/// One primitive of the expanded design, with where to point when it is wrong.
#[derive(Debug, Clone)]
pub(crate) struct Body {
    pub name: String,
    pub kind: Kind,
    pub shape: Shape,
    /// For conductors whose potential resolved.
    pub canon: Option<Canon>,
    /// Shown in messages, e.g. "terminal" or "grading node 3 of column `LE`".
    pub potential_text: String,
    pub is_terminal: bool,
    pub key: String,
    pub span: Range<usize>,
    pub line: usize,
    pub group: Group,
}

/// Surface samples of every body, computed once.
pub(crate) fn samples(bodies: &[Body]) -> Vec<Vec<Point>> {
    bodies
        .iter()
        .map(|b| boundary_samples(&b.shape, SAMPLES))
        .collect()
}

/// Absolute tolerance for "on the surface", metres.
fn tol(a: &Shape) -> f64 {
    1e-7 + 1e-9 * a.scale()
}

/// Shapes outside the tank, the terminal not enclosed, conductors off ground touching the wall.
pub(crate) fn check_tank(rd: &mut Reader, tank: &Tank, bodies: &[Body], samples: &[Vec<Point>]) {
    let wall = match tank {
        Tank::Cylinder { .. } => "tank wall",
        Tank::Sphere { .. } => "spherical tank wall",
    };
    for (b, pts) in bodies.iter().zip(samples) {
        let t = tol(&b.shape);
        let (worst, at) = pts.iter().map(|p| (tank.sdf_inside(*p), *p)).fold(
            (f64::NEG_INFINITY, Point::new(0.0, 0.0)),
            |acc, x| {
                if x.0 > acc.0 { x } else { acc }
            },
        );
        let kind = match b.kind {
            Kind::Conductor => "conductor",
            Kind::Dielectric => "dielectric",
            Kind::Vacuum => "vacuum region",
        };
        let here = format!(
            "at r = {}, z = {}",
            format_si(at.r, Dimension::Length),
            format_si(at.z, Dimension::Length)
        );
        if worst > t {
            let (code, what) = if b.is_terminal {
                (
                    "terminal-not-enclosed",
                    "the terminal is not enclosed by the tank",
                )
            } else {
                ("outside-tank", "reaches outside the tank")
            };
            rd.push(
                code,
                b.key.clone(),
                b.span.clone(),
                format!(
                    "{kind} `{}`: {what} ({} beyond the {wall} {here})",
                    b.name,
                    format_si(worst, Dimension::Length)
                ),
                Some(format!(
                    "keep every shape inside the tank: {}",
                    tank_text(tank)
                )),
            );
        } else if b.kind == Kind::Conductor && worst > -t && b.canon.is_some_and(|c| !c.is_ground())
        {
            rd.push(
                "touches-wall",
                b.key.clone(),
                b.span.clone(),
                format!(
                    "conductor `{}` at {} touches the grounded {wall} {here}",
                    b.name, b.potential_text
                ),
                Some("only grounded conductors may touch the tank; leave a gap".to_string()),
            );
        }
    }
}

fn tank_text(tank: &Tank) -> String {
    match *tank {
        Tank::Cylinder {
            inner_radius,
            length,
        } => format!(
            "r <= {}, 0 <= z <= {}",
            format_si(inner_radius, Dimension::Length),
            format_si(length, Dimension::Length)
        ),
        Tank::Sphere { inner_radius } => format!(
            "within {} of (r = 0, z = {})",
            format_si(inner_radius, Dimension::Length),
            format_si(inner_radius, Dimension::Length)
        ),
    }
}

fn shrink(b: BBox, t: f64) -> BBox {
    BBox {
        r_min: b.r_min + t,
        r_max: b.r_max - t,
        z_min: b.z_min + t,
        z_max: b.z_max - t,
    }
}

/// A point of `pa` strictly inside `b`, if any.
fn point_inside(pa: &[Point], b: &Shape) -> Option<Point> {
    let t = tol(b);
    pa.iter().copied().find(|p| b.sdf(*p) < -t)
}

/// Do two bodies overlap (more than touch)?
pub(crate) fn overlap(a: &Shape, pa: &[Point], b: &Shape, pb: &[Point]) -> Option<Point> {
    let t = tol(a).max(tol(b));
    if !shrink(a.bbox(), t).overlaps(&b.bbox()) {
        return None;
    }
    point_inside(pa, b).or_else(|| point_inside(pb, a))
}

/// Conductors at different potentials that overlap. One problem per pair of sources (a direct
/// conductor, or a column), naming the first pair found and counting the rest.
pub(crate) fn check_overlaps(rd: &mut Reader, bodies: &[Body], samples: &[Vec<Point>]) {
    let cond: Vec<usize> = (0..bodies.len())
        .filter(|&i| bodies[i].kind == Kind::Conductor && bodies[i].canon.is_some())
        .collect();
    let boxes: Vec<BBox> = bodies.iter().map(|b| b.shape.bbox()).collect();
    let mut found: HashMap<(Group, Group), (usize, usize, Point, usize)> = HashMap::new();
    let mut order: Vec<(Group, Group)> = Vec::new();
    for (x, &i) in cond.iter().enumerate() {
        for &j in &cond[x + 1..] {
            if !boxes[i].overlaps(&boxes[j]) {
                continue;
            }
            let (a, b) = (&bodies[i], &bodies[j]);
            if let (Some(ca), Some(cb)) = (a.canon, b.canon)
                && ca.same(cb)
            {
                continue;
            }
            let Some(p) = overlap(&a.shape, &samples[i], &b.shape, &samples[j]) else {
                continue;
            };
            let key = (a.group, b.group);
            match found.get_mut(&key) {
                Some(entry) => entry.3 += 1,
                None => {
                    found.insert(key, (i, j, p, 0));
                    order.push(key);
                }
            }
        }
    }
    for key in order {
        let (i, j, p, more) = found[&key];
        let (a, b) = (&bodies[i], &bodies[j]);
        let more = if more > 0 {
            format!(
                " (and {more} more overlapping pair{} of the same items)",
                if more == 1 { "" } else { "s" }
            )
        } else {
            String::new()
        };
        rd.push(
            "overlap",
            b.key.clone(),
            b.span.clone(),
            format!(
                "conductors `{}` (line {}, {}) and `{}` (line {}, {}) overlap near r = {}, z = {}{more}",
                a.name,
                a.line,
                a.potential_text,
                b.name,
                b.line,
                b.potential_text,
                format_si(p.r, Dimension::Length),
                format_si(p.z, Dimension::Length)
            ),
            Some("conductors at different potentials must be apart; move or resize one of them".to_string()),
        );
    }
}

/// The dielectrics that a conductor cuts through (allowed: the conductor takes precedence).
pub(crate) fn cut_dielectrics(
    conductor: &Shape,
    pc: &[Point],
    dielectrics: &[(&str, &Shape, &[Point])],
) -> Vec<String> {
    dielectrics
        .iter()
        .filter(|(_, d, pd)| overlap(conductor, pc, d, pd).is_some())
        .map(|(n, _, _)| n.to_string())
        .collect()
}

/// The z extent of a set of shapes.
pub(crate) fn z_extent<'a>(shapes: impl Iterator<Item = &'a Shape>) -> Option<(f64, f64)> {
    shapes
        .map(|s| s.bbox())
        .map(|b| (b.z_min, b.z_max))
        .reduce(|a, b| (a.0.min(b.0), a.1.max(b.1)))
}

pub(crate) fn check_duplicates(rd: &mut Reader, bodies: &[Body], columns: &[Option<ColumnSpec>]) {
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
pub(crate) fn check_column_fit(
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
    let Some((lo, hi)) = z_extent(own) else {
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
