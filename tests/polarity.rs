//! Polarity through the binary: the built-in demo at a negative terminal. Which surfaces are
//! cathodes (the field of a sphere inside a grounded sphere, Gauss's law, docs/references.md
//! §10) is checked in src/verification/polarity.rs.

mod common;

/// The built-in demo is an electron machine at a negative terminal: the multiplier's output is
/// stated in the terminal's polarity, the hold-off as a magnitude, the grading chain current as
/// a magnitude with its direction. The magnitudes are the positive machine's.
#[test]
fn the_demo_runs_at_a_negative_terminal() {
    let out = common::holdoff().arg("demo").output().expect("runs");
    assert!(out.status.success());
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("terminal -800.00 kV"), "{text}");
    assert!(
        text.contains("the multiplier gives -788 kV at no load"),
        "{text}"
    );
    assert!(
        text.contains("a magnitude, the terminal is negative"),
        "{text}"
    );
    assert!(
        text.contains("chain current 29.64 µA (from the grounded end up to the negative end)"),
        "{text}"
    );
    // 800 kV over 27 gaps of 1 GOhm: 29.63 µA through the resistors, plus the insulator
    // leakage (4.4e-4 of it): Ohm's law, a hand check.
    let hand: f64 = 800e3 / 27.0 / 1e9 * (1.0 + 4.4e-4);
    assert!((hand * 1e6 - 29.64).abs() < 0.01, "hand {hand}");
}
