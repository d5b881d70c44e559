//! The streamer (Raether–Meek) criterion along a field line: ∫ (α − η) ds = K from the electrode
//! surface to the point where α − η ≤ 0 (docs/references.md §4; the approach of the
//! Zaengl–Nyffenegger streamer criterion \[M\]).
//!
//! Input: a field-line profile as samples `(s, E)` — distance from the electrode surface along
//! the field line (m, strictly increasing, ≥ 0) and field magnitude (V/m, ≥ 0) — plus the gas
//! and an [`EffectiveIonisation`] model. The field is taken as linear between samples; each
//! segment is integrated by 3-point Gauss–Legendre quadrature, exact for the linear and
//! quadratic fits.
//!
//! The integral stops at the first point where the field falls to the model's stop field
//! (α − η = 0, or the lower edge of the fit window for α-only models), or at the end of the
//! profile (the opposite electrode). Stopping at a window edge, and any part of the path above
//! the fit window (the fit is extrapolated there), make the result outside validity.

use serde::Serialize;

use super::error::BreakdownError;
use super::gas::{GasOptions, GasState};
use super::ionisation::EffectiveIonisation;
use super::limit::{Criterion, Limit, LimitKind, Validity};
use crate::model::Gas;

/// Why the integration ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum StopReason {
    /// α − η fell to zero: the natural end of the ionisation zone.
    CoefficientZero,
    /// The field fell below the fitted window of an α-only model (α > 0 beyond, not modelled).
    ValidityLimit,
    /// The profile ended (the opposite electrode) with α − η still positive.
    ProfileEnd,
}

/// The value of the ionisation integral along one profile.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StreamerIntegral {
    /// ∫ (α − η) ds over the ionisation zone (dimensionless).
    pub integral: f64,
    /// The streamer number K of the model.
    pub streamer_number: f64,
    /// True when `integral ≥ K`.
    pub reaches_k: bool,
    /// Distance s (m) at which the running integral reaches K, if it does.
    pub critical_length_m: Option<f64>,
    /// Distance s (m) where the integration ended.
    pub end_m: f64,
    pub stop: StopReason,
    /// Model name, for reports.
    pub model: String,
    pub validity: Validity,
}

/// Streamer inception along one profile: the factor by which the whole profile must be
/// multiplied for the integral to reach K.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Inception {
    /// Inception scale factor (1 = the given profile is exactly at inception).
    pub factor: f64,
    /// Field at the first sample (the electrode surface) at inception, V/m.
    pub surface_field_v_per_m: f64,
    /// The integral at inception.
    pub integral: StreamerIntegral,
    pub source: String,
    pub mark: super::limit::Mark,
}

fn validate_profile(profile: &[(f64, f64)]) -> Result<(), BreakdownError> {
    if profile.len() < 2 {
        return Err(BreakdownError::InvalidProfile {
            index: profile.len(),
            reason: "a profile needs at least 2 samples (s in m, E in V/m)".to_string(),
        });
    }
    let mut prev = f64::NEG_INFINITY;
    for (i, &(s, e)) in profile.iter().enumerate() {
        if !(s.is_finite() && s >= 0.0) {
            return Err(BreakdownError::InvalidProfile {
                index: i,
                reason: format!("distance s = {s} m; expected a finite value >= 0"),
            });
        }
        if s <= prev {
            return Err(BreakdownError::InvalidProfile {
                index: i,
                reason: format!(
                    "distance s = {s} m does not increase (previous {prev} m); samples must \
                     run away from the electrode"
                ),
            });
        }
        if !(e.is_finite() && e >= 0.0) {
            return Err(BreakdownError::InvalidProfile {
                index: i,
                reason: format!("field E = {e} V/m; expected a finite magnitude >= 0"),
            });
        }
        prev = s;
    }
    Ok(())
}

/// 3-point Gauss–Legendre integral of the coefficient over [s0, s1] of a segment on which
/// E(s) = e_a + (e_b − e_a)·(s − s_a)/(s_b − s_a).
struct Segment {
    s_a: f64,
    e_a: f64,
    slope: f64,
}

