//! One interface: every command (check, demo, ladder, size, faults, compare, sweep, report) run
//! on small invented designs, and every command's help, and its outputs held to docs/glossary.md: no retired word in any
//! text, JSON or note; every JSON key that carries a quantity ends in its unit suffix;
//! enumerated values in one case; columns and gaps numbered from 1; the design section in
//! the same place.

mod common;

use common::holdoff;
use serde_json::Value;
use std::path::Path;

/// The unit suffixes of docs/glossary.md ("Units in the JSON").
const SUFFIXES: &[&str] = &[
    "_v", "_v_per_m", "_a", "_f", "_j", "_w", "_m", "_m2", "_s", "_hz", "_pa", "_k", "_ohm", "_c",
];

/// The words that mark a dimensionless number (a ratio, factor, fraction or order) in a key
/// without a unit suffix (docs/glossary.md).
const DIMENSIONLESS_WORDS: &[&str] = &[
    "margin",
    "factor",
    "ratio",
    "share",
    "fraction",
    "relative",
    "change",
    "efficiency",
    "regulation",
    "alpha",
    "order",
    "tolerance",
    "error",
    "residual",
    "band",
    "target",
    "asymmetry",
];

/// Words docs/glossary.md retires ("not used"), matched as whole words, case-insensitive.
const RETIRED: &[&str] = &["cascade", "earth", "earthed", "earthing", "dome", "gap #"];

/// Everything one run leaves: standard output and error, and the files it wrote.
struct Run {
    name: String,
    texts: Vec<String>,
    json: Option<Value>,
}

fn run(name: &str, args: &[&str], dir: &Path, json: bool, files: &[&str]) -> Run {
    let mut cmd = holdoff();
    cmd.current_dir(dir).args(args);
    if json {
        cmd.args(["--json", "out.json"]);
    }
    let out = cmd.output().expect("runs");
    assert!(
        out.status.code().is_some_and(|c| c <= 1),
        "{name}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    let mut texts = vec![
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    ];
    for f in files {
        texts.push(std::fs::read_to_string(dir.join(f)).expect("output file"));
    }
    let json = json.then(|| {
        let text = std::fs::read_to_string(dir.join("out.json")).expect("JSON file");
        texts.push(text.clone());
        serde_json::from_str(&text).expect("JSON")
    });
    Run {
        name: name.to_string(),
        texts,
        json,
    }
}

/// Every command once, on the small invented column of tests/common (SF6, four tori, a
/// grading chain), the invented 300 kV stack example and the demo.
fn runs() -> Vec<Run> {
    let tmp = tempfile::tempdir().expect("temp dir");
    let dir = tmp.path();
    let column = r#"electrodes = 4
z_first = "210 mm"
pitch = "60 mm"
grading = { resistor = "1 GOhm", tolerance = "1 %", strings = 1 }
protective_gap = { firing = "60 kV" }"#;
    let small = common::small_column("200 kV", "", column);
    std::fs::write(dir.join("small.toml"), &small).unwrap();
    let sharper = small.replacen("corner_radius = \"30 mm\"", "corner_radius = \"20 mm\"", 1);
    std::fs::write(dir.join("sharper.toml"), sharper).unwrap();
    let stack = std::fs::canonicalize("examples/stack_300kv.toml").unwrap();
    let stack = stack.to_str().unwrap();
    let mut runs: Vec<Run> = [
        "init", "check", "demo", "compare", "report", "ladder", "size", "sweep", "faults", "bench",
    ]
    .iter()
    .map(|c| run("help", &[c, "--help"], dir, false, &[]))
    .collect();
    runs.push(run("help", &["--help"], dir, false, &[]));
    runs.extend([
        run("check", &["check", "small.toml"], dir, true, &[]),
        run("demo", &["demo", "--no-grid-study"], dir, true, &[]),
        run("ladder", &["ladder", stack], dir, true, &[]),
        run(
            "size",
            &[
                "size",
                "--voltage",
                "100 kV",
                "--load-current",
                "1 mA",
                "--ripple",
                "200 V",
                "--drive-peak",
                "25 kV",
                "--drive-frequency",
                "40 kHz",
            ],
            dir,
            true,
            &[],
        ),
        run(
            "faults",
            &["faults", "small.toml", "--samples", "4"],
            dir,
            true,
            &[],
        ),
        run(
            "compare",
            &["compare", "small.toml", "sharper.toml"],
            dir,
            true,
            &[],
        ),
        run(
            "sweep",
            &[
                "sweep",
                "small.toml",
                "--vary",
                "gas.pressure",
                "--from",
                "2 bar",
                "--to",
                "3 bar",
                "--steps",
                "2",
                "--least",
            ],
            dir,
            true,
            &[],
        ),
        run(
            "report",
            &["report", "small.toml", "--out", "note.md"],
            dir,
            false,
            &["note.md"],
        ),
        run(
            "report",
            &["report", "small.toml", "--out", "note.html"],
            dir,
            false,
            &["note.html"],
        ),
    ]);
    runs
}

