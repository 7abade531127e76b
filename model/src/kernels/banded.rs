//! Symmetric positive definite band matrices: storage, Cholesky factorisation, and solves.
//!
//! The ring-circuit matrix (c0/dt) L + R of a uniform tube is banded once mutual coupling is
//! truncated at a finite axial reach, and every window of rings that the stroke solver uses is
//! a *leading* principal submatrix of one window matrix. The Cholesky factor of a leading
//! principal submatrix is the leading block of the full factor (Golub & Van Loan, Matrix
//! Computations, 4th ed., 2013, sec. 4.2 and 4.3 on band Cholesky), so one factorisation serves
//! every window: [`BandCholesky::solve_leading`] solves with the first `m` rows only.
//!
//! Storage: row `i` holds A[i][i - kd ..= i] contiguously (lower band), so both the
//! factorisation's inner products and the forward substitution run over contiguous memory;
//! the back substitution is done column-wise as contiguous AXPYs for the same reason.

/// The Cholesky factorisation met a non-positive (or non-finite) pivot: the matrix is not
/// positive definite. The model's error type converts it into
/// `ModelError::NotPositiveDefinite` (kernels know nothing of the model's records).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) struct NotPositiveDefinite {
    /// Row at which the factorisation broke down.
    pub(crate) row: usize,
}

/// A symmetric band matrix of order `n` and half-bandwidth `kd`, lower band stored by rows.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct BandMatrix {
    n: usize,
    kd: usize,
    /// Row i occupies `data[i * (kd + 1) ..][..kd + 1]`; entry (i, j), j <= i, sits at
    /// offset `j + kd - i` (entries left of column 0 are zero padding).
    data: Vec<f64>,
}

impl BandMatrix {
    /// A zero band matrix of order `n` with half-bandwidth `kd`.
    pub(crate) fn zeros(n: usize, kd: usize) -> Self {
        Self {
            n,
            kd,
            data: vec![0.0; n * (kd + 1)],
        }
    }

    /// Sets `A[i][j] = A[j][i] = value`. Entries outside the band are ignored (they are zero
    /// by construction of the caller's truncation).
    pub(crate) fn set(&mut self, i: usize, j: usize, value: f64) {
        let (i, j) = if i >= j { (i, j) } else { (j, i) };
        if i < self.n && i - j <= self.kd {
            self.data[i * (self.kd + 1) + j + self.kd - i] = value;
        }
    }

    /// `A[i][j]` (zero outside the band).
    #[cfg(test)] // only the checks use it since the kernels became crate-private
    pub(crate) fn get(&self, i: usize, j: usize) -> f64 {
        let (i, j) = if i >= j { (i, j) } else { (j, i) };
        if i < self.n && i - j <= self.kd {
            self.data[i * (self.kd + 1) + j + self.kd - i]
        } else {
            0.0
        }
    }

    /// Cholesky factorisation A = L L^T in place (row-oriented, Cholesky-Banachiewicz).
    /// Fails with [`NotPositiveDefinite`] at the first non-positive pivot.
    pub(crate) fn cholesky(mut self) -> Result<BandCholesky, NotPositiveDefinite> {
        let (n, kd) = (self.n, self.kd);
        let w = kd + 1;
        for i in 0..n {
            let j0 = i.saturating_sub(kd);
            for j in j0..=i {
                // L[i][j] = (A[i][j] - sum_{k in [j0, j)} L[i][k] L[j][k]) / L[j][j];
                // row j's band starts at column j - kd <= j0, so both slices are contiguous.
                let k0 = j0.max(j.saturating_sub(kd));
                let ri = i * w + kd - i;
                let rj = j * w + kd - j;
                let dot: f64 = self.data[ri + k0..ri + j]
                    .iter()
                    .zip(&self.data[rj + k0..rj + j])
                    .map(|(a, b)| a * b)
                    .sum();
                let aij = self.data[ri + j] - dot;
                if j == i {
                    if !(aij > 0.0 && aij.is_finite()) {
                        return Err(NotPositiveDefinite { row: i });
                    }
                    self.data[ri + i] = aij.sqrt();
                } else {
                    self.data[ri + j] = aij / self.data[rj + j];
                }
            }
        }
        Ok(BandCholesky { factor: self })
    }

