//! Multiplier ladder against outside references. Each check names its source as
//! docs/references.md (§, check-table row) and docs/practice.md give it:
//!
//! - docs/references.md §8: Kuffel, Zaengl & Kuffel, *High Voltage Engineering: Fundamentals*,
//!   2nd ed. (2000), Ch. 2, and Naidu & Kamaraju, *High Voltage Engineering*, Ch. 6 — half-wave
//!   drop and ripple (confirmed via a secondary copy, [C, secondary + M]).
//! - docs/references.md §12: worked examples 1 (Naidu & Kamaraju, from memory [M]), 2 and 3 (an open
//!   textbook-companion worked example, Ex. 3 and Ex. 1 [C]).
//! - docs/references.md §14: ngspice transient runs ([D], derived).
//! - docs/practice.md §4.1: the time-domain table (derived, the project's own time-domain check).
//! - docs/references.md §8 discrete stray model, rows 34–35 ([D], ngspice-confirmed).
//!
//! Ripple is peak-to-peak throughout; drop is the simulated no-load output minus the cycle-mean
//! loaded output.

use holdoff::ladder::*;
use holdoff::model::Multiplier;

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs()
}

fn ctl(steps_per_cycle: usize) -> SimControls {
    SimControls {
        steps_per_cycle,
        ..SimControls::default()
    }
}

fn half_wave(n: usize, c: f64, v0: f64, f: f64, i: f64) -> LadderParams {
    LadderParams::uniform(Topology::HalfWave, n, c, v0, f, i).unwrap()
}

fn symmetric(n: usize, c: f64, v0: f64, f: f64, i: f64) -> LadderParams {
    LadderParams::uniform(Topology::Symmetric, n, c, v0, f, i).unwrap()
}

// ---------------------------------------------------------------------------------------------
// Closed forms (tight)

/// docs/references.md check row 30 (§8/§12 ex. 1, Naidu & Kamaraju Ch. 6 example, from memory [M];
/// numbers [D]): ΔV = 79.44 kV, δV_pp = 6.111 kV, V0 = 2749.0 kV, n_opt = 35.68, 1e-4.
#[test]
fn row_30_closed_forms_ten_stage_example() {
    let p = half_wave(10, 0.06e-6, 141.42e3, 150.0, 1e-3);
    let cf = closed_form(&p).unwrap();
    let hw = cf.half_wave.as_ref().unwrap();
    assert!(rel(hw.drop_v, 79.44e3) < 1e-4, "ΔV {}", hw.drop_v);
    assert!(rel(hw.ripple_pp_v, 6.111e3) < 1e-4, "δV {}", hw.ripple_pp_v);
    assert!(rel(hw.output_v, 2749.0e3) < 1e-4, "V0 {}", hw.output_v);
    // the table gives n_opt to two decimals
    assert_eq!(
        (hw.n_opt * 100.0).round() / 100.0,
        35.68,
        "n_opt {}",
        hw.n_opt
    );
    // §12 ex. 1: V_max(n_opt) ≈ 6.73 MV [D]
    assert!(
        rel(hw.max_output_v, 6.73e6) < 1e-3,
        "V_max {}",
        hw.max_output_v
    );
    assert_eq!(cf.ideal_no_load_v, 2.0 * 10.0 * 141.42e3);
}

/// docs/references.md check row 31 (§12 ex. 2, an open textbook-companion worked example, Ex. 3
/// [C/D]): δV_pp = 52.00 kV, ΔV = 814.67 kV, n_opt = 20.60, 1e-4.
#[test]
fn row_31_closed_forms_twelve_stage_example() {
    let p = half_wave(12, 0.15e-6, 282.84e3, 50.0, 5e-3);
    let hw = closed_form(&p).unwrap().half_wave.unwrap();
    assert!(rel(hw.ripple_pp_v, 52.00e3) < 1e-4, "δV {}", hw.ripple_pp_v);
    assert!(rel(hw.drop_v, 814.67e3) < 1e-4, "ΔV {}", hw.drop_v);
    assert_eq!(
        (hw.n_opt * 100.0).round() / 100.0,
        20.60,
        "n_opt {}",
        hw.n_opt
    );
}

fn doubler() -> LadderParams {
    let mut p = half_wave(1, 0.01e-6, 100e3 * 2f64.sqrt(), 50.0, 5e-3);
    p.capacitors.oscillating_f = vec![0.01e-6];
    p.capacitors.smoothing_f = vec![0.05e-6];
    p.diode = DiodeParams::near_ideal(0.01e-6, 50.0, p.drive.peak_v);
    p
}

/// docs/references.md check row 33 (§8/§12 ex. 3, an open textbook-companion worked example, Ex. 1
/// [C/D]): Greinacher doubler C1 = 0.01 µF, C2 = 0.05 µF, 100 kV rms, 50 Hz, 5 mA →
/// ripple 2.0 kV, mean drop 11.0 kV, mean output 271.84 kV, 1e-4.
#[test]
fn row_33_greinacher_doubler_closed_form() {
    let d = closed_form(&doubler()).unwrap().doubler.unwrap();
    assert!(rel(d.ripple_pp_v, 2.0e3) < 1e-4, "ripple {}", d.ripple_pp_v);
    assert!(rel(d.mean_drop_v, 11.0e3) < 1e-4, "drop {}", d.mean_drop_v);
    assert!(
        rel(d.mean_output_v, 271.84e3) < 1e-4,
        "out {}",
        d.mean_output_v
    );
}

