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

pub mod analysis;
pub mod benchmark;
pub mod breakdown;
pub mod design;
pub mod field;
pub mod geometry;
pub mod grading;
pub mod ladder;
pub mod mesh;
pub mod model;
pub mod report;
pub mod solve;
pub mod study;
pub mod units;
