//! Helpers shared by the test files.

#![allow(dead_code)]

use holdoff::geometry::Shape;
use holdoff::model::{Conductor, MeshSpec, Model, Origin, PotentialSpec, Tank};
use std::process::{Command, Output};

/// A conductor at a fixed potential.
pub fn conductor(name: &str, shape: Shape, volts: f64) -> Conductor {
    Conductor {
        name: name.into(),
        shape,
        potential: PotentialSpec::Absolute { volts },
        origin: Origin::Program,
    }
}

/// The peak surface field of `shape` at `v` inside a grounded spherical tank of radius `b`, on
/// the graded mesh the faceted-sphere tests use (0.5 mm at the surface, growing 1.15× to 4 mm).
pub fn peak_in_spherical_tank(shape: Shape, b: f64, v: f64) -> f64 {
    let mut m = Model::new("faceted sphere", Tank::Sphere { inner_radius: b }, v);
    m.mesh = MeshSpec::graded(0.5e-3, 4e-3, 1.15);
    m.conductors.push(conductor("inner", shape, v));
    let mesh = holdoff::mesh::Mesh::build(&m).expect("mesh");
    let mut solver = holdoff::solve::Solver::new(&mesh, holdoff::solve::SolverParams::default());
    let sol = solver.solve(&[v], None).expect("solve");
    let pots = [v];
    let fm = holdoff::field::FieldMap::new(&mesh, &m, &sol.phi, &pots);
    fm.conductor_peaks(&fm.surface_samples())[0].peak_surface_field_v_per_m
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

/// The text of a small invented grading column in SF6 at 2 bar: a grounded shield (top face
/// z = 150 mm), tori of major radius 100 mm between it and a terminal (bottom face
/// z = 450 mm) at `voltage`, `dielectrics` (whole `[[dielectric]]` tables) and `column`
/// (the column's keys after its shape), on a 4 mm mesh.
pub fn small_column(voltage: &str, dielectrics: &str, column: &str) -> String {
    format!(
        r#"
title = "small test column"
[tank]
inner_radius = "250 mm"
length = "700 mm"
[gas]
species = "SF6"
pressure = "2 bar"
temperature = "20 degC"
[terminal]
voltage = "{voltage}"
[[conductor]]
name = "ground shield"
shape = "rounded_cylinder"
r = ["0 mm", "120 mm"]
z = ["0 mm", "150 mm"]
corner_radius = "20 mm"
potential = "ground"
[[conductor]]
name = "terminal"
shape = "rounded_cylinder"
r = ["0 mm", "120 mm"]
z = ["450 mm", "600 mm"]
corner_radius = "30 mm"
potential = "terminal"
{dielectrics}
[[column]]
name = "column"
from = "ground shield"
to = "terminal"
shape = "torus"
major_radius = "100 mm"
minor_radius = "8 mm"
{column}
[mesh]
cell = "4 mm"
"#
    )
}

/// The `holdoff` binary built for the tests.
pub fn holdoff() -> Command {
    Command::new(env!("CARGO_BIN_EXE_holdoff"))
}

/// Fails the test with the run's standard error unless it exited 0.
pub fn assert_success(out: &Output) {
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
}

/// The FEM reference files under tests/data/fem (written by tools/fem_reference), sorted.
pub fn fem_reference_files() -> Vec<std::path::PathBuf> {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/fem");
    let mut jsons: Vec<_> = std::fs::read_dir(&dir)
        .expect("tests/data/fem")
        .flatten()
        .map(|e| e.path())
        .filter(|p| p.extension().is_some_and(|x| x == "json"))
        .collect();
    jsons.sort();
    jsons
}

/// The largest difference of the signed distances of two shapes over the box r 0–200 mm,
/// z 350–650 mm (121 × 201 points): the dome tests build the same body two ways and compare
/// them here.
pub fn largest_distance_difference(
    a: &holdoff::geometry::Shape,
    b: &holdoff::geometry::Shape,
) -> f64 {
    let mut worst = 0.0f64;
    for i in 0..=120 {
        for j in 0..=200 {
            let p = holdoff::geometry::Point::new(
                0.2 * i as f64 / 120.0,
                0.35 + 0.3 * j as f64 / 200.0,
            );
            worst = worst.max((a.sdf(p) - b.sdf(p)).abs());
        }
    }
    worst
}