/// Same worked example (docs/references.md §12 ex. 3), simulated: mean drop within 3 % of
/// (I/f)(1/C1 + 1/(2C2)). The ripple comes out below I/(fC2): the small C1 swings by
/// q/C1 = 10 kV (7 % of V₀) each cycle, so the diode conducts over a wide angle and C2
/// discharges for less than a whole period; asserted below the formula and within 10 %.
#[test]
fn greinacher_doubler_simulated_against_worked_example() {
    let r = simulate(&doubler(), &ctl(400)).unwrap();
    println!(
        "doubler: drop {:.1} V (11000), ripple {:.1} V (2000), mean {:.0} V (271840)",
        r.output.drop_v, r.output.ripple_pp_v, r.output.loaded_mean_v
    );
    assert!(rel(r.output.drop_v, 11.0e3) < 0.03);
    assert!(r.output.ripple_pp_v < 2.0e3);
    assert!(rel(r.output.ripple_pp_v, 2.0e3) < 0.10);
}

/// docs/references.md check rows 34–35 (§8 discrete model, [D], ngspice-confirmed): η = 0.8022 and
/// 0.5248 for n = 8 at C_s/C = 0.01, 0.04 (continuum 0.8300, 0.5760), 1e-3; the closed form
/// reproduces them to 1e-4.
#[test]
fn rows_34_35_stray_efficiency_closed_forms() {
    for (ratio, eta, cont) in [(0.01, 0.8022, 0.8300), (0.04, 0.5248, 0.5760)] {
        assert!((stray_efficiency_discrete(8, ratio).unwrap() - eta).abs() < 1e-4);
        assert!((stray_efficiency_continuum(8, ratio).unwrap() - cont).abs() < 1e-4);
    }
}

/// docs/references.md check row 40 (§13, [D]): 1 nF at 1 MV stores 500 J, exact.
#[test]
fn row_40_capacitor_energy() {
    assert_eq!(capacitor_energy_j(1e-9, 1e6), 500.0);
}

// ---------------------------------------------------------------------------------------------
// Half-wave simulation against the textbook forms

/// docs/references.md §8 (Kuffel et al. 2000 Ch. 2; Naidu & Kamaraju Ch. 6): with no strays and
/// small ripple, the simulated drop and p-p ripple lie within 3 % of
/// ΔV = (I/fC)(2n³/3 + n²/2 − n/6) and δV = (I/fC)·n(n+1)/2 for n ≥ 6 (docs/practice.md §4.1: the
/// formula holds to 1–2 % only from n = 6).
#[test]
fn half_wave_drop_and_ripple_within_3_percent_for_tall_stacks() {
    // (n, C, V0, f, I): docs/practice.md §4.1 parts; a kHz stack; a 50 kHz stack
    let sets = [
        (6, 1e-6, 1e3, 1e3, 1e-3),
        (8, 10e-9, 40e3, 20e3, 2e-3),
        (12, 6.8e-9, 50e3, 50e3, 10e-3),
    ];
    for (n, c, v0, f, i) in sets {
        let p = half_wave(n, c, v0, f, i);
        let hw = closed_form(&p).unwrap().half_wave.unwrap();
        let r = simulate(&p, &ctl(300)).unwrap();
        println!(
            "n={n}: drop {:.2} V vs {:.2} V ({:+.2} %), ripple {:.2} V vs {:.2} V ({:+.2} %), \
             ripple/output {:.1e}",
            r.output.drop_v,
            hw.drop_v,
            100.0 * (r.output.drop_v / hw.drop_v - 1.0),
            r.output.ripple_pp_v,
            hw.ripple_pp_v,
            100.0 * (r.output.ripple_pp_v / hw.ripple_pp_v - 1.0),
            r.output.ripple_relative
        );
        assert!(r.output.ripple_relative < 0.01, "not a small-ripple case");
        assert!(rel(r.output.drop_v, hw.drop_v) < 0.03);
        assert!(rel(r.output.ripple_pp_v, hw.ripple_pp_v) < 0.03);
        assert!(rel(r.output.no_load_v, 2.0 * n as f64 * v0) < 1e-5);
    }
}

/// docs/references.md §8 against the docs/practice.md §4.1 time-domain table (derived): at n = 2–4 the
/// textbook drop is optimistic (the finite conduction angle adds 4–14 %). The sign is asserted
/// and the size printed; the 3 % tolerance is not widened for these.
#[test]
fn half_wave_closed_form_is_optimistic_for_short_stacks() {
    for (n, table) in [(2, 7.97), (3, 23.41), (4, 51.82)] {
        // V0 = 1 kV, 1 kHz, 1 µF, 1 mA: I/(fC) = 1 V
        let p = half_wave(n, 1e-6, 1e3, 1e3, 1e-3);
        let hw = closed_form(&p).unwrap().half_wave.unwrap();
        let r = simulate(&p, &ctl(400)).unwrap();
        let excess = r.output.drop_v / hw.drop_v - 1.0;
        println!(
            "n={n}: simulated drop {:.2} V, textbook {:.2} V: textbook optimistic by {:.1} % \
             (docs/practice.md §4.1 table {table})",
            r.output.drop_v,
            hw.drop_v,
            100.0 * excess
        );
        assert!(
            excess > 0.0,
            "textbook drop should be below the simulated drop"
        );
        // the table is the same kind of calculation: agree within 1 %
        assert!(rel(r.output.drop_v, table) < 0.01);
    }
}

