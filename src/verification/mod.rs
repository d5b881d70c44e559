//! The library's internals checked against outside references: closed-form fields, handbook
//! tables, published constants, hand-solved circuits and a direct solve beside each faster
//! path. These tests reach modules that are not part of the public surface (mesh, solver,
//! field, margins, capacitance, grading network), so they live in the crate; the tests of the
//! public surface and of the binary are under tests/. Each check names its source beside it.

mod analytic;
mod capacitance;
pub(crate) mod common;
mod diagnostics;
mod export;
mod faults;
mod gas_state;
mod grading;
mod margins;
mod materials;
mod polarity;
mod solver;
