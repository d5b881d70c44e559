//! Reading single raw values: quantities with units, plain numbers, counts, names, pairs.
//!
//! Input: a [`RawValue`] with its span and its key path. Output: the SI value, or a located
//! problem saying what the key expects. Each reader reports its own problem and returns
//! `None`, so the caller can go on and find the next one.

use super::problem::Problems;
use super::schema::{Leaf, RawValue};
use crate::units::{self, Dimension, UnitError};
use std::ops::Range;
use toml::Spanned;

/// Where a table starts and what it is called, for "missing key" problems.
#[derive(Debug, Clone)]
pub(crate) struct At {
    /// Key path of the table, e.g. `conductor[2]`.
    pub path: String,
    /// Span of its header (or of the inline table).
    pub span: Range<usize>,
}

impl At {
    pub(crate) fn new(path: impl Into<String>, span: Range<usize>) -> Self {
        Self {
            path: path.into(),
            span,
        }
    }

    pub(crate) fn key(&self, key: &str) -> String {
        if self.path.is_empty() {
            key.to_string()
        } else {
            format!("{}.{key}", self.path)
        }
    }
}

pub(crate) struct Reader<'p> {
    pub problems: &'p mut Problems,
    /// The design file's folder: files the design names (drawings) are relative to it.
    pub base: &'p std::path::Path,
}

