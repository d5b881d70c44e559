//! The design file: every example validates, potentials and column expansion come out as
//! specified, and every class of bad input gives its stable code, line and message.
//!
//! Each file in tests/bad_input/ starts with `# expect: CODE | FRAGMENT` and marks the line
//! the problem must point at with `# <-- CODE`.

use holdoff::design::{self, ListingKind};
use holdoff::model::Shape;
use holdoff::model::{Origin, PotentialSpec, Tank, Wall};
use std::path::Path;

fn load(path: &str) -> holdoff::model::Model {
    match design::load(Path::new(path)) {
        Ok((m, _)) => m,
        Err(e) => panic!("{e}"),
    }
}

fn close(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-12 * a.abs().max(b.abs()).max(1.0)
}

#[test]
fn every_example_validates() {
    let mut n = 0;
    for entry in std::fs::read_dir("examples").unwrap() {
        let path = entry.unwrap().path();
        if path.extension().is_some_and(|e| e == "toml") {
            if let Err(e) = design::load(&path) {
                panic!("{e}");
            }
            n += 1;
        }
    }
    assert!(n >= 3, "found {n} examples");
}

#[test]
fn demo_a_expands_its_column_with_tube_electrodes() {
    let m = load("examples/demo_750kv.toml");
    assert_eq!(
        m.tank,
        Tank::Cylinder {
            inner_radius: 0.55,
            length: 2.4
        }
    );
    assert_eq!((m.ends, m.side), (Wall::Grounded, Wall::Grounded));
    assert!(close(m.terminal_voltage, -800e3)); // an electron machine: negative terminal
    let gas = m.gas.as_ref().unwrap();
    assert_eq!(gas.species, "SF6");
    assert_eq!(gas.components, vec![("SF6".to_string(), 1.0)]);
    assert!(close(gas.pressure_pa, 3.0e5));
    assert!(close(gas.temperature_k, 293.15));

    // Two direct conductors, then 26 planes of torus + disc.
    assert_eq!(m.conductors.len(), 2 + 2 * 26);
    assert_eq!(m.columns.len(), 1);
    let col = &m.columns[0];
    assert_eq!(col.name, "column");
    assert_eq!((col.from, col.to), (Some(0), Some(1)));
    assert_eq!(col.electrodes.len(), 26);
    assert_eq!(col.resistor_ohm, Some(1e9));
    assert!(close(col.tolerance.unwrap(), 0.01));
    assert_eq!(col.strings, 1);
    let pg = col.protective_gap.expect("protective gaps");
    assert_eq!((pg.firing_v, pg.span), (45e3, 1));
    assert!(close(pg.band, 0.1));
    assert_eq!(col.resistor_rating_v, Some(50e3));
    assert_eq!(col.resistor_power_w, Some(2.0));
    assert_eq!(col.leakage, holdoff::model::LeakageSpec::FromMaterials);
    assert_eq!(col.node_current_a, vec![0.0; 26]);

    // Electrode 7: z = 345 mm + 6 x 45 mm = 615 mm, on node 7.
    let e7 = &m.conductors[col.electrodes[6]];
    assert_eq!(e7.name, "column electrode 7");
    assert_eq!(e7.potential, PotentialSpec::Grading { column: 0, node: 7 });
    match e7.shape {
        Shape::Torus {
            center_z,
            major_radius,
            minor_radius,
        } => {
            assert!(close(center_z, 0.615));
            assert!(close(major_radius, 0.25));
            assert!(close(minor_radius, 0.01));
        }
        ref s => panic!("{s:?}"),
    }
    assert!(matches!(
        e7.origin,
        Origin::Column {
            column: 0,
            electrode: 7,
            line: Some(_)
        }
    ));
    // Its disc: r 12.5..70 mm, 2 mm thick about the same plane, fully rounded edge, same node.
    let d7 = m
        .conductors
        .iter()
        .find(|c| c.name == "column tube electrode 7")
        .unwrap();
    assert_eq!(d7.potential, e7.potential);
    match d7.shape {
        Shape::RoundedRect {
            r0,
            r1,
            z0,
            z1,
            corner_radius,
        } => {
            assert!(close(r0, 0.0125) && close(r1, 0.07));
            assert!(close(z0, 0.614) && close(z1, 0.616));
            assert!(close(corner_radius, 0.001));
        }
        ref s => panic!("{s:?}"),
    }
    // Direct conductors keep their potentials and the line of their header.
    assert_eq!(m.conductors[0].potential, PotentialSpec::Ground);
    assert_eq!(
        m.conductors[1].potential,
        PotentialSpec::Terminal { fraction: 1.0 }
    );
    assert!(matches!(
        m.conductors[1].origin,
        Origin::Direct { line: Some(25) }
    ));

    // Dielectrics from the built-in table, with their source and mark.
    let alumina = m
        .dielectrics
        .iter()
        .find(|d| d.name == "tube insulator")
        .unwrap();
    assert_eq!(alumina.material.as_deref(), Some("alumina"));
    assert_eq!(alumina.eps_r, 9.4);
    assert!(alumina.source.contains("data sheets"));
    let support = &m.dielectrics[0];
    assert_eq!(support.eps_r, 5.0);
    assert!(support.source.contains("from memory"));
    assert_eq!(m.vacuum.len(), 1);

    let mult = m.multiplier.as_ref().unwrap();
    assert_eq!(mult.topology, "symmetric");
    assert_eq!(mult.stages, 8);
    assert!(close(mult.stage_capacitance_f, 6.8e-9));
    assert!(close(mult.drive_frequency_hz, 50e3));
    assert!(close(mult.drive_peak_v, 50e3));
    assert!(close(mult.load_current_a, 10.3e-3));
    assert_eq!(mult.stray_capacitance_f, Some(4e-12));

    assert_eq!(m.checks.design_factor, 1.5);
    assert!(m.checks.overrides.is_empty());
    // No hand-set cell: 1/400 of the 2.4 m tank, curved parts at 12 cells per radius, 0.5 %.
    assert!(close(m.mesh.cell, 6e-3));
    assert!(close(m.mesh.max_cell, 48e-3));
    assert!(m.mesh.adaptive());
    assert!(close(m.mesh.accuracy, 0.005));
    assert_eq!(m.probes.len(), 2);
    assert!(close(m.probes[0].at.z, 0.9));

    // The listing shows every primitive and notes the discs cutting through the alumina.
    let rows = design::expansion_listing(&m);
    assert_eq!(rows.len(), 54 + 2 + 1);
    let disc = rows
        .iter()
        .find(|r| r.name == "column tube electrode 7")
        .unwrap();
    assert_eq!(disc.kind, ListingKind::Conductor);
    assert!(
        disc.shape.contains("12.50 mm to 70.00 mm"),
        "{}",
        disc.shape
    );
    assert!(disc.notes.iter().any(|n| n.contains("tube insulator")));
    let torus = rows
        .iter()
        .find(|r| r.name == "column electrode 7")
        .unwrap();
    assert!(torus.notes.is_empty());
    assert_eq!(
        torus.potential.as_deref(),
        Some("grading node 7 of column `column`")
    );
}

