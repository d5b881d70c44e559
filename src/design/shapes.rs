//! Shape keys of the design file turned into `geometry::Shape`, with their checks; boundary
//! samples for the overlap and enclosure tests; a short description in millimetres.
//!
//! Input: the shape keys of a `[[conductor]]`, `[[dielectric]]` or `[[vacuum]]` table
//! (docs/design-file.md: sphere, torus, rounded_cylinder, tube, disc, polygon; and outline, read from a
//! DXF drawing by `drawing`). Output: a validated
//! `Shape` in metres, or located problems (negative or zero sizes, reversed intervals, corner
//! radii that do not fit, self-intersecting outlines, keys the shape does not use).

use super::drawn;
use super::read::{At, Reader};
use super::schema::{Leaf, RawShape, RawValue};
use crate::geometry::{Point, Shape, on_axis};
use crate::units::{Dimension, format_si};
use toml::Spanned;

/// The shapes a table may name, with the keys each uses (required first, then optional).
const SHAPES: &[(&str, &[&str], &[&str])] = &[
    ("sphere", &["center_z", "radius"], &[]),
    ("torus", &["center_z", "major_radius", "minor_radius"], &[]),
    ("rounded_cylinder", &["r", "z", "corner_radius"], &[]),
    ("tube", &["r", "z"], &["corner_radius"]),
    ("disc", &["r", "center_z", "thickness"], &["corner_radius"]),
    ("polygon", &["points"], &["fillet"]),
    (
        "outline",
        &["file", "layer"],
        &["handle", "index", "units", "axis", "origin"],
    ),
];

/// The accepted shape names, for messages.
pub(crate) fn shape_names() -> Vec<&'static str> {
    SHAPES.iter().map(|(n, _, _)| *n).collect()
}

fn leaf<'a>(raw: &'a RawShape, key: &str) -> &'a Leaf {
    match key {
        "center_z" => &raw.center_z,
        "radius" => &raw.radius,
        "major_radius" => &raw.major_radius,
        "minor_radius" => &raw.minor_radius,
        "r" => &raw.r,
        "z" => &raw.z,
        "corner_radius" => &raw.corner_radius,
        "thickness" => &raw.thickness,
        "points" => &raw.points,
        "fillet" => &raw.fillet,
        "file" => &raw.file,
        "layer" => &raw.layer,
        "handle" => &raw.handle,
        "index" => &raw.index,
        "units" => &raw.units,
        "axis" => &raw.axis,
        "origin" => &raw.origin,
        _ => &raw.shape,
    }
}

const ALL_KEYS: &[&str] = &[
    "center_z",
    "radius",
    "major_radius",
    "minor_radius",
    "r",
    "z",
    "corner_radius",
    "thickness",
    "points",
    "fillet",
    "file",
    "layer",
    "handle",
    "index",
    "units",
    "axis",
    "origin",
];

const TOL: f64 = 1e-12;

/// Reads and checks the shape keys of one table.
pub(crate) fn read_shape(rd: &mut Reader, raw: &RawShape, at: &At) -> Option<Shape> {
    let names = shape_names();
    let v = rd.required(
        &raw.shape,
        at,
        "shape",
        &format!("one of \"{}\"", names.join("\", \"")),
    )?;
    let name = rd.string(v, &at.key("shape"), "a shape name in quotes")?;
    let Some((kind, required, optional)) = SHAPES.iter().find(|(n, _, _)| *n == name) else {
        let near = super::problem::nearest(&name, &names);
        rd.push(
            "unknown-shape",
            at.key("shape"),
            v.span(),
            format!("unknown shape \"{name}\""),
            Some(match near {
                Some(n) => format!("did you mean \"{n}\"? shapes: {}", names.join(", ")),
                None => format!("shapes: {}", names.join(", ")),
            }),
        );
        return None;
    };
    // Keys given that this shape does not use.
    for key in ALL_KEYS {
        if required.contains(key) || optional.contains(key) {
            continue;
        }
        if let Some(v) = leaf(raw, key) {
            let mut uses: Vec<&str> = required.to_vec();
            uses.extend(optional.iter().copied());
            rd.push(
                "unused-key",
                at.key(key),
                v.span(),
                format!("shape \"{kind}\" does not use `{key}`"),
                Some(format!("keys of a {kind}: {}", uses.join(", "))),
            );
        }
    }
    match *kind {
        "sphere" => sphere(rd, raw, at),
        "torus" => torus(rd, raw, at),
        "rounded_cylinder" => rect(rd, raw, at, true),
        "tube" => rect(rd, raw, at, false),
        "disc" => disc(rd, raw, at),
        "outline" => drawn::outline(rd, raw, at),
        _ => polygon(rd, raw, at),
    }
}

