//! DC vacuum breakdown: Cranberg's V·E criterion, the total-voltage fit V = k·d^α, a cathode
//! surface-field design limit, and Kilpatrick's RF criterion as a reference only.
//!
//! - Cranberg's clump criterion (Cranberg, J. Appl. Phys. 23, 518–522 (1952),
//!   doi:10.1063/1.1702243) \[C\]: breakdown when V·E exceeds a constant C, so a uniform gap holds
//!   V_b = √(C·d); supported by data from 20 kV to 7 MV and 0.2 mm to 6 m \[C\]. C ≈ 1e12–1e14
//!   V²/m by material and conditioning; 1e13 V²/m is a round default \[M\] (docs/references.md §6).
//! - Total-voltage effect V_b = k·d^α; α ≈ 1 below ~0.5 mm, 0.4–0.7 for longer gaps \[M\]
//!   (Latham, *High Voltage Vacuum Insulation*, 1981/1995). k, α are material data the user
//!   supplies with a source; the default is Cranberg's special case α = 0.5, k = √C.
//! - Cathode macroscopic surface field: ≲ 5–10 MV/m for large-area electrodes and multi-cm,
//!   MV-class gaps; 15–30 MV/m only for small, polished, conditioned electrodes at mm gaps
//!   \[P\]. Conditioned values should not be relied on \[P\].

use serde::Serialize;

use super::error::BreakdownError;
use super::gas::positive;
use super::limit::{Criterion, Limit, LimitKind, Mark, Validity};

/// Default Cranberg constant C, V²/m \[M\] (docs/references.md §6).
pub const CRANBERG_C_DEFAULT: f64 = 1.0e13;

/// Gap range of Cranberg's supporting data, m \[C\].
pub const CRANBERG_GAP_RANGE_M: (f64, f64) = (0.2e-3, 6.0);
/// Voltage range of Cranberg's supporting data, V \[C\].
pub const CRANBERG_VOLTAGE_RANGE_V: (f64, f64) = (20.0e3, 7.0e6);

const CRANBERG_SOURCE: &str = "Cranberg, J. Appl. Phys. 23, 518-522 (1952), \
                               doi:10.1063/1.1702243";

fn cranberg_c(c: f64) -> Result<f64, BreakdownError> {
    if c.is_finite() && c > 0.0 {
        Ok(c)
    } else {
        Err(BreakdownError::InvalidInput {
            name: "Cranberg constant C (V^2/m)",
            value: c,
            accepted: "a positive value, typically 1e12-1e14",
        })
    }
}

fn range_validity(what: &str, value: f64, unit: &str, (lo, hi): (f64, f64)) -> Validity {
    if value < lo * (1.0 - 1e-9) || value > hi * (1.0 + 1e-9) {
        Validity::OutsideValidity {
            reason: format!(
                "{what} {value:.4e} {unit} is outside the supporting data {lo:.1e}-{hi:.1e} {unit}"
            ),
        }
    } else {
        Validity::Valid
    }
}

fn c_mark(c: f64) -> (Mark, String) {
    if c == CRANBERG_C_DEFAULT {
        (
            Mark::FromMemory,
            format!("{CRANBERG_SOURCE}; C = 1e13 V^2/m, from memory"),
        )
    } else {
        (
            Mark::UserSet,
            format!("{CRANBERG_SOURCE}; C = {c:.3e} V^2/m, user-set"),
        )
    }
}

/// Cranberg breakdown voltage (V) of a uniform vacuum gap: V_b = √(C·d).
pub fn cranberg_gap_voltage(gap_m: f64, c: f64) -> Result<Limit, BreakdownError> {
    positive("vacuum gap (m)", gap_m)?;
    let c = cranberg_c(c)?;
    let v = (c * gap_m).sqrt();
    let (mark, source) = c_mark(c);
    let validity = range_validity("gap", gap_m, "m", CRANBERG_GAP_RANGE_M).and(range_validity(
        "voltage",
        v,
        "V",
        CRANBERG_VOLTAGE_RANGE_V,
    ));
    Ok(Limit::new(
        Criterion::Cranberg,
        "Cranberg V x E criterion, uniform gap sqrt(C d)",
        source,
        mark,
        LimitKind::Voltage,
        v,
        validity,
    ))
}

