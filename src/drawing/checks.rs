//! The checks of a chosen loop: it stays at r >= 0, does not cross itself and encloses an area.

use super::chain::{Loop, loop_box, seg_of};
use super::pieces::dist;
use super::{CHAIN_TOLERANCE, Ctx, DrawingError, Seg};
use crate::geometry::{Piece, Point};

/// The outline stays in r >= 0, does not cross itself and encloses an area.
pub(super) fn check_loop(
    segs: &[Seg],
    lp: &Loop,
    pieces: &[Piece],
    ctx: &Ctx,
) -> Result<(), Box<DrawingError>> {
    let handle = |k: usize| seg_of(segs, lp[k]).handle.clone();
    for (k, p) in pieces.iter().enumerate() {
        let q = leftmost(p);
        if q.r < -CHAIN_TOLERANCE {
            return Err(Box::new(DrawingError::CrossesAxis {
                file: ctx.file.into(),
                layer: ctx.layer.into(),
                handle: handle(k),
                at: ctx.at(q),
                r: q.r / ctx.scale,
                radius: ctx.frame.radius_words(),
            }));
        }
    }
    let n = pieces.len();
    for i in 0..n {
        for j in (i + 1)..n {
            let mut joints = Vec::new();
            if j == i + 1 {
                joints.push(pieces[j].start());
            }
            if i == 0 && j == n - 1 {
                joints.push(pieces[0].start());
            }
            let hit = meeting(&pieces[i], &pieces[j]).into_iter().find(|q| {
                joints
                    .iter()
                    .all(|jt| dist(*q, *jt) > 10.0 * CHAIN_TOLERANCE)
            });
            if let Some(q) = hit {
                return Err(Box::new(DrawingError::SelfIntersecting {
                    file: ctx.file.into(),
                    layer: ctx.layer.into(),
                    a: handle(i),
                    b: handle(j),
                    at: ctx.at(q),
                }));
            }
        }
    }
    let area2: f64 = pieces
        .iter()
        .map(|p| {
            // Shoelace by fine samples of the arcs: only the sign and size against zero matter.
            let steps = if matches!(p, Piece::Arc { .. }) {
                32
            } else {
                1
            };
            (0..steps)
                .map(|s| {
                    let (a, b) = (
                        p.at(s as f64 / steps as f64),
                        p.at((s + 1) as f64 / steps as f64),
                    );
                    a.r * b.z - b.r * a.z
                })
                .sum::<f64>()
        })
        .sum();
    let b = loop_box(segs, lp);
    let size = (b.1 - b.0).max(b.3 - b.2);
    if area2.abs() <= 1e-9 * size * size || !area2.is_finite() {
        return Err(Box::new(DrawingError::NoArea {
            file: ctx.file.into(),
            layer: ctx.layer.into(),
            handle: handle(0),
        }));
    }
    Ok(())
}

/// The point of a piece with the smallest r.
fn leftmost(p: &Piece) -> Point {
    let (s, e) = (p.start(), p.end());
    let mut best = if s.r <= e.r { s } else { e };
    if let Piece::Arc {
        c,
        radius,
        a0,
        sweep,
    } = p
    {
        let rel = ((std::f64::consts::PI - a0) * sweep.signum()).rem_euclid(std::f64::consts::TAU);
        if rel <= sweep.abs() {
            best = Point::new(c.r - radius, c.z);
        }
    }
    best
}

/// Points where two pieces meet: crossings of their lines and circles that lie on both, and
/// ends of one lying on the other (touching or overlapping pieces).
fn meeting(p: &Piece, q: &Piece) -> Vec<Point> {
    let tol = CHAIN_TOLERANCE;
    let mut out: Vec<Point> = Vec::new();
    for (x, y) in [(p, q), (q, p)] {
        for e in [x.start(), x.end()] {
            if on_piece(y, e, tol) {
                out.push(e);
            }
        }
    }
    let candidates = match (p, q) {
        (Piece::Line { a, b }, Piece::Line { a: c, b: d }) => line_line(*a, *b, *c, *d),
        (Piece::Line { a, b }, Piece::Arc { c, radius, .. })
        | (Piece::Arc { c, radius, .. }, Piece::Line { a, b }) => line_circle(*a, *b, *c, *radius),
        (
            Piece::Arc {
                c: c1, radius: r1, ..
            },
            Piece::Arc {
                c: c2, radius: r2, ..
            },
        ) => circle_circle(*c1, *r1, *c2, *r2),
    };
    out.extend(
        candidates
            .into_iter()
            .filter(|x| on_piece(p, *x, tol) && on_piece(q, *x, tol)),
    );
    out
}

fn on_piece(p: &Piece, x: Point, tol: f64) -> bool {
    match p {
        Piece::Line { a, b } => {
            let (dr, dz) = (b.r - a.r, b.z - a.z);
            let l2 = dr * dr + dz * dz;
            let t = (((x.r - a.r) * dr + (x.z - a.z) * dz) / l2).clamp(0.0, 1.0);
            dist(x, Point::new(a.r + t * dr, a.z + t * dz)) <= tol
        }
        Piece::Arc {
            c,
            radius,
            a0,
            sweep,
        } => {
            if (dist(x, *c) - radius).abs() > tol {
                return false;
            }
            let ang = (x.z - c.z).atan2(x.r - c.r);
            let rel = ((ang - a0) * sweep.signum()).rem_euclid(std::f64::consts::TAU);
            rel <= sweep.abs() || dist(x, p.start()) <= tol || dist(x, p.end()) <= tol
        }
    }
}

fn line_line(a: Point, b: Point, c: Point, d: Point) -> Vec<Point> {
    let (r, s) = ((b.r - a.r, b.z - a.z), (d.r - c.r, d.z - c.z));
    let den = r.0 * s.1 - r.1 * s.0;
    if den.abs() < 1e-300 {
        return Vec::new();
    }
    let t = ((c.r - a.r) * s.1 - (c.z - a.z) * s.0) / den;
    vec![Point::new(a.r + t * r.0, a.z + t * r.1)]
}

fn line_circle(a: Point, b: Point, c: Point, radius: f64) -> Vec<Point> {
    let (dr, dz) = (b.r - a.r, b.z - a.z);
    let (fr, fz) = (a.r - c.r, a.z - c.z);
    let qa = dr * dr + dz * dz;
    let qb = 2.0 * (fr * dr + fz * dz);
    let qc = fr * fr + fz * fz - radius * radius;
    let disc = qb * qb - 4.0 * qa * qc;
    if disc < 0.0 || qa == 0.0 {
        return Vec::new();
    }
    let sq = disc.sqrt();
    [(-qb - sq) / (2.0 * qa), (-qb + sq) / (2.0 * qa)]
        .iter()
        .map(|t| Point::new(a.r + t * dr, a.z + t * dz))
        .collect()
}

fn circle_circle(c1: Point, r1: f64, c2: Point, r2: f64) -> Vec<Point> {
    let d = dist(c1, c2);
    if d == 0.0 || d > r1 + r2 || d < (r1 - r2).abs() {
        return Vec::new();
    }
    let a = (r1 * r1 - r2 * r2 + d * d) / (2.0 * d);
    let h = (r1 * r1 - a * a).max(0.0).sqrt();
    let (ur, uz) = ((c2.r - c1.r) / d, (c2.z - c1.z) / d);
    let m = Point::new(c1.r + a * ur, c1.z + a * uz);
    vec![
        Point::new(m.r - h * uz, m.z + h * ur),
        Point::new(m.r + h * uz, m.z - h * ur),
    ]
}
