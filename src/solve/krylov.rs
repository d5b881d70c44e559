//! Preconditioned Krylov iterations: conjugate gradients for the symmetric scheme, BiCGStab
//! (van der Vorst, SIAM J. Sci. Stat. Comput. 13, 631 (1992)) for the Shortley–Weller scheme,
//! whose operator is not symmetric next to surfaces. Both stop on the true relative residual
//! ‖b − A x‖ / ‖b‖ and report it; a solve that does not reach the tolerance is an error that
//! carries the residual it reached.

use crate::solve::multigrid::Multigrid;
use crate::solve::operator::Operator;
use crate::solve::zeroed;
use rayon::prelude::*;

/// Settings of the iteration.
#[derive(Debug, Clone, Copy)]
pub struct KrylovParams {
    /// Relative residual to reach.
    pub tolerance: f64,
    pub max_iterations: usize,
}

impl Default for KrylovParams {
    fn default() -> Self {
        Self {
            tolerance: 1e-10,
            max_iterations: 200,
        }
    }
}

/// What an iteration achieved.
#[derive(Debug, Clone, Copy)]
pub struct KrylovInfo {
    pub iterations: usize,
    pub relative_residual: f64,
    pub converged: bool,
}

/// Vectors at least this long are reduced and updated in parallel.
const PARALLEL_LEN: usize = 60_000;

/// Chunk length of the parallel reductions: partial sums over fixed chunks, added in order,
/// so that a run gives the same bits every time whatever the thread scheduling.
const REDUCE_CHUNK: usize = 16_384;

fn dot(a: &[f64], b: &[f64]) -> f64 {
    if a.len() >= PARALLEL_LEN {
        let partial: Vec<f64> = a
            .par_chunks(REDUCE_CHUNK)
            .zip(b.par_chunks(REDUCE_CHUNK))
            .map(|(x, y)| x.iter().zip(y).map(|(p, q)| p * q).sum::<f64>())
            .collect();
        partial.iter().sum()
    } else {
        a.iter().zip(b).map(|(x, y)| x * y).sum()
    }
}

/// (a, b) with a held in single precision (BiCGStab's shadow residual, a preconditioned
/// residual).
fn dot_single(a: &[f32], b: &[f64]) -> f64 {
    if a.len() >= PARALLEL_LEN {
        let partial: Vec<f64> = a
            .par_chunks(REDUCE_CHUNK)
            .zip(b.par_chunks(REDUCE_CHUNK))
            .map(|(x, y)| x.iter().zip(y).map(|(&p, q)| p as f64 * q).sum::<f64>())
            .collect();
        partial.iter().sum()
    } else {
        a.iter().zip(b).map(|(&x, y)| x as f64 * y).sum()
    }
}

/// Partial sums over fixed chunks of `REDUCE_CHUNK` elements, added in order, whatever the
/// thread count.
fn add_partials<const K: usize>(partial: &[[f64; K]]) -> [f64; K] {
    let mut sum = [0.0; K];
    for p in partial {
        for (s, v) in sum.iter_mut().zip(p) {
            *s += v;
        }
    }
    sum
}

/// y = A x fused with sums over the same rows: `f(first, ys)` returns the sums of one chunk
/// of rows (from row `first`) once its products are in `ys`; the sums of the fixed chunks
/// are added in order, so the result does not depend on the thread count.
fn apply_reduce<const K: usize, T: Copy + Into<f64> + Sync>(
    op: &Operator,
    x: &[T],
    y: &mut [f64],
    f: impl Fn(usize, &[f64]) -> [f64; K] + Sync,
) -> [f64; K] {
    let chunk = |(c, ys): (usize, &mut [f64])| {
        op.apply_rows(x, ys, c * REDUCE_CHUNK);
        f(c * REDUCE_CHUNK, ys)
    };
    let partial: Vec<[f64; K]> = if y.len() >= PARALLEL_LEN {
        y.par_chunks_mut(REDUCE_CHUNK)
            .enumerate()
            .map(chunk)
            .collect()
    } else {
        y.chunks_mut(REDUCE_CHUNK).enumerate().map(chunk).collect()
    };
    add_partials(&partial)
}