#[test]
fn demo_b_has_two_columns_of_79_hoops_sharing_the_terminal() {
    let m = load("examples/tandem_3mv.toml");
    assert!(close(m.terminal_voltage, 3e6));
    let gas = m.gas.as_ref().unwrap();
    assert!(close(gas.pressure_pa, 6.5e5));
    assert!(close(gas.temperature_k, 298.15));
    assert_eq!(m.columns.len(), 2);
    let (le, he) = (&m.columns[0], &m.columns[1]);
    assert_eq!((le.name.as_str(), he.name.as_str()), ("LE", "HE"));
    assert_eq!(le.electrodes.len(), 79);
    assert_eq!(he.electrodes.len(), 79);
    // Both run from their grounded end shield to the shared terminal (conductor 1).
    assert_eq!((le.from, le.to), (Some(0), Some(1)));
    assert_eq!((he.from, he.to), (Some(2), Some(1)));
    assert_eq!(le.strings, 2);
    assert_eq!(le.resistor_ohm, Some(2.4e9));
    assert_eq!(m.conductors.len(), 3 + 2 * 2 * 79);

    let z_of = |i: usize| match m.conductors[i].shape {
        Shape::Torus { center_z, .. } => center_z,
        ref s => panic!("{s:?}"),
    };
    assert!(close(z_of(le.electrodes[0]), 0.225));
    assert!(close(z_of(le.electrodes[78]), 2.175));
    // The high-energy column counts from its end shield towards the terminal.
    assert!(close(z_of(he.electrodes[0]), 5.175));
    assert!(close(z_of(he.electrodes[78]), 3.225));
    let he1 = &m.conductors[he.electrodes[0]];
    assert_eq!(he1.name, "HE column electrode 1");
    assert_eq!(he1.potential, PotentialSpec::Grading { column: 1, node: 1 });
    assert_eq!(
        m.conductors[le.electrodes[78]].name,
        "LE column electrode 79"
    );
}

