//! The DC scenarios of a fault replay: which networks to solve (nominal, each resistor open
//! and shorted, the tolerance worst cases and the seeded Monte Carlo draws), their field
//! checks formed from the basis in parallel (identical potentials once), and the spread of
//! the draws.

use super::screen::{Screen, tied, worst_row};
use super::{
    Basis, Evaluated, FaultError, Kind, MonteCarlo, ReplayOptions, ResistorRef, ScenarioResult,
    Worst, evaluate_halves, fired_gaps, firing, load_field, resistor_check, solve_networks,
    worst_of,
};
use crate::analysis::Analysis;
use crate::grading::{self, Network, NetworkSolution};
use crate::margin;
use crate::mesh::Mesh;
use crate::model::Model;
use crate::solve::Solution;
use rayon::prelude::*;
use std::sync::Arc;

/// SplitMix64 (Steele, Lea and Flood 2014): a small, seedable, portable generator, so that a
/// seed gives the same draws on every platform.
struct SplitMix64(u64);

impl SplitMix64 {
    fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    /// Uniform in [0, 1).
    fn next_f64(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64
    }
}

/// One DC scenario to evaluate: the modified networks of every column.
pub(super) struct Case {
    pub name: String,
    pub kind: Kind,
    pub resistor: Option<ResistorRef>,
    pub networks: Vec<Network>,
}

/// The scenarios of a replay: `cases[..fixed]` the fixed ones, the rest the Monte Carlo draws.
pub(super) struct Cases {
    pub cases: Vec<Case>,
    pub fixed: usize,
}

/// Every DC scenario of the networks, in a fixed order (the draws from the seed in turn).
pub(super) fn cases(
    model: &Model,
    networks: &[Network],
    options: &ReplayOptions,
    notes: &mut Vec<super::ReplayNote>,
) -> Result<Cases, FaultError> {
    let mut cases = vec![Case {
        name: "nominal".to_string(),
        kind: Kind::Nominal,
        resistor: None,
        networks: networks.to_vec(),
    }];
    let mut index = 0;
    for (c, n) in networks.iter().enumerate() {
        for g in 0..n.gaps() {
            for s in 0..n.strings() {
                let r = ResistorRef {
                    index,
                    column: c,
                    gap: g,
                    string: s,
                };
                index += 1;
                let label = if n.strings() > 1 {
                    format!("{} gap {} string {}", n.name, g + 1, s + 1)
                } else {
                    format!("{} gap {}", n.name, g + 1)
                };
                for (kind, word) in [(Kind::Open, "open"), (Kind::Short, "short")] {
                    let mut changed = networks.to_vec();
                    changed[c] = if kind == Kind::Open {
                        n.with_open(g, s)?
                    } else {
                        n.with_short(g, s)?
                    };
                    cases.push(Case {
                        name: format!("{word}: {label}"),
                        kind,
                        resistor: Some(r),
                        networks: changed,
                    });
                }
            }
        }
    }
    // Tolerance worst case for each gap: its resistors high, the rest of its column low.
    for (c, n) in networks.iter().enumerate() {
        let tol = model.columns[c].tolerance.unwrap_or(0.0);
        if tol <= 0.0 {
            continue;
        }
        for g in 0..n.gaps() {
            let factors: Vec<Vec<f64>> = (0..n.gaps())
                .map(|k| vec![if k == g { 1.0 + tol } else { 1.0 - tol }; n.strings()])
                .collect();
            let mut t = networks.to_vec();
            t[c] = n.scaled(&factors)?;
            cases.push(Case {
                name: format!("tolerance worst case: {} gap {} high", n.name, g + 1),
                kind: Kind::Tolerance,
                resistor: None,
                networks: t,
            });
        }
    }
    let fixed = cases.len();
    // Monte Carlo draws, uniform within ±tolerance, drawn in order from the seed.
    let mut rng = SplitMix64(options.seed);
    let any_tol = model
        .columns
        .iter()
        .any(|c| c.tolerance.unwrap_or(0.0) > 0.0);
    let draws = if any_tol { options.samples } else { 0 };
    if options.samples > 0 && !any_tol {
        notes.push(super::ReplayNote::NoDraws);
    }
    for d in 0..draws {
        let mut t = networks.to_vec();
        for (c, n) in networks.iter().enumerate() {
            let tol = model.columns[c].tolerance.unwrap_or(0.0);
            let factors: Vec<Vec<f64>> = (0..n.gaps())
                .map(|_| {
                    (0..n.strings())
                        .map(|_| 1.0 + tol * (2.0 * rng.next_f64() - 1.0))
                        .collect()
                })
                .collect();
            t[c] = n.scaled(&factors)?;
        }
        cases.push(Case {
            name: format!("tolerance draw {}", d + 1),
            kind: Kind::Tolerance,
            resistor: None,
            networks: t,
        });
    }

    Ok(Cases { cases, fixed })
}

/// Scenario fields formed together from the basis (a few per worker thread, so that their
/// sums stay in cache and the margins of one block keep every thread busy).
const FIELD_BLOCK: usize = 4;

