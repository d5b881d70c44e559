//! Lines and arcs from polyline vertices with bulges, and the distance between points.

use crate::geometry::{Piece, Point};

/// The pieces of a polyline through `v` (x, y, bulge in drawing units); a bulge b on a vertex
/// makes the segment to the next vertex an arc of included angle 4·atan(b), counter-clockwise
/// for b > 0 (the DXF definition of the bulge).
pub(super) fn polyline_pieces(v: &[(f64, f64, f64)], closed: bool, scale: f64) -> Vec<Piece> {
    let n = v.len();
    let segs = if closed { n } else { n.saturating_sub(1) };
    let mut out = Vec::with_capacity(segs);
    for k in 0..segs {
        let (x0, y0, bulge) = v[k];
        let (x1, y1, _) = v[(k + 1) % n];
        let a = Point::new(x0 * scale, y0 * scale);
        let b = Point::new(x1 * scale, y1 * scale);
        out.push(bulge_piece(a, b, bulge));
    }
    out
}

/// The line or arc from `a` to `b` with bulge `bulge`.
pub(crate) fn bulge_piece(a: Point, b: Point, bulge: f64) -> Piece {
    let (dr, dz) = (b.r - a.r, b.z - a.z);
    let d = (dr * dr + dz * dz).sqrt();
    if bulge.abs() < 1e-12 || d == 0.0 || !bulge.is_finite() {
        return Piece::Line { a, b };
    }
    let theta = 4.0 * bulge.atan();
    let half = 0.5 * theta;
    // The centre lies on the chord's perpendicular bisector, (d/2)/tan(θ/2) to the left of the
    // chord for a counter-clockwise arc (negative: to the right).
    let h = 0.5 * d / half.tan();
    let (nr, nz) = (-dz / d, dr / d);
    let c = Point::new(0.5 * (a.r + b.r) + h * nr, 0.5 * (a.z + b.z) + h * nz);
    let radius = (0.5 * d / half.sin()).abs();
    Piece::Arc {
        c,
        radius,
        a0: (a.z - c.z).atan2(a.r - c.r),
        sweep: theta,
    }
}

pub(super) fn dist(a: Point, b: Point) -> f64 {
    (a.r - b.r).hypot(a.z - b.z)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A bulge of 1 is a half circle: tan(π/4) = 1 (the DXF bulge is tan of a quarter of the
    /// included angle).
    #[test]
    fn unit_bulge_is_a_half_circle() {
        let p = bulge_piece(Point::new(0.0, 0.0), Point::new(2.0, 0.0), 1.0);
        let Piece::Arc {
            c, radius, sweep, ..
        } = p
        else {
            panic!("{p:?}")
        };
        assert!((radius - 1.0).abs() < 1e-12);
        assert!(dist(c, Point::new(1.0, 0.0)) < 1e-12);
        assert!((sweep - std::f64::consts::PI).abs() < 1e-12);
        // Counter-clockwise from (0, 0) to (2, 0) about (1, 0) passes below the chord.
        let mid = p.at(0.5);
        assert!((mid.z + 1.0).abs() < 1e-12, "{mid:?}");
        assert!(dist(p.end(), Point::new(2.0, 0.0)) < 1e-12);
    }
}
