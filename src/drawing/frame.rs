//! How a drawing lies against the model's (r, z) half-plane: which drawing direction is the
//! symmetry axis, and which drawing point is r = 0, z = 0.
//!
//! With the axis along the drawing's y (the default) r = x − x0 and z = y − y0; with the axis
//! along x, r = y − y0 and z = x − x0, where (x0, y0) is the origin. The second is a
//! reflection (x and y swap), so an arc's angles θ become π/2 − θ and its sense reverses; a
//! translation leaves them alone.

use crate::geometry::{Piece, Point};
use crate::units::{Dimension, format_si};
use std::f64::consts::FRAC_PI_2;

/// The drawing direction of the symmetry axis.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Axis {
    /// The axis runs along the drawing's y; its x is the radius.
    #[default]
    Y,
    /// The axis runs along the drawing's x; its y is the radius.
    X,
}

impl Axis {
    /// The name a design file uses: "y" or "x".
    pub fn name(self) -> &'static str {
        match self {
            Axis::Y => "y",
            Axis::X => "x",
        }
    }

    /// The axis a design file names, if it is one.
    pub fn from_name(name: &str) -> Option<Axis> {
        match name {
            "y" => Some(Axis::Y),
            "x" => Some(Axis::X),
            _ => None,
        }
    }
}

/// Where the drawing lies: the axis direction and the drawing point (metres, the drawing's
/// x and y times its unit) that is r = 0, z = 0.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Frame {
    pub axis: Axis,
    pub origin: (f64, f64),
}

impl Frame {
    /// A drawing point (x, y), metres, in the model.
    pub fn to_model(&self, x: f64, y: f64) -> Point {
        let (dx, dy) = (x - self.origin.0, y - self.origin.1);
        match self.axis {
            Axis::Y => Point::new(dx, dy),
            Axis::X => Point::new(dy, dx),
        }
    }

    /// A model point as the drawing point (x, y), metres.
    pub fn unplace(&self, p: Point) -> (f64, f64) {
        let (dx, dy) = match self.axis {
            Axis::Y => (p.r, p.z),
            Axis::X => (p.z, p.r),
        };
        (dx + self.origin.0, dy + self.origin.1)
    }

    /// A piece of the drawing (in drawing x, y metres, carried in a `Point`'s r and z) in the
    /// model.
    pub fn place(&self, piece: &Piece) -> Piece {
        let at = |q: &Point| self.to_model(q.r, q.z);
        match piece {
            Piece::Line { a, b } => Piece::Line { a: at(a), b: at(b) },
            Piece::Arc {
                c,
                radius,
                a0,
                sweep,
            } => {
                let (a0, sweep) = match self.axis {
                    Axis::Y => (*a0, *sweep),
                    Axis::X => (FRAC_PI_2 - a0, -sweep),
                };
                Piece::Arc {
                    c: at(c),
                    radius: *radius,
                    a0,
                    sweep,
                }
            }
        }
    }

    /// The radius as the drawing measures it, for messages: "x", "y − 250 mm" …
    fn radius_in_drawing(&self) -> String {
        let (name, o) = match self.axis {
            Axis::Y => ("x", self.origin.0),
            Axis::X => ("y", self.origin.1),
        };
        if o == 0.0 {
            name.to_string()
        } else {
            format!(
                "{name} {} {}",
                if o > 0.0 { "−" } else { "+" },
                format_si(o.abs(), Dimension::Length)
            )
        }
    }

    /// One line for listings and the review note: where the axis and the origin lie.
    pub fn describe(&self) -> String {
        let (along, across, o_across) = match self.axis {
            Axis::Y => ("y", "x", self.origin.0),
            Axis::X => ("x", "y", self.origin.1),
        };
        let o_along = match self.axis {
            Axis::Y => self.origin.1,
            Axis::X => self.origin.0,
        };
        let l = |x: f64| format_si(x, Dimension::Length);
        format!(
            "axis along the drawing's {along} at {across} = {}, z = 0 at {along} = {}; r = {}",
            l(o_across),
            l(o_along),
            self.radius_in_drawing()
        )
    }

    /// The radius of the drawing for the crossing-the-axis message.
    pub fn radius_words(&self) -> String {
        format!("r = {} of the drawing", self.radius_in_drawing())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// An arc placed with the axis along x is the mirror image of the same arc about the line
    /// x = y: its start, middle and end map point by point.
    #[test]
    fn an_arc_placed_across_maps_point_by_point() {
        let arc = Piece::Arc {
            c: Point::new(0.3, 0.7),
            radius: 0.1,
            a0: 0.4,
            sweep: 1.9,
        };
        let frame = Frame {
            axis: Axis::X,
            origin: (0.2, -0.05),
        };
        let placed = frame.place(&arc);
        for t in [0.0, 0.25, 0.5, 1.0] {
            let q = arc.at(t);
            let want = frame.to_model(q.r, q.z);
            let got = placed.at(t);
            assert!((got.r - want.r).abs() < 1e-12 && (got.z - want.z).abs() < 1e-12);
            let back = frame.unplace(got);
            assert!((back.0 - q.r).abs() < 1e-12 && (back.1 - q.z).abs() < 1e-12);
        }
    }
}