#[test]
fn concentric_spheres_example_uses_a_spherical_tank() {
    let m = load("examples/concentric_spheres.toml");
    assert_eq!(m.tank, Tank::Sphere { inner_radius: 0.2 });
    assert_eq!(
        m.conductors[0].shape,
        Shape::Sphere {
            center_z: 0.2,
            radius: 0.1
        }
    );
    assert!(m.gas.is_none());
    // Default mesh: 1/400 of the domain's largest dimension (0.4 m).
    assert!(close(m.mesh.cell, 1e-3));
}

const BASE: &str = r#"
title = "potentials"
[tank]
inner_radius = "600 mm"
length = "2400 mm"
[terminal]
voltage = "-500 kV"
[[conductor]]
name = "shield"
shape = "rounded_cylinder"
r = ["0 mm", "250 mm"]
z = ["0 mm", "200 mm"]
corner_radius = "40 mm"
potential = "ground"
[[conductor]]
name = "terminal"
shape = "rounded_cylinder"
r = ["0 mm", "250 mm"]
z = ["1600 mm", "2000 mm"]
corner_radius = "60 mm"
potential = "terminal"
[[column]]
name = "A"
from = "shield"
to = "terminal"
electrodes = 20
z_first = "250 mm"
pitch = "60 mm"
major_radius = "200 mm"
minor_radius = "8 mm"
[[column]]
name = "B"
from = "ground"
to = "terminal"
electrodes = 10
z_first = "150 mm"
pitch = "100 mm"
major_radius = "450 mm"
minor_radius = "10 mm"
[multiplier]
topology = "half-wave"
stages = 5
stage_capacitance = "10 nF"
drive_frequency = "20 kHz"
drive_peak = "50 kV"
load_current = "1 mA"
stray_capacitance = "3 pF"
"#;

fn ring(name: &str, z_mm: f64, potential: &str) -> String {
    format!(
        "[[conductor]]\nname = \"{name}\"\nshape = \"torus\"\ncenter_z = \"{z_mm} mm\"\nmajor_radius = \"320 mm\"\nminor_radius = \"5 mm\"\npotential = \"{potential}\"\n"
    )
}

