//! Effective ionisation coefficients α − η (per metre) as functions of field and gas density,
//! for the streamer (ionisation-integral) criterion.
//!
//! Three fit forms, each with the E/p window it was fitted over and its streamer number K:
//!
//! - air, quadratic (Schumann) form (α − η)/p = C·[(E/p) − 24.36]², E/p in kV/(cm·bar), with
//!   K = 9 (Schumann) and C = K/6.72² ≈ K/45.2 cm·bar/kV², so that the uniform-field integral
//!   reproduces the Schumann fit V = 24.36·pd + 6.72·√pd exactly — Kuffel, Zaengl & Kuffel,
//!   *High Voltage Engineering: Fundamentals*, 2nd ed. (2000), Ch. 5 \[M\]; C from K/C = 6.72²
//!   \[D\] (docs/references.md §2, §4);
//! - SF6, linear form (α − η)/p = k·[(E/p) − (E/p)_crit], k = 27.7 kV⁻¹,
//!   (E/p)_crit = 88.5 kV/(cm·bar), K = 10.5 — Kuffel et al. (2000) Ch. 5 \[M\] (docs/references.md
//!   §3; 88.5 is the middle of the 88.4–88.6 range, as the check values use);
//! - Townsend α only, α/p = A·exp(−B·p/E), η = 0, for the non-attaching N2 with the Paschen
//!   constants of [`super::paschen::N2`] and K = ln(10⁸) ≈ 18.4 (Raether/Meek critical
//!   avalanche N_c ≈ 10⁸) \[C\] (docs/references.md §4).
//!
//! A gas with no fit of its own is a **scaled** model of a base gas: the base coefficient
//! evaluated at E / s, where s is the strength relative to the base gas (CO2 and, optionally,
//! N2 as scaled air; SF6–N2 mixtures as scaled SF6). Every breakdown field of a scaled model is
//! s times that of its base gas. The model's name says so.
//!
//! Throughout, p is the density-reduced pressure (Pa) and E/p is in V/(m·Pa) = kV/(cm·bar).

use serde::Serialize;

use super::convert;
use super::error::BreakdownError;
use super::gas::{
    CO2_TO_AIR, GasKind, GasOptions, GasState, N2_TO_AIR, RelativeStrength,
    sf6_n2_relative_strength,
};
use super::limit::{Mark, Validity};
use super::paschen;
use crate::model::Gas;

/// (E/p)_0 of the air Schumann fit, kV/(cm·bar) = V/(m·Pa) \[M\] (Kuffel et al. 2000, Ch. 5).
pub const AIR_E_OVER_P_ZERO: f64 = 24.36;
/// √(K/C) of the air Schumann fit, kV/√(bar·cm) \[M\] (Kuffel et al. 2000, Ch. 5).
pub const AIR_SQRT_K_OVER_C: f64 = 6.72;
/// Streamer number for the air quadratic fit, K = 9 (Schumann) \[M\] (docs/references.md §2).
pub const AIR_STREAMER_NUMBER: f64 = 9.0;
/// Upper end of the air quadratic fit window, kV/(cm·bar): the uniform-field breakdown E/p at
/// the lowest pd of the Schumann fit's range (0.01 bar·cm), 24.36 + 6.72/√0.01 = 91.56 \[D\].
pub const AIR_E_OVER_P_MAX: f64 = AIR_E_OVER_P_ZERO + AIR_SQRT_K_OVER_C * 10.0;

/// SF6 slope k of the linear fit, 1/kV \[M\] (Kuffel et al. 2000, Ch. 5).
pub const SF6_SLOPE_PER_KV: f64 = 27.7;
/// SF6 (E/p)_crit of the linear fit at 20 °C, kV/(cm·bar) \[M\] (Kuffel et al. 2000 Ch. 5 uses
/// 88.4; other sources 88.6–89; 88.5 as the check values of docs/references.md use).
pub const SF6_E_OVER_P_CRIT: f64 = 88.5;
/// SF6 streamer number K = 10.5 \[M\] (Kuffel et al. 2000; Pedersen).
pub const SF6_STREAMER_NUMBER: f64 = 10.5;
/// The SF6 linear fit is valid for E/p up to about 1.5 × (E/p)_crit \[M\] (docs/references.md §3).
pub const SF6_FIT_MAX_RATIO: f64 = 1.5;

/// Raether–Meek streamer number for α-only integrals, ln(10⁸) ≈ 18.42 (N_c ≈ 10⁸; "K ≈ 18–20
/// for air") \[C\] (docs/references.md §4).
pub const RAETHER_MEEK_K: f64 = 18.420_680_743_952_367;

