//! Property tests of the units parser and the shape functions.
//!
//! Units: what `format_si` writes, `parse` reads back to within the 4 significant figures
//! shown; a number written with any accepted unit parses to `value * factor + offset`; no
//! string makes either parser panic. Shapes: the signed distance is 1-Lipschitz (a property
//! of every exact distance function), its sign agrees with `contains` and with an independent
//! inside test (circle equations, ray casting for polygons), and the bounding box holds every
//! inside point and touches the surface on each side.

use holdoff::model::{Point, Shape};
use holdoff::units::{Dimension, format_si, lookup_unit, parse, parse_quantity};
use proptest::prelude::*;

fn dimension() -> impl Strategy<Value = Dimension> {
    (0..Dimension::ALL.len()).prop_map(|k| Dimension::ALL[k])
}

/// SI magnitudes an engineer might write, 1e-9 to 1e10, either sign, and zero.
fn si_value() -> impl Strategy<Value = f64> {
    prop_oneof![
        1 => Just(0.0),
        10 => (-9.0f64..10.0, any::<bool>()).prop_map(|(e, neg)| {
            let v = 10f64.powf(e);
            if neg { -v } else { v }
        }),
    ]
}

proptest! {
    #![proptest_config(ProptestConfig {
        failure_persistence: None,
        ..ProptestConfig::default()
    })]

    #[test]
    fn formatted_values_parse_back(dim in dimension(), v in si_value()) {
        // Temperatures are absolute: keep them above absolute zero, 1 K to 5000 K.
        let v = if dim == Dimension::Temperature { 1.0 + v.abs().min(4999.0) } else { v };
        let s = format_si(v, dim);
        let back = parse(&s, dim).map_err(|e| TestCaseError::fail(format!("{s}: {e}")))?;
        let tol = if dim == Dimension::Temperature {
            // Shown in degC with 4 significant figures of the Celsius number and at most two
            // decimals: half a unit in the last figure shown.
            0.006 + 5e-4 * (v - 273.15).abs()
        } else {
            // 4 significant figures: half a unit in the 4th figure.
            5e-4 * v.abs()
        };
        prop_assert!((back - v).abs() <= tol, "{v} -> {s} -> {back}");
    }

    #[test]
    fn every_accepted_unit_scales_its_number(
        dim in dimension(),
        k in 0usize..64,
        x in -1e6f64..1e6,
        spaced in any::<bool>(),
    ) {
        let units = dim.accepted_units();
        let symbol = units[k % units.len()];
        let u = lookup_unit(symbol).ok_or_else(|| TestCaseError::fail(symbol))?;
        let text = if spaced { format!("{x} {symbol}") } else { format!("{x}{symbol}") };
        let v = parse(&text, dim).map_err(|e| TestCaseError::fail(format!("{text}: {e}")))?;
        let want = x * u.factor + u.offset;
        prop_assert!((v - want).abs() <= 1e-12 * want.abs().max(1e-300), "{text}: {v} vs {want}");
        let (any, found) = parse_quantity(&text).map_err(|e| TestCaseError::fail(format!("{e}")))?;
        prop_assert_eq!(found, dim);
        prop_assert_eq!(any, v);
    }

    #[test]
    fn parsers_never_panic_on_arbitrary_text(s in "\\PC{0,40}", dim in dimension()) {
        let _ = parse(&s, dim);
        let _ = parse_quantity(&s);
    }

    #[test]
    fn parsers_never_panic_on_number_like_text(
        num in "[-+]?[0-9]{0,4}\\.?[0-9]{0,3}([eE][-+]?[0-9]{0,4})?",
        gap in "[ \t]{0,2}",
        unit in "[a-zA-Z/%\u{b5}\u{3a9}°()]{0,6}",
        dim in dimension(),
    ) {
        let s = format!("{num}{gap}{unit}");
        match parse(&s, dim) {
            Ok(v) => prop_assert!(v.is_finite(), "{s} -> {v}"),
            Err(e) => prop_assert!(!e.to_string().is_empty()),
        }
    }
}

