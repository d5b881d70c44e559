//! The conservative finite-volume operator for ∇·(ε∇φ) = 0 in (r, z).
//!
//! Each free node owns the control volume between the midpoints to its neighbours. The flux
//! through a face is ε · (face area) · (difference of φ) / (link length), with the face area
//! of the axisymmetric volume (the factor 2π dropped): r_face · Δz for r-faces and
//! (r_e² − r_w²)/2 for z-faces. On the axis the volume reaches r = 0 and has no inner face,
//! which is the symmetric limit of the operator.
//!
//! Where a link ends on a conductor surface, the link length is the true distance to the
//! surface. Two treatments of the control volume are offered:
//! - `Scheme::ShortleyWeller`: the control volume ends half-way to the surface, the finite-
//!   volume form of the Shortley–Weller difference scheme (Shortley & Weller, J. Appl. Phys. 9,
//!   334 (1938)); the potential and its gradient at the surface converge at second order, but
//!   the matrix is not symmetric near surfaces.
//! - `Scheme::Symmetric`: the control volume keeps its regular size (Gibou, Fedkiw, Cheng &
//!   Kang, J. Comput. Phys. 176, 205 (2002)); symmetric, second order in the potential, first
//!   order in the surface gradient.
//!
//! Every node of the grid is a row; fixed nodes (inside conductors) are identity rows with
//! their potential on the right-hand side, and their coupling to free nodes is moved to the
//! right-hand side, so the free block keeps the symmetry of the scheme.

use crate::mesh::{DIRS, Dir, FREE, FixedId, Mesh, TANK};
use serde::Serialize;
use sprs::CsMatI;

/// Products with at least this many rows run in parallel, in chunks of `CHUNK` rows.
const PARALLEL_ROWS: usize = 60_000;
const CHUNK: usize = 8192;

/// Boundary treatment at cut links.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Default)]
#[serde(rename_all = "snake_case")]
pub enum Scheme {
    #[default]
    ShortleyWeller,
    Symmetric,
}

/// The assembled operator and what the right-hand side needs.
#[derive(Debug, Clone)]
pub struct Operator {
    /// One row per grid node, CSR with 32-bit indices.
    pub matrix: CsMatI<f64, u32, u32>,
    pub scheme: Scheme,
    /// Boundary couplings: (row, fixed id, coefficient). The right-hand side of `row` gains
    /// `coefficient × potential(id)`.
    pub boundary: Vec<(u32, FixedId, f64)>,
    /// Per node: the fixed id (`FREE` for unknowns).
    pub fixed: Vec<FixedId>,
}

/// The face geometry of one free node's control volume.
#[derive(Debug, Clone, Copy)]
pub struct NodeCoeffs {
    /// Coefficient per direction (E, W, N, S); zero where there is no link.
    pub c: [f64; 4],
}

/// Coefficients of the flux balance of free node `k`.
pub fn node_coeffs(mesh: &Mesh, k: usize, scheme: Scheme) -> NodeCoeffs {
    let nr = mesh.nr();
    let nz = mesh.nz();
    let (i, j) = (k % nr, k / nr);
    let r = &mesh.r.x;
    let z = &mesh.z.x;
    let h = [
        if i + 1 < nr { r[i + 1] - r[i] } else { 0.0 },
        if i > 0 { r[i] - r[i - 1] } else { 0.0 },
        if j + 1 < nz { z[j + 1] - z[j] } else { 0.0 },
        if j > 0 { z[j] - z[j - 1] } else { 0.0 },
    ];
    let mut theta = [1.0f64; 4];
    for d in DIRS {
        if let Some(cut) = mesh.cuts[k][d as usize] {
            theta[d as usize] = cut.theta;
        }
    }
    let mut w = [0.0f64; 4];
    let mut len = [0.0f64; 4];
    for d in 0..4 {
        len[d] = theta[d] * h[d];
        w[d] = match scheme {
            Scheme::ShortleyWeller => 0.5 * theta[d] * h[d],
            Scheme::Symmetric => 0.5 * h[d],
        };
    }
    let eps = [
        if i + 1 < nr {
            f64::from(mesh.eps_r_link[k])
        } else {
            0.0
        },
        if i > 0 {
            f64::from(mesh.eps_r_link[k - 1])
        } else {
            0.0
        },
        if j + 1 < nz {
            f64::from(mesh.eps_z_link[k])
        } else {
            0.0
        },
        if j > 0 {
            f64::from(mesh.eps_z_link[k - nr])
        } else {
            0.0
        },
    ];
    let ri = r[i];
    let re = ri + w[Dir::E as usize];
    let rw = (ri - w[Dir::W as usize]).max(0.0);
    let dz = w[Dir::N as usize] + w[Dir::S as usize];
    let zarea = 0.5 * (re * re - rw * rw);
    let mut c = [0.0; 4];
    // Radial links use the conductance of a cylindrical shell, Δz / ln(r₂/r₁), which is exact
    // for the radial 1/r field and tends to r_mid·Δz/Δr as the cells shrink; a link that
    // starts on the axis keeps the midpoint form.
    let shell = |r1: f64, r2: f64, mid: f64, l: f64| -> f64 {
        if r1 > 0.0 && r2 > 0.0 {
            dz / (r2 / r1).ln().abs()
        } else {
            mid * dz / l
        }
    };
    // Whole links take ln(r₂/r₁) from the table kept with the axis.
    if h[0] > 0.0 {
        c[0] = if theta[0] == 1.0 && ri > 0.0 {
            eps[0] * dz / mesh.r_log[i]
        } else {
            eps[0] * shell(ri, ri + len[0], re, len[0])
        };
    }
    if h[1] > 0.0 {
        c[1] = if theta[1] == 1.0 && r[i - 1] > 0.0 {
            eps[1] * dz / mesh.r_log[i - 1]
        } else {
            eps[1] * shell(ri - len[1], ri, rw, len[1])
        };
    }
    for d in 2..4 {
        if h[d] > 0.0 {
            c[d] = eps[d] * zarea / len[d];
        }
    }
    NodeCoeffs { c }
}