impl Segment {
    fn field(&self, s: f64) -> f64 {
        self.e_a + self.slope * (s - self.s_a)
    }

    fn integral(&self, model: &EffectiveIonisation, p: f64, s0: f64, s1: f64) -> f64 {
        const X: f64 = 0.774_596_669_241_483_4; // sqrt(3/5)
        let half = 0.5 * (s1 - s0);
        let mid = 0.5 * (s0 + s1);
        let f = |x: f64| model.coefficient_per_m(self.field(mid + half * x), p);
        half * (5.0 / 9.0 * f(-X) + 8.0 / 9.0 * f(0.0) + 5.0 / 9.0 * f(X))
    }
}

/// The running sum of the ionisation integral along a profile scaled by `scale`: the total,
/// where it reaches K (when `find_critical`), where and why it stopped, and the first place
/// the field rose above the fit's window.
struct Sum {
    total: f64,
    critical: Option<f64>,
    end: f64,
    stop: StopReason,
    above_window: Option<(f64, f64)>,
}

fn accumulate(
    profile: &[(f64, f64)],
    scale: f64,
    model: &EffectiveIonisation,
    p: f64,
    find_critical: bool,
) -> Sum {
    let k = model.streamer_number;
    let e_stop = model.stop_field(p);
    let e_max = model.max_field(p);
    let stop_kind = if model.stop_is_zero {
        StopReason::CoefficientZero
    } else {
        StopReason::ValidityLimit
    };
    let mut total = 0.0;
    let mut critical = None;
    let mut above_window: Option<(f64, f64)> = None;
    let mut end = profile[profile.len() - 1].0;
    let mut stop = StopReason::ProfileEnd;
    for w in profile.windows(2) {
        let (s_a, e_a) = (w[0].0, scale * w[0].1);
        let (s_b, e_b) = (w[1].0, scale * w[1].1);
        if e_a <= e_stop {
            end = s_a;
            stop = stop_kind;
            break;
        }
        let seg = Segment {
            s_a,
            e_a,
            slope: (e_b - e_a) / (s_b - s_a),
        };
        let (s_end, ends_here) = if e_b <= e_stop {
            (s_a + (e_a - e_stop) / (e_a - e_b) * (s_b - s_a), true)
        } else {
            (s_b, false)
        };
        let e_hi = e_a.max(if ends_here { e_stop } else { e_b });
        if e_hi > e_max * (1.0 + 1e-9) && above_window.is_none() {
            above_window = Some((if e_a >= e_b { s_a } else { s_end }, e_hi));
        }
        let part = seg.integral(model, p, s_a, s_end);
        if find_critical && critical.is_none() && total + part >= k {
            // Bisection for the point where the running integral reaches K.
            let (mut lo, mut hi) = (s_a, s_end);
            for _ in 0..80 {
                let mid = 0.5 * (lo + hi);
                if total + seg.integral(model, p, s_a, mid) >= k {
                    hi = mid;
                } else {
                    lo = mid;
                }
            }
            critical = Some(hi);
        }
        total += part;
        if ends_here {
            end = s_end;
            stop = stop_kind;
            break;
        }
    }
    Sum {
        total,
        critical,
        end,
        stop,
        above_window,
    }
}

/// The ionisation integral along `profile` scaled by `scale`, with where it reaches K and its
/// validity.
fn integrate(
    profile: &[(f64, f64)],
    scale: f64,
    model: &EffectiveIonisation,
    p: f64,
) -> StreamerIntegral {
    let k = model.streamer_number;
    let Sum {
        total,
        critical,
        end,
        stop,
        above_window,
    } = accumulate(profile, scale, model, p, true);
    let mut reasons = Vec::new();
    if let Some((s, e)) = above_window
        && let Some(r) = model.window_reason(e, p)
    {
        reasons.push(format!("at s = {s:.4e} m: {r} (fit extrapolated)"));
    }
    if stop == StopReason::ValidityLimit && critical.is_none_or(|c| c >= end * (1.0 - 1e-12)) {
        reasons.push(format!(
            "integration stopped at s = {end:.4e} m where the field leaves the fit window of {} \
             while alpha is still positive; the integral is a lower bound",
            model.name
        ));
    }
    StreamerIntegral {
        integral: total,
        streamer_number: k,
        reaches_k: total >= k,
        critical_length_m: critical,
        end_m: end,
        stop,
        model: model.name.clone(),
        validity: model.validity.clone().and(Validity::from_reasons(reasons)),
    }
}

