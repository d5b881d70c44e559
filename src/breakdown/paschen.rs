//! Townsend breakdown in a uniform field: Paschen's law with per-gas constants, its minimum, and
//! the table of measured minimum sparking potentials.
//!
//! V_b = B·(pd) / [ln(A·pd) − ln(ln(1 + 1/γ))], (pd)_min = e·ln(1 + 1/γ)/A,
//! V_min = e·(B/A)·ln(1 + 1/γ) — Lieberman & Lichtenberg, *Principles of Plasma Discharges and
//! Materials Processing*, 2nd ed. (2005), Ch. 14 \[C\]; minimum by differentiation \[D\]
//! (docs/references.md §1). pd is the density-reduced product (p·T0/T)·d.
//!
//! Validity: the formula has a solution only where A·pd > ln(1 + 1/γ); it is meaningful only
//! inside the E/p window over which A, B were fitted, and becomes poor above pd ≈ 200 Torr·cm,
//! where breakdown is streamer-type. Not for SF6 (no accepted A, B pair).

use serde::Serialize;

use super::convert::{self, TORR_CM_PA_M};
use super::error::BreakdownError;
use super::gas::{GasKind, GasOptions, GasState, positive};
use super::limit::{Criterion, Limit, LimitKind, Mark, Validity};
use crate::model::Gas;

/// Townsend constants of one gas, SI: α/p = A·exp(−B·p/E) with p the density-reduced pressure.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct PaschenConstants {
    pub gas: &'static str,
    /// A, 1/(Pa·m).
    pub a_per_pa_m: f64,
    /// B, V/(Pa·m).
    pub b_v_per_pa_m: f64,
    /// Lower end of the fitted E/p window, V/(m·Pa).
    pub e_over_p_min: f64,
    /// Upper end of the fitted E/p window, V/(m·Pa).
    pub e_over_p_max: f64,
    pub source: &'static str,
    pub mark: Mark,
}

const fn per_torr_cm(v: f64) -> f64 {
    v / TORR_CM_PA_M
}

/// Air: A = 15 /(cm·Torr), B = 365 V/(cm·Torr), valid E/p 100–800 V/(cm·Torr). Raizer, *Gas
/// Discharge Physics* (Springer 1991), Table 4.1 (after von Engel) \[M\]; A = 15, B = 365 also
/// \[C\] (a public HV note citing Bazelyan). SI: A = 11.25 /(Pa·m), B = 273.8 V/(Pa·m) \[D\].
pub const AIR: PaschenConstants = PaschenConstants {
    gas: "air",
    a_per_pa_m: per_torr_cm(15.0),
    b_v_per_pa_m: per_torr_cm(365.0),
    e_over_p_min: per_torr_cm(100.0),
    e_over_p_max: per_torr_cm(800.0),
    source: "Raizer, Gas Discharge Physics (Springer 1991), Table 4.1 (after von Engel); \
             A = 15, B = 365 also in a public HV note citing Bazelyan",
    mark: Mark::Confirmed,
};

/// N2: A = 12 /(cm·Torr), B = 342 V/(cm·Torr), valid E/p 100–600 V/(cm·Torr). Raizer Table 4.1
/// \[M\] (Nasser's SI 9.0 / 257 per Pa·m and Lieberman's 11.8 / 325 are \[C\] alternatives).
/// The α fit of N2 for the streamer integral; the breakdown curve is [`N2_CURVE`], since with
/// γ = 0.01 this pair puts the minimum at 357 V against the measured 251 V.
pub const N2: PaschenConstants = PaschenConstants {
    gas: "N2",
    a_per_pa_m: per_torr_cm(12.0),
    b_v_per_pa_m: per_torr_cm(342.0),
    e_over_p_min: per_torr_cm(100.0),
    e_over_p_max: per_torr_cm(600.0),
    source: "Raizer, Gas Discharge Physics (Springer 1991), Table 4.1, from memory",
    mark: Mark::FromMemory,
};

