//! The library's modules import only from their own stage or from stages before it, so data
//! flows one way (DEVELOPERS.md, "Layout"): design → ladder → grading → mesh → solve → field →
//! breakdown → margin → report, with the shared floor (units, thermo, geometry, materials,
//! model) below every stage. Read from the source text: every `crate::NAME` outside test code.

use std::collections::BTreeSet;
use std::path::{Path, PathBuf};

/// Stage of each top-level module; a module may import a module of its own or a lower stage.
/// The binary (`main.rs`, `cli/`) and `lib.rs` stand above them all and are not listed.
const STAGES: &[(&str, u32)] = &[
    ("units", 0),
    ("thermo", 0),
    ("geometry", 0),
    ("drawing", 1),
    ("materials", 0),
    ("model", 1),
    ("design", 2),
    ("ladder", 3),
    ("grading", 4),
    ("mesh", 5),
    ("solve", 6),
    ("field", 7),
    ("fieldline", 8),
    ("capacitance", 8),
    ("analysis", 9),
    ("study", 10),
    ("stack", 10),
    ("breakdown", 11),
    ("margin", 12),
    ("faults", 13),
    ("review", 13),
    ("sweep", 14),
    ("compare", 14),
    ("benchmark", 14),
    ("report", 15),
    // In-crate tests (`#[cfg(test)]`): they may check every stage.
    ("verification", 16),
];

fn stage(name: &str) -> Option<u32> {
    STAGES.iter().find(|(n, _)| *n == name).map(|&(_, s)| s)
}

fn rust_files(dir: &Path, out: &mut Vec<PathBuf>) {
    for entry in std::fs::read_dir(dir).expect("src is readable") {
        let p = entry.expect("directory entry").path();
        if p.is_dir() {
            rust_files(&p, out);
        } else if p.extension().is_some_and(|e| e == "rs") {
            out.push(p);
        }
    }
}

/// Top-level modules named as `crate::NAME` in `text` before its first `#[cfg(test)]`.
fn imports(text: &str) -> BTreeSet<String> {
    let code = text.split("#[cfg(test)]").next().unwrap_or("");
    let mut out = BTreeSet::new();
    for (at, _) in code.match_indices("crate::") {
        let name: String = code[at + 7..]
            .chars()
            .take_while(|c| c.is_ascii_alphanumeric() || *c == '_')
            .collect();
        if !name.is_empty() {
            out.insert(name);
        }
    }
    out
}

#[test]
fn no_module_imports_a_later_stage() {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    let mut files = Vec::new();
    rust_files(&src, &mut files);
    let mut back = Vec::new();
    let mut unlisted = BTreeSet::new();
    for f in &files {
        let rel = f.strip_prefix(&src).expect("under src");
        let top = rel
            .components()
            .next()
            .and_then(|c| c.as_os_str().to_str())
            .expect("a file name")
            .trim_end_matches(".rs")
            .to_string();
        if matches!(top.as_str(), "main" | "lib" | "cli") {
            continue;
        }
        let Some(own) = stage(&top) else {
            unlisted.insert(top);
            continue;
        };
        let text = std::fs::read_to_string(f).expect("source is readable");
        for name in imports(&text) {
            if name == top {
                continue;
            }
            match stage(&name) {
                Some(s) if s > own => back.push(format!("{} imports crate::{name}", rel.display())),
                Some(_) => {}
                None => {
                    unlisted.insert(name);
                }
            }
        }
    }
    assert!(
        unlisted.is_empty(),
        "modules without a stage in tests/layers.rs: {unlisted:?}"
    );
    assert!(
        back.is_empty(),
        "imports against the flow:\n{}",
        back.join("\n")
    );
}

/// The reader itself: an import in test code does not count, one in code does.
#[test]
fn imports_are_read_from_code_only() {
    let text = "use crate::model::Model;\nfn f() { crate::units::x(); }\n#[cfg(test)]\nmod tests { use crate::report::Report; }\n";
    let found: Vec<String> = imports(text).into_iter().collect();
    assert_eq!(found, ["model", "units"]);
}