/// A work analysis on `mesh` (shared, not copied) for one worker thread, its fields formed
/// from the basis.
pub(super) fn work_analysis(mesh: &Arc<Mesh>, basis: &Basis) -> Analysis {
    Analysis {
        mesh: Arc::clone(mesh),
        potentials: Vec::new(),
        solution: Solution {
            phi: Vec::new(),
            info: basis.info.clone(),
        },
        samples: Vec::new(),
        peaks: Vec::new(),
        probes: Vec::new(),
        energy_j: 0.0,
        node_fields: Default::default(),
    }
}

/// The networks of every case (cheap), then the field checks once per distinct set of
/// conductor potentials, in parallel: the nominal (case 0) in full, the others screened
/// against it (`screen`) unless `exhaustive`; `tick` is called once per case. Also gives how
/// many cases shared an identical one's evaluation.
pub(super) fn evaluate(
    model: &Model,
    mesh: &Arc<Mesh>,
    basis: &Basis,
    stage_v: Option<&[f64]>,
    cases: &[Case],
    exhaustive: bool,
    tick: &(dyn Fn() + Sync),
) -> Result<(Vec<Evaluated>, usize), FaultError> {
    let gap_capacitance = firing::gap_capacitances(model, basis, &cases[0].networks);
    // The conductor potentials of every case (the network solutions are formed again for
    // the results at the end rather than kept: 20 MB on the tandem). With parallel strings,
    // the same resistor failing in either string gives the same potentials, and is evaluated
    // once.
    let solved = |case: &Case| -> Result<(Vec<NetworkSolution>, Vec<Vec<f64>>), FaultError> {
        let sols = solve_networks(model, stage_v, &case.networks)?;
        let node_v: Vec<Vec<f64>> = sols.iter().map(|s| s.node_v.clone()).collect();
        Ok((sols, node_v))
    };
    let potentials: Vec<Vec<f64>> = cases
        .par_iter()
        .map(|case| -> Result<Vec<f64>, FaultError> {
            let (_, node_v) = solved(case)?;
            Ok(grading::potentials_with_nodes(model, stage_v, &node_v)?)
        })
        .collect::<Result<_, _>>()?;
    let mut first_of: std::collections::HashMap<Vec<u64>, usize> = std::collections::HashMap::new();
    let mut distinct: Vec<usize> = Vec::new();
    let slot: Vec<usize> = potentials
        .iter()
        .enumerate()
        .map(|(ci, p)| {
            let key: Vec<u64> = p.iter().map(|v| v.to_bits()).collect();
            *first_of.entry(key).or_insert_with(|| {
                distinct.push(ci);
                distinct.len() - 1
            })
        })
        .collect();
    // The nominal field (case 0), from which every scenario's sum starts; the scenarios' fields
    // are then formed a block at a time, each unit solution read once per block. The nominal
    // is evaluated in full, and its rows screen the others' (`screen`).
    let nominal_ev = basis.electrode_potentials(&potentials[0]);
    let nominal_phi = basis.field(&nominal_ev);
    let mut nominal_work = work_analysis(mesh, basis);
    load_field(
        model,
        basis,
        &mut nominal_work,
        potentials[0].clone(),
        Some(nominal_phi.clone()),
    );
    let nominal = evaluate_halves(model, &nominal_work)?;
    let screen = (!exhaustive).then(|| Screen::new(model, &nominal_work, &nominal));
    let mut worst: Vec<Worst> = vec![worst_of(&nominal.rows)];
    tick();
    // Work analyses for the worker threads, reused across the blocks: one is taken per
    // scenario and given back after it, and a new one made only when none is free (a thread
    // waiting inside a parallel part of a margin check may start another scenario).
    let pool: std::sync::Mutex<Vec<Analysis>> = std::sync::Mutex::new(
        std::iter::once(nominal_work)
            .chain((1..rayon::current_num_threads()).map(|_| work_analysis(mesh, basis)))
            .collect(),
    );
    let take = || {
        let free = pool.lock().ok().and_then(|mut p| p.pop());
        free.unwrap_or_else(|| work_analysis(mesh, basis))
    };
    let give = |w: Analysis| {
        if let Ok(mut p) = pool.lock() {
            p.push(w);
        }
    };
    for block in distinct[1..].chunks(FIELD_BLOCK) {
        let sets: Vec<Vec<f64>> = block
            .iter()
            .map(|&ci| basis.electrode_potentials(&potentials[ci]))
            .collect();
        let fields = basis.fields_from(&nominal_phi, &nominal_ev, &sets);
        let done: Vec<Worst> = block
            .par_iter()
            .zip(fields)
            .map(|(&ci, phi)| -> Result<Worst, FaultError> {
                let mut held = take();
                let work = &mut held;
                load_field(model, basis, work, potentials[ci].clone(), Some(phi));
                let w = match &screen {
                    Some(screen) => screened_margins(model, screen, work)?,
                    None => worst_of(&margin::evaluate(model, work, None)?.rows),
                };
                give(held);
                tick();
                Ok(w)
            })
            .collect::<Result<_, _>>()?;
        worst.extend(done);
    }
    let shared_evaluations = cases.len() - distinct.len();
    // The repeats count as done.
    for _ in distinct.len()..cases.len() {
        tick();
    }
    drop(potentials);
    let raw: Vec<Evaluated> = cases
        .par_iter()
        .zip(&slot)
        .map(|(case, &k)| -> Result<Evaluated, FaultError> {
            let (sols, node_v) = solved(case)?;
            let gap_v: Vec<Vec<f64>> = sols.iter().map(|s| s.gap_v.clone()).collect();
            let (fired, gm) = fired_gaps(&case.networks, &node_v);
            let resistors = resistor_check(model, &case.networks, &gap_v, true);
            Ok(Evaluated {
                gap_v,
                fired,
                gap_margin: gm,
                worst: worst[k].clone(),
                resistors,
                repetitive: firing::repetitive_firing(
                    model,
                    &case.networks,
                    &sols,
                    &gap_capacitance,
                ),
            })
        })
        .collect::<Result<_, _>>()?;

    Ok((raw, shared_evaluations))
}

