//! Uniform-field breakdown of a gas gap above the Townsend regime, the limiting field of each
//! gas, and the regime chooser that picks the criterion valid for a given gap.
//!
//! - Air: Schumann-type fit V_b (kV) = 24.36·(pd) + 6.72·√(pd), p in bar at 20 °C (here the
//!   density-reduced pressure), d in cm, valid for 0.01 ≲ pd ≲ 10 bar·cm — Kuffel, Zaengl &
//!   Kuffel (2000), Ch. 5 \[M\] (docs/references.md §2).
//! - CO2, N2: scaled air ([`super::gas::CO2_TO_AIR`], [`super::gas::N2_TO_AIR`]).
//! - SF6 and SF6–N2: V_b = (E/p)_crit·p·d + K/k from the linear effective-ionisation fit
//!   (docs/references.md §3), valid while E/p ≤ 1.5·(E/p)_crit; mixtures scaled by their strength.
//! - SF6 critical reduced field (E/N)_lim = 361 Td — Christophorou & Olthoff, J. Phys. Chem.
//!   Ref. Data 29, 267 (2000) \[M\].

use serde::Serialize;

use super::convert::{self, BAR_CM_PA_M};
use super::error::BreakdownError;
use super::gas::{
    CO2_TO_AIR, GasKind, GasOptions, GasState, N2_TO_AIR, positive, sf6_n2_relative_strength,
};
use super::ionisation::{AIR_E_OVER_P_ZERO, AIR_SQRT_K_OVER_C, EffectiveIonisation};
use super::limit::{Criterion, Limit, LimitKind, Mark, Validity};
use super::paschen;
use crate::model::Gas;

/// pd range of the Schumann air fit, bar·cm \[M\] (docs/references.md §2: "roughly 0.01 ≲ p·d ≲
/// 5–10 bar·cm"; the upper end 10 is used).
pub const SCHUMANN_PD_RANGE_BAR_CM: (f64, f64) = (0.01, 10.0);

/// SF6 critical reduced field, Td \[M\] (Christophorou & Olthoff, J. Phys. Chem. Ref. Data 29,
/// 267 (2000)). 89.19 kV/cm at 1 bar, 20 °C \[D\].
pub const SF6_CRITICAL_TD: f64 = 361.0;

const SCHUMANN_SOURCE: &str = "Kuffel, Zaengl & Kuffel, High Voltage Engineering: \
                               Fundamentals, 2nd ed. (2000), Ch. 5, Schumann-type fit \
                               24.36 pd + 6.72 sqrt(pd) kV, from memory";

/// Schumann air breakdown voltage (V) of a gap `gap_m` at density-reduced pressure
/// `reduced_pressure_pa`, with the pd-range validity.
pub fn schumann_air_voltage(
    reduced_pressure_pa: f64,
    gap_m: f64,
) -> Result<(f64, Validity), BreakdownError> {
    positive("pressure (Pa)", reduced_pressure_pa)?;
    positive("gap length (m)", gap_m)?;
    let pd = convert::pa_m_to_bar_cm(reduced_pressure_pa * gap_m);
    let kv = AIR_E_OVER_P_ZERO * pd + AIR_SQRT_K_OVER_C * pd.sqrt();
    let (lo, hi) = SCHUMANN_PD_RANGE_BAR_CM;
    // A relative 1e-9 allowance keeps the range ends inside despite rounding of the density.
    let validity = if pd < lo * (1.0 - 1e-9) || pd > hi * (1.0 + 1e-9) {
        Validity::OutsideValidity {
            reason: format!(
                "pd = {pd:.4} bar·cm (at 20 °C density) is outside the Schumann fit range \
                 {lo}-{hi} bar·cm"
            ),
        }
    } else {
        Validity::Valid
    };
    Ok((kv * 1.0e3, validity))
}

