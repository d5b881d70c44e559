//! Geometric multigrid on the tensor-product grid, used as the preconditioner of the Krylov
//! solver.
//!
//! Input: the assembled `Operator` and the node coordinates of its grid. Output: a
//! `Multigrid` whose `apply` is one V-cycle, z ≈ A⁻¹ r, from a zero guess.
//!
//! The hierarchy is built once per grid: every other grid line is kept (plus the last), the
//! interpolation is bilinear in the true coordinates (so graded spacing is respected), and
//! each coarse operator is the Galerkin product Pᵀ A P, a nine-point stencil. Fixed nodes take
//! no correction. The smoother is alternating zebra line Gauss–Seidel (r-lines, then z-lines,
//! even lines first), which stays effective on the stretched cells of a graded grid; the
//! post-smoother runs the same steps in reverse, so for a symmetric operator the V-cycle is a
//! symmetric positive-definite preconditioner, as conjugate gradients need. The coarsest level
//! is solved by band LU factors.
//!
//! The hierarchy works in single precision on padded arrays (a ring of ghost nodes with zero
//! coefficients, so the kernels need no bounds tests): a preconditioner needs no more, and it
//! halves the memory traffic. The Krylov iteration around it stays in double precision, so the
//! final residual is that of the double-precision operator.
//!
//! Files: level.rs (one level's arrays, line factors, residual), relax.rs (zebra line
//! relaxation), transfer.rs (interpolation weights, restriction, prolongation), galerkin.rs
//! (the coarse operators), band.rs (the coarsest level's direct solve).

mod band;
mod galerkin;
mod level;
mod relax;
mod transfer;

use crate::solve::operator::Operator;
use band::BandLu;
use galerkin::{SLOTS, galerkin};
use level::Level;
use transfer::{axis_map, coarse_indices, prolong_add, restrict_residual};

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
    coarse_lu: Option<BandLu>,
    params: MgParams,
}

