//! `holdoff sweep`: gas-pressure sweeps of the demo column and the least safe pressure.

use holdoff::sweep::{evaluate_at, least_value, range, set_value, sweep};

mod common;

fn demo() -> String {
    std::fs::read_to_string("examples/demo_750kv.toml").expect("demo file")
}

/// On the right-hand branch of the Paschen curve (pd far above its minimum, as in any tank)
/// gas strength grows with density (docs/references.md §1–§3), so the worst gas margin grows
/// monotonically with pressure.
#[test]
fn worst_gas_margin_is_monotone_in_pressure() {
    let text = demo();
    let span = range("2 bar", "4 bar").expect("range");
    let points = sweep(&text, "demo", "gas.pressure", span, 5).expect("sweep");
    for w in points.windows(2) {
        let (a, b) = (
            w[0].worst_gas_margin.unwrap(),
            w[1].worst_gas_margin.unwrap(),
        );
        assert!(b > a, "{a} then {b}");
    }
}

/// The bisected least pressure meets the design factor; 5 % below it does not.
#[test]
fn least_pressure_meets_the_design_factor_and_five_percent_less_does_not() {
    let text = demo();
    let span = range("1 bar", "4 bar").expect("range");
    let least = least_value(&text, "demo", "gas.pressure", span, 1e-3)
        .expect("bisection")
        .expect("some pressure in range meets the design factor");
    let at = evaluate_at(&text, "demo", "gas.pressure", least.value_si, span.2).expect("review");
    assert!(at.meets_design_factor);
    let below =
        evaluate_at(&text, "demo", "gas.pressure", 0.95 * least.value_si, span.2).expect("review");
    assert!(!below.meets_design_factor);
}

#[test]
fn parameter_paths_select_tables_and_say_what_is_wrong() {
    let text = demo();
    let edited = set_value(&text, "conductor[terminal].corner_radius", "0.05 m").expect("path");
    assert!(edited.contains("0.05 m"));
    let edited = set_value(&text, "column[1].minor_radius", "0.012 m").expect("path");
    assert!(edited.contains("0.012 m"));
    let err = set_value(&text, "conductor[nowhere].corner_radius", "1 m").unwrap_err();
    assert!(err.to_string().contains("nowhere"));
    let err = set_value(&text, "gas.presure", "1 bar").unwrap_err();
    assert!(err.to_string().contains("presure"));
    let err = set_value(&text, "conductor.corner_radius", "1 m").unwrap_err();
    assert!(err.to_string().contains("conductor[NAME]"));
    assert!(range("2 bar", "4 mm").is_err());
}

#[test]
fn sweep_command_draws_its_plot() {
    let tmp = tempfile::tempdir().expect("temp dir");
    let dir = tmp.path().to_path_buf();
    let svg = dir.join("sweep.svg");
    let out = common::holdoff()
        .args([
            "sweep",
            "examples/demo_750kv.toml",
            "--vary",
            "gas.pressure",
        ])
        .args(["--from", "2 bar", "--to", "4 bar", "--steps", "3", "--plot"])
        .arg(&svg)
        .output()
        .expect("runs");
    common::assert_success(&out);
    let text = std::fs::read_to_string(&svg).expect("plot written");
    assert!(text.contains("<svg") && text.contains("design factor"));
}

/// Margins that do not grow with the parameter: with passing and failing alternating along
/// the sampled values, the least value is the lowest crossing and the result says so (no
/// review is run here: the ends are among the samples and the bracket is already narrow).
#[test]
fn alternating_pass_and_fail_is_reported() {
    let point = |v: f64, pass: bool| holdoff::sweep::SweepPoint {
        value_si: v,
        value: format!("{v} m"),
        worst_margin: Some(if pass { 1.6 } else { 1.4 }),
        worst_item: Some("terminal".to_string()),
        worst_gas_margin: None,
        holdoff_voltage_v: None,
        meets_design_factor: pass,
        unbuildable: None,
    };
    let sampled = vec![
        point(0.04, false),
        point(0.06, true),
        point(0.08, false),
        point(0.10, true),
        point(0.12, true),
    ];
    let span = (0.04, 0.12, holdoff::units::Dimension::Length);
    let least = holdoff::sweep::least_value_sampled("", "x", "p", span, 1.0, &sampled)
        .expect("no review needed")
        .expect("a value passes");
    assert_eq!(least.crossings, 3);
    assert_eq!(least.value_si, 0.06);
    assert_eq!(least.evaluations, 0);
    assert!(
        least
            .note
            .as_deref()
            .is_some_and(|n| n.contains("lowest crossing"))
    );
}

/// A pressure sweep solves the field once and evaluates only the margins at each value; the
/// points equal a full review at each value (the second, independent way to the same number:
/// the field of a design does not depend on its gas, which enters only the breakdown limits).
#[test]
fn pressure_sweep_with_one_solve_equals_a_full_review_at_each_value() {
    let text = demo();
    let span = range("1.5 bar", "4 bar").expect("range");
    let points = sweep(&text, "demo", "gas.pressure", span, 3).expect("sweep");
    for p in &points {
        let full = evaluate_at(&text, "demo", "gas.pressure", p.value_si, span.2).expect("review");
        assert_eq!(p.worst_item, full.worst_item);
        assert_eq!(p.meets_design_factor, full.meets_design_factor);
        let (a, b) = (p.worst_margin.unwrap(), full.worst_margin.unwrap());
        assert!((a - b).abs() <= 1e-12 * b.abs(), "{a} against {b}");
        let (a, b) = (
            p.holdoff_voltage_v.unwrap(),
            full.holdoff_voltage_v.unwrap(),
        );
        assert!((a - b).abs() <= 1e-9 * b.abs(), "{a} against {b}");
    }
}

