//! The fast transient after a terminal-to-tank spark, from the capacitance matrix of the
//! electrodes: the terminal collapses in nanoseconds, the grading resistors act over R·C
//! (milliseconds), so the column electrodes float with their charges conserved.
//!
//! Three forms: the bare collapse (`fast_step`, C_FF ΔV_F = −C_FH ΔV_H); the collapse with
//! the protective gaps that it drives past their firing band conducting and holding at the top
//! of the band (`clamp::clamped_step`, charge moving between the electrodes a gap bridges); and the
//! energy a spark releases, also with column sections shorted as during conditioning.

use super::clamp::{Forest, clamped_step, gap_links};
use super::{
    Basis, Evaluated, FaultError, Kind, ReplayNote, ScenarioResult, Section, SparkEnergy,
    TransientError, column_nodes, field_margins, fired_gaps, quadratic, resistor_check,
    solve_networks,
};
use crate::analysis::Analysis;
use crate::grading::{self, Network};
use crate::model::{Model, PotentialSpec};

/// Potentials of the electrodes just after some of them are stepped, with the others
/// floating: `floating[e]` marks the electrodes whose charge is conserved; the held ones go to
/// `after_held[e]`. From Q = C V: C_FF ΔV_F = −C_FH ΔV_H.
pub fn fast_step(
    c_f: &[Vec<f64>],
    floating: &[bool],
    before: &[f64],
    after_held: &[f64],
) -> Result<Vec<f64>, FaultError> {
    let n = c_f.len();
    if floating.len() != n || before.len() != n || after_held.len() != n {
        return Err(TransientError::Lengths {
            electrodes: n,
            floating: floating.len(),
            before: before.len(),
            after: after_held.len(),
        }
        .into());
    }
    let f: Vec<usize> = (0..n).filter(|&i| floating[i]).collect();
    let mut after: Vec<f64> = (0..n)
        .map(|i| {
            if floating[i] {
                before[i]
            } else {
                after_held[i]
            }
        })
        .collect();
    if f.is_empty() {
        return Ok(after);
    }
    let m = f.len();
    let a = nalgebra::DMatrix::from_fn(m, m, |i, j| c_f[f[i]][f[j]]);
    let b = nalgebra::DVector::from_fn(m, |i, _| {
        -(0..n)
            .filter(|&h| !floating[h])
            .map(|h| c_f[f[i]][h] * (after_held[h] - before[h]))
            .sum::<f64>()
    });
    let dv = a
        .lu()
        .solve(&b)
        .ok_or_else(|| FaultError::from(TransientError::Singular))?;
    for (i, &e) in f.iter().enumerate() {
        after[e] = before[e] + dv[i];
    }
    Ok(after)
}

/// Which electrodes float through a terminal-to-tank spark (the grading-node electrodes)
/// and where the held ones go (the sparked ones to 0, the rest stay).
fn spark_state(
    model: &Model,
    basis: &Basis,
    before: &[f64],
) -> Result<(Vec<bool>, Vec<f64>), FaultError> {
    let floating = floating_electrodes(model, basis);
    let mut sparked: Vec<bool> = (0..basis.electrodes.len())
        .map(|e| {
            matches!(
                electrode_spec(model, basis, e),
                Some(PotentialSpec::Terminal { .. })
            )
        })
        .collect();
    choose_sparked(&mut sparked, &floating, before)?;
    let after_held: Vec<f64> = before
        .iter()
        .zip(&sparked)
        .map(|(v, s)| if *s { 0.0 } else { *v })
        .collect();
    Ok((floating, after_held))
}

/// The electrodes that float through a fast event: those of the grading nodes (their
/// resistors act over R·C, milliseconds).
pub fn floating_electrodes(model: &Model, basis: &Basis) -> Vec<bool> {
    (0..basis.electrodes.len())
        .map(|e| {
            matches!(
                electrode_spec(model, basis, e),
                Some(PotentialSpec::Grading { .. })
            )
        })
        .collect()
}

/// How electrode `e` is held: the potential of its first conductor.
fn electrode_spec<'m>(model: &'m Model, basis: &Basis, e: usize) -> Option<&'m PotentialSpec> {
    basis.electrodes[e]
        .conductors
        .first()
        .map(|&k| &model.conductors[k].potential)
}

/// The electrode of node `k` of column `column` (0 = its `from` end, the electrodes in
/// order, then its `to` end); None for a grounded end or the tank.
pub fn node_electrode(model: &Model, basis: &Basis, column: usize, k: usize) -> Option<usize> {
    let col = model.columns.get(column)?;
    let cond = if k == 0 {
        col.from
    } else if k == col.electrodes.len() + 1 {
        col.to
    } else {
        col.electrodes.get(k - 1).copied()
    };
    cond.and_then(|c| basis.conductor_electrode.get(c).copied().flatten())
}

