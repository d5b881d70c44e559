//! The gases the criteria know: identification from the model, density reduction, relative
//! strengths (CO2 and N2 against air, SF6–N2 mixtures against SF6) and the options the gas
//! criteria take.
//!
//! All gas fits are written for 20 °C; a different temperature enters through the gas
//! **density**: the fits are evaluated at the density-reduced pressure p20, the pressure the
//! same gas density has at T0 = 293.15 K (docs/references.md §1, "Temperature / density
//! correction" \[C\], Massarczyk et al. 2016). The published fits are given against the filling
//! pressure at 20 °C, so real-gas behaviour enters through that mapping: p20 comes from the
//! real-gas density ([`crate::thermo`], docs/references.md §17) where the ideal gas is off by
//! more than 1 %, and is p·T0/T otherwise. At 20 °C, p20 is the given pressure.

use serde::Serialize;

use super::convert::{self, ATM_PA, T0_K};
use super::error::BreakdownError;
use super::limit::{Mark, Validity};
use crate::model::Gas;

/// Default secondary-emission coefficient γ of the Townsend criterion, 0.01 (the usual default,
/// Lieberman & Lichtenberg 2005, Ch. 14) \[C\] (docs/references.md §1). Typical range 0.01–0.1.
pub const DEFAULT_GAMMA: f64 = 0.01;

/// CO2 uniform-field strength relative to air: 0.9 \[M\] (docs/references.md §3, "CO2 strength
/// ≈ 0.9 × air"); a cable-design page lists 0.95 \[C, secondary\]. The lower value is used. CO2
/// is modelled as **scaled air**: every air field (Schumann fit, α − η fit) multiplied by this
/// factor at the same density. No CO2 swarm data are used.
pub const CO2_TO_AIR: f64 = 0.9;

/// N2 uniform-field strength relative to air for the streamer (high-pd) regime: 0.97 \[D\],
/// the ratio of the measured 1 cm, 101.3 kPa value ≈ 30.4 kV \[C\] (docs/references.md §2, Taylor &
/// Francis chapter abstract) to the Schumann air fit at the same gap and density (31.44 kV).
/// Relative-strength tables give 1.0–1.15 \[M\]; 0.97 is the conservative end. Used only by the
/// scaled-air N2 model; N2's Townsend α (no attachment) is in [`super::paschen`].
pub const N2_TO_AIR: f64 = 0.97;

/// Exponent of the documented SF6–N2 interpolation E_crit(x)/E_crit(SF6) = x^0.22 \[P\]:
/// chosen to pass near the from-memory points "≈ 50 % SF6 gives ~85–90 % of pure SF6, ≈ 20 %
/// SF6 ~70 %" \[M\] (docs/references.md §3): 0.5^0.22 = 0.858, 0.2^0.22 = 0.702.
pub const SF6_N2_EXPONENT: f64 = 0.22;

/// SF6 mole-fraction range over which the interpolation [`SF6_N2_EXPONENT`] is offered: from the
/// lowest remembered point (20 %) to pure SF6.
pub const SF6_N2_FRACTION_RANGE: (f64, f64) = (0.2, 1.0);

/// The gases in the table.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(tag = "gas", rename_all = "snake_case")]
pub enum GasKind {
    Air,
    N2,
    Co2,
    Sf6,
    /// SF6–N2 mixture with the SF6 mole fraction (0 < x < 1).
    Sf6N2 {
        sf6_fraction: f64,
    },
}

impl GasKind {
    /// Short label: "air", "N2", "CO2", "SF6", "SF6/N2 (50 % SF6)".
    pub fn label(&self) -> String {
        match self {
            GasKind::Air => "air".to_string(),
            GasKind::N2 => "N2".to_string(),
            GasKind::Co2 => "CO2".to_string(),
            GasKind::Sf6 => "SF6".to_string(),
            GasKind::Sf6N2 { sf6_fraction } => {
                format!("SF6/N2 ({:.3} % SF6)", 100.0 * sf6_fraction)
            }
        }
    }

