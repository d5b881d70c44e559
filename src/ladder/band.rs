//! Symmetric positive-definite band matrix with an in-place Cholesky factorisation.
//!
//! The nodal matrix of the ladder couples each node only to its neighbours in the stage
//! ordering, so it is banded with a half-bandwidth of 2 (half-wave) or 3 (symmetric) and a
//! factorisation costs O(n·b²) per Newton iteration.

use super::error::LadderError;

/// Lower band of a symmetric matrix: entry (i, i − d) for d = 0..=bw.
#[derive(Debug, Clone)]
pub(crate) struct BandMatrix {
    n: usize,
    bw: usize,
    data: Vec<f64>,
}

impl BandMatrix {
    pub(crate) fn zeros(n: usize, bw: usize) -> Self {
        Self {
            n,
            bw,
            data: vec![0.0; n * (bw + 1)],
        }
    }

    pub(crate) fn bandwidth(&self) -> usize {
        self.bw
    }

    /// Copies the values of `other` (same shape) into `self`.
    pub(crate) fn copy_from(&mut self, other: &BandMatrix) {
        self.data.copy_from_slice(&other.data);
    }

    /// Multiplies every entry by `s`.
    pub(crate) fn scale(&mut self, s: f64) {
        self.data.iter_mut().for_each(|v| *v *= s);
    }

    /// Adds `value` to entry (i, j) and, by symmetry, (j, i). `|i − j|` must be ≤ bw.
    pub(crate) fn add(&mut self, i: usize, j: usize, value: f64) {
        let (r, c) = if i >= j { (i, j) } else { (j, i) };
        let d = r - c;
        debug_assert!(d <= self.bw, "entry outside the band");
        self.data[r * (self.bw + 1) + d] += value;
    }

    /// Adds the two-terminal conductance (or capacitance) stamp of a branch between `a` and
    /// `b`; `None` is a node of fixed potential, which only touches the diagonal.
    pub(crate) fn stamp(&mut self, a: Option<usize>, b: Option<usize>, value: f64) {
        if let Some(i) = a {
            self.add(i, i, value);
        }
        if let Some(j) = b {
            self.add(j, j, value);
        }
        if let (Some(i), Some(j)) = (a, b) {
            self.add(i, j, -value);
        }
    }

    /// y = A·x.
    pub(crate) fn mul_vec(&self, x: &[f64], y: &mut [f64]) {
        let w = self.bw + 1;
        y.iter_mut().for_each(|v| *v = 0.0);
        for i in 0..self.n {
            y[i] += self.data[i * w] * x[i];
            for d in 1..=self.bw.min(i) {
                let a = self.data[i * w + d];
                y[i] += a * x[i - d];
                y[i - d] += a * x[i];
            }
        }
    }

    /// Replaces the matrix by its Cholesky factor L (A = L·Lᵀ), in place.
    pub(crate) fn factor(&mut self) -> Result<(), LadderError> {
        let w = self.bw + 1;
        for i in 0..self.n {
            let j0 = i.saturating_sub(self.bw);
            for j in j0..=i {
                let mut sum = self.data[i * w + (i - j)];
                let k0 = j0.max(j.saturating_sub(self.bw));
                for k in k0..j {
                    sum -= self.data[i * w + (i - k)] * self.data[j * w + (j - k)];
                }
                if i == j {
                    if sum <= 0.0 || !sum.is_finite() {
                        return Err(LadderError::SingularSystem { row: i, pivot: sum });
                    }
                    self.data[i * w] = sum.sqrt();
                } else {
                    self.data[i * w + (i - j)] = sum / self.data[j * w];
                }
            }
        }
        Ok(())
    }

    /// Solves L·Lᵀ·x = b in place (after `factor`).
    pub(crate) fn solve_in_place(&self, b: &mut [f64]) {
        let w = self.bw + 1;
        for i in 0..self.n {
            let mut s = b[i];
            for d in 1..=self.bw.min(i) {
                s -= self.data[i * w + d] * b[i - d];
            }
            b[i] = s / self.data[i * w];
        }
        for i in (0..self.n).rev() {
            let mut s = b[i];
            for d in 1..=self.bw.min(self.n - 1 - i) {
                s -= self.data[(i + d) * w + d] * b[i + d];
            }
            b[i] = s / self.data[i * w];
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A random-looking SPD band matrix: the residual of the solve is at rounding level.
    #[test]
    fn cholesky_solves_band_system() {
        let n = 40;
        let bw = 3;
        let mut a = BandMatrix::zeros(n, bw);
        let mut seed = 12345_u64;
        let mut next = || {
            seed = seed
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (seed >> 11) as f64 / (1u64 << 53) as f64
        };
        for i in 0..n {
            for d in 1..=bw.min(i) {
                a.stamp(Some(i), Some(i - d), 0.1 + next());
            }
            a.add(i, i, 0.01 + next());
        }
        let x_true: Vec<f64> = (0..n).map(|i| (i as f64 * 0.37).sin()).collect();
        let mut b = vec![0.0; n];
        a.mul_vec(&x_true, &mut b);
        let mut l = a.clone();
        l.factor().unwrap();
        let mut x = b.clone();
        l.solve_in_place(&mut x);
        let mut r = vec![0.0; n];
        a.mul_vec(&x, &mut r);
        let res: f64 = r
            .iter()
            .zip(&b)
            .map(|(p, q)| (p - q).abs())
            .fold(0.0, f64::max);
        let bn: f64 = b.iter().map(|v| v.abs()).fold(0.0, f64::max);
        assert!(res <= 1e-12 * bn, "residual {res}");
    }
}
