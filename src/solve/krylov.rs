//! Preconditioned Krylov iterations: conjugate gradients for the symmetric scheme, BiCGStab
//! (van der Vorst, SIAM J. Sci. Stat. Comput. 13, 631 (1992)) for the Shortley–Weller scheme,
//! whose operator is not symmetric next to surfaces. Both stop on the true relative residual
//! ‖b − A x‖ / ‖b‖ and report it; a solve that does not reach the tolerance is an error that
//! carries the residual it reached.

use crate::solve::multigrid::Multigrid;
use crate::solve::operator::Operator;

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

fn dot(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).map(|(x, y)| x * y).sum()
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

/// Preconditioned conjugate gradients from the initial guess in `x`.
pub fn pcg(
    op: &Operator,
    mg: &mut Multigrid,
    b: &[f64],
    x: &mut [f64],
    params: &KrylovParams,
) -> KrylovInfo {
    let n = b.len();
    let bnorm = norm(b).max(f64::MIN_POSITIVE);
    let mut r = vec![0.0; n];
    let mut rn = residual(op, x, b, &mut r);
    if rn / bnorm <= params.tolerance {
        return KrylovInfo {
            iterations: 0,
            relative_residual: rn / bnorm,
            converged: true,
        };
    }
    let mut z = vec![0.0; n];
    mg.apply(&r, &mut z);
    let mut p = z.clone();
    let mut q = vec![0.0; n];
    let mut rz = dot(&r, &z);
    for it in 1..=params.max_iterations {
        op.apply(&p, &mut q);
        let pq = dot(&p, &q);
        if pq <= 0.0 || !pq.is_finite() {
            return KrylovInfo {
                iterations: it,
                relative_residual: rn / bnorm,
                converged: false,
            };
        }
        let alpha = rz / pq;
        for k in 0..n {
            x[k] += alpha * p[k];
            r[k] -= alpha * q[k];
        }
        rn = norm(&r);
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
        mg.apply(&r, &mut z);
        let rz_new = dot(&r, &z);
        let beta = rz_new / rz;
        rz = rz_new;
        for k in 0..n {
            p[k] = z[k] + beta * p[k];
        }
    }
    KrylovInfo {
        iterations: params.max_iterations,
        relative_residual: rn / bnorm,
        converged: false,
    }
}

/// Right-preconditioned BiCGStab from the initial guess in `x`, with the intermediate
/// residual and the two preconditioned directions kept in place (six work vectors).
pub fn bicgstab(
    op: &Operator,
    mg: &mut Multigrid,
    b: &[f64],
    x: &mut [f64],
    params: &KrylovParams,
) -> KrylovInfo {
    let n = b.len();
    let bnorm = norm(b).max(f64::MIN_POSITIVE);
    let mut r = vec![0.0; n];
    let mut rn = residual(op, x, b, &mut r);
    if rn / bnorm <= params.tolerance {
        return KrylovInfo {
            iterations: 0,
            relative_residual: rn / bnorm,
            converged: true,
        };
    }
    let r0 = r.clone();
    let mut p = vec![0.0; n];
    let mut v = vec![0.0; n];
    let mut hat = vec![0.0; n];
    let mut t = vec![0.0; n];
    let (mut rho, mut alpha, mut omega) = (1.0f64, 1.0f64, 1.0f64);
    let done = |op: &Operator, x: &[f64], r: &mut [f64], it: usize| -> Option<KrylovInfo> {
        let tn = residual(op, x, b, r);
        (tn / bnorm <= params.tolerance).then_some(KrylovInfo {
            iterations: it,
            relative_residual: tn / bnorm,
            converged: true,
        })
    };
    for it in 1..=params.max_iterations {
        let rho_new = dot(&r0, &r);
        if rho_new == 0.0 || !rho_new.is_finite() {
            break;
        }
        let beta = (rho_new / rho) * (alpha / omega);
        rho = rho_new;
        for k in 0..n {
            p[k] = r[k] + beta * (p[k] - omega * v[k]);
        }
        mg.apply(&p, &mut hat);
        op.apply(&hat, &mut v);
        let r0v = dot(&r0, &v);
        if r0v == 0.0 || !r0v.is_finite() {
            break;
        }
        alpha = rho / r0v;
        for k in 0..n {
            x[k] += alpha * hat[k];
            r[k] -= alpha * v[k];
        }
        if norm(&r) / bnorm <= params.tolerance
            && let Some(info) = done(op, x, &mut r, it)
        {
            return info;
        }
        mg.apply(&r, &mut hat);
        op.apply(&hat, &mut t);
        let tt = dot(&t, &t);
        omega = if tt > 0.0 { dot(&t, &r) / tt } else { 0.0 };
        for k in 0..n {
            x[k] += omega * hat[k];
            r[k] -= omega * t[k];
        }
        rn = norm(&r);
        if rn / bnorm <= params.tolerance {
            if let Some(info) = done(op, x, &mut r, it) {
                return info;
            }
            rn = norm(&r);
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