/// The electrodes a terminal-to-tank spark takes to ground: those tied to the terminal voltage
/// as marked in `sparked`; when none is (a terminal fed as "stage:N" or given in volts), the
/// held electrodes at the highest voltage.
fn choose_sparked(
    sparked: &mut [bool],
    floating: &[bool],
    before: &[f64],
) -> Result<(), FaultError> {
    if sparked.iter().any(|s| *s) {
        return Ok(());
    }
    let top = before
        .iter()
        .zip(floating)
        .filter(|(_, f)| !**f)
        .map(|(v, _)| v.abs())
        .fold(0.0, f64::max);
    if top <= 0.0 {
        return Err(TransientError::NoStrayConductor.into());
    }
    for ((s, v), f) in sparked.iter_mut().zip(before).zip(floating) {
        *s = !*f && (v.abs() - top).abs() <= 1e-9 * top;
    }
    Ok(())
}

/// The energy of a terminal-to-tank spark with the given sections shorted: the DC state with
/// their resistors shorted (the resistive division, protective gaps idle: a gap that would
/// fire at that voltage shows in the scenarios), then the fast collapse with the electrodes of
/// each section tied together (one node; tied to the tank or the terminal when the section
/// reaches an end).
pub fn spark_energy_with(
    model: &Model,
    basis: &Basis,
    stage_v: Option<&[f64]>,
    networks: &[Network],
    sections: &[Section],
) -> Result<SparkEnergy, FaultError> {
    let mut nets = networks.to_vec();
    for n in &mut nets {
        n.protective.clear();
    }
    for sec in sections {
        let Some(n) = nets.get(sec.column) else {
            return Err(TransientError::SectionColumn {
                column: sec.column + 1,
                columns: nets.len(),
            }
            .into());
        };
        if sec.first_gap > sec.last_gap || sec.last_gap >= n.gaps() {
            return Err(TransientError::SectionGaps {
                column: sec.column + 1,
                first: sec.first_gap + 1,
                last: sec.last_gap + 1,
                gaps: n.gaps(),
            }
            .into());
        }
        let mut m = n.clone();
        for g in sec.first_gap..=sec.last_gap {
            for st in 0..m.strings() {
                m = m.with_short(g, st)?;
            }
        }
        nets[sec.column] = m;
    }
    let sols = solve_networks(model, stage_v, &nets)?;
    let node_v: Vec<Vec<f64>> = sols.iter().map(|s| s.node_v.clone()).collect();
    let pots = grading::potentials_with_nodes(model, stage_v, &node_v)?;
    let before = basis.electrode_potentials(&pots);
    let stored = basis.energy_j(&before);

    // Groups of electrodes tied by the sections; index ne stands for the tank.
    let ne = basis.electrodes.len();
    let mut forest = Forest::new(ne + 1);
    for sec in sections {
        let node_electrode = |k: usize| node_electrode(model, basis, sec.column, k).unwrap_or(ne);
        let first = node_electrode(sec.first_gap);
        for k in sec.first_gap + 1..=sec.last_gap + 1 {
            forest.join(first, node_electrode(k));
        }
    }
    let roots: Vec<usize> = (0..ne).map(|i| forest.find(i)).collect();
    let tank_root = forest.find(ne);
    let mut groups: Vec<usize> = Vec::new();
    let mut group_of = vec![None; ne];
    for i in 0..ne {
        if roots[i] == tank_root {
            continue;
        }
        let g = match groups.iter().position(|&r| r == roots[i]) {
            Some(g) => g,
            None => {
                groups.push(roots[i]);
                groups.len() - 1
            }
        };
        group_of[i] = Some(g);
    }
    let ng = groups.len();
    let mut c = vec![vec![0.0; ng]; ng];
    let mut v_before = vec![0.0; ng];
    let mut floating = vec![true; ng];
    let mut sparked = vec![false; ng];
    for i in 0..ne {
        let Some(gi) = group_of[i] else { continue };
        v_before[gi] = before[i];
        match electrode_spec(model, basis, i) {
            Some(PotentialSpec::Grading { .. }) => {}
            Some(PotentialSpec::Terminal { .. }) => {
                floating[gi] = false;
                sparked[gi] = true;
            }
            _ => floating[gi] = false,
        }
        for (j, gj) in group_of.iter().enumerate() {
            if let Some(gj) = *gj {
                c[gi][gj] += basis.capacitance.c_f[i][j];
            }
        }
    }
    choose_sparked(&mut sparked, &floating, &v_before)?;
    let after_held: Vec<f64> = (0..ng)
        .map(|g| if sparked[g] { 0.0 } else { v_before[g] })
        .collect();
    let after = fast_step(&c, &floating, &v_before, &after_held)?;
    Ok(SparkEnergy {
        shorted_sections: sections.to_vec(),
        stored_j: stored,
        released_fast_j: stored - quadratic(&c, &after),
    })
}

