//! Outlines of lines and circular arcs: the filleted outline of a polygon and the loop of a
//! drawing, their signed distance, inside test, bounding box, curved parts and sharp corners.

use super::{BBox, DrawingSource, Point, SHARP_TURN, Shape, norm, on_axis, sub};
use serde::Serialize;

/// One piece of an outline: a filleted polygon's, or a drawing's.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub enum Piece {
    Line {
        a: Point,
        b: Point,
    },
    /// Circular arc about `c` of radius `radius`, from angle `a0` sweeping `sweep` (radians,
    /// signed).
    Arc {
        c: Point,
        radius: f64,
        a0: f64,
        sweep: f64,
    },
}

/// The derived outline of a polygon: its lines and arcs in order around the loop. Kept
/// private behind a newtype so that `Shape` stays comparable and printable while the outline
/// stays an implementation detail.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Outline {
    pub(super) pieces: Vec<Piece>,
    /// Vertices left sharp that point into the field: convex corners with no fillet.
    pub(super) sharp: Vec<Point>,
}

/// Signed distance to a closed outline of lines and arcs; edges on the axis are no surface.
pub(super) fn outline_sdf(outline: &Outline, p: Point) -> f64 {
    let mut d = f64::INFINITY;
    for piece in &outline.pieces {
        if let Piece::Line { a, b } = piece
            && on_axis(*a, *b)
        {
            continue;
        }
        d = d.min(piece_distance(piece, p));
    }
    if inside_outline(&outline.pieces, p) {
        -d
    } else {
        d
    }
}

fn segment_distance(p: Point, a: Point, b: Point) -> f64 {
    let ab = sub(b, a);
    let ap = sub(p, a);
    let len2 = ab.r * ab.r + ab.z * ab.z;
    let t = if len2 > 0.0 {
        ((ap.r * ab.r + ap.z * ab.z) / len2).clamp(0.0, 1.0)
    } else {
        0.0
    };
    norm(Point::new(ap.r - t * ab.r, ap.z - t * ab.z))
}

fn piece_distance(piece: &Piece, p: Point) -> f64 {
    match piece {
        Piece::Line { a, b } => segment_distance(p, *a, *b),
        Piece::Arc {
            c,
            radius,
            a0,
            sweep,
        } => {
            let v = sub(p, *c);
            let ang = v.z.atan2(v.r);
            // Angle of p relative to the arc start, measured in the sweep's sense.
            let mut rel = (ang - a0) * sweep.signum();
            rel = rel.rem_euclid(std::f64::consts::TAU);
            if rel <= sweep.abs() {
                (norm(v) - radius).abs()
            } else {
                let s = Point::new(c.r + radius * a0.cos(), c.z + radius * a0.sin());
                let e_ang = a0 + sweep;
                let e = Point::new(c.r + radius * e_ang.cos(), c.z + radius * e_ang.sin());
                norm(sub(p, s)).min(norm(sub(p, e)))
            }
        }
    }
}