impl Reader<'_> {
    pub(crate) fn push(
        &mut self,
        code: &'static str,
        key: impl Into<String>,
        span: Range<usize>,
        message: impl Into<String>,
        help: Option<String>,
    ) {
        self.problems.push(code, key, span, message, help);
    }

    /// Reports a required key that is absent.
    pub(crate) fn missing(&mut self, at: &At, key: &str, what: &str) {
        let table = if at.path.is_empty() {
            "the design file".to_string()
        } else {
            format!("`{}`", at.path)
        };
        self.push(
            "missing-key",
            at.key(key),
            at.span.clone(),
            format!("{table} needs `{key}`"),
            Some(format!("add `{key} = {what}`")),
        );
    }

    /// The value of a required key, or a "missing-key" problem.
    pub(crate) fn required<'v>(
        &mut self,
        leaf: &'v Leaf,
        at: &At,
        key: &str,
        what: &str,
    ) -> Option<&'v Spanned<RawValue>> {
        if leaf.is_none() {
            self.missing(at, key, what);
        }
        leaf.as_ref()
    }

    /// A quantity with a unit of dimension `dim`.
    pub(crate) fn quantity(
        &mut self,
        v: &Spanned<RawValue>,
        key: &str,
        dim: Dimension,
    ) -> Option<f64> {
        let err = match v.get_ref() {
            RawValue::Str(s) => match units::parse(s, dim) {
                Ok(x) => return Some(x),
                Err(e) => e,
            },
            RawValue::Int(_) | RawValue::Float(_) => UnitError::MissingUnit {
                text: v.get_ref().show(),
                expected: dim,
            },
            other => {
                self.push(
                    "wrong-type",
                    key,
                    v.span(),
                    format!(
                        "`{key}` must be {} written as a string with a unit, found {}",
                        dim.noun(),
                        other.kind()
                    ),
                    Some(format!(
                        "write it like \"{}\"; accepted units: {}",
                        dim.example(),
                        dim.accepted_list()
                    )),
                );
                return None;
            }
        };
        let message = match &err {
            UnitError::MissingUnit { text, .. } if !matches!(v.get_ref(), RawValue::Str(_)) => {
                format!(
                    "`{key} = {text}` is a bare number; {} needs a unit",
                    dim.noun()
                )
            }
            _ => format!("`{key}`: {err}"),
        };
        self.push(err.code(), key, v.span(), message, Some(err.help()));
        None
    }

    /// A required quantity.
    pub(crate) fn req_quantity(
        &mut self,
        leaf: &Leaf,
        at: &At,
        key: &str,
        dim: Dimension,
    ) -> Option<f64> {
        let what = format!("\"{}\"", dim.example());
        let v = self.required(leaf, at, key, &what)?;
        self.quantity(v, &at.key(key), dim)
    }

    /// An optional quantity: `None` when absent or unreadable (the latter reported).
    pub(crate) fn opt_quantity(
        &mut self,
        leaf: &Leaf,
        at: &At,
        key: &str,
        dim: Dimension,
    ) -> Option<f64> {
        leaf.as_ref()
            .and_then(|v| self.quantity(v, &at.key(key), dim))
    }

    /// A plain number (dimensionless).
    pub(crate) fn number(&mut self, v: &Spanned<RawValue>, key: &str) -> Option<f64> {
        match v.get_ref() {
            RawValue::Int(i) => Some(*i as f64),
            RawValue::Float(x) if x.is_finite() => Some(*x),
            RawValue::Str(s) => {
                let help = if s.trim().parse::<f64>().is_ok() {
                    format!("write it without quotes: {key} = {}", s.trim())
                } else {
                    "write a plain number such as 1.5".to_string()
                };
                self.push(
                    "wrong-type",
                    key,
                    v.span(),
                    format!("`{key}` is a plain number (no unit), found the string \"{s}\""),
                    Some(help),
                );
                None
            }
            other => {
                self.push(
                    "wrong-type",
                    key,
                    v.span(),
                    format!("`{key}` must be a plain number, found {}", other.kind()),
                    Some("write a plain number such as 1.5".to_string()),
                );
                None
            }
        }
    }

    /// A whole number of at least `min`.
    pub(crate) fn count(&mut self, v: &Spanned<RawValue>, key: &str, min: i64) -> Option<usize> {
        match v.get_ref() {
            RawValue::Int(i) if *i >= min => usize::try_from(*i).ok(),
            RawValue::Int(i) => {
                self.push(
                    "out-of-range",
                    key,
                    v.span(),
                    format!("`{key} = {i}` must be at least {min}"),
                    None,
                );
                None
            }
            other => {
                self.push(
                    "wrong-type",
                    key,
                    v.span(),
                    format!(
                        "`{key}` must be a whole number, found {} {}",
                        other.kind(),
                        other.show()
                    ),
                    Some(format!(
                        "write a whole number of at least {min}, e.g. {key} = 10"
                    )),
                );
                None
            }
        }
    }

    /// A string.
    pub(crate) fn string(
        &mut self,
        v: &Spanned<RawValue>,
        key: &str,
        what: &str,
    ) -> Option<String> {
        match v.get_ref() {
            RawValue::Str(s) => Some(s.clone()),
            other => {
                self.push(
                    "wrong-type",
                    key,
                    v.span(),
                    format!(
                        "`{key}` must be a string, found {} {}",
                        other.kind(),
                        other.show()
                    ),
                    Some(format!("write {what}")),
                );
                None
            }
        }
    }

    /// A name: a non-empty string.
    pub(crate) fn name(&mut self, v: &Spanned<RawValue>, key: &str) -> Option<String> {
        let s = self.string(v, key, "a name in quotes, e.g. \"terminal\"")?;
        if s.trim().is_empty() {
            self.push(
                "out-of-range",
                key,
                v.span(),
                format!("`{key}` is empty"),
                Some("give a name that appears in the reports".to_string()),
            );
            return None;
        }
        Some(s.trim().to_string())
    }

    /// An array of exactly two quantities, e.g. `r = ["0 mm", "300 mm"]`.
    pub(crate) fn pair(
        &mut self,
        v: &Spanned<RawValue>,
        key: &str,
        dim: Dimension,
    ) -> Option<[f64; 2]> {
        let items = self.array_of(v, key, dim, Some(2))?;
        let mut out = [0.0; 2];
        let mut ok = true;
        for (k, item) in items.iter().enumerate() {
            match self.quantity(item, &format!("{key}[{k}]"), dim) {
                Some(x) => out[k] = x,
                None => ok = false,
            }
        }
        ok.then_some(out)
    }

    /// The items of an array, checking its length when `len` is given.
    pub(crate) fn array_of<'v>(
        &mut self,
        v: &'v Spanned<RawValue>,
        key: &str,
        dim: Dimension,
        len: Option<usize>,
    ) -> Option<&'v [Spanned<RawValue>]> {
        let example = format!("[\"{ex}\", \"{ex}\"]", ex = dim.example());
        match v.get_ref() {
            RawValue::Array(items) if len.is_none_or(|n| items.len() == n) => Some(items),
            RawValue::Array(items) => {
                self.push(
                    "wrong-length",
                    key,
                    v.span(),
                    format!(
                        "`{key}` must have {} entries, found {}",
                        len.unwrap_or(0),
                        items.len()
                    ),
                    Some(format!("write it like {key} = {example}")),
                );
                None
            }
            other => {
                self.push(
                    "wrong-type",
                    key,
                    v.span(),
                    format!(
                        "`{key}` must be an array, found {} {}",
                        other.kind(),
                        other.show()
                    ),
                    Some(format!("write it like {key} = {example}")),
                );
                None
            }
        }
    }

    /// Reports a value outside its range.
    pub(crate) fn out_of_range(
        &mut self,
        v: &Spanned<RawValue>,
        key: &str,
        message: String,
        help: Option<String>,
    ) {
        self.push("out-of-range", key, v.span(), message, help);
    }

    /// Keeps `x` only when `ok`, reporting `rule` otherwise.
    pub(crate) fn check(
        &mut self,
        x: Option<f64>,
        v: Option<&Spanned<RawValue>>,
        key: &str,
        ok: impl Fn(f64) -> bool,
        rule: &str,
    ) -> Option<f64> {
        let x = x?;
        if ok(x) {
            return Some(x);
        }
        if let Some(v) = v {
            self.out_of_range(
                v,
                key,
                format!("`{key} = {}` {rule}", v.get_ref().show()),
                None,
            );
        }
        None
    }
}
