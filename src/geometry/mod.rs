//! Shapes in the (r, z) half-plane, each a solid of revolution about the axis.
//!
//! Input: validated shape parameters in metres (from `design`). Output: signed distance
//! functions (negative inside), bounding boxes, and the coordinates of flat faces, which the
//! mesh turns into grid lines so that thin plates and flat faces are resolved exactly.
//!
//! Every shape is exact in its signed distance where that is cheap (circles, rounded
//! rectangles, polygons with circular fillets), so that the mesh can find where a grid link
//! crosses a surface by bisection and the field module can take the surface normal from the
//! gradient of the distance.

use serde::Serialize;

mod outline;

pub use outline::{Outline, Piece};
use outline::{build_outline, outline_sdf};

/// A point in the (r, z) half-plane, metres.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Point {
    pub r: f64,
    pub z: f64,
}

impl Point {
    pub fn new(r: f64, z: f64) -> Self {
        Self { r, z }
    }
}

/// An axis-aligned box in (r, z), metres.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct BBox {
    pub r_min: f64,
    pub r_max: f64,
    pub z_min: f64,
    pub z_max: f64,
}

impl BBox {
    pub fn overlaps(&self, other: &BBox) -> bool {
        self.r_min <= other.r_max
            && other.r_min <= self.r_max
            && self.z_min <= other.z_max
            && other.z_min <= self.z_max
    }
}

/// A solid of revolution, described by its cross-section in the (r, z) half-plane.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "shape", rename_all = "snake_case")]
pub enum Shape {
    /// A sphere centred on the axis.
    Sphere { center_z: f64, radius: f64 },
    /// A ring of circular cross-section.
    Torus {
        center_z: f64,
        major_radius: f64,
        minor_radius: f64,
    },
    /// A rectangle in (r, z) with its outer corners rounded by `corner_radius`. With
    /// `r0 = 0` the body is solid and only the corners at `r1` are rounded.
    RoundedRect {
        r0: f64,
        r1: f64,
        z0: f64,
        z1: f64,
        corner_radius: f64,
    },
    /// A closed outline in (r, z) with circular fillets of radius `fillet` at every vertex.
    Polygon {
        points: Vec<Point>,
        fillet: f64,
        #[serde(skip)]
        outline: Outline,
    },
    /// A closed outline of lines and true circular arcs read from a drawing
    /// (`drawing::read_outline`), with the drawing it came from.
    Drawn {
        source: DrawingSource,
        #[serde(skip)]
        outline: Outline,
    },
}

/// Where a drawn outline came from, so that a listing or a review note names the drawing that
/// was modelled.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DrawingSource {
    /// The drawing's path as the design file gives it.
    pub file: String,
    pub layer: String,
    /// SHA-256 of the drawing's bytes, hex.
    pub sha256: String,
    /// Entities of the drawing that make up the outline.
    pub entities: usize,
    /// Lines and arcs of the outline after chaining.
    pub pieces: usize,
    /// Handle (hex) of the outline's first entity.
    pub first_handle: String,
    /// How the drawing lies against the model's (r, z): the axis and the origin.
    pub frame: String,
}

/// Is the edge `a`–`b` on the axis? Such an edge is the inside of the solid of revolution,
/// not a surface: it closes the outline but has no distance and no fillet.
pub(crate) fn on_axis(a: Point, b: Point) -> bool {
    a.r <= AXIS_TOL && b.r <= AXIS_TOL
}

/// A vertex whose outline turns by less than this (radians, 5°) is taken as a facet joint of
/// a curve, not as a sharp edge: the field singularity of a corner whose field-side angle is
/// π + δ grows only as ρ^(−δ/(π+δ)), a few per cent over the range of any mesh (a modelling
/// choice, common practice for faceted outlines).
const SHARP_TURN: f64 = 5.0 * std::f64::consts::PI / 180.0;

/// Radii at or below this count as on the axis, metres.
const AXIS_TOL: f64 = 1e-12;

