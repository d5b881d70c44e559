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
    pub(super) w1: Vec<f32>,
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
    AxisMap { c0, w0, w1 }
}

/// b_c = Pᵀ r (masked), as two passes of the tensor product: along r within each fine row,
/// then along z into each coarse row; both passes run in parallel on large levels.
pub(super) fn restrict(f: &Level, c: &mut Level) {
    let Some((mr, mz)) = f.map.as_ref() else {
        return;
    };
    let (cnr, cpw) = (c.nr, c.pw);
    let parallel = f.nr * f.nz >= PARALLEL_NODES;
    // Pass 1: each fine row restricted along r into `cnr` values.
    let mut t = vec![0.0f32; f.nz * cnr];
    let along_r = |j: usize, out: &mut [f32]| {
        let base = (j + 1) * f.pw + 1;
        for i in 0..f.nr {
            let p = base + i;
            if f.mask[p] == 0 {
                continue;
            }
            let rv = f.dp[p];
            let ci = mr.c0[i];
            out[ci] += mr.w0[i] * rv;
            if mr.w1[i] != 0.0 {
                out[ci + 1] += mr.w1[i] * rv;
            }
        }
    };
    if parallel {
        t.par_chunks_mut(cnr)
            .enumerate()
            .for_each(|(j, out)| along_r(j, out));
    } else {
        t.chunks_mut(cnr)
            .enumerate()
            .for_each(|(j, out)| along_r(j, out));
    }
    // Pass 2: each coarse row gathers the restricted fine rows whose parents include it.
    let mut rows_of: Vec<Vec<(usize, f32)>> = vec![Vec::new(); c.nz];
    for j in 0..f.nz {
        rows_of[mz.c0[j]].push((j, mz.w0[j]));
        if mz.w1[j] != 0.0 {
            rows_of[mz.c0[j] + 1].push((j, mz.w1[j]));
        }
    }
    let mask = &c.mask;
    let along_z = |cj: usize, row: &mut [f32]| {
        // `row` is the padded coarse row cj (ghosts at both ends).
        row.iter_mut().for_each(|v| *v = 0.0);
        for &(j, w) in &rows_of[cj] {
            let src = &t[j * cnr..(j + 1) * cnr];
            for (ci, v) in src.iter().enumerate() {
                row[ci + 1] += w * v;
            }
        }
        let base = (cj + 1) * cpw;
        for ci in 0..cnr {
            if mask[base + ci + 1] == 0 {
                row[ci + 1] = 0.0;
            }
        }
    };
    let interior = &mut c.b[cpw..cpw * (c.nz + 1)];
    if parallel {
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
