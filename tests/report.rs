//! `holdoff report`: the review note's sections, its numbers against `check --json`, and
//! reproducibility, on a small invented column with a multiplier, grading resistors and
//! protective gaps (every section of the note, in well under a second per note).

mod common;

use common::holdoff;
use std::path::{Path, PathBuf};

/// A small invented machine: the common four-electrode column in SF6 at 200 kV, its
/// resistors rated, protective gaps firing at 50 kV ± 10 % (a spark drives the gaps past their
/// band), and a four-stage symmetric multiplier. Written to `dir`.
fn small_design(dir: &Path) -> PathBuf {
    let text = common::small_column(
        "200 kV",
        "",
        r#"electrodes = 4
z_first = "210 mm"
pitch = "60 mm"
grading = { resistor = "1 GOhm", tolerance = "1 %", strings = 1, rating = "50 kV", power_rating = "2 W" }
protective_gap = { firing = "50 kV", band = "10 %" }"#,
    ) + r#"
[multiplier]
topology = "symmetric"
stages = 4
stage_capacitance = "2 nF"
drive_frequency = "20 kHz"
drive_peak = "25.5 kV"
load_current = "0.5 mA"
stray_capacitance = "5 pF"
"#;
    let path = dir.join("small.toml");
    std::fs::write(&path, text).expect("design written");
    path
}

/// Writes the note of `design` to `dir/name` and returns it with the run's exit code.
fn note(design: &Path, dir: &Path, name: &str) -> (Option<i32>, String) {
    let path = dir.join(name);
    let out = holdoff()
        .arg("report")
        .arg(design)
        .arg("--out")
        .arg(&path)
        .output()
        .expect("runs");
    let text = std::fs::read_to_string(&path)
        .unwrap_or_else(|_| panic!("no note: {}", String::from_utf8_lossy(&out.stderr)));
    (out.status.code(), text)
}

/// The note's exit code is the fault replay's: 1 when a fault scenario falls below the
/// design factor or overstresses a resistor, as `holdoff faults` finds on the same design.
fn assert_exit_code_of_faults(design: &Path, code: Option<i32>) {
    let faults = holdoff().arg("faults").arg(design).output().expect("runs");
    assert_eq!(code, faults.status.code());
    assert!(matches!(code, Some(0 | 1)), "{code:?}");
}

#[test]
fn note_has_its_sections_and_the_numbers_of_check() {
    let tmp = tempfile::tempdir().expect("temp dir");
    let dir = tmp.path().to_path_buf();
    let design = small_design(&dir);
    let (code, a) = note(&design, &dir, "a.md");
    assert_exit_code_of_faults(&design, code);
    for section in [
        "## 1. Scope and ratings",
        "## 2. What was modelled",
        "## 3. Field solution",
        "## 4. Margins, worst first",
        "## 5. Multiplier stack",
        "## 5b. Grading faults and the spark transient",
        "## 6. Assumptions",
        "## 7. Sources of the criteria used",
        "## 8. Cautions",
        "## 9. Sign-off",
    ] {
        assert!(a.contains(section), "missing {section}");
    }
    assert!(a.contains("not a certification"));
    // The fault section carries the spark transient with and without the protective gaps,
    // and the repetitive firing of a gap over an open resistor.
    assert!(
        a.contains("Spark transient: worst margin"),
        "transient line"
    );
    assert!(a.contains("Repetitive firing:"), "repetitive firing line");
    // The same numbers as check --json.
    let out = holdoff()
        .arg("check")
        .arg(&design)
        .args(["--json", "-"])
        .output()
        .expect("runs");
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).expect("JSON");
    let holdoff_text =
        holdoff::report::kv_three_significant(v["holdoff_voltage_v"].as_f64().unwrap());
    assert!(
        a.contains(&format!("Hold-off voltage: {holdoff_text}")),
        "hold-off"
    );
    assert!(a.contains(v["design"]["sha256"].as_str().unwrap()));
    let first = &v["margins"][0];
    assert!(a.contains(&format!("| 1 | {} |", first["item"].as_str().unwrap())));
    assert!(a.contains(&format!("{:.2}", first["margin"].as_f64().unwrap())));
    // Reproducible: the same design gives the same note.
    let (_, b) = note(&design, &dir, "b.md");
    assert_eq!(a, b);
}

#[test]
fn note_must_be_html_or_markdown() {
    let out = holdoff()
        .args(["report", "examples/demo_750kv.toml", "--out", "notes.docx"])
        .output()
        .expect("runs");
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains(".md"));
}

#[test]
fn html_note_inlines_five_figures() {
    let tmp = tempfile::tempdir().expect("temp dir");
    let dir = tmp.path().to_path_buf();
    let design = small_design(&dir);
    let (code, html) = note(&design, &dir, "note.html");
    assert_exit_code_of_faults(&design, code);
    assert!(html.starts_with("<!DOCTYPE html>"));
    assert!(html.contains("<meta charset=\"utf-8\">"));
    assert_eq!(html.matches("<figure id=").count(), 5);
    assert_eq!(html.matches("<svg").count(), 5);
    // The field map and the zoom around the rank-1 hotspot, each with its colour bar in kV/mm;
    // the map draws every conductor of the model from its outline.
    assert_eq!(html.matches("class=\"colour-bar\"").count(), 2);
    assert_eq!(html.matches("|E| kV/mm").count(), 2);
    assert!(html.contains("Zoom around the worst hotspot"));
    assert!(html.contains("equipotential-label"));
    let text = std::fs::read_to_string(&design).unwrap();
    let model = holdoff::design::from_str(&text, "small").expect("small design");
    let map = &html[html.find("<figure id=\"figure-1\">").unwrap()..];
    let map = &map[..map.find("</figure>").unwrap()];
    assert_eq!(
        map.matches("class=\"conductor\"").count(),
        model.conductors.len()
    );
    assert_eq!(
        map.matches("class=\"dielectric\"").count(),
        model.dielectrics.len()
    );
    assert!(html.contains("<h2>9. Sign-off</h2>"));
    // Self-contained: no external resources.
    assert!(!html.contains("src=\"http") && !html.contains("href=\"http"));
}

/// Without the fault replay the note rests on the DC margins alone, which all pass here.
#[test]
fn note_without_faults_exits_0_when_the_margins_pass() {
    let tmp = tempfile::tempdir().expect("temp dir");
    let design = small_design(tmp.path());
    let path = tmp.path().join("note.md");
    let out = holdoff()
        .arg("report")
        .arg(&design)
        .args(["--no-faults", "--out"])
        .arg(&path)
        .output()
        .expect("runs");
    common::assert_success(&out);
    let note = std::fs::read_to_string(&path).expect("note written");
    assert!(!note.contains("## 5b. Grading faults"));
}