fn positive(rd: &mut Reader, raw: &Leaf, at: &At, key: &str) -> Option<f64> {
    let x = rd.req_quantity(raw, at, key, Dimension::Length)?;
    rd.check(
        Some(x),
        raw.as_ref(),
        &at.key(key),
        |x| x > 0.0,
        "must be greater than zero",
    )
}

fn sphere(rd: &mut Reader, raw: &RawShape, at: &At) -> Option<Shape> {
    let center_z = rd.req_quantity(&raw.center_z, at, "center_z", Dimension::Length);
    let radius = positive(rd, &raw.radius, at, "radius");
    Some(Shape::Sphere {
        center_z: center_z?,
        radius: radius?,
    })
}

fn torus(rd: &mut Reader, raw: &RawShape, at: &At) -> Option<Shape> {
    let center_z = rd.req_quantity(&raw.center_z, at, "center_z", Dimension::Length);
    let major = positive(rd, &raw.major_radius, at, "major_radius");
    let minor = positive(rd, &raw.minor_radius, at, "minor_radius");
    let (major, minor) = (major?, minor?);
    torus_ring(
        rd,
        raw.minor_radius.as_ref(),
        &at.key("minor_radius"),
        major,
        minor,
    )?;
    Some(Shape::Torus {
        center_z: center_z?,
        major_radius: major,
        minor_radius: minor,
    })
}

/// A ring's cross-section must stay off the axis.
pub(crate) fn torus_ring(
    rd: &mut Reader,
    v: Option<&Spanned<RawValue>>,
    key: &str,
    major: f64,
    minor: f64,
) -> Option<()> {
    if minor < major {
        return Some(());
    }
    if let Some(v) = v {
        rd.out_of_range(
            v,
            key,
            format!(
                "`{key}` ({}) must be smaller than the major radius ({}): the ring would reach the axis",
                format_si(minor, Dimension::Length),
                format_si(major, Dimension::Length)
            ),
            Some("use a sphere or a rounded_cylinder for a body on the axis".to_string()),
        );
    }
    None
}

/// Reads an interval `[lo, hi]` and checks `lo < hi` (and `lo >= 0` for radii).
fn interval(rd: &mut Reader, raw: &Leaf, at: &At, key: &str, radial: bool) -> Option<[f64; 2]> {
    let example = if radial {
        "[\"0 mm\", \"300 mm\"]"
    } else {
        "[\"300 mm\", \"1500 mm\"]"
    };
    let v = rd.required(raw, at, key, example)?;
    let path = at.key(key);
    let [lo, hi] = rd.pair(v, &path, Dimension::Length)?;
    if radial && lo < 0.0 {
        rd.out_of_range(
            v,
            &path,
            format!(
                "`{path}` starts at a negative radius ({})",
                format_si(lo, Dimension::Length)
            ),
            Some("radii are measured from the axis and are never negative".to_string()),
        );
        return None;
    }
    if lo >= hi {
        rd.push(
            "bad-interval",
            path.clone(),
            v.span(),
            format!(
                "`{path} = {}`: the first value must be smaller than the second",
                v.get_ref().show()
            ),
            Some(format!(
                "write {key} = [{key}0, {key}1] with {key}0 < {key}1"
            )),
        );
        return None;
    }
    Some([lo, hi])
}

/// The largest corner radius a rectangle allows: half its height, and half its width (the
/// whole width for a body on the axis, whose inner side is not a corner).
fn max_corner(r0: f64, r1: f64, z0: f64, z1: f64) -> f64 {
    let w = if r0 <= 0.0 { r1 } else { 0.5 * (r1 - r0) };
    w.min(0.5 * (z1 - z0))
}