/// Builds the filleted outline of a closed polygon. Vertices on the axis next to an edge on
/// the axis are not filleted (the axis is not a surface); such a vertex is sharp only when
/// the body mirrored about the axis has a corner there (its edge meets the axis off square).
pub(super) fn build_outline(points: &[Point], fillet: f64) -> Outline {
    let n = points.len();
    let mut out = Outline::default();
    if n < 3 {
        return out;
    }
    // Orientation: positive area is counter-clockwise in (r, z).
    let area2: f64 = (0..n)
        .map(|k| {
            let (a, b) = (points[k], points[(k + 1) % n]);
            a.r * b.z - b.r * a.z
        })
        .sum();
    // For each vertex: the two tangent points and the arc between them.
    let mut arcs: Vec<(Point, Point, Option<Piece>)> = Vec::with_capacity(n);
    for k in 0..n {
        let prev = points[(k + n - 1) % n];
        let cur = points[k];
        let next = points[(k + 1) % n];
        let u = sub(prev, cur);
        let v = sub(next, cur);
        let lu = norm(u);
        let lv = norm(v);
        if lu == 0.0 || lv == 0.0 {
            arcs.push((cur, cur, None));
            continue;
        }
        let (u, v) = (
            Point::new(u.r / lu, u.z / lu),
            Point::new(v.r / lv, v.z / lv),
        );
        let cos_t = (u.r * v.r + u.z * v.z).clamp(-1.0, 1.0);
        let theta = cos_t.acos(); // angle between the edges at the vertex
        // Convex (the solid's interior angle below π): the turn from the incoming edge to the
        // outgoing one has the sense of the loop.
        let cross = (cur.r - prev.r) * (next.z - cur.z) - (cur.z - prev.z) * (next.r - cur.r);
        let convex = cross * area2 > 0.0;
        if on_axis(prev, cur) || on_axis(cur, next) {
            // The mirrored body's corner: the other edge against the axis, doubled.
            let w = if on_axis(prev, cur) { v } else { u };
            if w.r.abs() < 1.0 - 1e-9 && w.r > 0.0 {
                // The edge leaves the axis off square: a cone point on the axis, sharp when
                // the solid's full angle there (twice the edge's angle to the axis) is below π.
                let to_axis = w.z.abs().acos(); // angle between the edge and the axis
                let inside_up = if on_axis(prev, cur) { u.z } else { v.z };
                let solid_angle = if inside_up * w.z > 0.0 {
                    2.0 * to_axis
                } else {
                    2.0 * (std::f64::consts::PI - to_axis)
                };
                if solid_angle < std::f64::consts::PI - SHARP_TURN {
                    out.sharp.push(cur);
                }
            }
            arcs.push((cur, cur, None));
            continue;
        }
        if theta < 1e-9 || (std::f64::consts::PI - theta) < 1e-9 {
            arcs.push((cur, cur, None));
            continue;
        }
        if fillet <= 0.0 {
            if convex && std::f64::consts::PI - theta > SHARP_TURN {
                out.sharp.push(cur);
            }
            arcs.push((cur, cur, None));
            continue;
        }
        let t = (theta / 2.0).tan();
        // Tangent distance along each edge, limited to half of each edge.
        let mut dist = fillet / t;
        dist = dist.min(0.5 * lu).min(0.5 * lv);
        let radius = dist * t;
        let pa = Point::new(cur.r + u.r * dist, cur.z + u.z * dist);
        let pb = Point::new(cur.r + v.r * dist, cur.z + v.z * dist);
        let bis = Point::new(u.r + v.r, u.z + v.z);
        let lb = norm(bis);
        let cdist = radius / (theta / 2.0).sin();
        let c = Point::new(cur.r + bis.r / lb * cdist, cur.z + bis.z / lb * cdist);
        let a0 = (pa.z - c.z).atan2(pa.r - c.r);
        let a1 = (pb.z - c.z).atan2(pb.r - c.r);
        let mut sweep = a1 - a0;
        while sweep > std::f64::consts::PI {
            sweep -= std::f64::consts::TAU;
        }
        while sweep < -std::f64::consts::PI {
            sweep += std::f64::consts::TAU;
        }
        arcs.push((
            pa,
            pb,
            Some(Piece::Arc {
                c,
                radius,
                a0,
                sweep,
            }),
        ));
    }
    for k in 0..n {
        let (_, out_k, arc) = &arcs[k];
        if let Some(arc) = arc {
            out.pieces.push(arc.clone());
        }
        let (in_next, _, _) = &arcs[(k + 1) % n];
        out.pieces.push(Piece::Line {
            a: *out_k,
            b: *in_next,
        });
    }
    out
}

impl Piece {
    /// The point at angle `ang` on an arc's circle.
    fn on_circle(c: Point, radius: f64, ang: f64) -> Point {
        Point::new(c.r + radius * ang.cos(), c.z + radius * ang.sin())
    }

    /// Where the piece starts.
    pub fn start(&self) -> Point {
        match self {
            Piece::Line { a, .. } => *a,
            Piece::Arc { c, radius, a0, .. } => Self::on_circle(*c, *radius, *a0),
        }
    }

    /// Where the piece ends.
    pub fn end(&self) -> Point {
        match self {
            Piece::Line { b, .. } => *b,
            Piece::Arc {
                c,
                radius,
                a0,
                sweep,
            } => Self::on_circle(*c, *radius, a0 + sweep),
        }
    }

    /// The same piece run the other way.
    pub fn reversed(&self) -> Piece {
        match self {
            Piece::Line { a, b } => Piece::Line { a: *b, b: *a },
            Piece::Arc {
                c,
                radius,
                a0,
                sweep,
            } => Piece::Arc {
                c: *c,
                radius: *radius,
                a0: a0 + sweep,
                sweep: -sweep,
            },
        }
    }

