//! Breakdown criteria per medium: gas, vacuum, insulator surfaces, corona.
//!
//! Input: a gas state ([`crate::model::Gas`]), gap lengths, surface fields and field-line
//! profiles handed down by the field stage, all in SI units. Output: [`Limit`] values (a field in
//! V/m or a voltage in V) that carry their criterion, published source, confidence mark, range of
//! validity and any derating, for the margin stage to compare with computed peaks.
//!
//! Every function here is pure: no I/O, no global state, no field solution. Constants carry the
//! confidence marks of docs/references.md in their doc comments: \[C\] confirmed, \[M\] from memory,
//! \[P\] common practice, \[D\] derived by algebra from the others.
//!
//! - [`gas`]: identification of the gas, density reduction, SF6–N2 mixture strength.
//! - [`paschen`]: Townsend (Paschen) breakdown with per-gas constants and measured minima.
//! - [`uniform`]: uniform-field breakdown at higher pd (Schumann fit, SF6), the limiting field
//!   of each gas, and the regime chooser [`uniform::uniform_breakdown`].
//! - [`ionisation`]: effective ionisation coefficients (α − η) for the streamer integral.
//! - [`streamer`]: the Raether–Meek ionisation integral along a field line and the inception
//!   scale factor.
//! - [`corona`]: Peek's corona-onset fields in air.
//! - [`vacuum`]: Cranberg's V·E criterion, the total-voltage effect, cathode surface fields and
//!   the (RF-only) Kilpatrick criterion.
//! - [`insulator`]: tangential-field flashover limits along insulator surfaces and the
//!   triple-junction flag.

pub mod convert;
pub mod corona;
pub mod error;
pub mod gas;
pub mod insulator;
pub mod ionisation;
pub mod limit;
pub mod paschen;
pub mod streamer;
pub mod uniform;
pub mod vacuum;

pub use error::BreakdownError;
pub use gas::{GasKind, GasOptions, GasState};
pub use limit::{Criterion, Derating, Limit, LimitKind, Mark, Validity};
