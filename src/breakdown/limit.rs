//! The result type of every criterion: a limit with its source, validity and derating.
//!
//! A [`Limit`] is plain data for the margin stage: what criterion produced it, the published
//! source and confidence mark, whether it is a field (V/m) or a voltage (V), the ideal value,
//! the derating applied (factor and basis) and the resulting value, and whether the inputs were
//! inside the range the criterion was fitted over.

use serde::Serialize;

use super::error::BreakdownError;

/// How far a constant or rule can be trusted (the marks of docs/references.md).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Mark {
    /// \[C\] seen in a public source, named beside it.
    Confirmed,
    /// \[M\] recalled from the cited book or paper, not re-read ("from memory").
    FromMemory,
    /// \[P\] a design rule of thumb with no single source ("common practice").
    CommonPractice,
    /// \[D\] computed from the formulas and constants above it.
    Derived,
    /// Set by the user, replacing a built-in value.
    UserSet,
}

impl Mark {
    /// The bracketed tag used in docs/references.md: `[C]`, `[M]`, `[P]`, `[D]`, or `[user]`.
    pub fn tag(self) -> &'static str {
        match self {
            Mark::Confirmed => "[C]",
            Mark::FromMemory => "[M]",
            Mark::CommonPractice => "[P]",
            Mark::Derived => "[D]",
            Mark::UserSet => "[user]",
        }
    }

    /// The weaker of two marks, for a value computed from both.
    pub fn weakest(self, other: Mark) -> Mark {
        fn rank(m: Mark) -> u8 {
            match m {
                Mark::Confirmed => 0,
                Mark::Derived => 1,
                Mark::FromMemory => 2,
                Mark::CommonPractice => 3,
                Mark::UserSet => 4,
            }
        }
        if rank(other) > rank(self) {
            other
        } else {
            self
        }
    }
}

/// Whether a criterion was evaluated inside the range it was fitted or validated over.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "status", rename_all = "snake_case")]
pub enum Validity {
    Valid,
    /// The value was computed but lies outside the stated range; `reason` says which range.
    OutsideValidity {
        reason: String,
    },
}

impl Validity {
    /// True for [`Validity::Valid`].
    pub fn is_valid(&self) -> bool {
        matches!(self, Validity::Valid)
    }

    /// Valid when `reasons` is empty, otherwise outside validity with the reasons joined.
    pub fn from_reasons(reasons: Vec<String>) -> Self {
        if reasons.is_empty() {
            Validity::Valid
        } else {
            Validity::OutsideValidity {
                reason: reasons.join("; "),
            }
        }
    }

    /// Both must hold: reasons of either are kept.
    pub fn and(self, other: Validity) -> Self {
        match (self, other) {
            (Validity::Valid, v) | (v, Validity::Valid) => v,
            (Validity::OutsideValidity { reason: a }, Validity::OutsideValidity { reason: b }) => {
                Validity::OutsideValidity {
                    reason: format!("{a}; {b}"),
                }
            }
        }
    }
}

/// What a limit bounds, and so its unit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum LimitKind {
    /// A field magnitude, V/m.
    #[serde(rename = "field_v_per_m")]
    Field,
    /// A voltage, V.
    #[serde(rename = "voltage_v")]
    Voltage,
}

/// Which criterion produced a limit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Criterion {
    /// Townsend breakdown, Paschen's law.
    Paschen,
    /// Schumann-type uniform-field fit for air.
    SchumannAir,
    /// Another gas modelled as air with a stated strength factor.
    ScaledAir,
    /// Uniform-field streamer breakdown from the SF6 linear effective-ionisation fit.
    Sf6Streamer,
    /// The limiting (critical) field of the gas, where α = η.
    CriticalField,
    /// The ionisation (Raether–Meek) integral along a field line.
    StreamerIntegral,
    /// Peek's corona-onset field.
    PeekCorona,
    /// Cranberg's V·E clump criterion (vacuum).
    Cranberg,
    /// Total-voltage fit V = k·d^α (vacuum).
    TotalVoltage,
    /// Cathode macroscopic surface-field design limit (vacuum).
    CathodeSurfaceField,
    /// Kilpatrick's RF criterion (not for DC).
    Kilpatrick,
    /// Tangential surface-flashover limit along an insulator in vacuum.
    VacuumSurfaceFlashover,
    /// Tangential surface-flashover limit along an insulator in gas.
    GasSurfaceFlashover,
}

