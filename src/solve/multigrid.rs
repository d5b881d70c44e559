//! Geometric multigrid on the tensor-product grid, used as the preconditioner of the Krylov
//! solver.
//!
//! The hierarchy is built once per grid: every other grid line is kept (plus the last), the
//! interpolation is bilinear in the true coordinates (so graded spacing is respected), and
//! each coarse operator is the Galerkin product Pᵀ A P, a nine-point stencil. Fixed nodes take
//! no correction. The smoother is alternating zebra line Gauss–Seidel (r-lines, then z-lines,
//! each even lines first), which stays effective on the stretched cells of a graded grid; the
//! post-smoother runs the same steps in reverse, so for a symmetric operator the V-cycle is a
//! symmetric positive-definite preconditioner, as conjugate gradients need. The coarsest level
//! is solved by dense LU.

use crate::solve::operator::Operator;
use nalgebra::{DMatrix, DVector};

/// Stencil slot of the neighbour at offset (di, dj).
const fn slot(di: i32, dj: i32) -> usize {
    ((dj + 1) * 3 + (di + 1)) as usize
}
const C: usize = slot(0, 0);
const W: usize = slot(-1, 0);
const E: usize = slot(1, 0);
const S: usize = slot(0, -1);
const N: usize = slot(0, 1);

/// Interpolation weights along one axis: for each fine index, the coarse index below and the
/// weights on it and on the next coarse index.
#[derive(Debug, Clone)]
struct AxisMap {
    c0: Vec<usize>,
    w0: Vec<f64>,
    w1: Vec<f64>,
}

#[derive(Debug, Clone)]
struct Level {
    nr: usize,
    nz: usize,
    /// Nine-point stencil per node.
    st: Vec<[f64; 9]>,
    /// Nodes that take no correction (identity rows).
    dead: Vec<bool>,
    /// Map from the next coarser level (None on the coarsest).
    map: Option<(AxisMap, AxisMap)>,
    x: Vec<f64>,
    b: Vec<f64>,
    r: Vec<f64>,
    /// Scratch for the line solves.
    cp: Vec<f64>,
    dp: Vec<f64>,
}

/// Settings of the V-cycle.
#[derive(Debug, Clone, Copy)]
pub struct MgParams {
    /// Smoothing steps before and after the coarse correction.
    pub sweeps: usize,
    /// Coarsen until a level has at most this many nodes.
    pub coarsest_nodes: usize,
}