    /// Unit tangent in the running sense at the start (`at_end` false) or the end.
    fn tangent(&self, at_end: bool) -> Point {
        match self {
            Piece::Line { a, b } => {
                let d = sub(*b, *a);
                let l = norm(d);
                if l > 0.0 {
                    Point::new(d.r / l, d.z / l)
                } else {
                    Point::new(0.0, 0.0)
                }
            }
            Piece::Arc { a0, sweep, .. } => {
                let ang = if at_end { a0 + sweep } else { *a0 };
                let s = sweep.signum();
                Point::new(-s * ang.sin(), s * ang.cos())
            }
        }
    }

    /// Length of the piece.
    pub fn length(&self) -> f64 {
        match self {
            Piece::Line { a, b } => norm(sub(*b, *a)),
            Piece::Arc { radius, sweep, .. } => radius * sweep.abs(),
        }
    }

    /// The point a fraction `t` in [0, 1] along the piece.
    pub fn at(&self, t: f64) -> Point {
        match self {
            Piece::Line { a, b } => Point::new(a.r + t * (b.r - a.r), a.z + t * (b.z - a.z)),
            Piece::Arc {
                c,
                radius,
                a0,
                sweep,
            } => Self::on_circle(*c, *radius, a0 + t * sweep),
        }
    }

    /// Twice the signed area this piece adds to the loop's shoelace sum (∮ r dz − z dr).
    fn area2(&self) -> f64 {
        match self {
            Piece::Line { a, b } => a.r * b.z - b.r * a.z,
            Piece::Arc {
                c,
                radius,
                a0,
                sweep,
            } => {
                let a1 = a0 + sweep;
                c.r * radius * (a1.sin() - a0.sin()) - c.z * radius * (a1.cos() - a0.cos())
                    + radius * radius * sweep
            }
        }
    }

    /// Bounding box of the piece: its ends, and the extremes of an arc's circle that the arc
    /// passes.
    fn bbox(&self) -> BBox {
        let (s, e) = (self.start(), self.end());
        let mut b = BBox {
            r_min: s.r.min(e.r),
            r_max: s.r.max(e.r),
            z_min: s.z.min(e.z),
            z_max: s.z.max(e.z),
        };
        if let Piece::Arc {
            c,
            radius,
            a0,
            sweep,
        } = self
        {
            use std::f64::consts::{FRAC_PI_2, TAU};
            for k in 0..4 {
                let ang = k as f64 * FRAC_PI_2;
                let rel = ((ang - a0) * sweep.signum()).rem_euclid(TAU);
                if rel <= sweep.abs() {
                    let q = Self::on_circle(*c, *radius, ang);
                    b.r_min = b.r_min.min(q.r);
                    b.r_max = b.r_max.max(q.r);
                    b.z_min = b.z_min.min(q.z);
                    b.z_max = b.z_max.max(q.z);
                }
            }
        }
        b
    }
}

impl Outline {
    /// The outline of a closed loop of pieces, each starting where the one before ends (the
    /// last ending where the first starts). Sharp corners are found as for a polygon: a joint
    /// where the loop turns by more than 5° towards its inside (a convex corner), and a point
    /// on the axis where the body of revolution comes to a cone point.
    pub(crate) fn from_pieces(pieces: Vec<Piece>) -> Outline {
        let n = pieces.len();
        let area2: f64 = pieces.iter().map(Piece::area2).sum();
        let mut sharp = Vec::new();
        for k in 0..n {
            let (prev, next) = (&pieces[(k + n - 1) % n], &pieces[k]);
            let cur = next.start();
            // Directions away from the joint, along the incoming and the outgoing piece.
            let ti = prev.tangent(true);
            let u = Point::new(-ti.r, -ti.z);
            let v = next.tangent(false);
            let axis_in = matches!(prev, Piece::Line { a, b } if on_axis(*a, *b));
            let axis_out = matches!(next, Piece::Line { a, b } if on_axis(*a, *b));
            if axis_in && axis_out {
                continue;
            }
            if axis_in || axis_out {
                let (w, inside_up) = if axis_in { (v, u.z) } else { (u, v.z) };
                if w.r.abs() < 1.0 - 1e-9 && w.r > 0.0 {
                    let to_axis = w.z.abs().acos();
                    let solid_angle = if inside_up * w.z > 0.0 {
                        2.0 * to_axis
                    } else {
                        2.0 * (std::f64::consts::PI - to_axis)
                    };
                    if solid_angle < std::f64::consts::PI - SHARP_TURN {
                        sharp.push(cur);
                    }
                }
                continue;
            }
            let cross = ti.r * v.z - ti.z * v.r;
            let dot = ti.r * v.r + ti.z * v.z;
            let turn = cross.atan2(dot);
            if cross * area2 > 0.0 && turn.abs() > SHARP_TURN {
                sharp.push(cur);
            }
        }
        Outline { pieces, sharp }
    }