impl Criterion {
    /// The criterion's one label in every table, note and comparison (docs/glossary.md).
    pub fn label(self) -> &'static str {
        match self {
            Criterion::Paschen => "Paschen (gap voltage)",
            Criterion::SchumannAir => "Schumann fit (gap)",
            Criterion::ScaledAir => "scaled-air fit (gap)",
            Criterion::Sf6Streamer => "SF6 uniform-field fit (gap)",
            Criterion::CriticalField => "limiting field",
            Criterion::StreamerIntegral => "streamer integral",
            Criterion::PeekCorona => "Peek corona onset",
            Criterion::Cranberg => "Cranberg V·E",
            Criterion::TotalVoltage => "total-voltage fit",
            Criterion::CathodeSurfaceField => "cathode surface field",
            Criterion::Kilpatrick => "Kilpatrick (RF)",
            Criterion::VacuumSurfaceFlashover => "surface flashover (vacuum)",
            Criterion::GasSurfaceFlashover => "surface flashover (gas)",
        }
    }
}

/// A factor applied to an ideal limit, with its basis.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Derating {
    /// Multiplies the ideal value, 0 < factor ≤ 1 (1 = ideal).
    pub factor: f64,
    /// Why: the stressed-area or surface-state model, or "ideal".
    pub basis: String,
    /// Confidence in the factor; `None` for no derating.
    pub mark: Option<Mark>,
}

/// Area and roughness derating of every gas limit, the same for every gas: technical SF6 gaps
/// broke at 50–70 % of the limiting field (a ~0.15 m² coaxial gap ≈ 50 %, a 150 mm plane gap
/// ≈ 70 %) \[C\] (docs/references.md §3, translated conference excerpt), and design practice keeps
/// the peak SF6 field ≤ 0.5–0.7 × (E/p)_crit·p \[P\]; 0.6 is the middle of that range \[P\].
/// holdoff applies the same factor to air, N2, CO2 and mixtures (docs/references.md §16): no
/// published per-gas figure was found, and one factor keeps a comparison of gases like for
/// like (common practice, no source for the gases other than SF6).
pub const AREA_DERATING: f64 = 0.6;

impl Derating {
    /// No derating: the ideal value.
    pub fn none() -> Self {
        Derating {
            factor: 1.0,
            basis: "ideal (no derating)".to_string(),
            mark: None,
        }
    }

    /// The default area and roughness derating of every gas ([`AREA_DERATING`], common
    /// practice), with the gas named in its basis.
    pub fn large_area(gas: &str) -> Self {
        Derating {
            factor: AREA_DERATING,
            basis: format!(
                "large stressed area and roughness, one policy for every gas ({gas} here): \
                 technical SF6 gaps break at 50-70 % of the ideal limit (docs/references.md \
                 §3); 0.6 applied to every gas alike (docs/references.md §16), common practice"
            ),
            mark: Some(Mark::CommonPractice),
        }
    }

    /// A user-chosen factor with its stated basis; 0 < factor ≤ 1.
    pub fn user(factor: f64, basis: &str) -> Result<Self, BreakdownError> {
        if !(factor.is_finite() && factor > 0.0 && factor <= 1.0) {
            return Err(BreakdownError::InvalidInput {
                name: "derating factor",
                value: factor,
                accepted: "a number with 0 < factor <= 1",
            });
        }
        Ok(Derating {
            factor,
            basis: format!("user-set: {basis}"),
            mark: Some(Mark::UserSet),
        })
    }

    /// True when the factor is 1.
    pub fn is_ideal(&self) -> bool {
        self.factor == 1.0
    }
}

/// One limit from one criterion, ready for a margin row.
///
/// `value = ideal × derating.factor`; both are in the unit given by `kind`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Limit {
    pub criterion: Criterion,
    /// Human-readable name, e.g. "Paschen (air, γ = 0.01)".
    pub name: String,
    /// Published source of the formula and constants, as docs/references.md names it.
    pub source: String,
    /// Confidence mark of the weakest constant used.
    pub mark: Mark,
    pub kind: LimitKind,
    /// The ideal (small, clean electrode) value.
    pub ideal: f64,
    pub derating: Derating,
    /// The value to compare with: `ideal × derating.factor`.
    pub value: f64,
    pub validity: Validity,
}