    /// True for SF6 and SF6 mixtures (the electronegative gases of the table).
    pub fn is_sf6_based(&self) -> bool {
        matches!(self, GasKind::Sf6 | GasKind::Sf6N2 { .. })
    }
}

/// A gas resolved for the criteria: which gas, and its density.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct GasState {
    pub kind: GasKind,
    pub pressure_pa: f64,
    pub temperature_k: f64,
    /// Number density the criteria use, m⁻³: p20/(k_B·T0), the ideal-gas density at the
    /// density-reduced pressure (the fits' own variable; the module documentation says why).
    pub number_density_m3: f64,
    /// Real-gas number density p/(Z·k_B·T), m⁻³.
    pub real_number_density_m3: f64,
    /// Pressure the same (real-gas) density would have at 20 °C, Pa (what the fits call p).
    pub reduced_pressure_pa: f64,
    /// Compressibility factor applied (1 for the ideal gas; [`crate::thermo`]).
    pub compressibility: f64,
}

/// Tolerance on the sum of mole fractions.
const FRACTION_SUM_TOL: f64 = 1e-6;

fn canonical_name(name: &str) -> Option<&'static str> {
    match name.trim().to_ascii_lowercase().as_str() {
        "air" => Some("air"),
        "n2" => Some("N2"),
        "co2" => Some("CO2"),
        "sf6" => Some("SF6"),
        _ => None,
    }
}

fn identify(gas: &Gas) -> Result<GasKind, BreakdownError> {
    let unsupported = || BreakdownError::UnsupportedGas {
        species: gas.species.clone(),
    };
    if gas.components.is_empty() {
        return match canonical_name(&gas.species) {
            Some("air") => Ok(GasKind::Air),
            Some("N2") => Ok(GasKind::N2),
            Some("CO2") => Ok(GasKind::Co2),
            Some("SF6") => Ok(GasKind::Sf6),
            _ => Err(unsupported()),
        };
    }
    let mut sum = 0.0;
    let mut sf6 = 0.0;
    let mut n2 = 0.0;
    let mut others: Vec<&'static str> = Vec::new();
    for (name, fraction) in &gas.components {
        if !(fraction.is_finite() && *fraction >= 0.0) {
            return Err(BreakdownError::BadComposition {
                species: gas.species.clone(),
                reason: format!("mole fraction of {name} is {fraction}; expected 0 to 1"),
            });
        }
        sum += fraction;
        match canonical_name(name) {
            Some(_) if *fraction == 0.0 => {}
            Some("SF6") => sf6 += fraction,
            Some("N2") => n2 += fraction,
            Some(other) => others.push(other),
            None if *fraction == 0.0 => {}
            None => return Err(unsupported()),
        }
    }
    if (sum - 1.0).abs() > FRACTION_SUM_TOL {
        return Err(BreakdownError::BadComposition {
            species: gas.species.clone(),
            reason: format!("mole fractions sum to {sum}; expected 1"),
        });
    }
    if !others.is_empty() {
        if n2 > 0.0 {
            others.push("N2");
        }
        return Ok(weakest_component(&others));
    }
    let x = sf6 / sum;
    if n2 == 0.0 || x >= 1.0 - FRACTION_SUM_TOL {
        Ok(GasKind::Sf6)
    } else if sf6 == 0.0 || x <= FRACTION_SUM_TOL {
        Ok(GasKind::N2)
    } else {
        Ok(GasKind::Sf6N2 { sf6_fraction: x })
    }
}

/// Mixing rule for mixtures without a rule of their own (any mixture with air or CO2): the
/// criteria of the **weakest non-SF6 component** at the mixture's full density, by the
/// uniform-field strengths relative to air of the table (CO2 [`CO2_TO_AIR`] < N2
/// [`N2_TO_AIR`] < air). Mixtures of these non-synergistic gases lie between their components,
/// and adding SF6 to a gas raises its strength, so the weakest component is a lower bound
/// (common practice, no source; docs/references.md §17). In the Townsend (Paschen) regime N2
/// can be weaker than CO2; the rule is stated for the streamer regime of pressurised tanks.
pub const MIXTURE_RULE: &str = "mixture without a rule of its own: the criteria of its weakest \
     non-SF6 component (CO2 < N2 < air) at the full mixture density, a lower bound (common \
     practice, no source; docs/references.md §17)";

