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
//!
//! The rows are kept as five-point stencils (40 bytes a row, against 64 for CSR with 32-bit
//! indices); `to_csr` gives the same matrix as a sprs CSR for outside solvers and checks.

use crate::mesh::{DIRS, Dir, FREE, FixedId, Mesh};
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

/// Positions in a stencil row: the centre, then the neighbours in the order of the CSR
/// columns (S, W, E, N) around it.
pub const ST_S: usize = 0;
pub const ST_W: usize = 1;
pub const ST_C: usize = 2;
pub const ST_E: usize = 3;
pub const ST_N: usize = 4;

/// The assembled operator and what the right-hand side needs.
#[derive(Debug, Clone)]
pub struct Operator {
    /// One five-point row per grid node: coefficients of (S, W, centre, E, N); zero where a
    /// neighbour does not exist or its link ends on a surface.
    pub stencil: Vec<[f64; 5]>,
    /// Nodes per grid row (the stride of the N and S neighbours).
    pub nr: usize,
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
        let mut stencil: Vec<[f64; 5]> = crate::solve::with_capacity(n);
        let mut boundary = Vec::new();
        for k in 0..n {
            let mut row = [0.0f64; 5];
            if mesh.fixed[k] != FREE {
                row[ST_C] = 1.0;
                stencil.push(row);
                continue;
            }
            let nc = node_coeffs(mesh, k, scheme);
            let (i, j) = (k % nr, k / nr);
            let exists = [i + 1 < nr, i > 0, j + 1 < mesh.nz(), j > 0];
            // Stencil position of each direction (E, W, N, S).
            let place = [ST_E, ST_W, ST_N, ST_S];
            for d in DIRS {
                let di = d as usize;
                let c = nc.c[di];
                if c == 0.0 || !exists[di] {
                    continue;
                }
                row[ST_C] += c;
                if let Some(cut) = mesh.cuts[k][di] {
                    boundary.push((k as u32, cut.id, c));
                } else {
                    row[place[di]] = -c;
                }
            }
            stencil.push(row);
        }
        Operator {
            stencil,
            nr,
            scheme,
            boundary,
            fixed: {
                let mut fixed = crate::solve::with_capacity(n);
                fixed.extend_from_slice(&mesh.fixed);
                fixed
            },
        }
    }

    /// The same matrix in CSR form (zero off-diagonals left out), for outside solvers and
    /// checks.
    pub fn to_csr(&self) -> CsMatI<f64, u32, u32> {
        let n = self.stencil.len();
        let nr = self.nr;
        let mut indptr: Vec<u32> = Vec::with_capacity(n + 1);
        let mut indices: Vec<u32> = Vec::with_capacity(5 * n);
        let mut data: Vec<f64> = Vec::with_capacity(5 * n);
        indptr.push(0);
        for (k, row) in self.stencil.iter().enumerate() {
            let cols = [k.wrapping_sub(nr), k.wrapping_sub(1), k, k + 1, k + nr];
            for (slot, (&col, &v)) in cols.iter().zip(row).enumerate() {
                if v != 0.0 || slot == ST_C {
                    indices.push(col as u32);
                    data.push(v);
                }
            }
            indptr.push(indices.len() as u32);
        }
        CsMatI::new((n, n), indptr, indices, data)
    }

    /// Bytes held by the rows.
    pub fn bytes(&self) -> usize {
        self.stencil.len() * std::mem::size_of::<[f64; 5]>()
            + self.fixed.len() * std::mem::size_of::<FixedId>()
            + self.boundary.len() * std::mem::size_of::<(u32, FixedId, f64)>()
    }

    /// Right-hand side for the given conductor potentials (volts, by conductor index); the
    /// tank is at 0 V.
    pub fn rhs(&self, potentials: &[f64]) -> Vec<f64> {
        let n = self.fixed.len();
        let mut b = crate::solve::zeroed(n);
        let pot = |id: FixedId| -> f64 { id.conductor_index().map_or(0.0, |c| potentials[c]) };
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
        if y.len() >= PARALLEL_ROWS {
            use rayon::prelude::*;
            y.par_chunks_mut(CHUNK)
                .enumerate()
                .for_each(|(c, ys)| self.apply_rows(x, ys, c * CHUNK));
        } else {
            self.apply_rows(x, y, 0);
        }
    }

    /// The rows `first .. first + ys.len()` of A x, into `ys` (for products fused with other
    /// work on the same rows). `x` may be single precision (a preconditioned direction, which
    /// the multigrid forms in single precision): each value is widened exactly, so the
    /// product is the same as with the widened vector.
    pub fn apply_rows<T: Copy + Into<f64>>(&self, x: &[T], ys: &mut [f64], first: usize) {
        let n = self.stencil.len();
        let nr = self.nr;
        let st = &self.stencil;
        let x = |k: usize| -> f64 { x[k].into() };
        for (off, yr) in ys.iter_mut().enumerate() {
            let k = first + off;
            let c = &st[k];
            *yr = if k >= nr && k + nr < n {
                // Interior rows: every neighbour index is in range, and a missing
                // neighbour has a zero coefficient. Summed in CSR column order.
                c[ST_S] * x(k - nr)
                    + c[ST_W] * x(k - 1)
                    + c[ST_C] * x(k)
                    + c[ST_E] * x(k + 1)
                    + c[ST_N] * x(k + nr)
            } else {
                let mut acc = 0.0;
                let cols = [
                    k.checked_sub(nr),
                    k.checked_sub(1),
                    Some(k),
                    Some(k + 1).filter(|&q| q < n),
                    Some(k + nr).filter(|&q| q < n),
                ];
                for (v, col) in c.iter().zip(cols) {
                    if let Some(q) = col
                        && *v != 0.0
                    {
                        acc += v * x(q);
                    }
                }
                acc
            };
        }
    }

    /// Number of rows.
    pub fn rows(&self) -> usize {
        self.fixed.len()
    }
}