/// docs/references.md check row 32 (§14, [D]): n = 4, 10 kV, 50 Hz, 1 µF, 1 mA — formula ΔV 1.000 kV
/// against a ladder simulation within 10 %; the ngspice runs gave a mean drop of 1.032 kV and a
/// peak drop of 0.935 kV, which this simulation matches within 2 %.
#[test]
fn row_32_four_stage_formula_against_simulation() {
    let p = half_wave(4, 1e-6, 10e3, 50.0, 1e-3);
    let hw = closed_form(&p).unwrap().half_wave.unwrap();
    assert!(rel(hw.drop_v, 1000.0) < 1e-9);
    let r = simulate(&p, &ctl(400)).unwrap();
    println!(
        "row 32: mean drop {:.1} V (ngspice 1032), peak drop {:.1} V (ngspice 935)",
        r.output.drop_v, r.output.peak_drop_v
    );
    assert!(rel(r.output.drop_v, hw.drop_v) < 0.10);
    assert!(rel(r.output.drop_v, 1032.0) < 0.02);
    assert!(rel(r.output.peak_drop_v, 935.0) < 0.02);
}

/// docs/references.md §12 ex. 1 (Naidu & Kamaraju Ch. 6 example, from memory [M]) and ex. 2 (an
/// open textbook-companion worked example, Ex. 3 [C]) reproduced by simulation: drop and
/// ripple within 3 % of the book values.
#[test]
fn worked_examples_one_and_two_simulated() {
    let ex1 = half_wave(10, 0.06e-6, 141.42e3, 150.0, 1e-3);
    let r1 = simulate(&ex1, &ctl(300)).unwrap();
    println!(
        "ex. 1: drop {:.2} kV (79.44), ripple {:.3} kV (6.111), output {:.1} kV (2749.0)",
        r1.output.drop_v / 1e3,
        r1.output.ripple_pp_v / 1e3,
        r1.output.loaded_mean_v / 1e3
    );
    assert!(rel(r1.output.drop_v, 79.44e3) < 0.03);
    assert!(rel(r1.output.ripple_pp_v, 6.111e3) < 0.03);
    assert!(rel(r1.output.loaded_mean_v, 2749.0e3) < 0.002);

    let ex2 = half_wave(12, 0.15e-6, 282.84e3, 50.0, 5e-3);
    let r2 = simulate(&ex2, &ctl(300)).unwrap();
    println!(
        "ex. 2: drop {:.1} kV (814.7), ripple {:.2} kV (52.0); that book's mean-output \
         convention adds n(n+1)/4·I/(fC) for 840.7 kV, which double-counts: the simulated mean \
         is already below the peak by about half the ripple",
        r2.output.drop_v / 1e3,
        r2.output.ripple_pp_v / 1e3
    );
    assert!(rel(r2.output.drop_v, 814.7e3) < 0.03);
    assert!(rel(r2.output.ripple_pp_v, 52.0e3) < 0.03);
}

/// docs/references.md §8 [C]: n_opt = √(V₀fC/I). With V₀fC/I = 64 the simulated output at load,
/// scanned over n, peaks within one stage of n_opt = 8.
#[test]
fn optimum_stage_count_matches_simulated_maximum() {
    let (v0, f, c) = (1e3, 1e3, 1e-6);
    let i = v0 * f * c / 64.0;
    let n_opt = closed_form(&half_wave(8, c, v0, f, i))
        .unwrap()
        .half_wave
        .unwrap()
        .n_opt;
    assert!(rel(n_opt, 8.0) < 1e-12);
    let mut best = (0, f64::NEG_INFINITY);
    for n in 5..=11 {
        let r = simulate(&half_wave(n, c, v0, f, i), &ctl(200)).unwrap();
        println!("n={n}: output at load {:.1} V", r.output.loaded_mean_v);
        if r.output.loaded_mean_v > best.1 {
            best = (n, r.output.loaded_mean_v);
        }
    }
    println!("simulated maximum at n = {}, n_opt = {n_opt}", best.0);
    assert!((best.0 as f64 - n_opt).abs() <= 1.0);
}

// ---------------------------------------------------------------------------------------------
// Symmetric cascade: independent checks, not the unconfirmed compilation formula

/// Charge conservation per cycle (Kirchhoff's current law at the terminal over one period of
/// the steady state): the load charge I/f equals the charge delivered through the last
/// (transfer) diodes, and by the same balance every rectifier of a symmetric cascade passes
/// I/(2f) per cycle (every one of a half-wave cascade I/f).
#[test]
fn charge_balance_per_cycle() {
    let (f, i) = (1e3, 1e-3);
    for (p, per_diode) in [
        (symmetric(6, 1e-6, 1e3, f, i), i / (2.0 * f)),
        (half_wave(6, 1e-6, 1e3, f, i), i / f),
    ] {
        let r = simulate(&p, &ctl(200)).unwrap();
        let cb = &r.charge_balance;
        assert!(rel(cb.load_charge_per_cycle_c, i / f) < 1e-12);
        assert!(
            rel(cb.output_diode_charge_per_cycle_c, i / f) < 1e-6,
            "{:?}",
            cb
        );
        for d in r.stages.iter().flat_map(|s| &s.diodes) {
            assert!(rel(d.charge_per_cycle_c, per_diode) < 1e-4, "{}", d.label);
        }
    }
}

