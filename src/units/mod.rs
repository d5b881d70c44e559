//! Quantities with units: parsing "750 kV", "3 bar", "20 degC", "1 GOhm" into SI values, and
//! formatting SI values back in the unit an engineer would write.
//!
//! Input: the text of a quantity and the dimension the caller expects. Output: an `f64` in SI
//! units (metres, volts, volts per metre, pascals, kelvins, farads, ohms, amperes, hertz,
//! joules, or a plain fraction for percentages), or a typed [`UnitError`] that says what was
//! wrong and which units are accepted. Everything inside holdoff is SI; this module is the only
//! place where engineering units appear, so the conversion factors live here once.
//!
//! Conversion factors (exact unless noted): 1 bar = 1e5 Pa, 1 atm = 101 325 Pa, 1 Torr =
//! 101 325/760 Pa, 1 psi = 6894.757 Pa (rounded to 7 figures), as listed in NIST Special
//! Publication 811 (2008 ed.), Appendix B.8 (from memory); t/°C = T/K − 273.15 (BIPM, The
//! International System of Units, 9th ed., 2019; from memory).

use std::fmt;

mod format;

pub use format::{format_si, from_one, kv_three_significant};

/// What a quantity measures.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Dimension {
    Length,
    Voltage,
    /// Electric field strength, V/m.
    Field,
    /// Absolute pressure, Pa.
    Pressure,
    /// Thermodynamic temperature, K.
    Temperature,
    Capacitance,
    Resistance,
    Current,
    Frequency,
    Energy,
    /// Power, W (resistor dissipation ratings).
    Power,
    /// A dimensionless fraction written as a percentage ("1 %" = 0.01).
    Ratio,
}

impl Dimension {
    /// All dimensions, in a fixed order.
    pub const ALL: [Dimension; 12] = [
        Dimension::Length,
        Dimension::Voltage,
        Dimension::Field,
        Dimension::Pressure,
        Dimension::Temperature,
        Dimension::Capacitance,
        Dimension::Resistance,
        Dimension::Current,
        Dimension::Frequency,
        Dimension::Energy,
        Dimension::Power,
        Dimension::Ratio,
    ];

    /// The dimension's name with its article, for messages: "a length", "an electric field".
    pub fn noun(self) -> &'static str {
        match self {
            Dimension::Length => "a length",
            Dimension::Voltage => "a voltage",
            Dimension::Field => "an electric field",
            Dimension::Pressure => "a pressure",
            Dimension::Temperature => "a temperature",
            Dimension::Capacitance => "a capacitance",
            Dimension::Resistance => "a resistance",
            Dimension::Current => "a current",
            Dimension::Frequency => "a frequency",
            Dimension::Energy => "an energy",
            Dimension::Power => "a power",
            Dimension::Ratio => "a percentage",
        }
    }

    /// The units accepted for this dimension, in their canonical ASCII spelling (the micro,
    /// degree and ohm signs are accepted too: "µm", "°C", "MΩ").
    pub fn accepted_units(self) -> Vec<&'static str> {
        UNITS
            .iter()
            .filter(|u| u.dimension == self && u.canonical)
            .map(|u| u.symbol)
            .collect()
    }

    /// The accepted units as one comma-separated list, for messages.
    pub fn accepted_list(self) -> String {
        self.accepted_units().join(", ")
    }

    /// A typical value, for messages that show how to write one.
    pub fn example(self) -> &'static str {
        match self {
            Dimension::Length => "12 mm",
            Dimension::Voltage => "750 kV",
            Dimension::Field => "10 kV/mm",
            Dimension::Pressure => "3 bar",
            Dimension::Temperature => "20 degC",
            Dimension::Capacitance => "10 nF",
            Dimension::Resistance => "1 GOhm",
            Dimension::Current => "1.5 mA",
            Dimension::Frequency => "20 kHz",
            Dimension::Energy => "500 J",
            Dimension::Power => "1 W",
            Dimension::Ratio => "1 %",
        }
    }
}

impl fmt::Display for Dimension {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let noun = self.noun();
        let bare = noun.split_once(' ').map_or(noun, |(_, rest)| rest);
        f.write_str(bare)
    }
}

/// One unit symbol: `si = value * factor + offset`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Unit {
    pub symbol: &'static str,
    pub dimension: Dimension,
    pub factor: f64,
    pub offset: f64,
    /// Listed in messages (the alternative spellings are accepted but not listed).
    pub canonical: bool,
}

