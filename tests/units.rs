//! Quantities with units: parsing into SI and engineering formatting, table-driven.
//!
//! Conversion factors checked against NIST Special Publication 811 (2008 ed.), Appendix B.8
//! (from memory): 1 bar = 1e5 Pa, 1 atm = 101 325 Pa, 1 Torr = 101 325/760 Pa =
//! 133.322 368 Pa, 1 psi = 6894.757 Pa; and t/°C = T/K − 273.15 (BIPM SI Brochure, 9th ed.,
//! 2019; from memory). The rest are SI prefixes.

use holdoff::units::{Dimension, UnitError, format_si, parse, parse_quantity};

use Dimension::*;

#[test]
fn parses_every_unit_into_si() {
    let cases: &[(&str, Dimension, f64)] = &[
        ("750 kV", Voltage, 750e3),
        ("750kV", Voltage, 750e3),
        ("7.5e2 kV", Voltage, 750e3),
        ("7.5E+2 kV", Voltage, 750e3),
        ("-3 kV", Voltage, -3e3),
        ("+2.5 MV", Voltage, 2.5e6),
        ("0.5 V", Voltage, 0.5),
        ("  3 MV  ", Voltage, 3e6),
        (".5 kV", Voltage, 500.0),
        ("1 m", Length, 1.0),
        ("12 cm", Length, 0.12),
        ("12.5 mm", Length, 0.0125),
        ("40 um", Length, 40e-6),
        ("40 \u{b5}m", Length, 40e-6),
        ("40 \u{3bc}m", Length, 40e-6),
        ("1 V/m", Field, 1.0),
        ("3 kV/mm", Field, 3e6),
        ("30 kV/cm", Field, 3e6),
        ("3 MV/m", Field, 3e6),
        ("3 kV / mm", Field, 3e6),
        ("3000 kV/m", Field, 3e6),
        ("101325 Pa", Pressure, 101_325.0),
        ("101.325 kPa", Pressure, 101_325.0),
        ("0.101325 MPa", Pressure, 101_325.0),
        ("1.01325 bar", Pressure, 101_325.0),
        ("1013.25 mbar", Pressure, 101_325.0),
        ("760 Torr", Pressure, 101_325.0),
        ("1 Torr", Pressure, 133.322_368_421),
        ("1 atm", Pressure, 101_325.0),
        ("1 psi", Pressure, 6_894.757),
        ("125 psi", Pressure, 861_844.625),
        ("300 K", Temperature, 300.0),
        ("20 degC", Temperature, 293.15),
        ("20 \u{b0}C", Temperature, 293.15),
        ("-30 degC", Temperature, 243.15),
        ("1 F", Capacitance, 1.0),
        ("0.06 uF", Capacitance, 6e-8),
        ("0.06 \u{b5}F", Capacitance, 6e-8),
        ("10 nF", Capacitance, 1e-8),
        ("4 pF", Capacitance, 4e-12),
        ("1 Ohm", Resistance, 1.0),
        ("20 kOhm", Resistance, 2e4),
        ("800 MOhm", Resistance, 8e8),
        ("1 GOhm", Resistance, 1e9),
        ("2.4 G\u{3a9}", Resistance, 2.4e9),
        ("2 A", Current, 2.0),
        ("1.5 mA", Current, 1.5e-3),
        ("150 uA", Current, 1.5e-4),
        ("50 Hz", Frequency, 50.0),
        ("20 kHz", Frequency, 2e4),
        ("1 MHz", Frequency, 1e6),
        ("500 J", Energy, 500.0),
        ("0.77 kJ", Energy, 770.0),
        ("1 %", Ratio, 0.01),
        ("1%", Ratio, 0.01),
    ];
    for &(text, dim, want) in cases {
        let got = parse(text, dim).unwrap_or_else(|e| panic!("{text}: {e}"));
        let err = (got - want).abs() / want.abs();
        assert!(err < 1e-12, "{text}: got {got}, want {want}");
    }
}

#[test]
fn parse_quantity_reports_the_dimension() {
    assert_eq!(parse_quantity("3 bar").unwrap().1, Pressure);
    assert_eq!(parse_quantity("10 kV/cm").unwrap().1, Field);
    assert_eq!(parse_quantity("1 %").unwrap().1, Ratio);
}

