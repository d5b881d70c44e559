//! Corona onset on small radii in air: Peek's law.
//!
//! E_c = g0·m·δ·(1 + c/√(δ·r)) kV/cm (peak), r in cm, with δ Peek's relative air density
//! referred to 25 °C and 76 cmHg, δ = 3.92·b/(273 + t) (b in cmHg, t in °C) \[C\]
//! (docs/references.md §5, an encyclopaedia entry on Peek's law citing Peek 1929 and Kuffel &
//! Zaengl p. 366), and m the surface factor (1 polished; 0.93–0.98 weathered; 0.83–0.87
//! stranded \[C\]). Constants per geometry:
//!
//! | geometry | g0 (kV/cm) | c (cm^½) | mark |
//! |---|---|---|---|
//! | parallel wires | 30 | 0.301 | \[C\] Peek, *Dielectric Phenomena in High Voltage Engineering* (1929) |
//! | coaxial cylinders | 31 | 0.308 | \[M\] Peek 1929; Kuffel et al. 2000 Ch. 5 |
//! | sphere | 27.2 | 0.54 | \[M\] Peek 1929; Naidu & Kamaraju |
//!
//! Peek's law is an empirical onset fit for air; for other or electronegative gases the
//! streamer integral ([`super::streamer`]) applies, and [`onset_field_in_gas`] flags them.
//! Validity: Peek's relative density δ within [`PEEK_DELTA_RANGE`] (docs/references.md §16);
//! no radius range is enforced (none is given for the fits).

use serde::Serialize;

use super::convert::TORR_PA;
use super::error::BreakdownError;
use super::gas::{GasKind, GasState, positive};
use super::limit::{Criterion, Limit, LimitKind, Mark, Validity};
use crate::model::Gas;

/// Relative air density range of Peek's fits: from about 0.5 (Peek's sphere-gap density tests
/// covered sea level to 18,000 ft, Peek, "The sphere gap as a means of measuring high voltage",
/// AIEE 1914, abstract \[C\]) to 1.1 (sea-level data plus 10 %, holdoff's choice, common practice,
/// no source). Outside it the onset is "outside validity": at a low density the discharge is of
/// the Townsend type, and in pressurised air the streamer integral applies.
pub const PEEK_DELTA_RANGE: (f64, f64) = (0.5, 1.1);

/// Surface factor of a polished conductor.
pub const SURFACE_POLISHED: f64 = 1.0;
/// Surface factor of a weathered conductor, middle of 0.93–0.98 \[C\].
pub const SURFACE_WEATHERED: f64 = 0.955;
/// Surface factor of a stranded conductor, middle of 0.83–0.87 \[C\].
pub const SURFACE_STRANDED: f64 = 0.85;

/// The electrode arrangement of a Peek fit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum PeekGeometry {
    ParallelWires,
    Coaxial,
    Sphere,
}

/// Constants of one Peek fit.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct PeekConstants {
    /// g0, kV/cm (peak).
    pub g0_kv_per_cm: f64,
    /// c, cm^½.
    pub c_sqrt_cm: f64,
    pub source: &'static str,
    pub mark: Mark,
}

impl PeekGeometry {
    pub fn constants(self) -> PeekConstants {
        match self {
            PeekGeometry::ParallelWires => PeekConstants {
                g0_kv_per_cm: 30.0,
                c_sqrt_cm: 0.301,
                source: "Peek, Dielectric Phenomena in High Voltage Engineering (McGraw-Hill \
                         1929), parallel wires, via a Peek's-law page citing Kuffel & Zaengl \
                         p. 366",
                mark: Mark::Confirmed,
            },
            PeekGeometry::Coaxial => PeekConstants {
                g0_kv_per_cm: 31.0,
                c_sqrt_cm: 0.308,
                source: "Peek (1929), coaxial cylinders; Kuffel, Zaengl & Kuffel (2000) Ch. 5, \
                         from memory",
                mark: Mark::FromMemory,
            },
            PeekGeometry::Sphere => PeekConstants {
                g0_kv_per_cm: 27.2,
                c_sqrt_cm: 0.54,
                source: "Peek (1929), sphere; Naidu & Kamaraju, from memory",
                mark: Mark::FromMemory,
            },
        }
    }

    fn label(self) -> &'static str {
        match self {
            PeekGeometry::ParallelWires => "parallel wires",
            PeekGeometry::Coaxial => "coaxial cylinders",
            PeekGeometry::Sphere => "sphere",
        }
    }
}

/// Peek's relative air density δ = 3.92·b/(273 + t), b in cmHg, t in °C (1 at 76 cmHg,
/// 25 °C).
pub fn peek_delta(pressure_pa: f64, temperature_k: f64) -> Result<f64, BreakdownError> {
    positive("pressure (Pa)", pressure_pa)?;
    positive("temperature (K)", temperature_k)?;
    let b_cmhg = pressure_pa / (10.0 * TORR_PA);
    let t_c = temperature_k - 273.15;
    Ok(3.92 * b_cmhg / (273.0 + t_c))
}

fn check_surface_factor(m: f64) -> Result<f64, BreakdownError> {
    if m.is_finite() && m > 0.0 && m <= 1.0 {
        Ok(m)
    } else {
        Err(BreakdownError::InvalidInput {
            name: "Peek surface factor m",
            value: m,
            accepted: "0 < m <= 1 (1 polished, 0.93-0.98 weathered, 0.83-0.87 stranded)",
        })
    }
}

fn field_v_per_m(geometry: PeekGeometry, radius_m: f64, delta: f64, m: f64) -> f64 {
    let c = geometry.constants();
    let r_cm = radius_m * 100.0;
    let kv_per_cm = c.g0_kv_per_cm * m * delta * (1.0 + c.c_sqrt_cm / (delta * r_cm).sqrt());
    kv_per_cm * 1.0e5
}