/// Cranberg's allowed cathode field (V/m) for a gap across which `gap_voltage_v` stands:
/// E = C/V.
pub fn cranberg_field_limit(gap_voltage_v: f64, c: f64) -> Result<Limit, BreakdownError> {
    positive("gap voltage (V)", gap_voltage_v)?;
    let c = cranberg_c(c)?;
    let (mark, source) = c_mark(c);
    Ok(Limit::new(
        Criterion::Cranberg,
        "Cranberg V x E criterion, field C/V",
        source,
        mark,
        LimitKind::Field,
        c / gap_voltage_v,
        range_validity("voltage", gap_voltage_v, "V", CRANBERG_VOLTAGE_RANGE_V),
    ))
}

/// A total-voltage fit V_b = k·d^α with its source and, optionally, the gap range of its data.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TotalVoltageFit {
    /// k, V/m^α.
    pub k: f64,
    /// α, dimensionless (0 < α ≤ 1).
    pub alpha: f64,
    pub source: String,
    pub mark: Mark,
    /// Gap range of the data behind the fit, m.
    pub gap_range_m: Option<(f64, f64)>,
}

impl TotalVoltageFit {
    /// Cranberg's special case: α = 0.5, k = √C, over Cranberg's data range.
    pub fn cranberg(c: f64) -> Result<Self, BreakdownError> {
        let c = cranberg_c(c)?;
        let (mark, source) = c_mark(c);
        Ok(TotalVoltageFit {
            k: c.sqrt(),
            alpha: 0.5,
            source: format!("total-voltage form V = k d^0.5 with k = sqrt(C): {source}"),
            mark,
            gap_range_m: Some(CRANBERG_GAP_RANGE_M),
        })
    }

    /// A user-supplied fit (material data with its source).
    pub fn user(
        k: f64,
        alpha: f64,
        source: &str,
        gap_range_m: Option<(f64, f64)>,
    ) -> Result<Self, BreakdownError> {
        positive("total-voltage k (V/m^alpha)", k)?;
        if !(alpha.is_finite() && alpha > 0.0 && alpha <= 1.0) {
            return Err(BreakdownError::InvalidInput {
                name: "total-voltage exponent alpha",
                value: alpha,
                accepted: "0 < alpha <= 1 (about 1 below 0.5 mm, 0.4-0.7 for longer gaps)",
            });
        }
        if let Some((lo, hi)) = gap_range_m {
            positive("fit gap range start (m)", lo)?;
            if !(hi.is_finite() && hi > lo) {
                return Err(BreakdownError::InvalidInput {
                    name: "fit gap range end (m)",
                    value: hi,
                    accepted: "a gap larger than the range start",
                });
            }
        }
        Ok(TotalVoltageFit {
            k,
            alpha,
            source: format!("user-supplied: {source}"),
            mark: Mark::UserSet,
            gap_range_m,
        })
    }

    /// Breakdown voltage (V) of a vacuum gap `gap_m`.
    pub fn voltage(&self, gap_m: f64) -> Result<Limit, BreakdownError> {
        positive("vacuum gap (m)", gap_m)?;
        let validity = match self.gap_range_m {
            Some(r) => range_validity("gap", gap_m, "m", r),
            None => Validity::Valid,
        };
        Ok(Limit::new(
            Criterion::TotalVoltage,
            format!("total-voltage fit V = k d^{}", self.alpha),
            self.source.clone(),
            self.mark,
            LimitKind::Voltage,
            self.k * gap_m.powf(self.alpha),
            validity,
        ))
    }
}

/// Electrode class for the cathode surface-field design limit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum CathodeClass {
    /// Large-area electrodes, multi-cm MV-class gaps: 5 MV/m, the low end of 5–10 MV/m \[P\].
    LargeArea,
    /// Small, polished, conditioned stainless/Ti/Mo electrodes at mm gaps: 15 MV/m, the low end
    /// of 15–30 MV/m \[P\].
    SmallPolished,
}

/// Cathode macroscopic surface-field design limit (V/m), common practice (docs/references.md §6).
pub fn cathode_surface_field_limit(class: CathodeClass) -> Limit {
    let (v, what) = match class {
        CathodeClass::LargeArea => (
            5.0e6,
            "large-area electrodes, multi-cm MV-class gaps: 5-10 MV/m, low end taken",
        ),
        CathodeClass::SmallPolished => (
            15.0e6,
            "small polished conditioned electrodes at mm gaps: 15-30 MV/m, low end taken",
        ),
    };
    Limit::new(
        Criterion::CathodeSurfaceField,
        "vacuum cathode surface-field design limit",
        format!("typical DC design limits (docs/references.md §6), {what}; common practice"),
        Mark::CommonPractice,
        LimitKind::Field,
        v,
        Validity::Valid,
    )
}