/// CO2: A = 20 /(cm·Torr), B = 466 V/(cm·Torr), valid E/p 500–1000 V/(cm·Torr). Raizer Table
/// 4.1 \[M\]. The window lies left of the Paschen minimum (where E/p = B), so the right-hand
/// branch is outside validity. With γ = 0.01 its analytic minimum is 292 V against the measured
/// 420 V: the breakdown curve uses [`CO2_CURVE`].
pub const CO2: PaschenConstants = PaschenConstants {
    gas: "CO2",
    a_per_pa_m: per_torr_cm(20.0),
    b_v_per_pa_m: per_torr_cm(466.0),
    e_over_p_min: per_torr_cm(500.0),
    e_over_p_max: per_torr_cm(1000.0),
    source: "Raizer, Gas Discharge Physics (Springer 1991), Table 4.1, from memory",
    mark: Mark::FromMemory,
};

/// The secondary-emission coefficient at which the breakdown-curve constants
/// [`N2_CURVE`] and [`CO2_CURVE`] are anchored: the default γ of the Townsend criterion.
pub const CURVE_ANCHOR_GAMMA: f64 = super::gas::DEFAULT_GAMMA;

/// Breakdown-curve constants that put the analytic minimum of Paschen's law on a measured
/// minimum sparking potential: at the minimum E/p = B and (pd)_min = e·ln(1 + 1/γ)/A, so
/// B = V_min/(pd)_min and A = e·ln(1 + 1/γ)/(pd)_min at γ = [`CURVE_ANCHOR_GAMMA`] \[D\]
/// (docs/references.md §16). Not a fit of α: the ionisation coefficient of N2 stays [`N2`].
const fn anchored(
    gas: &'static str,
    v_min_v: f64,
    pd_min_torr_cm: f64,
    e_over_p_min: f64,
    e_over_p_max: f64,
    source: &'static str,
) -> PaschenConstants {
    // ln(1 + 1/0.01) = ln 101; `const fn` has no logarithm, so the value is written out and
    // checked against CURVE_ANCHOR_GAMMA by a unit test.
    const LN_101: f64 = 4.615_120_516_841_261;
    PaschenConstants {
        gas,
        a_per_pa_m: per_torr_cm(std::f64::consts::E * LN_101 / pd_min_torr_cm),
        b_v_per_pa_m: per_torr_cm(v_min_v / pd_min_torr_cm),
        e_over_p_min: per_torr_cm(e_over_p_min),
        e_over_p_max: per_torr_cm(e_over_p_max),
        source,
        mark: Mark::FromMemory,
    }
}

/// N2 breakdown curve anchored on the measured minimum 251 V at 0.67 Torr·cm (Naidu &
/// Kamaraju, from memory): A = 18.72 /(cm·Torr), B = 374.6 V/(cm·Torr) \[D\]. The published
/// α fits (Raizer 12 / 342, Lieberman 11.8 / 325) give an analytic minimum of 345–358 V at
/// γ = 0.01, 37–42 % above the measurement (N2's γ on metals is 0.06–0.1, docs/references.md
/// §1). Window: that of Raizer's N2 fit, 100–600 V/(cm·Torr).
pub const N2_CURVE: PaschenConstants = anchored(
    "N2",
    251.0,
    0.67,
    100.0,
    600.0,
    "breakdown curve anchored on the measured N2 minimum 251 V at 0.67 Torr cm (Naidu & \
     Kamaraju, High Voltage Engineering, Ch. 2, from memory) at gamma = 0.01, derived",
);