    /// y = A x for the leading `x.len()` x `x.len()` principal submatrix.
    #[cfg(test)] // only the checks use it since the kernels became crate-private
    pub(crate) fn mul_leading(&self, x: &[f64], y: &mut [f64]) {
        let m = x.len().min(self.n);
        let (kd, w) = (self.kd, self.kd + 1);
        y[..m].fill(0.0);
        for i in 0..m {
            let j0 = i.saturating_sub(kd);
            let row = &self.data[i * w + kd - i + j0..i * w + kd + 1];
            // Lower part and diagonal of row i.
            let mut acc = 0.0;
            for (a, xj) in row.iter().zip(&x[j0..=i]) {
                acc += a * xj;
            }
            y[i] += acc;
            // Strictly lower entries also act as the upper triangle: y[j] += A[i][j] x[i].
            let xi = x[i];
            for (a, yj) in row[..row.len() - 1].iter().zip(&mut y[j0..i]) {
                *yj += a * xi;
            }
        }
    }
}

/// (sum l x, sum l y) with four partial sums each (in a fixed order, so the result does not
/// depend on anything but the inputs). Chunked slices carry no bounds checks in the loop.
fn dot2(l: &[f64], x: &[f64], y: &[f64]) -> (f64, f64) {
    let n = l.len().min(x.len()).min(y.len());
    let (l, x, y) = (&l[..n], &x[..n], &y[..n]);
    let (mut a, mut b) = ([0.0_f64; 4], [0.0_f64; 4]);
    let (lc, xc, yc) = (l.chunks_exact(4), x.chunks_exact(4), y.chunks_exact(4));
    let (lr, xr, yr) = (lc.remainder(), xc.remainder(), yc.remainder());
    for ((lq, xq), yq) in lc.zip(xc).zip(yc) {
        for q in 0..4 {
            a[q] += lq[q] * xq[q];
            b[q] += lq[q] * yq[q];
        }
    }
    for ((lk, xk), yk) in lr.iter().zip(xr).zip(yr) {
        a[0] += lk * xk;
        b[0] += lk * yk;
    }
    ((a[0] + a[1]) + (a[2] + a[3]), (b[0] + b[1]) + (b[2] + b[3]))
}

/// y1 -= l x1 and y2 -= l x2 over equal-length slices, four at a time.
fn axpy2(l: &[f64], x1: f64, x2: f64, y1: &mut [f64], y2: &mut [f64]) {
    let n = l.len().min(y1.len()).min(y2.len());
    let (l, y1, y2) = (&l[..n], &mut y1[..n], &mut y2[..n]);
    let mut lc = l.chunks_exact(4);
    let mut c1 = y1.chunks_exact_mut(4);
    let mut c2 = y2.chunks_exact_mut(4);
    for ((lq, p), q) in (&mut lc).zip(&mut c1).zip(&mut c2) {
        for k in 0..4 {
            p[k] -= lq[k] * x1;
            q[k] -= lq[k] * x2;
        }
    }
    for ((lk, p), q) in lc
        .remainder()
        .iter()
        .zip(c1.into_remainder())
        .zip(c2.into_remainder())
    {
        *p -= lk * x1;
        *q -= lk * x2;
    }
}

/// The Cholesky factor of a [`BandMatrix`], usable for every leading principal submatrix.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct BandCholesky {
    factor: BandMatrix,
}

impl BandCholesky {
    /// Solves A_m x = b in place for the leading principal submatrix of order m = `b.len()`
    /// (m <= order), for two right-hand sides at once (one pass over the factor).
    pub(crate) fn solve_leading2(&self, b1: &mut [f64], b2: &mut [f64]) {
        let m = b1.len().min(b2.len()).min(self.factor.n);
        let (kd, w) = (self.factor.kd, self.factor.kd + 1);
        let d = &self.factor.data;
        // Forward: L y = b. The inner products run on four partial sums per right-hand side
        // so that they vectorise (a single running sum would serialise on its rounding).
        for i in 0..m {
            let j0 = i.saturating_sub(kd);
            let row = &d[i * w + kd - i + j0..i * w + kd - i + i];
            let (s1, s2) = dot2(row, &b1[j0..i], &b2[j0..i]);
            let piv = d[i * w + kd];
            b1[i] = (b1[i] - s1) / piv;
            b2[i] = (b2[i] - s2) / piv;
        }
        // Backward: L^T x = y, column-oriented so that row i of L is read contiguously.
        for i in (0..m).rev() {
            let piv = d[i * w + kd];
            let x1 = b1[i] / piv;
            let x2 = b2[i] / piv;
            b1[i] = x1;
            b2[i] = x2;
            let j0 = i.saturating_sub(kd);
            let row = &d[i * w + kd - i + j0..i * w + kd - i + i];
            axpy2(row, x1, x2, &mut b1[j0..i], &mut b2[j0..i]);
        }
    }