    pub(super) fn bbox(&self) -> BBox {
        let mut b = BBox {
            r_min: f64::INFINITY,
            r_max: f64::NEG_INFINITY,
            z_min: f64::INFINITY,
            z_max: f64::NEG_INFINITY,
        };
        for p in &self.pieces {
            let q = p.bbox();
            b.r_min = b.r_min.min(q.r_min).max(0.0);
            b.r_max = b.r_max.max(q.r_max);
            b.z_min = b.z_min.min(q.z_min);
            b.z_max = b.z_max.max(q.z_max);
        }
        b
    }

    /// The arcs with their radii, as curved parts for the mesh.
    pub(super) fn arcs(&self) -> impl Iterator<Item = (BBox, f64)> + '_ {
        self.pieces.iter().filter_map(|p| match p {
            Piece::Arc { radius, .. } => Some((p.bbox(), *radius)),
            Piece::Line { .. } => None,
        })
    }

    /// The pieces in order around the loop.
    pub fn pieces(&self) -> &[Piece] {
        &self.pieces
    }
}

impl Shape {
    /// A drawn outline: a closed loop of lines and arcs, each piece starting where the one
    /// before ends. The caller (`drawing`) has checked that the loop is closed, does not cross
    /// itself and stays in r >= 0.
    pub fn drawn(pieces: Vec<Piece>, source: DrawingSource) -> Shape {
        Shape::Drawn {
            source,
            outline: Outline::from_pieces(pieces),
        }
    }

    /// About `n` points on a drawn outline, spread by length and exactly on its pieces; empty
    /// for the other shapes.
    pub fn outline_points(&self, n: usize) -> Vec<Point> {
        let Shape::Drawn { outline, .. } = self else {
            return Vec::new();
        };
        let total: f64 = outline.pieces.iter().map(Piece::length).sum();
        let mut out = Vec::with_capacity(n + outline.pieces.len());
        for p in &outline.pieces {
            let steps =
                ((n as f64 * p.length() / total.max(f64::MIN_POSITIVE)).ceil() as usize).max(2);
            for s in 0..steps {
                let q = p.at(s as f64 / steps as f64);
                out.push(Point::new(q.r.max(0.0), q.z));
            }
        }
        out
    }
}

/// Inside test by the crossing number of a ray from `p` towards +r, exact for lines and arcs:
/// each arc is split into pieces monotone in z (at the top and bottom of its circle), and every
/// piece counts by the same half-open rule as a line, so that joints are counted once.
fn inside_outline(pieces: &[Piece], p: Point) -> bool {
    let mut inside = false;
    let mut count = |a: Point, b: Point, x: f64| {
        if (a.z > p.z) != (b.z > p.z) && p.r < x {
            inside = !inside;
        }
    };
    for piece in pieces {
        match piece {
            Piece::Line { a, b } => {
                if (a.z > p.z) != (b.z > p.z) {
                    let x = a.r + (p.z - a.z) * (b.r - a.r) / (b.z - a.z);
                    count(*a, *b, x);
                }
            }
            Piece::Arc {
                c,
                radius,
                a0,
                sweep,
            } => {
                use std::f64::consts::{FRAC_PI_2, PI};
                // Angles where the circle turns in z: π/2 + kπ, inside the sweep.
                let (lo, hi) = if *sweep >= 0.0 {
                    (*a0, a0 + sweep)
                } else {
                    (a0 + sweep, *a0)
                };
                let mut cuts = vec![lo];
                let mut t = ((lo - FRAC_PI_2) / PI).ceil() * PI + FRAC_PI_2;
                while t < hi {
                    if t > lo {
                        cuts.push(t);
                    }
                    t += PI;
                }
                cuts.push(hi);
                let at = |ang: f64| Point::new(c.r + radius * ang.cos(), c.z + radius * ang.sin());
                for w in cuts.windows(2) {
                    let (s, e) = (at(w[0]), at(w[1]));
                    if (s.z > p.z) != (e.z > p.z) {
                        let dz = (p.z - c.z) / radius;
                        let dr = radius * (1.0 - dz * dz).max(0.0).sqrt();
                        // The piece lies on one side of the circle's vertical diameter.
                        let side = (0.5 * (w[0] + w[1])).cos().signum();
                        count(s, e, c.r + side * dr);
                    }
                }
            }
        }
    }
    inside
}