/// Symmetric drop against the docs/practice.md §4.1 time-domain table (derived, the project's own
/// time-domain check; V₀ = 1 kV, 1 kHz, 1 µF, 1 mA so I/(fC) = 1 V), within 2 %.
#[test]
fn symmetric_drop_against_time_domain_table() {
    for (n, table) in [(3, 7.71), (4, 15.93), (6, 46.81), (8, 103.63)] {
        let p = symmetric(n, 1e-6, 1e3, 1e3, 1e-3);
        let r = simulate(&p, &ctl(300)).unwrap();
        let sy = closed_form(&p).unwrap().symmetric.unwrap();
        println!(
            "symmetric n={n}: drop {:.2} V (table {table}); compilation (n³+2n)/6 = {:.2} V \
             (unconfirmed), time-domain fit = {:.2} V",
            r.output.drop_v, sy.drop_compilation_v, sy.drop_time_domain_v
        );
        assert!(rel(r.output.drop_v, table) < 0.02);
    }
}

/// Symmetric drop and p-p ripple against the docs/references.md §14 ngspice runs ([D]; V_m = 10 kV,
/// 50 Hz, 1 µF, current load), within 3 %.
#[test]
fn symmetric_against_ngspice_runs() {
    // (n, I/(fC), sim mean drop, sim δV_pp)
    for (n, a, drop, ripple) in [(4, 20.0, 315.0, 38.1), (6, 10.0, 464.0, 28.8)] {
        let p = symmetric(n, 1e-6, 10e3, 50.0, a * 50.0 * 1e-6);
        let r = simulate(&p, &ctl(300)).unwrap();
        println!(
            "symmetric n={n}: drop {:.1} V ({drop}), ripple {:.2} V ({ripple})",
            r.output.drop_v, r.output.ripple_pp_v
        );
        assert!(rel(r.output.drop_v, drop) < 0.03);
        assert!(rel(r.output.ripple_pp_v, ripple) < 0.03);
    }
}

// ---------------------------------------------------------------------------------------------
// Strays

fn oscillating_strays(p: &LadderParams, cs: f64) -> Vec<f64> {
    p.node_labels()
        .iter()
        .map(|l| if l.starts_with('o') { cs } else { 0.0 })
        .collect()
}

/// docs/references.md check rows 34–35 (§8 discrete model, [D]): n = 8, no load, strays C_s on the
/// oscillating nodes (supplied per node, as the field solution will): simulated
/// η = V_out/(2nV₀) = 0.8022 and 0.5248 within 1e-3. Started from 0 V (a switched-on,
/// discharged stack) so that the run, not the start, finds the answer.
#[test]
fn rows_34_35_strays_lower_the_output_simulated() {
    for (ratio, eta) in [(0.01, 0.8022), (0.04, 0.5248)] {
        let mut p = half_wave(8, 1e-6, 1e3, 1e3, 0.0);
        p.strays_f = oscillating_strays(&p, ratio * 1e-6);
        let controls = SimControls {
            start: Start::Zero,
            ..ctl(200)
        };
        let r = simulate(&p, &controls).unwrap();
        let cf = closed_form(&p).unwrap().strays.unwrap();
        println!(
            "C_s/C = {ratio}: simulated η {:.5}, discrete {:.5}, continuum {:.5}; {} cycles",
            r.output.no_load_efficiency,
            cf.efficiency_discrete,
            cf.efficiency_continuum,
            r.convergence.loaded.cycles
        );
        assert!((r.output.no_load_efficiency - eta).abs() < 1e-3);
        // the top of the oscillating column sees less drive than the bottom
        let amp = |k: usize| r.stages[k - 1].oscillating_amplitude_v[0];
        assert!(amp(8) < amp(1));
    }
}

/// docs/practice.md §4.4 / docs/references.md §8: a tall stack (30 stages) with strays on every node
/// loses output even unloaded; the simulation matches the discrete ladder within 1e-3 and the
/// same stack without strays reaches 2nV₀.
#[test]
fn strays_lower_the_output_of_a_tall_stack() {
    let clean = half_wave(30, 2e-9, 40e3, 35e3, 0.0);
    let r0 = simulate(&clean, &ctl(100)).unwrap();
    assert!(rel(r0.output.no_load_v, 2.0 * 30.0 * 40e3) < 1e-5);
    let stray = clean.clone().with_uniform_strays(10e-12);
    let r = simulate(&stray, &ctl(100)).unwrap();
    let cf = closed_form(&stray).unwrap().strays.unwrap();
    println!(
        "30 stages, C_s/C = 0.005: η simulated {:.4}, discrete {:.4}, continuum {:.4}",
        r.output.no_load_efficiency, cf.efficiency_discrete, cf.efficiency_continuum
    );
    assert!(r.output.no_load_efficiency < 0.9);
    assert!((r.output.no_load_efficiency - cf.efficiency_discrete).abs() < 1e-3);
}

// ---------------------------------------------------------------------------------------------
// Numerical convergence

/// The drop converges as the time step is refined (successive differences shrink) and the
/// finest run lies within 0.2 % of the docs/practice.md §4.1 table value 163.54 V (n = 6).
#[test]
fn converges_as_time_step_is_refined() {
    let p = half_wave(6, 1e-6, 1e3, 1e3, 1e-3);
    let drops: Vec<f64> = [64, 128, 256, 512, 1024]
        .iter()
        .map(|&s| simulate(&p, &ctl(s)).unwrap().output.drop_v)
        .collect();
    println!("drop by steps/cycle 64..1024: {drops:?}");
    let diffs: Vec<f64> = drops.windows(2).map(|w| (w[1] - w[0]).abs()).collect();
    for w in diffs.windows(2) {
        assert!(w[1] < w[0], "differences {diffs:?}");
    }
    assert!(rel(drops[4], 163.54) < 0.002);
}

