//! The Galerkin coarse operator Pᵀ A P of a level, with the nodes that would make it singular
//! taken out.
//!
//! Input: a fine level with its interpolation weights along r and z and the kept lines.
//! Output: the coarse level (nine-point stencils, mask, line factors).

use super::level::{Level, PARALLEL_NODES};
use super::transfer::AxisMap;
use rayon::prelude::*;

/// Stencil slots: centre, the four axis neighbours, the four diagonal neighbours.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) enum Slot {
    C,
    W,
    E,
    S,
    N,
    Sw,
    Se,
    Nw,
    Ne,
}

pub(super) const SLOTS: [(Slot, i32, i32); 9] = [
    (Slot::C, 0, 0),
    (Slot::W, -1, 0),
    (Slot::E, 1, 0),
    (Slot::S, 0, -1),
    (Slot::N, 0, 1),
    (Slot::Sw, -1, -1),
    (Slot::Se, 1, -1),
    (Slot::Nw, -1, 1),
    (Slot::Ne, 1, 1),
];

/// Coarse rows of the product gathered by one task (consecutive coarse rows share a fine
/// row, whose reduction along r is then formed once).
const ROWS_PER_TASK: usize = 8;

/// What the product of one level needs: the fine level, the parents of every fine index
/// along r and z, the fine slots present and where each coarse offset is stored.
struct Product<'a> {
    f: &'a Level,
    /// Along r: the coarse index below, its weight and the weight on the next (zero when
    /// the fine line is kept).
    par: Vec<(usize, f64, f64)>,
    /// Along z: the one or two coarse indices with a nonzero weight.
    pz: Vec<([(usize, f64); 2], usize)>,
    /// The fine slots present, with their offset along r, row offset + 1 and padded offset.
    slots: Vec<(usize, i64, usize, isize)>,
    /// The slot of coarse offset (di, dj) at [dj + 1][di + 1].
    slot_table: [[usize; 3]; 3],
}

impl Product<'_> {
    /// The couplings of fine row j to the rows j − 1, j, j + 1, reduced along r (Prᵀ · Pr):
    /// t[9 ci + 3 (dj + 1) + (dci + 1)]. `t` holds `T_PAD` values beyond the 9 per coarse
    /// node, so that every product is added without a test (a zero weight adds zero).
    fn along_r(&self, j: usize, t: &mut [f64]) {
        let f = self.f;
        let par = &self.par;
        t.iter_mut().for_each(|v| *v = 0.0);
        let base = f.p(0, j);
        let own = &f.mask[base..base + f.nr];
        for &(slot, di, dj1, off) in &self.slots {
            let coef = &f.st[slot][base..base + f.nr];
            let nb = &f.mask[base.wrapping_add_signed(off)..][..f.nr];
            // Neighbours outside the grid have zero coefficients: only the fine nodes whose
            // neighbour along r is inside are visited.
            let lo = usize::from(di < 0);
            let hi = f.nr - usize::from(di > 0);
            for i in lo..hi {
                let a = coef[i] as f64 * f64::from(own[i] & nb[i]);
                let g = (i as i64 + di) as usize;
                let ((c, u0, u1), (cg, v0, v1)) = (par[i], par[g]);
                // (c, cg); (c, cg + 1); (c + 1, cg); (c + 1, cg + 1). Between two kept
                // lines lies at most one fine line, so every offset is within one.
                let k = 9 * c + 3 * dj1 + cg + 1 - c;
                let (ua, ub) = (u0 * a, u1 * a);
                let q = &mut t[k..k + 10];
                q[0] += ua * v0;
                q[1] += ua * v1;
                q[8] += ub * v0;
                q[9] += ub * v1;
            }
        }
    }

    /// Fine row j, reduced along r in `t`, into coarse row `cjf` with its z-weight `wjf`
    /// (its neighbour rows with their own z-parents). Each coarse slot receives its terms in
    /// the order of the fine rows j − 1, j, j + 1.
    fn along_z(&self, t: &[f64], j: usize, wjf: f64, cjf: usize, acc_row: &mut [[f64; 9]]) {
        // For each fine row j + dj − 1: the coarse slots its three columns land in (one
        // set per z-parent) and the weight, the same for every coarse node of the row.
        let mut targets: [[([usize; 3], f64); 2]; 3] = [[([0; 3], 0.0); 2]; 3];
        let mut counts = [0usize; 3];
        // Rows outside the grid have zero couplings and no targets.
        for dj in 0..3 {
            let Some(&(pzg, nzg)) = (j + dj).checked_sub(1).and_then(|g| self.pz.get(g)) else {
                continue;
            };
            for &(cjg, wjg) in &pzg[..nzg] {
                let row = self.slot_table[cjg + 1 - cjf];
                targets[dj][counts[dj]] = (row, wjf * wjg);
                counts[dj] += 1;
            }
        }
        // One pass over the row per fine row and z-parent, its three slots fixed in the
        // loop; each coarse slot still receives its terms in the order (dj, parent, dci).
        for dj in 0..3 {
            for &([s0, s1, s2], w) in &targets[dj][..counts[dj]] {
                assert!(s0 < 9 && s1 < 9 && s2 < 9);
                for (trow, out) in t.chunks_exact(9).zip(acc_row.iter_mut()) {
                    let v = &trow[3 * dj..3 * dj + 3];
                    out[s0] += w * v[0];
                    out[s1] += w * v[1];
                    out[s2] += w * v[2];
                }
            }
        }
    }
}

