//! The repository cites only itself: every `docs/…md §N` citation in the code, tests and
//! examples resolves to a heading of that document, and nothing names a file outside it.

use std::path::Path;

fn files(dir: &Path, out: &mut Vec<std::path::PathBuf>) {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return;
    };
    for e in entries.flatten() {
        let p = e.path();
        if p.is_dir() {
            files(&p, out);
        } else if matches!(
            p.extension().and_then(|x| x.to_str()),
            Some("rs" | "toml" | "md")
        ) {
            out.push(p);
        }
    }
}

fn sources() -> Vec<(std::path::PathBuf, String)> {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let mut paths = Vec::new();
    for d in ["src", "tests", "examples", "benches"] {
        files(&root.join(d), &mut paths);
    }
    for f in ["README.md", "DEVELOPERS.md", "SAFETY.md"] {
        paths.push(root.join(f));
    }
    paths
        .into_iter()
        .filter_map(|p| std::fs::read_to_string(&p).ok().map(|s| (p, s)))
        .collect()
}

/// The section numbers of a document's headings ("## 3. …" gives "3", "### 4.1 …" gives
/// "4.1").
fn sections(doc: &str) -> Vec<String> {
    doc.lines()
        .filter(|l| l.starts_with('#'))
        .filter_map(|l| {
            let t = l.trim_start_matches('#').trim();
            let n: String = t
                .chars()
                .take_while(|c| c.is_ascii_digit() || *c == '.')
                .collect();
            let n = n.trim_end_matches('.').to_string();
            (!n.is_empty()).then_some(n)
        })
        .collect()
}

#[test]
fn every_citation_of_the_docs_resolves() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let mut checked = 0;
    for doc in ["references", "practice"] {
        let text = std::fs::read_to_string(root.join(format!("docs/{doc}.md")))
            .unwrap_or_else(|e| panic!("docs/{doc}.md: {e}"));
        let known = sections(&text);
        let needle = format!("docs/{doc}.md §");
        for (path, src) in sources() {
            // Comments may wrap a citation over a line break; join them first.
            let flat = src
                .replace("\n//! ", " ")
                .replace("\n/// ", " ")
                .replace("\n// ", " ");
            for (at, _) in flat.match_indices(&needle) {
                let rest = &flat[at + needle.len()..];
                let n: String = rest
                    .chars()
                    .take_while(|c| c.is_ascii_digit() || *c == '.')
                    .collect();
                let n = n.trim_end_matches('.');
                assert!(
                    known.iter().any(|k| k == n),
                    "{}: cites docs/{doc}.md §{n}, which has no such section",
                    path.display()
                );
                checked += 1;
            }
        }
    }
    assert!(checked > 50, "only {checked} citations found");
}

/// Every document the sources name (a `.md` path, or a capitalised Markdown file name) is a
/// file of the repository, named from inside it. Lower-case bare names (`a.md`, `notes.md`) and names given to `--out` are
/// output files of the examples, not citations.
#[test]
fn every_document_named_is_in_the_repository() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let mut checked = 0;
    for (path, src) in sources() {
        let bytes = src.as_bytes();
        for (at, _) in src.match_indices(".md") {
            let end = at + 3;
            if bytes.get(end).is_some_and(|b| b.is_ascii_alphanumeric()) {
                continue;
            }
            let begin = src[..at]
                .rfind(|c: char| !(c.is_ascii_alphanumeric() || "_./-".contains(c)))
                .map_or(0, |k| k + 1);
            let name = src[..end][begin..].trim_start_matches("./");
            let stem = &src[begin..at];
            let before = &src[..begin];
            let output = before.ends_with("--out ") || before.ends_with('|');
            let bare_lower = !name.contains('/') && stem.chars().any(|c| c.is_ascii_lowercase());
            if stem.is_empty() || output || bare_lower {
                continue;
            }
            assert!(
                !name.contains("..") && root.join(name).is_file(),
                "{} names {name}, which is not a file of the repository",
                path.display()
            );
            checked += 1;
        }
    }
    assert!(checked > 100, "only {checked} document names found");
}