/// Without acceleration, tighter steady-state tolerances add cycles, and the results move by
/// less than the looser tolerance; the accelerated run agrees with the tightest plain run.
#[test]
fn converges_as_cycles_are_added() {
    let p = half_wave(6, 1e-6, 1e3, 1e3, 1e-3);
    let run = |rel_tol: f64, accelerate: bool| {
        simulate(
            &p,
            &SimControls {
                rel_tol,
                accelerate,
                ..ctl(100)
            },
        )
        .unwrap()
    };
    let tols = [1e-5, 1e-7, 1e-9];
    let runs: Vec<LadderResult> = tols.iter().map(|&t| run(t, false)).collect();
    let v_scale = 2.0 * 6.0 * 1e3;
    for (k, t) in tols.iter().enumerate() {
        let info = &runs[k].convergence.loaded;
        println!(
            "rel_tol {t:e}: {} cycles, drop {:.6} V, last change {:.2e} V, remaining {:.2e} V",
            info.cycles,
            runs[k].output.drop_v,
            info.final_mean_change_v,
            info.estimated_remaining_v
        );
        assert!(info.estimated_remaining_v <= t * v_scale);
    }
    for k in 0..2 {
        assert!(runs[k + 1].convergence.loaded.cycles > runs[k].convergence.loaded.cycles);
        let moved = (runs[k + 1].output.loaded_mean_v - runs[k].output.loaded_mean_v).abs();
        assert!(moved <= tols[k] * v_scale, "moved {moved}");
    }
    let fast = run(1e-9, true);
    assert!((fast.output.loaded_mean_v - runs[2].output.loaded_mean_v).abs() < 1e-9 * v_scale);
    assert!(fast.convergence.loaded.cycles < runs[2].convergence.loaded.cycles);
}

// ---------------------------------------------------------------------------------------------
// Stored energy, ratings, discharge

/// Stored energy is Σ½Cv² of the simulated capacitor voltages (docs/references.md §13, row 40):
/// the totals equal the per-capacitor sums, and at no load they equal ½CV₀²(8n − 3) (half-wave)
/// and ½CV₀²(12n − 6) (symmetric), from the no-load charge states of docs/references.md §8 (every
/// capacitor at 2V₀ except the first oscillating one(s) at V₀ [M]).
#[test]
fn stored_energy_is_sum_of_half_c_v_squared() {
    let (c, v0) = (1e-6, 1e3);
    for (p, count) in [
        (half_wave(5, c, v0, 1e3, 0.0), 8.0 * 5.0 - 3.0),
        (symmetric(5, c, v0, 1e3, 0.0), 12.0 * 5.0 - 6.0),
    ] {
        let r = simulate(&p, &ctl(200)).unwrap();
        let ideal = 0.5 * c * v0 * v0 * count;
        assert!(
            rel(r.energy.total_j, ideal) < 1e-5,
            "{} vs {ideal}",
            r.energy.total_j
        );
        for s in &r.stages {
            let sum: f64 = s
                .capacitors
                .iter()
                .map(|k| capacitor_energy_j(k.capacitance_f, k.rms_v))
                .sum();
            assert!(rel(s.stored_energy_j, sum) < 1e-12);
        }
        let per_stage: f64 = r.energy.per_stage_j.iter().sum();
        assert!(rel(r.energy.total_j, per_stage) < 1e-12);
    }
    // at load: ½C·rms² differs from ½C·mean² only by the ripple
    let r = simulate(&half_wave(6, c, v0, 1e3, 1e-3), &ctl(200)).unwrap();
    let from_means: f64 = r
        .stages
        .iter()
        .flat_map(|s| &s.capacitors)
        .map(|k| capacitor_energy_j(k.capacitance_f, k.mean_v))
        .sum();
    assert!(rel(r.energy.total_j, from_means) < 1e-3);
}

/// Ratings at no load (docs/references.md §8 [C]/[M]; docs/practice.md §4.5): capacitors work at 2V₀
/// except the first oscillating one at V₀, and every diode sees a PIV of 2V₀.
#[test]
fn no_load_ratings() {
    let v0 = 1e3;
    let r = simulate(&half_wave(4, 1e-6, v0, 1e3, 0.0), &ctl(200)).unwrap();
    for s in &r.stages {
        for c in &s.capacitors {
            let expected = if c.label == "Co1" { v0 } else { 2.0 * v0 };
            assert!(rel(c.max_v, expected) < 1e-4, "{} {}", c.label, c.max_v);
        }
        for d in &s.diodes {
            assert!(rel(d.peak_inverse_v, 2.0 * v0) < 1e-4, "{}", d.label);
        }
    }
    assert_eq!(r.stage_mean_v(0), None);
    for k in 1..=4 {
        let v = r.stage_mean_v(k).unwrap();
        assert!(rel(v, 2.0 * k as f64 * v0) < 1e-5);
    }
}

