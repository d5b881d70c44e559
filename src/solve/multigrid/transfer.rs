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
/// (no residual array is written or read back). One coarse row at a time: the residuals of
/// the fine rows whose z-parents include it are formed, masked and summed with their
/// z-weights into one fine-length row, which is then restricted along r; the coarse rows run
/// in parallel on large levels. With `odd_rows_solved` the fine rows of odd index were the
/// last solved exactly by the smoother, so their residual is zero (to rounding) and they are
/// skipped: half the rows, and the rows between coarse rows, so no fine row is formed twice.
pub(super) fn restrict_residual(f: &Level, c: &mut Level, odd_rows_solved: bool) {
    let Some((mr, mz)) = f.map.as_ref() else {
        return;
    };
    let (cpw, nr) = (c.pw, f.nr);
    let mask = &c.mask;
    let along_z = |cj: usize, row: &mut [f32], (res, sum): &mut (Vec<f32>, Vec<f32>)| {
        // `row` is the padded coarse row cj (ghosts at both ends).
        sum.clear();
        sum.resize(nr, 0.0);
        res.resize(nr, 0.0);
        for &(j, wz) in &mz.children[cj] {
            if odd_rows_solved && j % 2 == 1 {
                continue;
            }
            f.residual_row(j, res);
            let base = (j + 1) * f.pw + 1;
            let m = &f.mask[base..base + nr];
            for ((s, &r), &mk) in sum.iter_mut().zip(res.iter()).zip(m) {
                *s += wz * f32::from(mk) * r;
            }
        }
        row.iter_mut().for_each(|v| *v = 0.0);
        let (c0, w0, w1) = (&mr.c0[..nr], &mr.w0[..nr], &mr.w1[..nr]);
        // row[ci + 1] is coarse column ci; ci + 2 ≤ cpw − 1.
        let row = &mut row[..cpw];
        for i in 0..nr {
            let (ci, v) = (c0[i], sum[i]);
            row[ci + 1] += w0[i] * v;
            row[ci + 2] += w1[i] * v;
        }
        let base = (cj + 1) * cpw;
        for (v, &m) in row.iter_mut().zip(&mask[base..base + cpw]) {
            *v *= f32::from(m);
        }
    };
    let interior = &mut c.b[cpw..cpw * (c.nz + 1)];
    let scratch = || (Vec::with_capacity(nr), Vec::with_capacity(nr));
    if f.nr * f.nz >= PARALLEL_NODES {
        interior
            .par_chunks_mut(cpw)
            .enumerate()
            .for_each_init(scratch, |s, (cj, row)| along_z(cj, row, s));
    } else {
        let mut s = scratch();
        interior
            .chunks_mut(cpw)
            .enumerate()
            .for_each(|(cj, row)| along_z(cj, row, &mut s));
    }
}

/// x_f += P x_c (masked), fine rows in parallel on large levels. Each fine row first
/// interpolates along z between its two coarse rows (a coarse-length row, contiguous and
/// vectorised; a kept row copies its coarse row), then along r into the fine row, masked by
/// multiplication rather than a branch.
pub(super) fn prolong_add(f: &mut Level, c: &Level) {
    let Some((mr, mz)) = f.map.as_ref() else {
        return;
    };
    let (cpw, pw, nr) = (c.pw, f.pw, f.nr);
    let mask = &f.mask;
    let cx = &c.x;
    let row_kernel = |j: usize, xrow: &mut [f32], tmp: &mut Vec<f32>| {
        let (cj, wj0, wj1) = (mz.c0[j], mz.w0[j], mz.w1[j]);
        let lo = &cx[(cj + 1) * cpw..(cj + 2) * cpw];
        tmp.clear();
        if wj1 == 0.0 {
            tmp.extend(lo.iter().map(|&a| wj0 * a));
        } else {
            let hi = &cx[(cj + 2) * cpw..(cj + 3) * cpw];
            tmp.extend(lo.iter().zip(hi).map(|(&a, &b)| wj0 * a + wj1 * b));
        }
        // tmp[ci + 1] is coarse column ci (one ghost at each end), so ci + 2 ≤ cpw − 1.
        let t = &tmp[..cpw];
        let base = (j + 1) * pw + 1;
        let m = &mask[base..base + nr];
        let xs = &mut xrow[1..nr + 1];
        let (c0, w0, w1) = (&mr.c0[..nr], &mr.w0[..nr], &mr.w1[..nr]);
        for i in 0..nr {
            let ci = c0[i];
            let v = w0[i] * t[ci + 1] + w1[i] * t[ci + 2];
            xs[i] += f32::from(m[i]) * v;
        }
    };
    let nz = f.nz;
    let interior = &mut f.x[pw..pw * (nz + 1)];
    if nr * nz >= PARALLEL_NODES {
        interior.par_chunks_mut(pw).enumerate().for_each_init(
            || Vec::with_capacity(cpw),
            |tmp, (j, xrow)| row_kernel(j, xrow, tmp),
        );
    } else {
        let mut tmp = Vec::with_capacity(cpw);
        interior
            .chunks_mut(pw)
            .enumerate()
            .for_each(|(j, xrow)| row_kernel(j, xrow, &mut tmp));
    }
}