/// The ionisation integral along `profile` in `gas` with the model `model`.
pub fn integral(
    profile: &[(f64, f64)],
    gas: &Gas,
    model: &EffectiveIonisation,
) -> Result<StreamerIntegral, BreakdownError> {
    validate_profile(profile)?;
    let state = GasState::resolve(gas)?;
    Ok(integrate(profile, 1.0, model, state.reduced_pressure_pa))
}

/// The ionisation integral with the default model of the gas
/// ([`EffectiveIonisation::for_gas`]).
pub fn integral_default(
    profile: &[(f64, f64)],
    gas: &Gas,
    options: &GasOptions,
) -> Result<StreamerIntegral, BreakdownError> {
    let model = EffectiveIonisation::for_gas(gas, options)?;
    integral(profile, gas, &model)
}

/// Largest number of doublings when bracketing the inception factor.
const MAX_DOUBLINGS: usize = 80;
/// Bisection steps (relative bracket below 1e-15 after ~55 halvings).
const BISECTIONS: usize = 200;

/// The inception scale factor along `profile`: the factor f such that the integral of the
/// profile multiplied by f equals K, by bracketing and bisection (the integral grows
/// monotonically with f).
pub fn inception(
    profile: &[(f64, f64)],
    gas: &Gas,
    model: &EffectiveIonisation,
) -> Result<Inception, BreakdownError> {
    validate_profile(profile)?;
    let state = GasState::resolve(gas)?;
    let p = state.reduced_pressure_pa;
    let e0 = profile[0].1;
    if e0 <= 0.0 {
        return Err(BreakdownError::NoInception {
            reason: "the field at the electrode surface (first sample) is zero".to_string(),
        });
    }
    let k = model.streamer_number;
    // At f_lo the surface field equals the stop field: the integral is zero.
    let mut lo = model.stop_field(p) / e0;
    let mut hi = 2.0 * lo;
    let mut n = 0;
    // The bracket and the bisection need only the total (the same sum `integrate` forms).
    let total = |f: f64| accumulate(profile, f, model, p, false).total;
    while total(hi) < k {
        lo = hi;
        hi *= 2.0;
        n += 1;
        if n > MAX_DOUBLINGS {
            return Err(BreakdownError::NoInception {
                reason: format!(
                    "the integral stays below K = {k:.2} for any field scale ({} saturates over \
                     this path length)",
                    model.name
                ),
            });
        }
    }
    for _ in 0..BISECTIONS {
        let mid = 0.5 * (lo + hi);
        if mid <= lo || mid >= hi {
            break;
        }
        if total(mid) >= k {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    let at = integrate(profile, hi, model, p);
    Ok(Inception {
        factor: hi,
        surface_field_v_per_m: hi * e0,
        integral: at,
        source: model.source.clone(),
        mark: model.mark,
    })
}

/// Inception with the default model of the gas.
pub fn inception_default(
    profile: &[(f64, f64)],
    gas: &Gas,
    options: &GasOptions,
) -> Result<Inception, BreakdownError> {
    let model = EffectiveIonisation::for_gas(gas, options)?;
    inception(profile, gas, &model)
}

impl Inception {
    /// The surface field at inception as a field [`Limit`].
    pub fn field_limit(&self) -> Limit {
        Limit::new(
            Criterion::StreamerIntegral,
            format!(
                "streamer inception (ionisation integral, {})",
                self.integral.model
            ),
            self.source.clone(),
            self.mark,
            LimitKind::Field,
            self.surface_field_v_per_m,
            self.integral.validity.clone(),
        )
    }

    /// The voltage at inception as a voltage [`Limit`], for a profile computed at
    /// `applied_voltage_v`.
    pub fn voltage_limit(&self, applied_voltage_v: f64) -> Limit {
        let mut l = self.field_limit();
        l.kind = LimitKind::Voltage;
        l.ideal = self.factor * applied_voltage_v;
        l.value = l.ideal;
        l
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::breakdown::gas::{pure, standard_air};

    fn uniform(e: f64, d: f64, n: usize) -> Vec<(f64, f64)> {
        (0..=n).map(|i| (d * i as f64 / n as f64, e)).collect()
    }

    #[test]
    fn bad_profiles_are_rejected_with_the_index() {
        let gas = standard_air();
        let m = EffectiveIonisation::air();
        assert!(matches!(
            integral(&[(0.0, 1e6)], &gas, &m),
            Err(BreakdownError::InvalidProfile { index: 1, .. })
        ));
        assert!(matches!(
            integral(&[(0.0, 1e6), (0.0, 1e6)], &gas, &m),
            Err(BreakdownError::InvalidProfile { index: 1, .. })
        ));
        assert!(matches!(
            integral(&[(0.0, 1e6), (1e-3, f64::NAN)], &gas, &m),
            Err(BreakdownError::InvalidProfile { index: 1, .. })
        ));
        assert!(matches!(
            integral(&[(-1.0, 1e6), (1e-3, 1e6)], &gas, &m),
            Err(BreakdownError::InvalidProfile { index: 0, .. })
        ));
    }

    #[test]
    fn below_the_stop_field_the_integral_is_zero() {
        let gas = standard_air();
        let r = integral(&uniform(1e6, 0.01, 10), &gas, &EffectiveIonisation::air()).unwrap();
        assert_eq!(r.integral, 0.0);
        assert_eq!(r.stop, StopReason::CoefficientZero);
        assert!(!r.reaches_k);
    }

    #[test]
    fn falling_profile_stops_at_the_zero() {
        // SF6 at 1 bar: zero at 88.5 kV/cm. Field falls linearly from 100 to 80 kV/cm over 1 cm.
        let gas = pure("SF6", 1e5, 293.15);
        let m = EffectiveIonisation::sf6();
        let r = integral(&[(0.0, 100e5), (0.01, 80e5)], &gas, &m).unwrap();
        assert_eq!(r.stop, StopReason::CoefficientZero);
        let s_zero = 0.01 * (100.0 - 88.5) / 20.0;
        assert!((r.end_m - s_zero).abs() < 1e-12);
        // Triangle: 0.5 * k * (E0 - Ecrit) * s_zero.
        let exact = 0.5 * 27.7e-3 * 11.5e5 * s_zero;
        assert!((r.integral - exact).abs() < 1e-9 * exact);
    }

    #[test]
    fn critical_length_of_a_uniform_gap() {
        let gas = pure("SF6", 1e5, 293.15);
        let m = EffectiveIonisation::sf6();
        // alpha - eta = 0.0277 * 1e5 = 2770 /m at 1 kV/cm above critical: K reached at 10.5/2770.
        let r = integral(&uniform(89.5e5, 0.01, 4), &gas, &m).unwrap();
        let x = r.critical_length_m.unwrap();
        assert!((x - 10.5 / 2770.0).abs() < 1e-9);
        assert!(r.reaches_k);
        assert_eq!(r.stop, StopReason::ProfileEnd);
    }

    #[test]
    fn townsend_stop_at_window_edge_is_flagged() {
        let gas = pure("N2", 1e5, 293.15);
        let m = EffectiveIonisation::n2_townsend();
        let r = integral(&[(0.0, 1e8), (0.01, 1e5)], &gas, &m).unwrap();
        assert_eq!(r.stop, StopReason::ValidityLimit);
        assert!(!r.validity.is_valid());
    }

    #[test]
    fn zero_surface_field_has_no_inception() {
        let gas = standard_air();
        let r = inception(
            &[(0.0, 0.0), (0.01, 1e6)],
            &gas,
            &EffectiveIonisation::air(),
        );
        assert!(matches!(r, Err(BreakdownError::NoInception { .. })));
    }
}