/// y += a·x and z += b·w in one pass, fused with sums over the updated z as in
/// [`apply_reduce`].
#[allow(clippy::too_many_arguments)]
fn axpy2_reduce<const K: usize, T: Copy + Into<f64> + Sync>(
    y: &mut [f64],
    a: f64,
    x: &[T],
    z: &mut [f64],
    b: f64,
    w: &[f64],
    f: impl Fn(usize, &[f64]) -> [f64; K] + Sync,
) -> [f64; K] {
    let chunk = |(c, (ys, zs)): (usize, (&mut [f64], &mut [f64]))| {
        let first = c * REDUCE_CHUNK;
        let (xs, ws) = (&x[first..first + ys.len()], &w[first..first + zs.len()]);
        for k in 0..ys.len() {
            ys[k] += a * xs[k].into();
            zs[k] += b * ws[k];
        }
        f(first, zs)
    };
    let partial: Vec<[f64; K]> = if y.len() >= PARALLEL_LEN {
        y.par_chunks_mut(REDUCE_CHUNK)
            .zip(z.par_chunks_mut(REDUCE_CHUNK))
            .enumerate()
            .map(chunk)
            .collect()
    } else {
        y.chunks_mut(REDUCE_CHUNK)
            .zip(z.chunks_mut(REDUCE_CHUNK))
            .enumerate()
            .map(chunk)
            .collect()
    };
    add_partials(&partial)
}

fn sum_sq(v: &[f64]) -> f64 {
    v.iter().map(|a| a * a).sum()
}

fn norm(a: &[f64]) -> f64 {
    dot(a, a).sqrt()
}

/// r = b − A x; returns ‖r‖.
fn residual(op: &Operator, x: &[f64], b: &[f64], r: &mut [f64]) -> f64 {
    op.apply(x, r);
    for (ri, bi) in r.iter_mut().zip(b) {
        *ri = bi - *ri;
    }
    norm(r)
}

/// The result when ‖r‖ = `rn` meets the tolerance.
fn converged_at(
    rn: f64,
    bnorm: f64,
    iterations: usize,
    params: &KrylovParams,
) -> Option<KrylovInfo> {
    (rn / bnorm <= params.tolerance).then_some(KrylovInfo {
        iterations,
        relative_residual: rn / bnorm,
        converged: true,
    })
}

/// ‖b‖, the initial residual and its norm; `Err` with the result when the initial guess
/// already meets the tolerance.
fn start(
    op: &Operator,
    b: &[f64],
    x: &[f64],
    params: &KrylovParams,
) -> Result<(f64, Vec<f64>, f64), KrylovInfo> {
    let bnorm = norm(b).max(f64::MIN_POSITIVE);
    let mut r = zeroed(b.len());
    let rn = residual(op, x, b, &mut r);
    match converged_at(rn, bnorm, 0, params) {
        Some(info) => Err(info),
        None => Ok((bnorm, r, rn)),
    }
}

/// Preconditioned conjugate gradients from the initial guess in `x`.
pub fn pcg(
    op: &Operator,
    mg: &mut Multigrid,
    b: &[f64],
    x: &mut [f64],
    params: &KrylovParams,
) -> KrylovInfo {
    let n = b.len();
    let (bnorm, mut r, mut rn) = match start(op, b, x, params) {
        Ok(s) => s,
        Err(done) => return done,
    };
    // The preconditioned residual as the hierarchy forms it, in single precision.
    let mut z = zeroed::<f32>(n);
    mg.apply_f32(&r, &mut z);
    let mut p: Vec<f64> = zeroed(n);
    for (pk, &zk) in p.iter_mut().zip(&z) {
        *pk = zk as f64;
    }
    let mut q = zeroed(n);
    let mut rz = dot_single(&z, &r);
    for it in 1..=params.max_iterations {
        let [pq] = apply_reduce(op, &p, &mut q, |first, qs| {
            [qs.iter().zip(&p[first..]).map(|(a, b)| a * b).sum()]
        });
        if pq <= 0.0 || !pq.is_finite() {
            return KrylovInfo {
                iterations: it,
                relative_residual: rn / bnorm,
                converged: false,
            };
        }
        let alpha = rz / pq;
        let [rr] = axpy2_reduce(x, alpha, &p, &mut r, -alpha, &q, |_, rs| [sum_sq(rs)]);
        rn = rr.sqrt();
        if rn / bnorm <= params.tolerance {
            // Confirm with the true residual.
            let tn = residual(op, x, b, &mut r);
            if tn / bnorm <= params.tolerance {
                return KrylovInfo {
                    iterations: it,
                    relative_residual: tn / bnorm,
                    converged: true,
                };
            }
            rn = tn;
        }
        mg.apply_f32(&r, &mut z);
        let rz_new = dot_single(&z, &r);
        let beta = rz_new / rz;
        rz = rz_new;
        p.par_iter_mut()
            .zip(z.par_iter())
            .with_min_len(PARALLEL_LEN / 2)
            .for_each(|(pk, &zk)| *pk = zk as f64 + beta * *pk);
    }
    KrylovInfo {
        iterations: params.max_iterations,
        relative_residual: rn / bnorm,
        converged: false,
    }
}

