//! The field solve: assemble the finite-volume operator once per mesh, build the multigrid
//! hierarchy once, then solve for any set of conductor potentials.
//!
//! Input: a `mesh::Mesh` and conductor potentials in volts. Output: the potential at every
//! grid node and a `SolveInfo` (unknowns, iterations, relative residual, seconds) that goes
//! into every report. A solve that does not reach its tolerance is an `Err` carrying the
//! residual reached, never a quiet warning.

pub(crate) mod krylov;
pub(crate) mod multigrid;
pub(crate) mod operator;

use crate::mesh::Mesh;
pub use krylov::KrylovParams;
use krylov::{bicgstab, pcg};
pub use multigrid::MgParams;
use multigrid::Multigrid;
use operator::Operator;
pub use operator::Scheme;
use serde::Serialize;
use std::time::Instant;
use thiserror::Error;

/// A vector of `n` zeros for the solver's large arrays, whose memory the kernel is asked to
/// back with transparent huge pages where it can (Linux, `madvise(MADV_HUGEPAGE)`) before
/// anything is written to it: a solve touches its arrays once each, so with 4 KiB pages a
/// good share of its time went to page faults (measured at 1 M nodes, 1 thread: assembly,
/// setup and solve about 10 % faster). numpy advises its large arrays the same way. The
/// contents and numbers are unchanged.
pub(crate) fn zeroed<T: Clone + Default>(n: usize) -> Vec<T> {
    let v = vec![T::default(); n];
    advise_huge_pages(v.as_ptr().cast(), n * std::mem::size_of::<T>());
    v
}

/// An empty vector with room for `n` values, advised as in [`zeroed`].
pub(crate) fn with_capacity<T>(n: usize) -> Vec<T> {
    let v: Vec<T> = Vec::with_capacity(n);
    advise_huge_pages(v.as_ptr().cast(), v.capacity() * std::mem::size_of::<T>());
    v
}

/// Arrays from this size on are advised.
const HUGE_PAGE: usize = 2 << 20;

/// Asks the kernel to back the pages holding `bytes` from `start` with huge pages (the
/// pages are widened to whole ones: the allocator's header before a large block shares its
/// mapping, which the kernel places on a huge-page boundary); arrays under 2 MiB, and
/// systems without the call, are left alone. Advice only: it never changes what memory
/// holds, and a refusal changes nothing.
fn advise_huge_pages(start: *const u8, bytes: usize) {
    if bytes < HUGE_PAGE {
        return;
    }
    #[cfg(target_os = "linux")]
    {
        const PAGE: usize = 4096;
        let first = start as usize / PAGE * PAGE;
        let end = (start as usize + bytes).next_multiple_of(PAGE);
        // SAFETY: the pages hold memory of this process's own allocations, alive for the
        // call; MADV_HUGEPAGE changes only how the kernel backs them, never their contents,
        // and an error (e.g. another page size) is ignored.
        unsafe {
            libc::madvise(first as *mut libc::c_void, end - first, libc::MADV_HUGEPAGE);
        }
    }
    #[cfg(not(target_os = "linux"))]
    let _ = start;
}

/// Solver settings.
#[derive(Debug, Clone, Copy, Default)]
pub struct SolverParams {
    pub scheme: Scheme,
    pub krylov: KrylovParams,
    pub multigrid: MgParams,
}

/// The Krylov method of a solve (printed and serialised as its full name).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SolveMethod {
    /// Conjugate gradients (the symmetric scheme).
    ConjugateGradients,
    /// BiCGStab (the Shortley-Weller scheme, not symmetric).
    BiCgStab,
}

impl std::fmt::Display for SolveMethod {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(match self {
            SolveMethod::ConjugateGradients => "multigrid-preconditioned conjugate gradients",
            SolveMethod::BiCgStab => "multigrid-preconditioned BiCGStab",
        })
    }
}

impl Serialize for SolveMethod {
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        s.collect_str(self)
    }
}

/// Figures of one solve, for the report.
#[derive(Debug, Clone, Serialize)]
pub struct SolveInfo {
    pub nodes: usize,
    pub unknowns: usize,
    pub scheme: Scheme,
    pub method: SolveMethod,
    pub multigrid_levels: usize,
    pub iterations: usize,
    pub relative_residual: f64,
    pub tolerance: f64,
    pub seconds_assembly: f64,
    pub seconds_multigrid_setup: f64,
    pub seconds_solve: f64,
    /// Bytes held by the operator, the hierarchy and the Krylov vectors.
    pub memory_bytes: usize,
}

#[derive(Debug, Error, Clone)]
pub enum SolveError {
    #[error(
        "the field solve did not converge: relative residual {relative_residual:.3e} after {iterations} iterations (tolerance {tolerance:.1e}); check for conductors that touch at different potentials or a very stretched mesh, or refine [mesh] cell"
    )]
    NoConvergence {
        iterations: usize,
        relative_residual: f64,
        tolerance: f64,
    },
    #[error(
        "the start vector of the field solve has {got} values but the mesh has {expected} nodes; a warm start must come from a solution on the same mesh"
    )]
    GuessLength { expected: usize, got: usize },
}

