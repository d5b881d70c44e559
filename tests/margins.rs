//! Margins through the binary: the demo's rows of each medium ranked, its exit code by the
//! worst status, and the table with hold-off voltages and the cautions. The margin checks
//! against outside references (uniform-gap breakdown, Peek's corona onset, the
//! concentric-spheres field, the scaling laws of electrostatics) are in
//! src/verification/margins.rs.

mod common;

fn run_holdoff(args: &[&str]) -> (std::process::ExitStatus, serde_json::Value) {
    let out = common::holdoff().args(args).output().expect("runs");
    let text = String::from_utf8_lossy(&out.stdout);
    let v = serde_json::from_str(&text).unwrap_or_else(|e| panic!("not JSON ({e}):\n{text}"));
    (out.status, v)
}

#[test]
fn demo_ranks_rows_of_each_medium_and_exits_by_its_worst_status() {
    let (status, v) = run_holdoff(&["demo", "--no-grid-study", "--json", "-"]);
    let rows = v["margins"].as_array().expect("margins");
    for medium in [
        "gas",
        "vacuum",
        "insulator_gas_side",
        "insulator_vacuum_side",
    ] {
        assert!(
            rows.iter().any(|r| r["medium"] == medium),
            "no {medium} row"
        );
    }
    let mut last = 0.0;
    for (k, r) in rows.iter().enumerate() {
        assert_eq!(r["rank"].as_u64(), Some(k as u64 + 1));
        for key in ["item", "criterion", "source", "status", "kind"] {
            assert!(r[key].is_string(), "{key}");
        }
        assert_eq!(r["at_m"].as_array().map(Vec::len), Some(2));
        if let Some(m) = r["margin"].as_f64() {
            assert!(m >= last, "rank {} not in order", k + 1);
            last = m;
        }
    }
    let any_fail = rows.iter().any(|r| r["status"] == "fail");
    assert_eq!(status.code(), Some(if any_fail { 1 } else { 0 }));
    assert!(v["holdoff_voltage_v"].as_f64().unwrap() > 0.0);
    assert!(
        v["holdoff_voltage_ideal_v"].as_f64().unwrap() >= v["holdoff_voltage_v"].as_f64().unwrap()
    );
    for key in ["holdoff_limiting", "holdoff_ideal_limiting"] {
        assert!(v[key]["item"].is_string() && v[key]["criterion"].is_string());
    }
    assert!(!v["cautions"].as_array().unwrap().is_empty());

    // The corona variant fails, and says so in its exit code.
    let (status, v) = run_holdoff(&[
        "check",
        "examples/demo_corona_wire.toml",
        "--no-grid-study",
        "--json",
        "-",
    ]);
    assert_eq!(status.code(), Some(1));
    assert_eq!(v["worst_status"], "fail");
}

#[test]
fn table_shows_margins_holdoff_and_ends_with_cautions() {
    let out = common::holdoff()
        .args(["check", "examples/demo_corona_wire.toml", "--no-grid-study"])
        .output()
        .expect("runs");
    assert_eq!(out.status.code(), Some(1));
    let text = String::from_utf8_lossy(&out.stdout);
    for s in [
        "rank",
        "margin",
        "FAIL",
        "Hold-off voltage",
        "Peek corona onset",
    ] {
        assert!(text.contains(s), "missing {s}");
    }
    let cautions = text.find("Cautions").expect("cautions");
    assert!(text.find("Hold-off voltage").unwrap() < cautions);
    assert!(text.trim_end().ends_with("take precedence."));
}
