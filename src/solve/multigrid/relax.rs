//! Zebra line Gauss–Seidel: exact tridiagonal solves on every r-line or z-line of one colour,
//! with the pivots factored once per level.
//!
//! Input: a level's stencils, right-hand side b, current x and pivots. Output: x with the
//! lines of the colour solved exactly against their neighbours. A line's right-hand side and
//! its forward elimination are held in x itself (a line's own values are never read while it
//! is solved), so no scratch array is streamed.

use super::level::{Level, PARALLEL_NODES, Shared};
use rayon::prelude::*;

/// r-lines whose Thomas recurrences are interleaved in one task.
const R_GROUP: usize = 4;

impl Level {
    /// Exact solves on every r-line of one colour (j ≡ colour mod 2). The lines of one colour
    /// are independent: they are taken `R_GROUP` at a time, their sequential Thomas
    /// recurrences interleaved so that the processor overlaps them (each line's arithmetic is
    /// the same as alone), and the groups run in parallel on large levels.
    /// With `zero_start` the rows of the other colour are taken as zero (the first pass of a
    /// cycle) and not read.
    pub(super) fn relax_r_lines(&mut self, colour: usize, zero_start: bool) {
        let (nr, pw, nz, nine) = (self.nr, self.pw, self.nz, self.nine);
        let st = &self.st;
        let b = &self.b;
        let r_inv = &self.r_inv;
        let x = Shared(self.x.as_mut_ptr());
        let group = |js: &[usize]| {
            for &j in js {
                let base = (j + 1) * pw + 1;
                // SAFETY: the task of a group writes only the rows j of its lines in `x`; it
                // reads rows j − 1 and j + 1 of `x`, which belong to the other colour and are
                // written by no task of this pass. Rows of one colour are disjoint, so no two
                // tasks touch the same element and no element is read while another task
                // writes it; the three slices of one line are disjoint rows.
                let (xd, xu, out) = unsafe {
                    (
                        std::slice::from_raw_parts(x.get().add(base - pw - 1), nr + 2),
                        std::slice::from_raw_parts(x.get().add(base + pw - 1), nr + 2),
                        std::slice::from_raw_parts_mut(x.get().add(base), nr),
                    )
                };
                if zero_start {
                    out.copy_from_slice(&b[base..base + nr]);
                } else {
                    r_line_rhs(st, b, base, nr, nine, xd, xu, out);
                }
            }
            let bases = |k: usize| (js[k] + 1) * pw + 1;
            let (w, e) = (&st[1], &st[2]);
            // SAFETY: as above; `r_thomas` touches `x` only on the rows of `js`.
            unsafe {
                match js.len() {
                    4 => r_thomas([bases(0), bases(1), bases(2), bases(3)], nr, w, e, r_inv, x),
                    3 => r_thomas([bases(0), bases(1), bases(2)], nr, w, e, r_inv, x),
                    2 => r_thomas([bases(0), bases(1)], nr, w, e, r_inv, x),
                    _ => r_thomas([bases(0)], nr, w, e, r_inv, x),
                }
            }
        };
        let lines: Vec<usize> = (colour..nz).step_by(2).collect();
        if nr * nz >= PARALLEL_NODES {
            lines.par_chunks(R_GROUP).for_each(group);
        } else {
            lines.chunks(R_GROUP).for_each(group);
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
        let up = &self.z_up;
        let x = Shared(self.x.as_mut_ptr());
        let block = |cols: std::ops::Range<usize>| {
            let [_, w, e, s, _, sw, se, nw, ne] = st;
            let first = cols.start + (cols.start + colour) % 2;
            if first >= cols.end {
                return;
            }
            // The last column of this colour in the block.
            let last = first + 2 * ((cols.end - 1 - first) / 2);
            let len = last - first + 1;
            // One row of the elimination, before it is put into x.
            let mut cur = vec![0.0f32; len];
            // SAFETY: a block writes `x` only in its columns first ..= last (in the columns
            // of this colour the elimination, then the solution; the other colour's values
            // written back unchanged); it reads `x` in the columns first − 1 ..= last + 1.
            // The edge columns first − 1 and last + 1 are of the other colour and lie in no
            // other block's first ..= last (a block's range starts and ends on this colour),
            // so no element is written by two tasks or read by one while another writes it.
            // The slices read from a row are dropped before that row is written.
            unsafe {
                let xp = x.get();
                // Elimination over the contiguous columns first ..= last, both colours, so
                // that the loop vectorises; only this colour's values are put into x, where
                // the line's own unknowns are not read until its back substitution (the
                // row below, `prev`, holds this colour's elimination values).
                for j in 0..nz {
                    let p0 = (j + 1) * pw + 1 + first;
                    let row = p0..p0 + len;
                    let xs =
                        |off: isize| std::slice::from_raw_parts(xp.offset(p0 as isize + off), len);
                    let (xl, xr) = (xs(-1), xs(1));
                    let prev = xs(-(pw as isize));
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
                    let xrow = std::slice::from_raw_parts_mut(xp.add(p0), len);
                    for k in (0..len).step_by(2) {
                        xrow[k] = cur[k];
                    }
                }
                // Back substitution a row at a time over the contiguous columns, both colours
                // computed (so that the loop vectorises) and only this colour's kept; the top
                // row's elimination value is already its solution.
                for j in (0..nz - 1).rev() {
                    let p0 = (j + 1) * pw + 1 + first;
                    let xr = std::slice::from_raw_parts_mut(xp.add(p0), len);
                    let xa = std::slice::from_raw_parts(xp.add(p0 + pw), len);
                    let u = &up[p0..p0 + len];
                    for k in 0..len {
                        let v = xr[k] - u[k] * xa[k];
                        xr[k] = if k % 2 == 0 { v } else { xr[k] };
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

/// The right-hand side of one r-line, b − (couplings to the rows below and above), into
/// `out`; `xd` and `xu` are the padded rows below and above (one ghost each side).
#[allow(clippy::too_many_arguments)]
fn r_line_rhs(
    st: &[Vec<f32>; 9],
    b: &[f32],
    base: usize,
    nr: usize,
    nine: bool,
    xd: &[f32],
    xu: &[f32],
    out: &mut [f32],
) {
    let [_, _, _, s, n, sw, se, nw, ne] = st;
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
            &ne[row],
        );
        let (xdl, xdr) = (&xd[..nr], &xd[2..nr + 2]);
        let (xul, xur) = (&xu[..nr], &xu[2..nr + 2]);
        for k in 0..nr {
            out[k] -= a[k] * xdl[k] + b2[k] * xdr[k] + c2[k] * xul[k] + d[k] * xur[k];
        }
    }
}

/// The Thomas solves of `N` r-lines starting at the padded indices `bases`, their
/// right-hand sides in `x` and the solutions into `x` in place, with the reciprocal pivots `r_inv`
/// factored once (upper factors east × pivot), so the sequential recurrences hold no
/// division; the `N` recurrences advance together, each computed exactly as alone.
///
/// # Safety
/// Every `bases[l] .. bases[l] + nr` must lie inside the level's arrays, and no other
/// thread may touch `x` on those rows meanwhile.
unsafe fn r_thomas<const N: usize>(
    bases: [usize; N],
    nr: usize,
    w: &[f32],
    e: &[f32],
    r_inv: &[f32],
    x: Shared,
) {
    let xp = x.get();
    for &base in &bases {
        assert!(base + nr <= w.len() && base + nr <= e.len() && base + nr <= r_inv.len());
    }
    let mut prev = [0.0f32; N];
    for k in 0..nr {
        for l in 0..N {
            let p = bases[l] + k;
            // SAFETY: p < len of every array (asserted above; the level's arrays share one
            // length); the caller owns the rows.
            unsafe {
                let v = (*xp.add(p) - *w.get_unchecked(p) * prev[l]) * *r_inv.get_unchecked(p);
                *xp.add(p) = v;
                prev[l] = v;
            }
        }
    }
    let mut next = [0.0f32; N];
    for k in (0..nr).rev() {
        for l in 0..N {
            let p = bases[l] + k;
            // SAFETY: as above.
            unsafe {
                let v = *xp.add(p) - *e.get_unchecked(p) * *r_inv.get_unchecked(p) * next[l];
                *xp.add(p) = v;
                next[l] = v;
            }
        }
    }
}