/// Shapes within a 1 m scale, off the axis where a shape requires it.
fn shape() -> impl Strategy<Value = Shape> {
    shape_of(true)
}

/// As [`shape`]; polygons with filleted vertices when `filleted`.
fn shape_of(filleted: bool) -> impl Strategy<Value = Shape> {
    let sphere = (0.0f64..1.0, 0.01f64..0.5)
        .prop_map(|(center_z, radius)| Shape::Sphere { center_z, radius });
    let torus =
        (0.0f64..1.0, 0.05f64..0.5, 0.05f64..0.9).prop_map(|(center_z, major, f)| Shape::Torus {
            center_z,
            major_radius: major,
            minor_radius: f * major,
        });
    let rect = (
        0.0f64..0.3,
        0.01f64..0.4,
        0.0f64..1.0,
        0.01f64..0.4,
        0.0f64..1.0,
        any::<bool>(),
    )
        .prop_map(|(r0, w, z0, h, f, solid)| {
            let r0 = if solid { 0.0 } else { r0 };
            Shape::RoundedRect {
                r0,
                r1: r0 + w,
                z0,
                z1: z0 + h,
                corner_radius: f * 0.49 * w.min(h),
            }
        });
    prop_oneof![sphere, torus, rect, polygon(filleted)]
}

/// A star-shaped polygon (so simple, never self-intersecting) around a centre off the axis:
/// 3 to 8 vertices at increasing angles and radii between half and all of `size`.
fn polygon(filleted: bool) -> impl Strategy<Value = Shape> {
    (
        0.3f64..0.6,
        0.0f64..1.0,
        0.05f64..0.25,
        prop::collection::vec((0.0f64..1.0, 0.5f64..1.0), 3..9),
        0.0f64..0.2,
    )
        .prop_map(move |(rc, zc, size, raw, fillet)| {
            let n = raw.len();
            let points = raw
                .iter()
                .enumerate()
                .map(|(k, &(jitter, f))| {
                    // Each vertex in its own angular sector keeps the order.
                    let a = std::f64::consts::TAU * (k as f64 + 0.1 + 0.8 * jitter) / n as f64;
                    Point::new(rc + f * size * a.cos(), zc + f * size * a.sin())
                })
                .collect();
            let fillet = if filleted { fillet * size } else { 0.0 };
            Shape::polygon(points, fillet)
        })
}

fn point() -> impl Strategy<Value = Point> {
    (0.0f64..1.2, -0.3f64..1.6).prop_map(|(r, z)| Point::new(r, z))
}

/// Ray casting: is `p` inside the polygon through `pts`?
fn inside_by_ray(pts: &[Point], p: Point) -> bool {
    let mut inside = false;
    let n = pts.len();
    for k in 0..n {
        let (a, b) = (pts[k], pts[(k + 1) % n]);
        if (a.z > p.z) != (b.z > p.z) {
            let r = a.r + (p.z - a.z) / (b.z - a.z) * (b.r - a.r);
            if p.r < r {
                inside = !inside;
            }
        }
    }
    inside
}