    /// Solves A_m x = b in place for one right-hand side (m = `b.len()`).
    #[cfg(test)] // only the checks use it since the kernels became crate-private
    pub(crate) fn solve_leading(&self, b: &mut [f64]) {
        let mut dummy = vec![0.0; b.len()];
        self.solve_leading2(b, &mut dummy);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Dense Gaussian elimination with partial pivoting, the independent reference.
    fn dense_solve(mut a: Vec<Vec<f64>>, mut b: Vec<f64>) -> Vec<f64> {
        let n = b.len();
        for c in 0..n {
            let p = (c..n)
                .max_by(|&x, &y| a[x][c].abs().total_cmp(&a[y][c].abs()))
                .unwrap_or(c);
            a.swap(c, p);
            b.swap(c, p);
            let pivot_row = a[c].clone();
            for r in c + 1..n {
                let f = a[r][c] / pivot_row[c];
                for (ark, ack) in a[r][c..].iter_mut().zip(&pivot_row[c..]) {
                    *ark -= f * ack;
                }
                b[r] -= f * b[c];
            }
        }
        let mut x = vec![0.0; n];
        for r in (0..n).rev() {
            let s: f64 = (r + 1..n).map(|k| a[r][k] * x[k]).sum();
            x[r] = (b[r] - s) / a[r][r];
        }
        x
    }

    /// A deterministic SPD band matrix: 1/(1 + |i - j|)^3 coupling plus a dominant diagonal.
    fn sample(n: usize, kd: usize) -> BandMatrix {
        let mut a = BandMatrix::zeros(n, kd);
        for i in 0..n {
            for j in i.saturating_sub(kd)..=i {
                let d = (i - j) as f64;
                let v = if i == j {
                    3.0 + 0.01 * i as f64
                } else {
                    0.9 / (1.0 + d).powi(3) * (1.0 + 0.1 * ((i * 7 + j * 3) % 5) as f64)
                };
                a.set(i, j, v);
            }
        }
        a
    }

    #[test]
    fn banded_solve_equals_dense_reference() {
        let (n, kd) = (37, 6);
        let a = sample(n, kd);
        let dense: Vec<Vec<f64>> = (0..n)
            .map(|i| (0..n).map(|j| a.get(i, j)).collect())
            .collect();
        let b: Vec<f64> = (0..n).map(|i| (i as f64 * 0.37).sin() + 0.2).collect();
        let reference = dense_solve(dense.clone(), b.clone());
        let f = a.clone().cholesky().expect("SPD by construction");
        let mut x = b.clone();
        f.solve_leading(&mut x);
        for (xi, ri) in x.iter().zip(&reference) {
            // source: common practice (backward-stable solvers agree to a few ulps x cond).
            assert!((xi - ri).abs() < 1e-12 * (1.0 + ri.abs()), "{xi} vs {ri}");
        }
        // The leading block of the factor solves the leading principal submatrix.
        let m = 20;
        let sub: Vec<Vec<f64>> = (0..m).map(|i| dense[i][..m].to_vec()).collect();
        let reference = dense_solve(sub, b[..m].to_vec());
        let mut x = b[..m].to_vec();
        f.solve_leading(&mut x);
        for (xi, ri) in x.iter().zip(&reference) {
            // source: common practice (Golub & Van Loan 2013, leading blocks of the factor).
            assert!((xi - ri).abs() < 1e-12 * (1.0 + ri.abs()));
        }
        // Band product against the dense product.
        let mut y = vec![0.0; n];
        a.mul_leading(&b, &mut y);
        for i in 0..n {
            let r: f64 = (0..n).map(|j| dense[i][j] * b[j]).sum();
            // source: common practice (same sums, different order).
            assert!((y[i] - r).abs() < 1e-13 * (1.0 + r.abs()));
        }
    }

    #[test]
    fn indefinite_matrix_is_reported() {
        let mut a = sample(10, 2);
        // A 2x2 principal minor [[3, 5], [5, 3]] has a negative eigenvalue.
        a.set(5, 4, 5.0);
        match a.cholesky() {
            Err(NotPositiveDefinite { row }) => assert_eq!(row, 5),
            other => panic!("expected NotPositiveDefinite, got {other:?}"),
        }
    }
}
