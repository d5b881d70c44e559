//! The DC grading network against hand-solved dividers (Ohm's and Kirchhoff's laws for series
//! and parallel resistors, any circuits text) and the fault figures of docs/practice.md §2.4 (derived).

use super::common;
use crate::grading::{self, Network, ProtectiveGap};

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs()
}

/// A uniform chain divides the end-to-end voltage equally: V/N per gap.
#[test]
fn uniform_chain_gives_equal_gap_voltages() {
    let n = Network::uniform(27, 1, 1e9);
    let s = n.solve(0.0, 800e3).expect("solves");
    for v in &s.gap_v {
        assert!(rel(*v, 800e3 / 27.0) < 1e-9, "{v}");
    }
    // The current is V / (N R) in the single string.
    assert!(rel(s.resistor_current_a[5][0], 800e3 / 27e9) < 1e-9);
}

/// One resistor shorted: each of the other N − 1 gaps takes V/(N − 1) (docs/practice.md §2.4,
/// derived); the shorted gap takes none.
#[test]
fn one_shorted_resistor_gives_v_over_n_minus_one() {
    let gaps = 27;
    let n = Network::uniform(gaps, 1, 1e9)
        .with_short(10, 0)
        .expect("exists");
    let s = n.solve(0.0, 800e3).expect("solves");
    for (g, v) in s.gap_v.iter().enumerate() {
        if g == 10 {
            assert!(v.abs() < 1e-3, "{v}");
        } else {
            assert!(rel(*v, 800e3 / (gaps - 1) as f64) < 1e-6, "gap {g}: {v}");
        }
    }
}

/// One resistor of two strings open: that gap has R instead of R/2 and takes 2V/(N + 1)
/// (docs/practice.md §2.4, derived: 81.5 kV at 3.3 MV over 80 gaps).
#[test]
fn open_resistor_in_two_strings_doubles_the_share() {
    let gaps = 80;
    let n = Network::uniform(gaps, 2, 2.4e9)
        .with_open(40, 1)
        .expect("exists");
    let s = n.solve(0.0, 3.3e6).expect("solves");
    let expected = 2.0 * 3.3e6 / (gaps as f64 + 1.0);
    assert!(rel(s.gap_v[40], expected) < 1e-9, "{}", s.gap_v[40]);
    assert!(
        (s.gap_v[40] - 81.5e3).abs() < 0.05e3,
        "docs/practice.md §2.4 figure"
    );
    assert!(rel(s.gap_v[0], 3.3e6 / (gaps as f64 + 1.0)) < 1e-9);
}

/// With insulator leakage L in parallel with every gap, an open resistor's gap keeps only L:
/// four gaps of R = 1 GΩ ‖ L = 10 GΩ, one open, give the open gap
/// L / (3·(R‖L) + L) = 10 / (3·10/11 + 10) = 11/14 of V (hand-solved series divider).
#[test]
fn open_resistor_with_leakage_matches_the_hand_divider() {
    let mut n = Network::uniform(4, 1, 1e9);
    n.leakage_ohm = vec![Some(10e9); 4];
    let n = n.with_open(1, 0).expect("exists");
    let s = n.solve(0.0, 100e3).expect("solves");
    assert!(
        rel(s.gap_v[1], 100e3 * 11.0 / 14.0) < 1e-9,
        "{}",
        s.gap_v[1]
    );
    for g in [0, 2, 3] {
        assert!(rel(s.gap_v[g], 100e3 * 1.0 / 14.0) < 1e-9, "{}", s.gap_v[g]);
    }
}

/// A protective gap across the open gap clamps it at its firing voltage; the rest of the chain
/// shares what is left equally ((V − V_f)/(N − 1), Kirchhoff's voltage law).
#[test]
fn protective_gap_clamps_an_open_resistor() {
    let gaps = 10;
    let mut n = Network::uniform(gaps, 1, 1e9);
    n.protective = (0..gaps)
        .map(|g| ProtectiveGap {
            from_node: g,
            to_node: g + 1,
            firing_v: 15e3,
            band: 0.1,
        })
        .collect();
    let nominal = n.solve(0.0, 100e3).expect("solves");
    assert!(
        nominal.fired.iter().all(|f| !f),
        "10 kV per gap fires nothing"
    );
    let s = n
        .with_open(3, 0)
        .expect("exists")
        .solve(0.0, 100e3)
        .expect("solves");
    assert!(s.fired[3]);
    assert_eq!(s.fired.iter().filter(|f| **f).count(), 1);
    assert!(rel(s.gap_v[3], 15e3) < 1e-5, "{}", s.gap_v[3]);
    assert!(rel(s.gap_v[0], 85e3 / 9.0) < 1e-5, "{}", s.gap_v[0]);
    // The fired gap carries the whole chain current, (V − V_f)/((N − 1)·R) (Ohm's and
    // Kirchhoff's current law); the idle ones none.
    let chain = 85e3 / (9.0 * 1e9);
    assert!(
        rel(s.protective_current_a[3], chain) < 1e-5,
        "{}",
        s.protective_current_a[3]
    );
    assert_eq!(
        s.protective_current_a.iter().filter(|i| **i != 0.0).count(),
        1
    );
}