impl Limit {
    /// An ideal limit (no derating).
    pub fn new(
        criterion: Criterion,
        name: impl Into<String>,
        source: impl Into<String>,
        mark: Mark,
        kind: LimitKind,
        ideal: f64,
        validity: Validity,
    ) -> Self {
        Limit {
            criterion,
            name: name.into(),
            source: source.into(),
            mark,
            kind,
            ideal,
            derating: Derating::none(),
            value: ideal,
            validity,
        }
    }

    /// The same limit with `derating` applied (replacing any earlier derating).
    pub fn derated(mut self, derating: Derating) -> Self {
        self.value = self.ideal * derating.factor;
        self.derating = derating;
        self
    }

    /// The same limit with its ideal value replaced by a user-set one (from `[checks]`). The
    /// built-in value and source are kept in `source` so that every output can show both.
    pub fn with_user_value(mut self, ideal: f64) -> Result<Self, BreakdownError> {
        if !(ideal.is_finite() && ideal > 0.0) {
            return Err(BreakdownError::InvalidInput {
                name: "user-set limit",
                value: ideal,
                accepted: "a positive finite number (SI units: V/m or V)",
            });
        }
        self.source = format!(
            "user-set (built-in value {:.6e} from {} {})",
            self.ideal,
            self.source,
            self.mark.tag()
        );
        self.mark = Mark::UserSet;
        self.ideal = ideal;
        self.value = ideal * self.derating.factor;
        Ok(self)
    }

    /// The same limit scaled by `factor` (e.g. a field limit turned into a voltage by a length,
    /// or an inception factor applied); kind and validity unchanged unless the caller changes them.
    pub(crate) fn scaled(mut self, factor: f64) -> Self {
        self.ideal *= factor;
        self.value *= factor;
        self
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn sample() -> Limit {
        Limit::new(
            Criterion::CriticalField,
            "test",
            "nowhere",
            Mark::FromMemory,
            LimitKind::Field,
            10.0,
            Validity::Valid,
        )
    }

    #[test]
    fn derating_multiplies_the_ideal_value() {
        let l = sample().derated(Derating::large_area("SF6"));
        assert_eq!(l.ideal, 10.0);
        assert!((l.value - 6.0).abs() < 1e-12);
        assert_eq!(l.derating.mark, Some(Mark::CommonPractice));
    }

    #[test]
    fn user_derating_is_checked() {
        assert!(Derating::user(0.0, "x").is_err());
        assert!(Derating::user(1.2, "x").is_err());
        assert!(Derating::user(f64::NAN, "x").is_err());
        let d = Derating::user(0.5, "rough cathode").unwrap();
        assert!(d.basis.contains("rough cathode"));
    }

    #[test]
    fn user_value_is_flagged_and_keeps_the_built_in() {
        let l = sample()
            .derated(Derating::large_area("SF6"))
            .with_user_value(20.0)
            .unwrap();
        assert_eq!(l.mark, Mark::UserSet);
        assert!(l.source.contains("nowhere"));
        assert!((l.value - 12.0).abs() < 1e-12);
        assert!(sample().with_user_value(-1.0).is_err());
    }

    #[test]
    fn validity_combines_reasons() {
        let a = Validity::from_reasons(vec!["a".into()]);
        let b = Validity::from_reasons(vec!["b".into()]);
        assert_eq!(
            a.clone().and(b),
            Validity::OutsideValidity {
                reason: "a; b".into()
            }
        );
        assert_eq!(Validity::Valid.and(a.clone()), a);
        assert!(Validity::from_reasons(vec![]).is_valid());
    }

    #[test]
    fn serialises_with_unit_in_kind() {
        let s = serde_json::to_string(&sample()).unwrap();
        assert!(s.contains("\"kind\":\"field_v_per_m\""));
        assert!(s.contains("\"status\":\"valid\""));
    }
}