/// Right-preconditioned BiCGStab from the initial guess in `x`, with the intermediate
/// residual and the two preconditioned directions kept in place (four double-precision work
/// vectors; the shadow residual and the preconditioned direction in single precision).
pub fn bicgstab(
    op: &Operator,
    mg: &mut Multigrid,
    b: &[f64],
    x: &mut [f64],
    params: &KrylovParams,
) -> KrylovInfo {
    let n = b.len();
    let (bnorm, mut r, mut rn) = match start(op, b, x, params) {
        Ok(s) => s,
        Err(done) => return done,
    };
    // The shadow residual only has to stay fixed; single precision halves its memory.
    let mut r0: Vec<f32> = zeroed(n);
    for (a, &v) in r0.iter_mut().zip(&r) {
        *a = v as f32;
    }
    let r0 = r0;
    let mut p = zeroed(n);
    let mut v = zeroed(n);
    // The preconditioned directions, in single precision as the hierarchy forms them.
    let mut hat = zeroed::<f32>(n);
    let mut t = zeroed(n);
    let (mut rho, mut alpha, mut omega) = (1.0f64, 1.0f64, 1.0f64);
    let done = |op: &Operator, x: &[f64], r: &mut [f64], it: usize| -> Option<KrylovInfo> {
        let tn = residual(op, x, b, r);
        (tn / bnorm <= params.tolerance).then_some(KrylovInfo {
            iterations: it,
            relative_residual: tn / bnorm,
            converged: true,
        })
    };
    // (r̂₀, r), formed with each update of r.
    let mut r0r = dot_single(&r0, &r);
    let shadow = |first: usize, vs: &[f64]| -> f64 {
        r0[first..first + vs.len()]
            .iter()
            .zip(vs)
            .map(|(&a, b)| a as f64 * b)
            .sum()
    };
    for it in 1..=params.max_iterations {
        let rho_new = r0r;
        if rho_new == 0.0 || !rho_new.is_finite() {
            break;
        }
        let beta = (rho_new / rho) * (alpha / omega);
        rho = rho_new;
        p.par_iter_mut()
            .zip(r.par_iter().zip(v.par_iter()))
            .with_min_len(PARALLEL_LEN / 2)
            .for_each(|(pk, (rk, vk))| *pk = rk + beta * (*pk - omega * vk));
        mg.apply_f32(&p, &mut hat);
        let [r0v] = apply_reduce(op, &hat, &mut v, |first, vs| [shadow(first, vs)]);
        if r0v == 0.0 || !r0v.is_finite() {
            break;
        }
        alpha = rho / r0v;
        let [rr] = axpy2_reduce(x, alpha, &hat, &mut r, -alpha, &v, |_, rs| [sum_sq(rs)]);
        if rr.sqrt() / bnorm <= params.tolerance
            && let Some(info) = done(op, x, &mut r, it)
        {
            return info;
        }
        mg.apply_f32(&r, &mut hat);
        let [tt, tr] = apply_reduce(op, &hat, &mut t, |first, ts| {
            let rs = &r[first..first + ts.len()];
            [sum_sq(ts), ts.iter().zip(rs).map(|(a, b)| a * b).sum()]
        });
        omega = if tt > 0.0 { tr / tt } else { 0.0 };
        let [rr, rs0] = axpy2_reduce(x, omega, &hat, &mut r, -omega, &t, |first, rs| {
            [sum_sq(rs), shadow(first, rs)]
        });
        rn = rr.sqrt();
        r0r = rs0;
        if rn / bnorm <= params.tolerance {
            if let Some(info) = done(op, x, &mut r, it) {
                return info;
            }
            rn = norm(&r);
            r0r = dot_single(&r0, &r);
        }
        if omega == 0.0 {
            break;
        }
    }
    KrylovInfo {
        iterations: params.max_iterations,
        relative_residual: rn / bnorm,
        converged: false,
    }
}
