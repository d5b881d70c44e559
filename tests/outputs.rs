//! Output safety: a file is written whole or not at all, an existing file is never
//! truncated by a failed run, and no temporary file is left behind.

use holdoff::report::write_atomic;
use std::path::Path;

mod common;

use common::holdoff;

/// A fresh directory, removed when the returned guard drops.
fn scratch() -> tempfile::TempDir {
    tempfile::tempdir().expect("temp dir")
}

/// The names in a directory, sorted.
fn listing(dir: &Path) -> Vec<String> {
    let mut names: Vec<String> = std::fs::read_dir(dir)
        .unwrap_or_else(|e| panic!("{}: {e}", dir.display()))
        .filter_map(|e| e.ok())
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .collect();
    names.sort();
    names
}

/// `check DESIGN --json FILE` on a design that is refused (exit 2) keeps FILE as it was and
/// leaves nothing else in its directory.
fn refused_run_keeps_the_previous_report(design: &str) {
    let tmp = scratch();
    let dir = tmp.path().to_path_buf();
    let json = dir.join("report.json");
    std::fs::write(&json, "previous report").unwrap_or_else(|e| panic!("{e}"));
    let out = holdoff()
        .args(["check", design, "--json"])
        .arg(&json)
        .output()
        .unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(out.status.code(), Some(2));
    assert_eq!(
        std::fs::read_to_string(&json).unwrap_or_default(),
        "previous report"
    );
    assert_eq!(listing(&dir), ["report.json"]);
}

#[test]
fn a_refused_mesh_leaves_the_previous_report_and_no_temporary_file() {
    refused_run_keeps_the_previous_report("tests/bad_input/mesh/too_thin.toml");
}

#[test]
fn a_bad_design_leaves_the_previous_report_and_no_temporary_file() {
    refused_run_keeps_the_previous_report("tests/bad_input/overlap.toml");
}

#[test]
fn a_successful_run_replaces_the_file_whole_and_leaves_no_temporary_file() {
    let tmp = scratch();
    let dir = tmp.path().to_path_buf();
    let json = dir.join("report.json");
    std::fs::write(&json, "previous report").unwrap_or_else(|e| panic!("{e}"));
    let out = holdoff()
        .args([
            "check",
            "examples/concentric_spheres.toml",
            "--no-grid-study",
            "--json",
        ])
        .arg(&json)
        .output()
        .unwrap_or_else(|e| panic!("{e}"));
    common::assert_success(&out);
    let text = std::fs::read_to_string(&json).unwrap_or_default();
    let v: serde_json::Value =
        serde_json::from_str(&text).unwrap_or_else(|e| panic!("not whole JSON ({e}): {text}"));
    assert_eq!(v["tool"]["name"], "holdoff");
    assert_eq!(listing(&dir), ["report.json"]);
}

#[test]
fn a_failed_rename_keeps_the_target_and_removes_the_temporary_file() {
    let tmp = scratch();
    let dir = tmp.path().to_path_buf();
    // The target is a non-empty directory: the temporary file is written, the rename fails.
    let target = dir.join("report.json");
    std::fs::create_dir_all(target.join("inside")).unwrap_or_else(|e| panic!("{e}"));
    assert!(write_atomic(&target, b"new").is_err());
    assert!(target.join("inside").is_dir());
    assert_eq!(listing(&dir), ["report.json"]);
}

#[test]
fn writing_into_a_missing_directory_fails_and_creates_nothing() {
    let tmp = scratch();
    let dir = tmp.path().to_path_buf();
    let target = dir.join("no").join("such").join("report.json");
    assert!(write_atomic(&target, b"new").is_err());
    assert!(listing(&dir).is_empty());
}

#[test]
fn write_atomic_replaces_an_existing_file() {
    let tmp = scratch();
    let dir = tmp.path().to_path_buf();
    let target = dir.join("notes.md");
    std::fs::write(&target, "old text that is longer than the new")
        .unwrap_or_else(|e| panic!("{e}"));
    write_atomic(&target, b"new").unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(std::fs::read_to_string(&target).unwrap_or_default(), "new");
    assert_eq!(listing(&dir), ["notes.md"]);
}

/// `holdoff bench --export DIR` writes the two Matrix Market files the library forms for the
/// benchmark operator, byte for byte, and nothing else (the library's files are read back
/// and checked against the operator, docs/references.md §18, in src/verification/export.rs).
#[test]
fn bench_export_writes_the_library_files_whole() {
    let dir = scratch();
    let out = holdoff()
        .args(["bench", "--sizes", "3000", "--export"])
        .arg(dir.path())
        .output()
        .expect("runs");
    common::assert_success(&out);
    let (_, files) = holdoff::benchmark::export_operator(3000).expect("the operator exports");
    let mut names: Vec<String> = files.iter().map(|(n, _)| n.to_string()).collect();
    names.sort();
    assert_eq!(listing(dir.path()), names);
    for (name, bytes) in &files {
        let written = std::fs::read(dir.path().join(name)).expect("written file reads");
        assert!(written == *bytes, "{name} differs from the library's");
    }
}
