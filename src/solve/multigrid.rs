//! Geometric multigrid on the tensor-product grid, used as the preconditioner of the Krylov
//! solver.
//!
//! The hierarchy is built once per grid: every other grid line is kept (plus the last), the
//! interpolation is bilinear in the true coordinates (so graded spacing is respected), and
//! each coarse operator is the Galerkin product Pᵀ A P, a nine-point stencil. Fixed nodes take
//! no correction. The smoother is alternating zebra line Gauss–Seidel (r-lines, then z-lines,
//! even lines first), which stays effective on the stretched cells of a graded grid; the
//! post-smoother runs the same steps in reverse, so for a symmetric operator the V-cycle is a
//! symmetric positive-definite preconditioner, as conjugate gradients need. The coarsest level
//! is solved by dense LU.
//!
//! The hierarchy works in single precision on padded arrays (a ring of ghost nodes with zero
//! coefficients, so the kernels need no bounds tests): a preconditioner needs no more, and it
//! halves the memory traffic. The Krylov iteration around it stays in double precision, so the
//! final residual is that of the double-precision operator.

use crate::solve::operator::Operator;
use nalgebra::{DMatrix, DVector};
use rayon::prelude::*;

/// Interpolation weights along one axis: for each fine index, the coarse index below and the
/// weights on it and on the next coarse index.
#[derive(Debug, Clone)]
struct AxisMap {
    c0: Vec<usize>,
    w0: Vec<f32>,
    w1: Vec<f32>,
}

/// Stencil slots: centre, the four axis neighbours, the four diagonal neighbours.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Slot {
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

