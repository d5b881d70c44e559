//! Thermophysical state of the built-in gases: critical constants, saturation vapour pressure
//! and the compressibility factor, for the condensation check of the design file and the
//! real-gas density of the criteria.
//!
//! - Vapour pressure: the Lee–Kesler corresponding-states correlation (Poling, Prausnitz &
//!   O'Connell, *The Properties of Gases and Liquids*, 5th ed., eq. 7-4.1; docs/references.md
//!   §17), applied between the triple point and the critical point. Below the triple point the
//!   gas deposits as a solid; holdoff has no sublimation data and refuses such states.
//! - Compressibility: the truncated virial equation Z = 1 + B·p/(R·T) with Pitzer's
//!   generalised second virial coefficient in Abbott's form (Smith, Van Ness & Abbott,
//!   *Introduction to Chemical Engineering Thermodynamics*, 7th ed., eqs. 3.61–3.66;
//!   docs/references.md §17). Mixtures use Kay's pseudo-critical rule (mole-fraction averages of
//!   Tc, pc and ω; Poling et al., 5th ed., §5-6), docs/references.md §17.
//! - Critical constants and acentric factors: Poling et al., 5th ed., Appendix A, recalled from
//!   memory; triple points recalled from memory (docs/references.md §17).
//!
//! Nothing here knows about the design file or the criteria.

/// Molar gas constant, J/(mol·K) (CODATA 2018, exact).
pub const R_J_PER_MOL_K: f64 = 8.314_462_618;

/// The ideal gas is used where the real-gas compressibility differs from 1 by at most this.
pub const IDEAL_GAS_TOLERANCE: f64 = 0.01;

/// A gas or mixture is refused when a condensable component's partial pressure exceeds this
/// fraction of its saturation vapour pressure: the Lee–Kesler correlation is good to a few
/// per cent (docs/references.md §17), and a gas near its dew point is outside the virial
/// equation's range (common practice, no source).
pub const SATURATION_FRACTION: f64 = 0.95;

/// Critical and triple-point constants of one gas.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Species {
    /// Canonical name ("air", "N2", "CO2", "SF6").
    pub name: &'static str,
    /// Critical temperature, K.
    pub tc_k: f64,
    /// Critical pressure, Pa.
    pub pc_pa: f64,
    /// Pitzer acentric factor.
    pub omega: f64,
    /// Triple-point temperature, K; `None` for gases that cannot condense in holdoff's
    /// temperature range (−100 °C to 200 °C: air and N2 are far above their critical points).
    pub triple_k: Option<f64>,
}

/// Poling et al. (2001), Appendix A (recalled from memory); triple points recalled from memory.
/// Air is the usual pseudo-pure entry.
pub const SPECIES: [Species; 4] = [
    Species {
        name: "air",
        tc_k: 132.45,
        pc_pa: 37.74e5,
        omega: 0.035,
        triple_k: None,
    },
    Species {
        name: "N2",
        tc_k: 126.20,
        pc_pa: 33.98e5,
        omega: 0.037,
        triple_k: None,
    },
    Species {
        name: "CO2",
        tc_k: 304.12,
        pc_pa: 73.74e5,
        omega: 0.225,
        triple_k: Some(216.58),
    },
    Species {
        name: "SF6",
        tc_k: 318.69,
        pc_pa: 37.60e5,
        omega: 0.210,
        triple_k: Some(223.55),
    },
];

/// The constants of a gas by name (case-insensitive).
pub fn species(name: &str) -> Option<&'static Species> {
    SPECIES
        .iter()
        .find(|s| s.name.eq_ignore_ascii_case(name.trim()))
}

/// Lee–Kesler saturation vapour pressure, Pa, of a gas at `t_k` (Poling et al. 5th ed.,
/// eq. 7-4.1): ln p_r = f0(T_r) + ω·f1(T_r). `None` at or above the critical temperature
/// (no liquid can form) or below the triple point (the correlation does not apply).
pub fn saturation_pressure_pa(s: &Species, t_k: f64) -> Option<f64> {
    let triple = s.triple_k?;
    if !(t_k >= triple && t_k < s.tc_k) {
        return None;
    }
    let tr = t_k / s.tc_k;
    let f0 = 5.92714 - 6.09648 / tr - 1.28862 * tr.ln() + 0.169347 * tr.powi(6);
    let f1 = 15.2518 - 15.6875 / tr - 13.4721 * tr.ln() + 0.43577 * tr.powi(6);
    Some(s.pc_pa * (f0 + s.omega * f1).exp())
}

/// Why a component of a gas cannot be a gas at the stated state.
#[derive(Debug, Clone, PartialEq)]
pub enum Condensation {
    /// The partial pressure is above [`SATURATION_FRACTION`] of the saturation pressure.
    Liquefies {
        species: &'static str,
        partial_pa: f64,
        saturation_pa: f64,
    },
    /// Below the triple point: the component deposits as a solid (no sublimation data).
    BelowTriplePoint {
        species: &'static str,
        triple_k: f64,
    },
    /// Above the critical temperature and pressure: a dense fluid, not a gas the criteria
    /// describe.
    Supercritical {
        species: &'static str,
        partial_pa: f64,
        critical_pa: f64,
    },
}

