//! A mesh the library refuses, through the binary: exit code 2 and the message. The rendered
//! diagnostics (snapshots), the mesh-stage bad inputs and the size of the corpus are checked
//! in src/verification/diagnostics.rs; the design-stage corpus file by file in
//! `tests/design.rs`.

mod common;

#[test]
fn the_binary_reports_a_too_thin_conductor_with_exit_code_2() {
    let out = common::holdoff()
        .args([
            "check",
            "tests/bad_input/mesh/too_thin.toml",
            "--no-grid-study",
        ])
        .output()
        .unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("conductor 'sliver' is thinner than the mesh"),
        "{err}"
    );
    assert!(out.stdout.is_empty(), "no table for a refused mesh");
}