/// CO2 breakdown curve anchored on the measured minimum 420 V at 0.51 Torr·cm (Naidu &
/// Kamaraju, from memory): A = 24.60 /(cm·Torr), B = 823.5 V/(cm·Torr) \[D\]. Window: that of
/// Raizer's CO2 fit, 500–1000 V/(cm·Torr), which holds the minimum (E/p = B there).
pub const CO2_CURVE: PaschenConstants = anchored(
    "CO2",
    420.0,
    0.51,
    500.0,
    1000.0,
    "breakdown curve anchored on the measured CO2 minimum 420 V at 0.51 Torr cm (Naidu & \
     Kamaraju, High Voltage Engineering, Ch. 2, from memory) at gamma = 0.01, derived",
);

/// Above this pd (200 Torr·cm) breakdown is streamer-type and Paschen's law is poor
/// (docs/references.md §1).
pub const PD_MAX_PA_M: f64 = 200.0 * TORR_CM_PA_M;

/// The breakdown-curve constants of a gas of the table, or why there are none: air's published
/// A, B (their analytic minimum, 305 V, is 7 % below the measured 327 V); for N2 and CO2 the
/// curves anchored on the measured minima ([`N2_CURVE`], [`CO2_CURVE`]), whose published α fits
/// miss the minimum by more than a third.
pub fn constants_for(kind: GasKind) -> Result<&'static PaschenConstants, BreakdownError> {
    match kind {
        GasKind::Air => Ok(&AIR),
        GasKind::N2 => Ok(&N2_CURVE),
        GasKind::Co2 => Ok(&CO2_CURVE),
        GasKind::Sf6 | GasKind::Sf6N2 { .. } => Err(BreakdownError::NotApplicable {
            criterion: "Paschen's law",
            gas: kind.label(),
            reason: "no accepted Townsend A, B pair for SF6 (strongly attaching); use the \
                     critical field or the streamer criterion"
                .to_string(),
        }),
    }
}

/// One point of a Paschen curve.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PaschenPoint {
    /// Density-reduced pd, Pa·m.
    pub pd_pa_m: f64,
    /// Breakdown voltage, V.
    pub voltage_v: f64,
    /// E/p at breakdown (= V/(pd)), V/(m·Pa).
    pub e_over_p: f64,
    pub validity: Validity,
}

fn check_gamma(gamma: f64) -> Result<f64, BreakdownError> {
    if gamma.is_finite() && gamma > 0.0 && gamma <= 1.0 {
        Ok(gamma)
    } else {
        Err(BreakdownError::InvalidInput {
            name: "secondary-emission coefficient gamma",
            value: gamma,
            accepted: "0 < gamma <= 1 (typical 0.01-0.1)",
        })
    }
}

fn point_validity(c: &PaschenConstants, pd_pa_m: f64, e_over_p: f64) -> Validity {
    let mut reasons = Vec::new();
    let ep = convert::e_over_p_to_v_per_cm_torr(e_over_p);
    let lo = convert::e_over_p_to_v_per_cm_torr(c.e_over_p_min);
    let hi = convert::e_over_p_to_v_per_cm_torr(c.e_over_p_max);
    if e_over_p < c.e_over_p_min * (1.0 - 1e-9) || e_over_p > c.e_over_p_max * (1.0 + 1e-9) {
        reasons.push(format!(
            "E/p at breakdown {ep:.1} V/(cm·Torr) is outside the fit window {lo:.0}-{hi:.0} \
             V/(cm·Torr) of the {} A, B constants",
            c.gas
        ));
    }
    if pd_pa_m > PD_MAX_PA_M * (1.0 + 1e-9) {
        reasons.push(format!(
            "pd = {:.1} Torr·cm is above 200 Torr·cm, where breakdown is streamer-type",
            convert::pa_m_to_torr_cm(pd_pa_m)
        ));
    }
    Validity::from_reasons(reasons)
}