#[test]
fn errors_are_typed_and_say_what_is_accepted() {
    // (text, expected dimension, code, fragment of message or help)
    let cases: &[(&str, Dimension, &str, &str)] = &[
        ("750", Voltage, "missing-unit", "V, kV, MV"),
        ("12.5", Length, "missing-unit", "m, cm, mm, um"),
        ("3 bar", Length, "wrong-dimension", "is a pressure"),
        ("3 bar", Length, "wrong-dimension", "a length is expected"),
        ("20 degC", Voltage, "wrong-dimension", "is a temperature"),
        ("3 furlongs", Length, "unknown-unit", "furlongs"),
        ("3 KV", Voltage, "unknown-unit", "did you mean \"kV\""),
        ("6.5 barg", Pressure, "unknown-unit", "absolute"),
        (
            "abc mm",
            Length,
            "not-a-number",
            "does not start with a number",
        ),
        ("", Length, "not-a-number", "empty"),
        ("mm", Length, "not-a-number", "mm"),
        ("1e400 V", Voltage, "not-a-number", "1e400"),
        ("- kV", Voltage, "not-a-number", "kV"),
    ];
    for &(text, dim, code, fragment) in cases {
        let e: UnitError = parse(text, dim).expect_err(text);
        assert_eq!(e.code(), code, "{text}: {e}");
        let all = format!("{e} / {}", e.help());
        assert!(all.contains(fragment), "{text}: {all}");
        assert_eq!(e.expected(), dim);
    }
}

#[test]
fn formats_in_engineering_units_with_four_figures() {
    let cases: &[(f64, Dimension, &str)] = &[
        (750e3, Voltage, "750.0 kV"),
        (27.8e3, Voltage, "27.80 kV"),
        (3e6, Voltage, "3.000 MV"),
        (-3e3, Voltage, "-3.000 kV"),
        (0.0, Voltage, "0 V"),
        (12.3456, Voltage, "12.35 V"),
        // Rounding edges: a carry into the next decade or the next unit.
        (9.9996, Voltage, "10.00 V"),
        (999.5, Voltage, "999.5 V"),
        (999.96, Voltage, "1.000 kV"),
        (999.94e3, Voltage, "999.9 kV"),
        (999.96e3, Voltage, "1.000 MV"),
        (-999.96e3, Voltage, "-1.000 MV"),
        (0.0125, Length, "12.50 mm"),
        (2.4, Length, "2400 mm"),
        (9.9996, Length, "10.00 m"),
        (10.0, Length, "10.00 m"),
        (40e-6, Length, "40.00 \u{b5}m"),
        (0.000_999_96, Length, "1.000 mm"),
        (0.0, Length, "0 mm"),
        (6.2e6, Field, "6.200 kV/mm"),
        (26.7e6, Field, "26.70 kV/mm"),
        (0.62e6, Field, "0.6200 kV/mm"),
        (5e4, Field, "50.00 kV/m"),
        (99_996.0, Field, "0.1000 kV/mm"),
        (500.0, Field, "500.0 V/m"),
        (3e5, Pressure, "3.000 bar"),
        (101_325.0, Pressure, "1.013 bar"),
        (500.0, Pressure, "5.000 mbar"),
        (5.0, Pressure, "5.000 Pa"),
        (293.15, Temperature, "20.00 degC"),
        (243.15, Temperature, "-30.00 degC"),
        (273.15, Temperature, "0.00 degC"),
        (1273.15, Temperature, "1000 degC"),
        (6.8e-9, Capacitance, "6.800 nF"),
        (22.25e-12, Capacitance, "22.25 pF"),
        (0.85e-9, Capacitance, "850.0 pF"),
        (999.96e-12, Capacitance, "1.000 nF"),
        (6e-8, Capacitance, "60.00 nF"),
        (1e-6, Capacitance, "1.000 \u{b5}F"),
        (1e9, Resistance, "1.000 GOhm"),
        (8e8, Resistance, "800.0 MOhm"),
        (2e4, Resistance, "20.00 kOhm"),
        (1.5e-3, Current, "1.500 mA"),
        (29.6e-6, Current, "29.60 \u{b5}A"),
        (5e4, Frequency, "50.00 kHz"),
        (150.0, Frequency, "150.0 Hz"),
        (770.0, Energy, "770.0 J"),
        (1e3, Energy, "1.000 kJ"),
        (0.5, Energy, "500.0 mJ"),
        (0.01, Ratio, "1.000 %"),
    ];
    for &(value, dim, want) in cases {
        assert_eq!(format_si(value, dim), want, "{value} as {dim:?}");
    }
}

#[test]
fn formatted_values_parse_back_within_rounding() {
    let values = [
        (750e3, Voltage),
        (0.0125, Length),
        (6.2e6, Field),
        (3e5, Pressure),
        (293.15, Temperature),
        (6.8e-9, Capacitance),
        (1.2e9, Resistance),
        (29.6e-6, Current),
        (5e4, Frequency),
        (770.0, Energy),
        (0.01, Ratio),
    ];
    for (v, dim) in values {
        let s = format_si(v, dim);
        let back = parse(&s, dim).unwrap_or_else(|e| panic!("{s}: {e}"));
        assert!((back - v).abs() <= 5e-4 * v.abs(), "{s}");
    }
}
