//! Points on the surface of a shape, for the enclosure and overlap checks and the expansion
//! listing.

use crate::geometry::{Point, Shape, on_axis};

/// Points on the surface of `shape` (in the half-plane r >= 0), about `n` of them, for
/// containment and overlap tests.
pub(crate) fn boundary_samples(shape: &Shape, n: usize) -> Vec<Point> {
    let n = n.max(8);
    match shape {
        Shape::Sphere { center_z, radius } => (0..=n)
            .map(|k| {
                let a = -std::f64::consts::FRAC_PI_2 + std::f64::consts::PI * k as f64 / n as f64;
                Point::new((radius * a.cos()).max(0.0), center_z + radius * a.sin())
            })
            .collect(),
        Shape::Torus {
            center_z,
            major_radius,
            minor_radius,
        } => (0..n)
            .map(|k| {
                let a = std::f64::consts::TAU * k as f64 / n as f64;
                Point::new(
                    major_radius + minor_radius * a.cos(),
                    center_z + minor_radius * a.sin(),
                )
            })
            .collect(),
        Shape::RoundedRect { r0, r1, z0, z1, .. } => {
            let lo = r0.max(0.0);
            let corners = [
                Point::new(lo, *z0),
                Point::new(*r1, *z0),
                Point::new(*r1, *z1),
                Point::new(lo, *z1),
            ];
            let solid = *r0 <= 0.0;
            outline_samples(shape, &corners, n, |a, b| solid && on_axis(a, b))
        }
        Shape::Polygon { points, .. } => outline_samples(shape, points, n, on_axis),
        Shape::Drawn { .. } => shape.outline_points(n),
    }
}

/// Samples the closed outline through `corners` evenly by length and projects each sample
/// onto the true surface along the distance gradient (exact for exact distance functions).
/// Edges for which `keep` holds are kept as they are (the axis side of a solid body).
fn outline_samples(
    shape: &Shape,
    corners: &[Point],
    n: usize,
    keep: impl Fn(Point, Point) -> bool,
) -> Vec<Point> {
    let m = corners.len();
    let lens: Vec<f64> = (0..m)
        .map(|k| {
            let (a, b) = (corners[k], corners[(k + 1) % m]);
            (b.r - a.r).hypot(b.z - a.z)
        })
        .collect();
    let total: f64 = lens.iter().sum();
    let mut out = Vec::with_capacity(n + m);
    for k in 0..m {
        let (a, b) = (corners[k], corners[(k + 1) % m]);
        let steps = ((n as f64 * lens[k] / total).ceil() as usize).max(2);
        for s in 0..steps {
            let t = s as f64 / steps as f64;
            let p = Point::new(a.r + t * (b.r - a.r), a.z + t * (b.z - a.z));
            if keep(a, b) {
                out.push(p);
                continue;
            }
            let d = shape.sdf(p);
            let q = if d.abs() > 0.0 {
                let g = shape.normal(p);
                Point::new((p.r - d * g.r).max(0.0), p.z - d * g.z)
            } else {
                p
            };
            out.push(q);
        }
    }
    out
}
