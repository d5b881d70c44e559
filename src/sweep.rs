//! Parameter sweeps: one design value varied over a range, the worst margins at each value,
//! and the least value that meets the design factor found by bisection.
//!
//! Input: the design text, a parameter path into it and a range with units. Output: one
//! `SweepPoint` per value (worst margin overall and in gas, hold-off voltage). A parameter is
//! named by its path in the design file: `gas.pressure`, `terminal.voltage`,
//! `conductor[terminal].corner_radius` (a table of an array chosen by its `name`, or by its
//! 1-based position, `column[1].minor_radius`).

use crate::analysis::{Analysis, AnalysisError};
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
    /// The value in SI units (in the JSON as `value_` and the unit suffix, [`InUnit`]).
    #[serde(skip)]
    pub value_si: f64,
    /// The value as written into the design.
    pub value: String,
    pub worst_margin: Option<f64>,
    pub worst_item: Option<String>,
    pub worst_gas_margin: Option<f64>,
    pub holdoff_voltage_v: Option<f64>,
    pub meets_design_factor: bool,
    /// Why the design cannot be built or meshed at this value (then there are no margins and
    /// the point does not meet the design factor); the sweep goes on past such a point.
    pub unbuildable: Option<String>,
}

/// The suffix of a JSON key that holds a value of `dim` in SI units (docs/glossary.md).
pub fn key_suffix(dim: Dimension) -> &'static str {
    match dim {
        Dimension::Length => "m",
        Dimension::Voltage => "v",
        Dimension::Field => "v_per_m",
        Dimension::Pressure => "pa",
        Dimension::Temperature => "k",
        Dimension::Capacitance => "f",
        Dimension::Resistance => "ohm",
        Dimension::Current => "a",
        Dimension::Frequency => "hz",
        Dimension::Energy => "j",
        Dimension::Power => "w",
        Dimension::Ratio => "fraction",
    }
}

/// A value written to the JSON under `name` and the unit suffix of its dimension
/// (`value_pa`, `tolerance_m`, …).
pub struct InUnit {
    pub name: &'static str,
    pub dim: Dimension,
    pub value: f64,
}

impl Serialize for InUnit {
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        use serde::ser::SerializeMap;
        let mut m = s.serialize_map(Some(1))?;
        m.serialize_entry(
            &format!("{}_{}", self.name, key_suffix(self.dim)),
            &self.value,
        )?;
        m.end()
    }
}

/// The least value that meets the design factor, by bisection.
#[derive(Debug, Clone, Serialize)]
pub struct LeastValue {
    /// The value in SI units (in the JSON as `value_` and the unit suffix, [`InUnit`]).
    #[serde(skip)]
    pub value_si: f64,
    pub value: String,
    pub worst_margin: Option<f64>,
    /// Bracket width at the end, SI units (in the JSON as `tolerance_` and the unit suffix).
    #[serde(skip)]
    pub tolerance_si: f64,
    pub evaluations: usize,
    /// Changes between failing and passing seen along the sampled values (1 when the margins
    /// grow with the parameter; more means the least value is only the lowest crossing).
    pub crossings: usize,
    /// What to keep in mind about the value, when anything.
    pub note: Option<String>,
}

/// The value with its unit as the design file takes it, in the unit an engineer reads it in
/// (the unit `units::format_si` chooses: "20 mm", not "2e-2 m"), to nine significant figures
/// so that the design gets the swept value, not a rounded one.
pub fn value_text(v: f64, dim: Dimension) -> String {
    let shown = crate::units::format_si(v, dim);
    let unit = shown
        .split_whitespace()
        .last()
        .and_then(crate::units::lookup_unit)
        .filter(|u| u.dimension == dim && u.factor != 0.0);
    let Some(u) = unit else {
        return shown;
    };
    let x = (v - u.offset) / u.factor;
    let mut s = format!("{:.*e}", 8, x);
    // 1.23450000e3 -> 1234.5 when the exponent is small, else keep the exponent form.
    if let Some((_, e)) = s.split_once('e')
        && let Ok(e) = e.parse::<i32>()
        && (-4..=8).contains(&e)
    {
        let decimals = (8 - e).max(0) as usize;
        s = format!("{x:.decimals$}");
        if s.contains('.') {
            s = s.trim_end_matches('0').trim_end_matches('.').to_string();
        }
    }
    if s == "-0" {
        s = "0".into();
    }
    format!("{s} {}", u.symbol)
}