fn weakest_component(names: &[&str]) -> GasKind {
    if names.contains(&"CO2") {
        GasKind::Co2
    } else if names.contains(&"N2") {
        GasKind::N2
    } else {
        GasKind::Air
    }
}

/// The mixing rule applied to `gas`, when it is a mixture resolved by [`MIXTURE_RULE`].
pub fn mixture_rule(gas: &Gas) -> Option<&'static str> {
    let named = gas
        .components
        .iter()
        .filter(|(_, x)| *x > 0.0)
        .filter_map(|(n, _)| canonical_name(n))
        .collect::<Vec<_>>();
    (named.len() > 1 && named.iter().any(|n| matches!(*n, "air" | "CO2"))).then_some(MIXTURE_RULE)
}

impl GasState {
    /// Identify the gas and check its state (positive finite pressure and temperature).
    pub fn resolve(gas: &Gas) -> Result<Self, BreakdownError> {
        if !(gas.pressure_pa.is_finite() && gas.pressure_pa > 0.0) {
            return Err(BreakdownError::InvalidInput {
                name: "gas pressure (Pa)",
                value: gas.pressure_pa,
                accepted: "a positive absolute pressure",
            });
        }
        if !(gas.temperature_k.is_finite() && gas.temperature_k > 0.0) {
            return Err(BreakdownError::InvalidInput {
                name: "gas temperature (K)",
                value: gas.temperature_k,
                accepted: "a positive absolute temperature",
            });
        }
        let kind = identify(gas)?;
        let real = gas.number_density();
        let reduced_pressure_pa = crate::thermo::same_density_pressure_pa(
            &gas.components_or_species(),
            gas.pressure_pa,
            gas.temperature_k,
            T0_K,
        );
        Ok(GasState {
            kind,
            pressure_pa: gas.pressure_pa,
            temperature_k: gas.temperature_k,
            number_density_m3: reduced_pressure_pa / (convert::BOLTZMANN_J_PER_K * T0_K),
            real_number_density_m3: real,
            reduced_pressure_pa,
            compressibility: gas.compressibility(),
        })
    }

    /// Density-reduced pd for a gap, Pa·m.
    pub fn reduced_pd(&self, gap_m: f64) -> f64 {
        self.reduced_pressure_pa * gap_m
    }
}

/// A mixture strength given by the user with its source.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct UserStrength {
    /// Limiting field of the mixture divided by that of pure SF6 at the same density.
    pub relative_to_sf6: f64,
    /// Where the number comes from (paper, table, measurement).
    pub source: String,
}

/// Options of the gas criteria.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct GasOptions {
    /// Townsend secondary-emission coefficient γ (Paschen's law).
    pub gamma: f64,
    /// Strength of an SF6–N2 mixture; `None` uses the documented interpolation
    /// ([`SF6_N2_EXPONENT`], common practice).
    pub mixture_strength: Option<UserStrength>,
}

impl Default for GasOptions {
    fn default() -> Self {
        GasOptions {
            gamma: DEFAULT_GAMMA,
            mixture_strength: None,
        }
    }
}

/// A strength factor relative to a base gas, with its basis and validity.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RelativeStrength {
    pub factor: f64,
    pub basis: String,
    pub mark: Mark,
    pub validity: Validity,
}

