//! The protective gaps through the fast transient: each gap as a link between two electrodes
//! that clamps at the top of its firing band, and the fast step with the links that the
//! collapse drives past their clamp conducting (`clamped_step`, a bordered capacitance system
//! solved with an active set).

use super::transient::{fast_step, node_electrode};
use super::{Basis, FaultError, TransientError};
use crate::grading::Network;
use crate::model::Model;

/// A protective gap between two electrodes as the transient sees it: `a` and `b` its ends
/// (None = ground), `clamp_v` the most it holds (the top of its firing band).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GapLink {
    pub a: Option<usize>,
    pub b: Option<usize>,
    pub clamp_v: f64,
}

/// What `clamped_step` gives: the electrode potentials and the links left conducting.
#[derive(Debug, Clone, PartialEq)]
pub struct ClampedStep {
    pub potentials: Vec<f64>,
    /// Indices into the links of those holding at their clamp voltage.
    pub conducting: Vec<usize>,
    /// Links over their clamp that would close a loop of conducting links (their voltage is
    /// set by the others, e.g. a section gap over per-gap gaps that all conduct).
    pub over_in_loop: Vec<usize>,
    /// Active-set passes taken.
    pub passes: usize,
}

/// The fast step of `fast_step` with protective gaps: a link whose voltage the step drives
/// past its clamp conducts and holds there, V_b − V_a = ±clamp, and the charge it passes
/// leaves one end and reaches the other, so the floating electrodes it joins conserve their
/// charge together (an end held by the spark or the tank takes any charge). Solved as the
/// bordered system [C_FF B; Bᵀ 0][V_F; p] = [Q_F − C_FH V_H; −d] (Lagrange multipliers p, the
/// charges passed), with an active set: links over their clamp join, links whose charge
/// would flow against their voltage leave, until neither happens. A link that would close a
/// loop of conducting links does not join (its voltage is fixed by the others); it is listed
/// in `over_in_loop` when it ends over its clamp.
pub fn clamped_step(
    c_f: &[Vec<f64>],
    floating: &[bool],
    before: &[f64],
    after_held: &[f64],
    links: &[GapLink],
) -> Result<ClampedStep, FaultError> {
    let n = c_f.len();
    if let Some(l) = links
        .iter()
        .find(|l| l.a.is_some_and(|a| a >= n) || l.b.is_some_and(|b| b >= n))
    {
        return Err(TransientError::GapElectrode {
            a: l.a,
            b: l.b,
            electrodes: n,
        }
        .into());
    }
    if let Some(l) = links
        .iter()
        .find(|l| !(l.clamp_v.is_finite() && l.clamp_v > 0.0))
    {
        return Err(TransientError::GapClamp { clamp_v: l.clamp_v }.into());
    }
    let mut v = fast_step(c_f, floating, before, after_held)?;
    let voltage = |v: &[f64], l: &GapLink| l.b.map_or(0.0, |b| v[b]) - l.a.map_or(0.0, |a| v[a]);
    // A link matters when one end floats; both ends held, the spark fixes its voltage.
    let free = |l: &GapLink| l.a.is_some_and(|a| floating[a]) || l.b.is_some_and(|b| floating[b]);
    let (f, row) = floating_rows(floating);
    let charge_before: Vec<f64> = f
        .iter()
        .map(|&i| c_f[i].iter().zip(before).map(|(c, x)| c * x).sum())
        .collect();
    // Conducting links with the sign of the voltage they hold.
    let mut active: Vec<(usize, f64)> = Vec::new();
    let max_passes = 4 * links.len() + 4;
    for pass in 1..=max_passes {
        let mut changed = false;
        // Links joining, largest overshoot first, without closing a loop.
        let mut over: Vec<(usize, f64)> = links
            .iter()
            .enumerate()
            .filter(|(k, l)| free(l) && !active.iter().any(|(a, _)| a == k))
            .filter_map(|(k, l)| {
                let u = voltage(&v, l);
                (u.abs() > l.clamp_v * (1.0 + 1e-9)).then_some((k, u.abs() / l.clamp_v))
            })
            .collect();
        over.sort_by(|x, y| y.1.total_cmp(&x.1).then(x.0.cmp(&y.0)));
        let mut forest = Forest::new(n + 1);
        let node = |e: Option<usize>| e.map_or(n, |e| if floating[e] { e } else { n });
        for &(k, _) in &active {
            forest.join(node(links[k].a), node(links[k].b));
        }
        for (k, _) in over {
            let l = &links[k];
            if forest.join(node(l.a), node(l.b)) {
                active.push((k, voltage(&v, l).signum()));
                changed = true;
            }
        }
        if (pass > 1 && !changed) || active.is_empty() {
            let over_in_loop = links
                .iter()
                .enumerate()
                .filter(|(k, l)| {
                    free(l)
                        && !active.iter().any(|(a, _)| a == k)
                        && voltage(&v, l).abs() > l.clamp_v * (1.0 + 1e-6)
                })
                .map(|(k, _)| k)
                .collect();
            return Ok(ClampedStep {
                potentials: v,
                conducting: sorted(&active),
                over_in_loop,
                passes: pass,
            });
        }
        let (next, passed) = bordered(c_f, &f, &row, &charge_before, after_held, links, &active)?;
        v = next;
        // A link passes charge p from b to a: with V_b − V_a held positive the current
        // runs b → a, so p must be positive then (and negative for a negative hold).
        let before_len = active.len();
        let keep: Vec<(usize, f64)> = active
            .iter()
            .zip(&passed)
            .filter(|((_, s), p)| *s * **p >= 0.0)
            .map(|(a, _)| *a)
            .collect();
        if keep.len() != before_len {
            active = keep;
            v = if active.is_empty() {
                fast_step(c_f, floating, before, after_held)?
            } else {
                bordered(c_f, &f, &row, &charge_before, after_held, links, &active)?.0
            };
        }
    }
    Err(TransientError::GapsInconsistent { passes: max_passes }.into())
}

