//! One level of the hierarchy: padded single-precision stencils, the correction mask, the
//! work vectors and the line factors.
//!
//! Input: stencil coefficients written by the finest-level reader or the Galerkin product.
//! Output: the reciprocal Thomas pivots of every r-line and z-line (`factor`), and the
//! residual b − A x of the level's current x (`residual`).

use super::transfer::AxisMap;

#[derive(Debug, Clone)]
pub(super) struct Level {
    pub(super) nr: usize,
    pub(super) nz: usize,
    /// Padded row width, nr + 2.
    pub(super) pw: usize,
    /// Whether the diagonal slots are present (coarse levels).
    pub(super) nine: bool,
    /// Stencil coefficients by slot (index as `Slot`), padded; diagonal slots empty when
    /// `nine` is false.
    pub(super) st: [Vec<f32>; 9],
    /// 1 on nodes that take corrections, 0 on fixed ones; padded.
    pub(super) mask: Vec<u8>,
    pub(super) map: Option<(AxisMap, AxisMap)>,
    pub(super) x: Vec<f32>,
    pub(super) b: Vec<f32>,
    /// Reciprocal Thomas pivots of the z-lines, computed once (the upper factors are the north
    /// coefficients times these).
    pub(super) z_inv: Vec<f32>,
    /// Upper Thomas factors of the z-lines, north × `z_inv`, so that the back substitution
    /// reads one array for them.
    pub(super) z_up: Vec<f32>,
    /// Reciprocal Thomas pivots of the r-lines, computed once (upper factors: east × these),
    /// which takes the division out of the sequential recurrence of every r-line solve.
    pub(super) r_inv: Vec<f32>,
}

impl Level {
    pub(super) fn new(nr: usize, nz: usize, nine: bool) -> Level {
        let pw = nr + 2;
        let np = pw * (nz + 2);
        let full = || crate::solve::zeroed::<f32>(np);
        let st = std::array::from_fn(|s| if s < 5 || nine { full() } else { Vec::new() });
        Level {
            nr,
            nz,
            pw,
            nine,
            st,
            mask: crate::solve::zeroed(np),
            map: None,
            x: full(),
            b: full(),
            z_inv: full(),
            z_up: full(),
            r_inv: full(),
        }
    }

    /// Factors every z-line tridiagonal block once.
    pub(super) fn factor(&mut self) {
        let (nr, nz, pw) = (self.nr, self.nz, self.pw);
        let [c, _, _, s, n, ..] = &self.st;
        // z-lines: every column's recurrence advanced a row at a time, in memory order.
        let mut up_prev = vec![0.0f32; nr];
        for j in 0..nz {
            let base = (j + 1) * pw + 1;
            for (i, up) in up_prev.iter_mut().enumerate() {
                let p = base + i;
                let m = c[p] - s[p] * *up;
                let inv = 1.0 / m;
                self.z_inv[p] = inv;
                *up = n[p] * inv;
                self.z_up[p] = *up;
            }
        }
        let (w, e) = (&self.st[1], &self.st[2]);
        for j in 0..nz {
            let mut up = 0.0f32;
            for i in 0..nr {
                let p = (j + 1) * pw + 1 + i;
                let inv = 1.0 / (c[p] - w[p] * up);
                self.r_inv[p] = inv;
                up = e[p] * inv;
            }
        }
    }

    #[inline(always)]
    pub(super) fn p(&self, i: usize, j: usize) -> usize {
        (j + 1) * self.pw + i + 1
    }

    pub(super) fn bytes(&self) -> usize {
        let np = self.pw * (self.nz + 2);
        let slots = if self.nine { 9 } else { 5 };
        np * 4 * (slots + 5) + np
    }

    /// The residual b − A x on row j, into `out` (nr values).
    pub(super) fn residual_row(&self, j: usize, out: &mut [f32]) {
        let (nr, pw) = (self.nr, self.pw);
        let [c, w, e, s, n, sw, se, nw, ne] = &self.st;
        let x = &self.x;
        let base = (j + 1) * pw + 1;
        let row = base..base + nr;
        let xc = &x[row.clone()];
        let (xl, xr) = (&x[base - 1..base - 1 + nr], &x[base + 1..base + 1 + nr]);
        let (xd, xu) = (&x[base - pw..base - pw + nr], &x[base + pw..base + pw + nr]);
        let (cc, ww, ee, ss, nn) = (
            &c[row.clone()],
            &w[row.clone()],
            &e[row.clone()],
            &s[row.clone()],
            &n[row.clone()],
        );
        let bb = &self.b[row.clone()];
        let out = &mut out[..nr];
        for k in 0..nr {
            out[k] = bb[k]
                - (cc[k] * xc[k] + ww[k] * xl[k] + ee[k] * xr[k] + ss[k] * xd[k] + nn[k] * xu[k]);
        }
        if self.nine {
            let (xdl, xdr) = (
                &x[base - pw - 1..base - pw - 1 + nr],
                &x[base - pw + 1..base - pw + 1 + nr],
            );
            let (xul, xur) = (
                &x[base + pw - 1..base + pw - 1 + nr],
                &x[base + pw + 1..base + pw + 1 + nr],
            );
            let (a, b2, c2, d) = (
                &sw[row.clone()],
                &se[row.clone()],
                &nw[row.clone()],
                &ne[row],
            );
            for k in 0..nr {
                out[k] -= a[k] * xdl[k] + b2[k] * xdr[k] + c2[k] * xul[k] + d[k] * xur[k];
            }
        }
    }

    /// The stencil entry of node (i, j) towards offset (di, dj), as f64.
    #[inline(always)]
    pub(super) fn entry(&self, p: usize, slot: usize) -> f64 {
        let v = &self.st[slot];
        if v.is_empty() { 0.0 } else { v[p] as f64 }
    }
}

/// Levels with at least this many nodes relax in parallel.
pub(super) const PARALLEL_NODES: usize = 60_000;

/// A raw pointer that parallel relaxation tasks share; each task touches a disjoint set of
/// elements (see the SAFETY notes at the use sites).
#[derive(Clone, Copy)]
pub(super) struct Shared(pub(super) *mut f32);

// SAFETY: the pointer is only dereferenced under the disjointness rules stated where the
// tasks are spawned; the arrays outlive the parallel section, which joins before returning.
unsafe impl Send for Shared {}
unsafe impl Sync for Shared {}

impl Shared {
    pub(super) fn get(self) -> *mut f32 {
        self.0
    }
}
