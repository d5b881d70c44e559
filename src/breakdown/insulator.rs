//! Insulator surfaces: tangential-field flashover limits in vacuum and in gas, and the
//! triple-junction flag.
//!
//! All values here are common practice \[P\] (docs/references.md §7); the mechanism statements are
//! \[C\]: vacuum flashover usually starts at the cathode triple junction (metal–dielectric–vacuum)
//! and grows by secondary-electron emission with gas desorption (Miller, IEEE Trans. EI 28, 512
//! (1993); Harris et al., IEEE TDEI); the field at a triple point can be mathematically divergent
//! for some contact angles (Chung et al., J. Vac. Sci. Technol. B 2010).

use serde::Serialize;

use super::error::BreakdownError;
use super::gas::{GasOptions, GasState, positive};
use super::limit::{Criterion, Limit, LimitKind, Mark, Validity};
use super::uniform;
use crate::model::Gas;

/// Tangential field limit along a plain (straight cylindrical) ceramic or glass insulator in
/// vacuum, DC: 3 MV/m \[P\], the middle of "~1–5 kV/mm average along the surface for cm-length
/// rings" and of "plain cylindrical insulators flash over at a few MV/m DC" (docs/references.md §7).
pub const VACUUM_PLAIN_TANGENTIAL_V_PER_M: f64 = 3.0e6;

/// Gain of an inclined-surface (≈ 45°) or graded insulator over a plain one under DC: 1.5 \[P\],
/// the low end of the 1.5–2× treated as the DC gain in docs/references.md §7 (the several-fold gains
/// are pulsed).
pub const VACUUM_INCLINED_GAIN: f64 = 1.5;

/// Default fraction of the uniform gas-gap breakdown field at which flashover along a spacer
/// occurs: 0.5 \[P\], the low end of 50–80 % (docs/references.md §7), because humidity and
/// contamination lower it further.
pub const GAS_SURFACE_FRACTION_DEFAULT: f64 = 0.5;

/// The surface of a vacuum insulator.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum VacuumSurface {
    /// Straight cylinder, surface parallel to the field.
    Plain,
    /// Surface inclined (≈ 45°) so that it recedes from electrons leaving the cathode, or graded.
    Inclined,
}

/// Tangential-field flashover limit (V/m) along an insulator surface in vacuum, DC.
pub fn vacuum_surface_limit(surface: VacuumSurface) -> Limit {
    let (value, what) = match surface {
        VacuumSurface::Plain => (
            VACUUM_PLAIN_TANGENTIAL_V_PER_M,
            "plain cylinder: 3 MV/m from ~1-5 kV/mm DC practice",
        ),
        VacuumSurface::Inclined => (
            VACUUM_PLAIN_TANGENTIAL_V_PER_M * VACUUM_INCLINED_GAIN,
            "inclined or graded surface: 1.5 x plain (DC gain 1.5-2x, low end)",
        ),
    };
    Limit::new(
        Criterion::VacuumSurfaceFlashover,
        "tangential field along a vacuum insulator surface (DC)",
        format!("insulator surface flashover, docs/references.md §7: {what}; common practice"),
        Mark::CommonPractice,
        LimitKind::Field,
        value,
        Validity::Valid,
    )
}

/// Tangential-field flashover limit (V/m) along an insulator surface of length
/// `surface_length_m` in gas: `fraction` (default [`GAS_SURFACE_FRACTION_DEFAULT`]) times the
/// uniform-field breakdown field of a gas gap of the same length
/// ([`uniform::uniform_breakdown`]), whose validity it carries.
pub fn gas_surface_limit(
    gas: &Gas,
    surface_length_m: f64,
    fraction: Option<f64>,
    options: &GasOptions,
) -> Result<Limit, BreakdownError> {
    positive("insulator surface length (m)", surface_length_m)?;
    let f = fraction.unwrap_or(GAS_SURFACE_FRACTION_DEFAULT);
    if !(f.is_finite() && f > 0.0 && f <= 1.0) {
        return Err(BreakdownError::InvalidInput {
            name: "gas surface flashover fraction",
            value: f,
            accepted: "0 < fraction <= 1 (practice 0.5-0.8)",
        });
    }
    let state = GasState::resolve(gas)?;
    let gap = uniform::uniform_breakdown_for_state(&state, surface_length_m, options)?;
    let (mark, basis) = if fraction.is_some() {
        (Mark::UserSet, format!("user-set fraction {f}"))
    } else {
        (
            Mark::CommonPractice,
            format!("fraction {f}: low end of 50-80 % of the gas-gap value, common practice"),
        )
    };
    Ok(Limit::new(
        Criterion::GasSurfaceFlashover,
        format!(
            "tangential field along a gas-side insulator surface ({f} x {})",
            gap.field.name
        ),
        format!(
            "spacer flashover at 50-80 % of the uniform gas-gap breakdown (docs/references.md §7), \
             {basis}; gas gap: {}",
            gap.field.source
        ),
        mark.weakest(gap.field.mark),
        LimitKind::Field,
        f * gap.field.ideal,
        gap.field.validity,
    ))
}

/// How a triple junction (conductor–insulator–gas or vacuum) stands against the surface limit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum JunctionClass {
    /// In a low-field pocket: at most [`JUNCTION_SHIELDED_RATIO`] of the limit.
    Shielded,
    /// Above the shielded level but below the limit: review the shielding.
    Elevated,
    /// At or above the surface limit.
    AtOrAboveLimit,
    /// Not resolved by the grid (large numerical error or non-finite): possibly singular.
    Unresolved,
}