/// The floating electrodes in order, and each electrode's row among them (None when held).
pub(super) fn floating_rows(floating: &[bool]) -> (Vec<usize>, Vec<Option<usize>>) {
    let f: Vec<usize> = (0..floating.len()).filter(|&i| floating[i]).collect();
    let mut row = vec![None; floating.len()];
    for (r, &i) in f.iter().enumerate() {
        row[i] = Some(r);
    }
    (f, row)
}

fn sorted(active: &[(usize, f64)]) -> Vec<usize> {
    let mut k: Vec<usize> = active.iter().map(|(k, _)| *k).collect();
    k.sort_unstable();
    k
}

/// Solves the bordered system of `clamped_step` for the conducting links `active`: the
/// potentials of every electrode and the charge each link passes.
fn bordered(
    c_f: &[Vec<f64>],
    f: &[usize],
    row: &[Option<usize>],
    charge_before: &[f64],
    after_held: &[f64],
    links: &[GapLink],
    active: &[(usize, f64)],
) -> Result<(Vec<f64>, Vec<f64>), FaultError> {
    let n = c_f.len();
    let m = f.len();
    let k = active.len();
    let floats = |e: Option<usize>| e.and_then(|e| row[e]);
    let held = |e: Option<usize>| match e {
        Some(e) if row[e].is_none() => after_held[e],
        _ => 0.0,
    };
    let mut a = nalgebra::DMatrix::<f64>::zeros(m + k, m + k);
    let mut rhs = nalgebra::DVector::<f64>::zeros(m + k);
    for (r, &i) in f.iter().enumerate() {
        for (c, &j) in f.iter().enumerate() {
            a[(r, c)] = c_f[i][j];
        }
        rhs[r] = charge_before[r]
            - (0..n)
                .filter(|&h| row[h].is_none())
                .map(|h| c_f[i][h] * after_held[h])
                .sum::<f64>();
    }
    for (t, &(li, sign)) in active.iter().enumerate() {
        let l = &links[li];
        // Row of Bᵀ: V_a − V_b = −d over the floating ends, the held ends on the right.
        if let Some(r) = floats(l.a) {
            a[(r, m + t)] += 1.0;
            a[(m + t, r)] += 1.0;
        }
        if let Some(r) = floats(l.b) {
            a[(r, m + t)] -= 1.0;
            a[(m + t, r)] -= 1.0;
        }
        rhs[m + t] = -sign * l.clamp_v - held(l.a) + held(l.b);
    }
    let x = a
        .lu()
        .solve(&rhs)
        .ok_or_else(|| FaultError::from(TransientError::SingularWithGaps))?;
    let mut v: Vec<f64> = after_held.to_vec();
    for (r, &i) in f.iter().enumerate() {
        v[i] = x[r];
    }
    // C_FF V_F + B p = Q: electrode a gains −p... sign it so p > 0 is charge reaching a.
    let passed: Vec<f64> = (0..k).map(|t| -x[m + t]).collect();
    Ok((v, passed))
}

/// Union–find over the electrodes and one extra node (everything held, or the tank): keeps
/// the conducting links free of loops, and groups the electrodes a shorted section ties.
pub(super) struct Forest(Vec<usize>);

impl Forest {
    pub(super) fn new(n: usize) -> Forest {
        Forest((0..n).collect())
    }
    pub(super) fn find(&mut self, mut i: usize) -> usize {
        while self.0[i] != i {
            self.0[i] = self.0[self.0[i]];
            i = self.0[i];
        }
        i
    }
    /// Joins the sets of `a` and `b`; false when they were one already.
    pub(super) fn join(&mut self, a: usize, b: usize) -> bool {
        let (x, y) = (self.find(a), self.find(b));
        if x == y {
            return false;
        }
        self.0[x] = y;
        true
    }
}

/// The protective gaps of every column as links between electrodes, clamping at the top of
/// their firing band.
pub fn gap_links(model: &Model, basis: &Basis, networks: &[Network]) -> Vec<GapLink> {
    networks
        .iter()
        .flat_map(|n| {
            n.protective.iter().map(move |p| GapLink {
                a: node_electrode(model, basis, n.column, p.from_node),
                b: node_electrode(model, basis, n.column, p.to_node),
                clamp_v: p.firing_high_v(),
            })
        })
        .collect()
}
