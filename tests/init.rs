//! `holdoff init`: the template design it writes is read and reviewed by `check`, and an
//! existing file is never overwritten without `--force`.

mod common;

use common::holdoff;

fn template() -> String {
    let out = holdoff().arg("init").output().expect("runs");
    common::assert_success(&out);
    String::from_utf8(out.stdout).expect("UTF-8 template")
}

/// Writes the template with `holdoff init FILE`, then runs `command FILE --json -` on it.
fn on_the_template(command: &str) -> std::process::Output {
    let tmp = tempfile::tempdir().expect("temp dir");
    let file = tmp.path().join("start.toml");
    common::assert_success(&holdoff().arg("init").arg(&file).output().expect("runs"));
    holdoff()
        .arg(command)
        .arg(&file)
        .args(["--json", "-"])
        .output()
        .expect("runs")
}

#[test]
fn the_template_is_a_valid_design() {
    let text = template();
    let model = holdoff::design::from_str(&text, "template.toml")
        .unwrap_or_else(|e| panic!("the template does not validate: {e:?}"));
    // Two direct conductors and the five generated tori.
    assert_eq!(model.conductors.len(), 7);
    assert_eq!(model.columns.len(), 1);
    assert_eq!(model.columns[0].electrodes.len(), 5);
    assert!(model.multiplier.is_some());
    assert!(model.gas.is_some());
    assert_eq!(model.probes.len(), 1);
}

#[test]
fn check_reviews_the_template() {
    let out = on_the_template("check");
    let code = out.status.code();
    assert!(
        matches!(code, Some(0 | 1)),
        "check exited {code:?}:\n{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).expect("JSON report");
    // Second construction of the electrode potentials: five equal resistor gaps plus the
    // two end gaps make six equal resistors in series, so electrode k sits at k/6 of the
    // 200 kV terminal (series voltage divider, Kirchhoff's and Ohm's laws). The insulator
    // leakage in parallel differs a little between the longer end gaps and the others
    // (about 1e-4 of the gap current), hence the 1e-3 tolerance.
    let conductors = v["conductors"].as_array().expect("conductors");
    for k in 1..=5 {
        let name = format!("column electrode {k}");
        let c = conductors
            .iter()
            .find(|c| c["name"] == name.as_str())
            .unwrap_or_else(|| panic!("{name} missing"));
        let volts = c["potential_v"].as_f64().expect("potential_v");
        let expected = 200e3 * k as f64 / 6.0;
        assert!(
            (volts - expected).abs() <= 1e-3 * expected,
            "{name}: {volts} V, expected {expected} V"
        );
    }
}

#[test]
fn an_existing_file_is_kept_unless_forced() {
    let tmp = tempfile::tempdir().expect("temp dir");
    let file = tmp.path().join("mine.toml");
    std::fs::write(&file, "# my own design\n").unwrap();
    let out = holdoff().arg("init").arg(&file).output().expect("runs");
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("already exists"), "{err}");
    assert!(err.contains("--force"), "{err}");
    assert_eq!(std::fs::read_to_string(&file).unwrap(), "# my own design\n");

    let out = holdoff()
        .arg("init")
        .arg(&file)
        .arg("--force")
        .output()
        .expect("runs");
    common::assert_success(&out);
    assert_eq!(std::fs::read_to_string(&file).unwrap(), template());
    // Nothing but the design file is left behind (the write goes through a renamed
    // temporary file).
    let names: Vec<_> = std::fs::read_dir(tmp.path()).unwrap().flatten().collect();
    assert_eq!(names.len(), 1);
}

#[test]
fn a_directory_is_refused() {
    let tmp = tempfile::tempdir().expect("temp dir");
    let out = holdoff()
        .arg("init")
        .arg(tmp.path())
        .output()
        .expect("runs");
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("is a directory"));
}

#[test]
fn the_template_stack_delivers_the_terminal_voltage() {
    let out = on_the_template("ladder");
    common::assert_success(&out);
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).expect("JSON");
    // Ideal no-load output of an n-stage cascade: 2 n V_m (docs/references.md §8), here
    // 2 x 4 x 25.5 kV.
    let ideal = v["closed_form"]["ideal_no_load_v"].as_f64().expect("ideal");
    assert!((ideal - 204e3).abs() < 1e-6 * 204e3, "{ideal}");
    // The simulated stack with its 5 pF node strays and 0.5 mA load gives the template's
    // 200 kV terminal within 1 % (the template is consistent with itself).
    let mean = v["output_at_load_v"].as_f64().expect("output_at_load_v");
    assert!((mean - 200e3).abs() < 0.01 * 200e3, "{mean}");
    assert!(mean < ideal);
}
