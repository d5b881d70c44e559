//! Fault replay: the transient distribution of a capacitive chain against the hyperbolic
//! ladder solution (docs/references.md §9, check row 37), the superposition basis against a direct
//! solve, and reruns with the same seed.

use super::common;
use crate::faults::{Basis, Kind, ReplayOptions, fast_step, replay};
use crate::grading;
use crate::mesh::Mesh;
use crate::solve::{Solver, SolverParams};

fn small() -> crate::model::Model {
    crate::design::from_str(&common::small_fault_column(), "small.toml").expect("valid design")
}

/// The fault replay of a design text without Monte Carlo draws.
fn replay_text(text: &str) -> crate::faults::FaultReplay {
    let m = crate::design::from_str(text, "variant.toml").expect("valid design");
    let mesh = Mesh::build(&m).expect("mesh");
    let options = ReplayOptions {
        samples: 0,
        ..Default::default()
    };
    replay(&m, &mesh, &SolverParams::default(), None, &options, &|_| {}).expect("replay")
}

/// The first (worst-ranked) scenario of a kind; for the transient, the bare one (the column
/// floating, before any protective gap conducts).
fn first(r: &crate::faults::FaultReplay, kind: Kind) -> &crate::faults::ScenarioResult {
    r.scenarios
        .iter()
        .find(|s| s.kind == kind && !s.protective_gaps_conducting)
        .expect("a scenario of that kind")
}

/// A uniform chain of N gaps, series capacitance C_g per gap and C_p from each node to
/// ground, hit by a −V step at its HV end with the nodes floating: the shift of node x is
/// −V·sinh(αx)/sinh(α), α = √(C_e/C_s) with C_e = N·C_p and C_s = C_g/N (docs/references.md §9
/// [M], Kuffel et al. 2000 Ch. 3; check row 37: α = 2 gives V(0.5)/V = 0.3240 and the HV-end
/// field factor α·coth α = 2.0746), within 2 %.
#[test]
fn capacitive_chain_reproduces_the_hyperbolic_distribution() {
    let alpha: f64 = 2.0;
    let n = 100;
    let cg = 10e-12;
    let cp = cg * (alpha / n as f64).powi(2);
    // Electrodes: nodes 1..=n (node 0 is the earthed end); node n is the terminal.
    let c = chain(n, cg, cp);
    let v = 1e6;
    let before: Vec<f64> = (1..=n).map(|k| v * k as f64 / n as f64).collect();
    let floating: Vec<bool> = (1..=n).map(|k| k < n).collect();
    let mut after_held = before.clone();
    after_held[n - 1] = 0.0;
    let after = fast_step(&c, &floating, &before, &after_held).expect("solves");
    let shift: Vec<f64> = after.iter().zip(&before).map(|(a, b)| a - b).collect();

    let exact = |x: f64| (alpha * x).sinh() / alpha.sinh();
    assert!((exact(0.5) - 0.3240).abs() < 1e-4, "check row 37");
    assert!((alpha / alpha.tanh() - 2.0746).abs() < 1e-4, "check row 37");
    for k in 1..=n {
        let x = k as f64 / n as f64;
        let got = -shift[k - 1] / v;
        assert!(
            (got - exact(x)).abs() <= 0.02 * exact(x),
            "x = {x}: {got} vs {}",
            exact(x)
        );
    }
    let mid = -shift[n / 2 - 1] / v;
    assert!((mid - 0.3240).abs() / 0.3240 < 0.02, "{mid}");
    let end_slope = (shift[n - 2] - shift[n - 1]) / v * n as f64;
    assert!((end_slope - 2.0746).abs() / 2.0746 < 0.02, "{end_slope}");
}

/// The uniform capacitive chain of the test above (N gaps, series C_g, C_p to ground per
/// node), built as its Maxwell matrix with the terminal as electrode n − 1.
fn chain(n: usize, cg: f64, cp: f64) -> Vec<Vec<f64>> {
    let mut c = vec![vec![0.0; n]; n];
    for i in 0..n {
        c[i][i] = cp + cg + if i + 1 < n { cg } else { 0.0 };
        if i + 1 < n {
            c[i][i + 1] = -cg;
            c[i + 1][i] = -cg;
        }
    }
    c
}

fn charges(c: &[Vec<f64>], v: &[f64]) -> Vec<f64> {
    c.iter()
        .map(|row| row.iter().zip(v).map(|(a, b)| a * b).sum())
        .collect()
}