fn corner(
    rd: &mut Reader,
    raw: &Leaf,
    at: &At,
    required: bool,
    default: f64,
    limit: Option<f64>,
) -> Option<f64> {
    let key = "corner_radius";
    let rc = if required {
        rd.req_quantity(raw, at, key, Dimension::Length)?
    } else if raw.is_some() {
        rd.opt_quantity(raw, at, key, Dimension::Length)?
    } else {
        return Some(default);
    };
    let path = at.key(key);
    let rc = rd.check(
        Some(rc),
        raw.as_ref(),
        &path,
        |x| x >= 0.0,
        "must not be negative",
    )?;
    if let (Some(limit), Some(v)) = (limit, raw.as_ref())
        && rc > limit * (1.0 + 1e-9) + TOL
    {
        rd.push(
            "corner-too-large",
            path.clone(),
            v.span(),
            format!(
                "`{path}` ({}) is larger than half the rectangle ({})",
                format_si(rc, Dimension::Length),
                format_si(limit, Dimension::Length)
            ),
            Some(format!(
                "use at most {}, or enlarge the rectangle",
                format_si(limit, Dimension::Length)
            )),
        );
        return None;
    }
    Some(rc)
}

fn rect(rd: &mut Reader, raw: &RawShape, at: &At, rounded: bool) -> Option<Shape> {
    let r = interval(rd, &raw.r, at, "r", true);
    let z = interval(rd, &raw.z, at, "z", false);
    let limit = match (r, z) {
        (Some([r0, r1]), Some([z0, z1])) => Some(max_corner(r0, r1, z0, z1)),
        _ => None,
    };
    let rc = corner(rd, &raw.corner_radius, at, rounded, 0.0, limit);
    let ([r0, r1], [z0, z1], rc) = (r?, z?, rc?);
    Some(Shape::RoundedRect {
        r0,
        r1,
        z0,
        z1,
        corner_radius: rc,
    })
}

fn disc(rd: &mut Reader, raw: &RawShape, at: &At) -> Option<Shape> {
    let r = interval(rd, &raw.r, at, "r", true);
    let cz = rd.req_quantity(&raw.center_z, at, "center_z", Dimension::Length);
    let t = positive(rd, &raw.thickness, at, "thickness");
    let ([r0, r1], cz, t) = (r?, cz?, t?);
    disc_shape(rd, &raw.corner_radius, at, r0, r1, cz, t)
}

/// A disc of thickness `t` centred on `cz`; its edges are fully rounded unless a corner radius
/// is given.
pub(crate) fn disc_shape(
    rd: &mut Reader,
    corner_leaf: &Leaf,
    at: &At,
    r0: f64,
    r1: f64,
    cz: f64,
    t: f64,
) -> Option<Shape> {
    let (z0, z1) = (cz - 0.5 * t, cz + 0.5 * t);
    let limit = max_corner(r0, r1, z0, z1);
    let rc = corner(rd, corner_leaf, at, false, limit, Some(limit))?;
    Some(Shape::RoundedRect {
        r0,
        r1,
        z0,
        z1,
        corner_radius: rc,
    })
}