impl Default for MgParams {
    fn default() -> Self {
        Self {
            sweeps: 1,
            coarsest_nodes: 400,
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
    if *v.last().unwrap_or(&0) != n - 1 {
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
        if cidx[c] == i {
            c0[i] = c;
            w0[i] = 1.0;
            w1[i] = 0.0;
        } else {
            let (a, b) = (x[cidx[c]], x[cidx[c + 1]]);
            c0[i] = c;
            w0[i] = (b - x[i]) / (b - a);
            w1[i] = 1.0 - w0[i];
        }
    }
    AxisMap { c0, w0, w1 }
}

impl Level {
    fn new(nr: usize, nz: usize, st: Vec<[f64; 9]>, dead: Vec<bool>) -> Level {
        let n = nr * nz;
        Level {
            nr,
            nz,
            st,
            dead,
            map: None,
            x: vec![0.0; n],
            b: vec![0.0; n],
            r: vec![0.0; n],
            cp: vec![0.0; n],
            dp: vec![0.0; n],
        }
    }

    /// Sum of the stencil applied to `x` at (i, j), leaving out the slots in `skip`.
    #[inline(always)]
    fn off_sum(&self, x: &[f64], i: usize, j: usize, skip: [usize; 3]) -> f64 {
        let nr = self.nr;
        let k = j * nr + i;
        let s = &self.st[k];
        let mut acc = 0.0;
        for dj in -1i32..=1 {
            let jj = j as i32 + dj;
            if jj < 0 || jj >= self.nz as i32 {
                continue;
            }
            for di in -1i32..=1 {
                let sl = slot(di, dj);
                if sl == skip[0] || sl == skip[1] || sl == skip[2] {
                    continue;
                }
                let ii = i as i32 + di;
                if ii < 0 || ii >= nr as i32 {
                    continue;
                }
                let a = s[sl];
                if a != 0.0 {
                    acc += a * x[jj as usize * nr + ii as usize];
                }
            }
        }
        acc
    }

    /// Exact solves on every r-line of one colour (j ≡ colour mod 2).
    fn relax_r_lines(&mut self, colour: usize) {
        let nr = self.nr;
        let mut x = std::mem::take(&mut self.x);
        for j in (colour..self.nz).step_by(2) {
            // Thomas algorithm along i.
            for i in 0..nr {
                let k = j * nr + i;
                let s = &self.st[k];
                let rhs = self.b[k] - self.off_sum(&x, i, j, [W, C, E]);
                let a = if i > 0 { s[W] } else { 0.0 };
                let diag = s[C];
                let cc = if i + 1 < nr { s[E] } else { 0.0 };
                let (cprev, dprev) = if i > 0 {
                    (self.cp[k - 1], self.dp[k - 1])
                } else {
                    (0.0, 0.0)
                };
                let m = diag - a * cprev;
                self.cp[k] = cc / m;
                self.dp[k] = (rhs - a * dprev) / m;
            }
            let base = j * nr;
            x[base + nr - 1] = self.dp[base + nr - 1];
            for i in (0..nr - 1).rev() {
                let k = base + i;
                x[k] = self.dp[k] - self.cp[k] * x[k + 1];
            }
        }
        self.x = x;
    }

    /// Exact solves on every z-line of one colour (i ≡ colour mod 2), all lines of the colour
    /// advanced together row by row for contiguous memory access.
    fn relax_z_lines(&mut self, colour: usize) {
        let nr = self.nr;
        let nz = self.nz;
        let mut x = std::mem::take(&mut self.x);
        for j in 0..nz {
            for i in (colour..nr).step_by(2) {
                let k = j * nr + i;
                let s = &self.st[k];
                let rhs = self.b[k] - self.off_sum(&x, i, j, [S, C, N]);
                let a = if j > 0 { s[S] } else { 0.0 };
                let diag = s[C];
                let cc = if j + 1 < nz { s[N] } else { 0.0 };
                let (cprev, dprev) = if j > 0 {
                    (self.cp[k - nr], self.dp[k - nr])
                } else {
                    (0.0, 0.0)
                };
                let m = diag - a * cprev;
                self.cp[k] = cc / m;
                self.dp[k] = (rhs - a * dprev) / m;
            }
        }
        for i in (colour..nr).step_by(2) {
            let k = (nz - 1) * nr + i;
            x[k] = self.dp[k];
        }
        for j in (0..nz - 1).rev() {
            for i in (colour..nr).step_by(2) {
                let k = j * nr + i;
                x[k] = self.dp[k] - self.cp[k] * x[k + nr];
            }
        }
        self.x = x;
    }

    fn residual(&mut self) {
        for j in 0..self.nz {
            for i in 0..self.nr {
                let k = j * self.nr + i;
                let ax = self.st[k][C] * self.x[k] + self.off_sum(&self.x, i, j, [C, C, C]);
                self.r[k] = self.b[k] - ax;
            }
        }
    }
}

impl Multigrid {
    /// The finest level, read from the operator's rows.
    fn fine_level(op: &Operator, nr: usize, nz: usize) -> Level {
        let n = nr * nz;
        let mut st = vec![[0.0f64; 9]; n];
        let mut dead = vec![false; n];
        let ip = op.matrix.indptr();
        let ip = ip.raw_storage();
        let idx = op.matrix.indices();
        let val = op.matrix.data();
        for k in 0..n {
            let (i, j) = ((k % nr) as i64, (k / nr) as i64);
            for p in ip[k] as usize..ip[k + 1] as usize {
                let q = idx[p] as usize;
                let (di, dj) = ((q % nr) as i64 - i, (q / nr) as i64 - j);
                if di.abs() <= 1 && dj.abs() <= 1 {
                    st[k][slot(di as i32, dj as i32)] = val[p];
                }
            }
            dead[k] = op.fixed[k] != crate::mesh::FREE;
        }
        Level::new(nr, nz, st, dead)
    }

    /// Builds the hierarchy for an operator on the grid with node coordinates `r` × `z`.
    pub fn build(op: &Operator, r: &[f64], z: &[f64], params: MgParams) -> Multigrid {
        let mut mg = Multigrid {
            levels: vec![Self::fine_level(op, r.len(), z.len())],
            coarse_lu: None,
            params,
        };
        let mut rx = r.to_vec();
        let mut zx = z.to_vec();
        loop {
            let fine = mg.levels.last().expect("hierarchy has a level");
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
            let coarse = galerkin(fine, &mr, &mz, ci.len(), cj.len());
            rx = ci.iter().map(|&i| rx[i]).collect();
            zx = cj.iter().map(|&j| zx[j]).collect();
            let last = mg.levels.len() - 1;
            mg.levels[last].map = Some((mr, mz));
            mg.levels.push(coarse);
        }
        // Dense LU of the coarsest level.
        let cl = mg.levels.last().expect("hierarchy has a level");
        let n = cl.nr * cl.nz;
        let mut m = DMatrix::<f64>::zeros(n, n);
        for j in 0..cl.nz {
            for i in 0..cl.nr {
                let k = j * cl.nr + i;
                for dj in -1i32..=1 {
                    for di in -1i32..=1 {
                        let (ii, jj) = (i as i32 + di, j as i32 + dj);
                        if ii < 0 || jj < 0 || ii >= cl.nr as i32 || jj >= cl.nz as i32 {
                            continue;
                        }
                        let q = jj as usize * cl.nr + ii as usize;
                        m[(k, q)] += cl.st[k][slot(di, dj)];
                    }
                }
            }
        }
        mg.coarse_lu = Some(m.lu());
        mg
    }

    /// Number of levels.
    pub fn depth(&self) -> usize {
        self.levels.len()
    }

    /// Bytes held by the hierarchy (stencils and work vectors).
    pub fn bytes(&self) -> usize {
        let mut b = 0;
        for l in &self.levels {
            let n = l.nr * l.nz;
            b += n * (9 * 8 + 1 + 5 * 8);
        }
        b
    }

    /// z = M⁻¹ r: one V-cycle from a zero guess.
    pub fn apply(&mut self, r: &[f64], z: &mut [f64]) {
        self.levels[0].b.copy_from_slice(r);
        self.cycle(0);
        z.copy_from_slice(&self.levels[0].x);
    }

    fn smooth_pre(l: &mut Level) {
        l.relax_r_lines(0);
        l.relax_r_lines(1);
        l.relax_z_lines(0);
        l.relax_z_lines(1);
    }

    fn smooth_post(l: &mut Level) {
        l.relax_z_lines(1);
        l.relax_z_lines(0);
        l.relax_r_lines(1);
        l.relax_r_lines(0);
    }

    fn cycle(&mut self, li: usize) {
        let last = self.levels.len() - 1;
        if li == last {
            let l = &mut self.levels[li];
            if let Some(lu) = &self.coarse_lu {
                let b = DVector::from_column_slice(&l.b);
                match lu.solve(&b) {
                    Some(x) => l.x.copy_from_slice(x.as_slice()),
                    None => l.x.copy_from_slice(&l.b),
                }
            }
            return;
        }
        {
            let l = &mut self.levels[li];
            l.x.iter_mut().for_each(|v| *v = 0.0);
            for _ in 0..self.params.sweeps {
                Self::smooth_pre(l);
            }
            l.residual();
        }
        // Restrict: b_c = Pᵀ r.
        {
            let (fine, rest) = self.levels.split_at_mut(li + 1);
            let f = &fine[li];
            let c = &mut rest[0];
            let (mr, mz) = f.map.as_ref().expect("non-coarsest level has a map");
            c.b.iter_mut().for_each(|v| *v = 0.0);
            let cnr = c.nr;
            for j in 0..f.nz {
                let (cj, wj0, wj1) = (mz.c0[j], mz.w0[j], mz.w1[j]);
                for i in 0..f.nr {
                    let k = j * f.nr + i;
                    if f.dead[k] {
                        continue;
                    }
                    let rv = f.r[k];
                    if rv == 0.0 {
                        continue;
                    }
                    let (ci, wi0, wi1) = (mr.c0[i], mr.w0[i], mr.w1[i]);
                    let base = cj * cnr + ci;
                    c.b[base] += wi0 * wj0 * rv;
                    if wi1 != 0.0 {
                        c.b[base + 1] += wi1 * wj0 * rv;
                    }
                    if wj1 != 0.0 {
                        c.b[base + cnr] += wi0 * wj1 * rv;
                        if wi1 != 0.0 {
                            c.b[base + cnr + 1] += wi1 * wj1 * rv;
                        }
                    }
                }
            }
            for (k, d) in c.dead.iter().enumerate() {
                if *d {
                    c.b[k] = 0.0;
                }
            }
        }
        self.cycle(li + 1);
        // Prolong and correct: x += P x_c.
        {
            let (fine, rest) = self.levels.split_at_mut(li + 1);
            let f = &mut fine[li];
            let c = &rest[0];
            let (mr, mz) = f.map.as_ref().expect("non-coarsest level has a map");
            let cnr = c.nr;
            for j in 0..f.nz {
                let (cj, wj0, wj1) = (mz.c0[j], mz.w0[j], mz.w1[j]);
                for i in 0..f.nr {
                    let k = j * f.nr + i;
                    if f.dead[k] {
                        continue;
                    }
                    let (ci, wi0, wi1) = (mr.c0[i], mr.w0[i], mr.w1[i]);
                    let base = cj * cnr + ci;
                    let mut v = wi0 * wj0 * c.x[base];
                    if wi1 != 0.0 {
                        v += wi1 * wj0 * c.x[base + 1];
                    }
                    if wj1 != 0.0 {
                        v += wi0 * wj1 * c.x[base + cnr];
                        if wi1 != 0.0 {
                            v += wi1 * wj1 * c.x[base + cnr + 1];
                        }
                    }
                    f.x[k] += v;
                }
            }
            for _ in 0..self.params.sweeps {
                Self::smooth_post(f);
            }
        }
    }
}

/// The Galerkin coarse operator Pᵀ A P with tensor bilinear P that is zero on dead fine nodes.
fn galerkin(f: &Level, mr: &AxisMap, mz: &AxisMap, cnr: usize, cnz: usize) -> Level {
    let cn = cnr * cnz;
    let mut st = vec![[0.0f64; 9]; cn];
    let parents = |i: usize, j: usize| -> [(usize, usize, f64); 4] {
        let (ci, wi0, wi1) = (mr.c0[i], mr.w0[i], mr.w1[i]);
        let (cj, wj0, wj1) = (mz.c0[j], mz.w0[j], mz.w1[j]);
        [
            (ci, cj, wi0 * wj0),
            (ci + 1, cj, wi1 * wj0),
            (ci, cj + 1, wi0 * wj1),
            (ci + 1, cj + 1, wi1 * wj1),
        ]
    };
    for j in 0..f.nz {
        for i in 0..f.nr {
            let k = j * f.nr + i;
            if f.dead[k] {
                continue;
            }
            let pf = parents(i, j);
            for dj in -1i32..=1 {
                for di in -1i32..=1 {
                    let a = f.st[k][slot(di, dj)];
                    if a == 0.0 {
                        continue;
                    }
                    let (gi, gj) = (i as i32 + di, j as i32 + dj);
                    if gi < 0 || gj < 0 || gi >= f.nr as i32 || gj >= f.nz as i32 {
                        continue;
                    }
                    let g = gj as usize * f.nr + gi as usize;
                    if f.dead[g] {
                        continue;
                    }
                    let pg = parents(gi as usize, gj as usize);
                    for &(ci, cj, wc) in &pf {
                        if wc == 0.0 {
                            continue;
                        }
                        let crow = cj * cnr + ci;
                        for &(di2, dj2, wd) in &pg {
                            if wd == 0.0 {
                                continue;
                            }
                            let oi = di2 as i64 - ci as i64;
                            let oj = dj2 as i64 - cj as i64;
                            debug_assert!(oi.abs() <= 1 && oj.abs() <= 1);
                            st[crow][slot(oi as i32, oj as i32)] += wc * a * wd;
                        }
                    }
                }
            }
        }
    }
    let mut dead = vec![false; cn];
    for k in 0..cn {
        if st[k][C] == 0.0 {
            dead[k] = true;
            st[k] = [0.0; 9];
            st[k][C] = 1.0;
        }
    }
    Level::new(cnr, cnz, st, dead)
}
