//! Drawing helpers of the field-map figures: the window and its page, the colour scale, tick
//! steps and marks, SVG paths, and the true outline of every shape (from its lines and arcs,
//! never from a raster).

use crate::geometry::{Piece, Point, Shape};
use std::fmt::Write;

/// The window of a figure in (r, z), metres.
#[derive(Debug, Clone, Copy)]
pub(crate) struct View {
    pub r0: f64,
    pub r1: f64,
    pub z0: f64,
    pub z1: f64,
}

/// Where the plot area sits on the page and its scale.
pub(crate) struct Canvas {
    pub view: View,
    /// Pixels per metre.
    pub s: f64,
    pub left: f64,
    pub top: f64,
    pub w: f64,
    pub h: f64,
}

const LEFT: f64 = 64.0;
const TOP: f64 = 52.0;
const BOTTOM: f64 = 44.0;
const RIGHT: f64 = 96.0;
/// The key above the plot needs this width.
const MIN_PAGE_WIDTH: f64 = 480.0;

impl Canvas {
    pub fn new(view: View, max_w: f64, max_h: f64) -> Canvas {
        let (dw, dh) = (view.r1 - view.r0, view.z1 - view.z0);
        let s = (max_w / dw).min(max_h / dh);
        Canvas {
            view,
            s,
            left: LEFT,
            top: TOP,
            w: dw * s,
            h: dh * s,
        }
    }

    pub fn x(&self, r: f64) -> f64 {
        self.left + (r - self.view.r0) * self.s
    }

    pub fn y(&self, z: f64) -> f64 {
        self.top + (self.view.z1 - z) * self.s
    }

    /// The page: the plot with its margins, wide enough for the key above it.
    pub fn page(&self) -> (f64, f64) {
        (
            (self.left + self.w + RIGHT).max(MIN_PAGE_WIDTH),
            self.top + self.h + BOTTOM,
        )
    }
}

/// Colour for a value in [0, 1]: dark blue → teal → green → yellow, readable in print.
pub(crate) fn heat(t: f64) -> (u8, u8, u8) {
    const STOPS: [(f64, [f64; 3]); 4] = [
        (0.0, [20.0, 30.0, 90.0]),
        (0.35, [40.0, 110.0, 170.0]),
        (0.7, [110.0, 190.0, 120.0]),
        (1.0, [250.0, 230.0, 60.0]),
    ];
    let t = t.clamp(0.0, 1.0);
    let k = STOPS.windows(2).position(|w| t <= w[1].0).unwrap_or(2);
    let ((t0, c0), (t1, c1)) = (STOPS[k], STOPS[k + 1]);
    let f = (t - t0) / (t1 - t0);
    let mix = |i: usize| (c0[i] + f * (c1[i] - c0[i])).round() as u8;
    (mix(0), mix(1), mix(2))
}

/// The closed outline of a shape's cross-section in r >= 0, as points on its true boundary
/// (arcs sampled finely enough to draw).
pub(crate) fn outline(shape: &Shape) -> Vec<Point> {
    use std::f64::consts::{FRAC_PI_2, PI};
    let arc = |out: &mut Vec<Point>, c: Point, radius: f64, a0: f64, sweep: f64| {
        let n = ((sweep.abs() / (PI / 24.0)).ceil() as usize).max(2);
        for k in 0..=n {
            let a = a0 + sweep * k as f64 / n as f64;
            out.push(Point::new(c.r + radius * a.cos(), c.z + radius * a.sin()));
        }
    };
    let mut out = Vec::new();
    match shape {
        Shape::Sphere { center_z, radius } => arc(
            &mut out,
            Point::new(0.0, *center_z),
            *radius,
            -FRAC_PI_2,
            PI,
        ),
        Shape::Torus {
            center_z,
            major_radius,
            minor_radius,
        } => arc(
            &mut out,
            Point::new(*major_radius, *center_z),
            *minor_radius,
            0.0,
            2.0 * PI,
        ),
        Shape::RoundedRect {
            r0,
            r1,
            z0,
            z1,
            corner_radius,
        } => {
            let solid = *r0 <= 0.0;
            let width = if solid { 2.0 * r1 } else { r1 - r0 };
            let c = corner_radius.min(0.5 * width).min(0.5 * (z1 - z0)).max(0.0);
            if solid {
                out.push(Point::new(0.0, *z0));
            } else {
                arc(&mut out, Point::new(r0 + c, z0 + c), c, PI, FRAC_PI_2);
            }
            arc(
                &mut out,
                Point::new(r1 - c, z0 + c),
                c,
                -FRAC_PI_2,
                FRAC_PI_2,
            );
            arc(&mut out, Point::new(r1 - c, z1 - c), c, 0.0, FRAC_PI_2);
            if solid {
                out.push(Point::new(0.0, *z1));
            } else {
                arc(
                    &mut out,
                    Point::new(r0 + c, z1 - c),
                    c,
                    FRAC_PI_2,
                    FRAC_PI_2,
                );
            }
        }
        Shape::Polygon { outline, .. } | Shape::Drawn { outline, .. } => {
            for piece in outline.pieces() {
                match *piece {
                    Piece::Line { a, .. } => out.push(a),
                    Piece::Arc {
                        c,
                        radius,
                        a0,
                        sweep,
                    } => arc(&mut out, c, radius, a0, sweep),
                }
            }
        }
    }
    out
}