fn polygon(rd: &mut Reader, raw: &RawShape, at: &At) -> Option<Shape> {
    let v = rd.required(&raw.points, at, "points", "[[\"0 mm\", \"0 mm\"], ...]")?;
    let path = at.key("points");
    let items = rd.array_of(v, &path, Dimension::Length, None)?;
    let mut pts = Vec::with_capacity(items.len());
    let mut ok = true;
    for (k, item) in items.iter().enumerate() {
        let key = format!("{path}[{k}]");
        match rd.pair(item, &key, Dimension::Length) {
            Some([r, z]) if r >= 0.0 => pts.push(Point::new(r, z)),
            Some(_) => {
                rd.out_of_range(
                    item,
                    &key,
                    format!("`{key}` has a negative radius"),
                    Some("points are [r, z] with r >= 0".to_string()),
                );
                ok = false;
            }
            None => ok = false,
        }
    }
    let fillet = match &raw.fillet {
        Some(f) => {
            let x = rd.quantity(f, &at.key("fillet"), Dimension::Length);
            rd.check(
                x,
                Some(f),
                &at.key("fillet"),
                |x| x >= 0.0,
                "must not be negative",
            )
        }
        None => Some(0.0),
    };
    if !ok {
        return None;
    }
    if pts.len() < 3 {
        rd.push(
            "wrong-length",
            path.clone(),
            v.span(),
            format!("`{path}` needs at least 3 points, found {}", pts.len()),
            Some("list the corners of the outline in order, as [r, z] pairs".to_string()),
        );
        return None;
    }
    if let Some((a, b)) = self_intersection(&pts) {
        rd.push(
            "self-intersecting",
            path.clone(),
            v.span(),
            format!("`{path}`: the outline crosses itself (edges {a} and {b}, counting from 0)"),
            Some("list the points in order around the outline".to_string()),
        );
        return None;
    }
    if area(&pts).abs() <= TOL * scale(&pts).powi(2) {
        rd.push(
            "degenerate-shape",
            path.clone(),
            v.span(),
            format!("`{path}` encloses no area"),
            None,
        );
        return None;
    }
    let fillet = fillet?;
    if let Some(limit) = fillet_limit(&pts)
        && fillet > limit * (1.0 + 1e-9)
        && let Some(f) = &raw.fillet
    {
        rd.push(
            "fillet-too-large",
            at.key("fillet"),
            f.span(),
            format!(
                "`{}` ({}) does not fit the outline: the shortest corner allows {}",
                at.key("fillet"),
                format_si(fillet, Dimension::Length),
                format_si(limit, Dimension::Length)
            ),
            Some(format!(
                "use at most {}",
                format_si(limit, Dimension::Length)
            )),
        );
        return None;
    }
    Some(Shape::polygon(pts, fillet))
}

fn area(pts: &[Point]) -> f64 {
    let n = pts.len();
    (0..n)
        .map(|k| {
            let (a, b) = (pts[k], pts[(k + 1) % n]);
            a.r * b.z - b.r * a.z
        })
        .sum::<f64>()
        * 0.5
}

fn scale(pts: &[Point]) -> f64 {
    pts.iter()
        .map(|p| p.r.abs().max(p.z.abs()))
        .fold(0.0, f64::max)
        .max(1e-9)
}

fn cross(o: Point, a: Point, b: Point) -> f64 {
    (a.r - o.r) * (b.z - o.z) - (a.z - o.z) * (b.r - o.r)
}

fn segments_cross(p1: Point, p2: Point, q1: Point, q2: Point) -> bool {
    let d1 = cross(q1, q2, p1);
    let d2 = cross(q1, q2, p2);
    let d3 = cross(p1, p2, q1);
    let d4 = cross(p1, p2, q2);
    ((d1 > 0.0 && d2 < 0.0) || (d1 < 0.0 && d2 > 0.0))
        && ((d3 > 0.0 && d4 < 0.0) || (d3 < 0.0 && d4 > 0.0))
}

/// The first pair of non-adjacent edges that cross, if any.
fn self_intersection(pts: &[Point]) -> Option<(usize, usize)> {
    let n = pts.len();
    for i in 0..n {
        for j in (i + 2)..n {
            if i == 0 && j == n - 1 {
                continue;
            }
            if segments_cross(pts[i], pts[(i + 1) % n], pts[j], pts[(j + 1) % n]) {
                return Some((i, j));
            }
        }
    }
    None
}

/// The largest fillet every vertex can take with its tangent points within half of each
/// adjacent edge (the rule `Shape::polygon` applies when it clips).
fn fillet_limit(pts: &[Point]) -> Option<f64> {
    let n = pts.len();
    let mut limit = f64::INFINITY;
    for k in 0..n {
        let (prev, cur, next) = (pts[(k + n - 1) % n], pts[k], pts[(k + 1) % n]);
        // A vertex at the end of an edge on the axis takes no fillet (the axis is no surface).
        if on_axis(prev, cur) || on_axis(cur, next) {
            continue;
        }
        let u = Point::new(prev.r - cur.r, prev.z - cur.z);
        let v = Point::new(next.r - cur.r, next.z - cur.z);
        let (lu, lv) = (u.r.hypot(u.z), v.r.hypot(v.z));
        if lu == 0.0 || lv == 0.0 {
            continue;
        }
        let cos_t = ((u.r * v.r + u.z * v.z) / (lu * lv)).clamp(-1.0, 1.0);
        let theta = cos_t.acos();
        if theta < 1e-9 || std::f64::consts::PI - theta < 1e-9 {
            continue;
        }
        let t = (theta / 2.0).tan();
        limit = limit.min(0.5 * lu.min(lv) * t);
    }
    limit.is_finite().then_some(limit)
}