/// The older air form of Naidu & Kamaraju: x = 293·p·d/(760·T) (p in Torr, d in cm, T in K),
/// V_b = 24.22·x + 6.08·√x kV \[C\] (a public HV note citing Naidu & Kamaraju; docs/references.md §2).
/// A cross-check of the Schumann fit (they differ by ~4 % at 1 cm); returns volts.
pub fn air_older_form_voltage(
    pressure_pa: f64,
    temperature_k: f64,
    gap_m: f64,
) -> Result<f64, BreakdownError> {
    positive("pressure (Pa)", pressure_pa)?;
    positive("temperature (K)", temperature_k)?;
    positive("gap length (m)", gap_m)?;
    let p_torr = pressure_pa / convert::TORR_PA;
    let x = 293.0 * p_torr * (gap_m * 100.0) / (760.0 * temperature_k);
    Ok((24.22 * x + 6.08 * x.sqrt()) * 1.0e3)
}

fn air_like_limit(state: &GasState, gap_m: f64) -> Result<Limit, BreakdownError> {
    let (v, validity) = schumann_air_voltage(state.reduced_pressure_pa, gap_m)?;
    let limit = match state.kind {
        GasKind::Air => Limit::new(
            Criterion::SchumannAir,
            "Schumann uniform-field fit (air)",
            SCHUMANN_SOURCE,
            Mark::FromMemory,
            LimitKind::Voltage,
            v,
            validity,
        ),
        GasKind::Co2 => Limit::new(
            Criterion::ScaledAir,
            format!("scaled air: CO2 = {CO2_TO_AIR} x Schumann air fit"),
            format!(
                "{SCHUMANN_SOURCE}; CO2 strength 0.9 x air (docs/references.md §3), from memory"
            ),
            Mark::FromMemory,
            LimitKind::Voltage,
            CO2_TO_AIR * v,
            validity,
        ),
        GasKind::N2 => Limit::new(
            Criterion::ScaledAir,
            format!("scaled air: N2 = {N2_TO_AIR} x Schumann air fit"),
            format!(
                "{SCHUMANN_SOURCE}; N2 strength 0.97 x air from 30.4 kV at 1 cm, 101.3 kPa \
                 (docs/references.md §2, Taylor & Francis chapter abstract), derived"
            ),
            Mark::FromMemory,
            LimitKind::Voltage,
            N2_TO_AIR * v,
            validity,
        ),
        GasKind::Sf6 | GasKind::Sf6N2 { .. } => {
            return Err(BreakdownError::NotApplicable {
                criterion: "the Schumann air fit",
                gas: state.kind.label(),
                reason: "SF6-based gases use the SF6 linear fit".to_string(),
            });
        }
    };
    Ok(limit)
}

/// Schumann-type uniform breakdown voltage for air, or scaled air for N2 and CO2.
pub fn schumann_limit(gas: &Gas, gap_m: f64) -> Result<Limit, BreakdownError> {
    let state = GasState::resolve(gas)?;
    air_like_limit(&state, gap_m)
}

fn sf6_like_limit(
    state: &GasState,
    gap_m: f64,
    options: &GasOptions,
) -> Result<Limit, BreakdownError> {
    positive("gap length (m)", gap_m)?;
    let model = EffectiveIonisation::for_state(state, options)?;
    let p = state.reduced_pressure_pa;
    let e = model.uniform_breakdown_field(p, gap_m)?;
    let validity = model.validity.clone().and(Validity::from_reasons(
        model.window_reason(e, p).into_iter().collect(),
    ));
    Ok(Limit::new(
        Criterion::Sf6Streamer,
        format!(
            "uniform-field streamer breakdown, {} ((E/p)crit p d + K/k)",
            model.name
        ),
        model.source.clone(),
        model.mark,
        LimitKind::Voltage,
        e * gap_m,
        validity,
    ))
}

