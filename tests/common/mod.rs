//! Helpers shared by the test files.

#![allow(dead_code)]

use holdoff::model::{Conductor, MeshSpec, Model, Shape, Tank};
use std::process::{Command, Output};

mod designs;
#[allow(unused_imports)] // not every test file uses the designs
pub use designs::*;

/// A conductor at a fixed potential.
pub fn conductor(name: &str, shape: Shape, volts: f64) -> Conductor {
    Conductor::fixed(name, shape, volts)
}

/// The peak surface field of `shape` at `v` inside a grounded spherical tank of radius `b`, on
/// the graded mesh the faceted-sphere tests use (0.5 mm at the surface, growing 1.15× to 4 mm):
/// the fine analysis of a review without the grid study (one mesh, one solve).
pub fn peak_in_spherical_tank(shape: Shape, b: f64, v: f64) -> f64 {
    let mut m = Model::new("faceted sphere", Tank::Sphere { inner_radius: b }, v);
    m.mesh = MeshSpec::graded(0.5e-3, 4e-3, 1.15);
    m.conductors.push(conductor("inner", shape, v));
    let run = holdoff::review::review(&m, &holdoff::solve::SolverParams::default(), false)
        .expect("review");
    run.fine.peaks[0].peak_surface_field_v_per_m
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
pub fn largest_distance_difference(a: &holdoff::model::Shape, b: &holdoff::model::Shape) -> f64 {
    let mut worst = 0.0f64;
    for i in 0..=120 {
        for j in 0..=200 {
            let p =
                holdoff::model::Point::new(0.2 * i as f64 / 120.0, 0.35 + 0.3 * j as f64 / 200.0);
            worst = worst.max((a.sdf(p) - b.sdf(p)).abs());
        }
    }
    worst
}
