//! Rendered diagnostics (snapshots), the mesh-stage bad inputs, and the size of the corpus.
//!
//! The design-stage corpus (`tests/bad_input/*.toml`) is checked file by file in
//! `tests/design.rs`; the files under `tests/bad_input/mesh/` are valid designs whose mesh is
//! refused, checked here through the library (through the binary in `tests/diagnostics.rs`).

use crate::design;
use crate::design::diagnostic::render;
use crate::mesh::{Budget, Mesh};
use std::path::{Path, PathBuf};

fn toml_files(dir: &str) -> Vec<PathBuf> {
    let mut files: Vec<PathBuf> = std::fs::read_dir(dir)
        .unwrap_or_else(|e| panic!("{dir}: {e}"))
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|e| e == "toml"))
        .collect();
    files.sort();
    files
}

#[test]
fn the_bad_input_corpus_has_at_least_forty_files() {
    let n = toml_files("tests/bad_input").len() + toml_files("tests/bad_input/mesh").len();
    assert!(n >= 40, "only {n} bad design files");
}

/// The plain rendering of a corpus file, with its path written relative to `tests/`.
fn rendered(name: &str) -> String {
    let path = format!("tests/bad_input/{name}");
    let text = std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("{path}: {e}"));
    let shown = format!("bad_input/{name}");
    match design::from_str(&text, &shown) {
        Ok(_) => panic!("{path}: accepted"),
        Err(e) => render(&e, &text, false),
    }
}

/// Compares with `tests/snapshots/NAME.txt`; `HOLDOFF_UPDATE_SNAPSHOTS=1` rewrites the files.
fn assert_snapshot(name: &str, got: &str) {
    let path = Path::new("tests/snapshots").join(format!("{name}.txt"));
    if std::env::var_os("HOLDOFF_UPDATE_SNAPSHOTS").is_some() {
        std::fs::write(&path, got).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
        return;
    }
    let want = std::fs::read_to_string(&path).unwrap_or_else(|e| {
        panic!(
            "{}: {e} (HOLDOFF_UPDATE_SNAPSHOTS=1 writes it)",
            path.display()
        )
    });
    assert_eq!(got, want, "rendering of {name} changed");
}

#[test]
fn rendered_diagnostics_match_their_snapshots() {
    for name in [
        "unknown_key",
        "missing_unit",
        "syntax_error",
        "wrong_dimension",
        "overlap",
    ] {
        let got = rendered(&format!("{name}.toml"));
        assert!(
            !got.contains('\u{1b}'),
            "{name}: escape codes in plain output"
        );
        assert_snapshot(name, &got);
    }
}

#[test]
fn rendered_diagnostic_shows_location_marker_remedy_and_code() {
    let got = rendered("unknown_key.toml");
    // Header with file, line, key, message and code; the quoted line, the marker under the
    // key with its column; the remedy; the count.
    assert!(
        got.starts_with(
            "bad_input/unknown_key.toml, line 26, conductor[2].raduis: unknown key `raduis`"
        ),
        "{got}"
    );
    assert!(got.contains("(unknown-key)\n"), "{got}");
    assert!(got.contains("\n    raduis = \"50 mm\""), "{got}");
    assert!(got.contains("\n    ~~~~~~ column 1\n"), "{got}");
    assert!(got.contains("\n  remedy: did you mean `radius`?"), "{got}");
    assert!(got.ends_with("bad_input/unknown_key.toml: 1 problem in the design file\n"));
}

/// `# expect: CODE | FRAGMENT | FRAGMENT ...` on the first line.
fn mesh_expectation(text: &str) -> (String, Vec<String>) {
    let first = text.lines().next().unwrap_or_default();
    let spec = first
        .strip_prefix("# expect: ")
        .unwrap_or_else(|| panic!("no expectation line: {first}"));
    let mut parts = spec.split(" | ").map(|s| s.trim().to_string());
    let code = parts.next().unwrap_or_default();
    (code, parts.collect())
}