/// A protective gap between two floating electrodes that conducts during the collapse: it
/// holds V_b − V_a at its clamp, and the charge it passes leaves one electrode for the other,
/// so the pair keeps its total charge (conservation of charge with Q = C V, Maxwell's
/// capacitance coefficients). Two floating electrodes and the terminal of a three-gap chain,
/// solved by hand from those two equations, within 1e-9 relative.
#[test]
fn a_conducting_gap_holds_its_clamp_and_shares_the_charge() {
    use crate::faults::{GapLink, clamped_step};
    let c = chain(3, 20e-12, 4e-12);
    let v = 300e3;
    let before = vec![v / 3.0, 2.0 * v / 3.0, v];
    let floating = vec![true, true, false];
    let after_held = vec![before[0], before[1], 0.0];
    let bare = fast_step(&c, &floating, &before, &after_held).expect("solves");
    let clamp = 0.5 * (bare[1] - bare[0]).abs();
    assert!(
        clamp > 1e3,
        "the bare step must overshoot: {}",
        bare[1] - bare[0]
    );
    let link = GapLink {
        a: Some(0),
        b: Some(1),
        clamp_v: clamp,
    };
    let step = clamped_step(&c, &floating, &before, &after_held, &[link]).expect("solves");
    assert_eq!(step.conducting, vec![0]);
    let d = (bare[1] - bare[0]).signum() * clamp;
    let q = charges(&c, &before);
    // (C00 + C10) V1 + (C01 + C11) V2 = Q1 + Q2 with V2 = V1 + d and the terminal at 0.
    let v1 = (q[0] + q[1] - (c[0][1] + c[1][1]) * d) / (c[0][0] + c[1][0] + c[0][1] + c[1][1]);
    let v2 = v1 + d;
    assert!(
        (step.potentials[0] - v1).abs() <= 1e-9 * v,
        "{} vs {v1}",
        step.potentials[0]
    );
    assert!(
        (step.potentials[1] - v2).abs() <= 1e-9 * v,
        "{} vs {v2}",
        step.potentials[1]
    );
    assert_eq!(step.potentials[2], 0.0);
}

/// The capacitance a spark across one gap sees, with the other electrodes floating: in a
/// series chain of N equal capacitors C between two held ends, the gap's own C in parallel
/// with the other N − 1 in series through the held ends, C·N/(N − 1) (capacitors in series and
/// in parallel: Hayt, Kemmerly and Durbin, Engineering Circuit Analysis, the chapter on
/// capacitors and inductors; recalled from memory), within 1e-12 relative, for an inner gap
/// and an end gap.
#[test]
fn transfer_capacitance_of_a_series_chain() {
    use crate::faults::transfer_capacitance;
    let n = 8;
    let cs = 25e-12;
    // Electrodes: the N − 1 inner nodes; both ends of the chain are held.
    let m = n - 1;
    let c = nalgebra::DMatrix::from_fn(m, m, |i, j| {
        if i == j {
            2.0 * cs
        } else if i.abs_diff(j) == 1 {
            -cs
        } else {
            0.0
        }
    });
    let lu = c.lu();
    let row: Vec<Option<usize>> = (0..m).map(Some).collect();
    let exact = cs * n as f64 / (n as f64 - 1.0);
    let inner = transfer_capacitance(&lu, &row, Some(2), Some(3)).expect("floats");
    assert!((inner - exact).abs() <= 1e-12 * exact, "{inner} vs {exact}");
    let end = transfer_capacitance(&lu, &row, None, Some(0)).expect("floats");
    assert!((end - exact).abs() <= 1e-12 * exact, "{end} vs {exact}");
    assert_eq!(transfer_capacitance(&lu, &row, None, None), None);
}

/// The hyperbolic chain of docs/references.md §9 with a protective gap across every gap: the
/// collapse fires a run of gaps from the terminal end (the largest voltages of the
/// sinh(αx)/sinh(α) distribution), each conducting gap holds exactly its clamp, no gap is left
/// over its clamp, and every electrode no conducting gap touches keeps its charge
/// (conservation of charge, Q = C V).
#[test]
fn protective_gaps_cascade_from_the_terminal_end() {
    use crate::faults::{GapLink, clamped_step};
    let n = 40;
    let alpha: f64 = 4.0;
    let cg = 10e-12;
    let c = chain(n, cg, cg * (alpha / n as f64).powi(2));
    let v = 1e6;
    let before: Vec<f64> = (1..=n).map(|k| v * k as f64 / n as f64).collect();
    let floating: Vec<bool> = (1..=n).map(|k| k < n).collect();
    let mut after_held = before.clone();
    after_held[n - 1] = 0.0;
    // Gap k between node k and k + 1 (node 0 is the earth); clamp 2 × the nominal V/N.
    let clamp = 2.0 * v / n as f64;
    let links: Vec<GapLink> = (0..n)
        .map(|k| GapLink {
            a: k.checked_sub(1),
            b: Some(k),
            clamp_v: clamp,
        })
        .collect();
    let step = clamped_step(&c, &floating, &before, &after_held, &links).expect("solves");
    let p = &step.potentials;
    let gap = |k: usize| p[k] - if k == 0 { 0.0 } else { p[k - 1] };
    assert!(step.conducting.len() >= 2, "{:?}", step.conducting);
    assert!(step.over_in_loop.is_empty());
    let first = step.conducting[0];
    assert_eq!(
        step.conducting,
        (first..n).collect::<Vec<_>>(),
        "a run to the terminal"
    );
    for k in 0..n {
        if step.conducting.contains(&k) {
            assert!(
                (gap(k).abs() - clamp).abs() <= 1e-9 * clamp,
                "gap {k}: {}",
                gap(k)
            );
        } else {
            assert!(gap(k).abs() <= clamp * (1.0 + 1e-9), "gap {k}: {}", gap(k));
        }
    }
    let (q0, q1) = (charges(&c, &before), charges(&c, p));
    for e in 0..first.saturating_sub(1) {
        assert!((q1[e] - q0[e]).abs() <= 1e-9 * q0[e].abs(), "electrode {e}");
    }
}