/// Values of the row buffer of [`Product::along_r`] beyond its 9 per coarse node.
const T_PAD: usize = 10;

/// The Galerkin coarse operator Pᵀ A P with tensor bilinear P, accumulated in double
/// precision. A coarse node that sits on a fixed fine node is fixed too (it takes no
/// correction, as the boundary it lies in), so every live coarse node coincides with a live
/// fine node and P keeps full column rank: the coarse operator stays nonsingular even where a
/// strip of free nodes is thinner than a coarse cell.
pub(super) fn galerkin(f: &Level, mr: &AxisMap, mz: &AxisMap, ci: &[usize], cj: &[usize]) -> Level {
    let (cnr, cnz) = (ci.len(), cj.len());
    let cn = cnr * cnz;
    let mut live = live_nodes(f, ci, cj);
    let mut acc: Vec<[f64; 9]> = crate::solve::zeroed(cn);
    let slot_of = |oi: i64, oj: i64| -> usize {
        SLOTS
            .iter()
            .position(|&(_, di, dj)| di as i64 == oi && dj as i64 == oj)
            .unwrap_or(0)
    };
    let mut slot_table = [[0usize; 3]; 3];
    for (oj, row) in slot_table.iter_mut().enumerate() {
        for (oi, v) in row.iter_mut().enumerate() {
            *v = slot_of(oi as i64 - 1, oj as i64 - 1);
        }
    }
    let pz = (0..mz.c0.len())
        .map(|i| {
            let (c, w0, w1) = (mz.c0[i], mz.w0[i] as f64, mz.w1[i] as f64);
            if w1 == 0.0 {
                ([(c, w0), (c, 0.0)], 1)
            } else {
                ([(c, w0), (c + 1, w1)], 2)
            }
        })
        .collect();
    let product = Product {
        f,
        par: (0..mr.c0.len())
            .map(|i| (mr.c0[i], mr.w0[i] as f64, mr.w1[i] as f64))
            .collect(),
        pz,
        slots: SLOTS
            .iter()
            .filter(|(s, _, _)| !f.st[*s as usize].is_empty())
            .map(|&(s, di, dj)| {
                let off = di as isize + dj as isize * f.pw as isize;
                (s as usize, di as i64, (dj + 1) as usize, off)
            })
            .collect(),
        slot_table,
    };
    // Fine rows whose z-parents include each coarse row, in ascending order.
    let mut rows_of: Vec<Vec<(usize, f64)>> = vec![Vec::new(); cnz];
    for (j, (pzj, nzj)) in product.pz.iter().enumerate() {
        for &(cjf, wjf) in &pzj[..*nzj] {
            rows_of[cjf].push((j, wjf));
        }
    }
    // P is the tensor product Pz ⊗ Pr (masked), so Pᵀ A P is formed one axis at a time: each
    // fine row's couplings to the rows j − 1, j, j + 1 are first reduced along r (Prᵀ · Pr,
    // three coarse columns per row), then those rows along z into the coarse row. A task
    // takes `ROWS_PER_TASK` coarse rows in order and reduces a fine row shared by two of them
    // once; each coarse row sums the same terms in the same order whichever task forms it.
    // A coarse node's row and column are cleared afterwards when it takes no correction.
    let live_ref = &live;
    let gather = |(task, acc_rows): (usize, &mut [[f64; 9]])| {
        let mut t = vec![0.0f64; 9 * cnr + T_PAD];
        let mut t_row = usize::MAX;
        for (k, acc_row) in acc_rows.chunks_mut(cnr).enumerate() {
            let cjf = task * ROWS_PER_TASK + k;
            for &(j, wjf) in &rows_of[cjf] {
                if j != t_row {
                    product.along_r(j, &mut t);
                    t_row = j;
                }
                product.along_z(&t, j, wjf, cjf, acc_row);
            }
            clear_dead(acc_row, cjf, live_ref, cnr, cnz);
        }
    };
    if f.nr * f.nz >= PARALLEL_NODES {
        acc.par_chunks_mut(cnr * ROWS_PER_TASK)
            .enumerate()
            .for_each(gather);
    } else {
        acc.chunks_mut(cnr * ROWS_PER_TASK)
            .enumerate()
            .for_each(gather);
    }
    remove_singular(&mut acc, &mut live, cnr, cnz, &slot_table);
    coarse_level(&acc, &live, cnr, cnz)
}

