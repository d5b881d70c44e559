//! The DC grading network against hand-solved dividers (Ohm's and Kirchhoff's laws for series
//! and parallel resistors, any circuits text) and the fault figures of PRACTICE.md §2.4 (derived).

use holdoff::grading::{Network, ProtectiveGap};

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

/// One resistor shorted: each of the other N − 1 gaps takes V/(N − 1) (PRACTICE.md §2.4,
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
/// (PRACTICE.md §2.4, derived: 81.5 kV at 3.3 MV over 80 gaps).
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
        "PRACTICE.md §2.4 figure"
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
