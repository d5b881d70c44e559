//! Errors of the ladder model: bad parameters (named by field and value) and failed runs.

use thiserror::Error;

/// Why a ladder could not be built, simulated or sized.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum LadderError {
    /// A parameter is out of range; `field` is the design-file key or API field.
    #[error("invalid {field} = {value}: expected {expected}")]
    InvalidParameter {
        field: String,
        value: String,
        expected: String,
    },

    /// `stray_capacitance = "auto"` was given but no per-node capacitances were supplied.
    #[error(
        "multiplier.stray_capacitance = \"auto\" needs the per-node stray capacitances from the \
         field solution; supply them ({nodes} values, see `LadderParams::node_labels`) or give \
         a value such as \"3 pF\""
    )]
    StraysNotSupplied { nodes: usize },

    /// The cycle-to-cycle change did not fall below the tolerance within the cycle budget.
    #[error(
        "no periodic steady state after {cycles} cycles: last change of the cycle-mean output \
         {last_mean_change_v:.3e} V, of the ripple {last_ripple_change_v:.3e} V, estimated \
         remaining drift {estimated_remaining_v:.3e} V (tolerance {tolerance_v:.3e} V); raise \
         max_cycles or loosen the tolerance"
    )]
    NotConverged {
        cycles: usize,
        last_mean_change_v: f64,
        last_ripple_change_v: f64,
        estimated_remaining_v: f64,
        tolerance_v: f64,
    },

    /// Newton iteration on the diode states failed within one time step.
    #[error(
        "Newton iteration on the diode states failed at t = {time_s:.6e} s after {iterations} \
         iterations (last update {last_update_v:.3e} V); try more steps per cycle"
    )]
    NewtonFailed {
        time_s: f64,
        iterations: usize,
        last_update_v: f64,
    },

    /// The nodal matrix lost positive definiteness (a non-physical parameter set).
    #[error("nodal matrix not positive definite at row {row} (pivot {pivot:.3e})")]
    SingularSystem { row: usize, pivot: f64 },

    /// The output did not fall to 1 % within the step budget of the discharge run.
    #[error("discharge run did not reach 1 % of the starting voltage within {time_s:.3e} s")]
    DischargeIncomplete { time_s: f64 },
}

impl LadderError {
    pub(crate) fn invalid(field: &str, value: impl ToString, expected: &str) -> Self {
        LadderError::InvalidParameter {
            field: field.to_string(),
            value: value.to_string(),
            expected: expected.to_string(),
        }
    }
}
