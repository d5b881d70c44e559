//! End-to-end runs of the `holdoff` binary: exit codes, JSON keys, file outputs, errors.

mod common;

use common::holdoff;

fn json_of(out: &std::process::Output) -> serde_json::Value {
    let text = String::from_utf8_lossy(&out.stdout);
    serde_json::from_str(&text).unwrap_or_else(|e| panic!("not JSON ({e}):\n{text}"))
}

/// The JSON keys of the field solve that the README and the design contract promise.
fn assert_report_keys(v: &serde_json::Value) {
    for key in [
        "tool",
        "design",
        "mesh",
        "solver",
        "conductors",
        "probes",
        "cautions",
    ] {
        assert!(v.get(key).is_some(), "missing section {key}");
    }
    assert_eq!(v["tool"]["name"], "holdoff");
    assert_eq!(v["design"]["sha256"].as_str().map(str::len), Some(64));
    for key in ["unknowns", "iterations", "relative_residual"] {
        assert!(v["solver"][key].is_number(), "solver.{key}");
    }
    for key in ["assembly_s", "multigrid_setup_s", "solve_s"] {
        assert!(v["solver"]["time"][key].is_number(), "solver.time.{key}");
    }
    assert!(v["solver"]["relative_residual"].as_f64().unwrap() <= 1e-10);
    let conductors = v["conductors"].as_array().expect("conductors array");
    assert!(!conductors.is_empty());
    for c in conductors {
        assert!(c["name"].is_string());
        assert!(c["potential_v"].is_number());
        let e = c["peak_surface_field_v_per_m"].as_f64().expect("peak");
        assert!(e.is_finite() && e > 0.0);
        assert_eq!(c["at_m"].as_array().map(Vec::len), Some(2));
    }
    for p in v["probes"].as_array().expect("probes array") {
        assert_eq!(p["at_m"].as_array().map(Vec::len), Some(2));
        assert!(p["potential_v"].is_number());
        assert_eq!(p["field_v_per_m"].as_array().map(Vec::len), Some(2));
    }
    assert!(!v["cautions"].as_array().expect("cautions").is_empty());
}

#[test]
fn demo_runs_and_writes_json_to_stdout() {
    let out = holdoff()
        .args(["demo", "--json", "-"])
        .output()
        .expect("runs");
    common::assert_success(&out);
    let v = json_of(&out);
    assert_report_keys(&v);
    // The terminal of the demo (an electron machine) is at -800 kV.
    let term = v["conductors"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["name"] == "terminal")
        .expect("terminal row");
    assert_eq!(term["potential_v"].as_f64(), Some(-800e3));
    assert!(term["numerical_error_v_per_m"].is_number());
}

#[test]
fn demo_table_ends_with_cautions() {
    let out = holdoff().arg("demo").output().expect("runs");
    assert!(out.status.success());
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("peak E kV/mm"));
    assert!(text.contains("Cautions"));
    assert!(text.contains("not a certification"));
    assert!(text.contains("licensed high-voltage safety practice"));
}

#[test]
fn check_tandem_writes_a_json_file() {
    let tmp = tempfile::tempdir().expect("temp dir");
    let dir = tmp.path().to_path_buf();
    let path = dir.join("tandem.json");
    let out = holdoff()
        .args([
            "check",
            "examples/tandem_3mv.toml",
            "--no-grid-study",
            "--json",
        ])
        .arg(&path)
        .output()
        .expect("runs");
    common::assert_success(&out);
    let text = std::fs::read_to_string(&path).expect("JSON file written");
    let v: serde_json::Value = serde_json::from_str(&text).expect("valid JSON");
    assert_report_keys(&v);
    assert!(v["grid_study"].is_null());
}

#[test]
fn expand_lists_generated_primitives() {
    let out = holdoff()
        .args([
            "check",
            "examples/demo_750kv.toml",
            "--expand",
            "--no-grid-study",
        ])
        .output()
        .expect("runs");
    assert!(out.status.success());
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("column electrode 26"));
    assert!(text.contains("tube electrode"));
}

#[test]
fn bad_design_exits_with_code_2_and_names_the_key() {
    let tmp = tempfile::tempdir().expect("temp dir");
    let dir = tmp.path().to_path_buf();
    let path = dir.join("bad.toml");
    std::fs::write(
        &path,
        "title = \"bad\"\n[tank]\ninner_radius = 550\nlength = \"2 m\"\n[terminal]\nvoltage = \"100 kV\"\n",
    )
    .unwrap();
    let out = holdoff().arg("check").arg(&path).output().expect("runs");
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("inner_radius"), "{err}");
    assert!(err.contains(", line 3,"), "line number missing: {err}");
}

#[test]
fn missing_file_exits_with_code_2() {
    let out = holdoff()
        .args(["check", "no/such/design.toml"])
        .output()
        .expect("runs");
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("cannot read design file"));
}

#[test]
fn failed_run_leaves_an_existing_json_file_untouched() {
    let tmp = tempfile::tempdir().expect("temp dir");
    let dir = tmp.path().to_path_buf();
    let bad = dir.join("bad.toml");
    std::fs::write(&bad, "title = 3\n").unwrap();
    let json = dir.join("out.json");
    std::fs::write(&json, "previous").unwrap();
    let out = holdoff()
        .arg("check")
        .arg(&bad)
        .arg("--json")
        .arg(&json)
        .output()
        .expect("runs");
    assert_eq!(out.status.code(), Some(2));
    assert_eq!(std::fs::read_to_string(&json).unwrap(), "previous");
}