impl Shape {
    /// A polygon with filleted vertices. Points are in order (either sense); the outline is
    /// closed automatically. `fillet` must be smaller than half of every adjacent edge's share;
    /// larger values are clipped to what the edges allow.
    pub fn polygon(points: Vec<Point>, fillet: f64) -> Self {
        let outline = build_outline(&points, fillet);
        Shape::Polygon {
            points,
            fillet,
            outline,
        }
    }

    /// Signed distance from `p` to the surface: negative inside, positive outside, metres.
    pub fn sdf(&self, p: Point) -> f64 {
        match self {
            Shape::Sphere { center_z, radius } => magnitude(p.r, p.z - center_z) - radius,
            Shape::Torus {
                center_z,
                major_radius,
                minor_radius,
            } => magnitude(p.r - major_radius, p.z - center_z) - minor_radius,
            Shape::RoundedRect {
                r0,
                r1,
                z0,
                z1,
                corner_radius,
            } => {
                // A solid body on the axis is mirrored to negative r so that no corner is
                // rounded on the axis itself.
                let (lo, hi) = if *r0 <= 0.0 { (-r1, *r1) } else { (*r0, *r1) };
                rounded_box(p, lo, hi, *z0, *z1, *corner_radius)
            }
            // A solid of revolution is even in r: mirrored, the distance stays exact across
            // the axis, so that the normal at a vertex on the axis (from the distance's
            // gradient) is along the axis.
            Shape::Polygon { outline, .. } | Shape::Drawn { outline, .. } => {
                outline_sdf(outline, Point::new(p.r.abs(), p.z))
            }
        }
    }

    /// Outward unit normal at (or near) `p`, from the gradient of the signed distance.
    pub fn normal(&self, p: Point) -> Point {
        let h = 1e-7 * (1.0 + self.scale());
        let dr = self.sdf(Point::new(p.r + h, p.z)) - self.sdf(Point::new(p.r - h, p.z));
        let dz = self.sdf(Point::new(p.r, p.z + h)) - self.sdf(Point::new(p.r, p.z - h));
        let n = magnitude(dr, dz);
        if n > 0.0 {
            Point::new(dr / n, dz / n)
        } else {
            Point::new(0.0, 0.0)
        }
    }

    /// Bounding box of the cross-section.
    pub fn bbox(&self) -> BBox {
        match self {
            Shape::Sphere { center_z, radius } => BBox {
                r_min: 0.0,
                r_max: *radius,
                z_min: center_z - radius,
                z_max: center_z + radius,
            },
            Shape::Torus {
                center_z,
                major_radius,
                minor_radius,
            } => BBox {
                r_min: (major_radius - minor_radius).max(0.0),
                r_max: major_radius + minor_radius,
                z_min: center_z - minor_radius,
                z_max: center_z + minor_radius,
            },
            Shape::RoundedRect { r0, r1, z0, z1, .. } => BBox {
                r_min: r0.max(0.0),
                r_max: *r1,
                z_min: *z0,
                z_max: *z1,
            },
            Shape::Polygon { points, .. } => {
                let mut b = BBox {
                    r_min: f64::INFINITY,
                    r_max: f64::NEG_INFINITY,
                    z_min: f64::INFINITY,
                    z_max: f64::NEG_INFINITY,
                };
                for q in points {
                    b.r_min = b.r_min.min(q.r);
                    b.r_max = b.r_max.max(q.r);
                    b.z_min = b.z_min.min(q.z);
                    b.z_max = b.z_max.max(q.z);
                }
                b
            }
            Shape::Drawn { outline, .. } => outline.bbox(),
        }
    }

    /// A length typical of the shape, used to scale tolerances.
    pub fn scale(&self) -> f64 {
        let b = self.bbox();
        (b.r_max - b.r_min).max(b.z_max - b.z_min)
    }

