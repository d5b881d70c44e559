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
        // The peak under the unit of the row: a field, or a gap voltage.
        let peak = r["peak_before"].as_object().expect("peak object");
        assert!(
            peak.len() == 1 && peak.values().all(|x| x.is_number()),
            "{r}"
        );
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

/// The invented corona test set at 10 kV: the thin wire ring governs (its streamer integral is
/// the worst row) and hardly moves when the electrode shrinks from 60 mm to 40 mm, while the
/// electrode's rows lose a fifth of their margin (a sphere's surface field goes as V/r in
/// this geometry; docs/practice.md §1.3 hand estimates). The comparison leads with the
/// governing row and states the worst margin before and after, even though other rows
/// changed more.
#[test]
fn the_governing_row_leads_even_when_it_changes_least() {
    let tmp = tempfile::tempdir().expect("temp dir");
    let text = std::fs::read_to_string("examples/demo_corona_wire.toml")
        .unwrap()
        .replacen("voltage = \"60 kV\"", "voltage = \"10 kV\"", 1);
    let smaller = text.replacen("radius = \"60 mm\"", "radius = \"40 mm\"", 1);
    assert_ne!(text, smaller);
    let (a, b) = (tmp.path().join("a.toml"), tmp.path().join("b.toml"));
    std::fs::write(&a, &text).unwrap();
    std::fs::write(&b, &smaller).unwrap();
    let (a, b) = (a.to_str().unwrap(), b.to_str().unwrap());
    let (code, v) = compare(a, b);
    assert_eq!(code, Some(0), "{v}");
    let rows = v["rows"].as_array().expect("rows");
    let first = &rows[0];
    assert_eq!(first["role"], "worst_both", "{first}");
    assert_eq!(first["item"], "thin wire ring");
    let worst_after = v["worst_after"]["margin"].as_f64().unwrap();
    assert_eq!(first["margin_after"].as_f64(), Some(worst_after));
    assert!(first["status_after"] == "pass" || first["status_after"] == "review");
    // Every other row has a larger margin after, and some changed far more than the governing one.
    let change = |r: &serde_json::Value| r["change"].as_f64().unwrap_or(0.0).abs();
    assert!(
        rows[1..]
            .iter()
            .all(|r| r["margin_after"].as_f64().unwrap_or(f64::INFINITY) >= worst_after)
    );
    let largest = rows[1..].iter().map(change).fold(0.0, f64::max);
    assert!(
        largest > 2.0 * change(first),
        "largest other change {largest}, governing {}",
        change(first)
    );
    // The rows after the governing one are ordered by the size of their change.
    let others: Vec<f64> = rows[1..].iter().map(change).collect();
    assert!(others.windows(2).all(|w| w[0] >= w[1]), "{others:?}");
    // Both designs' title and SHA-256 are in the design section.
    for side in ["before", "after"] {
        assert_eq!(v["design"][side]["sha256"].as_str().map(str::len), Some(64));
    }
    // The text leads with the worst margin before → after and lists the governing row with a
    // single row allowed, in a table narrower than 160 columns.
    let out = common::holdoff()
        .args(["compare", a, b, "--rows", "1"])
        .output()
        .unwrap();
    let text = String::from_utf8_lossy(&out.stdout);
    let lead = text
        .lines()
        .find(|l| l.starts_with("worst margin"))
        .expect("lead line");
    assert!(lead.contains('→'), "{lead}");
    let listed: Vec<&str> = text
        .lines()
        .filter(|l| l.contains("thin wire ring"))
        .collect();
    assert!(listed.iter().any(|l| l.contains("worst, both")), "{text}");
    assert!(text.lines().all(|l| l.chars().count() < 160), "{text}");
}