impl Operator {
    /// Assembles the operator on a mesh.
    pub fn assemble(mesh: &Mesh, scheme: Scheme) -> Operator {
        let n = mesh.nodes();
        let nr = mesh.nr();
        let mut indptr: Vec<u32> = Vec::with_capacity(n + 1);
        let mut indices: Vec<u32> = Vec::with_capacity(5 * n);
        let mut data: Vec<f64> = Vec::with_capacity(5 * n);
        let mut boundary = Vec::new();
        indptr.push(0);
        for k in 0..n {
            if mesh.fixed[k] != FREE {
                indices.push(k as u32);
                data.push(1.0);
                indptr.push(indices.len() as u32);
                continue;
            }
            let nc = node_coeffs(mesh, k, scheme);
            let (i, j) = (k % nr, k / nr);
            let exists = [i + 1 < nr, i > 0, j + 1 < mesh.nz(), j > 0];
            let cols = [k + 1, k.wrapping_sub(1), k + nr, k.wrapping_sub(nr)];
            let mut diag = 0.0;
            // Off-diagonal entries by direction (E, W, N, S); zero where the link ends on a
            // surface (moved to the right-hand side) or does not exist.
            let mut off = [0.0f64; 4];
            for d in DIRS {
                let di = d as usize;
                let c = nc.c[di];
                if c == 0.0 || !exists[di] {
                    continue;
                }
                diag += c;
                if let Some(cut) = mesh.cuts[k][di] {
                    boundary.push((k as u32, cut.id, c));
                } else {
                    off[di] = -c;
                }
            }
            // Columns in increasing order: S, W, P, E, N.
            for (di, col) in [
                (Dir::S as usize, cols[3]),
                (Dir::W as usize, cols[1]),
                (usize::MAX, k),
                (Dir::E as usize, cols[0]),
                (Dir::N as usize, cols[2]),
            ] {
                let v = if di == usize::MAX { diag } else { off[di] };
                if v != 0.0 || di == usize::MAX {
                    indices.push(col as u32);
                    data.push(v);
                }
            }
            indptr.push(indices.len() as u32);
        }
        let matrix = CsMatI::new((n, n), indptr, indices, data);
        Operator {
            matrix,
            scheme,
            boundary,
            fixed: mesh.fixed.clone(),
        }
    }

    /// Right-hand side for the given conductor potentials (volts, by conductor index); the
    /// tank is at 0 V.
    pub fn rhs(&self, potentials: &[f64]) -> Vec<f64> {
        let n = self.fixed.len();
        let mut b = vec![0.0; n];
        let pot = |id: FixedId| -> f64 {
            if id == TANK {
                0.0
            } else {
                potentials[id as usize]
            }
        };
        for (bk, &id) in b.iter_mut().zip(&self.fixed) {
            if id != FREE {
                *bk = pot(id);
            }
        }
        for &(row, id, c) in &self.boundary {
            b[row as usize] += c * pot(id);
        }
        b
    }

    /// y = A x.
    pub fn apply(&self, x: &[f64], y: &mut [f64]) {
        let ip = self.matrix.indptr();
        let ip = ip.raw_storage();
        let idx = self.matrix.indices();
        let val = self.matrix.data();
        let rows = |first: usize, ys: &mut [f64]| {
            for (off, yr) in ys.iter_mut().enumerate() {
                let row = first + off;
                let (s, e) = (ip[row] as usize, ip[row + 1] as usize);
                let mut acc = 0.0;
                for p in s..e {
                    acc += val[p] * x[idx[p] as usize];
                }
                *yr = acc;
            }
        };
        if y.len() >= PARALLEL_ROWS {
            use rayon::prelude::*;
            y.par_chunks_mut(CHUNK)
                .enumerate()
                .for_each(|(c, ys)| rows(c * CHUNK, ys));
        } else {
            rows(0, y);
        }
    }

    /// Number of rows.
    pub fn rows(&self) -> usize {
        self.fixed.len()
    }
}
