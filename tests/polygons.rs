//! Polygon outlines against the same bodies built from primitives and against a closed form,
//! and sharp conductor corners reported as field singularities instead of numbers.

mod common;

use common::holdoff;
use holdoff::model::{Point, Shape};

/// A solid dome on the axis as a filleted polygon and as a `rounded_cylinder`: the same body
/// (the corners on the axis are not corners of the solid of revolution, so the polygon must not
/// round them), hence the same signed distance everywhere.
#[test]
fn filleted_polygon_on_the_axis_is_the_rounded_cylinder() {
    let poly = Shape::polygon(
        vec![
            Point::new(0.0, 0.4),
            Point::new(0.15, 0.4),
            Point::new(0.15, 0.6),
            Point::new(0.0, 0.6),
        ],
        0.02,
    );
    let rc = Shape::RoundedRect {
        r0: 0.0,
        r1: 0.15,
        z0: 0.4,
        z1: 0.6,
        corner_radius: 0.02,
    };
    let worst = common::largest_distance_difference(&poly, &rc);
    assert!(worst < 1e-12, "largest distance difference {worst} m");
    assert!(poly.sharp_corners().is_empty());
}

fn design(shape: &str) -> String {
    format!(
        r#"title = "dome"
[tank]
inner_radius = "400 mm"
length = "1000 mm"
[gas]
species = "SF6"
pressure = "3 bar"
temperature = "20 degC"
[terminal]
voltage = "300 kV"
[[conductor]]
name = "dome"
{shape}
potential = "terminal"
"#
    )
}

fn run_json(toml: &str) -> (i32, serde_json::Value, String) {
    let dir = tempfile::tempdir().expect("tempdir");
    let path = dir.path().join("d.toml");
    std::fs::write(&path, toml).expect("write");
    let out = holdoff()
        .arg("check")
        .arg(&path)
        .args(["--json", "-"])
        .output()
        .expect("run");
    let stdout = String::from_utf8_lossy(&out.stdout).to_string();
    let v: serde_json::Value = serde_json::from_str(&stdout)
        .unwrap_or_else(|e| panic!("{e}: {stdout} {}", String::from_utf8_lossy(&out.stderr)));
    (out.status.code().unwrap_or(-1), v, stdout)
}

fn peak(v: &serde_json::Value) -> f64 {
    v["conductors"][0]["peak_surface_field_v_per_m"]
        .as_f64()
        .expect("peak")
}

/// The same dome through the whole pipeline as a polygon with a fillet and as a rounded
/// cylinder: the peak surface fields agree within 0.5 % (in fact to rounding, since the two
/// outlines are the same body).
#[test]
fn polygon_dome_peak_equals_rounded_cylinder() {
    let (_, rc, _) = run_json(&design(
        "shape = \"rounded_cylinder\"\nr = [\"0 mm\", \"150 mm\"]\nz = [\"400 mm\", \"600 mm\"]\ncorner_radius = \"20 mm\"",
    ));
    let (_, poly, _) = run_json(&design(
        "shape = \"polygon\"\npoints = [[\"0 mm\", \"400 mm\"], [\"150 mm\", \"400 mm\"], [\"150 mm\", \"600 mm\"], [\"0 mm\", \"600 mm\"]]\nfillet = \"20 mm\"",
    ));
    let (a, b) = (peak(&rc), peak(&poly));
    assert!(
        (a - b).abs() / a < 0.005,
        "rounded cylinder {a} V/m, polygon {b} V/m"
    );
}

/// A sharp conductor corner has no finite peak field: the run says so, gives no margin for the
/// conductor and no hold-off voltage, and exits 1.
#[test]
fn sharp_polygon_corner_is_a_singularity() {
    let (code, v, text) = run_json(&design(
        "shape = \"polygon\"\npoints = [[\"0 mm\", \"400 mm\"], [\"150 mm\", \"400 mm\"], [\"150 mm\", \"600 mm\"], [\"0 mm\", \"600 mm\"]]",
    ));
    assert_eq!(code, 1, "{text}");
    assert!(text.contains("FIELD SINGULARITY"), "{text}");
    assert!(
        v["holdoff_voltage_v"].is_null(),
        "{}",
        v["holdoff_voltage_v"]
    );
    for row in v["margins"].as_array().expect("margins") {
        if row["item"] == "dome" {
            assert!(row["margin"].is_null(), "{row}");
        }
    }
}

/// A sphere drawn as a polygon of many short edges (no fillet: each vertex turns by under 5°,
/// a faceted curve, not a sharp edge) converges to the concentric-spheres closed form
/// E(a) = V b/(a(b − a)) (classic electrostatics; Kuffel, Zaengl & Kuffel, High Voltage
/// Engineering: Fundamentals, 2nd ed., ch. 4) as the edges get shorter.
#[test]
fn many_edged_polygon_converges_to_the_sphere() {
    let (a, b, v): (f64, f64, f64) = (0.1, 0.2, 1e6);
    let exact = v * b / (a * (b - a));
    let mut errors = Vec::new();
    for edges in [48usize, 96, 192] {
        let pts: Vec<Point> = (0..=edges)
            .map(|k| {
                let t =
                    -std::f64::consts::FRAC_PI_2 + std::f64::consts::PI * k as f64 / edges as f64;
                // The poles exactly on the axis (r = 0), as a drawing office would put them.
                let r = if k == 0 || k == edges {
                    0.0
                } else {
                    a * t.cos()
                };
                Point::new(r, b + a * t.sin())
            })
            .collect();
        let shape = Shape::polygon(pts, 0.0);
        assert!(shape.sharp_corners().is_empty());
        let e = common::peak_in_spherical_tank(shape, b, v);
        errors.push((e - exact).abs() / exact);
    }
    println!("faceted sphere errors (48, 96, 192 edges): {errors:?}");
    // Each vertex is a weak singularity (field ∝ ρ^(−δ/(π+δ)) for a turn δ), so the peak at the
    // vertices exceeds the smooth sphere's by an amount that falls about linearly with the edge
    // length: at least 1.6× per halving, and under 2.5 % at 192 edges.
    for w in errors.windows(2) {
        assert!(w[1] * 1.6 < w[0], "{errors:?}");
    }
    assert!(errors[2] < 0.025, "{errors:?}");
}

/// A negative terminal holds off the same magnitude as a positive one when every criterion
/// that limits is polarity-independent (the gas criteria here; the field is linear in the
/// voltage, so only its sign changes), and the hold-off voltage is a magnitude.
#[test]
fn negative_terminal_holds_off_the_same_magnitude() {
    let shape = "shape = \"rounded_cylinder\"\nr = [\"0 mm\", \"150 mm\"]\nz = [\"400 mm\", \"600 mm\"]\ncorner_radius = \"20 mm\"";
    let (cp, pos, _) = run_json(&design(shape));
    let (cn, neg, text) = run_json(&design(shape).replace("\"300 kV\"", "\"-300 kV\""));
    assert_eq!(cp, cn, "{text}");
    let (hp, hn) = (
        pos["holdoff_voltage_v"]
            .as_f64()
            .expect("positive hold-off"),
        neg["holdoff_voltage_v"]
            .as_f64()
            .expect("negative hold-off"),
    );
    assert!(hn > 0.0 && (hp - hn).abs() / hp < 1e-9, "{hp} vs {hn}");
    assert!((peak(&pos) - peak(&neg)).abs() / peak(&pos) < 1e-9);
}