/// An SVG path through `points` in page coordinates, closed.
pub(crate) fn path(cv: &Canvas, points: &[Point]) -> String {
    let mut d = String::new();
    for (k, p) in points.iter().enumerate() {
        let _ = write!(
            d,
            "{}{:.2},{:.2}",
            if k == 0 { "M" } else { "L" },
            cv.x(p.r.max(0.0)),
            cv.y(p.z)
        );
    }
    d.push('Z');
    d
}

/// A tick step of 1, 2 or 5 times a power of ten giving about `n` ticks over `span`.
pub(crate) fn nice_step(span: f64, n: f64) -> f64 {
    let raw = (span / n).max(f64::MIN_POSITIVE);
    let p = 10f64.powf(raw.log10().floor());
    [1.0, 2.0, 5.0, 10.0]
        .into_iter()
        .map(|m| m * p)
        .find(|s| *s >= raw)
        .unwrap_or(10.0 * p)
}

/// Label text for a tick value, with as many decimals as the step needs.
pub(crate) fn tick(v: f64, step: f64) -> String {
    let decimals = (-step.log10().floor()).max(0.0) as usize;
    format!("{:.*}", decimals, v)
}

/// The multiples of `step` from `lo` to `hi` (both included, to a rounding).
pub(crate) fn ticks(lo: f64, hi: f64, step: f64) -> Vec<f64> {
    let first = (lo / step - 1e-9).ceil() as i64;
    let last = (hi / step + 1e-9).floor() as i64;
    (first..=last).map(|k| k as f64 * step).collect()
}

/// A tick mark from (x1, y1) to (x2, y2) with its label at (tx, ty), anchored `anchor`.
pub(crate) fn tick_mark(
    svg: &mut String,
    (x1, y1, x2, y2): (f64, f64, f64, f64),
    (tx, ty): (f64, f64),
    anchor: &str,
    label: &str,
) {
    let _ = writeln!(
        svg,
        "<line x1=\"{x1:.2}\" y1=\"{y1:.2}\" x2=\"{x2:.2}\" y2=\"{y2:.2}\" stroke=\"#000\"/><text x=\"{tx:.2}\" y=\"{ty:.2}\" text-anchor=\"{anchor}\">{label}</text>"
    );
}

#[cfg(test)]
mod tests {
    use super::outline;
    use crate::geometry::{Point, Shape};

    /// Every drawn outline point lies on the shape's surface by the shape's own signed
    /// distance (an independent construction of the same boundary), for each kind of shape.
    #[test]
    fn outlines_lie_on_the_surface() {
        let shapes = [
            Shape::Sphere {
                center_z: 0.5,
                radius: 0.1,
            },
            Shape::Torus {
                center_z: 0.3,
                major_radius: 0.2,
                minor_radius: 0.01,
            },
            Shape::RoundedRect {
                r0: 0.0,
                r1: 0.3,
                z0: 1.0,
                z1: 1.4,
                corner_radius: 0.08,
            },
            Shape::RoundedRect {
                r0: 0.05,
                r1: 0.06,
                z0: 0.2,
                z1: 0.9,
                corner_radius: 0.002,
            },
            Shape::polygon(
                vec![
                    Point::new(0.0, 0.0),
                    Point::new(0.2, 0.0),
                    Point::new(0.25, 0.1),
                    Point::new(0.0, 0.1),
                ],
                0.01,
            ),
        ];
        for shape in &shapes {
            let pts = outline(shape);
            assert!(pts.len() >= 8, "{shape:?}");
            for p in &pts {
                // Points on the axis close a solid body; they are inside, not on a surface.
                if p.r > 1e-12 {
                    let d = shape.sdf(*p);
                    assert!(d.abs() < 1e-9, "{shape:?} at {p:?}: distance {d}");
                }
            }
        }
    }
}