#[test]
fn mesh_stage_bad_inputs_are_refused_with_their_code_and_message() {
    let files = toml_files("tests/bad_input/mesh");
    assert!(files.len() >= 2);
    for path in files {
        let name = path.display().to_string();
        let text = std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("{name}: {e}"));
        let (code, fragments) = mesh_expectation(&text);
        let model = design::from_str(&text, &name).unwrap_or_else(|e| panic!("{e}"));
        let err = match Mesh::build(&model) {
            Ok(m) => panic!("{name}: meshed with {} nodes", m.nodes()),
            Err(e) => e,
        };
        assert_eq!(err.code(), code, "{name}: {err}");
        let msg = err.to_string();
        for f in &fragments {
            assert!(msg.contains(f.as_str()), "{name}: `{f}` not in: {msg}");
        }
    }
}

#[test]
fn an_absurdly_fine_cell_is_refused_before_anything_is_allocated() {
    // A 1 nm cell in a 4 m tank: about 10^18 nodes. Were the axes graded first, they alone
    // would exhaust memory; the lower-bound estimate refuses it at once.
    let text = std::fs::read_to_string("examples/demo_750kv.toml").unwrap_or_default();
    let mut model = design::from_str(&text, "demo").unwrap_or_else(|e| panic!("{e}"));
    model.mesh.cell = 1e-9;
    let budget = Budget::Memory {
        available_bytes: 8 << 30,
    };
    let err = Mesh::build_within(&model, true, budget).unwrap_err();
    let msg = err.to_string();
    assert_eq!(err.code(), "mesh-too-large", "{msg}");
    assert!(msg.contains("at least "), "{msg}");
    assert!(msg.contains("of the 8.00 GiB of memory available"), "{msg}");
    // The suggested cell is one at which the estimate fits, and it does.
    let crate::mesh::MeshError::TooLarge {
        suggest_cell_mm, ..
    } = err
    else {
        panic!("{msg}");
    };
    model.mesh.cell = suggest_cell_mm * 1e-3;
    let est = crate::mesh::estimate(&model, budget).unwrap_or_else(|e| panic!("{e}"));
    assert!(est.exact);
    assert!(est.total_bytes() <= 0.8 * (8u64 << 30) as f64, "{est:?}");
}

#[test]
fn the_node_limit_applies_where_memory_is_unknown() {
    let text = std::fs::read_to_string("examples/concentric_spheres.toml").unwrap_or_default();
    let model = design::from_str(&text, "spheres").unwrap_or_else(|e| panic!("{e}"));
    let est = crate::mesh::estimate(&model, Budget::Nodes { limit: 1000 })
        .unwrap_or_else(|e| panic!("{e}"));
    assert!(est.nodes > 1000);
    let err = Mesh::build_within(&model, true, Budget::Nodes { limit: 1000 }).unwrap_err();
    assert!(err.to_string().contains("the limit of 1000 nodes"), "{err}");
}

#[test]
fn mem_available_is_read_from_meminfo_text() {
    let text = "MemTotal:       32000000 kB\nMemFree:  100 kB\nMemAvailable:   23536624 kB\n";
    assert_eq!(crate::mesh::mem_available(text), Some(23_536_624 * 1024));
    assert_eq!(crate::mesh::mem_available("MemFree: 1 kB\n"), None);
    assert_eq!(crate::mesh::mem_available("MemAvailable: lots\n"), None);
}

#[test]
fn a_solve_that_does_not_converge_is_an_error_with_the_residual_and_what_to_try() {
    use crate::analysis::{AnalysisError, analyze};
    use crate::solve::{SolveError, SolverParams};
    let text = std::fs::read_to_string("examples/concentric_spheres.toml").unwrap_or_default();
    let mut model = design::from_str(&text, "spheres").unwrap_or_else(|e| panic!("{e}"));
    // A coarse grid keeps this fast; one Krylov iteration cannot reach 1e-10.
    model.mesh.cell = 4e-3;
    let mut params = SolverParams::default();
    params.krylov.max_iterations = 1;
    let err = match analyze(&model, &params, None) {
        Ok(_) => panic!("converged in one iteration"),
        Err(e) => e,
    };
    let AnalysisError::Solve(SolveError::NoConvergence {
        iterations,
        relative_residual,
        tolerance,
    }) = &err
    else {
        panic!("{err}");
    };
    assert_eq!(*iterations, 1);
    assert!(relative_residual.is_finite() && *relative_residual > *tolerance);
    let msg = err.to_string();
    assert!(msg.contains("did not converge"), "{msg}");
    assert!(msg.contains("relative residual"), "{msg}");
    assert!(msg.contains("refine [mesh] cell"), "{msg}");
}