proptest! {
    #![proptest_config(ProptestConfig {
        failure_persistence: None,
        ..ProptestConfig::default()
    })]

    #[test]
    fn signed_distance_is_one_lipschitz(s in shape(), p in point(), q in point()) {
        let d = (s.sdf(p) - s.sdf(q)).abs();
        let gap = (p.r - q.r).hypot(p.z - q.z);
        prop_assert!(d <= gap * (1.0 + 1e-9) + 1e-12, "{s:?}: |sdf(p) - sdf(q)| = {d} > |p - q| = {gap}");
    }

    #[test]
    fn sign_of_the_distance_agrees_with_contains(s in shape(), p in point()) {
        let d = s.sdf(p);
        prop_assert!(d.is_finite());
        prop_assert_eq!(s.contains(p), d <= 0.0);
    }

    #[test]
    fn sign_agrees_with_an_independent_inside_test(s in shape(), p in point()) {
        let d = s.sdf(p);
        // Points within a hair of the surface may fall either way.
        prop_assume!(d.abs() > 1e-9);
        let inside = match &s {
            Shape::Sphere { center_z, radius } => p.r.hypot(p.z - center_z) < *radius,
            Shape::Torus { center_z, major_radius, minor_radius } => {
                (p.r - major_radius).hypot(p.z - center_z) < *minor_radius
            }
            Shape::RoundedRect { r0, r1, z0, z1, corner_radius } => {
                let in_box = p.r > *r0 && p.r < *r1 && p.z > *z0 && p.z < *z1;
                // The box less its rounded corners: inside the box and not beyond a corner
                // circle (corners at r1 always; at r0 only when the body is hollow).
                let rc = *corner_radius;
                let corner_cut = |cr: f64, cz: f64, sr: f64, sz: f64| {
                    (p.r - cr) * sr > 0.0
                        && (p.z - cz) * sz > 0.0
                        && (p.r - cr).hypot(p.z - cz) > rc
                };
                let mut cut = corner_cut(r1 - rc, z1 - rc, 1.0, 1.0)
                    || corner_cut(r1 - rc, z0 + rc, 1.0, -1.0);
                if *r0 > 0.0 {
                    cut = cut
                        || corner_cut(r0 + rc, z1 - rc, -1.0, 1.0)
                        || corner_cut(r0 + rc, z0 + rc, -1.0, -1.0);
                }
                in_box && !cut
            }
            Shape::Polygon { .. } | Shape::Drawn { .. } => return Ok(()),
        };
        prop_assert_eq!(d < 0.0, inside, "{:?} at {:?}: sdf {}", s, p, d);
    }

    #[test]
    fn polygon_sign_agrees_with_ray_casting(s in polygon(false), p in point()) {
        let d = s.sdf(p);
        prop_assume!(d.abs() > 1e-9);
        let Shape::Polygon { points, .. } = &s else { unreachable!() };
        prop_assert_eq!(d < 0.0, inside_by_ray(points, p), "{:?} at {:?}: sdf {}", s, p, d);
    }

    #[test]
    fn bounding_box_holds_every_inside_point(s in shape(), p in point()) {
        let b = s.bbox();
        let tol = 1e-12;
        if s.sdf(p) < 0.0 {
            prop_assert!(
                p.r >= b.r_min - tol && p.r <= b.r_max + tol && p.z >= b.z_min - tol && p.z <= b.z_max + tol,
                "{:?}: {:?} inside but outside {:?}", s, p, b
            );
        }
    }

    /// The box is tight: the surface touches each of its four sides, i.e. the smallest signed
    /// distance along each side is at most the spacing of the points tried there (2000 per
    /// side; a box grown by that much on one side fails). Filleted polygons are left out:
    /// their box is the box of their vertices, which the fillets cut inside.
    #[test]
    fn bounding_box_is_tight(s in shape_of(false)) {
        let b = s.bbox();
        const N: usize = 2000;
        let sides = [
            (Point::new(b.r_min, b.z_min), Point::new(b.r_min, b.z_max)),
            (Point::new(b.r_max, b.z_min), Point::new(b.r_max, b.z_max)),
            (Point::new(b.r_min, b.z_min), Point::new(b.r_max, b.z_min)),
            (Point::new(b.r_min, b.z_max), Point::new(b.r_max, b.z_max)),
        ];
        for (a, c) in sides {
            let len = (c.r - a.r).hypot(c.z - a.z);
            let nearest = (0..=N)
                .map(|k| {
                    let t = k as f64 / N as f64;
                    s.sdf(Point::new(a.r + t * (c.r - a.r), a.z + t * (c.z - a.z)))
                })
                .fold(f64::INFINITY, f64::min);
            prop_assert!(
                nearest <= len / N as f64 + 1e-12,
                "{:?}: the side {:?}-{:?} of {:?} is {} from the surface", s, a, c, b, nearest
            );
        }
    }
}