/// A terminal-voltage sweep solves the field once and scales it (the field equation is linear
/// and the demo's grading divides the terminal voltage linearly); a point equals a full review
/// at its voltage, a second and independent way to the same numbers. The stored energy goes
/// as the square of the voltage, W = ½CV² (any electrostatics text).
#[test]
fn voltage_sweep_by_scaling_equals_a_full_review_at_a_swept_value() {
    let text = demo();
    let span = range("-600 kV", "-800 kV").expect("range");
    let points = sweep(&text, "demo", "terminal.voltage", span, 4).expect("sweep");
    let p = &points[1];
    let full = evaluate_at(&text, "demo", "terminal.voltage", p.value_si, span.2).expect("review");
    assert_eq!(p.worst_item, full.worst_item);
    assert_eq!(p.meets_design_factor, full.meets_design_factor);
    let (a, b) = (p.worst_margin.unwrap(), full.worst_margin.unwrap());
    assert!((a - b).abs() <= 1e-9 * b.abs(), "{a} against {b}");
    let (a, b) = (p.worst_gas_margin.unwrap(), full.worst_gas_margin.unwrap());
    assert!((a - b).abs() <= 1e-9 * b.abs(), "{a} against {b}");

    // The scaled analysis itself: potentials ×k, energy ×k², peaks ×k.
    let model = holdoff::design::from_str(&text, "demo").expect("demo loads");
    let fine = holdoff::review::review(&model, &Default::default(), false)
        .expect("review")
        .fine;
    let k = 0.75;
    let scaled = fine.scaled(&model, k).expect("scaled");
    assert!((scaled.energy_j - k * k * fine.energy_j).abs() <= 1e-12 * fine.energy_j);
    for (a, b) in scaled.peaks.iter().zip(&fine.peaks) {
        let (a, b) = (a.peak_surface_field_v_per_m, b.peak_surface_field_v_per_m);
        assert!((a - k * b).abs() <= 1e-9 * b.abs(), "{a} against {k} x {b}");
    }
}

/// A pitch at which neighbouring rings touch makes that one value unbuildable: the sweep
/// marks it and goes on with the others, and the diagnostics point at the pitch's line of
/// the original file and give the value in millimetres.
#[test]
fn an_unbuildable_value_is_marked_and_the_sweep_goes_on() {
    let text = demo();
    let span = range("20 mm", "45 mm").expect("range");
    let points = sweep(&text, "demo", "column[column].pitch", span, 2).expect("sweep");
    let why = points[0].unbuildable.as_deref().expect("20 mm rings touch");
    assert!(!points[0].meets_design_factor && points[0].worst_margin.is_none());
    assert!(points[1].unbuildable.is_none() && points[1].worst_margin.is_some());
    let line = 1 + text
        .lines()
        .position(|l| l.trim_start().starts_with("pitch ="))
        .expect("the demo sets a pitch");
    assert!(why.contains(&format!("demo, line {line},")), "{why}");
    assert!(why.contains("= 20 mm"), "{why}");
    assert!(!why.contains("e-2"), "{why}");
}

#[test]
fn swept_values_are_written_in_the_unit_an_engineer_reads() {
    use holdoff::sweep::value_text;
    use holdoff::units::{Dimension, parse};
    for (v, dim, shown) in [
        (0.02, Dimension::Length, "20 mm"),
        (-628_571.428_571_428_6, Dimension::Voltage, "-628.571429 kV"),
        (3.5e5, Dimension::Pressure, "3.5 bar"),
        (293.15, Dimension::Temperature, "20 degC"),
    ] {
        let text = value_text(v, dim);
        assert_eq!(text, shown);
        let back = parse(&text, dim).expect("the design reads it back");
        assert!(
            (back - v).abs() <= 1e-8 * v.abs(),
            "{text}: {back} against {v}"
        );
    }
}

/// A sweep of the demo's negative terminal voltage takes values with a leading minus, and its
/// worst margin at -800 kV is the one `check` prints for the demo within the accuracy target
/// (0.5 %: the sweep reviews without the grid study, so its mesh is not refined to the target):
/// margin ∝ 1/|V| for a linear field, so at -600 kV it is 800/600 × the margin at -800 kV (the
/// scaling of Laplace's equation, a hand check).
#[test]
fn a_negative_voltage_sweep_matches_check_and_the_linear_scaling() {
    let out = common::holdoff()
        .args([
            "sweep",
            "examples/demo_750kv.toml",
            "--vary",
            "terminal.voltage",
        ])
        .args([
            "--from", "-600 kV", "--to", "-800 kV", "--steps", "2", "--json", "-",
        ])
        .output()
        .expect("runs");
    common::assert_success(&out);
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).expect("json");
    let points = v["points"].as_array().expect("points");
    let worst = |k: usize| points[k]["worst_margin"].as_f64().expect("margin");
    let check = common::holdoff()
        .args(["demo", "--json", "-"])
        .output()
        .expect("runs");
    common::assert_success(&check);
    let c: serde_json::Value = serde_json::from_slice(&check.stdout).expect("json");
    let check_worst = c["margins"][0]["margin"].as_f64().expect("worst row");
    assert!(
        (worst(1) / check_worst - 1.0).abs() < 0.005,
        "sweep {} against check {check_worst}",
        worst(1)
    );
    assert!(
        (worst(0) / worst(1) - 800.0 / 600.0).abs() < 1e-6,
        "{} / {}",
        worst(0),
        worst(1)
    );
}