/// The field of a scenario formed from the unit-potential basis equals a direct solve of the
/// same potentials within 1e-6 relative (linearity of ∇·(ε∇φ) = 0 in the boundary values).
#[test]
fn basis_field_equals_a_direct_solve() {
    let m = small();
    let mesh = Mesh::build(&m).expect("mesh");
    let params = SolverParams::default();
    let basis = Basis::build(&m, &mesh, &params).expect("basis");
    // An open resistor in gap 2.
    let net = grading::Network::from_column(&m, 0)
        .expect("column")
        .with_open(2, 0)
        .expect("resistor");
    let (v0, v1) = grading::column_ends(&m, None, 0).expect("ends");
    let sol = net.solve(v0, v1).expect("network");
    let pots = grading::potentials_with_nodes(&m, None, &[sol.node_v]).expect("potentials");
    let phi_b = basis.field(&basis.electrode_potentials(&pots));
    let direct = Solver::new(&mesh, params)
        .solve(&pots, None)
        .expect("solves");
    let scale = direct.phi.iter().fold(0.0_f64, |a, x| a.max(x.abs()));
    let err = phi_b
        .iter()
        .zip(&direct.phi)
        .fold(0.0_f64, |a, (x, y)| a.max((x - y).abs()));
    println!("basis vs direct: max |Δφ| / max |φ| = {:.2e}", err / scale);
    assert!(err / scale < 1e-6, "{}", err / scale);
    // The peak surface fields from both agree within 1e-5 relative: the single-precision unit
    // solutions (rounding 6e-8 of the unit potential) stay far below the discretisation
    // error, which the grid study puts at 1e-3 and more.
    let peaks = |phi: &[f64]| {
        let fm = crate::field::FieldMap::new(&mesh, &m, phi, &pots);
        fm.conductor_peaks(&fm.surface_samples())
    };
    let (pb, pd) = (peaks(&phi_b), peaks(&direct.phi));
    for (a, b) in pb.iter().zip(&pd) {
        let (ea, eb) = (a.peak_surface_field_v_per_m, b.peak_surface_field_v_per_m);
        assert!(
            (ea - eb).abs() <= 1e-5 * eb.abs(),
            "{}: {ea} vs {eb}",
            a.name
        );
    }
    // Fields formed together (each unit solution read once for the set) equal those formed
    // one at a time, and the fixed nodes hold their conductors' potentials.
    let nominal_pots = {
        let sol = grading::Network::from_column(&m, 0)
            .expect("column")
            .solve(v0, v1)
            .expect("network");
        grading::potentials_with_nodes(&m, None, &[sol.node_v]).expect("potentials")
    };
    let base_v = basis.electrode_potentials(&nominal_pots);
    let base = basis.field(&base_v);
    let sets = vec![basis.electrode_potentials(&pots), base_v.clone()];
    let together = basis.fields_from(&base, &base_v, &sets);
    for (set, t) in sets.iter().zip(&together) {
        let alone = basis.field_from(&base, &base_v, set);
        let d = alone
            .iter()
            .zip(t)
            .fold(0.0_f64, |a, (x, y)| a.max((x - y).abs()));
        assert!(d <= 1e-9 * scale, "{d}");
    }
    for (k, &f) in mesh.fixed.iter().enumerate() {
        if let Some(c) = f.conductor_index() {
            assert_eq!(together[0][k], pots[c], "node {k}");
        }
    }
    // The capacitance matrix of the basis against one from direct unit solves to the full
    // tolerance, column by column (Gauss's law on each electrode, as the basis forms it).
    let groups = crate::capacitance::electrodes(&m);
    let mut solver = Solver::new(&mesh, params);
    let c_scale = (0..groups.len())
        .map(|i| basis.capacitance.c_f[i][i].abs())
        .fold(0.0, f64::max);
    for (j, g) in groups.iter().enumerate() {
        let mut unit = vec![0.0; m.conductors.len()];
        for &k in &g.conductors {
            unit[k] = 1.0;
        }
        let sol = solver.solve(&unit, None).expect("unit solve");
        let q = crate::capacitance::conductor_charges(&mesh, &sol.phi, &unit);
        for (i, gi) in groups.iter().enumerate() {
            let c: f64 = gi.conductors.iter().map(|&k| q[k]).sum();
            let d = (c - basis.capacitance.c_f[i][j]).abs();
            assert!(
                d <= 1e-6 * c_scale,
                "C[{i}][{j}]: {c} vs {}",
                basis.capacitance.c_f[i][j]
            );
        }
    }
    // Reciprocity of the capacitance matrix from the same basis (Green's reciprocity).
    assert!(
        basis.capacitance.asymmetry < 0.02,
        "{}",
        basis.capacitance.asymmetry
    );
}