/// A section gap across several gaps clamps their sum; current drawn at a node (beam or
/// corona) shifts the division by I·R seen through the divider (superposition of the source
/// and the current: a current I drawn at the middle node of two equal resistors R lowers it by
/// I·R/2).
#[test]
fn section_gap_and_node_current() {
    let mut n = Network::uniform(2, 1, 1e9);
    n.node_current_a[1] = 10e-6;
    let s = n.solve(0.0, 100e3).expect("solves");
    assert!(
        rel(s.node_v[1], 50e3 - 10e-6 * 1e9 / 2.0) < 1e-9,
        "{}",
        s.node_v[1]
    );

    let mut n = Network::uniform(6, 1, 1e9).with_open(4, 0).expect("exists");
    n.protective = vec![ProtectiveGap {
        from_node: 3,
        to_node: 6,
        firing_v: 40e3,
        band: 0.1,
    }];
    let s = n.solve(0.0, 60e3).expect("solves");
    assert!(s.fired[0]);
    assert!(rel(s.node_v[6] - s.node_v[3], 40e3) < 1e-5);
    assert!(rel(s.node_v[3], 20e3) < 1e-5, "{}", s.node_v[3]);
}

#[test]
fn bad_values_are_errors_naming_what_is_accepted() {
    let n = Network::uniform(3, 1, 1e9);
    let e = n.with_open(5, 0).expect_err("no such resistor");
    assert!(e.to_string().contains("3 gaps"), "{e}");
    let mut bad = n.clone();
    bad.resistors_ohm[1][0] = -1.0;
    let e = bad.solve(0.0, 1.0).expect_err("negative resistor");
    assert!(e.to_string().contains("positive"), "{e}");
}

// ---------------------------------------------------------------------------------------------
// The network as a design file gives it: leakage from the insulators' materials, node
// currents, protective gaps per section, resistor ratings.
// ---------------------------------------------------------------------------------------------

/// A small invented column: ground shield, five tori, terminal, with an alumina tube from the
/// shield's top face (z = 150 mm) to the terminal's bottom face (z = 450 mm): six gaps of
/// 50 mm. `extra` is appended to the `[[column]]` table.
fn column_design(extra: &str) -> crate::model::Model {
    let tube = r#"[[dielectric]]
name = "support tube"
material = "alumina"
shape = "tube"
r = ["40 mm", "50 mm"]
z = ["150 mm", "450 mm"]"#;
    let column = format!("electrodes = 5\nz_first = \"200 mm\"\npitch = \"50 mm\"\n{extra}");
    let text = common::small_column("300 kV", tube, &column);
    match crate::design::from_str(&text, "grading_test.toml") {
        Ok(m) => m,
        Err(e) => panic!("{e}"),
    }
}