/// Walks `v`, calling `f(path, key, value)` for every key of every object.
fn walk(v: &Value, path: &str, f: &mut dyn FnMut(&str, &str, &Value)) {
    match v {
        Value::Object(m) => {
            for (k, x) in m {
                f(path, k, x);
                walk(x, &format!("{path}.{k}"), f);
            }
        }
        Value::Array(a) => {
            for x in a {
                walk(x, &format!("{path}[]"), f);
            }
        }
        _ => {}
    }
}

/// A number that is not a whole count: a float, or an array (of arrays) of them.
fn carries_quantity(v: &Value) -> bool {
    match v {
        Value::Number(n) => n.is_f64(),
        Value::Array(a) => a.iter().any(carries_quantity),
        _ => false,
    }
}

fn has_suffix(key: &str) -> bool {
    SUFFIXES.iter().any(|s| key.ends_with(s))
}

fn dimensionless(key: &str) -> bool {
    key.split('_').any(|w| DIMENSIONLESS_WORDS.contains(&w))
}

#[test]
fn outputs_follow_the_glossary() {
    let runs = runs();
    let mut problems = Vec::new();
    for r in &runs {
        // Retired words, in every text the command left.
        for text in &r.texts {
            let lower = text.to_lowercase();
            for word in RETIRED {
                for (at, _) in lower.match_indices(word) {
                    let before = lower[..at].chars().next_back();
                    let after = lower[at + word.len()..].chars().next();
                    let letter = |c: Option<char>| c.is_some_and(|c| c.is_alphanumeric());
                    if !letter(before) && !letter(after) {
                        let from = lower[..at].char_indices().rev().nth(40).map_or(0, |c| c.0);
                        let to = (at + 40).min(lower.len());
                        let to = (to..=lower.len())
                            .find(|&k| lower.is_char_boundary(k))
                            .unwrap_or(lower.len());
                        problems.push(format!(
                            "{}: retired word {word:?} in …{}…",
                            r.name,
                            &lower[from..to]
                        ));
                    }
                }
            }
        }
        let Some(json) = &r.json else { continue };
        walk(json, "", &mut |path, key, value| {
            if carries_quantity(value) && !has_suffix(key) && !dimensionless(key) {
                problems.push(format!(
                    "{}: {path}.{key} holds a quantity without a unit suffix",
                    r.name
                ));
            }
            // Enumerated values in one case: no CamelCase word as a value.
            if let Value::String(s) = value {
                let camel = s.len() > 1
                    && !s.contains(char::is_whitespace)
                    && s.starts_with(|c: char| c.is_ascii_uppercase())
                    && s[1..].starts_with(|c: char| c.is_ascii_lowercase())
                    && s.chars().all(|c| c.is_ascii_alphanumeric());
                if camel {
                    problems.push(format!(
                        "{}: {path}.{key} = {s:?} is not lower case",
                        r.name
                    ));
                }
            }
            // Columns and gaps are numbered from 1.
            if ["column", "gap", "first_gap", "last_gap"].contains(&key)
                && value.as_u64() == Some(0)
            {
                problems.push(format!("{}: {path}.{key} = 0 (numbered from 1)", r.name));
            }
        });
        // The design section: title and SHA-256 in `design` (both designs for compare).
        if r.name != "size" && r.name != "help" {
            let d = &json["design"];
            let sections = if r.name == "compare" {
                vec![&d["before"], &d["after"]]
            } else {
                vec![d]
            };
            for s in sections {
                if !(s["title"].is_string() && s["sha256"].as_str().is_some_and(|h| h.len() == 64))
                {
                    problems.push(format!(
                        "{}: no design section with title and sha256",
                        r.name
                    ));
                }
            }
        }
    }
    assert!(problems.is_empty(), "{}", problems.join("\n"));
}