/// Clears the row of every coarse node of row `cjf` that takes no correction, and the
/// couplings of the others to such nodes.
fn clear_dead(acc_row: &mut [[f64; 9]], cjf: usize, live: &[bool], cnr: usize, cnz: usize) {
    for (cif, out) in acc_row.iter_mut().enumerate() {
        if !live[cjf * cnr + cif] {
            *out = [0.0; 9];
            continue;
        }
        for &(slot, di, dj) in &SLOTS[1..] {
            let (ni, nj) = (cif as i64 + di as i64, cjf as i64 + dj as i64);
            if ni >= 0
                && nj >= 0
                && (ni as usize) < cnr
                && (nj as usize) < cnz
                && !live[nj as usize * cnr + ni as usize]
            {
                out[slot as usize] = 0.0;
            }
        }
    }
}

/// The coarse nodes that take corrections: those whose fine node does, and those whose fine
/// node is fixed but borders free ones (they carry the correction up to the surface).
fn live_nodes(f: &Level, ci: &[usize], cj: &[usize]) -> Vec<bool> {
    let cnr = ci.len();
    let mut live = vec![false; cnr * cj.len()];
    for (jj, &fj) in cj.iter().enumerate() {
        for (ii, &fi) in ci.iter().enumerate() {
            let p = f.p(fi, fj);
            let pw = f.pw;
            let free_nb = [
                p - 1,
                p + 1,
                p - pw,
                p + pw,
                p - pw - 1,
                p - pw + 1,
                p + pw - 1,
                p + pw + 1,
            ]
            .iter()
            .any(|&q| f.mask[q] != 0);
            live[jj * cnr + ii] = f.mask[p] != 0 || free_nb;
        }
    }
    live
}