#[test]
fn every_potential_form_resolves() {
    let mut text = BASE.to_string();
    let forms = [
        ("r1", "0.4 terminal"),
        ("r2", "300 kV"),
        ("r3", "grading:12"),
        ("r4", "grading:B:3"),
        ("r5", "stage:3"),
        ("r6", "ground"),
        ("r7", "-3 kV"),
        ("r8", "grading:A:0"),
    ];
    for (k, (name, p)) in forms.iter().enumerate() {
        text.push_str(&ring(name, 500.0 + 100.0 * k as f64, p));
    }
    let m = design::from_str(&text, "potentials.toml").unwrap_or_else(|e| panic!("{e}"));
    let spec = |name: &str| {
        m.conductors
            .iter()
            .find(|c| c.name == name)
            .unwrap()
            .potential
            .clone()
    };
    assert_eq!(spec("r1"), PotentialSpec::Terminal { fraction: 0.4 });
    assert_eq!(spec("r2"), PotentialSpec::Absolute { volts: 300e3 });
    assert_eq!(
        spec("r3"),
        PotentialSpec::Grading {
            column: 0,
            node: 12
        }
    );
    assert_eq!(spec("r4"), PotentialSpec::Grading { column: 1, node: 3 });
    assert_eq!(spec("r5"), PotentialSpec::Stage { stage: 3 });
    assert_eq!(spec("r6"), PotentialSpec::Ground);
    assert_eq!(spec("r7"), PotentialSpec::Absolute { volts: -3e3 });
    assert_eq!(spec("r8"), PotentialSpec::Grading { column: 0, node: 0 });
    assert!(close(m.terminal_voltage, -500e3));
    // Column B ends on the tank.
    assert_eq!((m.columns[1].from, m.columns[1].to), (None, Some(1)));
    // Several columns: names carry the column name.
    assert!(
        m.conductors
            .iter()
            .any(|c| c.name == "B column electrode 10")
    );
    assert_eq!(
        m.multiplier.as_ref().unwrap().stray_capacitance_f,
        Some(3e-12)
    );
}

#[test]
fn mixture_overrides_and_mesh_are_read_in_si() {
    let text = format!(
        "{BASE}\n[gas]\nspecies = {{ SF6 = 0.2, N2 = \"80 %\" }}\npressure = \"120 psi\"\ntemperature = \"300 K\"\n\
         [checks]\ndesign_factor = 2\ngas_field_limit = \"10 kV/mm\"\narea_derating = 0.5\n\
         cranberg_constant = 1e13\ncorona_surface_factor = 0.8\n\
         [mesh]\ncell = \"1.5 mm\"\nmax_cell = \"20 mm\"\ngrowth = 1.2\n"
    );
    let m = design::from_str(&text, "mix.toml").unwrap_or_else(|e| panic!("{e}"));
    let gas = m.gas.unwrap();
    assert_eq!(gas.species, "SF6:0.2,N2:0.8");
    assert_eq!(gas.components.len(), 2);
    assert!(close(gas.components[1].1, 0.8));
    // 1 psi = 6894.757 Pa (NIST SP 811, 2008, Appendix B.8; from memory).
    assert!(close(gas.pressure_pa, 120.0 * 6894.757));
    assert_eq!(m.checks.design_factor, 2.0);
    // Stored in the fixed order of the override list, SI values.
    let keys: Vec<&str> = m.checks.overrides.iter().map(|(k, _)| k.as_str()).collect();
    assert_eq!(
        keys,
        [
            "gas_field_limit",
            "area_derating",
            "cranberg_constant",
            "corona_surface_factor"
        ]
    );
    assert!(close(m.checks.overrides[0].1, 10e6));
    assert!(close(m.checks.overrides[2].1, 1e13));
    assert!(close(m.mesh.cell, 1.5e-3));
    assert!(close(m.mesh.max_cell, 0.02));
    assert_eq!(m.mesh.growth, 1.2);
}

