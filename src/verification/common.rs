//! Builders shared by the in-crate verification tests.

use crate::geometry::Shape;
use crate::model::{Conductor, MeshSpec, Model, Tank, Wall};

#[path = "../../tests/common/designs.rs"]
mod designs;
pub use designs::*;

/// A conductor at a fixed potential.
pub fn conductor(name: &str, shape: Shape, volts: f64) -> Conductor {
    Conductor::fixed(name, shape, volts)
}

/// A sphere of `radius` at `v` with its lowest point `gap` above the earthed floor of a
/// 1 m × 1 m cylindrical tank (20 radii away for the 5 cm spheres of the tests).
pub fn sphere_above_plane(radius: f64, gap: f64, v: f64, cell: f64, max_cell: f64) -> Model {
    let mut m = Model::new(
        "sphere above plane",
        Tank::Cylinder {
            inner_radius: 1.0,
            length: 1.0,
        },
        v,
    );
    m.conductors.push(conductor(
        "sphere",
        Shape::Sphere {
            center_z: radius + gap,
            radius,
        },
        v,
    ));
    m.mesh = MeshSpec::graded(cell, max_cell, 1.08);
    m
}

/// Coaxial line, inner radius `a` at `v`, outer radius `b`, as a `length` of an infinitely long
/// line (zero-normal-field ends).
pub fn coax(a: f64, b: f64, length: f64, v: f64) -> Model {
    let mut m = Model::new(
        "coax",
        Tank::Cylinder {
            inner_radius: b,
            length,
        },
        v,
    );
    m.ends = Wall::Symmetry;
    m.conductors.push(conductor(
        "inner",
        Shape::RoundedRect {
            r0: 0.0,
            r1: a,
            z0: -1.0,
            z1: 1.0,
            corner_radius: 0.0,
        },
        v,
    ));
    m
}
