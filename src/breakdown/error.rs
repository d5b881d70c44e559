//! Errors of the breakdown criteria: bad inputs named with what is accepted, gases outside the
//! table, and physical cases where a criterion has no answer.

use thiserror::Error;

#[derive(Debug, Clone, PartialEq, Error)]
pub enum BreakdownError {
    /// A numeric input outside its domain.
    #[error("{name} = {value} is not accepted; expected {accepted}")]
    InvalidInput {
        name: &'static str,
        value: f64,
        accepted: &'static str,
    },
    /// A gas that the criteria have no data for.
    #[error(
        "gas {species:?} has no breakdown data; accepted: air, N2, CO2, SF6, or an SF6-N2 \
         mixture such as \"SF6:0.5,N2:0.5\""
    )]
    UnsupportedGas { species: String },
    /// Mole fractions that are not usable.
    #[error("gas {species:?}: {reason}")]
    BadComposition { species: String, reason: String },
    /// The criterion does not apply to this gas (e.g. Paschen constants for SF6).
    #[error("{criterion} does not apply to {gas}: {reason}")]
    NotApplicable {
        criterion: &'static str,
        gas: String,
        reason: String,
    },
    /// Left of the Paschen curve: the Townsend criterion has no solution.
    #[error(
        "no Townsend breakdown at pd = {pd_pa_m:.4e} Pa·m: A·pd = {a_pd:.4} does not exceed \
         ln(1 + 1/γ) = {threshold:.4} (left of the Paschen curve)"
    )]
    NoPaschenSolution {
        pd_pa_m: f64,
        a_pd: f64,
        threshold: f64,
    },
    /// A field-line profile that cannot be integrated.
    #[error("field profile sample {index}: {reason}")]
    InvalidProfile { index: usize, reason: String },
    /// The ionisation integral cannot reach the streamer number along this path.
    #[error("no streamer inception along this path: {reason}")]
    NoInception { reason: String },
}
