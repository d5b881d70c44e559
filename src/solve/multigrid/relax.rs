//! Zebra line Gauss–Seidel: exact tridiagonal solves on every r-line or z-line of one colour,
//! with the pivots factored once per level.
//!
//! Input: a level's stencils, right-hand side b, current x and pivots. Output: x with the
//! lines of the colour solved exactly against their neighbours (the level's scratch vector
//! overwritten).

use super::level::{Level, PARALLEL_NODES, Shared};
use rayon::prelude::*;

impl Level {
    /// Exact solves on every r-line of one colour (j ≡ colour mod 2); the lines of one colour
    /// are independent and run in parallel on large levels.
    pub(super) fn relax_r_lines(&mut self, colour: usize) {
        let (nr, pw, nz, nine) = (self.nr, self.pw, self.nz, self.nine);
        let st = &self.st;
        let b = &self.b;
        let r_inv = &self.r_inv;
        let x = Shared(self.x.as_mut_ptr());
        let dp = Shared(self.dp.as_mut_ptr());
        let line = |j: usize| {
            let base = (j + 1) * pw + 1;
            // SAFETY: the task for line j writes only row j of `x` and `dp`; it reads rows
            // j − 1 and j + 1 of `x`, which belong to the other colour and are written by no
            // task of this pass. Rows of one colour are disjoint, so no two tasks touch the
            // same element and no element is read while another task writes it.
            let (xd, xu, xrow, out) = unsafe {
                (
                    std::slice::from_raw_parts(x.get().add(base - pw - 1), nr + 2),
                    std::slice::from_raw_parts(x.get().add(base + pw - 1), nr + 2),
                    std::slice::from_raw_parts_mut(x.get().add(base), nr),
                    std::slice::from_raw_parts_mut(dp.get().add(base), nr),
                )
            };
            relax_one_r_line(st, b, r_inv, base, nr, nine, xd, xu, xrow, out);
        };
        let lines = (colour..nz).step_by(2);
        if nr * nz >= PARALLEL_NODES {
            lines.collect::<Vec<_>>().into_par_iter().for_each(line);
        } else {
            lines.for_each(line);
        }
    }

