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
//! # The library surface
//!
//! A script that reviews designs needs these modules; the rest of the pipeline (mesh, solver
//! internals, field evaluation, field lines, capacitance, grid study, margin evaluation,
//! grading network, materials, geometry) is private to the crate, and the types its results
//! carry are named where those results are:
//!
//! - [`design`]: [`design::from_str`] (text) and [`design::load`] (a file) read a design into a
//!   [`model::Model`] or a located [`design::DesignError`] (rendered by [`design::diagnostic`]).
//! - [`model`]: the validated model (SI), with the shapes of [`model::Shape`] and
//!   [`model::Point`]; [`units`]: quantities with units and the engineering formatter.
//! - [`review`]: [`review::review`] runs the whole review of a model (stack, field, grid study,
//!   margins, grading summary) into a [`review::Review`]; `review` also names what a review
//!   holds: [`review::Analysis`] (the fine mesh, potential, surface samples, peaks, probes),
//!   [`review::Margins`] and [`review::MarginRow`] with their [`review::Status`],
//!   [`review::GridStudy`], [`review::ColumnSummary`], the [`review::Mesh`].
//! - [`faults`]: [`faults::replay`] replays the grading-resistor faults on a review's mesh
//!   into a [`faults::FaultReplay`]; [`stack`]: the stack's strays and stored energy;
//!   [`ladder`]: the multiplier circuit, its steady state and sizing.
//! - [`report`]: the report (JSON via serde), tables, Markdown and HTML notes, figures and the
//!   cautions; [`compare`] and [`sweep`]: before/after comparisons and parameter sweeps.
//! - [`breakdown`]: the published criteria (Paschen, streamer, vacuum, corona, insulator
//!   surfaces) and unit conversions; [`thermo`]: gas state (saturation, compressibility,
//!   mixtures); [`drawing`]: outlines from DXF half-section drawings.
//! - [`solve`]: the solver's parameters, information and errors ([`solve::SolverParams`],
//!   [`solve::SolveInfo`], [`solve::SolveError`]); [`benchmark`]: the standard solver
//!   benchmark problem.
//!
//! A review of a small design: a sphere at 100 kV in a grounded spherical tank, whose peak
//! surface field is V·b/(a(b − a)) = 2 MV/m.
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
//! let run = holdoff::review::review(&model, &params, false).expect("reviews");
//! let peak = run.fine.peaks[0].peak_surface_field_v_per_m;
//! assert!((peak - 2.0e6).abs() / 2.0e6 < 1e-3);
//! // The worst status of the margins' rows (Pass when no row has a number).
//! let _worst: holdoff::review::Status = run.margins.worst_status();
//! ```

// No unwrap or expect in library code: user data must end in errors, never in a panic.
#![cfg_attr(not(test), deny(clippy::unwrap_used, clippy::expect_used))]

pub(crate) mod analysis;
pub mod benchmark;
pub mod breakdown;
pub(crate) mod capacitance;
pub mod compare;
pub mod design;
pub mod drawing;
pub mod faults;
pub(crate) mod field;
pub(crate) mod fieldline;
pub(crate) mod geometry;
pub(crate) mod grading;
pub mod ladder;
pub(crate) mod margin;
pub(crate) mod materials;
pub(crate) mod mesh;
pub mod model;
pub mod report;
pub mod review;
pub mod solve;
pub mod stack;
pub(crate) mod study;
pub mod sweep;
pub mod thermo;
pub mod units;

#[cfg(test)]
mod verification;
