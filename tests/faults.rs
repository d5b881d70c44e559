//! `holdoff faults` through the binary: its JSON keys, its exit code on an exceeded rating and
//! its table of the worst rows. The replay's checks (the hyperbolic ladder solution, the
//! superposition basis against a direct solve, reruns with the same seed) are in
//! src/verification/faults.rs.

mod common;

/// `holdoff faults FILE --json -` writes the scenarios with the documented keys and the
/// capacitance matrix; a malformed `--short-section` is an error naming what is accepted.
#[test]
fn faults_command_writes_json() {
    let tmp = tempfile::tempdir().expect("temp dir");
    let dir = tmp.path().to_path_buf();
    let file = dir.join("small.toml");
    std::fs::write(&file, common::small_fault_column()).expect("write design");
    let out = common::holdoff()
        .args([
            "faults",
            file.to_str().expect("path"),
            "--json",
            "-",
            "--samples",
            "4",
        ])
        .output()
        .expect("runs");
    common::assert_success(&out);
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).expect("JSON");
    let scenarios = v["scenarios"].as_array().expect("scenarios");
    assert!(!scenarios.is_empty());
    let cautions = v["cautions"].as_array().expect("cautions");
    assert!(
        cautions
            .iter()
            .any(|c| c["topic"] == "status of these results")
    );
    for s in scenarios {
        for key in [
            "name",
            "kind",
            "resistor",
            "gap_voltages_v",
            "worst_margin",
            "worst_item",
            "protective_gap_fired",
            "protective_gaps_conducting",
            "repetitive_firing",
        ] {
            assert!(s.get(key).is_some(), "missing {key}");
        }
    }
    let open = scenarios
        .iter()
        .find(|s| s["kind"] == "open")
        .expect("open scenario");
    assert!(open["resistor"]["index"].is_u64());
    let c = v["capacitance_matrix_f"].as_array().expect("matrix");
    assert_eq!(
        c.len(),
        v["electrodes"].as_array().expect("electrodes").len()
    );

    let bad = common::holdoff()
        .args([
            "faults",
            file.to_str().expect("path"),
            "--short-section",
            "1:5-2",
        ])
        .output()
        .expect("runs");
    assert!(!bad.status.success());
    let err = String::from_utf8_lossy(&bad.stderr);
    assert!(err.contains("COLUMN:FIRST-LAST"), "{err}");
}

/// `holdoff faults` exits 1 when a scenario falls below the design factor or a resistor exceeds
/// its rating, and says which in its result line (the exit-code contract of `check`).
#[test]
fn faults_command_exits_1_on_an_exceeded_rating() {
    let tmp = tempfile::tempdir().expect("temp dir");
    let file = tmp.path().join("rated.toml");
    let text = common::small_fault_column().replace(
        r#"grading = { resistor = "1 GOhm", tolerance = "1 %", strings = 1 }"#,
        r#"grading = { resistor = "1 GOhm", tolerance = "1 %", strings = 1, power_rating = "1 W" }"#,
    );
    std::fs::write(&file, text).expect("write design");
    let out = common::holdoff()
        .args(["faults", file.to_str().expect("path"), "--samples", "2"])
        .output()
        .expect("runs");
    assert_eq!(out.status.code(), Some(1));
    let stdout = String::from_utf8_lossy(&out.stdout);
    assert!(stdout.contains("OVER RATING"), "{stdout}");
    assert!(
        stdout.contains("with a resistor over its rating"),
        "{stdout}"
    );
}

/// `--rows N` lists the worst N scenarios and says how many more there are; `--rows all`
/// lists every one (the small column: nominal, 5 open, 5 short, 5 tolerance worst cases, the
/// worst of 4 draws and the transients).
#[test]
fn faults_table_lists_the_worst_rows() {
    let tmp = tempfile::tempdir().expect("temp dir");
    let file = tmp.path().join("small.toml");
    std::fs::write(&file, common::small_fault_column()).expect("write design");
    let run = |rows: &str| {
        let out = common::holdoff()
            .args(["faults", file.to_str().expect("path"), "--samples", "4"])
            .args(["--rows", rows])
            .output()
            .expect("runs");
        assert!(out.status.code().is_some_and(|c| c < 2), "{out:?}");
        String::from_utf8_lossy(&out.stdout).into_owned()
    };
    let ranked = |text: &str| {
        text.lines()
            // Table rows start with the cell padding, then the rank.
            .filter(|l| {
                l.starts_with(' ') && l.trim_start().starts_with(|c: char| c.is_ascii_digit())
            })
            .count()
    };
    let short = run("3");
    assert_eq!(ranked(&short), 3);
    let all = run("all");
    let n = ranked(&all);
    assert!(n >= 18, "{n}");
    assert!(
        short.contains(&format!("… and {} more scenario(s)", n - 3)),
        "{short}"
    );
    assert!(!all.contains("more scenario(s)"));
    // The run ends with the high-voltage cautions and the deferral to local codes.
    assert!(short.contains("\nCautions\n- lethal voltage:"), "{short}");
    assert!(short.contains("take precedence"));
}