    /// Exact solves on every z-line of one colour (i ≡ colour mod 2), all lines of the colour
    /// advanced together row by row for contiguous memory access; on large levels blocks of
    /// columns run in parallel.
    pub(super) fn relax_z_lines(&mut self, colour: usize) {
        let (nr, nz, pw, nine) = (self.nr, self.nz, self.pw, self.nine);
        let st = &self.st;
        let b = &self.b;
        let inv = &self.z_inv;
        let x = Shared(self.x.as_mut_ptr());
        let dp = Shared(self.dp.as_mut_ptr());
        let block = |cols: std::ops::Range<usize>| {
            let [_, w, e, s, n, sw, se, nw, ne] = st;
            let first = cols.start + (cols.start + colour) % 2;
            if first >= cols.end {
                return;
            }
            // The last column of this colour in the block.
            let last = first + 2 * ((cols.end - 1 - first) / 2);
            let len = last - first + 1;
            // SAFETY: a block writes `x` only in its own columns of this colour and `dp` only
            // in its own columns; it reads `x` in the columns first − 1 ..= last + 1, of which
            // those of this colour are its own (not written during the elimination, which
            // only reads `x`) and the others are of the other colour, written by no block of
            // this pass. Blocks cover disjoint columns, so no element is written by two tasks
            // or read by one while another writes it. The slices of one row below never
            // overlap a slice written at the same time.
            unsafe {
                let (xp, dq) = (x.get(), dp.get());
                // Elimination over the contiguous columns first ..= last, both colours, so
                // that the loop vectorises; the values left in `dp` at the columns of the
                // other colour are scratch and never read.
                for j in 0..nz {
                    let p0 = (j + 1) * pw + 1 + first;
                    let row = p0..p0 + len;
                    let xs =
                        |off: isize| std::slice::from_raw_parts(xp.offset(p0 as isize + off), len);
                    let (xl, xr) = (xs(-1), xs(1));
                    let prev = std::slice::from_raw_parts(dq.add(p0 - pw), len);
                    let cur = std::slice::from_raw_parts_mut(dq.add(p0), len);
                    let (bb, ww, ee, ss, ii) = (
                        &b[row.clone()],
                        &w[row.clone()],
                        &e[row.clone()],
                        &s[row.clone()],
                        &inv[row.clone()],
                    );
                    if nine {
                        let pw = pw as isize;
                        let (xdl, xdr, xul, xur) =
                            (xs(-pw - 1), xs(-pw + 1), xs(pw - 1), xs(pw + 1));
                        let (a, b2, c2, d) = (
                            &sw[row.clone()],
                            &se[row.clone()],
                            &nw[row.clone()],
                            &ne[row],
                        );
                        for k in 0..len {
                            let rhs = bb[k]
                                - ww[k] * xl[k]
                                - ee[k] * xr[k]
                                - (a[k] * xdl[k] + b2[k] * xdr[k] + c2[k] * xul[k] + d[k] * xur[k]);
                            cur[k] = (rhs - ss[k] * prev[k]) * ii[k];
                        }
                    } else {
                        for k in 0..len {
                            let rhs = bb[k] - ww[k] * xl[k] - ee[k] * xr[k];
                            cur[k] = (rhs - ss[k] * prev[k]) * ii[k];
                        }
                    }
                }
                let top = nz * pw + 1;
                for i in (first..=last).step_by(2) {
                    *xp.add(top + i) = *dq.add(top + i);
                }
                for j in (0..nz - 1).rev() {
                    let base = (j + 1) * pw + 1;
                    for i in (first..=last).step_by(2) {
                        let p = base + i;
                        *xp.add(p) = *dq.add(p) - n[p] * inv[p] * *xp.add(p + pw);
                    }
                }
            }
        };
        if nr * nz >= PARALLEL_NODES {
            let parts = (rayon::current_num_threads() * 4).clamp(1, nr.div_ceil(2));
            let width = nr.div_ceil(parts);
            (0..parts)
                .map(|t| t * width..((t + 1) * width).min(nr))
                .filter(|r| !r.is_empty())
                .collect::<Vec<_>>()
                .into_par_iter()
                .for_each(block);
        } else {
            block(0..nr);
        }
    }
}

/// One r-line: right-hand side from the rows below and above, then the Thomas solve with the
/// reciprocal pivots `r_inv` factored once (upper factors east × pivot), so the sequential
/// recurrences hold no division. `xd` and `xu` are the padded rows below and above (one ghost
/// each side).
#[allow(clippy::too_many_arguments)]
fn relax_one_r_line(
    st: &[Vec<f32>; 9],
    b: &[f32],
    r_inv: &[f32],
    base: usize,
    nr: usize,
    nine: bool,
    xd: &[f32],
    xu: &[f32],
    xrow: &mut [f32],
    out: &mut [f32],
) {
    let [_, w, e, s, n, sw, se, nw, ne] = st;
    let row = base..base + nr;
    let (ss, nn, bb) = (&s[row.clone()], &n[row.clone()], &b[row.clone()]);
    let (xdc, xuc) = (&xd[1..nr + 1], &xu[1..nr + 1]);
    for k in 0..nr {
        out[k] = bb[k] - ss[k] * xdc[k] - nn[k] * xuc[k];
    }
    if nine {
        let (a, b2, c2, d) = (
            &sw[row.clone()],
            &se[row.clone()],
            &nw[row.clone()],
            &ne[row.clone()],
        );
        let (xdl, xdr) = (&xd[..nr], &xd[2..nr + 2]);
        let (xul, xur) = (&xu[..nr], &xu[2..nr + 2]);
        for k in 0..nr {
            out[k] -= a[k] * xdl[k] + b2[k] * xdr[k] + c2[k] * xul[k] + d[k] * xur[k];
        }
    }
    let (ww, ee, inv) = (&w[row.clone()], &e[row.clone()], &r_inv[row]);
    let mut prev = 0.0f32;
    for k in 0..nr {
        let v = (out[k] - ww[k] * prev) * inv[k];
        out[k] = v;
        prev = v;
    }
    let mut next = 0.0f32;
    for k in (0..nr).rev() {
        let v = out[k] - ee[k] * inv[k] * next;
        xrow[k] = v;
        next = v;
    }
}