/// Every scenario reruns to the same numbers with the same seed; the scenario set holds the
/// nominal case, one open and one short per resistor, the tolerance cases and the transient.
#[test]
fn replay_is_repeatable_and_complete() {
    let m = small();
    let mesh = Mesh::build(&m).expect("mesh");
    let params = SolverParams::default();
    let options = ReplayOptions {
        samples: 8,
        seed: 42,
        ..Default::default()
    };
    let a = replay(&m, &mesh, &params, None, &options, &|_| {}).expect("replay");
    let b = replay(&m, &mesh, &params, None, &options, &|_| {}).expect("replay");
    let ja = serde_json::to_string(&a).expect("json");
    let jb = serde_json::to_string(&b).expect("json");
    assert_eq!(ja, jb);
    let count = |k: Kind| a.scenarios.iter().filter(|s| s.kind == k).count();
    assert_eq!(count(Kind::Nominal), 1);
    assert_eq!(count(Kind::Open), 5);
    assert_eq!(count(Kind::Short), 5);
    let conducting = a
        .scenarios
        .iter()
        .filter(|s| s.protective_gaps_conducting)
        .count();
    assert_eq!(count(Kind::Transient), 1 + conducting);
    assert!(conducting <= 1);
    // Five worst-case gaps and the worst Monte Carlo draw.
    assert_eq!(count(Kind::Tolerance), 6);
    let mc = a.monte_carlo.as_ref().expect("draws");
    assert_eq!(mc.draws, 8);
    // No draw loads a gap more than the tolerance worst case of a series divider (Ohm's law):
    // one resistor at +t, the other N − 1 at −t, (1 + t)·N / ((1 + t) + (N − 1)(1 − t)).
    let (t, n) = (0.01, 5.0);
    let bound = (1.0 + t) * n / ((1.0 + t) + (n - 1.0) * (1.0 - t));
    assert!(
        mc.gap_ratio_max > 1.0 && mc.gap_ratio_max <= bound,
        "{}",
        mc.gap_ratio_max
    );
    assert!(mc.gap_ratio_mean <= mc.gap_ratio_max);
    // Ranked worst first.
    for w in a.scenarios.windows(2) {
        if let (Some(x), Some(y)) = (w[0].worst_margin, w[1].worst_margin) {
            assert!(x <= y);
        }
    }
    // An open resistor in a single string with a 60 kV gap across it: 200 kV would sit
    // across the open gap, so the protective gap fires and holds 60 kV (Kirchhoff).
    let open = first(&a, Kind::Open);
    assert!(open.protective_gap_fired);
    let g = open.resistor.expect("resistor").gap;
    assert!((open.gap_voltages_v[0][g] - 60e3).abs() < 1.0);
    // The gap then fires over and over, passing the chain current (200 − 60) kV / 4 GOhm =
    // 35 uA on average (Ohm's law); each spark dumps at most ½·C·V_f², and the mean power is
    // ½·I·V_f.
    let rep = open.repetitive_firing.first().expect("repetitive firing");
    assert_eq!(open.repetitive_firing.len(), 1);
    assert!((rep.current_a - 35e-6).abs() < 1e-10, "{}", rep.current_a);
    assert!(rep.capacitance_f > 0.0);
    assert!((rep.energy_per_spark_j - 0.5 * rep.capacitance_f * 60e3 * 60e3).abs() < 1e-12);
    assert!((rep.power_w - 0.5 * 35e-6 * 60e3).abs() < 1e-6);
    assert!((rep.rate_hz * rep.capacitance_f * 60e3 - rep.current_a).abs() < 1e-12);
    // The transient reverses the gap next to the terminal (the floating electrodes keep
    // their potential while the terminal falls to 0).
    let tr = first(&a, Kind::Transient);
    let last = *tr.gap_voltages_v[0].last().expect("gaps");
    assert!(last < 0.0, "{last}");
    // A different seed draws differently.
    let c = replay(
        &m,
        &mesh,
        &params,
        None,
        &ReplayOptions {
            samples: 8,
            seed: 43,
            ..Default::default()
        },
        &|_| {},
    )
    .expect("replay");
    let mc_c = c.monte_carlo.as_ref().expect("draws");
    assert_ne!(
        serde_json::to_string(mc).expect("json"),
        serde_json::to_string(mc_c).expect("json")
    );
}

