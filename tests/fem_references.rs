//! The FEM reference values under tests/data/fem belong to their designs: every JSON file
//! there parses, names a design file beside it, carries that file's SHA-256 (so a design
//! edited after its reference was computed is caught), and gives each conductor of the design
//! one peak, and each dielectric one peak tangential field, with a reference error within the
//! 0.05 % the references are made to. The values
//! are written by tools/fem_reference (tools/fem_reference/README.md says how to regenerate
//! them); comparing holdoff with them is done elsewhere.

mod common;

use sha2::{Digest, Sha256};
use std::path::Path;

fn hex(bytes: &[u8]) -> String {
    bytes.iter().map(|b| format!("{b:02x}")).collect()
}

#[test]
fn every_reference_matches_its_design() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let jsons = common::fem_reference_files();
    let mut peaks = 0;
    let mut insulator_peaks = 0;
    for path in &jsons {
        let text = std::fs::read_to_string(path).unwrap();
        let v: serde_json::Value = serde_json::from_str(&text)
            .unwrap_or_else(|e| panic!("{}: not valid JSON: {e}", path.display()));
        let design = v["design"].as_str().expect("a \"design\" string");
        let toml_path = root.join(design);
        assert_eq!(
            toml_path.with_extension("json"),
            *path,
            "{}: names {design}, not the design beside it",
            path.display()
        );
        let toml_bytes = std::fs::read(&toml_path)
            .unwrap_or_else(|e| panic!("{}: {design}: {e}", path.display()));
        assert_eq!(
            v["sha256"].as_str(),
            Some(hex(&Sha256::digest(&toml_bytes)).as_str()),
            "{}: the design changed after its reference was computed; regenerate it",
            path.display()
        );
        assert_eq!(v["element"].as_str(), Some("P2"), "{}", path.display());
        let names: Vec<String> = toml::from_str::<toml::Table>(
            std::str::from_utf8(&toml_bytes).unwrap(),
        )
        .unwrap()["conductor"]
            .as_array()
            .unwrap()
            .iter()
            .map(|c| c["name"].as_str().unwrap().to_string())
            .collect();
        let list = v["peaks"].as_array().expect("a \"peaks\" array");
        let got: Vec<&str> = list
            .iter()
            .map(|p| p["conductor"].as_str().unwrap())
            .collect();
        assert_eq!(got, names, "{}: one peak per conductor", path.display());
        let dielectrics: Vec<String> =
            toml::from_str::<toml::Table>(std::str::from_utf8(&toml_bytes).unwrap())
                .unwrap()
                .get("dielectric")
                .and_then(|d| d.as_array().cloned())
                .unwrap_or_default()
                .iter()
                .map(|d| d["name"].as_str().unwrap().to_string())
                .collect();
        let surfaces = v["insulator_peaks"].as_array().cloned().unwrap_or_default();
        let got: Vec<&str> = surfaces
            .iter()
            .map(|p| p["dielectric"].as_str().unwrap())
            .collect();
        assert_eq!(
            got,
            dielectrics,
            "{}: one insulator peak per dielectric",
            path.display()
        );
        for p in &surfaces {
            let e = p["peak_tangential_v_per_m"].as_f64().unwrap();
            let err = p["reference_rel_error"].as_f64().unwrap();
            assert!(e.is_finite() && e > 0.0, "{}: {p}", path.display());
            assert!((0.0..=5e-4).contains(&err), "{}: {p}", path.display());
            insulator_peaks += 1;
        }
        for p in list {
            let e = p["peak_v_per_m"].as_f64().unwrap();
            let err = p["reference_rel_error"].as_f64().unwrap();
            assert!(e.is_finite() && e > 0.0, "{}: {p}", path.display());
            assert!((0.0..=5e-4).contains(&err), "{}: {p}", path.display());
            assert!(p["r_m"].as_f64().unwrap() >= 0.0);
            assert!(p["z_m"].as_f64().is_some());
            peaks += 1;
        }
    }
    assert!(jsons.len() >= 4, "only {} reference files", jsons.len());
    assert!(peaks >= 15, "only {peaks} reference peaks");
    assert!(
        insulator_peaks >= 3,
        "only {insulator_peaks} insulator reference peaks"
    );
}
