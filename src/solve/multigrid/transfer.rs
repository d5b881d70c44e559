//! Grid transfers: the coarse lines (every other one, plus the last), bilinear interpolation
//! weights in the true coordinates, restriction b_c = Pᵀ r and prolongation x_f += P x_c.
//!
//! Input: node coordinates along each axis; a fine level's residual or a coarse level's
//! correction. Output: the coarse right-hand side, or the fine x corrected.

use super::level::{Level, PARALLEL_NODES};
use rayon::prelude::*;

/// Interpolation weights along one axis: for each fine index, the coarse index below and the
/// weights on it and on the next coarse index.
#[derive(Debug, Clone)]
pub(super) struct AxisMap {
    pub(super) c0: Vec<usize>,
    pub(super) w0: Vec<f32>,
    /// Zero where the fine index lies on a coarse one.
    pub(super) w1: Vec<f32>,
    /// For each coarse index, the fine indices with a nonzero weight on it, and that weight.
    pub(super) children: Vec<Vec<(usize, f32)>>,
}

pub(super) fn coarse_indices(n: usize) -> Vec<usize> {
    let mut v: Vec<usize> = (0..n).step_by(2).collect();
    if v.last().is_some_and(|&l| l != n - 1) {
        v.push(n - 1);
    }
    v
}

pub(super) fn axis_map(x: &[f64], cidx: &[usize]) -> AxisMap {
    let n = x.len();
    let mut c0 = vec![0; n];
    let mut w0 = vec![0.0; n];
    let mut w1 = vec![0.0; n];
    let mut c = 0;
    for i in 0..n {
        while c + 1 < cidx.len() && cidx[c + 1] <= i {
            c += 1;
        }
        c0[i] = c;
        if cidx[c] == i {
            w0[i] = 1.0;
        } else {
            let (a, b) = (x[cidx[c]], x[cidx[c + 1]]);
            let t = (b - x[i]) / (b - a);
            w0[i] = t as f32;
            w1[i] = (1.0 - t) as f32;
        }
    }
    let mut children = vec![Vec::new(); cidx.len()];
    for i in 0..n {
        children[c0[i]].push((i, w0[i]));
        if w1[i] != 0.0 {
            children[c0[i] + 1].push((i, w1[i]));
        }
    }
    AxisMap {
        c0,
        w0,
        w1,
        children,
    }
}

/// b_c = Pᵀ (b − A x) (masked), the fine residual formed row by row inside the restriction
/// (no residual array is written or read back). One coarse row at a time: each fine row whose
/// z-parents include it has its residual formed and restricted along r, then added with its
/// z-weight; the coarse rows run in parallel on large levels. With `odd_rows_solved` the
/// fine rows of odd index were the last solved exactly by the smoother, so their residual
/// is zero (to rounding) and they are skipped: half the rows, and the rows between coarse
/// rows, so no fine row is formed twice.
pub(super) fn restrict_residual(f: &Level, c: &mut Level, odd_rows_solved: bool) {
    let Some((mr, mz)) = f.map.as_ref() else {
        return;
    };
    let cpw = c.pw;
    let mask = &c.mask;
    let along_z = |cj: usize, row: &mut [f32]| {
        // `row` is the padded coarse row cj (ghosts at both ends).
        row.iter_mut().for_each(|v| *v = 0.0);
        let mut res = vec![0.0f32; f.nr];
        for &(j, wz) in &mz.children[cj] {
            if odd_rows_solved && j % 2 == 1 {
                continue;
            }
            f.residual_row(j, &mut res);
            let base = (j + 1) * f.pw + 1;
            let m = &f.mask[base..base + f.nr];
            for i in 0..f.nr {
                if m[i] == 0 {
                    continue;
                }
                let v = wz * res[i];
                let ci = mr.c0[i];
                row[ci + 1] += mr.w0[i] * v;
                row[ci + 2] += mr.w1[i] * v;
            }
        }
        let base = (cj + 1) * cpw;
        for (v, &m) in row.iter_mut().zip(&mask[base..base + cpw]) {
            if m == 0 {
                *v = 0.0;
            }
        }
    };
    let interior = &mut c.b[cpw..cpw * (c.nz + 1)];
    if f.nr * f.nz >= PARALLEL_NODES {
        interior
            .par_chunks_mut(cpw)
            .enumerate()
            .for_each(|(cj, row)| along_z(cj, row));
    } else {
        interior
            .chunks_mut(cpw)
            .enumerate()
            .for_each(|(cj, row)| along_z(cj, row));
    }
}

/// x_f += P x_c (masked), fine rows in parallel on large levels.
pub(super) fn prolong_add(f: &mut Level, c: &Level) {
    let Some((mr, mz)) = f.map.as_ref() else {
        return;
    };
    let (cpw, pw, nr) = (c.pw, f.pw, f.nr);
    let mask = &f.mask;
    let row_kernel = |j: usize, xrow: &mut [f32]| {
        let (cj, wj0, wj1) = (mz.c0[j], mz.w0[j], mz.w1[j]);
        let base = (j + 1) * pw + 1;
        for i in 0..nr {
            if mask[base + i] == 0 {
                continue;
            }
            let (ci, wi0, wi1) = (mr.c0[i], mr.w0[i], mr.w1[i]);
            let q = (cj + 1) * cpw + ci + 1;
            let v = wj0 * (wi0 * c.x[q] + wi1 * c.x[q + 1])
                + wj1 * (wi0 * c.x[q + cpw] + wi1 * c.x[q + cpw + 1]);
            xrow[i + 1] += v;
        }
    };
    let nz = f.nz;
    let interior = &mut f.x[pw..pw * (nz + 1)];
    if nr * nz >= PARALLEL_NODES {
        interior
            .par_chunks_mut(pw)
            .enumerate()
            .for_each(|(j, xrow)| row_kernel(j, xrow));
    } else {
        interior
            .chunks_mut(pw)
            .enumerate()
            .for_each(|(j, xrow)| row_kernel(j, xrow));
    }
}