/// The expectation written at the top of a bad-input file, and the marked line.
fn expectation(text: &str) -> (String, String, usize) {
    let first = text.lines().next().unwrap_or_default();
    let spec = first
        .strip_prefix("# expect: ")
        .unwrap_or_else(|| panic!("no expectation line: {first}"));
    let (code, fragment) = spec.split_once(" | ").unwrap();
    let marker = format!("# <-- {}", code.trim());
    let line = text
        .lines()
        .position(|l| l.trim_end().ends_with(&marker))
        .unwrap_or_else(|| panic!("no line marked {marker}"))
        + 1;
    (code.trim().to_string(), fragment.trim().to_string(), line)
}

#[test]
fn every_bad_input_gives_its_code_line_and_message() {
    let mut files: Vec<_> = std::fs::read_dir("tests/bad_input")
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|e| e == "toml"))
        .collect();
    files.sort();
    assert!(files.len() >= 20, "only {} bad inputs", files.len());
    let mut codes = std::collections::BTreeSet::new();
    for path in &files {
        let text = std::fs::read_to_string(path).unwrap();
        let (code, fragment, line) = expectation(&text);
        let name = path.display().to_string();
        let err = match design::from_str(&text, &name) {
            Ok(_) => panic!("{name}: accepted"),
            Err(e) => e,
        };
        let hit = err
            .problems
            .iter()
            .find(|p| p.code == code && p.line == line);
        let Some(p) = hit else {
            panic!("{name}: no `{code}` on line {line}; got:\n{err}");
        };
        let all = format!("{} {}", p.message, p.help.as_deref().unwrap_or(""));
        assert!(
            all.contains(&fragment),
            "{name}: `{fragment}` not in: {all}"
        );
        assert!(p.column >= 1);
        assert!(p.span.start <= p.span.end && p.span.end <= text.len());
        codes.insert(code);
    }
    assert!(codes.len() >= 20, "{codes:?}");
}

#[test]
fn all_problems_are_reported_at_once_with_locations() {
    let text = r#"[tank]
inner_radius = 550
lenght = "2 m"

[terminal]
voltage = "3 bar"

[[conductor]]
name = "terminal"
shape = "sphere"
center_z = "1 m"
radius = "-5 cm"
potential = "terminal"
"#;
    let err = design::from_str(text, "many.toml").unwrap_err();
    let got: Vec<(&str, usize)> = err.problems.iter().map(|p| (p.code, p.line)).collect();
    for want in [
        ("missing-unit", 2),
        ("unknown-key", 3),
        ("wrong-dimension", 6),
        ("out-of-range", 12),
    ] {
        assert!(got.contains(&want), "{want:?} not in {got:?}");
    }
    // Sorted by position; the display names file, line and column, then the help.
    let lines: Vec<usize> = err.problems.iter().map(|p| p.line).collect();
    let mut sorted = lines.clone();
    sorted.sort();
    assert_eq!(lines, sorted);
    let shown = err.to_string();
    assert!(
        shown.contains("many.toml, line 2, column 16: `tank.inner_radius = 550` is a bare number"),
        "{shown}"
    );
    assert!(
        shown.contains("remedy: write the number with a unit, e.g. \"550 mm\""),
        "{shown}"
    );
    assert!(
        shown.contains("many.toml, line 3, column 1: unknown key `lenght`"),
        "{shown}"
    );
    assert!(shown.contains("did you mean `length`?"), "{shown}");
}