/// The screened replay (a conductor's rows formed only where its nominal margin, over the
/// rise of the field around it, does not clear the scenario's worst margin) gives the same
/// replay, to the bit, as the direct evaluation of every row of every scenario. The small
/// column and the demo machine (examples/demo_750kv.toml, an invented machine) with its
/// Monte Carlo draws.
#[test]
fn screened_replay_equals_the_full_evaluation() {
    let demo = std::fs::read_to_string("examples/demo_750kv.toml").expect("demo");
    let demo = crate::design::from_str(&demo, "demo_750kv.toml").expect("valid demo");
    for (m, samples) in [(small(), 8), (demo, 4)] {
        let mesh = Mesh::build(&m).expect("mesh");
        let params = SolverParams::default();
        let run = |exhaustive: bool| {
            let options = ReplayOptions {
                samples,
                exhaustive,
                ..Default::default()
            };
            let r = replay(&m, &mesh, &params, None, &options, &|_| {}).expect("replay");
            serde_json::to_string(&r).expect("json")
        };
        assert_eq!(run(false), run(true), "{}", m.title);
    }
}

/// Conditioning: with gaps 1–4 of the small column shorted, every column electrode is tied to
/// the earthed end and only the terminal is charged, so the stored energy is ½·C_tt·V² with
/// C_tt the terminal's diagonal Maxwell coefficient (energy of a capacitor, W = ½CV²), and the
/// whole of it is released when the terminal falls to 0.
#[test]
fn conditioning_spark_energy_with_shorted_sections() {
    let m = small();
    let mesh = Mesh::build(&m).expect("mesh");
    let params = SolverParams::default();
    let options = ReplayOptions {
        samples: 0,
        seed: 1,
        shorted_sections: vec![crate::faults::Section {
            column: 0,
            first_gap: 0,
            last_gap: 3,
        }],
        ..Default::default()
    };
    let r = replay(&m, &mesh, &params, None, &options, &|_| {}).expect("replay");
    let t = r
        .electrodes
        .iter()
        .position(|e| e == "terminal")
        .expect("terminal electrode");
    let c_tt = r.capacitance_matrix_f[t][t];
    let v: f64 = 200e3;
    let e = r.spark_energy_conditioning.as_ref().expect("conditioning");
    let expected = 0.5 * c_tt * v * v;
    assert!(
        (e.stored_j - expected).abs() / expected < 1e-6,
        "{} vs {expected}",
        e.stored_j
    );
    assert!((e.released_fast_j - e.stored_j).abs() / e.stored_j < 1e-6);
    let full = r.spark_energy.as_ref().expect("spark");
    assert!(full.released_fast_j > 0.0 && full.released_fast_j <= full.stored_j);
}