const SLOTS: [(Slot, i32, i32); 9] = [
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

#[derive(Debug, Clone)]
struct Level {
    nr: usize,
    nz: usize,
    /// Padded row width, nr + 2.
    pw: usize,
    /// Whether the diagonal slots are present (coarse levels).
    nine: bool,
    /// Stencil coefficients by slot (index as `Slot`), padded; diagonal slots empty when
    /// `nine` is false.
    st: [Vec<f32>; 9],
    /// 1 on nodes that take corrections, 0 on fixed ones; padded.
    mask: Vec<u8>,
    map: Option<(AxisMap, AxisMap)>,
    x: Vec<f32>,
    b: Vec<f32>,
    /// Scratch: line right-hand sides during relaxation, the residual after it.
    dp: Vec<f32>,
    /// Reciprocal Thomas pivots of the z-lines, computed once (the upper factors are the north
    /// coefficients times these).
    z_inv: Vec<f32>,
    /// Reciprocal Thomas pivots of the r-lines, computed once (upper factors: east × these),
    /// which takes the division out of the sequential recurrence of every r-line solve.
    r_inv: Vec<f32>,
}

/// Settings of the V-cycle.
#[derive(Debug, Clone, Copy)]
pub struct MgParams {
    /// Smoothing steps before and after the coarse correction.
    pub sweeps: usize,
    /// Coarsen until a level has at most this many nodes.
    pub coarsest_nodes: usize,
    /// Make the V-cycle a symmetric operator (post-smoothing the adjoint of pre-smoothing), as
    /// conjugate gradients need; otherwise r-lines smooth before and z-lines after the coarse
    /// correction, half the work for a non-symmetric Krylov method.
    pub symmetric: bool,
}

impl Default for MgParams {
    fn default() -> Self {
        Self {
            sweeps: 1,
            coarsest_nodes: 400,
            symmetric: true,
        }
    }
}

/// The hierarchy.
#[derive(Debug, Clone)]
pub struct Multigrid {
    levels: Vec<Level>,
    coarse_lu: Option<nalgebra::LU<f64, nalgebra::Dyn, nalgebra::Dyn>>,
    params: MgParams,
}

fn coarse_indices(n: usize) -> Vec<usize> {
    let mut v: Vec<usize> = (0..n).step_by(2).collect();
    if v.last().is_some_and(|&l| l != n - 1) {
        v.push(n - 1);
    }
    v
}

fn axis_map(x: &[f64], cidx: &[usize]) -> AxisMap {
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

impl Level {
    fn new(nr: usize, nz: usize, nine: bool) -> Level {
        let pw = nr + 2;
        let np = pw * (nz + 2);
        let full = || vec![0.0f32; np];
        let st = std::array::from_fn(|s| if s < 5 || nine { full() } else { Vec::new() });
        Level {
            nr,
            nz,
            pw,
            nine,
            st,
            mask: vec![0u8; np],
            map: None,
            x: full(),
            b: full(),
            dp: full(),
            z_inv: full(),
            r_inv: full(),
        }
    }

    /// Factors every z-line tridiagonal block once.
    fn factor(&mut self) {
        let (nr, nz, pw) = (self.nr, self.nz, self.pw);
        let [c, _, _, s, n, ..] = &self.st;
        for i in 0..nr {
            let mut up_prev = 0.0f32;
            for j in 0..nz {
                let p = (j + 1) * pw + 1 + i;
                let m = c[p] - s[p] * up_prev;
                let inv = 1.0 / m;
                self.z_inv[p] = inv;
                up_prev = n[p] * inv;
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
    fn p(&self, i: usize, j: usize) -> usize {
        (j + 1) * self.pw + i + 1
    }

    fn bytes(&self) -> usize {
        let np = self.pw * (self.nz + 2);
        let slots = if self.nine { 9 } else { 5 };
        np * 4 * (slots + 5) + np
    }

    /// Exact solves on every r-line of one colour (j ≡ colour mod 2); the lines of one colour
    /// are independent and run in parallel on large levels.
    fn relax_r_lines(&mut self, colour: usize) {
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
    fn relax_z_lines(&mut self, colour: usize) {
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

    /// The residual b − A x, into the scratch vector.
    fn residual(&mut self) {
        let (nr, pw) = (self.nr, self.pw);
        let [c, w, e, s, n, sw, se, nw, ne] = &self.st;
        let x = &self.x;
        for j in 0..self.nz {
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
            let out = &mut self.dp[row.clone()];
            for k in 0..nr {
                out[k] = bb[k]
                    - (cc[k] * xc[k]
                        + ww[k] * xl[k]
                        + ee[k] * xr[k]
                        + ss[k] * xd[k]
                        + nn[k] * xu[k]);
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
    }

    /// The stencil entry of node (i, j) towards offset (di, dj), as f64.
    #[inline(always)]
    fn entry(&self, p: usize, slot: usize) -> f64 {
        let v = &self.st[slot];
        if v.is_empty() { 0.0 } else { v[p] as f64 }
    }
}

impl Multigrid {
    /// The finest level, read from the operator's rows.
    fn fine_level(op: &Operator, nr: usize, nz: usize) -> Level {
        let mut l = Level::new(nr, nz, false);
        use crate::solve::operator::{ST_C, ST_E, ST_N, ST_S, ST_W};
        for (k, row) in op.stencil.iter().enumerate().take(nr * nz) {
            let (i, j) = (k % nr, k / nr);
            let p = l.p(i, j);
            for (slot, at) in [
                (Slot::C, ST_C),
                (Slot::W, ST_W),
                (Slot::E, ST_E),
                (Slot::S, ST_S),
                (Slot::N, ST_N),
            ] {
                l.st[slot as usize][p] = row[at] as f32;
            }
            l.mask[p] = u8::from(op.fixed[k] == crate::mesh::FREE);
        }
        l.factor();
        l
    }

    /// Builds the hierarchy for an operator on the grid with node coordinates `r` × `z`.
    pub fn build(op: &Operator, r: &[f64], z: &[f64], params: MgParams) -> Multigrid {
        let mut levels = vec![Self::fine_level(op, r.len(), z.len())];
        let mut rx = r.to_vec();
        let mut zx = z.to_vec();
        while let Some(fine) = levels.last() {
            let (nr, nz) = (fine.nr, fine.nz);
            if nr * nz <= params.coarsest_nodes || (nr <= 3 && nz <= 3) {
                break;
            }
            let ci = if nr > 3 {
                coarse_indices(nr)
            } else {
                (0..nr).collect()
            };
            let cj = if nz > 3 {
                coarse_indices(nz)
            } else {
                (0..nz).collect()
            };
            let mr = axis_map(&rx, &ci);
            let mz = axis_map(&zx, &cj);
            let coarse = galerkin(fine, &mr, &mz, &ci, &cj);
            rx = ci.iter().map(|&i| rx[i]).collect();
            zx = cj.iter().map(|&j| zx[j]).collect();
            let last = levels.len() - 1;
            levels[last].map = Some((mr, mz));
            levels.push(coarse);
        }
        let coarse_lu = levels.last().map(|cl| {
            let n = cl.nr * cl.nz;
            let mut m = DMatrix::<f64>::zeros(n, n);
            for j in 0..cl.nz {
                for i in 0..cl.nr {
                    let k = j * cl.nr + i;
                    let p = cl.p(i, j);
                    for (slot, di, dj) in SLOTS {
                        let (ii, jj) = (i as i64 + di as i64, j as i64 + dj as i64);
                        if ii < 0 || jj < 0 || ii >= cl.nr as i64 || jj >= cl.nz as i64 {
                            continue;
                        }
                        let q = jj as usize * cl.nr + ii as usize;
                        m[(k, q)] += cl.entry(p, slot as usize);
                    }
                }
            }
            m.lu()
        });
        Multigrid {
            levels,
            coarse_lu,
            params,
        }
    }

    /// Number of levels.
    pub fn depth(&self) -> usize {
        self.levels.len()
    }

    /// Bytes held by the hierarchy (stencils, masks and work vectors).
    pub fn bytes(&self) -> usize {
        self.levels.iter().map(Level::bytes).sum()
    }

    /// An estimate of the bytes one V-cycle ([`Multigrid::apply`]) must move between memory
    /// and the processor, from the stencil width and the sweeps of every level: each pass
    /// streams the arrays it reads and writes once (single precision, 4 bytes; a mask byte),
    /// and what one pass leaves in cache is not counted again. Per node and pass: a line
    /// relaxation reads the stencil slots, b, x and its pivots and writes x and its scratch; the residual reads the stencil, b and x and writes the scratch; the
    /// restriction reads the scratch and mask; the prolongation reads and writes x and reads
    /// the mask; the zero start writes x. The finest level also converts the double-precision
    /// residual in (8 + 4) and the correction out (4 + 8).
    pub fn bytes_per_cycle(&self) -> f64 {
        let last = self.levels.len() - 1;
        let mut total = 0.0;
        for (li, l) in self.levels.iter().enumerate() {
            let n = (l.nr * l.nz) as f64;
            if li == last {
                // Dense LU of a few hundred nodes: held in cache, its b and x streamed.
                total += 8.0 * n;
                continue;
            }
            let slots = if l.nine { 9.0 } else { 5.0 };
            let r_pass = 4.0 * (slots + 5.0);
            let z_pass = 4.0 * (slots + 5.0);
            let per_sweep = if self.params.symmetric {
                2.0 * (r_pass + z_pass)
            } else {
                r_pass + z_pass
            };
            let residual = 4.0 * (slots + 3.0);
            let transfer = (4.0 + 1.0) + (8.0 + 1.0);
            let zero = 4.0;
            total += n * (self.params.sweeps as f64 * per_sweep + residual + transfer + zero);
            if li == 0 {
                total += n * 24.0;
            }
        }
        total
    }

    /// z = M⁻¹ r: one V-cycle from a zero guess.
    pub fn apply(&mut self, r: &[f64], z: &mut [f64]) {
        let l0 = &mut self.levels[0];
        let nr = l0.nr;
        for j in 0..l0.nz {
            let base = (j + 1) * l0.pw + 1;
            for i in 0..nr {
                l0.b[base + i] = r[j * nr + i] as f32;
            }
        }
        self.cycle(0);
        let l0 = &self.levels[0];
        for j in 0..l0.nz {
            let base = (j + 1) * l0.pw + 1;
            for i in 0..nr {
                z[j * nr + i] = l0.x[base + i] as f64;
            }
        }
    }

    fn smooth_pre(l: &mut Level, symmetric: bool) {
        l.relax_r_lines(0);
        l.relax_r_lines(1);
        if symmetric {
            l.relax_z_lines(0);
            l.relax_z_lines(1);
        }
    }

    fn smooth_post(l: &mut Level, symmetric: bool) {
        l.relax_z_lines(1);
        l.relax_z_lines(0);
        if symmetric {
            l.relax_r_lines(1);
            l.relax_r_lines(0);
        }
    }

    fn cycle(&mut self, li: usize) {
        let last = self.levels.len() - 1;
        if li == last {
            let l = &mut self.levels[li];
            if let Some(lu) = &self.coarse_lu {
                let mut b = DVector::<f64>::zeros(l.nr * l.nz);
                for j in 0..l.nz {
                    for i in 0..l.nr {
                        b[j * l.nr + i] = l.b[l.p(i, j)] as f64;
                    }
                }
                if let Some(x) = lu.solve(&b) {
                    for j in 0..l.nz {
                        for i in 0..l.nr {
                            let p = l.p(i, j);
                            l.x[p] = x[j * l.nr + i] as f32;
                        }
                    }
                }
            }
            return;
        }
        {
            let l = &mut self.levels[li];
            l.x.iter_mut().for_each(|v| *v = 0.0);
            for _ in 0..self.params.sweeps {
                Self::smooth_pre(l, self.params.symmetric);
            }
            l.residual();
        }
        {
            let (fine, rest) = self.levels.split_at_mut(li + 1);
            restrict(&fine[li], &mut rest[0]);
        }
        self.cycle(li + 1);
        {
            let (fine, rest) = self.levels.split_at_mut(li + 1);
            let f = &mut fine[li];
            prolong_add(f, &rest[0]);
            for _ in 0..self.params.sweeps {
                Self::smooth_post(f, self.params.symmetric);
            }
        }
    }
}

/// b_c = Pᵀ r (masked), as two passes of the tensor product: along r within each fine row,
/// then along z into each coarse row; both passes run in parallel on large levels.
fn restrict(f: &Level, c: &mut Level) {
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
fn prolong_add(f: &mut Level, c: &Level) {
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

/// The Galerkin coarse operator Pᵀ A P with tensor bilinear P, accumulated in double
/// precision. A coarse node that sits on a fixed fine node is fixed too (it takes no
/// correction, as the boundary it lies in), so every live coarse node coincides with a live
/// fine node and P keeps full column rank: the coarse operator stays nonsingular even where a
/// strip of free nodes is thinner than a coarse cell.
fn galerkin(f: &Level, mr: &AxisMap, mz: &AxisMap, ci: &[usize], cj: &[usize]) -> Level {
    let (cnr, cnz) = (ci.len(), cj.len());
    let cn = cnr * cnz;
    // A coarse node takes corrections when the fine node under it does, or when that node is
    // fixed but borders free ones (it then carries the correction up to the surface).
    let mut live = vec![false; cn];
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
    let pr = axis_parents(mr);
    let pz = axis_parents(mz);
    let slots: Vec<(usize, i64, i64)> = SLOTS
        .iter()
        .filter(|(s, _, _)| !f.st[*s as usize].is_empty())
        .map(|&(s, di, dj)| (s as usize, di as i64, dj as i64))
        .collect();
    // Fine rows whose z-parents include each coarse row; every coarse row of the product is
    // then gathered independently, in parallel.
    let mut rows_of: Vec<Vec<(usize, f64)>> = vec![Vec::new(); cnz];
    for (j, (pzj, nzj)) in pz.iter().enumerate() {
        for &(cjf, wjf) in &pzj[..*nzj] {
            rows_of[cjf].push((j, wjf));
        }
    }
    let live_ref = &live;
    let gather = |cjf: usize, acc_row: &mut [[f64; 9]]| {
        for &(j, wjf) in &rows_of[cjf] {
            for i in 0..f.nr {
                let p = f.p(i, j);
                if f.mask[p] == 0 {
                    continue;
                }
                let (pri, nri) = pr[i];
                for &(slot, di, dj) in &slots {
                    let a = f.st[slot][p] as f64;
                    if a == 0.0 {
                        continue;
                    }
                    // Neighbours outside the grid have zero coefficients, so (gi, gj) is
                    // inside.
                    let (gi, gj) = ((i as i64 + di) as usize, (j as i64 + dj) as usize);
                    if f.mask[f.p(gi, gj)] == 0 {
                        continue;
                    }
                    let (prg, nrg) = pr[gi];
                    let (pzg, nzg) = pz[gj];
                    for &(cif, wif) in &pri[..nri] {
                        if !live_ref[cjf * cnr + cif] {
                            continue;
                        }
                        let wa = wif * wjf * a;
                        let row = &mut acc_row[cif];
                        for &(cjg, wjg) in &pzg[..nzg] {
                            let oj = cjg + 1 - cjf;
                            for &(cig, wig) in &prg[..nrg] {
                                if !live_ref[cjg * cnr + cig] {
                                    continue;
                                }
                                let oi = cig + 1 - cif;
                                row[slot_table[oj][oi]] += wa * wig * wjg;
                            }
                        }
                    }
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

/// Levels with at least this many nodes relax in parallel.
const PARALLEL_NODES: usize = 60_000;

/// A raw pointer that parallel relaxation tasks share; each task touches a disjoint set of
/// elements (see the SAFETY notes at the use sites).
#[derive(Clone, Copy)]
struct Shared(*mut f32);

// SAFETY: the pointer is only dereferenced under the disjointness rules stated where the
// tasks are spawned; the arrays outlive the parallel section, which joins before returning.
unsafe impl Send for Shared {}
unsafe impl Sync for Shared {}

impl Shared {
    fn get(self) -> *mut f32 {
        self.0
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