/// Peek's corona-onset surface field (V/m) on a conductor of radius `radius_m`.
pub fn onset_field(
    geometry: PeekGeometry,
    radius_m: f64,
    delta: f64,
    m: f64,
) -> Result<Limit, BreakdownError> {
    positive("conductor radius (m)", radius_m)?;
    positive("relative air density delta", delta)?;
    let m = check_surface_factor(m)?;
    let c = geometry.constants();
    let (lo, hi) = PEEK_DELTA_RANGE;
    let validity = if (lo..=hi).contains(&delta) {
        Validity::Valid
    } else {
        Validity::OutsideValidity {
            reason: format!(
                "Peek's relative air density delta = {delta:.4} is outside the range {lo}-{hi} \
                 of his data; the streamer integral applies"
            ),
        }
    };
    Ok(Limit::new(
        Criterion::PeekCorona,
        format!(
            "Peek corona onset ({}, m = {m}, delta = {delta:.4})",
            geometry.label()
        ),
        c.source,
        c.mark,
        LimitKind::Field,
        field_v_per_m(geometry, radius_m, delta, m),
        validity,
    ))
}

/// Peek's onset field in a gas: δ from the gas state; outside validity for gases other than air.
pub fn onset_field_in_gas(
    geometry: PeekGeometry,
    radius_m: f64,
    gas: &Gas,
    m: f64,
) -> Result<Limit, BreakdownError> {
    let state = GasState::resolve(gas)?;
    let delta = peek_delta(state.pressure_pa, state.temperature_k)?;
    let mut limit = onset_field(geometry, radius_m, delta, m)?;
    if state.kind != GasKind::Air {
        limit.validity = limit.validity.and(Validity::OutsideValidity {
            reason: format!(
                "Peek's law is an air fit; {} needs the streamer integral",
                state.kind.label()
            ),
        });
    }
    Ok(limit)
}

/// Corona-onset voltage (V) of a coaxial pair: V = E_c(a)·a·ln(b/a).
pub fn coaxial_onset_voltage(
    inner_radius_m: f64,
    outer_radius_m: f64,
    delta: f64,
    m: f64,
) -> Result<Limit, BreakdownError> {
    positive("outer radius (m)", outer_radius_m)?;
    let mut limit = onset_field(PeekGeometry::Coaxial, inner_radius_m, delta, m)?;
    if outer_radius_m <= inner_radius_m {
        return Err(BreakdownError::InvalidInput {
            name: "outer radius (m)",
            value: outer_radius_m,
            accepted: "a radius larger than the inner radius",
        });
    }
    let length = inner_radius_m * (outer_radius_m / inner_radius_m).ln();
    limit = limit.scaled(length);
    limit.kind = LimitKind::Voltage;
    limit.name = format!("{} x a ln(b/a)", limit.name);
    Ok(limit)
}

/// Corona-onset voltage to neutral (V) of two parallel wires of radius `radius_m` at centre
/// spacing `spacing_m` (S ≫ r): V = E_c(r)·r·ln(S/r).
pub fn parallel_wire_onset_voltage(
    radius_m: f64,
    spacing_m: f64,
    delta: f64,
    m: f64,
) -> Result<Limit, BreakdownError> {
    positive("wire spacing (m)", spacing_m)?;
    let mut limit = onset_field(PeekGeometry::ParallelWires, radius_m, delta, m)?;
    if spacing_m <= 2.0 * radius_m {
        return Err(BreakdownError::InvalidInput {
            name: "wire spacing (m)",
            value: spacing_m,
            accepted: "a centre spacing larger than two wire radii",
        });
    }
    let length = radius_m * (spacing_m / radius_m).ln();
    limit = limit.scaled(length);
    limit.kind = LimitKind::Voltage;
    limit.name = format!("{} x r ln(S/r), to neutral", limit.name);
    Ok(limit)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::breakdown::gas::pure;

    #[test]
    fn delta_is_one_at_peek_reference() {
        let d = peek_delta(76.0 * 10.0 * TORR_PA, 298.15).unwrap();
        assert!((d - 3.92 * 76.0 / 298.0).abs() < 1e-12);
        assert!((d - 1.0).abs() < 1e-3);
    }

    #[test]
    fn bad_inputs_are_errors() {
        assert!(onset_field(PeekGeometry::Sphere, 0.0, 1.0, 1.0).is_err());
        assert!(onset_field(PeekGeometry::Sphere, 0.01, 1.0, 1.5).is_err());
        assert!(coaxial_onset_voltage(0.02, 0.01, 1.0, 1.0).is_err());
        assert!(parallel_wire_onset_voltage(0.01, 0.015, 1.0, 1.0).is_err());
    }

    #[test]
    fn density_outside_peeks_range_is_flagged() {
        assert!(
            !onset_field(PeekGeometry::Sphere, 0.01, 0.001, 1.0)
                .unwrap()
                .validity
                .is_valid()
        );
        assert!(
            !onset_field(PeekGeometry::Coaxial, 0.01, 2.0, 1.0)
                .unwrap()
                .validity
                .is_valid()
        );
        assert!(
            onset_field(PeekGeometry::Coaxial, 0.01, 1.0, 1.0)
                .unwrap()
                .validity
                .is_valid()
        );
    }

    #[test]
    fn other_gases_are_flagged() {
        let l = onset_field_in_gas(PeekGeometry::Coaxial, 0.01, &pure("SF6", 1e5, 293.15), 1.0)
            .unwrap();
        assert!(!l.validity.is_valid());
    }
}