    /// The smallest radius of curvature on the surface (infinite for sharp-free flat shapes is
    /// never returned: a rectangle without rounding reports 0, i.e. a sharp edge).
    pub fn min_radius_of_curvature(&self) -> f64 {
        match self {
            Shape::Sphere { radius, .. } => *radius,
            Shape::Torus { minor_radius, .. } => *minor_radius,
            Shape::RoundedRect { corner_radius, .. } => *corner_radius,
            Shape::Polygon {
                fillet, outline, ..
            } => {
                if outline.sharp.is_empty() {
                    *fillet
                } else {
                    0.0
                }
            }
            // As a polygon: the smallest arc, or 0 (no finite radius to resolve) when a corner
            // is sharp or the outline has no arc.
            Shape::Drawn { outline, .. } => {
                let rc = outline
                    .arcs()
                    .map(|(_, radius)| radius)
                    .fold(f64::INFINITY, f64::min);
                if outline.sharp.is_empty() && rc.is_finite() {
                    rc
                } else {
                    0.0
                }
            }
        }
    }

    /// The curved parts of the surface with their radius of curvature: boxes that the mesh
    /// resolves by a number of cells per radius. Flat faces and sharp corners have none.
    pub fn curved_parts(&self) -> Vec<(BBox, f64)> {
        let bx = |r_min: f64, r_max: f64, z_min: f64, z_max: f64| BBox {
            r_min: r_min.max(0.0),
            r_max,
            z_min,
            z_max,
        };
        match self {
            Shape::Sphere { radius, .. } => vec![(self.bbox(), *radius)],
            Shape::Torus { minor_radius, .. } => vec![(self.bbox(), *minor_radius)],
            Shape::RoundedRect {
                r0,
                r1,
                z0,
                z1,
                corner_radius: rc,
            } => {
                if *rc <= 0.0 {
                    return Vec::new();
                }
                let mut v = vec![
                    (bx(r1 - rc, *r1, *z0, z0 + rc), *rc),
                    (bx(r1 - rc, *r1, z1 - rc, *z1), *rc),
                ];
                if *r0 > 0.0 {
                    v.push((bx(*r0, r0 + rc, *z0, z0 + rc), *rc));
                    v.push((bx(*r0, r0 + rc, z1 - rc, *z1), *rc));
                }
                v
            }
            Shape::Polygon { points, fillet, .. } => {
                if *fillet <= 0.0 {
                    return Vec::new();
                }
                // The arc of a fillet lies within fillet / tan(half the turn) of its vertex;
                // two fillet radii cover turns down to about 53 degrees.
                let f = 2.0 * fillet;
                points
                    .iter()
                    .filter(|v| v.r > AXIS_TOL)
                    .map(|v| (bx(v.r - f, v.r + f, v.z - f, v.z + f), *fillet))
                    .collect()
            }
            Shape::Drawn { outline, .. } => outline.arcs().collect(),
        }
    }

    /// Convex corners of the outline left without rounding: points where the field of a
    /// conductor is singular (it grows without bound as the mesh is refined), so no finite peak
    /// exists there. The axis is not a corner: a solid body's outline is mirrored about it.
    pub fn sharp_corners(&self) -> Vec<Point> {
        match self {
            Shape::Sphere { .. } | Shape::Torus { .. } => Vec::new(),
            Shape::RoundedRect {
                r0,
                r1,
                z0,
                z1,
                corner_radius,
            } => {
                if *corner_radius > 0.0 {
                    return Vec::new();
                }
                let mut c = vec![Point::new(*r1, *z0), Point::new(*r1, *z1)];
                if *r0 > 0.0 {
                    c.push(Point::new(*r0, *z0));
                    c.push(Point::new(*r0, *z1));
                }
                c
            }
            Shape::Polygon { outline, .. } | Shape::Drawn { outline, .. } => outline.sharp.clone(),
        }
    }

