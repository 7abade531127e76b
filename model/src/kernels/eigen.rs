//! Eigen-decomposition of small dense symmetric matrices by the cyclic Jacobi method
//! (Golub & Van Loan, Matrix Computations, 4th ed., sec. 8.5; Rutishauser's stable rotation
//! formulas). The spectral solver decomposes one matrix of radial-layer size (at most a few
//! dozen) per wavenumber, where Jacobi is accurate (small relative errors in the eigenvalues
//! of definite matrices) and simple; no linear-algebra dependency is needed.

/// Eigenvalues and orthonormal eigenvectors of a symmetric matrix.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct SymEig {
    /// Eigenvalues (unordered).
    pub(crate) values: Vec<f64>,
    /// Eigenvectors, column-major: column k is `vectors[k * n..(k + 1) * n]`.
    pub(crate) vectors: Vec<f64>,
}

/// Decomposes the symmetric `n` x `n` matrix `a` (row-major; only symmetry is assumed).
pub(crate) fn jacobi(a: &[f64], n: usize) -> SymEig {
    let mut m = a.to_vec();
    let mut v = vec![0.0; n * n];
    for i in 0..n {
        v[i * n + i] = 1.0;
    }
    let scale: f64 = m.iter().map(|x| x * x).sum::<f64>().sqrt();
    for _sweep in 0..50 {
        let mut off = 0.0;
        for p in 0..n {
            for q in p + 1..n {
                off += m[p * n + q] * m[p * n + q];
            }
        }
        if off.sqrt() <= 1e-15 * scale || scale == 0.0 {
            break;
        }
        for p in 0..n {
            for q in p + 1..n {
                let apq = m[p * n + q];
                if apq.abs() <= 1e-300 {
                    continue;
                }
                let app = m[p * n + p];
                let aqq = m[q * n + q];
                let theta = (aqq - app) / (2.0 * apq);
                let t = theta.signum() / (theta.abs() + (theta * theta + 1.0).sqrt());
                let t = if theta == 0.0 { 1.0 } else { t };
                let c = 1.0 / (t * t + 1.0).sqrt();
                let s = t * c;
                let tau = s / (1.0 + c);
                m[p * n + p] = app - t * apq;
                m[q * n + q] = aqq + t * apq;
                m[p * n + q] = 0.0;
                m[q * n + p] = 0.0;
                for r in 0..n {
                    if r != p && r != q {
                        let arp = m[r * n + p];
                        let arq = m[r * n + q];
                        let new_rp = arp - s * (arq + tau * arp);
                        let new_rq = arq + s * (arp - tau * arq);
                        m[r * n + p] = new_rp;
                        m[p * n + r] = new_rp;
                        m[r * n + q] = new_rq;
                        m[q * n + r] = new_rq;
                    }
                }
                for r in 0..n {
                    let vrp = v[p * n + r];
                    let vrq = v[q * n + r];
                    v[p * n + r] = vrp - s * (vrq + tau * vrp);
                    v[q * n + r] = vrq + s * (vrp - tau * vrq);
                }
            }
        }
    }
    let values = (0..n).map(|i| m[i * n + i]).collect();
    SymEig { values, vectors: v }
}

/// Decomposes `a` starting from a guess of its eigenvectors `q` (column-major, orthonormal),
/// such as those of a nearby matrix: B = Q^T A Q is nearly diagonal, so Jacobi converges in
/// one or two sweeps, and the eigenvectors of A are Q times those of B. Used along a smooth
/// family of matrices (the spectral solver's wavenumbers).
pub(crate) fn jacobi_from(a: &[f64], n: usize, q: &[f64]) -> SymEig {
    // t = A Q (row-major n x n), then B = Q^T t.
    let mut t = vec![0.0; n * n];
    for i in 0..n {
        for k in 0..n {
            let col = &q[k * n..(k + 1) * n];
            t[i * n + k] = (0..n).map(|j| a[i * n + j] * col[j]).sum();
        }
    }
    let mut b = vec![0.0; n * n];
    for k in 0..n {
        let qk = &q[k * n..(k + 1) * n];
        for l in k..n {
            let v: f64 = (0..n).map(|i| qk[i] * t[i * n + l]).sum();
            b[k * n + l] = v;
            b[l * n + k] = v;
        }
    }
    let inner = jacobi(&b, n);
    // Eigenvector m of A: column m of Q times the inner vectors.
    let mut vectors = vec![0.0; n * n];
    for m in 0..n {
        let w = &inner.vectors[m * n..(m + 1) * n];
        for r in 0..n {
            vectors[m * n + r] = (0..n).map(|k| q[k * n + r] * w[k]).sum();
        }
    }
    SymEig {
        values: inner.values,
        vectors,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reconstructs_a_symmetric_matrix() {
        // A symmetric test matrix with known eigenvalues 1, 2, 4 (common practice: build
        // A = Q diag Q^T from a Householder reflection Q = I - 2 u u^T).
        let u = [1.0 / 3.0_f64.sqrt(); 3];
        let d = [1.0, 2.0, 4.0];
        let mut a = [0.0; 9];
        for i in 0..3 {
            for j in 0..3 {
                for k in 0..3 {
                    let qik = if i == k { 1.0 } else { 0.0 } - 2.0 * u[i] * u[k];
                    let qjk = if j == k { 1.0 } else { 0.0 } - 2.0 * u[j] * u[k];
                    a[i * 3 + j] += qik * d[k] * qjk;
                }
            }
        }
        let e = jacobi(&a, 3);
        let mut vals = e.values.clone();
        vals.sort_by(f64::total_cmp);
        for (x, y) in vals.iter().zip(d) {
            assert!((x - y).abs() < 1e-13);
        }
        // Warm start from a perturbed basis gives the same decomposition.
        let guess = jacobi(&a.map(|x| x * (1.0 + 1e-3 * x)), 3);
        let warm = jacobi_from(&a, 3, &guess.vectors);
        let mut wv = warm.values.clone();
        wv.sort_by(f64::total_cmp);
        for (x, y) in wv.iter().zip(d) {
            assert!((x - y).abs() < 1e-13);
        }
        for k in 0..3 {
            let col = &warm.vectors[k * 3..k * 3 + 3];
            for i in 0..3 {
                let av: f64 = (0..3).map(|j| a[i * 3 + j] * col[j]).sum();
                assert!((av - warm.values[k] * col[i]).abs() < 1e-13);
            }
        }
        // A v = lambda v for every pair.
        for k in 0..3 {
            let col = &e.vectors[k * 3..k * 3 + 3];
            for i in 0..3 {
                let av: f64 = (0..3).map(|j| a[i * 3 + j] * col[j]).sum();
                assert!((av - e.values[k] * col[i]).abs() < 1e-13);
            }
        }
    }
}
