//! Parameter sweeps: one design value varied over a range, the worst margins at each value,
//! and the least value that meets the design factor found by bisection.
//!
//! Input: the design text, a parameter path into it and a range with units. Output: one
//! `SweepPoint` per value (worst margin overall and in gas, hold-off voltage). A parameter is
//! named by its path in the design file: `gas.pressure`, `terminal.voltage`,
//! `conductor[terminal].corner_radius` (a table of an array chosen by its `name`, or by its
//! 1-based position, `column[1].minor_radius`).

use crate::analysis::Analysis;
use crate::design::{DesignError, from_str};
use crate::margin::{Margins, RowMedium, evaluate};
use crate::model::Model;
use crate::review::{ReviewError, review};
use crate::solve::SolverParams;
use crate::units::{Dimension, UnitError, parse_quantity};
use rayon::prelude::*;
use serde::Serialize;
use thiserror::Error;

#[derive(Debug, Error)]
pub enum SweepError {
    #[error("the design file is not valid TOML: {0}")]
    Toml(String),
    #[error("no value at '{path}' in the design file: {why}")]
    Path { path: String, why: String },
    #[error("the range {from:?} to {to:?}: {why}")]
    Range {
        from: String,
        to: String,
        why: String,
    },
    #[error(transparent)]
    Unit(#[from] UnitError),
    #[error("the design with {path} = {value} is not valid:\n{error}")]
    Design {
        path: String,
        value: String,
        error: Box<DesignError>,
    },
    #[error(transparent)]
    Review(#[from] ReviewError),
}

/// The result at one value of the parameter.
#[derive(Debug, Clone, Serialize)]
pub struct SweepPoint {
    /// The value in SI units.
    pub value_si: f64,
    /// The value as written into the design.
    pub value: String,
    pub worst_margin: Option<f64>,
    pub worst_item: Option<String>,
    pub worst_gas_margin: Option<f64>,
    pub holdoff_voltage_v: Option<f64>,
    pub meets_design_factor: bool,
}

/// The least value that meets the design factor, by bisection.
#[derive(Debug, Clone, Serialize)]
pub struct LeastValue {
    pub value_si: f64,
    pub value: String,
    pub worst_margin: Option<f64>,
    /// Bracket width at the end, SI units.
    pub tolerance_si: f64,
    pub evaluations: usize,
    /// Changes between failing and passing seen along the sampled values (1 when the margins
    /// grow with the parameter; more means the least value is only the lowest crossing).
    pub crossings: usize,
    /// What to keep in mind about the value, when anything.
    pub note: Option<String>,
}

/// The SI unit written into the design file for a dimension.
fn si_unit(dim: Dimension) -> &'static str {
    match dim {
        Dimension::Length => "m",
        Dimension::Voltage => "V",
        Dimension::Field => "V/m",
        Dimension::Pressure => "Pa",
        Dimension::Temperature => "K",
        Dimension::Capacitance => "F",
        Dimension::Resistance => "Ohm",
        Dimension::Current => "A",
        Dimension::Frequency => "Hz",
        Dimension::Energy => "J",
        Dimension::Power => "W",
        Dimension::Ratio => "%",
    }
}

/// The value with its unit as the design file takes it.
pub fn value_text(v: f64, dim: Dimension) -> String {
    match dim {
        Dimension::Ratio => format!("{} %", v * 100.0),
        _ => format!("{v:e} {}", si_unit(dim)),
    }
}

/// Writes `value` (a string with its unit) at `path` in the design text.
pub fn set_value(text: &str, path: &str, value: &str) -> Result<String, SweepError> {
    let mut doc: toml::Table = toml::from_str(text).map_err(|e| SweepError::Toml(e.to_string()))?;
    let err = |why: String| SweepError::Path {
        path: path.to_string(),
        why,
    };
    let parts: Vec<&str> = path.split('.').collect();
    let Some((leaf, tables)) = parts.split_last() else {
        return Err(err("the path is empty".into()));
    };
    let mut cur: &mut toml::Table = &mut doc;
    for seg in tables {
        let (name, sel) = match seg.find('[') {
            Some(k) if seg.ends_with(']') => (&seg[..k], Some(&seg[k + 1..seg.len() - 1])),
            _ => (*seg, None),
        };
        let Some(v) = cur.get_mut(name) else {
            return Err(err(format!("there is no table '{name}'")));
        };
        cur = match (v, sel) {
            (toml::Value::Table(t), None) => t,
            (toml::Value::Array(items), Some(sel)) => {
                let index = match sel.parse::<usize>() {
                    Ok(n) if n >= 1 && n <= items.len() => n - 1,
                    Ok(n) => {
                        return Err(err(format!(
                            "'{name}' has {} entries; {n} is out of range (they count from 1)",
                            items.len()
                        )));
                    }
                    Err(_) => items
                        .iter()
                        .position(|t| t.get("name").and_then(|n| n.as_str()) == Some(sel))
                        .ok_or_else(|| err(format!("no entry of '{name}' has name = \"{sel}\"")))?,
                };
                match items.get_mut(index) {
                    Some(toml::Value::Table(t)) => t,
                    _ => return Err(err(format!("entry {sel} of '{name}' is not a table"))),
                }
            }
            (toml::Value::Array(_), None) => {
                return Err(err(format!(
                    "'{name}' is a list of tables: choose one, as {name}[NAME] or {name}[1]"
                )));
            }
            _ => return Err(err(format!("'{name}' is not a table"))),
        };
    }
    match cur.get_mut(*leaf) {
        Some(v @ toml::Value::String(_)) => *v = toml::Value::String(value.to_string()),
        Some(_) => {
            return Err(err(format!(
                "'{leaf}' is not a quantity with a unit, so it cannot be swept"
            )));
        }
        None => {
            return Err(err(format!(
                "there is no key '{leaf}' (it must be set to be swept)"
            )));
        }
    }
    toml::to_string(&doc).map_err(|e| SweepError::Toml(e.to_string()))
}

fn summarise(m: &Margins, value_si: f64, value: String) -> SweepPoint {
    let numeric = m.rows.iter().filter_map(|r| r.margin.map(|x| (x, r)));
    let worst = numeric.clone().min_by(|a, b| a.0.total_cmp(&b.0));
    let worst_gas = numeric
        .filter(|(_, r)| r.medium == RowMedium::Gas)
        .map(|(x, _)| x)
        .min_by(f64::total_cmp);
    SweepPoint {
        value_si,
        value,
        worst_margin: worst.map(|w| w.0),
        worst_item: worst.map(|w| w.1.item.clone()),
        worst_gas_margin: worst_gas,
        holdoff_voltage_v: m.holdoff.as_ref().map(|h| h.voltage_v),
        meets_design_factor: !m.any_fail(),
    }
}

/// The model with the parameter at `v` (SI), and the value as written into the design.
fn model_at(
    text: &str,
    file: &str,
    path: &str,
    v: f64,
    dim: Dimension,
) -> Result<(Model, String), SweepError> {
    let value = value_text(v, dim);
    let edited = set_value(text, path, &value)?;
    let model = from_str(&edited, file).map_err(|e| SweepError::Design {
        path: path.to_string(),
        value: value.clone(),
        error: Box::new(e),
    })?;
    Ok((model, value))
}

/// A field solved once for every value of a parameter that moves neither geometry nor
/// potentials (the gas, its pressure and temperature, the `[checks]` overrides): only the
/// breakdown limits change, so each value needs its margins and no solve.
struct SharedField {
    model: Model,
    fine: Analysis,
}

/// Whether two models have the same field: equal in everything but the gas and the
/// `[checks]` overrides, which enter only the breakdown limits.
fn same_field(a: &Model, b: &Model) -> bool {
    let mut b = b.clone();
    b.gas.clone_from(&a.gas);
    b.checks.clone_from(&a.checks);
    *a == b
}

/// The shared field of a sweep from `a` to `b` when the parameter moves no field (the models
/// at both ends have the same field), solved once at `a`; `None` otherwise, or when either
/// end is not a valid design (its point then reports why).
fn shared_field(
    text: &str,
    file: &str,
    path: &str,
    (a, b, dim): (f64, f64, Dimension),
) -> Result<Option<SharedField>, SweepError> {
    let (Ok((ma, _)), Ok((mb, _))) = (
        model_at(text, file, path, a, dim),
        model_at(text, file, path, b, dim),
    ) else {
        return Ok(None);
    };
    if !same_field(&ma, &mb) {
        return Ok(None);
    }
    let fine = review(&ma, &SolverParams::default(), false)?.fine;
    Ok(Some(SharedField { model: ma, fine }))
}

/// Reviews the design with the parameter at `v` (SI).
pub fn evaluate_at(
    text: &str,
    file: &str,
    path: &str,
    v: f64,
    dim: Dimension,
) -> Result<SweepPoint, SweepError> {
    evaluate_sharing(text, file, path, v, dim, None)
}

/// As [`evaluate_at`], taking the field from `shared` when the model at `v` has the same
/// field (then only the margins are evaluated).
fn evaluate_sharing(
    text: &str,
    file: &str,
    path: &str,
    v: f64,
    dim: Dimension,
    shared: Option<&SharedField>,
) -> Result<SweepPoint, SweepError> {
    let (model, value) = model_at(text, file, path, v, dim)?;
    if let Some(s) = shared
        && same_field(&s.model, &model)
    {
        let m = evaluate(&model, &s.fine, None).map_err(ReviewError::from)?;
        return Ok(summarise(&m, v, value));
    }
    let r = review(&model, &SolverParams::default(), false)?;
    Ok(summarise(&r.margins, v, value))
}

/// The range from two quantities with units, of the same dimension.
pub fn range(from: &str, to: &str) -> Result<(f64, f64, Dimension), SweepError> {
    let (a, da) = parse_quantity(from)?;
    let (b, db) = parse_quantity(to)?;
    if da != db {
        return Err(SweepError::Range {
            from: from.into(),
            to: to.into(),
            why: format!("{} and {} cannot span one range", da.noun(), db.noun()),
        });
    }
    if !(a.is_finite() && b.is_finite()) || a == b {
        return Err(SweepError::Range {
            from: from.into(),
            to: to.into(),
            why: "the two ends must be different finite values".into(),
        });
    }
    Ok((a, b, da))
}

/// Evaluates `steps` evenly spaced values from `a` to `b`, in parallel.
pub fn sweep(
    text: &str,
    file: &str,
    path: &str,
    span: (f64, f64, Dimension),
    steps: usize,
) -> Result<Vec<SweepPoint>, SweepError> {
    sweep_with_progress(text, file, path, span, steps, &|_| {})
}

/// As `sweep`, calling `progress` with the number of values done after each one.
pub fn sweep_with_progress(
    text: &str,
    file: &str,
    path: &str,
    (a, b, dim): (f64, f64, Dimension),
    steps: usize,
    progress: &(dyn Fn(usize) + Sync),
) -> Result<Vec<SweepPoint>, SweepError> {
    let steps = steps.max(2);
    let shared = shared_field(text, file, path, (a, b, dim))?;
    let done = std::sync::atomic::AtomicUsize::new(0);
    (0..steps)
        .into_par_iter()
        .map(|k| {
            let v = a + (b - a) * k as f64 / (steps - 1) as f64;
            let r = evaluate_sharing(text, file, path, v, dim, shared.as_ref());
            progress(done.fetch_add(1, std::sync::atomic::Ordering::Relaxed) + 1);
            r
        })
        .collect()
}

/// The least value in [a, b] at which every row meets the design factor, assuming the margins
/// grow with the parameter (as they do with gas pressure); `None` when `b` itself does not.
pub fn least_value(
    text: &str,
    file: &str,
    path: &str,
    span: (f64, f64, Dimension),
    rel_tol: f64,
) -> Result<Option<LeastValue>, SweepError> {
    least_value_sampled(text, file, path, span, rel_tol, &[])
}

/// As [`least_value`], starting from values already reviewed (`sampled`, e.g. the points of a
/// sweep over the same range): the bisection starts from the lowest sampled failing-to-passing
/// step, and more than one change between failing and passing along the samples is reported
/// (the margins then do not grow with the parameter, and the value is the lowest crossing).
pub fn least_value_sampled(
    text: &str,
    file: &str,
    path: &str,
    (a, b, dim): (f64, f64, Dimension),
    rel_tol: f64,
    sampled: &[SweepPoint],
) -> Result<Option<LeastValue>, SweepError> {
    let (lo0, hi0) = (a.min(b), a.max(b));
    // Solved on the first evaluation that needs a field, when the parameter moves none.
    let shared: std::cell::OnceCell<Option<SharedField>> = std::cell::OnceCell::new();
    let evaluate_at = |text: &str, file: &str, path: &str, v: f64, dim: Dimension| {
        if shared.get().is_none() {
            let _ = shared.set(shared_field(text, file, path, (lo0, hi0, dim))?);
        }
        evaluate_sharing(
            text,
            file,
            path,
            v,
            dim,
            shared.get().and_then(Option::as_ref),
        )
    };
    let mut evaluations = 0;
    let mut known: Vec<SweepPoint> = sampled
        .iter()
        .filter(|p| p.value_si >= lo0 && p.value_si <= hi0)
        .cloned()
        .collect();
    for v in [hi0, lo0] {
        if !known.iter().any(|p| p.value_si == v) {
            known.push(evaluate_at(text, file, path, v, dim)?);
            evaluations += 1;
        }
    }
    known.sort_by(|p, q| p.value_si.total_cmp(&q.value_si));
    let crossings = known
        .windows(2)
        .filter(|w| w[0].meets_design_factor != w[1].meets_design_factor)
        .count();
    let note = (crossings > 1).then(|| {
        format!(
            "the worst margin does not grow steadily with {path}: passing and failing alternate \
             {crossings} times over the sampled values, so this is the lowest crossing only; \
             check the whole sweep"
        )
    });
    let Some(top) = known.last().cloned() else {
        return Ok(None);
    };
    if !known.iter().any(|p| p.meets_design_factor) {
        return Ok(None);
    }
    if known[0].meets_design_factor {
        let bottom = &known[0];
        return Ok(Some(LeastValue {
            value_si: bottom.value_si,
            value: bottom.value.clone(),
            worst_margin: bottom.worst_margin,
            tolerance_si: 0.0,
            evaluations,
            crossings,
            note,
        }));
    }
    // The lowest sampled step from failing to passing.
    let (mut lo, mut hi, mut best) = known
        .windows(2)
        .find(|w| !w[0].meets_design_factor && w[1].meets_design_factor)
        .map(|w| (w[0].value_si, w[1].value_si, w[1].clone()))
        .unwrap_or((lo0, hi0, top));
    while hi - lo > rel_tol * hi.abs() && evaluations < 60 {
        let mid = 0.5 * (lo + hi);
        let p = evaluate_at(text, file, path, mid, dim)?;
        evaluations += 1;
        if p.meets_design_factor {
            hi = mid;
            best = p;
        } else {
            lo = mid;
        }
    }
    Ok(Some(LeastValue {
        value_si: hi,
        value: best.value,
        worst_margin: best.worst_margin,
        tolerance_si: hi - lo,
        evaluations,
        crossings,
        note,
    }))
}