/// Discharge of an unloaded doubler (equal C) through a divider R, derived here from the
/// circuit (the project's own check): the smoothing capacitor falls alone from 2V₀ to V₀
/// (τ = RC), then both capacitors together (τ = 2RC) to 1 % of 2V₀, so
/// t₁% = RC(ln 2 + 2 ln 50) = 8.517 RC; the reported τ = R·C_eff = RC.
#[test]
fn discharge_time_of_a_doubler() {
    let c = 1e-6;
    let mut p = half_wave(1, c, 1e3, 1e3, 0.0);
    p.divider_ohm = Some(2e6);
    p.dump_ohm = Some(2e6);
    let r = simulate(&p, &ctl(200)).unwrap();
    let d = r.discharge.unwrap();
    let rc = 1e6 * c;
    assert!(rel(d.resistance_ohm, 1e6) < 1e-12);
    assert!(rel(d.tau_s, rc) < 1e-12);
    assert!(rel(d.time_to_1pct_formula_s, rc * 100f64.ln()) < 1e-12);
    let expected = rc * (2f64.ln() + 2.0 * 50f64.ln());
    println!(
        "doubler discharge: {:.4} s simulated, {:.4} s derived",
        d.time_to_1pct_simulated_s, expected
    );
    assert!(rel(d.time_to_1pct_simulated_s, expected) < 0.01);
}

// ---------------------------------------------------------------------------------------------
// Sizing

fn target() -> SizeTarget {
    SizeTarget {
        topology: Topology::HalfWave,
        terminal_v: 100e3,
        load_current_a: 1e-3,
        ripple_limit_pp_v: 1e3,
        drive_peak_v: 10e3,
        drive_frequency_hz: 10e3,
        capacitor_values_f: Vec::new(),
        gradient_limit_v_per_m: Some(1e6),
        capacitor_rating_v: Some(25e3),
        diode_piv_rating_v: Some(25e3),
        stray_capacitance_f: 2e-12,
        diode: None,
        max_stages: Some(9),
        controls: ctl(152),
    }
}

fn assert_meets_every_limit(t: &SizeTarget, designs: &[SizedDesign]) {
    assert!(!designs.is_empty());
    for (k, d) in designs.iter().enumerate() {
        assert_eq!(d.rank, k + 1);
        // re-simulate independently
        let r = simulate(&d.params, &t.controls).unwrap();
        println!(
            "rank {}: n = {}, C = {:.3e} F, output {:.1} V, ripple {:.1} V, energy {:.3} J, \
             height {:.3} m",
            d.rank,
            d.stages,
            d.capacitance_f,
            r.output.loaded_mean_v,
            r.output.ripple_pp_v,
            r.energy.total_j,
            d.stack_height_m.unwrap()
        );
        assert!(r.output.loaded_mean_v >= t.terminal_v);
        assert!(r.output.ripple_pp_v <= t.ripple_limit_pp_v);
        assert!(r.max_capacitor_v() <= t.capacitor_rating_v.unwrap());
        assert!(r.max_diode_piv_v() <= t.diode_piv_rating_v.unwrap());
        assert!(rel(d.stored_energy_j, r.energy.total_j) < 1e-12);
        if let Some(&c) = t.capacitor_values_f.first() {
            assert!(t.capacitor_values_f.contains(&d.capacitance_f) || c == d.capacitance_f);
        }
        if k > 0 {
            assert!(designs[k - 1].stored_energy_j <= d.stored_energy_j);
        }
    }
}

/// `size` returns only designs that meet every limit, each re-simulated here.
#[test]
fn size_returns_only_feasible_designs() {
    let t = target();
    let designs = size(&t).unwrap().designs;
    assert_meets_every_limit(&t, &designs);

    let offered = SizeTarget {
        capacitor_values_f: vec![1e-9, 2.2e-9, 4.7e-9, 10e-9],
        ..target()
    };
    let designs = size(&offered).unwrap().designs;
    assert_meets_every_limit(&offered, &designs);
    for d in &designs {
        assert!(offered.capacitor_values_f.contains(&d.capacitance_f));
    }
}

/// 400 kV at 5 mA from a symmetric stack driven at 50 kV, 50 kHz, 5 to 9 stages.
fn request_400kv() -> SizeTarget {
    SizeTarget {
        topology: Topology::Symmetric,
        terminal_v: 400e3,
        load_current_a: 5e-3,
        ripple_limit_pp_v: 1e3,
        drive_peak_v: 50e3,
        drive_frequency_hz: 50e3,
        capacitor_values_f: Vec::new(),
        gradient_limit_v_per_m: None,
        capacitor_rating_v: None,
        diode_piv_rating_v: None,
        stray_capacitance_f: 0.0,
        diode: None,
        max_stages: Some(9),
        controls: ctl(152),
    }
}

/// A symmetric stack asked for 400 kV from a 50 kV drive: every design delivers the request
/// (not the 500–900 kV the stage counts give at full drive), with the drive turned down. The
/// turned-down drive is checked against the closed forms: at load the output is 2nV₀′ minus
/// the impulse-model drop (n³/6 + n²/4 + n/3)·I/(f·C) (docs/references.md §8; Kuffel, Zaengl
/// & Kuffel, High Voltage Engineering Fundamentals, 2nd ed., §2.2.1 for the half-wave form),
/// within 1 % of the drop plus 0.2 % of the output for the finite conduction angle.
#[test]
fn size_turns_the_drive_down_to_the_request() {
    let t = request_400kv();
    let sizing = size(&t).unwrap();
    assert_eq!(sizing.stages_searched, [5, 9]);
    assert_eq!(sizing.designs.len(), 5, "{:?}", sizing.rejected);
    for d in &sizing.designs {
        let out = d.output_at_load_v;
        assert!((400e3..=400e3 * (1.0 + OVERSHOOT)).contains(&out), "{out}");
        assert!(d.drive_turned_down && d.drive_peak_v < 50e3, "{d:?}");
        let n = d.stages as f64;
        let drop = (n.powi(3) / 6.0 + n * n / 4.0 + n / 3.0) * t.load_current_a
            / (t.drive_frequency_hz * d.capacitance_f);
        let closed = 2.0 * n * d.drive_peak_v - drop;
        assert!(
            (closed - out).abs() < 0.01 * drop + 0.002 * out,
            "{} stages: closed form {closed:.0} V, simulated {out:.0} V",
            d.stages
        );
        let r = simulate(&d.params, &t.controls).unwrap();
        assert!(rel(r.output.loaded_mean_v, out) < 1e-9);
    }
}