/// The transient scenarios of a replay and what they assume.
pub(super) struct Spark {
    pub scenarios: Vec<ScenarioResult>,
    pub notes: Vec<ReplayNote>,
}

/// The fast transient after a terminal-to-tank spark from the nominal electrode potentials
/// `before`: the bare collapse, and the collapse with the protective gaps it drives past their
/// band conducting when any are. `nominal` is the nominal gap voltages and worst margin. No
/// scenario (and a note) when nothing can spark.
pub(super) fn scenarios(
    model: &Model,
    basis: &Basis,
    networks: &[Network],
    before: &[f64],
    work: &mut Analysis,
    nominal: (&[Vec<f64>], Option<f64>),
) -> Result<Spark, FaultError> {
    let mut out = Vec::new();
    let mut notes = Vec::new();
    if !model
        .conductors
        .iter()
        .any(|c| matches!(c.potential, PotentialSpec::Terminal { .. }))
    {
        notes.push(ReplayNote::SparkFromHighest);
    }
    let spark = spark_state(model, basis, before).and_then(|(floating, after_held)| {
        let after = fast_step(&basis.capacitance.c_f, &floating, before, &after_held)?;
        Ok((floating, after_held, after))
    });
    let (floating, after_held, after) = match spark {
        Ok(s) => s,
        Err(e) => {
            notes.push(ReplayNote::NoTransient {
                reason: e.to_string(),
            });
            return Ok(Spark {
                scenarios: out,
                notes,
            });
        }
    };
    let scenario = |name: &str, e: Evaluated| {
        ScenarioResult::assemble(
            name.to_string(),
            Kind::Transient,
            None,
            e,
            nominal.0,
            nominal.1,
        )
    };
    let bare = evaluate(model, basis, networks, &after, work)?;
    let any_fired = !bare.fired.is_empty();
    out.push(scenario(
        "transient: terminal-to-tank spark, just after",
        bare,
    ));
    notes.push(ReplayNote::Transient);
    if !any_fired {
        return Ok(Spark {
            scenarios: out,
            notes,
        });
    }
    let links = gap_links(model, basis, networks);
    match clamped_step(
        &basis.capacitance.c_f,
        &floating,
        before,
        &after_held,
        &links,
    ) {
        Ok(step) if !step.conducting.is_empty() => {
            let mut sc = scenario(
                "transient: terminal-to-tank spark, protective gaps conducting",
                evaluate(model, basis, networks, &step.potentials, work)?,
            );
            sc.protective_gaps_conducting = true;
            out.push(sc);
            notes.push(ReplayNote::GapsConducting {
                gaps: step.conducting.len(),
            });
            if !step.over_in_loop.is_empty() {
                notes.push(ReplayNote::OverInLoop {
                    gaps: step.over_in_loop.len(),
                });
            }
        }
        Ok(_) => {}
        Err(e) => notes.push(ReplayNote::NoGapsConducting {
            reason: e.to_string(),
        }),
    }
    Ok(Spark {
        scenarios: out,
        notes,
    })
}

/// Gap voltages, protective gaps, field margins and resistor stresses of electrode potentials
/// just after a spark (no steady dissipation).
fn evaluate(
    model: &Model,
    basis: &Basis,
    networks: &[Network],
    electrode_v: &[f64],
    work: &mut Analysis,
) -> Result<Evaluated, FaultError> {
    let conductor_v = basis.conductor_potentials(electrode_v);
    let node_v = column_nodes(model, &conductor_v);
    let gap_v: Vec<Vec<f64>> = node_v
        .iter()
        .map(|v| v.windows(2).map(|w| w[1] - w[0]).collect())
        .collect();
    let (fired, gap_margin) = fired_gaps(networks, &node_v);
    let worst = field_margins(model, basis, work, conductor_v, None)?;
    let resistors = resistor_check(model, networks, &gap_v, false);
    Ok(Evaluated {
        gap_v,
        fired,
        gap_margin,
        worst,
        resistors,
        repetitive: Vec::new(),
    })
}

/// The energy of a terminal-to-tank spark as designed and, when `shorted_sections` are
/// given, with them shorted.
pub(super) fn energies(
    model: &Model,
    basis: &Basis,
    stage_v: Option<&[f64]>,
    networks: &[Network],
    shorted_sections: &[Section],
) -> Result<(SparkEnergy, Option<SparkEnergy>), FaultError> {
    let designed = spark_energy_with(model, basis, stage_v, networks, &[])?;
    let conditioning = if shorted_sections.is_empty() {
        None
    } else {
        Some(spark_energy_with(
            model,
            basis,
            stage_v,
            networks,
            shorted_sections,
        )?)
    };
    Ok((designed, conditioning))
}