/// Paschen breakdown voltage at a density-reduced `pd_pa_m` (Pa·m).
pub fn voltage_at_pd(
    c: &PaschenConstants,
    pd_pa_m: f64,
    gamma: f64,
) -> Result<PaschenPoint, BreakdownError> {
    positive("pd (Pa·m)", pd_pa_m)?;
    let gamma = check_gamma(gamma)?;
    let threshold = (1.0 + 1.0 / gamma).ln();
    let a_pd = c.a_per_pa_m * pd_pa_m;
    let denominator = a_pd.ln() - threshold.ln();
    if denominator <= 0.0 {
        return Err(BreakdownError::NoPaschenSolution {
            pd_pa_m,
            a_pd,
            threshold,
        });
    }
    let voltage_v = c.b_v_per_pa_m * pd_pa_m / denominator;
    let e_over_p = voltage_v / pd_pa_m;
    Ok(PaschenPoint {
        pd_pa_m,
        voltage_v,
        e_over_p,
        validity: point_validity(c, pd_pa_m, e_over_p),
    })
}

/// The minimum of the analytic Paschen curve: (pd)_min = e·ln(1 + 1/γ)/A, V_min = B·(pd)_min.
/// (At the minimum E/p = B.) This does not reproduce measured minima; see [`MEASURED_MINIMA`].
pub fn minimum(c: &PaschenConstants, gamma: f64) -> Result<PaschenPoint, BreakdownError> {
    let gamma = check_gamma(gamma)?;
    let pd = std::f64::consts::E * (1.0 + 1.0 / gamma).ln() / c.a_per_pa_m;
    let voltage_v = c.b_v_per_pa_m * pd;
    Ok(PaschenPoint {
        pd_pa_m: pd,
        voltage_v,
        e_over_p: c.b_v_per_pa_m,
        validity: point_validity(c, pd, c.b_v_per_pa_m),
    })
}

/// Paschen breakdown voltage of a uniform gap of length `gap_m` in `gas`, as a [`Limit`].
pub fn limit(gas: &Gas, gap_m: f64, options: &GasOptions) -> Result<Limit, BreakdownError> {
    let state = GasState::resolve(gas)?;
    limit_for_state(&state, gap_m, options)
}

pub(crate) fn limit_for_state(
    state: &GasState,
    gap_m: f64,
    options: &GasOptions,
) -> Result<Limit, BreakdownError> {
    positive("gap length (m)", gap_m)?;
    let c = constants_for(state.kind)?;
    let p = voltage_at_pd(c, state.reduced_pd(gap_m), options.gamma)?;
    Ok(Limit::new(
        Criterion::Paschen,
        format!("Paschen ({}, gamma = {})", c.gas, options.gamma),
        format!(
            "Paschen's law as in Lieberman & Lichtenberg (2005) Ch. 14; constants: {}",
            c.source
        ),
        c.mark,
        LimitKind::Voltage,
        p.voltage_v,
        p.validity,
    ))
}

/// A measured minimum sparking potential.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct MeasuredMinimum {
    pub gas: &'static str,
    /// Minimum sparking potential, V.
    pub v_min_v: f64,
    /// pd at the minimum, Pa·m.
    pub pd_min_pa_m: f64,
    pub source: &'static str,
    pub mark: Mark,
}

const NAIDU: &str = "Naidu & Kamaraju, High Voltage Engineering (McGraw-Hill), Ch. 2, table of \
                     minimum sparking potentials, from memory";

const fn measured(gas: &'static str, v: f64, pd_torr_cm: f64) -> MeasuredMinimum {
    MeasuredMinimum {
        gas,
        v_min_v: v,
        pd_min_pa_m: pd_torr_cm * TORR_CM_PA_M,
        source: NAIDU,
        mark: Mark::FromMemory,
    }
}