/// When no stage count can meet the request, the limit that blocked each is named: a 20 kV
/// capacitor rating against 400 kV needs 20 stages or more, beyond the 9 searched; offered
/// capacitances far too small for the load block on the capacitance range.
#[test]
fn size_names_the_limit_that_blocks_the_request() {
    let base = SizeTarget {
        capacitor_rating_v: Some(20e3),
        ..request_400kv()
    };
    let sizing = size(&base).unwrap();
    assert!(sizing.designs.is_empty());
    assert_eq!(sizing.blocking(), vec![(Blocking::CapacitorRating, 5)]);
    let small = SizeTarget {
        capacitor_rating_v: None,
        capacitor_values_f: vec![1e-12, 2.2e-12],
        ..base
    };
    let sizing = size(&small).unwrap();
    assert!(sizing.designs.is_empty());
    assert_eq!(sizing.blocking(), vec![(Blocking::CapacitanceRange, 5)]);
}

// ---------------------------------------------------------------------------------------------
// Errors

#[test]
fn invalid_parameters_name_the_field_and_value() {
    let m = Multiplier {
        topology: "half-wave".into(),
        stages: 0,
        stage_capacitance_f: 1e-9,
        drive_frequency_hz: 1e3,
        drive_peak_v: 1e3,
        load_current_a: 1e-3,
        stray_capacitance_f: Some(0.0),
    };
    let cases = [
        (Multiplier { ..m.clone() }, "multiplier.stages", "0"),
        (
            Multiplier {
                stages: 3,
                stage_capacitance_f: -1e-9,
                ..m.clone()
            },
            "multiplier.stage_capacitance",
            "-0.000000001 F",
        ),
        (
            Multiplier {
                stages: 3,
                drive_frequency_hz: 0.0,
                ..m.clone()
            },
            "multiplier.drive_frequency",
            "0 Hz",
        ),
        (
            Multiplier {
                stages: 3,
                drive_peak_v: f64::NAN,
                ..m.clone()
            },
            "multiplier.drive_peak",
            "NaN V",
        ),
        (
            Multiplier {
                stages: 3,
                topology: "full-wave".into(),
                ..m.clone()
            },
            "multiplier.topology",
            "\"full-wave\"",
        ),
    ];
    for (mult, field, value) in cases {
        match LadderParams::from_multiplier(&mult, None) {
            Err(LadderError::InvalidParameter {
                field: f, value: v, ..
            }) => {
                assert_eq!(f, field);
                assert_eq!(v, value);
            }
            other => panic!("expected an invalid-parameter error, got {other:?}"),
        }
    }
    // "auto" strays without the field solution's values
    let auto = Multiplier {
        stages: 3,
        stray_capacitance_f: None,
        ..m.clone()
    };
    let e = LadderParams::from_multiplier(&auto, None).unwrap_err();
    assert_eq!(e, LadderError::StraysNotSupplied { nodes: 6 });
    assert!(e.to_string().contains("auto"));
    // per-node values of the wrong length
    let e = LadderParams::from_multiplier(&auto, Some(vec![1e-12; 5])).unwrap_err();
    assert!(e.to_string().contains("6 values"), "{e}");
    let ok = LadderParams::from_multiplier(&auto, Some(vec![1e-12; 6])).unwrap();
    assert_eq!(ok.node_labels(), ["o1", "s1", "o2", "s2", "o3", "s3"]);
}

#[test]
fn non_convergence_carries_the_last_change() {
    let p = half_wave(12, 1e-6, 1e3, 1e3, 1e-3);
    let controls = SimControls {
        accelerate: false,
        max_cycles: 20,
        ..ctl(48)
    };
    match simulate(&p, &controls) {
        Err(LadderError::NotConverged {
            cycles,
            last_mean_change_v,
            ..
        }) => {
            assert_eq!(cycles, 20);
            assert!(last_mean_change_v.is_finite() && last_mean_change_v != 0.0);
        }
        other => panic!("expected non-convergence, got {other:?}"),
    }
}

// ---------------------------------------------------------------------------------------------
// Drive, load and diode models

