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

/// The Galerkin coarse operator Pᵀ A P with tensor bilinear P, accumulated in double
/// precision. A coarse node that sits on a fixed fine node is fixed too (it takes no
/// correction, as the boundary it lies in), so every live coarse node coincides with a live
/// fine node and P keeps full column rank: the coarse operator stays nonsingular even where a
/// strip of free nodes is thinner than a coarse cell.
pub(super) fn galerkin(f: &Level, mr: &AxisMap, mz: &AxisMap, ci: &[usize], cj: &[usize]) -> Level {
    let (cnr, cnz) = (ci.len(), cj.len());
    let cn = cnr * cnz;
    let mut live = live_nodes(f, ci, cj);
    let mut acc = vec![[0.0f64; 9]; cn];
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
    // Parents along each axis: the one or two coarse indices with a nonzero weight.
    let axis_parents = |m: &AxisMap| -> Vec<([(usize, f64); 2], usize)> {
        (0..m.c0.len())
            .map(|i| {
                let (c, w0, w1) = (m.c0[i], m.w0[i] as f64, m.w1[i] as f64);
                if w1 == 0.0 {
                    ([(c, w0), (c, 0.0)], 1)
                } else {
                    ([(c, w0), (c + 1, w1)], 2)
                }
            })
            .collect()
    };
    // Along r: the coarse index below, its weight and the weight on the next (zero when the
    // fine line is kept).
    let par: Vec<(usize, f64, f64)> = (0..mr.c0.len())
        .map(|i| (mr.c0[i], mr.w0[i] as f64, mr.w1[i] as f64))
        .collect();
    let pz = axis_parents(mz);
    // The fine slots present, with the padded offset of their neighbour.
    let slots: Vec<(usize, i64, usize, isize)> = SLOTS
        .iter()
        .filter(|(s, _, _)| !f.st[*s as usize].is_empty())
        .map(|&(s, di, dj)| {
            let off = di as isize + dj as isize * f.pw as isize;
            (s as usize, di as i64, (dj + 1) as usize, off)
        })
        .collect();
    // Fine rows whose z-parents include each coarse row; every coarse row of the product is
    // then gathered independently, in parallel.
    let mut rows_of: Vec<Vec<(usize, f64)>> = vec![Vec::new(); cnz];
    for (j, (pzj, nzj)) in pz.iter().enumerate() {
        for &(cjf, wjf) in &pzj[..*nzj] {
            rows_of[cjf].push((j, wjf));
        }
    }
    // P is the tensor product Pz ⊗ Pr (masked), so Pᵀ A P is formed one axis at a time: each
    // fine row's couplings to the rows j − 1, j, j + 1 are first reduced along r (Prᵀ · Pr,
    // three coarse columns per row), then those rows along z into the coarse row. A coarse
    // node's row and column are cleared afterwards when it takes no correction.
    let live_ref = &live;
    let gather = |cjf: usize, acc_row: &mut [[f64; 9]]| {
        // Along r: t[9 ci + 3 (dj + 1) + (dci + 1)] for one fine row.
        let mut t = vec![0.0f64; 9 * cnr];
        for &(j, wjf) in &rows_of[cjf] {
            t.iter_mut().for_each(|v| *v = 0.0);
            let base = f.p(0, j);
            let own = &f.mask[base..base + f.nr];
            for &(slot, di, dj1, off) in &slots {
                let coef = &f.st[slot][base..base + f.nr];
                let nb = &f.mask[base.wrapping_add_signed(off)..][..f.nr];
                for i in 0..f.nr {
                    let a = coef[i] as f64;
                    // Neighbours outside the grid have zero coefficients, so the neighbour
                    // is inside.
                    if a == 0.0 || own[i] == 0 || nb[i] == 0 {
                        continue;
                    }
                    let g = (i as i64 + di) as usize;
                    let ((c, u0, u1), (cg, v0, v1)) = (par[i], par[g]);
                    // (c, cg); (c, cg + 1); (c + 1, cg); (c + 1, cg + 1). Between two kept
                    // lines lies at most one fine line, so every offset is within one.
                    let k = 9 * c + 3 * dj1 + cg + 1 - c;
                    t[k] += u0 * v0 * a;
                    if v1 != 0.0 {
                        t[k + 1] += u0 * v1 * a;
                    }
                    if u1 != 0.0 {
                        t[k + 8] += u1 * v0 * a;
                        if v1 != 0.0 {
                            t[k + 9] += u1 * v1 * a;
                        }
                    }
                }
            }
            // Along z: the fine row j and its neighbours into the coarse rows around cjf.
            for (trow, out) in t.chunks_exact(9).zip(acc_row.iter_mut()) {
                for (k, &v) in trow.iter().enumerate() {
                    if v == 0.0 {
                        continue;
                    }
                    let (dj, dci) = (k / 3, k % 3);
                    let (pzg, nzg) = pz[j + dj - 1];
                    for &(cjg, wjg) in &pzg[..nzg] {
                        out[slot_table[cjg + 1 - cjf][dci]] += wjf * wjg * v;
                    }
                }
            }
        }
        for (cif, out) in acc_row.iter_mut().enumerate() {
            if !live_ref[cjf * cnr + cif] {
                *out = [0.0; 9];
                continue;
            }
            for &(slot, di, dj) in &SLOTS[1..] {
                let (ni, nj) = (cif as i64 + di as i64, cjf as i64 + dj as i64);
                if ni >= 0
                    && nj >= 0
                    && (ni as usize) < cnr
                    && (nj as usize) < cnz
                    && !live_ref[nj as usize * cnr + ni as usize]
                {
                    out[slot as usize] = 0.0;
                }
            }
        }
    };
    if f.nr * f.nz >= PARALLEL_NODES {
        acc.par_chunks_mut(cnr)
            .enumerate()
            .for_each(|(cjf, acc_row)| gather(cjf, acc_row));
    } else {
        for (cjf, acc_row) in acc.chunks_mut(cnr).enumerate() {
            gather(cjf, acc_row);
        }
    }
    remove_singular(&mut acc, &mut live, cnr, cnz, &slot_table);
    coarse_level(&acc, &live, cnr, cnz)
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