const fn unit(symbol: &'static str, dimension: Dimension, factor: f64) -> Unit {
    Unit {
        symbol,
        dimension,
        factor,
        offset: 0.0,
        canonical: true,
    }
}

const fn alias(symbol: &'static str, dimension: Dimension, factor: f64) -> Unit {
    Unit {
        symbol,
        dimension,
        factor,
        offset: 0.0,
        canonical: false,
    }
}

/// Pascals per standard atmosphere (definition).
pub const PA_PER_ATM: f64 = 101_325.0;
/// Pascals per torr (definition: 1/760 atm).
pub const PA_PER_TORR: f64 = 101_325.0 / 760.0;
/// Pascals per pound-force per square inch (NIST SP 811, Appendix B.8, 7 figures; from
/// memory).
pub const PA_PER_PSI: f64 = 6_894.757;
/// Kelvins at 0 °C (definition).
pub const ZERO_CELSIUS_K: f64 = 273.15;

use Dimension as D;

/// Every accepted unit. Symbols are case-sensitive ("mm" is not "Mm"); a case-insensitive
/// near miss is offered as a suggestion.
static UNITS: &[Unit] = &[
    unit("m", D::Length, 1.0),
    unit("cm", D::Length, 1e-2),
    unit("mm", D::Length, 1e-3),
    unit("um", D::Length, 1e-6),
    alias("\u{b5}m", D::Length, 1e-6),
    alias("\u{3bc}m", D::Length, 1e-6),
    unit("V", D::Voltage, 1.0),
    unit("kV", D::Voltage, 1e3),
    unit("MV", D::Voltage, 1e6),
    unit("V/m", D::Field, 1.0),
    unit("kV/m", D::Field, 1e3),
    unit("MV/m", D::Field, 1e6),
    unit("V/mm", D::Field, 1e3),
    unit("kV/mm", D::Field, 1e6),
    unit("kV/cm", D::Field, 1e5),
    unit("Pa", D::Pressure, 1.0),
    unit("kPa", D::Pressure, 1e3),
    unit("MPa", D::Pressure, 1e6),
    unit("mbar", D::Pressure, 1e2),
    unit("bar", D::Pressure, 1e5),
    unit("Torr", D::Pressure, PA_PER_TORR),
    alias("torr", D::Pressure, PA_PER_TORR),
    unit("atm", D::Pressure, PA_PER_ATM),
    unit("psi", D::Pressure, PA_PER_PSI),
    unit("K", D::Temperature, 1.0),
    Unit {
        symbol: "degC",
        dimension: D::Temperature,
        factor: 1.0,
        offset: ZERO_CELSIUS_K,
        canonical: true,
    },
    Unit {
        symbol: "\u{b0}C",
        dimension: D::Temperature,
        factor: 1.0,
        offset: ZERO_CELSIUS_K,
        canonical: false,
    },
    unit("F", D::Capacitance, 1.0),
    unit("uF", D::Capacitance, 1e-6),
    alias("\u{b5}F", D::Capacitance, 1e-6),
    alias("\u{3bc}F", D::Capacitance, 1e-6),
    unit("nF", D::Capacitance, 1e-9),
    unit("pF", D::Capacitance, 1e-12),
    unit("Ohm", D::Resistance, 1.0),
    alias("ohm", D::Resistance, 1.0),
    alias("\u{3a9}", D::Resistance, 1.0),
    unit("kOhm", D::Resistance, 1e3),
    alias("kohm", D::Resistance, 1e3),
    alias("k\u{3a9}", D::Resistance, 1e3),
    unit("MOhm", D::Resistance, 1e6),
    alias("Mohm", D::Resistance, 1e6),
    alias("M\u{3a9}", D::Resistance, 1e6),
    unit("GOhm", D::Resistance, 1e9),
    alias("Gohm", D::Resistance, 1e9),
    alias("G\u{3a9}", D::Resistance, 1e9),
    unit("TOhm", D::Resistance, 1e12),
    alias("T\u{3a9}", D::Resistance, 1e12),
    unit("A", D::Current, 1.0),
    unit("mA", D::Current, 1e-3),
    unit("uA", D::Current, 1e-6),
    alias("\u{b5}A", D::Current, 1e-6),
    alias("\u{3bc}A", D::Current, 1e-6),
    unit("nA", D::Current, 1e-9),
    unit("Hz", D::Frequency, 1.0),
    unit("kHz", D::Frequency, 1e3),
    unit("MHz", D::Frequency, 1e6),
    unit("mJ", D::Energy, 1e-3),
    unit("J", D::Energy, 1.0),
    unit("kJ", D::Energy, 1e3),
    unit("MJ", D::Energy, 1e6),
    unit("mW", D::Power, 1e-3),
    unit("W", D::Power, 1.0),
    unit("kW", D::Power, 1e3),
    unit("%", D::Ratio, 1e-2),
];