/// Summarises the draws (`results[fixed..]`, taken off) and keeps the worst one as a scenario.
pub(super) fn monte_carlo(
    results: &mut Vec<ScenarioResult>,
    fixed: usize,
    seed: u64,
) -> Option<MonteCarlo> {
    let mc_results: Vec<ScenarioResult> = results.split_off(fixed);
    let draws = mc_results.len();
    if draws > 0 {
        let m: Vec<f64> = mc_results.iter().filter_map(|r| r.worst_margin).collect();
        let mean = (!m.is_empty()).then(|| m.iter().sum::<f64>() / m.len() as f64);
        let std = mean.map(|mu| {
            (m.iter().map(|x| (x - mu).powi(2)).sum::<f64>() / m.len().max(1) as f64).sqrt()
        });
        let worst_draw = mc_results
            .iter()
            .enumerate()
            .filter_map(|(k, r)| r.worst_margin.map(|x| (k, x)))
            .min_by(|a, b| a.1.total_cmp(&b.1))
            .map(|(k, _)| k);
        if let Some(k) = worst_draw {
            let mut w = mc_results[k].clone();
            w.name = format!(
                "tolerance Monte Carlo: worst of {draws} draws (draw {})",
                k + 1
            );
            results.push(w);
        }
        Some(MonteCarlo {
            draws,
            seed,
            distribution: "each resistor uniform within ±tolerance, independent \
                           (common practice, no source)"
                .to_string(),
            worst_margin_min: m.iter().copied().reduce(f64::min),
            worst_margin_mean: mean,
            worst_margin_max: m.iter().copied().reduce(f64::max),
            worst_margin_std: std,
            worst_draw,
            max_gap_v: mc_results.iter().fold(0.0, |a, r| a.max(r.max_gap_v)),
            gap_ratio_mean: mc_results
                .iter()
                .map(|r| r.max_gap_ratio_to_nominal)
                .sum::<f64>()
                / draws as f64,
            gap_ratio_max: mc_results
                .iter()
                .fold(0.0, |a, r| a.max(r.max_gap_ratio_to_nominal)),
        })
    } else {
        None
    }
}

/// The worst row of the scenario loaded in `work`, screened against the nominal (`screen`):
/// the insulator rows and the conductors that must be evaluated first, then the others in
/// rising order of their bound, [`ROUND`] at a time, while a bound does not clear the worst
/// margin found so far (branch and bound). The conductors left out have every margin above
/// the worst row found, so it is the worst row of a full evaluation; a tie for the smallest
/// margin, whose order only a full evaluation settles, is evaluated in full.
fn screened_margins(model: &Model, screen: &Screen, work: &Analysis) -> Result<Worst, FaultError> {
    let rho = screen.rise(model, work);
    let bounds = screen.bounds(&rho);
    let mut done = screen.always(&rho);
    let mut rows = margin::evaluate_selected(model, work, None, &|c| done[c], true)?.rows;
    loop {
        let found = worst_row(&rows).and_then(|r| r.margin);
        let mut pending: Vec<usize> = screen
            .needed(&rho, found)
            .iter()
            .enumerate()
            .filter(|&(c, n)| *n && !done[c])
            .map(|(c, _)| c)
            .collect();
        if pending.is_empty() {
            break;
        }
        pending.sort_by(|&a, &b| {
            let key = |c: usize| bounds[c].unwrap_or(f64::NEG_INFINITY);
            key(a).total_cmp(&key(b)).then(a.cmp(&b))
        });
        pending.truncate(ROUND);
        let mut pick = vec![false; done.len()];
        for &c in &pending {
            pick[c] = true;
            done[c] = true;
        }
        rows.extend(margin::evaluate_selected(model, work, None, &|c| pick[c], false)?.rows);
    }
    margin::rank(&mut rows);
    if tied(&rows) {
        return Ok(worst_of(&margin::evaluate(model, work, None)?.rows));
    }
    Ok(worst_of(&rows))
}

/// The conductors a round of [`screened_margins`] evaluates together.
const ROUND: usize = 2;