/// Strength of an SF6–N2 mixture relative to pure SF6 at the same density.
///
/// With `user` given, its value and source are used (marked user-set). Otherwise the
/// documented interpolation x^0.22 ([`SF6_N2_EXPONENT`], \[P\]) is used, flagged outside validity
/// for SF6 fractions below 20 %. docs/references.md §3 asks that mixture strengths be user inputs
/// with a cited source; the interpolation is a stated fallback, not a published rule.
pub fn sf6_n2_relative_strength(
    sf6_fraction: f64,
    user: Option<&UserStrength>,
) -> Result<RelativeStrength, BreakdownError> {
    if !(sf6_fraction.is_finite() && sf6_fraction > 0.0 && sf6_fraction <= 1.0) {
        return Err(BreakdownError::InvalidInput {
            name: "SF6 mole fraction",
            value: sf6_fraction,
            accepted: "a fraction with 0 < x <= 1",
        });
    }
    if let Some(u) = user {
        if !(u.relative_to_sf6.is_finite() && u.relative_to_sf6 > 0.0 && u.relative_to_sf6 <= 1.0) {
            return Err(BreakdownError::InvalidInput {
                name: "mixture strength relative to SF6",
                value: u.relative_to_sf6,
                accepted: "a fraction with 0 < value <= 1",
            });
        }
        return Ok(RelativeStrength {
            factor: u.relative_to_sf6,
            basis: format!(
                "user-set mixture strength {:.3} x SF6 ({})",
                u.relative_to_sf6, u.source
            ),
            mark: Mark::UserSet,
            validity: Validity::Valid,
        });
    }
    let (lo, hi) = SF6_N2_FRACTION_RANGE;
    let validity = if sf6_fraction < lo {
        Validity::OutsideValidity {
            reason: format!(
                "SF6 fraction {:.3} is below the interpolation range {lo}-{hi}; give the \
                 mixture strength from a cited source",
                sf6_fraction
            ),
        }
    } else {
        Validity::Valid
    };
    Ok(RelativeStrength {
        factor: sf6_fraction.powf(SF6_N2_EXPONENT),
        basis: format!(
            "SF6/N2 interpolation x^{SF6_N2_EXPONENT} through the from-memory points 50 % SF6 \
             ~ 0.85-0.90, 20 % ~ 0.70 of pure SF6 (docs/references.md §3), common practice"
        ),
        mark: Mark::CommonPractice,
        validity,
    })
}

/// Relative air density δ of IEC 60060-1 \[M\] (docs/references.md §1):
/// δ = (p/p0)·(273.15 + t0)/(273.15 + t), p0 = 101.3 kPa, t0 = 20 °C. Sphere-gap and
/// uniform-field breakdown voltages scale ≈ linearly with δ for 0.95 < δ < 1.05.
pub fn relative_air_density(pressure_pa: f64, temperature_k: f64) -> Result<f64, BreakdownError> {
    const P0_PA: f64 = 101.3e3;
    positive("pressure (Pa)", pressure_pa)?;
    positive("temperature (K)", temperature_k)?;
    Ok(pressure_pa / P0_PA * T0_K / temperature_k)
}

/// Air at 1 atm and 20 °C, for tests and examples.
pub fn standard_air() -> Gas {
    pure("air", ATM_PA, T0_K)
}

/// A single-component gas at the given pressure (Pa) and temperature (K).
pub fn pure(species: &str, pressure_pa: f64, temperature_k: f64) -> Gas {
    Gas {
        species: species.to_string(),
        components: vec![(species.to_string(), 1.0)],
        pressure_pa,
        temperature_k,
    }
}

/// An SF6–N2 mixture with SF6 mole fraction `sf6_fraction`.
pub fn sf6_n2(sf6_fraction: f64, pressure_pa: f64, temperature_k: f64) -> Gas {
    let n2 = 1.0 - sf6_fraction;
    Gas {
        species: format!("SF6:{sf6_fraction},N2:{n2}"),
        components: vec![("SF6".to_string(), sf6_fraction), ("N2".to_string(), n2)],
        pressure_pa,
        temperature_k,
    }
}