/// No-load output 2nV₀ (docs/references.md §8 [C]) holds for square drive too (the diodes peak-
/// detect the plateau); with the flat top the diodes conduct over the whole plateau, so drop
/// and ripple come out below the sine-drive values (docs/practice.md §4.1 closed forms are for sine
/// drive; this is the direction the `closed_form` note states).
#[test]
fn square_drive() {
    let sine_p = half_wave(6, 1e-6, 1e3, 1e3, 1e-3);
    let sine = simulate(&sine_p, &ctl(400)).unwrap();
    let mut p = sine_p.clone();
    p.drive.waveform = Waveform::Square {
        rise_fraction: 0.05,
    };
    assert_eq!(p.drive.value(0.25e-3), 1e3);
    assert_eq!(p.drive.value(0.75e-3), -1e3);
    assert_eq!(p.drive.value(0.0), 0.0);
    let r = simulate(&p, &ctl(400)).unwrap();
    println!(
        "square drive: drop {:.2} V (sine {:.2}), ripple {:.2} V (sine {:.2})",
        r.output.drop_v, sine.output.drop_v, r.output.ripple_pp_v, sine.output.ripple_pp_v
    );
    assert!(rel(r.output.no_load_v, 12e3) < 1e-6);
    assert!(r.output.drop_v < sine.output.drop_v);
    assert!(r.output.ripple_pp_v < sine.output.ripple_pp_v);
    let bad = LadderParams {
        drive: holdoff::ladder::Drive {
            waveform: Waveform::Square { rise_fraction: 0.0 },
            ..p.drive
        },
        ..p
    };
    assert!(simulate(&bad, &ctl(400)).is_err());
}

/// A resistor drawing the same mean current gives the same drop and ripple as the constant-
/// current load (docs/references.md §8 assumes a DC load current; at 1.7e-3 ripple the two loads are
/// the same to first order), and the reported load current is the mean of v/R.
#[test]
fn resistive_load_matches_current_load() {
    let p = half_wave(6, 1e-6, 1e3, 1e3, 1e-3);
    let cur = simulate(&p, &ctl(400)).unwrap();
    let res_p = LadderParams {
        load: Load::Resistance {
            ohms: cur.output.loaded_mean_v / 1e-3,
        },
        ..p
    };
    let res = simulate(&res_p, &ctl(400)).unwrap();
    assert!(rel(res.output.load_current_a, 1e-3) < 1e-5);
    assert!(rel(res.output.drop_v, cur.output.drop_v) < 1e-3);
    assert!(rel(res.output.ripple_pp_v, cur.output.ripple_pp_v) < 1e-3);
}

/// Diode forward drop lowers the no-load output by 2n·V_f (docs/references.md §8, informal note
/// [C]); no rectifier sees more than 2V₀ reverse.
#[test]
fn diode_forward_drop_costs_two_n_vf() {
    let mut p = half_wave(4, 1e-6, 1e3, 1e3, 0.0);
    p.diode.forward_drop_v = 50.0;
    p.diode.on_resistance_ohm = 5.0;
    let r = simulate(&p, &ctl(400)).unwrap();
    assert!(rel(r.output.no_load_v, 2.0 * 4.0 * (1e3 - 50.0)) < 1e-5);
    assert!(r.max_diode_piv_v() <= 2e3);
    let cf = closed_form(&p).unwrap();
    assert_eq!(cf.diode_drop_loss_v, 400.0);
}

/// Graded capacitors C_k = (n − k + 1)·C (bottom n·C). The impulse-charge model of `closed`
/// (derived, the project's own) gives a ripple of n·I/(fC); the simulation agrees within 3 %.
/// docs/references.md §8 quotes ≈ I/(fC) from an informal formula sheet [C, weak]: printed, not
/// asserted, because neither model reproduces it.
#[test]
fn graded_capacitors_against_impulse_model() {
    let n = 6;
    let mut p = half_wave(n, 1e-6, 1e3, 1e3, 1e-3);
    let graded: Vec<f64> = (1..=n).map(|k| (n - k + 1) as f64 * 1e-6).collect();
    p.capacitors.oscillating_f = graded.clone();
    p.capacitors.smoothing_f = graded;
    let r = simulate(&p, &ctl(400)).unwrap();
    let cf = closed_form(&p).unwrap();
    assert!(cf.half_wave.is_none(), "textbook forms need equal C");
    println!(
        "graded: ripple {:.3} V, impulse model {:.3} V, formula sheet I/(fC) = 1 V; drop {:.2} V, \
         impulse model {:.2} V",
        r.output.ripple_pp_v,
        cf.impulse_model.ripple_pp_v,
        r.output.drop_v,
        cf.impulse_model.mean_drop_v
    );
    assert!(rel(cf.impulse_model.ripple_pp_v, n as f64) < 1e-12);
    assert!(rel(r.output.ripple_pp_v, cf.impulse_model.ripple_pp_v) < 0.03);
    assert!(rel(r.output.drop_v, cf.impulse_model.mean_drop_v) < 0.03);
}

/// Hand-built parameters that break the invariants are errors, not panics.
#[test]
fn inconsistent_parameters_are_errors_not_panics() {
    let mut p = symmetric(4, 1e-9, 1e3, 1e3, 1e-3);
    p.capacitors.oscillating_b_f.clear();
    assert!(closed_form(&p).is_err());
    assert!(simulate(&p, &ctl(100)).is_err());
    let mut p = half_wave(4, 1e-9, 1e3, 1e3, 1e-3);
    p.strays_f.pop();
    assert!(closed_form(&p).is_err());
    p.strays_f.push(-1e-12);
    let e = simulate(&p, &ctl(100)).unwrap_err();
    assert!(e.to_string().contains("stray_capacitance[s4]"), "{e}");
    assert!(stray_efficiency_discrete(0, 0.01).is_err());
    assert!(stray_efficiency_continuum(8, -0.01).is_err());
    let mut p = half_wave(4, 1e-9, 1e3, 1e3, 1e-3);
    p.stages = 401;
    assert!(closed_form(&p).is_err());
    assert!(
        simulate(
            &p,
            &SimControls {
                steps_per_cycle: 102,
                ..ctl(100)
            }
        )
        .is_err()
    );
}
