//! holdoff: electrostatic field and breakdown-margin review of DC accelerator columns.
//!
//! Data flows one way, each stage a module with a plain value at its boundary:
//!
//! ```text
//! design file (TOML) → design → model::Model
//!   → ladder   multiplier circuit: stage voltages, ratings, stored energy
//!   → grading  DC network → electrode potentials (volts)
//!   → mesh     graded (r, z) grid, node classes, cut distances to true surfaces
//!   → solve    finite-volume operator (sprs CSR), multigrid-preconditioned Krylov → potential
//!   → field    E on the grid, on true conductor surfaces, at probes
//!   → study    grid study: Richardson extrapolation and an error estimate per peak
//!   → breakdown / margin / report
//! ```
//!
//! The whole field pipeline on a small design: a sphere at 100 kV in a grounded spherical
//! tank, whose peak surface field is V·b/(a(b − a)) = 2 MV/m.
//!
//! ```
//! let text = r#"
//! title = "sphere in a sphere"
//! [tank]
//! shape = "sphere"
//! inner_radius = "200 mm"
//! [terminal]
//! voltage = "100 kV"
//! [[conductor]]
//! name = "ball"
//! shape = "sphere"
//! center_z = "200 mm"
//! radius = "100 mm"
//! potential = "terminal"
//! [mesh]
//! cell = "2 mm"
//! "#;
//! let model = holdoff::design::from_str(text, "example.toml").expect("valid design");
//! let params = holdoff::solve::SolverParams::default();
//! let fine = holdoff::analysis::analyze(&model, &params, None).expect("solves");
//! let peak = fine.peaks[0].peak_surface_field_v_per_m;
//! assert!((peak - 2.0e6).abs() / 2.0e6 < 1e-3);
//! ```

// No unwrap or expect in library code: user data must end in errors, never in a panic.
#![cfg_attr(not(test), deny(clippy::unwrap_used, clippy::expect_used))]

pub mod analysis;
pub mod benchmark;
pub mod breakdown;
pub mod capacitance;
pub mod compare;
pub mod design;
pub mod drawing;
pub mod faults;
pub mod field;
pub mod fieldline;
pub mod geometry;
pub mod grading;
pub mod ladder;
pub mod margin;
pub mod materials;
pub mod mesh;
pub mod model;
pub mod report;
pub mod review;
pub mod solve;
pub mod stack;
pub mod study;
pub mod sweep;
pub mod thermo;
pub mod units;

#[cfg(test)]
mod verification;