/// Check that `value` is positive and finite.
pub(crate) fn positive(name: &'static str, value: f64) -> Result<f64, BreakdownError> {
    if value.is_finite() && value > 0.0 {
        Ok(value)
    } else {
        Err(BreakdownError::InvalidInput {
            name,
            value,
            accepted: "a positive finite number",
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn identifies_pure_gases_and_mixtures() {
        let s = |g: &Gas| GasState::resolve(g).unwrap().kind;
        assert_eq!(s(&pure("air", 1e5, 293.15)), GasKind::Air);
        assert_eq!(s(&pure("n2", 1e5, 293.15)), GasKind::N2);
        assert_eq!(s(&pure("CO2", 1e5, 293.15)), GasKind::Co2);
        assert_eq!(s(&pure("SF6", 1e5, 293.15)), GasKind::Sf6);
        assert_eq!(
            s(&sf6_n2(0.5, 1e5, 293.15)),
            GasKind::Sf6N2 { sf6_fraction: 0.5 }
        );
        assert_eq!(s(&sf6_n2(1.0, 1e5, 293.15)), GasKind::Sf6);
        let bare = Gas {
            species: "SF6".into(),
            components: vec![],
            pressure_pa: 1e5,
            temperature_k: 293.15,
        };
        assert_eq!(s(&bare), GasKind::Sf6);
    }

    #[test]
    fn rejects_unknown_gases_and_bad_states() {
        assert!(matches!(
            GasState::resolve(&pure("He", 1e5, 293.15)),
            Err(BreakdownError::UnsupportedGas { .. })
        ));
        let mut g = sf6_n2(0.5, 1e5, 293.15);
        g.components[1].1 = 0.6;
        assert!(matches!(
            GasState::resolve(&g),
            Err(BreakdownError::BadComposition { .. })
        ));
        assert!(GasState::resolve(&pure("air", -1.0, 293.15)).is_err());
        assert!(GasState::resolve(&pure("air", 1e5, 0.0)).is_err());
        let mut co2_he = pure("CO2", 1e5, 293.15);
        co2_he.components = vec![("CO2".into(), 0.5), ("He".into(), 0.5)];
        assert!(GasState::resolve(&co2_he).is_err());
    }

    #[test]
    fn mixtures_without_a_rule_take_the_weakest_component() {
        let mix = |c: &[(&str, f64)]| {
            let mut g = pure("N2", 1e5, 293.15);
            g.components = c.iter().map(|(n, x)| (n.to_string(), *x)).collect();
            g.species = "mixture".into();
            (GasState::resolve(&g).unwrap().kind, mixture_rule(&g))
        };
        assert_eq!(mix(&[("N2", 0.8), ("CO2", 0.2)]).0, GasKind::Co2);
        assert_eq!(mix(&[("air", 0.5), ("N2", 0.5)]).0, GasKind::N2);
        assert_eq!(mix(&[("SF6", 0.1), ("air", 0.9)]).0, GasKind::Air);
        assert!(mix(&[("N2", 0.8), ("CO2", 0.2)]).1.is_some());
        assert!(mixture_rule(&sf6_n2(0.5, 1e5, 293.15)).is_none());
        assert!(mixture_rule(&pure("CO2", 1e5, 293.15)).is_none());
    }

    #[test]
    fn density_reduction_uses_t0() {
        let hot = GasState::resolve(&pure("air", 1e5, 2.0 * T0_K)).unwrap();
        assert!((hot.reduced_pressure_pa - 0.5e5).abs() < 1e-6);
    }

    #[test]
    fn mixture_interpolation_and_override() {
        let half = sf6_n2_relative_strength(0.5, None).unwrap();
        assert!(half.factor > 0.85 && half.factor < 0.90);
        let fifth = sf6_n2_relative_strength(0.2, None).unwrap();
        assert!((fifth.factor - 0.70).abs() < 0.01);
        assert!(fifth.validity.is_valid());
        assert!(
            !sf6_n2_relative_strength(0.1, None)
                .unwrap()
                .validity
                .is_valid()
        );
        let user = UserStrength {
            relative_to_sf6: 0.8,
            source: "a measurement".into(),
        };
        let u = sf6_n2_relative_strength(0.5, Some(&user)).unwrap();
        assert_eq!(u.factor, 0.8);
        assert_eq!(u.mark, Mark::UserSet);
        assert!(sf6_n2_relative_strength(0.0, None).is_err());
    }
}