#[test]
fn a_conductor_may_cut_through_a_dielectric_but_not_another_conductor() {
    // Through a dielectric: accepted, and noted in the listing.
    let mut text = BASE.to_string();
    text.push_str(
        "[[dielectric]]\nname = \"post\"\neps_r = 5.0\nshape = \"tube\"\nr = [\"310 mm\", \"330 mm\"]\nz = [\"300 mm\", \"1500 mm\"]\n",
    );
    text.push_str(&ring("through", 700.0, "0.5 terminal"));
    let m = design::from_str(&text, "cut.toml").unwrap_or_else(|e| panic!("{e}"));
    let rows = design::expansion_listing(&m);
    let row = rows.iter().find(|r| r.name == "through").unwrap();
    assert!(row.notes[0].contains("cuts through dielectric `post`"));
    // Two conductors at the same potential may touch or overlap.
    let mut same = BASE.to_string();
    same.push_str(&ring("x1", 700.0, "0.5 terminal"));
    // 0.5 of a 500 kV terminal is 250 kV: the same potential, written two ways.
    same.push_str(&ring("x2", 705.0, "250 kV"));
    let e = design::from_str(&same.replace("-500 kV", "500 kV"), "same.toml");
    assert!(e.is_ok(), "{}", e.unwrap_err());
    // A column end node is the end conductor's potential: no overlap there either.
    let mut end = BASE.to_string();
    end.push_str(&ring("y", 1600.0, "grading:A:21").replace("320 mm", "240 mm"));
    assert!(design::from_str(&end, "end.toml").is_ok());
}

#[test]
fn a_misspelt_key_is_not_also_reported_missing() {
    let text = std::fs::read_to_string("tests/bad_input/unknown_key.toml").unwrap();
    let err = design::from_str(&text, "unknown_key.toml").unwrap_err();
    assert_eq!(err.problems.len(), 1, "{err}");
}

#[test]
fn several_columns_need_names_and_names_must_be_known() {
    let text = BASE.replace("name = \"B\"\n", "");
    let err = design::from_str(&text, "noname.toml").unwrap_err();
    let p = &err.with_code("missing-key")[0];
    assert_eq!(p.key, "column[2].name");
    assert_eq!(p.line, 31);
}

#[test]
fn a_stage_beyond_the_multiplier_is_rejected() {
    let text = format!("{BASE}{}", ring("s", 800.0, "stage:6"));
    let err = design::from_str(&text, "stage.toml").unwrap_err();
    let p = &err.with_code("unknown-stage")[0];
    assert!(p.message.contains("stages 1 to 5"), "{}", p.message);
}

/// A small xorshift generator, seeded, so the mutated inputs are the same on every run.
struct Rng(u64);

impl Rng {
    fn next(&mut self) -> u64 {
        self.0 ^= self.0 << 13;
        self.0 ^= self.0 >> 7;
        self.0 ^= self.0 << 17;
        self.0
    }
    fn below(&mut self, n: usize) -> usize {
        (self.next() % n.max(1) as u64) as usize
    }
}

#[test]
fn mangled_design_files_give_errors_not_panics() {
    let pieces = [
        "\"", "=", "[", "]", "-", "0", "9", "e", "\u{b5}", "\n", " ", "{", "}", ",", "#", "1e9",
        "-1", "grading:", "0 mm", "ground",
    ];
    let mut rng = Rng(0x5eed_1234_abcd_0001);
    for file in [
        "examples/demo_750kv.toml",
        "examples/tandem_3mv.toml",
        "examples/concentric_spheres.toml",
    ] {
        let original: Vec<char> = std::fs::read_to_string(file).unwrap().chars().collect();
        for round in 0..100 {
            let mut text = original.clone();
            for _ in 0..1 + rng.below(3) {
                let at = rng.below(text.len());
                match rng.below(3) {
                    0 => {
                        let end = (at + 1 + rng.below(12)).min(text.len());
                        text.drain(at..end);
                    }
                    1 => {
                        let piece = pieces[rng.below(pieces.len())];
                        text.splice(at..at, piece.chars());
                    }
                    _ => {
                        let piece = pieces[rng.below(pieces.len())];
                        let end = (at + 1).min(text.len());
                        text.splice(at..end, piece.chars());
                    }
                }
            }
            let text: String = text.into_iter().collect();
            let result = std::panic::catch_unwind(|| design::from_str(&text, "mangled.toml"));
            match result {
                Ok(Ok(_)) => {}
                Ok(Err(e)) => assert!(!e.problems.is_empty(), "{file} round {round}"),
                Err(_) => panic!("{file} round {round} panicked on:\n{text}"),
            }
        }
    }
}