/// The functional form of a fit, SI constants.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(tag = "form", rename_all = "snake_case")]
pub enum IonisationFit {
    /// (α − η)/p = C·[(E/p) − (E/p)_0]² for E/p > (E/p)_0; C in (m·Pa)/V², (E/p)_0 in V/(m·Pa).
    Quadratic { c: f64, e_over_p_zero: f64 },
    /// (α − η)/p = k·[(E/p) − (E/p)_crit]; k in 1/V, (E/p)_crit in V/(m·Pa).
    Linear { k_per_v: f64, e_over_p_crit: f64 },
    /// α/p = A·exp(−B·p/E), η = 0; A in 1/(Pa·m), B in V/(Pa·m).
    Townsend { a_per_pa_m: f64, b_v_per_pa_m: f64 },
}

/// One effective-ionisation model: a fit, its window, its streamer number and its source.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct EffectiveIonisation {
    /// E.g. "air (Schumann quadratic form)", "CO2 (scaled air, 0.9 x air)".
    pub name: String,
    pub fit: IonisationFit,
    /// Strength relative to the base gas of `fit` (1 for the base gas itself).
    pub field_scale: f64,
    /// Streamer number K: the integral ∫(α − η) ds at inception.
    pub streamer_number: f64,
    /// Lower end of the fit window in base-gas E/p, V/(m·Pa): the integral stops here.
    pub e_over_p_stop: f64,
    /// True when the stop is where α − η = 0 (the natural end of the integral); false when it is
    /// only the edge of the fitted window (α > 0 continues beyond it).
    pub stop_is_zero: bool,
    /// Upper end of the fit window in base-gas E/p, V/(m·Pa).
    pub e_over_p_max: f64,
    pub source: String,
    pub mark: Mark,
    /// Validity of the model itself (e.g. a mixture interpolation outside its range).
    pub validity: Validity,
}

impl EffectiveIonisation {
    /// Air, quadratic (Schumann) form, K = 9.
    pub fn air() -> Self {
        // C in cm·bar/kV² is 1e-3 (m·Pa)/V² in SI.
        let c_cm_bar_per_kv2 = AIR_STREAMER_NUMBER / (AIR_SQRT_K_OVER_C * AIR_SQRT_K_OVER_C);
        EffectiveIonisation {
            name: "air (Schumann quadratic form, K = 9)".to_string(),
            fit: IonisationFit::Quadratic {
                c: c_cm_bar_per_kv2 * 1.0e-3,
                e_over_p_zero: AIR_E_OVER_P_ZERO,
            },
            field_scale: 1.0,
            streamer_number: AIR_STREAMER_NUMBER,
            e_over_p_stop: AIR_E_OVER_P_ZERO,
            stop_is_zero: true,
            e_over_p_max: AIR_E_OVER_P_MAX,
            source: "Kuffel, Zaengl & Kuffel, High Voltage Engineering: Fundamentals, 2nd ed. \
                     (2000), Ch. 5: (alpha-eta)/p = C[(E/p) - 24.36]^2, K = 9 (Schumann), from \
                     memory; C = K/6.72^2 derived"
                .to_string(),
            mark: Mark::FromMemory,
            validity: Validity::Valid,
        }
    }

    /// SF6, linear form, k = 27.7 /kV, (E/p)_crit = 88.5 kV/(cm·bar), K = 10.5.
    pub fn sf6() -> Self {
        EffectiveIonisation {
            name: "SF6 (linear form, K = 10.5)".to_string(),
            fit: IonisationFit::Linear {
                k_per_v: SF6_SLOPE_PER_KV * 1.0e-3,
                e_over_p_crit: SF6_E_OVER_P_CRIT,
            },
            field_scale: 1.0,
            streamer_number: SF6_STREAMER_NUMBER,
            e_over_p_stop: SF6_E_OVER_P_CRIT,
            stop_is_zero: true,
            e_over_p_max: SF6_FIT_MAX_RATIO * SF6_E_OVER_P_CRIT,
            source: "Kuffel, Zaengl & Kuffel (2000), Ch. 5: (alpha-eta)/p = k[(E/p) - \
                     (E/p)crit], k = 27.7 /kV, (E/p)crit = 88.5 kV/(cm bar), K = 10.5, from memory"
                .to_string(),
            mark: Mark::FromMemory,
            validity: Validity::Valid,
        }
    }

    /// CO2 as scaled air ([`CO2_TO_AIR`] × air).
    pub fn co2() -> Self {
        Self::air().scaled(
            CO2_TO_AIR,
            format!("CO2 (scaled air, {CO2_TO_AIR} x air)"),
            "CO2 strength 0.9 x air (docs/references.md §3, from memory)",
            Mark::FromMemory,
        )
    }