/// Uniform-field streamer breakdown voltage of SF6 or an SF6–N2 mixture:
/// V_b = s·[(E/p)_crit·p·d + K/k] with s the mixture strength (1 for SF6).
pub fn sf6_limit(gas: &Gas, gap_m: f64, options: &GasOptions) -> Result<Limit, BreakdownError> {
    let state = GasState::resolve(gas)?;
    if !state.kind.is_sf6_based() {
        return Err(BreakdownError::NotApplicable {
            criterion: "the SF6 linear fit",
            gas: state.kind.label(),
            reason: "only SF6 and SF6-N2 mixtures".to_string(),
        });
    }
    sf6_like_limit(&state, gap_m, options)
}

/// The limiting field of a gas (V/m): the field that a long uniform gap tends to, where
/// α = η for attaching gases.
///
/// SF6: 361 Td × N (Christophorou & Olthoff 2000) \[M\]; SF6–N2: that times the mixture
/// strength; air: (E/p)_0 = 24.36 kV/(cm·bar) × p (Schumann fit, ≈ 98.6 Td) \[M\]; CO2 and N2:
/// scaled air (N2 is non-attaching: for it this is the long-gap asymptote of the scaled-air
/// model, not an α = η point).
pub fn critical_field(gas: &Gas, options: &GasOptions) -> Result<Limit, BreakdownError> {
    let state = GasState::resolve(gas)?;
    critical_field_for_state(&state, options)
}

pub(crate) fn critical_field_for_state(
    state: &GasState,
    options: &GasOptions,
) -> Result<Limit, BreakdownError> {
    let sf6_e = SF6_CRITICAL_TD * convert::TOWNSEND_V_M2 * state.number_density_m3;
    let sf6_source = "Christophorou & Olthoff, J. Phys. Chem. Ref. Data 29, 267 (2000): \
                      (E/N)lim = 361 Td, from memory";
    let air_e = AIR_E_OVER_P_ZERO * state.reduced_pressure_pa;
    let air_source = "Kuffel, Zaengl & Kuffel (2000), Ch. 5: (E/p)0 = 24.36 kV/(cm bar) of the \
                      Schumann fit, from memory";
    let limit = match state.kind {
        GasKind::Sf6 => Limit::new(
            Criterion::CriticalField,
            "SF6 critical field (361 Td)",
            sf6_source,
            Mark::FromMemory,
            LimitKind::Field,
            sf6_e,
            Validity::Valid,
        ),
        GasKind::Sf6N2 { sf6_fraction } => {
            let s = sf6_n2_relative_strength(sf6_fraction, options.mixture_strength.as_ref())?;
            Limit::new(
                Criterion::CriticalField,
                format!(
                    "{} critical field ({:.3} x SF6 361 Td)",
                    state.kind.label(),
                    s.factor
                ),
                format!("{sf6_source}; mixture: {}", s.basis),
                Mark::FromMemory.weakest(s.mark),
                LimitKind::Field,
                s.factor * sf6_e,
                s.validity,
            )
        }
        GasKind::Air => Limit::new(
            Criterion::CriticalField,
            "air limiting uniform field (24.36 kV/(cm bar))",
            air_source,
            Mark::FromMemory,
            LimitKind::Field,
            air_e,
            Validity::Valid,
        ),
        GasKind::Co2 => Limit::new(
            Criterion::CriticalField,
            format!("CO2 limiting uniform field (scaled air, {CO2_TO_AIR} x air)"),
            format!("{air_source}; CO2 strength 0.9 x air (docs/references.md §3), from memory"),
            Mark::FromMemory,
            LimitKind::Field,
            CO2_TO_AIR * air_e,
            Validity::Valid,
        ),
        GasKind::N2 => Limit::new(
            Criterion::CriticalField,
            format!(
                "N2 long-gap uniform field (scaled air, {N2_TO_AIR} x air; N2 is non-attaching)"
            ),
            format!(
                "{air_source}; N2 strength 0.97 x air from 30.4 kV at 1 cm, 101.3 kPa \
                 (docs/references.md §2), derived"
            ),
            Mark::FromMemory,
            LimitKind::Field,
            N2_TO_AIR * air_e,
            Validity::Valid,
        ),
    };
    Ok(limit)
}