/// A solved potential on a mesh.
#[derive(Debug, Clone)]
pub struct Solution {
    /// Potential at every node, volts (fixed nodes hold their conductor's potential).
    pub phi: Vec<f64>,
    pub info: SolveInfo,
}

/// The operator and preconditioner of one mesh, reusable for many right-hand sides. A clone
/// shares nothing but costs no new setup: it copies the hierarchy with its own work vectors,
/// so that right-hand sides can be solved side by side.
#[derive(Clone)]
pub(crate) struct Solver {
    pub op: Operator,
    mg: Multigrid,
    params: SolverParams,
    seconds_assembly: f64,
    seconds_setup: f64,
}

impl Solver {
    pub fn new(mesh: &Mesh, params: SolverParams) -> Solver {
        let t0 = Instant::now();
        let op = Operator::assemble(mesh, params.scheme);
        let t1 = Instant::now();
        let mut mg_params = params.multigrid;
        mg_params.symmetric = params.scheme == Scheme::Symmetric;
        let mg = Multigrid::build(&op, &mesh.r.x, &mesh.z.x, mg_params);
        let t2 = Instant::now();
        Solver {
            op,
            mg,
            params,
            seconds_assembly: (t1 - t0).as_secs_f64(),
            seconds_setup: (t2 - t1).as_secs_f64(),
        }
    }

    /// Seconds per V-cycle of the preconditioner (the fastest of `reps` cycles on the
    /// right-hand side of `potentials`) and the bytes a cycle moves
    /// ([`multigrid::Multigrid::bytes_per_cycle`]), for the bandwidth figure of the bench.
    pub fn time_cycle(&mut self, potentials: &[f64], reps: usize) -> (f64, f64) {
        let b = self.op.rhs(potentials);
        let mut z = vec![0.0; b.len()];
        let mut best = f64::INFINITY;
        for _ in 0..reps.max(1) {
            let t = Instant::now();
            self.mg.apply(&b, &mut z);
            best = best.min(t.elapsed().as_secs_f64());
        }
        (best, self.mg.bytes_per_cycle())
    }

    /// Solves for the given conductor potentials (volts, by conductor index), starting from
    /// `guess` when given; a guess of another length than the mesh's node count is an error.
    pub fn solve(
        &mut self,
        potentials: &[f64],
        guess: Option<&[f64]>,
    ) -> Result<Solution, SolveError> {
        let t0 = Instant::now();
        let b = self.op.rhs(potentials);
        let mut x = match guess {
            Some(g) if g.len() == b.len() => {
                let mut x = with_capacity(g.len());
                x.extend_from_slice(g);
                x
            }
            Some(g) => {
                return Err(SolveError::GuessLength {
                    expected: b.len(),
                    got: g.len(),
                });
            }
            None => zeroed(b.len()),
        };
        // Fixed nodes hold their potential exactly.
        for (k, &f) in self.op.fixed.iter().enumerate() {
            if f != crate::mesh::FREE {
                x[k] = b[k];
            }
        }
        let (info, method) = match self.params.scheme {
            Scheme::Symmetric => (
                pcg(&self.op, &mut self.mg, &b, &mut x, &self.params.krylov),
                SolveMethod::ConjugateGradients,
            ),
            Scheme::ShortleyWeller => (
                bicgstab(&self.op, &mut self.mg, &b, &mut x, &self.params.krylov),
                SolveMethod::BiCgStab,
            ),
        };
        let seconds_solve = t0.elapsed().as_secs_f64();
        if !info.converged || x.iter().any(|v| !v.is_finite()) {
            return Err(SolveError::NoConvergence {
                iterations: info.iterations,
                relative_residual: info.relative_residual,
                tolerance: self.params.krylov.tolerance,
            });
        }
        let n = b.len();
        // Right-hand side, solution and the Krylov work vectors (BiCGStab's shadow residual
        // and the preconditioned vectors in single precision).
        let vector_bytes = match self.params.scheme {
            Scheme::Symmetric => 5 * 8 + 4,
            Scheme::ShortleyWeller => 6 * 8 + 2 * 4,
        };
        let memory_bytes = self.op.bytes() + self.mg.bytes() + vector_bytes * n;
        let unknowns = self
            .op
            .fixed
            .iter()
            .filter(|&&f| f == crate::mesh::FREE)
            .count();
        Ok(Solution {
            phi: x,
            info: SolveInfo {
                nodes: n,
                unknowns,
                scheme: self.params.scheme,
                method,
                multigrid_levels: self.mg.depth(),
                iterations: info.iterations,
                relative_residual: info.relative_residual,
                tolerance: self.params.krylov.tolerance,
                seconds_assembly: self.seconds_assembly,
                seconds_multigrid_setup: self.seconds_setup,
                seconds_solve,
                memory_bytes,
            },
        })
    }
}