/// The coarse level from the accumulated rows: live nodes keep their row (in single
/// precision), the others become identity rows that take no correction; then the line
/// pivots are factored.
fn coarse_level(acc: &[[f64; 9]], live: &[bool], cnr: usize, cnz: usize) -> Level {
    let mut c = Level::new(cnr, cnz, true);
    for j in 0..cnz {
        for i in 0..cnr {
            let k = j * cnr + i;
            let p = c.p(i, j);
            if !live[k] || acc[k][Slot::C as usize] == 0.0 {
                c.st[Slot::C as usize][p] = 1.0;
                c.mask[p] = 0;
            } else {
                for (s, v) in acc[k].iter().enumerate() {
                    c.st[s][p] = *v as f32;
                }
                c.mask[p] = 1;
            }
        }
    }
    c.factor();
    c
}

/// Takes out of the coarse operator every live node whose line factorisation would meet a
/// vanishing pivot (coarse nodes whose interpolation columns are nearly dependent, as where a
/// strip of gas is thinner than a coarse cell): its row and column are removed, which is the
/// Galerkin product with that column of P left out, and the test repeats until none is left.
fn remove_singular(
    acc: &mut [[f64; 9]],
    live: &mut [bool],
    cnr: usize,
    cnz: usize,
    slot_table: &[[usize; 3]; 3],
) {
    const C: usize = Slot::C as usize;
    let rel = 1e-6;
    for _pass in 0..8 {
        let mut bad = Vec::new();
        // r-lines (nodes k, k + 1, …) and z-lines (k, k + cnr, …).
        let mut scan = |line: &mut dyn Iterator<Item = usize>, lo: usize, hi: usize| {
            let mut up = 0.0;
            let mut prev_live = false;
            for k in line {
                if !live[k] {
                    up = 0.0;
                    prev_live = false;
                    continue;
                }
                let lower = if prev_live { acc[k][lo] } else { 0.0 };
                let m = acc[k][C] - lower * up;
                if m.is_nan() || m <= rel * acc[k][C].abs() {
                    bad.push(k);
                    up = 0.0;
                    prev_live = false;
                    continue;
                }
                up = acc[k][hi] / m;
                prev_live = true;
            }
        };
        for j in 0..cnz {
            scan(
                &mut (j * cnr..(j + 1) * cnr),
                Slot::W as usize,
                Slot::E as usize,
            );
        }
        for i in 0..cnr {
            scan(
                &mut (i..cnr * cnz).step_by(cnr),
                Slot::S as usize,
                Slot::N as usize,
            );
        }
        if bad.is_empty() {
            return;
        }
        for k in bad {
            if !live[k] {
                continue;
            }
            live[k] = false;
            let (i, j) = ((k % cnr) as i64, (k / cnr) as i64);
            // Remove the couplings of the neighbours to k.
            for dj in -1i64..=1 {
                for di in -1i64..=1 {
                    let (ni, nj) = (i + di, j + dj);
                    if ni < 0 || nj < 0 || ni >= cnr as i64 || nj >= cnz as i64 {
                        continue;
                    }
                    let nk = nj as usize * cnr + ni as usize;
                    // From nk, k lies at offset (−di, −dj).
                    let slot = slot_table[(1 - dj) as usize][(1 - di) as usize];
                    acc[nk][slot] = 0.0;
                }
            }
            acc[k] = [0.0; 9];
        }
    }
}

#[cfg(test)]
mod tests {
    use crate::benchmark;
    use crate::mesh::Mesh;
    use crate::model::MeshSpec;
    use crate::solve::multigrid::{MgParams, Multigrid};
    use crate::solve::operator::{Operator, Scheme};
    use std::collections::HashMap;