impl Condensation {
    /// One sentence for an error message (temperature given by the caller).
    pub fn describe(&self) -> String {
        match self {
            Condensation::Liquefies {
                species,
                partial_pa,
                saturation_pa,
            } => format!(
                "the {species} partial pressure {:.3} bar is above {:.0} % of its saturation \
                 vapour pressure {:.3} bar (Lee-Kesler correlation): {species} liquefies",
                partial_pa / 1e5,
                100.0 * SATURATION_FRACTION,
                saturation_pa / 1e5
            ),
            Condensation::BelowTriplePoint { species, triple_k } => format!(
                "{species} deposits as a solid below its triple point {:.1} degC; holdoff has no \
                 sublimation data",
                triple_k - 273.15
            ),
            Condensation::Supercritical {
                species,
                partial_pa,
                critical_pa,
            } => format!(
                "the {species} partial pressure {:.3} bar is above its critical pressure {:.3} bar: \
                 a dense fluid, outside the gas criteria",
                partial_pa / 1e5,
                critical_pa / 1e5
            ),
        }
    }
}

/// Check every condensable component of a mixture (mole fractions `components`) at total
/// pressure `p_pa` and temperature `t_k`: the dew point of an ideal-gas mixture is reached when
/// a component's partial pressure y·p reaches its own saturation pressure (Dalton's law with
/// Raoult's law for a pure condensate; Poling et al. 5th ed., Ch. 8), the usual first check
/// for gas-insulated equipment. Unknown names are ignored (the design reader refuses them).
pub fn condensation(components: &[(String, f64)], p_pa: f64, t_k: f64) -> Option<Condensation> {
    for (name, y) in components {
        let Some(s) = species(name) else { continue };
        let Some(triple) = s.triple_k else { continue };
        let partial_pa = y * p_pa;
        if t_k < triple {
            return Some(Condensation::BelowTriplePoint {
                species: s.name,
                triple_k: triple,
            });
        }
        match saturation_pressure_pa(s, t_k) {
            Some(saturation_pa) if partial_pa > SATURATION_FRACTION * saturation_pa => {
                return Some(Condensation::Liquefies {
                    species: s.name,
                    partial_pa,
                    saturation_pa,
                });
            }
            None if t_k >= s.tc_k && partial_pa > s.pc_pa => {
                return Some(Condensation::Supercritical {
                    species: s.name,
                    partial_pa,
                    critical_pa: s.pc_pa,
                });
            }
            _ => {}
        }
    }
    None
}

/// Kay's-rule pseudo-critical constants of a mixture (mole-fraction averages), normalised by
/// the sum of the known fractions. `None` when no component is known.
fn pseudo_critical(components: &[(String, f64)]) -> Option<(f64, f64, f64)> {
    let (mut tc, mut pc, mut w, mut sum) = (0.0, 0.0, 0.0, 0.0);
    for (name, y) in components {
        let s = species(name)?;
        tc += y * s.tc_k;
        pc += y * s.pc_pa;
        w += y * s.omega;
        sum += y;
    }
    (sum > 0.0).then(|| (tc / sum, pc / sum, w / sum))
}

/// Compressibility factor Z = p·V/(R·T) of a gas or mixture from the generalised second virial
/// coefficient (Abbott): B·pc/(R·Tc) = B0 + ω·B1, B0 = 0.083 − 0.422/Tr^1.6,
/// B1 = 0.139 − 0.172/Tr^4.2, Z = 1 + (B0 + ω·B1)·pr/Tr. `None` for an unknown component.
pub fn compressibility(components: &[(String, f64)], p_pa: f64, t_k: f64) -> Option<f64> {
    let (tc, pc, w) = pseudo_critical(components)?;
    let tr = t_k / tc;
    let b0 = 0.083 - 0.422 / tr.powf(1.6);
    let b1 = 0.139 - 0.172 / tr.powf(4.2);
    Some(1.0 + (b0 + w * b1) * (p_pa / pc) / tr)
}

/// The compressibility factor holdoff applies: the virial value where it differs from 1 by more
/// than [`IDEAL_GAS_TOLERANCE`], otherwise exactly 1 (the ideal gas).
pub fn applied_compressibility(components: &[(String, f64)], p_pa: f64, t_k: f64) -> f64 {
    match compressibility(components, p_pa, t_k) {
        Some(z) if z.is_finite() && z > 0.0 && (z - 1.0).abs() > IDEAL_GAS_TOLERANCE => z,
        _ => 1.0,
    }
}

/// The pressure at `t_ref_k` that has the same real-gas density as (`p_pa`, `t_k`), Pa:
/// p_ref = n·k·T_ref·Z(p_ref, T_ref), solved by fixed-point iteration (it converges fast for
/// |Z − 1| well below 1). With the ideal gas it is p·T_ref/T.
pub fn same_density_pressure_pa(
    components: &[(String, f64)],
    p_pa: f64,
    t_k: f64,
    t_ref_k: f64,
) -> f64 {
    let rho = p_pa / (applied_compressibility(components, p_pa, t_k) * t_k);
    let mut p = rho * t_ref_k;
    for _ in 0..50 {
        let next = rho * t_ref_k * applied_compressibility(components, p, t_ref_k);
        if (next - p).abs() <= 1e-12 * p {
            return next;
        }
        p = next;
    }
    p
}

#[cfg(test)]
mod tests {
    use super::*;

    fn pure(name: &str) -> Vec<(String, f64)> {
        vec![(name.to_string(), 1.0)]
    }

    #[test]
    fn air_and_nitrogen_never_condense_in_the_accepted_range() {
        for t in [173.15, 293.15, 473.15] {
            assert!(condensation(&pure("N2"), 1e7, t).is_none());
            assert!(condensation(&pure("air"), 1e7, t).is_none());
        }
    }

    #[test]
    fn ideal_gas_at_twenty_degrees_maps_to_itself() {
        let p = same_density_pressure_pa(&pure("N2"), 2e5, 293.15, 293.15);
        assert!((p - 2e5).abs() < 1e-6);
        let p = same_density_pressure_pa(&pure("SF6"), 6e5, 293.15, 293.15);
        assert!((p - 6e5).abs() < 1e-3);
    }
}