    /// Coordinates of flat faces and centres that the mesh should place grid lines on:
    /// `(r values, z values)`.
    pub fn grid_hints(&self) -> (Vec<f64>, Vec<f64>) {
        match self {
            Shape::Sphere { center_z, radius } => (
                vec![*radius],
                vec![center_z - radius, *center_z, center_z + radius],
            ),
            Shape::Torus {
                center_z,
                major_radius,
                minor_radius,
            } => (
                vec![major_radius + minor_radius, major_radius - minor_radius],
                vec![*center_z],
            ),
            Shape::RoundedRect { r0, r1, z0, z1, .. } => {
                let mut r = vec![*r1];
                if *r0 > 0.0 {
                    r.push(*r0);
                }
                (r, vec![*z0, *z1])
            }
            Shape::Polygon { points, .. } => {
                // Axis-parallel edges are flat faces worth a grid line.
                let mut r = Vec::new();
                let mut z = Vec::new();
                let n = points.len();
                for k in 0..n {
                    let a = points[k];
                    let b = points[(k + 1) % n];
                    if (a.r - b.r).abs() < 1e-12 {
                        r.push(a.r);
                    }
                    if (a.z - b.z).abs() < 1e-12 {
                        z.push(a.z);
                    }
                }
                (r, z)
            }
            Shape::Drawn { outline, .. } => {
                // Straight faces parallel to an axis (the axis itself is no face).
                let mut r = Vec::new();
                let mut z = Vec::new();
                for piece in &outline.pieces {
                    if let Piece::Line { a, b } = piece {
                        if on_axis(*a, *b) {
                            continue;
                        }
                        if (a.r - b.r).abs() < 1e-12 {
                            r.push(a.r);
                        }
                        if (a.z - b.z).abs() < 1e-12 {
                            z.push(a.z);
                        }
                    }
                }
                (r, z)
            }
        }
    }

    /// Is `p` inside (or on) the solid?
    pub fn contains(&self, p: Point) -> bool {
        self.sdf(p) <= 0.0
    }
}

/// Signed distance to a box [lo, hi] × [z0, z1] with all four corners rounded by `rc`.
fn rounded_box(p: Point, lo: f64, hi: f64, z0: f64, z1: f64, rc: f64) -> f64 {
    let cr = 0.5 * (lo + hi);
    let cz = 0.5 * (z0 + z1);
    let hr = 0.5 * (hi - lo);
    let hz = 0.5 * (z1 - z0);
    let rc = rc.min(hr).min(hz).max(0.0);
    let qr = (p.r - cr).abs() - (hr - rc);
    let qz = (p.z - cz).abs() - (hz - rc);
    let outside = magnitude(qr.max(0.0), qz.max(0.0));
    outside + qr.max(qz).min(0.0) - rc
}

fn sub(a: Point, b: Point) -> Point {
    Point::new(a.r - b.r, a.z - b.z)
}

fn norm(a: Point) -> f64 {
    magnitude(a.r, a.z)
}

/// √(a² + b²) without `hypot`'s guard against overflow, which lengths in metres and fields in
/// V/m never need (the squares stay far below 1e300); several times faster in the field-line
/// and streamer loops, where it is called millions of times.
#[inline]
pub fn magnitude(a: f64, b: f64) -> f64 {
    (a * a + b * b).sqrt()
}

/// Finds the fraction `t` in (0, 1] along the segment from `a` (outside, sdf > 0) to `b`
/// (inside, sdf <= 0) where the signed distance `f` changes sign, by safeguarded secant and
/// bisection to a tolerance of `tol` metres.
pub fn crossing<F: Fn(Point) -> f64>(f: F, a: Point, b: Point, tol: f64) -> f64 {
    let fa = f(a);
    let fb = f(b);
    if fb > 0.0 || fa <= 0.0 {
        return if fa <= 0.0 { 0.0 } else { 1.0 };
    }
    let len = norm(sub(b, a));
    let (mut lo, mut hi) = (0.0f64, 1.0f64);
    let (mut flo, mut fhi) = (fa, fb);
    for _ in 0..200 {
        if (hi - lo) * len <= tol {
            break;
        }
        // Regula falsi step, kept inside the bracket; bisection when it stalls.
        let mut t = lo + (hi - lo) * flo / (flo - fhi);
        if !(t > lo + 0.05 * (hi - lo) && t < hi - 0.05 * (hi - lo)) {
            t = 0.5 * (lo + hi);
        }
        let ft = f(Point::new(a.r + t * (b.r - a.r), a.z + t * (b.z - a.z)));
        if ft > 0.0 {
            lo = t;
            flo = ft;
        } else {
            hi = t;
            fhi = ft;
        }
    }
    // Linear interpolation inside the final bracket.
    if flo - fhi > 0.0 {
        lo + (hi - lo) * flo / (flo - fhi)
    } else {
        hi
    }
}