/// Triple-junction field at or below this fraction of the surface limit counts as shielded
/// (holdoff's choice, common practice: the junction sits in a low-field pocket).
pub const JUNCTION_SHIELDED_RATIO: f64 = 0.3;

/// A relative numerical error above this marks the junction field as unresolved (holdoff's
/// choice: a peak that moves by more than 20 % between grids is not a number to rely on).
pub const JUNCTION_MAX_RELATIVE_ERROR: f64 = 0.2;

/// The flag for one triple junction.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct JunctionFlag {
    pub class: JunctionClass,
    /// Junction field ÷ limit (NaN when unresolved and non-finite).
    pub ratio: f64,
    /// Advice for the report.
    pub note: String,
    pub mark: Mark,
}

/// Classify the field at a triple junction against the tangential-field limit of its medium.
///
/// `field_v_per_m` is the computed field magnitude at the junction, `limit_v_per_m` the surface
/// limit that applies there ([`vacuum_surface_limit`] or [`gas_surface_limit`]),
/// `relative_error` the grid-study error estimate of the field if known, and `cathodic` whether
/// the conductor is the cathode (the usual flashover initiator in vacuum).
pub fn classify_triple_junction(
    field_v_per_m: f64,
    limit_v_per_m: f64,
    relative_error: Option<f64>,
    cathodic: bool,
) -> Result<JunctionFlag, BreakdownError> {
    positive("surface limit at the junction (V/m)", limit_v_per_m)?;
    if let Some(e) = relative_error
        && (e.is_nan() || e < 0.0)
    {
        return Err(BreakdownError::InvalidInput {
            name: "relative numerical error",
            value: e,
            accepted: "a non-negative fraction",
        });
    }
    if field_v_per_m.is_finite() && field_v_per_m < 0.0 {
        return Err(BreakdownError::InvalidInput {
            name: "junction field (V/m)",
            value: field_v_per_m,
            accepted: "a field magnitude >= 0",
        });
    }
    let role = if cathodic {
        "cathode triple junction (the usual flashover initiator)"
    } else {
        "triple junction"
    };
    let unresolved = !field_v_per_m.is_finite()
        || relative_error.is_some_and(|e| e > JUNCTION_MAX_RELATIVE_ERROR);
    let ratio = if field_v_per_m.is_finite() {
        field_v_per_m / limit_v_per_m
    } else {
        f64::NAN
    };
    let (class, note) = if unresolved {
        (
            JunctionClass::Unresolved,
            format!(
                "{role}: field not resolved by the grid (possibly singular at the contact \
                 angle); give the electrode a radius, recess the insulator or fit a shield"
            ),
        )
    } else if ratio <= JUNCTION_SHIELDED_RATIO {
        (
            JunctionClass::Shielded,
            format!(
                "{role} in a low-field pocket ({:.0} % of the limit)",
                100.0 * ratio
            ),
        )
    } else if ratio < 1.0 {
        (
            JunctionClass::Elevated,
            format!(
                "{role} at {:.0} % of the surface limit: recess the insulator into the \
                 electrode or fit a shield; avoid gaps at the interface (a gap next to a high-eps \
                 insulator sees eps_r times the field)",
                100.0 * ratio
            ),
        )
    } else {
        (
            JunctionClass::AtOrAboveLimit,
            format!(
                "{role} at {:.0} % of the surface limit: flashover likely to start here",
                100.0 * ratio
            ),
        )
    };
    Ok(JunctionFlag {
        class,
        ratio,
        note,
        mark: Mark::CommonPractice,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::breakdown::gas::standard_air;

    #[test]
    fn inclined_holds_more_than_plain() {
        assert!(
            vacuum_surface_limit(VacuumSurface::Inclined).value
                > vacuum_surface_limit(VacuumSurface::Plain).value
        );
    }

    #[test]
    fn gas_surface_is_a_fraction_of_the_gap() {
        let opts = GasOptions::default();
        let gap = uniform::uniform_breakdown(&standard_air(), 0.01, &opts).unwrap();
        let s = gas_surface_limit(&standard_air(), 0.01, None, &opts).unwrap();
        assert!((s.value - 0.5 * gap.field.value).abs() < 1e-9 * s.value);
        assert!(gas_surface_limit(&standard_air(), 0.01, Some(1.5), &opts).is_err());
        let u = gas_surface_limit(&standard_air(), 0.01, Some(0.8), &opts).unwrap();
        assert_eq!(u.mark, Mark::UserSet);
    }

    #[test]
    fn junction_classes() {
        let c = |e: f64, err: Option<f64>| classify_triple_junction(e, 1e6, err, true).unwrap();
        assert_eq!(c(0.2e6, None).class, JunctionClass::Shielded);
        assert_eq!(c(0.5e6, None).class, JunctionClass::Elevated);
        assert_eq!(c(1.2e6, None).class, JunctionClass::AtOrAboveLimit);
        assert_eq!(c(0.2e6, Some(0.5)).class, JunctionClass::Unresolved);
        assert_eq!(c(f64::INFINITY, None).class, JunctionClass::Unresolved);
        assert!(classify_triple_junction(1.0, 0.0, None, false).is_err());
        assert!(classify_triple_junction(-1.0, 1.0, None, false).is_err());
    }
}