/// Bulk leakage of a straight insulator tube across a gap of length L is R = ρL/A with
/// A = π(r₁² − r₀²) (Ohm's law for a uniform conductor); alumina's table value is 1e12 Ohm·m
/// (common practice, from memory). Every gap here is 50 mm long.
#[test]
fn leakage_from_the_insulator_material_is_rho_l_over_a() {
    let m = column_design(r#"grading = { resistor = "1 GOhm" }"#);
    let l = grading::leakage::from_materials(&m, 0);
    let area = std::f64::consts::PI * (0.050f64.powi(2) - 0.040f64.powi(2));
    let expected = 1e12 * 0.050 / area;
    assert_eq!(l.per_gap_ohm.len(), 6);
    for (g, r) in l.per_gap_ohm.iter().enumerate() {
        let r = r.unwrap_or_else(|| panic!("gap {g} has no leakage"));
        assert!(rel(r, expected) < 0.01, "gap {g}: {r:e} vs {expected:e}");
    }
    assert_eq!(l.paths.len(), 1);
    assert_eq!(l.paths[0].material, "alumina");
    // The network of the column carries it, and `leakage = "none"` removes it.
    let n = Network::from_column(&m, 0).expect("network");
    assert!(
        n.leakage_ohm
            .iter()
            .all(|x| x.is_some_and(|r| rel(r, expected) < 0.01))
    );
    let none = column_design("grading = { resistor = \"1 GOhm\" }\nleakage = \"none\"");
    let n = Network::from_column(&none, 0).expect("network");
    assert!(n.leakage_ohm.iter().all(Option::is_none));
}

/// An open resistor with leakage L across every gap: the open gap (L alone) in series with
/// N − 1 gaps of R‖L takes V·L / (L + (N − 1)·R‖L) (series and parallel resistors).
#[test]
fn open_resistor_with_design_leakage_matches_the_hand_divider() {
    let m = column_design("grading = { resistor = \"1 GOhm\" }\nleakage = \"20 GOhm\"");
    let n = Network::from_column(&m, 0).expect("network");
    let s = n
        .with_open(2, 0)
        .expect("exists")
        .solve(0.0, 300e3)
        .expect("solves");
    let (r, l, gaps) = (1e9, 20e9, 6.0);
    let par = r * l / (r + l);
    let expected = 300e3 * l / (l + (gaps - 1.0) * par);
    assert!(
        rel(s.gap_v[2], expected) < 1e-9,
        "{} vs {expected}",
        s.gap_v[2]
    );
}

/// A current I drawn to ground at node k of a uniform chain of N resistors R between 0 and V
/// lowers node j by I·R·j(N − k)/N for j ≤ k and I·R·k(N − j)/N for j ≥ k (superposition;
/// the chain's transfer resistance, Kirchhoff's laws).
#[test]
fn a_node_current_lowers_the_chain_as_the_hand_solution() {
    let m = column_design(
        "grading = { resistor = \"1 GOhm\" }\nleakage = \"none\"\n\
         node_current = [\"0 uA\", \"0 uA\", \"10 uA\", \"0 uA\", \"0 uA\"]",
    );
    let n = Network::from_column(&m, 0).expect("network");
    let s = n.solve(0.0, 300e3).expect("solves");
    let (r, i, big_n, k) = (1e9, 10e-6, 6.0, 3.0);
    for (j, v) in s.node_v.iter().enumerate() {
        let j = j as f64;
        let drop = if j <= k {
            i * r * j * (big_n - k) / big_n
        } else {
            i * r * k * (big_n - j) / big_n
        };
        let expected = 300e3 * j / big_n - drop;
        assert!(
            (v - expected).abs() < 1e-6 * 300e3,
            "node {j}: {v} vs {expected}"
        );
    }
}

/// Protective gaps per section (`span = 3`): one across nodes 0–3 and one across 3–6. With a
/// resistor of the first section open and no leakage, that section clamps at its firing
/// voltage and the other three gaps share the rest equally.
#[test]
fn protective_gaps_per_section_clamp_their_section() {
    let m = column_design(
        "grading = { resistor = \"1 GOhm\" }\nleakage = \"none\"\n\
         protective_gap = { firing = \"200 kV\", span = 3 }",
    );
    let n = Network::from_column(&m, 0).expect("network");
    let spans: Vec<(usize, usize)> = n
        .protective
        .iter()
        .map(|p| (p.from_node, p.to_node))
        .collect();
    assert_eq!(spans, vec![(0, 3), (3, 6)]);
    let s = n
        .with_open(1, 0)
        .expect("exists")
        .solve(0.0, 300e3)
        .expect("solves");
    assert_eq!(s.fired, vec![true, false]);
    assert!(
        rel(s.node_v[3] - s.node_v[0], 200e3) < 1e-5,
        "{:?}",
        s.node_v
    );
    for g in 3..6 {
        assert!(
            rel(s.gap_v[g], 100e3 / 3.0) < 1e-5,
            "gap {g}: {}",
            s.gap_v[g]
        );
    }
}

/// The nominal summary of a uniform chain without leakage: current V/(N·R), V/N across each
/// resistor dissipating (V/N)²/R (Ohm's law), rating margins against both, and the protective
/// gaps' setting as firing ÷ (V/N), flagged outside 1.3–1.6 × (docs/practice.md §2.3, common
/// practice).
#[test]
fn nominal_summary_follows_ohms_law_and_flags_the_gap_setting() {
    let m = column_design(
        "grading = { resistor = \"1 GOhm\", rating = \"60 kV\", power_rating = \"2 W\" }\n\
         leakage = \"none\"\nprotective_gap = { firing = \"60 kV\" }",
    );
    let s = grading::summary::summarize(&m, None).expect("summary");
    let s = &s[0];
    let (v, n, r) = (300e3, 6.0, 1e9);
    assert!(rel(s.chain_current_a.expect("current"), v / (n * r)) < 1e-9);
    assert!(rel(s.resistor_v_max, v / n) < 1e-9);
    assert!(rel(s.resistor_power_w_max.expect("power"), (v / n).powi(2) / r) < 1e-9);
    assert!(rel(s.rating_margin.expect("rated"), 60e3 / (v / n)) < 1e-9);
    assert!(rel(s.power_margin.expect("rated"), 2.0 / 2.5) < 1e-9);
    let p = s.protective.as_ref().expect("protective gaps");
    assert!(rel(p.setting_ratio, 1.2) < 1e-9);
    assert!(!p.fired_at_nominal);
    assert!(
        s.notes
            .iter()
            .any(|x| x.contains("below the usual 1.3–1.6")),
        "{:?}",
        s.notes
    );
    assert!(
        s.notes.iter().any(|x| x.contains("power rating")),
        "{:?}",
        s.notes
    );
}