    /// N2 as scaled air ([`N2_TO_AIR`] × air), for the streamer regime at high pd.
    pub fn n2_scaled_air() -> Self {
        Self::air().scaled(
            N2_TO_AIR,
            format!("N2 (scaled air, {N2_TO_AIR} x air)"),
            "N2 strength 0.97 x air: 30.4 kV for 1 cm at 101.3 kPa (docs/references.md §2, Taylor & \
             Francis chapter abstract) over the Schumann air fit, derived",
            Mark::Derived,
        )
    }

    /// N2, Townsend α only (non-attaching), Raizer constants and window, K = ln(10⁸).
    pub fn n2_townsend() -> Self {
        Self::townsend(&paschen::N2, RAETHER_MEEK_K)
    }

    /// Townsend α only for a gas of the Paschen table, with streamer number `streamer_number`.
    pub fn townsend(c: &paschen::PaschenConstants, streamer_number: f64) -> Self {
        EffectiveIonisation {
            name: format!(
                "{} (Townsend alpha only, K = {:.1})",
                c.gas, streamer_number
            ),
            fit: IonisationFit::Townsend {
                a_per_pa_m: c.a_per_pa_m,
                b_v_per_pa_m: c.b_v_per_pa_m,
            },
            field_scale: 1.0,
            streamer_number,
            e_over_p_stop: c.e_over_p_min,
            stop_is_zero: false,
            e_over_p_max: c.e_over_p_max,
            source: format!(
                "alpha/p = A exp(-Bp/E), no attachment; {}; K = ln(1e8) (Raether/Meek, \
                 docs/references.md §4)",
                c.source
            ),
            mark: c.mark.weakest(Mark::Confirmed),
            validity: Validity::Valid,
        }
    }

    /// An SF6–N2 mixture as scaled SF6 with the given strength relative to SF6.
    pub fn sf6_n2(sf6_fraction: f64, strength: &RelativeStrength) -> Self {
        let mut m = Self::sf6().scaled(
            strength.factor,
            format!(
                "SF6/N2 {:.1} % SF6 (scaled SF6, {:.3} x SF6)",
                100.0 * sf6_fraction,
                strength.factor
            ),
            &strength.basis,
            strength.mark,
        );
        m.validity = strength.validity.clone();
        m
    }

    /// The default model of a gas: air quadratic; SF6 linear; CO2 scaled air; N2 Townsend α
    /// only (its window, E/p ≥ 100 V/(cm·Torr), is not reached at tank pressures, where results
    /// come out flagged; [`EffectiveIonisation::n2_scaled_air`] is the stated alternative);
    /// SF6–N2 scaled SF6 with the mixture strength of `options`.
    pub fn for_gas(gas: &Gas, options: &GasOptions) -> Result<Self, BreakdownError> {
        let state = GasState::resolve(gas)?;
        Self::for_state(&state, options)
    }

    pub(crate) fn for_state(
        state: &GasState,
        options: &GasOptions,
    ) -> Result<Self, BreakdownError> {
        Ok(match state.kind {
            GasKind::Air => Self::air(),
            GasKind::Sf6 => Self::sf6(),
            GasKind::Co2 => Self::co2(),
            GasKind::N2 => Self::n2_townsend(),
            GasKind::Sf6N2 { sf6_fraction } => {
                let s = sf6_n2_relative_strength(sf6_fraction, options.mixture_strength.as_ref())?;
                Self::sf6_n2(sf6_fraction, &s)
            }
        })
    }

    fn scaled(mut self, factor: f64, name: String, basis: &str, mark: Mark) -> Self {
        self.field_scale *= factor;
        self.name = name;
        self.source = format!("{}; scaled: {}", self.source, basis);
        self.mark = self.mark.weakest(mark);
        self
    }

    /// α − η in 1/m at field `e_v_per_m` and density-reduced pressure `p_pa`.
    ///
    /// Below the zero of a quadratic fit the signed square −C·p·(x₀ − x)² is returned, so that
    /// the coefficient stays monotone; the integral stops at the zero in any case.
    pub fn coefficient_per_m(&self, e_v_per_m: f64, p_pa: f64) -> f64 {
        let e = e_v_per_m / self.field_scale;
        match self.fit {
            IonisationFit::Quadratic { c, e_over_p_zero } => {
                let d = e / p_pa - e_over_p_zero;
                c * p_pa * d * d.abs()
            }
            IonisationFit::Linear {
                k_per_v,
                e_over_p_crit,
            } => k_per_v * (e - e_over_p_crit * p_pa),
            IonisationFit::Townsend {
                a_per_pa_m,
                b_v_per_pa_m,
            } => {
                if e <= 0.0 {
                    0.0
                } else {
                    a_per_pa_m * p_pa * (-b_v_per_pa_m * p_pa / e).exp()
                }
            }
        }
    }

