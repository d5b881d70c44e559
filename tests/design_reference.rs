//! The design-file reference (docs/design-file.md) and the `holdoff init` template
//! (src/cli/template.toml) name every key the reader accepts. The keys are read from the
//! source text of src/design/schema.rs at test time, so a key added to a `Raw*` struct
//! without documentation fails here.

use std::path::Path;

fn read(path: &str) -> String {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    std::fs::read_to_string(root.join(path)).unwrap_or_else(|e| panic!("{path}: {e}"))
}

/// Every `pub struct Raw… { … }` of the schema with the names of its `pub` fields.
fn raw_structs(src: &str) -> Vec<(String, Vec<String>)> {
    let mut out = Vec::new();
    let mut current: Option<(String, Vec<String>)> = None;
    for line in src.lines() {
        let t = line.trim();
        if let Some(rest) = t.strip_prefix("pub struct Raw") {
            let name: String = rest
                .chars()
                .take_while(|c| c.is_ascii_alphanumeric() || *c == '_')
                .collect();
            if t.ends_with('{') {
                current = Some((format!("Raw{name}"), Vec::new()));
            }
            continue;
        }
        let Some((_, fields)) = current.as_mut() else {
            continue;
        };
        if t == "}" {
            out.push(current.take().expect("open struct"));
            continue;
        }
        if let Some(rest) = t.strip_prefix("pub ")
            && let Some((field, _)) = rest.split_once(':')
            && field.chars().all(|c| c.is_ascii_alphanumeric() || c == '_')
        {
            fields.push(field.to_string());
        }
    }
    out
}

/// The headings of the reference under which the keys of each struct are documented.
fn sections_of(structure: &str) -> &'static [&'static str] {
    match structure {
        "RawDesign" => &["Top level"],
        "RawTank" => &["`[tank]`"],
        "RawGas" => &["`[gas]`"],
        "RawTerminal" => &["`[terminal]`"],
        "RawShape" => &["Shapes"],
        "RawConductor" => &["`[[conductor]]`", "Shapes"],
        "RawDielectric" => &["`[[dielectric]]`", "Shapes"],
        "RawVacuum" => &["`[[vacuum]]`", "Shapes"],
        "RawColumn" => &["`[[column]]`"],
        "RawTubeElectrode" => &["`tube_electrode`"],
        "RawGrading" => &["`grading`"],
        "RawProtectiveGap" => &["`protective_gap`"],
        "RawMultiplier" => &["`[multiplier]`"],
        "RawChecks" => &["`[checks]`"],
        "RawMesh" => &["`[mesh]`"],
        "RawProbe" => &["`[[probe]]`"],
        other => panic!(
            "{other} is new in src/design/schema.rs: document its table in docs/design-file.md \
             and map it to its heading here"
        ),
    }
}

/// The text under the heading containing `title`, up to the next heading of the same or a
/// higher level.
fn section<'a>(doc: &'a str, title: &str) -> &'a str {
    let level = |l: &str| l.chars().take_while(|c| *c == '#').count();
    let mut start = None;
    let mut offset = 0;
    for line in doc.split_inclusive('\n') {
        let lv = level(line);
        match start {
            None if lv > 0 && line.contains(title) => start = Some((offset, lv)),
            Some((s, l)) if lv > 0 && lv <= l => return &doc[s..offset],
            _ => {}
        }
        offset += line.len();
    }
    let (s, _) = start.unwrap_or_else(|| panic!("docs/design-file.md has no heading {title}"));
    &doc[s..]
}

#[test]
fn the_schema_is_read_from_its_source() {
    let structs = raw_structs(&read("src/design/schema.rs"));
    let tank = structs
        .iter()
        .find(|(n, _)| n == "RawTank")
        .expect("RawTank");
    assert_eq!(tank.1, ["shape", "inner_radius", "length"]);
    let column = structs
        .iter()
        .find(|(n, _)| n == "RawColumn")
        .expect("RawColumn");
    assert!(column.1.iter().any(|f| f == "node_current"));
    assert!(structs.len() >= 16, "{} structs", structs.len());
}

/// The keys of `schema` (source text) that `doc` does not document under their table's
/// heading, and how many keys were looked at.
fn undocumented(doc: &str, schema: &str) -> (Vec<String>, usize) {
    let mut missing = Vec::new();
    let mut checked = 0;
    for (structure, fields) in raw_structs(schema) {
        let titles = sections_of(&structure);
        for field in fields {
            let needle = format!("`{field}`");
            if !titles.iter().any(|t| section(doc, t).contains(&needle)) {
                missing.push(format!(
                    "{structure}.{field} (under {})",
                    titles.join(" or ")
                ));
            }
            checked += 1;
        }
    }
    (missing, checked)
}

#[test]
fn every_key_is_in_the_reference() {
    let (missing, checked) =
        undocumented(&read("docs/design-file.md"), &read("src/design/schema.rs"));
    assert!(
        missing.is_empty(),
        "keys missing from docs/design-file.md: {}",
        missing.join(", ")
    );
    assert!(checked > 80, "only {checked} keys");
}

#[test]
fn the_check_fails_on_an_undocumented_key() {
    let schema = read("src/design/schema.rs").replace(
        "pub struct RawMesh {\n",
        "pub struct RawMesh {\n    pub coarsening: Leaf,\n",
    );
    let (missing, _) = undocumented(&read("docs/design-file.md"), &schema);
    assert_eq!(missing, ["RawMesh.coarsening (under `[mesh]`)"]);
}

#[test]
fn every_key_is_in_the_template() {
    let template = read("src/cli/template.toml");
    let words: std::collections::HashSet<&str> = template
        .split(|c: char| !(c.is_ascii_alphanumeric() || c == '_'))
        .collect();
    let mut missing = Vec::new();
    for (structure, fields) in raw_structs(&read("src/design/schema.rs")) {
        for field in fields {
            if !words.contains(field.as_str()) {
                missing.push(format!("{structure}.{field}"));
            }
        }
    }
    assert!(
        missing.is_empty(),
        "keys missing from the init template: {}",
        missing.join(", ")
    );
}

#[test]
fn the_pending_gas_key_is_documented() {
    // `[gas] min_temperature` may arrive in the schema from another change; it is documented
    // ahead of it.
    assert!(section(&read("docs/design-file.md"), "`[gas]`").contains("`min_temperature`"));
}
