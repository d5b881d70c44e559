//! SI values written in the unit an engineer would write: the display units of each
//! dimension, four significant figures, kilovolts to three.

use super::*;

/// A display unit: its symbol, its size in SI, and the smallest magnitude (SI) shown in it.
pub(super) struct ShowUnit {
    symbol: &'static str,
    factor: f64,
    from: f64,
}

const fn show(symbol: &'static str, factor: f64, from: f64) -> ShowUnit {
    ShowUnit {
        symbol,
        factor,
        from,
    }
}

/// The units an engineer reads, smallest first, with the magnitude where each takes over.
pub(super) fn display_units(dim: Dimension) -> &'static [ShowUnit] {
    const LENGTH: &[ShowUnit] = &[
        show("\u{b5}m", 1e-6, 0.0),
        show("mm", 1e-3, 1e-3),
        show("m", 1.0, 10.0),
    ];
    const VOLTAGE: &[ShowUnit] = &[
        show("V", 1.0, 0.0),
        show("kV", 1e3, 1e3),
        show("MV", 1e6, 1e6),
    ];
    const FIELD: &[ShowUnit] = &[
        show("V/m", 1.0, 0.0),
        show("kV/m", 1e3, 1e3),
        show("kV/mm", 1e6, 1e5),
    ];
    const PRESSURE: &[ShowUnit] = &[
        show("Pa", 1.0, 0.0),
        show("mbar", 1e2, 10.0),
        show("bar", 1e5, 1e4),
    ];
    const TEMPERATURE: &[ShowUnit] = &[show("degC", 1.0, 0.0)];
    const CAPACITANCE: &[ShowUnit] = &[
        show("pF", 1e-12, 0.0),
        show("nF", 1e-9, 1e-9),
        show("\u{b5}F", 1e-6, 1e-6),
        show("F", 1.0, 1.0),
    ];
    const RESISTANCE: &[ShowUnit] = &[
        show("Ohm", 1.0, 0.0),
        show("kOhm", 1e3, 1e3),
        show("MOhm", 1e6, 1e6),
        show("GOhm", 1e9, 1e9),
        show("TOhm", 1e12, 1e12),
    ];
    const CURRENT: &[ShowUnit] = &[
        show("nA", 1e-9, 0.0),
        show("\u{b5}A", 1e-6, 1e-6),
        show("mA", 1e-3, 1e-3),
        show("A", 1.0, 1.0),
    ];
    const FREQUENCY: &[ShowUnit] = &[
        show("Hz", 1.0, 0.0),
        show("kHz", 1e3, 1e3),
        show("MHz", 1e6, 1e6),
    ];
    const ENERGY: &[ShowUnit] = &[
        show("mJ", 1e-3, 0.0),
        show("J", 1.0, 1.0),
        show("kJ", 1e3, 1e3),
        show("MJ", 1e6, 1e6),
    ];
    const POWER: &[ShowUnit] = &[
        show("mW", 1e-3, 0.0),
        show("W", 1.0, 1.0),
        show("kW", 1e3, 1e3),
    ];
    const RATIO: &[ShowUnit] = &[show("%", 1e-2, 0.0)];
    match dim {
        // Drawing dimensions stay in millimetres up to 10 m.
        D::Length => LENGTH,
        D::Voltage => VOLTAGE,
        // Fields of practical interest in kV/mm (= MV/m) from 0.1 kV/mm up.
        D::Field => FIELD,
        D::Pressure => PRESSURE,
        D::Temperature => TEMPERATURE,
        D::Capacitance => CAPACITANCE,
        D::Resistance => RESISTANCE,
        D::Current => CURRENT,
        D::Frequency => FREQUENCY,
        D::Energy => ENERGY,
        D::Power => POWER,
        D::Ratio => RATIO,
    }
}