    /// Field (V/m) at which the integral stops (α − η = 0 or the lower window edge).
    pub fn stop_field(&self, p_pa: f64) -> f64 {
        self.field_scale * self.e_over_p_stop * p_pa
    }

    /// Field (V/m) above which the fit is extrapolated.
    pub fn max_field(&self, p_pa: f64) -> f64 {
        self.field_scale * self.e_over_p_max * p_pa
    }

    /// Uniform-field breakdown field (V/m) of a gap `gap_m` at density-reduced pressure `p_pa`,
    /// from ∫(α − η) dx = (α − η)·d = K in closed form.
    pub fn uniform_breakdown_field(&self, p_pa: f64, gap_m: f64) -> Result<f64, BreakdownError> {
        let k = self.streamer_number;
        let base = match self.fit {
            IonisationFit::Quadratic { c, e_over_p_zero } => {
                p_pa * (e_over_p_zero + (k / (c * p_pa * gap_m)).sqrt())
            }
            IonisationFit::Linear {
                k_per_v,
                e_over_p_crit,
            } => e_over_p_crit * p_pa + k / (k_per_v * gap_m),
            IonisationFit::Townsend {
                a_per_pa_m,
                b_v_per_pa_m,
            } => {
                let x = a_per_pa_m * p_pa * gap_m / k;
                if x <= 1.0 {
                    return Err(BreakdownError::NoInception {
                        reason: format!(
                            "A·p·d = {:.3} does not exceed K = {k:.2}: alpha saturates below \
                             the streamer number over this gap",
                            a_per_pa_m * p_pa * gap_m
                        ),
                    });
                }
                b_v_per_pa_m * p_pa / x.ln()
            }
        };
        Ok(self.field_scale * base)
    }

    /// Reasons why a field `e_v_per_m` lies outside the fit window (empty inside).
    pub(crate) fn window_reason(&self, e_v_per_m: f64, p_pa: f64) -> Option<String> {
        let x = e_v_per_m / (self.field_scale * p_pa);
        let fmt = |v: f64| match self.fit {
            IonisationFit::Townsend { .. } => {
                format!("{:.1} V/(cm·Torr)", convert::e_over_p_to_v_per_cm_torr(v))
            }
            _ => format!("{v:.2} kV/(cm·bar)"),
        };
        if x > self.e_over_p_max * (1.0 + 1e-9) {
            Some(format!(
                "E/p = {} (base gas) is above the fit window (max {}) of {}",
                fmt(x),
                fmt(self.e_over_p_max),
                self.name
            ))
        } else if !self.stop_is_zero && x < self.e_over_p_stop * (1.0 - 1e-9) {
            Some(format!(
                "E/p = {} (base gas) is below the fit window (min {}) of {}",
                fmt(x),
                fmt(self.e_over_p_stop),
                self.name
            ))
        } else {
            None
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn air_fit_is_zero_at_its_critical_reduced_field() {
        // α = η in air at 24.36 kV/(cm·bar), the constant of the Schumann breakdown form
        // V_b = 24.36·pd + 6.72·√(pd) kV (Kuffel, Zaengl & Kuffel 2000, Ch. 5, from memory;
        // docs/references.md §2): ionisation grows above it and attachment wins below.
        let m = EffectiveIonisation::air();
        assert!(m.coefficient_per_m(24.36e5, 1e5).abs() < 1e-9);
        assert!(m.coefficient_per_m(30e5, 1e5) > 0.0);
        assert!(m.coefficient_per_m(20e5, 1e5) < 0.0);
    }

    #[test]
    fn sf6_fit_in_practical_units() {
        // alpha - eta [1/cm] = 27.7 E[kV/cm] - 2450 p[bar] (docs/references.md §3): at 100 kV/cm,
        // 1 bar: 27.7 * (100 - 88.5) = 318.55 /cm.
        let m = EffectiveIonisation::sf6();
        let per_cm = m.coefficient_per_m(100e5, 1e5) / 100.0;
        assert!((per_cm - 318.55).abs() < 1e-9);
    }

    #[test]
    fn scaling_scales_every_breakdown_field() {
        let air = EffectiveIonisation::air();
        let co2 = EffectiveIonisation::co2();
        let ea = air.uniform_breakdown_field(1e5, 0.01).unwrap();
        let ec = co2.uniform_breakdown_field(1e5, 0.01).unwrap();
        assert!((ec / ea - CO2_TO_AIR).abs() < 1e-12);
        assert!((co2.stop_field(1e5) / air.stop_field(1e5) - CO2_TO_AIR).abs() < 1e-12);
    }

    #[test]
    fn townsend_saturation_is_an_error() {
        let m = EffectiveIonisation::n2_townsend();
        assert!(m.uniform_breakdown_field(1.0, 1e-3).is_err());
    }
}
