//! Options mean the same in every command, and a command that writes a file refuses an
//! unwritable path before it computes.

mod common;

use common::holdoff;

/// Every command that writes JSON takes `--json FILE|-`, and every table's length is
/// `--rows N|all`.
#[test]
fn json_and_rows_options_are_the_same_in_every_command() {
    for cmd in [
        "check", "demo", "compare", "ladder", "size", "sweep", "faults",
    ] {
        let out = holdoff().args([cmd, "--help"]).output().expect("runs");
        let help = String::from_utf8_lossy(&out.stdout);
        assert!(help.contains("--json <FILE|->"), "{cmd}: {help}");
        if cmd != "ladder" && cmd != "sweep" {
            assert!(help.contains("--rows <N|all>"), "{cmd}: {help}");
        }
    }
    let out = holdoff().args(["size", "--help"]).output().expect("runs");
    let help = String::from_utf8_lossy(&out.stdout);
    // The size options are named like the [multiplier] keys of the design file.
    for key in [
        "load_current",
        "drive_frequency",
        "drive_peak",
        "stray_capacitance",
        "stage_capacitance",
    ] {
        let option = format!("--{}", key.replace('_', "-"));
        assert!(help.contains(&option), "{option}: {help}");
    }
}

/// An output path in a directory that does not exist is refused at once, with the path in
/// the message, and nothing is computed (no result line, no partial file).
#[test]
fn unwritable_outputs_are_refused_before_computing() {
    let tmp = tempfile::tempdir().expect("temp dir");
    let missing = tmp.path().join("no-such-dir");
    let note = missing.join("note.html");
    let json = missing.join("r.json");
    let runs: Vec<Vec<String>> = vec![
        vec![
            "report".into(),
            "examples/demo_750kv.toml".into(),
            "--out".into(),
            note.display().to_string(),
        ],
        vec![
            "check".into(),
            "examples/demo_750kv.toml".into(),
            "--json".into(),
            json.display().to_string(),
        ],
        vec![
            "faults".into(),
            "examples/demo_750kv.toml".into(),
            "--json".into(),
            json.display().to_string(),
        ],
        vec![
            "compare".into(),
            "examples/concentric_spheres.toml".into(),
            "examples/concentric_spheres.toml".into(),
            "--json".into(),
            json.display().to_string(),
        ],
        vec![
            "ladder".into(),
            "examples/stack_300kv.toml".into(),
            "--json".into(),
            json.display().to_string(),
        ],
    ];
    for args in runs {
        let out = holdoff().args(&args).output().expect("runs");
        let err = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{args:?}: {err}");
        assert!(err.contains("cannot write"), "{args:?}: {err}");
        assert!(err.contains("no-such-dir"), "{args:?}: {err}");
        assert!(out.stdout.is_empty(), "{args:?}: computed first");
        assert!(!missing.exists());
    }
}