    /// Every coarse operator equals Pᵀ A P formed entry by entry from its definition: each
    /// coupling a(p, q) of two free fine nodes is spread over every pair of live coarse
    /// parents with the product of their bilinear weights (no tensor splitting, no row
    /// buffers). Checked on a uniform and on a graded grid, both schemes, to single-precision
    /// round-off relative to the row's largest entry.
    #[test]
    fn coarse_operators_equal_the_triple_product() {
        for (growth, scheme) in [(1.0, Scheme::Symmetric), (1.15, Scheme::ShortleyWeller)] {
            let mut model = benchmark::problem(20_000);
            let cell = model.mesh.cell;
            model.mesh = MeshSpec::graded(0.3 * cell, 3.0 * cell, growth);
            let mesh = Mesh::build_with(&model, false).expect("mesh");
            let op = Operator::assemble(&mesh, scheme);
            let mg = Multigrid::build(&op, &mesh.r.x, &mesh.z.x, MgParams::default());
            assert!(mg.levels.len() >= 3, "{} levels", mg.levels.len());
            let mut worst = 0.0f64;
            for pair in mg.levels.windows(2) {
                let (f, c) = (&pair[0], &pair[1]);
                let (mr, mz) = f.map.as_ref().expect("interpolation weights");
                let parents = |m: &crate::solve::multigrid::transfer::AxisMap, i: usize| {
                    let mut v = vec![(m.c0[i], m.w0[i] as f64)];
                    if m.w1[i] != 0.0 {
                        v.push((m.c0[i] + 1, m.w1[i] as f64));
                    }
                    v
                };
                let mut reference: HashMap<(usize, usize), f64> = HashMap::new();
                for j in 0..f.nz {
                    for i in 0..f.nr {
                        let p = f.p(i, j);
                        if f.mask[p] == 0 {
                            continue;
                        }
                        for (slot, di, dj) in super::SLOTS {
                            let (gi, gj) = (i as i64 + di as i64, j as i64 + dj as i64);
                            if gi < 0 || gj < 0 || gi >= f.nr as i64 || gj >= f.nz as i64 {
                                continue;
                            }
                            let (gi, gj) = (gi as usize, gj as usize);
                            let a = f.entry(p, slot as usize);
                            if a == 0.0 || f.mask[f.p(gi, gj)] == 0 {
                                continue;
                            }
                            for &(ar, wr) in &parents(mr, i) {
                                for &(az, wz) in &parents(mz, j) {
                                    for &(br, vr) in &parents(mr, gi) {
                                        for &(bz, vz) in &parents(mz, gj) {
                                            let (ka, kb) = (az * c.nr + ar, bz * c.nr + br);
                                            *reference.entry((ka, kb)).or_insert(0.0) +=
                                                wr * wz * vr * vz * a;
                                        }
                                    }
                                }
                            }
                        }
                    }
                }
                for cj in 0..c.nz {
                    for ci in 0..c.nr {
                        let p = c.p(ci, cj);
                        if c.mask[p] == 0 {
                            continue;
                        }
                        let ka = cj * c.nr + ci;
                        let neighbours = super::SLOTS.iter().filter_map(|&(slot, di, dj)| {
                            let (bi, bj) = (ci as i64 + di as i64, cj as i64 + dj as i64);
                            (bi >= 0 && bj >= 0 && bi < c.nr as i64 && bj < c.nz as i64)
                                .then_some((slot, bi as usize, bj as usize))
                        });
                        // The largest entry of the row (next to a surface, a coarse node on
                        // a fixed fine node can couple more strongly than its diagonal).
                        let scale = neighbours.clone().fold(0.0f64, |m, (_, bi, bj)| {
                            let v = reference.get(&(ka, bj * c.nr + bi)).copied();
                            m.max(v.unwrap_or(0.0).abs())
                        });
                        for (slot, bi, bj) in neighbours {
                            let q = c.p(bi, bj);
                            let kb = bj * c.nr + bi;
                            let want = if c.mask[q] == 0 {
                                0.0
                            } else {
                                reference.get(&(ka, kb)).copied().unwrap_or(0.0)
                            };
                            let got = c.entry(p, slot as usize);
                            worst = worst.max((got - want).abs() / scale);
                        }
                    }
                }
            }
            assert!(
                worst < 1e-6,
                "growth {growth}: worst relative difference {worst:.2e}"
            );
            eprintln!("growth {growth} {scheme:?}: worst relative difference {worst:.2e}");
        }
    }
}