/// The result of the regime chooser for a uniform gap.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct UniformBreakdown {
    /// The breakdown voltage by the chosen criterion (`voltage.criterion` names it).
    pub voltage: Limit,
    /// The same as a uniform breakdown field V/d.
    pub field: Limit,
    /// The other criteria evaluated and not chosen, with their validity.
    pub considered: Vec<Limit>,
}

/// Uniform-field breakdown of a gap `gap_m` in `gas`, by the criterion valid in that regime.
///
/// Air, N2, CO2: Paschen's law where it is valid (inside its E/p window and below 200 Torr·cm);
/// otherwise the Schumann fit (scaled air for N2, CO2) where that is valid
/// (0.01–10 bar·cm); if neither is valid, Paschen below the Schumann range and Schumann above
/// it, flagged outside validity. SF6 and SF6–N2: the SF6 linear-fit streamer breakdown.
/// Left of the Paschen curve (no Townsend solution) is an error.
pub fn uniform_breakdown(
    gas: &Gas,
    gap_m: f64,
    options: &GasOptions,
) -> Result<UniformBreakdown, BreakdownError> {
    let state = GasState::resolve(gas)?;
    uniform_breakdown_for_state(&state, gap_m, options)
}

pub(crate) fn uniform_breakdown_for_state(
    state: &GasState,
    gap_m: f64,
    options: &GasOptions,
) -> Result<UniformBreakdown, BreakdownError> {
    positive("gap length (m)", gap_m)?;
    let (chosen, considered) = if state.kind.is_sf6_based() {
        (sf6_like_limit(state, gap_m, options)?, Vec::new())
    } else {
        let townsend = paschen::limit_for_state(state, gap_m, options)?;
        let streamer = air_like_limit(state, gap_m)?;
        if townsend.validity.is_valid() {
            (townsend, vec![streamer])
        } else if streamer.validity.is_valid() {
            (streamer, vec![townsend])
        } else {
            let pd_bar_cm = state.reduced_pd(gap_m) / BAR_CM_PA_M;
            if pd_bar_cm < SCHUMANN_PD_RANGE_BAR_CM.0 {
                (townsend, vec![streamer])
            } else {
                (streamer, vec![townsend])
            }
        }
    };
    let mut field = chosen.clone().scaled(1.0 / gap_m);
    field.kind = LimitKind::Field;
    field.name = format!("{} / gap", chosen.name);
    Ok(UniformBreakdown {
        voltage: chosen,
        field,
        considered,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::breakdown::gas::{pure, standard_air};

    #[test]
    fn chooser_prefers_paschen_at_low_pd() {
        // 1 Torr·cm is inside the air window (E/p ≈ 300 V/(cm·Torr)).
        let gas = pure("air", convert::TORR_PA, convert::T0_K);
        let r = uniform_breakdown(&gas, 0.01, &GasOptions::default()).unwrap();
        assert_eq!(r.voltage.criterion, Criterion::Paschen);
        assert!(r.voltage.validity.is_valid());
    }

    #[test]
    fn schumann_range_is_flagged() {
        let (_, v) = schumann_air_voltage(1e5, 2.0).unwrap();
        assert!(!v.is_valid());
    }

    #[test]
    fn sf6_has_no_schumann_and_air_has_no_sf6_fit() {
        assert!(schumann_limit(&pure("SF6", 1e5, 293.15), 0.01).is_err());
        assert!(sf6_limit(&standard_air(), 0.01, &GasOptions::default()).is_err());
    }

    #[test]
    fn field_is_voltage_over_gap() {
        let r = uniform_breakdown(&standard_air(), 0.02, &GasOptions::default()).unwrap();
        assert_eq!(r.field.kind, LimitKind::Field);
        assert!((r.field.value * 0.02 - r.voltage.value).abs() < 1e-6);
    }
}