/// Writes `value` (a string with its unit) at `path` in the design text. Only the value's
/// own characters change, so every line and column of the file stays where it was and the
/// diagnostics of an edited design point at the lines of the original file.
pub fn set_value(text: &str, path: &str, value: &str) -> Result<String, SweepError> {
    use toml::de::{DeTable, DeValue};
    let doc = DeTable::parse(text).map_err(|e| SweepError::Toml(e.to_string()))?;
    let err = |why: String| SweepError::Path {
        path: path.to_string(),
        why,
    };
    let parts: Vec<&str> = path.split('.').collect();
    let Some((leaf, tables)) = parts.split_last() else {
        return Err(err("the path is empty".into()));
    };
    let get = |t: &'_ DeTable<'_>, key: &str| -> Option<usize> {
        t.iter().position(|(k, _)| k.get_ref().as_ref() == key)
    };
    let mut cur: &DeTable<'_> = doc.get_ref();
    for seg in tables {
        let (name, sel) = match seg.find('[') {
            Some(k) if seg.ends_with(']') => (&seg[..k], Some(&seg[k + 1..seg.len() - 1])),
            _ => (*seg, None),
        };
        let Some(at) = get(cur, name) else {
            return Err(err(format!("there is no table '{name}'")));
        };
        let v = cur.iter().nth(at).map(|(_, v)| v.get_ref());
        cur = match (v, sel) {
            (Some(DeValue::Table(t)), None) => t,
            (Some(DeValue::Array(items)), Some(sel)) => {
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
                        .position(|t| match t.get_ref() {
                            DeValue::Table(t) => get(t, "name").is_some_and(|k| {
                                matches!(
                                    t.iter().nth(k).map(|(_, v)| v.get_ref()),
                                    Some(DeValue::String(n)) if n.as_ref() == sel
                                )
                            }),
                            _ => false,
                        })
                        .ok_or_else(|| err(format!("no entry of '{name}' has name = \"{sel}\"")))?,
                };
                match items.get(index).map(|v| v.get_ref()) {
                    Some(DeValue::Table(t)) => t,
                    _ => return Err(err(format!("entry {sel} of '{name}' is not a table"))),
                }
            }
            (Some(DeValue::Array(_)), None) => {
                return Err(err(format!(
                    "'{name}' is a list of tables: choose one, as {name}[NAME] or {name}[1]"
                )));
            }
            _ => return Err(err(format!("'{name}' is not a table"))),
        };
    }
    let span = match get(cur, leaf).and_then(|k| cur.iter().nth(k)) {
        Some((_, v)) if matches!(v.get_ref(), DeValue::String(_)) => v.span(),
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
    };
    let literal = toml::Value::String(value.to_string()).to_string();
    Ok(format!(
        "{}{literal}{}",
        &text[..span.start],
        &text[span.end..]
    ))
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
        unbuildable: None,
    }
}

/// A point at which the design cannot be built, with the diagnostics that say why.
fn unbuildable(value_si: f64, value: String, why: String) -> SweepPoint {
    SweepPoint {
        value_si,
        value,
        worst_margin: None,
        worst_item: None,
        worst_gas_margin: None,
        holdoff_voltage_v: None,
        meets_design_factor: false,
        unbuildable: Some(why),
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

/// A field solved once for every value of a parameter that moves no geometry: the gas, its
/// pressure and temperature and the `[checks]` overrides enter only the breakdown limits, so
/// each value needs its margins and no solve; the terminal voltage scales every potential
/// when the grading divides it linearly, and the field is then the shared one scaled.
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

/// Whether two models differ at most in the terminal voltage besides the gas and the
/// `[checks]` overrides (the same geometry; whether the potentials scale is checked apart).
fn same_geometry(a: &Model, b: &Model) -> bool {
    let mut b = b.clone();
    b.terminal_voltage = a.terminal_voltage;
    same_field(a, &b)
}

impl SharedField {
    /// The factor that turns the shared field into the field of `model`: 1 for the same
    /// field; the ratio of terminal voltages when only the terminal voltage differs and the
    /// conductor potentials of `model` (from its own stack and grading) are the shared ones
    /// times that ratio, to 1e-12 of the largest; `None` when the field must be solved.
    fn factor_for(&self, model: &Model) -> Result<Option<f64>, SweepError> {
        if same_field(&self.model, model) {
            return Ok(Some(1.0));
        }
        let v0 = self.model.terminal_voltage;
        if !same_geometry(&self.model, model) || v0 == 0.0 || !v0.is_finite() {
            return Ok(None);
        }
        let factor = model.terminal_voltage / v0;
        // Stage voltages enter only the potentials of conductors drawn at a stage; the
        // stack's simulation is run only when there are such conductors.
        let staged = model
            .conductors
            .iter()
            .any(|c| matches!(c.potential, crate::model::PotentialSpec::Stage { .. }));
        let stack = if staged {
            crate::stack::analyze_stack(model, &SolverParams::default(), &Default::default())
                .map_err(ReviewError::from)?
        } else {
            None
        };
        let stage_v = stack.as_ref().map(|s| s.stage_voltages());
        let potentials =
            crate::grading::potentials(model, stage_v.as_deref()).map_err(ReviewError::from)?;
        let largest = potentials.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        let linear = potentials.len() == self.fine.potentials.len()
            && potentials
                .iter()
                .zip(&self.fine.potentials)
                .all(|(p, q)| (p - factor * q).abs() <= 1e-12 * largest);
        Ok(linear.then_some(factor))
    }
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
    if !same_geometry(&ma, &mb) {
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
/// field or the same one scaled (then only the margins are evaluated).
fn evaluate_sharing(
    text: &str,
    file: &str,
    path: &str,
    v: f64,
    dim: Dimension,
    shared: Option<&SharedField>,
) -> Result<SweepPoint, SweepError> {
    let (model, value) = match model_at(text, file, path, v, dim) {
        Ok(m) => m,
        Err(e @ SweepError::Design { .. }) => {
            return Ok(unbuildable(v, value_text(v, dim), e.to_string()));
        }
        Err(e) => return Err(e),
    };
    if let Some(s) = shared
        && let Some(factor) = s.factor_for(&model)?
    {
        let m = if factor == 1.0 {
            evaluate(&model, &s.fine, None)
        } else {
            let fine = s.fine.scaled(&model, factor).map_err(ReviewError::from)?;
            evaluate(&model, &fine, None)
        }
        .map_err(ReviewError::from)?;
        return Ok(summarise(&m, v, value));
    }
    match review(&model, &SolverParams::default(), false) {
        Ok(r) => Ok(summarise(&r.margins, v, value)),
        Err(ReviewError::Analysis(AnalysisError::Mesh(e))) => {
            let why = format!("the design with {path} = {value} cannot be meshed: {e}");
            Ok(unbuildable(v, value, why))
        }
        Err(e) => Err(e.into()),
    }
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
