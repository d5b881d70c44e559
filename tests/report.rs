//! `holdoff report`: the review note's sections, its numbers against `check --json`, and
//! reproducibility.

mod common;

use common::holdoff;

fn note(dir: &std::path::Path, name: &str) -> String {
    let path = dir.join(name);
    let out = holdoff()
        .args(["report", "examples/demo_750kv.toml", "--out"])
        .arg(&path)
        .output()
        .expect("runs");
    assert_demo_note_written(&out);
    std::fs::read_to_string(&path).expect("note written")
}

/// The demo's note is written, and the run exits 1: its bare spark transient (column
/// floating, before the protective gaps conduct) is below the design factor, as `holdoff
/// faults` finds.
fn assert_demo_note_written(out: &std::process::Output) {
    assert_eq!(
        out.status.code(),
        Some(1),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
}

#[test]
fn note_has_its_sections_and_the_numbers_of_check() {
    let tmp = tempfile::tempdir().expect("temp dir");
    let dir = tmp.path().to_path_buf();
    let a = note(&dir, "a.md");
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
        .args(["check", "examples/demo_750kv.toml", "--json", "-"])
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
    let b = note(&dir, "b.md");
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
    let path = dir.join("note.html");
    let out = holdoff()
        .args(["report", "examples/demo_750kv.toml", "--out"])
        .arg(&path)
        .output()
        .expect("runs");
    assert_demo_note_written(&out);
    let html = std::fs::read_to_string(&path).unwrap();
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
    let text = std::fs::read_to_string("examples/demo_750kv.toml").unwrap();
    let model = holdoff::design::from_str(&text, "demo").expect("demo");
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

/// Without the fault replay the demo's note rests on its DC margins alone, which all pass.
#[test]
fn note_without_faults_exits_0_on_the_passing_demo() {
    let tmp = tempfile::tempdir().expect("temp dir");
    let path = tmp.path().join("note.md");
    let out = holdoff()
        .args(["report", "examples/demo_750kv.toml", "--no-faults", "--out"])
        .arg(&path)
        .output()
        .expect("runs");
    common::assert_success(&out);
    let note = std::fs::read_to_string(&path).expect("note written");
    assert!(!note.contains("## 5b. Grading faults"));
}