/// A short description of a shape in millimetres, for the expansion listing.
pub fn describe(shape: &Shape) -> String {
    let l = |x: f64| format_si(x, Dimension::Length);
    match shape {
        Shape::Sphere { center_z, radius } => {
            format!("sphere, radius {} at z {}", l(*radius), l(*center_z))
        }
        Shape::Torus {
            center_z,
            major_radius,
            minor_radius,
        } => format!(
            "torus, major radius {}, minor radius {} at z {}",
            l(*major_radius),
            l(*minor_radius),
            l(*center_z)
        ),
        Shape::RoundedRect {
            r0,
            r1,
            z0,
            z1,
            corner_radius,
        } => format!(
            "rectangle r {} to {}, z {} to {}, corner radius {}",
            l(r0.max(0.0)),
            l(*r1),
            l(*z0),
            l(*z1),
            l(*corner_radius)
        ),
        Shape::Polygon { points, fillet, .. } => {
            let b = shape.bbox();
            format!(
                "polygon of {} points in r {} to {}, z {} to {}, fillet {}",
                points.len(),
                l(b.r_min),
                l(b.r_max),
                l(b.z_min),
                l(b.z_max),
                l(*fillet)
            )
        }
        Shape::Drawn { source, .. } => {
            let b = shape.bbox();
            let rc = shape.min_radius_of_curvature();
            let curvature = if !shape.sharp_corners().is_empty() {
                format!("{} sharp corners", shape.sharp_corners().len())
            } else if rc > 0.0 {
                format!("smallest arc radius {}", l(rc))
            } else {
                "no arcs".to_string()
            };
            format!(
                "outline from {} layer \"{}\" ({} entities, {} pieces, first entity {}, SHA-256 {}; {}) in r {} to {}, z {} to {}, {}",
                source.file,
                source.layer,
                source.entities,
                source.pieces,
                source.first_handle,
                source.sha256,
                source.frame,
                l(b.r_min),
                l(b.r_max),
                l(b.z_min),
                l(b.z_max),
                curvature
            )
        }
    }
}

#[cfg(test)]
mod tests {
    use super::super::samples::boundary_samples;
    use super::*;

    #[test]
    fn samples_lie_on_the_surface() {
        let shapes = [
            Shape::Sphere {
                center_z: 1.0,
                radius: 0.3,
            },
            Shape::Torus {
                center_z: 0.5,
                major_radius: 0.25,
                minor_radius: 0.01,
            },
            Shape::RoundedRect {
                r0: 0.0,
                r1: 0.3,
                z0: 1.5,
                z1: 1.9,
                corner_radius: 0.08,
            },
            Shape::RoundedRect {
                r0: 0.0125,
                r1: 0.07,
                z0: 0.344,
                z1: 0.346,
                corner_radius: 0.001,
            },
            Shape::polygon(
                vec![
                    Point::new(0.1, 0.0),
                    Point::new(0.3, 0.0),
                    Point::new(0.2, 0.2),
                ],
                0.01,
            ),
        ];
        for s in &shapes {
            let pts = boundary_samples(s, 64);
            assert!(pts.len() >= 64);
            for p in pts {
                // Points on the axis side of a solid body are inside, not on the surface.
                let d = s.sdf(p);
                assert!(
                    d.abs() < 1e-9 || (p.r == 0.0 && d <= 0.0),
                    "{s:?} {p:?} {d}"
                );
            }
        }
    }

    #[test]
    fn crossing_edges_are_found() {
        let bow = [
            Point::new(0.0, 0.0),
            Point::new(1.0, 1.0),
            Point::new(1.0, 0.0),
            Point::new(0.0, 1.0),
        ];
        assert_eq!(self_intersection(&bow), Some((0, 2)));
        let square = [
            Point::new(0.0, 0.0),
            Point::new(1.0, 0.0),
            Point::new(1.0, 1.0),
            Point::new(0.0, 1.0),
        ];
        assert_eq!(self_intersection(&square), None);
        // A square's corners allow a fillet of half the side.
        assert!((fillet_limit(&square).unwrap() - 0.5).abs() < 1e-12);
    }
}