/// Resistor ratings: each resistor of the nominal chain sees V/N = 40 kV and dissipates
/// (V/N)²/R = 1.6 W (Ohm's law), so a 50 kV, 1 W rating gives a voltage margin of 1.25 and a
/// power margin of 0.625, exceeded. Just after a spark the resistor next to the terminal sees
/// its full transient gap voltage, but with a protective gap across every gap at most the top
/// of its firing band: here 50 kV × 1.1 = 55 kV.
#[test]
fn resistor_ratings_are_checked_against_dc_and_the_clamped_transient() {
    let small = common::small_fault_column();
    let text = small
        .replace(
            r#"grading = { resistor = "1 GOhm", tolerance = "1 %", strings = 1 }"#,
            r#"grading = { resistor = "1 GOhm", tolerance = "1 %", strings = 1, rating = "50 kV", power_rating = "1 W" }"#,
        )
        .replace(r#"firing = "60 kV""#, r#"firing = "50 kV""#);
    assert_ne!(text, small);
    let r = replay_text(&text);
    let nominal = first(&r, Kind::Nominal);
    let rc = &nominal.resistors;
    assert!((rc.max_v - 40e3).abs() < 1.0, "{}", rc.max_v);
    assert!((rc.rating_margin.expect("rated") - 1.25).abs() < 1e-4);
    assert!((rc.max_power_w.expect("power") - 1.6).abs() < 1e-4);
    assert!((rc.power_margin.expect("rated") - 0.625).abs() < 1e-4);
    assert!(nominal.resistor_rating_exceeded);
    let tr = first(&r, Kind::Transient);
    let rc = &tr.resistors;
    assert!(
        rc.max_v > 55e3,
        "the unclamped transient should exceed the clamp: {}",
        rc.max_v
    );
    assert!(
        (rc.clamped_max_v - 55e3).abs() < 1.0,
        "{}",
        rc.clamped_max_v
    );
    assert!((rc.rating_margin.expect("rated") - 50.0 / 55.0).abs() < 1e-6);
    assert!(
        rc.max_power_w.is_none(),
        "no steady dissipation in a transient"
    );
    assert!(tr.resistor_rating_exceeded);
    // With the gaps conducting, no gap of the column holds more than the top of the band.
    let held = r
        .scenarios
        .iter()
        .find(|s| s.protective_gaps_conducting)
        .expect("the gaps conduct");
    assert_eq!(held.kind, Kind::Transient);
    assert!(held.max_gap_v <= 55e3 * (1.0 + 1e-9), "{}", held.max_gap_v);
    assert!((held.max_gap_v - 55e3).abs() < 1.0, "{}", held.max_gap_v);

    // An impulse rating of 80 kV takes over from the 50 kV DC rating for the transient only:
    // margin 80/55, not exceeded; the DC scenarios keep the 50 kV rating.
    let pulsed = text.replace(
        r#"power_rating = "1 W""#,
        r#"power_rating = "1 W", impulse_rating = "80 kV""#,
    );
    assert_ne!(pulsed, text);
    let r = replay_text(&pulsed);
    let tr = first(&r, Kind::Transient);
    assert!((tr.resistors.rating_margin.expect("rated") - 80.0 / 55.0).abs() < 1e-6);
    assert!(!tr.resistor_rating_exceeded);
    let nominal = first(&r, Kind::Nominal);
    assert!((nominal.resistors.rating_margin.expect("rated") - 1.25).abs() < 1e-4);
    assert!(
        crate::report::faults::notes(&r)
            .iter()
            .any(|n| n.contains("impulse rating 80.0 kV"))
    );
}

/// A basis that would not fit the memory budget is refused before any solve, with the
/// electrode and node counts and what to change.
#[test]
fn a_basis_too_large_for_the_memory_is_refused() {
    let m = small();
    let mesh = Mesh::build(&m).expect("mesh");
    let tiny = crate::mesh::Budget::Memory {
        available_bytes: 1 << 16,
    };
    match Basis::build_within(&m, &mesh, &SolverParams::default(), tiny) {
        Err(e @ crate::faults::FaultError::TooLarge { .. }) => {
            let text = e.to_string();
            assert!(text.contains("5 unit solutions"), "{text}");
            assert!(text.contains(&format!("{} nodes", mesh.nodes())), "{text}");
            assert!(text.contains("[mesh] cell"), "{text}");
        }
        Err(e) => panic!("wrong error: {e}"),
        Ok(_) => panic!("a 64 KiB budget was accepted"),
    }
}

/// The ladder's end-gap voltage just after a spark, against the hyperbolic distribution
/// evaluated directly (node shift −V·sinh(αx)/sinh(αN) added to the linear profile, docs/references.md
/// §9 [M], Kuffel et al. 2000 Ch. 3; check row 37): the overflow-safe form agrees, and the
/// small column's equivalent ladder has positive capacitances.
#[test]
fn ladder_end_gap_matches_the_hyperbolic_distribution() {
    for (alpha, n) in [(0.3f64, 27.0f64), (0.15, 80.0), (2.0 / 5.0, 5.0)] {
        let v = 750e3;
        let node = |x: f64| v * x / n - v * (alpha * x).sinh() / (alpha * n).sinh();
        let direct = node(n) - node(n - 1.0);
        let f = crate::faults::ladder_end_gap(v, alpha, n);
        assert!(
            (f - direct).abs() < 1e-9 * v,
            "α {alpha} N {n}: {f} vs {direct}"
        );
    }
    // Overflow-safe at αN far beyond f64's sinh range.
    assert!(crate::faults::ladder_end_gap(1e6, 3.0, 400.0).is_finite());
    let m = small();
    let mesh = Mesh::build(&m).expect("mesh");
    let basis = Basis::build(&m, &mesh, &SolverParams::default()).expect("basis");
    let l = crate::faults::ladder_equivalents(&m, &basis, None).expect("ends resolve");
    assert_eq!(l.len(), 1);
    assert!(l[0].series_f > 0.0 && l[0].shunt_f > 0.0);
    assert!((l[0].alpha_n - 5.0 * l[0].alpha_per_gap).abs() < 1e-12);
    assert!(
        l[0].ladder_end_gap_v < 0.0,
        "reversed: {}",
        l[0].ladder_end_gap_v
    );
}

/// A terminal given in volts (or fed as "stage:N") instead of tied to the terminal voltage
/// still sparks: the highest-voltage conductor collapses, and with the same potentials the
/// transient is the same as for `potential = "terminal"`.
#[test]
fn a_terminal_in_volts_sparks_like_the_terminal() {
    let options = ReplayOptions {
        samples: 0,
        ..Default::default()
    };
    let run = |text: &str| {
        let m = crate::design::from_str(text, "t.toml").expect("valid design");
        let mesh = Mesh::build(&m).expect("mesh");
        replay(&m, &mesh, &SolverParams::default(), None, &options, &|_| {}).expect("replay")
    };
    let tied = run(&common::small_fault_column());
    let volts_text = common::small_fault_column().replacen(
        "potential = \"terminal\"",
        "potential = \"200 kV\"",
        1,
    );
    assert_ne!(volts_text, common::small_fault_column());
    let volts = run(&volts_text);
    let transient =
        |r: &crate::faults::FaultReplay| first(r, Kind::Transient).gap_voltages_v.clone();
    let (a, b) = (transient(&tied), transient(&volts));
    for (x, y) in a[0].iter().zip(&b[0]) {
        assert!((x - y).abs() < 1e-6 * 200e3, "{x} vs {y}");
    }
    assert!(
        crate::report::faults::notes(&volts)
            .iter()
            .any(|n| n.contains("highest voltage"))
    );
}

/// With an arc floor V_min the gap is a relaxation oscillator between V_min and V_f: each spark
/// releases ½·C·(V_f² − V_min²), the column current recharges C by V_f − V_min between sparks,
/// and the mean power is ½·I·(V_f + V_min) (the relaxation oscillator of a passive gap,
/// docs/practice.md §2.3, published practice; energy of a capacitor W = ½CV², charge Q = CV). Open resistor of the small
/// column: I = (200 − 60) kV / 4 GOhm = 35 uA (Ohm's law).
#[test]
fn arc_floor_sets_the_relaxation_figures() {
    let text = common::small_fault_column().replace(
        r#"protective_gap = { firing = "60 kV" }"#,
        r#"protective_gap = { firing = "60 kV", arc_floor = "10 kV" }"#,
    );
    assert_ne!(text, common::small_fault_column());
    let r = replay_text(&text);
    let open = first(&r, Kind::Open);
    let f = open.repetitive_firing.first().expect("repetitive firing");
    let (vf, vm, c) = (60e3, 10e3, f.capacitance_f);
    assert!(f.arc_floor_given && f.arc_floor_v == vm);
    assert!((f.current_a - 35e-6).abs() < 1e-10);
    let i = f.current_a;
    assert!((f.energy_per_spark_j - 0.5 * c * (vf * vf - vm * vm)).abs() <= 1e-12);
    assert!((f.rate_hz - i / (c * (vf - vm))).abs() <= 1e-9 * f.rate_hz);
    assert!((f.power_w - 0.5 * i * (vf + vm)).abs() <= 1e-9);
    // A floor at or above the firing voltage is refused, naming the key.
    let bad = common::small_fault_column().replace(
        r#"protective_gap = { firing = "60 kV" }"#,
        r#"protective_gap = { firing = "60 kV", arc_floor = "60 kV" }"#,
    );
    let err = crate::design::from_str(&bad, "bad.toml").expect_err("refused");
    let msg = format!("{err:?}");
    assert!(
        msg.contains("arc_floor") && msg.contains("below the firing voltage"),
        "{msg}"
    );
}

/// Without a resistor value the division is known but not the currents, so an open resistor
/// still fires its protective gap but no repetition rate or spark energy is claimed.
#[test]
fn no_repetition_figures_without_resistor_values() {
    let text = common::small_fault_column().replace(
        r#"grading = { resistor = "1 GOhm", tolerance = "1 %", strings = 1 }"#,
        r#"grading = { tolerance = "1 %", strings = 1 }"#,
    );
    assert_ne!(text, common::small_fault_column());
    let r = replay_text(&text);
    let open = first(&r, Kind::Open);
    assert!(open.protective_gap_fired);
    assert!(open.repetitive_firing.is_empty());
}

/// A small invented tandem in SF6: two columns of three tori between grounded end shields
/// and a terminal, the high-energy one the mirror image of the low-energy one in the
/// terminal's middle plane, z = 450 mm.
fn mini_tandem() -> crate::model::Model {
    let column = |name: &str, from: &str, z_first: &str, pitch: &str| {
        format!(
            r#"
[[column]]
name = "{name}"
from = "{from}"
to = "terminal"
electrodes = 3
z_first = "{z_first}"
pitch = "{pitch}"
shape = "torus"
major_radius = "100 mm"
minor_radius = "8 mm"
grading = {{ resistor = "1 GOhm", tolerance = "1 %", strings = 1 }}
"#
        )
    };
    let body = |name: &str, z: [&str; 2], corner: &str, potential: &str| {
        format!(
            r#"
[[conductor]]
name = "{name}"
shape = "rounded_cylinder"
r = ["0 mm", "120 mm"]
z = ["{}", "{}"]
corner_radius = "{corner}"
potential = "{potential}"
"#,
            z[0], z[1]
        )
    };
    let text = format!(
        r#"
title = "mirrored test tandem"
[tank]
inner_radius = "250 mm"
length = "900 mm"
[gas]
species = "SF6"
pressure = "2 bar"
temperature = "20 degC"
[terminal]
voltage = "300 kV"
{}{}{}{}{}
[mesh]
cell = "5 mm"
"#,
        body("LE shield", ["0 mm", "100 mm"], "20 mm", "ground"),
        body("HE shield", ["800 mm", "900 mm"], "20 mm", "ground"),
        body("terminal", ["350 mm", "550 mm"], "30 mm", "terminal"),
        column("LE", "LE shield", "160 mm", "60 mm"),
        column("HE", "HE shield", "740 mm", "-60 mm"),
    );
    crate::design::from_str(&text, "tandem.toml").expect("valid design")
}

/// The basis solves a mirrored electrode from its counterpart's solution reflected. Checked
/// two independent ways on a tandem whose columns mirror each other: every high-energy
/// electrode pairs with the low-energy one of the same number, and its unit solution solved
/// from nothing equals that counterpart's, solved from nothing and reflected (the field of a
/// mirrored problem is the mirrored field); the basis built with the reflected starts equals
/// the direct solves.
#[test]
fn mirrored_electrodes_pair_and_their_solutions_reflect() {
    let m = mini_tandem();
    let mesh = Mesh::build(&m).expect("mesh");
    let groups = crate::capacitance::electrodes(&m);
    let partner = crate::faults::mirror_partners(&m, &mesh, &groups);
    let mut pairs = Vec::new();
    for (j, p) in partner.iter().enumerate() {
        let name = &groups[j].name;
        if name.starts_with("HE") {
            let i = p.unwrap_or_else(|| panic!("{name} has no mirror partner"));
            assert_eq!(groups[i].name, name.replacen("HE", "LE", 1));
            pairs.push((i, j));
        } else {
            assert!(p.is_none(), "{name} paired with {:?}", p);
        }
    }
    assert_eq!(pairs.len(), 3);
    let params = SolverParams::default();
    let mut solver = Solver::new(&mesh, params);
    let unit = |solver: &mut Solver, e: usize| {
        let mut pots = vec![0.0; m.conductors.len()];
        for &k in &groups[e].conductors {
            pots[k] = 1.0;
        }
        solver.solve(&pots, None).expect("solves").phi
    };
    let basis = Basis::build(&m, &mesh, &params).expect("basis");
    for (i, j) in pairs {
        let (le, he) = (unit(&mut solver, i), unit(&mut solver, j));
        let reflected = crate::faults::mirrored_in_z(&mesh, &le);
        let diff = reflected
            .iter()
            .zip(&he)
            .fold(0.0_f64, |a, (x, y)| a.max((x - y).abs()));
        println!(
            "{}: max |φ_HE − reflected φ_LE| = {diff:.2e}",
            groups[j].name
        );
        // The mesher's z lines mirror each other to about 1 µm (2e-4 of the 5 mm cell), not
        // exactly, so the two discrete problems differ by that much.
        assert!(diff < 1e-4, "{diff}");
        // The reflected start saves iterations over a start from nothing.
        let mut pots = vec![0.0; m.conductors.len()];
        for &k in &groups[j].conductors {
            pots[k] = 1.0;
        }
        let cold = solver.solve(&pots, None).expect("solves").info.iterations;
        let warm = solver
            .solve(&pots, Some(&reflected))
            .expect("solves")
            .info
            .iterations;
        println!("  iterations from nothing {cold}, from the reflection {warm}");
        assert!(warm < cold, "{warm} vs {cold}");
        let mut ev = vec![0.0; groups.len()];
        ev[j] = 1.0;
        let from_basis = basis.field(&ev);
        let diff = from_basis
            .iter()
            .zip(&he)
            .fold(0.0_f64, |a, (x, y)| a.max((x - y).abs()));
        assert!(diff < 1e-6, "basis vs direct: {diff}");
    }
}