/// The unit a zero is shown in.
fn zero_unit(dim: Dimension) -> &'static str {
    match dim {
        D::Length => "mm",
        D::Voltage => "V",
        D::Field => "kV/mm",
        D::Pressure => "bar",
        D::Temperature => "degC",
        D::Capacitance => "pF",
        D::Resistance => "Ohm",
        D::Current => "A",
        D::Frequency => "Hz",
        D::Energy => "J",
        D::Power => "W",
        D::Ratio => "%",
    }
}

/// Decimal exponent of `x` after rounding to 4 significant figures.
fn rounded_exponent(x: f64) -> i32 {
    let s = format!("{:.3e}", x.abs());
    s.split_once('e')
        .and_then(|(_, e)| e.parse().ok())
        .unwrap_or(0)
}

/// Formats `x` with 4 significant figures in fixed notation (scientific below 1e-3).
fn four_figures(x: f64) -> String {
    let exp = rounded_exponent(x);
    if exp < -3 {
        return format!("{x:.3e}");
    }
    let decimals = (3 - exp).max(0) as usize;
    format!("{x:.decimals$}")
}

/// Formats an SI value in the unit an engineer would write, with 4 significant figures:
/// `format_si(750e3, Dimension::Voltage)` is "750.0 kV", `format_si(6.2e6, Dimension::Field)`
/// is "6.200 kV/mm". Temperatures are shown in degC to 0.01 K (an interval scale, where
/// significant figures of the Celsius number mean little).
/// A voltage in kV to three significant figures ("1670 kV", "851 kV", "95.3 kV"): the precision
/// the breakdown criteria carry (their fits are good to a few per cent), for hold-off voltages.
pub fn kv_three_significant(volts: f64) -> String {
    let kv = volts / 1e3;
    if !kv.is_finite() || kv == 0.0 {
        return format!("{kv} kV");
    }
    let magnitude = kv.abs().log10().floor() as i32;
    let decimals = 2 - magnitude;
    if decimals >= 0 {
        format!("{kv:.*} kV", decimals as usize)
    } else {
        let step = 10f64.powi(-decimals);
        format!("{:.0} kV", (kv / step).round() * step)
    }
}

pub fn format_si(value: f64, dim: Dimension) -> String {
    if !value.is_finite() {
        return format!("{value} {}", zero_unit(dim));
    }
    if dim == D::Temperature {
        let c = value - ZERO_CELSIUS_K;
        let exp = rounded_exponent(c);
        let decimals = (3 - exp).clamp(0, 2) as usize;
        let mut s = format!("{c:.decimals$}");
        if s.starts_with('-') && s[1..].chars().all(|ch| ch == '0' || ch == '.') {
            s.remove(0);
        }
        return format!("{s} degC");
    }
    if value == 0.0 {
        return format!("0 {}", zero_unit(dim));
    }
    let units = display_units(dim);
    let mag = value.abs();
    let mut k = units.iter().rposition(|u| u.from <= mag).unwrap_or(0);
    // Rounding may carry the value into the next unit (999.96 kV shows as 1.000 MV).
    while k + 1 < units.len() {
        let in_unit = mag / units[k].factor;
        let exp = rounded_exponent(in_unit);
        let s = format!("{:.3e}", in_unit);
        let mantissa: f64 = s
            .split_once('e')
            .and_then(|(m, _)| m.parse().ok())
            .unwrap_or(0.0);
        let rounded_si = mantissa * 10f64.powi(exp) * units[k].factor;
        if rounded_si >= units[k + 1].from * (1.0 - 1e-12) {
            k += 1;
        } else {
            break;
        }
    }
    let u = &units[k];
    format!("{} {}", four_figures(value / u.factor), u.symbol)
}
/// Writes a 0-based index as its number from 1, as columns, gaps and strings are numbered in
/// every output (docs/glossary.md): `#[serde(serialize_with = "crate::units::from_one")]`.
pub fn from_one<S: serde::Serializer>(index: &usize, s: S) -> Result<S::Ok, S::Error> {
    s.serialize_u64(*index as u64 + 1)
}
