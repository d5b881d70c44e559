//! Multiplier ladder circuit model: the Cockcroft–Walton/Greinacher cascade simulated to
//! periodic steady state, with the textbook closed forms beside it and a sizing search.
//!
//! Input: [`LadderParams`], built from `model::Multiplier` (plus per-node strays from the field
//! solution when `stray_capacitance = "auto"`), diode, load and drive models.
//! Output: [`LadderResult`] — stage voltages (for `potential = "stage:N"`), ratings, ripple,
//! drop, stored energy, discharge time — and [`ClosedForm`] for comparison. The circuit is
//! simulated because real drops, strays and finite conduction angles move the answer away from
//! the closed forms (docs/practice.md §4.2).

mod assemble;
mod band;
mod circuit;
mod closed;
mod discharge;
mod error;
mod params;
mod result;
mod sim;
mod size;
mod stepper;

pub use assemble::simulate;
pub use closed::{
    ClosedForm, DoublerForms, HalfWaveForms, ImpulseForms, StrayForms, SymmetricForms,
    capacitor_energy_j, closed_form, stray_efficiency_continuum, stray_efficiency_discrete,
};
pub use error::LadderError;
pub use params::{
    Capacitors, Column, DiodeParams, Drive, LadderParams, Load, MAX_STAGES, Topology, Waveform,
};
pub use result::{
    CapacitorResult, ChargeBalance, Convergence, DiodeResult, Discharge, EnergySummary,
    LadderResult, OutputSummary, OutputWaveform, RunInfo, StageResult,
};
pub use sim::{SimControls, Start};
pub use size::{
    Blocking, OVERSHOOT, Rejection, SizeTarget, SizedDesign, Sizing, size, size_with_progress,
};