/// Form of Kilpatrick's criterion.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum KilpatrickForm {
    /// E·exp(−4.25/E) = 24.4·√(f/GHz), E in MV/m (Kilpatrick, Rev. Sci. Instrum. 28, 824 (1957)).
    Original,
    /// f = 1.64 MHz·E²·exp(−8.5/E), E in MV/m (Boyd 1982).
    Boyd,
}

/// Kilpatrick's RF breakdown field (V/m) at `frequency_hz` \[C\] (docs/references.md §6).
///
/// **RF only; do not apply to DC.** The result is always marked outside validity for that
/// reason, so that it cannot pass as a DC limit. Boyd's form gives 28.64 MV/m at 1 GHz \[D\];
/// the original coefficient 24.4 gives ≈ 28.35 MV/m.
pub fn kilpatrick_field(frequency_hz: f64, form: KilpatrickForm) -> Result<Limit, BreakdownError> {
    positive("frequency (Hz)", frequency_hz)?;
    let rhs = match form {
        KilpatrickForm::Original => 24.4 * (frequency_hz / 1.0e9).sqrt(),
        KilpatrickForm::Boyd => (frequency_hz / 1.64e6).sqrt(),
    };
    // g(E) = E exp(-4.25/E) is increasing for E > 0, and g(E) < E, so E lies in (0, rhs + 10).
    let g = |e: f64| e * (-4.25 / e).exp();
    let (mut lo, mut hi) = (0.0_f64, rhs + 10.0);
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if mid <= lo || mid >= hi {
            break;
        }
        if g(mid) < rhs {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    let e_mv_per_m = 0.5 * (lo + hi);
    let source = match form {
        KilpatrickForm::Original => "Kilpatrick, Rev. Sci. Instrum. 28, 824 (1957)",
        KilpatrickForm::Boyd => "Kilpatrick (1957), Boyd's form (1982)",
    };
    Ok(Limit::new(
        Criterion::Kilpatrick,
        format!("Kilpatrick RF criterion at {:.4e} Hz", frequency_hz),
        source,
        Mark::Confirmed,
        LimitKind::Field,
        e_mv_per_m * 1.0e6,
        Validity::OutsideValidity {
            reason: "Kilpatrick's criterion is for RF surfaces; do not apply it to DC gaps"
                .to_string(),
        },
    ))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn cranberg_field_and_voltage_agree_for_a_uniform_gap() {
        let d = 0.05;
        let v = cranberg_gap_voltage(d, CRANBERG_C_DEFAULT).unwrap().value;
        let e = cranberg_field_limit(v, CRANBERG_C_DEFAULT).unwrap().value;
        assert!((e * d - v).abs() < 1e-6 * v);
    }

    #[test]
    fn user_constants_are_flagged() {
        let l = cranberg_gap_voltage(0.01, 2e13).unwrap();
        assert_eq!(l.mark, Mark::UserSet);
        assert!(TotalVoltageFit::user(1e6, 1.5, "x", None).is_err());
        assert!(TotalVoltageFit::user(1e6, 0.6, "x", Some((1e-3, 1e-4))).is_err());
        let f = TotalVoltageFit::user(1e6, 0.6, "a measurement", Some((1e-3, 1e-2))).unwrap();
        assert!(!f.voltage(0.1).unwrap().validity.is_valid());
    }

    #[test]
    fn out_of_range_gaps_are_flagged() {
        assert!(
            !cranberg_gap_voltage(1e-5, CRANBERG_C_DEFAULT)
                .unwrap()
                .validity
                .is_valid()
        );
        assert!(cranberg_gap_voltage(0.0, CRANBERG_C_DEFAULT).is_err());
    }

    #[test]
    fn kilpatrick_is_never_a_dc_limit() {
        let l = kilpatrick_field(1e9, KilpatrickForm::Original).unwrap();
        assert!(!l.validity.is_valid());
        assert!((l.value / 1e6 - 28.35).abs() < 0.02);
    }
}