/// Measured minimum sparking potentials (docs/references.md §1). Air 327 V at 0.567 Torr·cm is also
/// \[C\] (a public HV engineering article: 327 V, 7.5 µm at 1 atm); the rest are \[M\]. The SF6
/// entry (Dakin et al., Electra No. 32, 1974) is from memory and unconfirmed.
pub const MEASURED_MINIMA: [MeasuredMinimum; 8] = [
    MeasuredMinimum {
        gas: "air",
        v_min_v: 327.0,
        pd_min_pa_m: 0.567 * TORR_CM_PA_M,
        source: "Naidu & Kamaraju, High Voltage Engineering (McGraw-Hill), Ch. 2 (from memory); \
                 327 V and 7.5 um at 1 atm confirmed in a public HV engineering article",
        mark: Mark::Confirmed,
    },
    measured("N2", 251.0, 0.67),
    measured("H2", 273.0, 1.15),
    measured("CO2", 420.0, 0.51),
    measured("O2", 450.0, 0.70),
    measured("Ar", 137.0, 0.9),
    measured("He", 156.0, 4.0),
    MeasuredMinimum {
        gas: "SF6",
        v_min_v: 507.0,
        pd_min_pa_m: 0.26 * TORR_CM_PA_M,
        source: "Dakin et al., Breakdown of gases in uniform fields - Paschen curves for \
                 nitrogen, air and sulfur hexafluoride, Electra No. 32 (CIGRE WG 15.03, 1974), \
                 from memory, unconfirmed",
        mark: Mark::FromMemory,
    },
];

/// The measured minimum for a gas name (case-insensitive), if tabulated.
pub fn measured_minimum(gas: &str) -> Option<&'static MeasuredMinimum> {
    let g = gas.trim();
    MEASURED_MINIMA
        .iter()
        .find(|m| m.gas.eq_ignore_ascii_case(g))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn left_of_the_curve_has_no_solution() {
        let r = voltage_at_pd(&AIR, 0.1 * TORR_CM_PA_M, 0.01);
        assert!(matches!(r, Err(BreakdownError::NoPaschenSolution { .. })));
    }

    #[test]
    fn gamma_is_checked() {
        assert!(voltage_at_pd(&AIR, 1.0, 0.0).is_err());
        assert!(voltage_at_pd(&AIR, 1.0, 2.0).is_err());
        assert!(minimum(&AIR, f64::NAN).is_err());
    }

    #[test]
    fn sf6_has_no_constants() {
        assert!(constants_for(GasKind::Sf6).is_err());
    }

    #[test]
    fn minimum_is_inside_the_air_window() {
        assert!(minimum(&AIR, 0.01).unwrap().validity.is_valid());
    }

    /// The anchored curves pass through the measured minima they are anchored on (Naidu &
    /// Kamaraju, High Voltage Engineering, Ch. 2 table, from memory; docs/references.md §1):
    /// N2 251 V at 0.67 Torr·cm, CO2 420 V at 0.51 Torr·cm. Found by scanning each breakdown
    /// curve at the default γ, not from the anchoring algebra.
    #[test]
    fn anchored_curves_pass_through_the_measured_minima() {
        for (c, v_min, pd_min) in [(&N2_CURVE, 251.0, 0.67), (&CO2_CURVE, 420.0, 0.51)] {
            let (v, pd) = (0..=4000)
                .map(|k| {
                    // 0.2 to 20 Torr·cm.
                    let pd = 0.2 * 10f64.powf(k as f64 / 2000.0) * TORR_CM_PA_M;
                    let v = voltage_at_pd(c, pd, CURVE_ANCHOR_GAMMA)
                        .map_or(f64::INFINITY, |p| p.voltage_v);
                    (v, pd)
                })
                .fold((f64::INFINITY, 0.0), |a, b| if b.0 < a.0 { b } else { a });
            assert!((v - v_min).abs() < 1e-3 * v_min, "{v} V");
            assert!(
                (pd / TORR_CM_PA_M - pd_min).abs() < 0.01 * pd_min,
                "{pd} Pa m"
            );
        }
    }

    #[test]
    fn lookup_is_case_insensitive() {
        assert_eq!(measured_minimum("AIR").map(|m| m.v_min_v), Some(327.0));
        assert!(measured_minimum("xenon").is_none());
    }
}
