//! The coarsest level's direct solve: LU factors with partial pivoting of a band matrix.
//!
//! Input: the coarsest level's nine-point rows in natural order (node j·nr + i), whose
//! couplings lie within nr + 1 of the diagonal. Output: factors that solve A x = b in
//! O(n·nr²) work and O(n·nr) memory, where a dense LU takes O(n³) and O(n²).
//!
//! Gaussian elimination with row interchanges (Golub & Van Loan, Matrix Computations, 4th ed.,
//! §4.3.5, band Gaussian elimination with partial pivoting): the upper band grows from ku to
//! kl + ku with the interchanges, and the multipliers of a column stay where that column's
//! step left them, so a solve applies the interchanges in order.

/// LU factors of a band matrix with `kl` sub- and `ku` super-diagonals.
#[derive(Debug, Clone)]
pub(super) struct BandLu {
    n: usize,
    kl: usize,
    /// Width of the stored upper band after interchanges, kl + ku.
    ku2: usize,
    /// Row r holds its columns r − kl ..= r + kl + ku at r·w + (c + kl − r).
    a: Vec<f64>,
    /// The row interchanged with row k at step k.
    piv: Vec<usize>,
    /// False when a pivot vanished (the matrix is singular); the solve then leaves x alone.
    regular: bool,
}

impl BandLu {
    /// Factors the n × n matrix whose entries (row, column, value) are given; entries
    /// outside the band are an error of the caller (asserted).
    pub(super) fn new(
        n: usize,
        kl: usize,
        ku: usize,
        entries: impl Iterator<Item = (usize, usize, f64)>,
    ) -> BandLu {
        let ku2 = kl + ku;
        let w = kl + ku2 + 1;
        let mut a = vec![0.0; n * w];
        for (r, c, v) in entries {
            assert!(
                c + kl >= r && c <= r + ku,
                "entry ({r}, {c}) outside the band"
            );
            a[r * w + c + kl - r] += v;
        }
        let at = |r: usize, c: usize| r * w + c + kl - r;
        let mut piv = vec![0; n];
        let mut regular = true;
        for k in 0..n {
            let last = (k + kl).min(n - 1);
            let right = (k + ku2).min(n - 1);
            let mut p = k;
            for r in k + 1..=last {
                if a[at(r, k)].abs() > a[at(p, k)].abs() {
                    p = r;
                }
            }
            piv[k] = p;
            if a[at(p, k)] == 0.0 || !a[at(p, k)].is_finite() {
                regular = false;
                break;
            }
            if p != k {
                for c in k..=right {
                    a.swap(at(k, c), at(p, c));
                }
            }
            let d = a[at(k, k)];
            for r in k + 1..=last {
                let l = a[at(r, k)] / d;
                a[at(r, k)] = l;
                if l != 0.0 {
                    for c in k + 1..=right {
                        a[at(r, c)] -= l * a[at(k, c)];
                    }
                }
            }
        }
        BandLu {
            n,
            kl,
            ku2,
            a,
            piv,
            regular,
        }
    }

    /// Solves A x = b in place (b becomes x); false, and b untouched, when the matrix is
    /// singular.
    pub(super) fn solve(&self, b: &mut [f64]) -> bool {
        if !self.regular {
            return false;
        }
        let (n, kl, ku2) = (self.n, self.kl, self.ku2);
        let w = kl + ku2 + 1;
        let at = |r: usize, c: usize| r * w + c + kl - r;
        for k in 0..n {
            b.swap(k, self.piv[k]);
            let bk = b[k];
            let last = (k + kl).min(n - 1);
            for (r, br) in b.iter_mut().enumerate().take(last + 1).skip(k + 1) {
                *br -= self.a[at(r, k)] * bk;
            }
        }
        for k in (0..n).rev() {
            let right = (k + ku2).min(n - 1);
            let s = b
                .iter()
                .enumerate()
                .take(right + 1)
                .skip(k + 1)
                .fold(b[k], |s, (c, &bc)| s - self.a[at(k, c)] * bc);
            b[k] = s / self.a[at(k, k)];
        }
        true
    }

    /// Bytes held by the factors.
    pub(super) fn bytes(&self) -> usize {
        self.a.len() * 8 + self.piv.len() * std::mem::size_of::<usize>()
    }
}

#[cfg(test)]
mod tests {
    use super::BandLu;

    /// The band factors solve a nonsymmetric band system that needs interchanges (small
    /// diagonal) to round-off: the residual of the solution of a random-looking system.
    #[test]
    fn band_lu_solves_a_system_that_needs_interchanges() {
        let (n, kl, ku) = (60usize, 4usize, 3usize);
        let value = |r: usize, c: usize| -> f64 {
            let h = ((r * 31 + c * 17) % 23) as f64 / 23.0 - 0.5;
            if r == c { 1e-3 * h } else { h }
        };
        let mut entries = Vec::new();
        for r in 0..n {
            for c in r.saturating_sub(kl)..=(r + ku).min(n - 1) {
                entries.push((r, c, value(r, c)));
            }
        }
        let lu = BandLu::new(n, kl, ku, entries.iter().copied());
        let b: Vec<f64> = (0..n).map(|k| (k as f64 * 0.37).sin()).collect();
        let mut x = b.clone();
        assert!(lu.solve(&mut x));
        let mut worst = 0.0f64;
        for (r, br) in b.iter().enumerate() {
            let ax: f64 = entries
                .iter()
                .filter(|e| e.0 == r)
                .map(|&(_, c, v)| v * x[c])
                .sum();
            worst = worst.max((ax - br).abs());
        }
        assert!(worst < 1e-10, "residual {worst:e}");
    }
}
