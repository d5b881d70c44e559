//! `holdoff compare`: a design against itself, and against a sharper terminal corner.

mod common;

use common::holdoff;

fn compare(a: &str, b: &str) -> (Option<i32>, serde_json::Value) {
    let out = holdoff()
        .args(["compare", a, b, "--json", "-"])
        .output()
        .expect("runs");
    let v = serde_json::from_slice(&out.stdout)
        .unwrap_or_else(|e| panic!("not JSON ({e}): {}", String::from_utf8_lossy(&out.stderr)));
    (out.status.code(), v)
}

#[test]
fn a_design_compared_with_itself_shows_no_change() {
    let (code, v) = compare("examples/demo_750kv.toml", "examples/demo_750kv.toml");
    assert_eq!(code, Some(0));
    assert_eq!(v["any_crossed_below"], false);
    let rows = v["rows"].as_array().expect("rows");
    // The demo has rows, every one found on both sides with the same peak, margin and status,
    // and the rows with a margin show a change of zero.
    assert!(rows.len() >= 5, "{} rows", rows.len());
    let mut changes = 0;
    for r in rows {
        assert!(r["peak_before"].is_number(), "{r}");
        assert_eq!(r["peak_before"], r["peak_after"], "{r}");
        assert_eq!(r["margin_before"], r["margin_after"], "{r}");
        assert_eq!(r["status_before"], r["status_after"], "{r}");
        if let Some(c) = r["change"].as_f64() {
            assert!(c.abs() < 1e-12, "{r}");
            changes += 1;
        }
    }
    assert!(changes > 0, "no row has a margin to compare");
    assert!(v["holdoff_before_v"].is_number());
    assert_eq!(v["holdoff_before_v"], v["holdoff_after_v"]);
}

/// A smaller corner radius raises the surface field of the terminal (for a rounded edge the
/// peak field grows as the radius shrinks; docs/practice.md §1.3 hand estimates), so its margin
/// falls, and that row ranks first.
#[test]
fn a_sharper_terminal_corner_lowers_the_terminal_margin() {
    let tmp = tempfile::tempdir().expect("temp dir");
    let dir = tmp.path().to_path_buf();
    let text = std::fs::read_to_string("examples/demo_750kv.toml").unwrap();
    let sharper = text.replacen("corner_radius = \"80 mm\"", "corner_radius = \"50 mm\"", 1);
    assert_ne!(text, sharper);
    let path = dir.join("sharper.toml");
    std::fs::write(&path, sharper).unwrap();
    let (_, v) = compare("examples/demo_750kv.toml", path.to_str().unwrap());
    let first = &v["rows"][0];
    assert_eq!(first["item"], "terminal");
    assert!(first["change"].as_f64().unwrap() < -0.05, "{first}");
}