/// Looks up a unit symbol exactly (case-sensitive).
pub fn lookup_unit(symbol: &str) -> Option<&'static Unit> {
    UNITS.iter().find(|u| u.symbol == symbol)
}

/// Why a quantity could not be read.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum UnitError {
    #[error("empty value where {} is expected", expected.noun())]
    Empty { expected: Dimension },
    #[error("\"{text}\" does not start with a number; {} is expected", expected.noun())]
    NotANumber { text: String, expected: Dimension },
    #[error("\"{text}\" has no unit; {} needs one", expected.noun())]
    MissingUnit { text: String, expected: Dimension },
    #[error("\"{text}\": unknown unit \"{unit}\" for {}", expected.noun())]
    UnknownUnit {
        text: String,
        unit: String,
        expected: Dimension,
        /// A known unit of the expected dimension that differs only in letter case.
        suggestion: Option<&'static str>,
    },
    #[error("\"{text}\" is {}, but {} is expected", found.noun(), expected.noun())]
    WrongDimension {
        text: String,
        unit: String,
        found: Dimension,
        expected: Dimension,
    },
}

impl UnitError {
    /// A stable code for the error class.
    pub fn code(&self) -> &'static str {
        match self {
            UnitError::Empty { .. } | UnitError::NotANumber { .. } => "not-a-number",
            UnitError::MissingUnit { .. } => "missing-unit",
            UnitError::UnknownUnit { .. } => "unknown-unit",
            UnitError::WrongDimension { .. } => "wrong-dimension",
        }
    }

    /// The dimension that was expected.
    pub fn expected(&self) -> Dimension {
        match self {
            UnitError::Empty { expected }
            | UnitError::NotANumber { expected, .. }
            | UnitError::MissingUnit { expected, .. }
            | UnitError::UnknownUnit { expected, .. }
            | UnitError::WrongDimension { expected, .. } => *expected,
        }
    }

    /// What to write instead.
    pub fn help(&self) -> String {
        let dim = self.expected();
        let accepted = format!("accepted units for {}: {}", dim.noun(), dim.accepted_list());
        match self {
            UnitError::MissingUnit { text, .. } => {
                format!(
                    "write the number with a unit, e.g. \"{} {}\"; {accepted}",
                    text.trim(),
                    {
                        let ex = dim.example();
                        ex.split_once(' ').map_or(ex, |(_, u)| u)
                    }
                )
            }
            UnitError::UnknownUnit {
                unit,
                suggestion: Some(s),
                ..
            } => format!(
                "did you mean \"{s}\" instead of \"{unit}\"? Units are case-sensitive; {accepted}"
            ),
            UnitError::UnknownUnit { unit, .. } if is_gauge(unit) => format!(
                "pressures are absolute: convert the gauge reading by adding the atmospheric pressure, e.g. \"6.5 bar\"; {accepted}"
            ),
            _ => format!("write it like \"{}\"; {accepted}", dim.example()),
        }
    }
}

fn is_gauge(unit: &str) -> bool {
    matches!(unit, "barg" | "bar(g)" | "psig" | "bar g" | "kPag")
}