/// In-plane radius of curvature of `shape` at the surface point `p`, from the Laplacian of its
/// signed distance (= 1/R for a distance function); `None` on a flat face or a sharp edge.
pub fn local_radius(shape: &Shape, p: Point) -> Option<f64> {
    let rc = shape.min_radius_of_curvature();
    if rc.is_nan() || rc <= 0.0 {
        return None;
    }
    let h = 1e-3 * rc;
    let f = |r: f64, z: f64| shape.sdf(Point::new(r, z));
    let lap = (f(p.r + h, p.z) + f(p.r - h, p.z) + f(p.r, p.z + h) + f(p.r, p.z - h)
        - 4.0 * f(p.r, p.z))
        / (h * h);
    let scale = shape.scale().max(rc);
    if !(lap.is_finite() && lap * scale > 1e-2) {
        return None;
    }
    Some(1.0 / lap)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    #[test]
    fn sphere_distance_is_exact() {
        let s = Shape::Sphere {
            center_z: 1.0,
            radius: 0.5,
        };
        assert_abs_diff_eq!(s.sdf(Point::new(0.0, 1.0)), -0.5, epsilon = 1e-15);
        assert_abs_diff_eq!(s.sdf(Point::new(0.3, 1.4)), 0.0, epsilon = 1e-15);
        assert_abs_diff_eq!(s.sdf(Point::new(2.0, 1.0)), 1.5, epsilon = 1e-15);
    }

    #[test]
    fn solid_rounded_cylinder_has_no_corner_on_axis() {
        let s = Shape::RoundedRect {
            r0: 0.0,
            r1: 0.3,
            z0: 1.0,
            z1: 1.4,
            corner_radius: 0.08,
        };
        // On the axis at the flat end face: exactly on the surface.
        assert_abs_diff_eq!(s.sdf(Point::new(0.0, 1.4)), 0.0, epsilon = 1e-15);
        assert_abs_diff_eq!(s.sdf(Point::new(0.0, 1.5)), 0.1, epsilon = 1e-15);
        // At the rounded corner, along the 45 degree diagonal from the corner centre.
        let c = Point::new(0.22, 1.32);
        let d = 0.08 / 2f64.sqrt();
        assert_abs_diff_eq!(s.sdf(Point::new(c.r + d, c.z + d)), 0.0, epsilon = 1e-15);
    }

    #[test]
    fn filleted_square_matches_rounded_rectangle() {
        let pts = vec![
            Point::new(0.1, 0.0),
            Point::new(0.3, 0.0),
            Point::new(0.3, 0.2),
            Point::new(0.1, 0.2),
        ];
        let poly = Shape::polygon(pts, 0.05);
        let rect = Shape::RoundedRect {
            r0: 0.1,
            r1: 0.3,
            z0: 0.0,
            z1: 0.2,
            corner_radius: 0.05,
        };
        for &(r, z) in &[
            (0.35, 0.25),
            (0.2, 0.1),
            (0.0, -0.1),
            (0.31, 0.19),
            (0.28, 0.01),
            (0.5, 0.1),
        ] {
            let p = Point::new(r, z);
            assert_abs_diff_eq!(poly.sdf(p), rect.sdf(p), epsilon = 1e-12);
        }
    }

    #[test]
    fn crossing_finds_the_circle() {
        let s = Shape::Sphere {
            center_z: 0.0,
            radius: 1.0,
        };
        let t = crossing(
            |p| s.sdf(p),
            Point::new(2.0, 0.0),
            Point::new(0.5, 0.0),
            1e-12,
        );
        assert_abs_diff_eq!(t, 2.0 / 3.0, epsilon = 1e-10);
    }
}