impl Multigrid {
    /// The finest level, read from the operator's rows a grid row at a time.
    fn fine_level(op: &Operator, nr: usize, nz: usize) -> Level {
        use crate::solve::operator::{ST_C, ST_E, ST_N, ST_S, ST_W};
        let mut l = Level::new(nr, nz, false);
        let pw = l.pw;
        let [c, w, e, s, n, ..] = &mut l.st;
        for (j, (rows, fixed)) in op
            .stencil
            .chunks_exact(nr)
            .zip(op.fixed.chunks_exact(nr))
            .take(nz)
            .enumerate()
        {
            let row = (j + 1) * pw + 1..(j + 1) * pw + 1 + nr;
            let slots = [
                (&mut c[row.clone()], ST_C),
                (&mut w[row.clone()], ST_W),
                (&mut e[row.clone()], ST_E),
                (&mut s[row.clone()], ST_S),
                (&mut n[row.clone()], ST_N),
            ];
            for (out, at) in slots {
                for (v, st) in out.iter_mut().zip(rows) {
                    *v = st[at] as f32;
                }
            }
            for (m, &f) in l.mask[row].iter_mut().zip(fixed) {
                *m = u8::from(f == crate::mesh::FREE);
            }
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
        // The coarsest level in natural order (node j·nr + i): its nine-point couplings lie
        // within nr + 1 of the diagonal.
        let coarse_lu = levels.last().map(|cl| {
            let entries = (0..cl.nz).flat_map(move |j| {
                (0..cl.nr).flat_map(move |i| {
                    let p = cl.p(i, j);
                    SLOTS.iter().filter_map(move |&(slot, di, dj)| {
                        let (ii, jj) = (i as i64 + di as i64, j as i64 + dj as i64);
                        if ii < 0 || jj < 0 || ii >= cl.nr as i64 || jj >= cl.nz as i64 {
                            return None;
                        }
                        let q = jj as usize * cl.nr + ii as usize;
                        Some((j * cl.nr + i, q, cl.entry(p, slot as usize)))
                    })
                })
            });
            BandLu::new(cl.nr * cl.nz, cl.nr + 1, cl.nr + 1, entries)
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

    /// Bytes held by the hierarchy (stencils, masks, work vectors and the coarsest
    /// level's factors).
    pub fn bytes(&self) -> usize {
        self.levels.iter().map(Level::bytes).sum::<usize>()
            + self.coarse_lu.as_ref().map_or(0, BandLu::bytes)
    }

    /// An estimate of the bytes one V-cycle ([`Multigrid::apply`]) must move between memory
    /// and the processor, from the stencil width and the sweeps of every level: each pass
    /// streams the arrays it reads and writes once (single precision, 4 bytes; a mask byte),
    /// and what one pass leaves in cache is not counted again. Per node and pass: an r-line
    /// relaxation reads the stencil slots, b, x and its pivots and writes x; a z-line one
    /// reads the slots but the centre and north (its pivots stand for them), b, x and its two
    /// pivot arrays and writes x (the first pass of a cycle reads no x); the residual formed
    /// inside the restriction reads the stencil, b, x and the mask on the rows it forms (half
    /// of them after the non-symmetric pre-smoother); the prolongation reads and writes x and
    /// reads the mask. The finest level also converts the double-precision residual in
    /// (8 + 4) and copies the single-precision correction out (4 + 4).
    pub fn bytes_per_cycle(&self) -> f64 {
        let last = self.levels.len() - 1;
        let mut total = 0.0;
        for (li, l) in self.levels.iter().enumerate() {
            let n = (l.nr * l.nz) as f64;
            if li == last {
                // The band LU of a few hundred nodes: held in cache, its b and x streamed.
                total += 8.0 * n;
                continue;
            }
            let slots = if l.nine { 9.0 } else { 5.0 };
            let r_pass = 4.0 * (slots + 4.0);
            let z_pass = 4.0 * (slots + 3.0);
            let per_sweep = if self.params.symmetric {
                2.0 * (r_pass + z_pass)
            } else {
                r_pass + z_pass
            };
            // The zero start: the first even-row pass reads no x (a quarter of the x reads
            // of the first r-line sweep).
            let zero_start = -2.0;
            let rows_formed = if self.params.symmetric { 1.0 } else { 0.5 };
            let residual = rows_formed * (4.0 * (slots + 2.0) + 1.0);
            let prolong = 8.0 + 1.0;
            total += n * (self.params.sweeps as f64 * per_sweep + zero_start + residual + prolong);
            if li == 0 {
                total += n * 20.0;
            }
        }
        total
    }

    /// z = M⁻¹ r: one V-cycle from a zero guess.
    pub fn apply(&mut self, r: &[f64], z: &mut [f64]) {
        self.apply_to(r, z);
    }

    /// z = M⁻¹ r in single precision, as the hierarchy forms it (the Krylov iterations keep
    /// their preconditioned directions so: widening them to double precision would add
    /// nothing but bytes to stream).
    pub fn apply_f32(&mut self, r: &[f64], z: &mut [f32]) {
        self.apply_to(r, z);
    }

    fn apply_to<T: From<f32>>(&mut self, r: &[f64], z: &mut [T]) {
        let l0 = &mut self.levels[0];
        let (nr, pw) = (l0.nr, l0.pw);
        for (rr, bb) in r.chunks_exact(nr).zip(l0.b[pw..].chunks_exact_mut(pw)) {
            for (b, &v) in bb[1..nr + 1].iter_mut().zip(rr) {
                *b = v as f32;
            }
        }
        self.cycle(0);
        let l0 = &self.levels[0];
        for (zr, xx) in z.chunks_exact_mut(nr).zip(l0.x[pw..].chunks_exact(pw)) {
            for (v, &x) in zr.iter_mut().zip(&xx[1..nr + 1]) {
                *v = T::from(x);
            }
        }
    }

    /// The pre-smoother: r-lines (even rows, then odd), and for the symmetric cycle z-lines
    /// (even columns, then odd). From a zero start the first pass reads no neighbours (they
    /// are zero), so x needs no clearing: every row is written before it is read.
    fn smooth_pre(l: &mut Level, symmetric: bool, zero_start: bool) {
        l.relax_r_lines(0, zero_start);
        l.relax_r_lines(1, false);
        if symmetric {
            l.relax_z_lines(0);
            l.relax_z_lines(1);
        }
    }

    /// The post-smoother: the pre-smoother's steps in reverse order (its adjoint for the
    /// symmetric cycle); only z-lines for the non-symmetric one.
    fn smooth_post(l: &mut Level, symmetric: bool) {
        l.relax_z_lines(1);
        l.relax_z_lines(0);
        if symmetric {
            l.relax_r_lines(1, false);
            l.relax_r_lines(0, false);
        }
    }

    fn cycle(&mut self, li: usize) {
        let last = self.levels.len() - 1;
        if li == last {
            self.coarsest();
            return;
        }
        let symmetric = self.params.symmetric;
        {
            let l = &mut self.levels[li];
            for sweep in 0..self.params.sweeps {
                Self::smooth_pre(l, symmetric, sweep == 0);
            }
        }
        {
            // The non-symmetric pre-smoother ends on the odd r-lines: their residual is zero.
            let (fine, rest) = self.levels.split_at_mut(li + 1);
            restrict_residual(&fine[li], &mut rest[0], !symmetric);
        }
        self.cycle(li + 1);
        {
            let (fine, rest) = self.levels.split_at_mut(li + 1);
            let f = &mut fine[li];
            prolong_add(f, &rest[0]);
            for _ in 0..self.params.sweeps {
                Self::smooth_post(f, symmetric);
            }
        }
    }

    /// The coarsest level solved by the band LU factors.
    fn coarsest(&mut self) {
        let Some(l) = self.levels.last_mut() else {
            return;
        };
        if let Some(lu) = &self.coarse_lu {
            let mut b = vec![0.0f64; l.nr * l.nz];
            for j in 0..l.nz {
                for i in 0..l.nr {
                    b[j * l.nr + i] = l.b[l.p(i, j)] as f64;
                }
            }
            if lu.solve(&mut b) {
                for j in 0..l.nz {
                    for i in 0..l.nr {
                        let p = l.p(i, j);
                        l.x[p] = b[j * l.nr + i] as f32;
                    }
                }
            }
        }
    }
}