/// Splits "7.5e2 kV" into the number text and the unit text (whitespace removed from the
/// unit). The number is an optional sign, digits with an optional decimal point, and an
/// optional exponent.
fn split_number(text: &str) -> (&str, String) {
    let bytes = text.as_bytes();
    let mut i = 0;
    if i < bytes.len() && (bytes[i] == b'+' || bytes[i] == b'-') {
        i += 1;
    }
    let digits_start = i;
    while i < bytes.len() && bytes[i].is_ascii_digit() {
        i += 1;
    }
    if i < bytes.len() && bytes[i] == b'.' {
        i += 1;
        while i < bytes.len() && bytes[i].is_ascii_digit() {
            i += 1;
        }
    }
    let has_digit = text[digits_start..i].bytes().any(|b| b.is_ascii_digit());
    if !has_digit {
        return ("", text.to_string());
    }
    // An exponent only when 'e' is followed by digits (so "3 eV" style text is not eaten).
    if i < bytes.len() && (bytes[i] == b'e' || bytes[i] == b'E') {
        let mut j = i + 1;
        if j < bytes.len() && (bytes[j] == b'+' || bytes[j] == b'-') {
            j += 1;
        }
        let exp_digits = j;
        while j < bytes.len() && bytes[j].is_ascii_digit() {
            j += 1;
        }
        if j > exp_digits {
            i = j;
        }
    }
    let unit: String = text[i..].chars().filter(|c| !c.is_whitespace()).collect();
    (&text[..i], unit)
}

/// Parses a quantity of any dimension: the SI value and the dimension its unit implies.
pub fn parse_quantity(text: &str) -> Result<(f64, Dimension), UnitError> {
    parse_inner(text, None)
}

/// Parses a quantity that must have the dimension `expected`, returning its SI value.
///
/// Signs are accepted ("-3 kV"); whether a negative value makes sense is for the caller.
pub fn parse(text: &str, expected: Dimension) -> Result<f64, UnitError> {
    parse_inner(text, Some(expected)).map(|(v, _)| v)
}

fn parse_inner(text: &str, expected: Option<Dimension>) -> Result<(f64, Dimension), UnitError> {
    // Messages need some dimension; "any" parsing reports against a length when nothing fits.
    let exp_dim = expected.unwrap_or(Dimension::Length);
    let trimmed = text.trim();
    if trimmed.is_empty() {
        return Err(UnitError::Empty { expected: exp_dim });
    }
    let (number, unit_text) = split_number(trimmed);
    if number.is_empty() {
        return Err(UnitError::NotANumber {
            text: trimmed.to_string(),
            expected: exp_dim,
        });
    }
    let value: f64 = number.parse().map_err(|_| UnitError::NotANumber {
        text: trimmed.to_string(),
        expected: exp_dim,
    })?;
    if !value.is_finite() {
        return Err(UnitError::NotANumber {
            text: trimmed.to_string(),
            expected: exp_dim,
        });
    }
    if unit_text.is_empty() {
        return Err(UnitError::MissingUnit {
            text: trimmed.to_string(),
            expected: exp_dim,
        });
    }
    let Some(u) = lookup_unit(&unit_text) else {
        let suggestion = UNITS
            .iter()
            .filter(|u| expected.is_none_or(|d| u.dimension == d))
            .find(|u| u.symbol.eq_ignore_ascii_case(&unit_text))
            .map(|u| u.symbol);
        return Err(UnitError::UnknownUnit {
            text: trimmed.to_string(),
            unit: unit_text,
            expected: exp_dim,
            suggestion,
        });
    };
    if let Some(d) = expected
        && u.dimension != d
    {
        return Err(UnitError::WrongDimension {
            text: trimmed.to_string(),
            unit: unit_text,
            found: u.dimension,
            expected: d,
        });
    }
    Ok((value * u.factor + u.offset, u.dimension))
}

#[cfg(test)]
mod tests {
    use super::format::display_units;
    use super::*;

    #[test]
    fn every_dimension_has_canonical_units_and_display_units() {
        for d in Dimension::ALL {
            assert!(!d.accepted_units().is_empty(), "{d:?}");
            assert!(!display_units(d).is_empty(), "{d:?}");
            // The example parses back to the same dimension.
            assert!(parse(d.example(), d).is_ok(), "{d:?}");
        }
    }

    #[test]
    fn split_keeps_exponent_only_with_digits() {
        assert_eq!(split_number("7.5e2 kV"), ("7.5e2", "kV".to_string()));
        assert_eq!(split_number("750kV"), ("750", "kV".to_string()));
        assert_eq!(split_number("-3 kV"), ("-3", "kV".to_string()));
        assert_eq!(split_number("kV"), ("", "kV".to_string()));
        assert_eq!(split_number("1 kV / mm"), ("1", "kV/mm".to_string()));
    }
}
