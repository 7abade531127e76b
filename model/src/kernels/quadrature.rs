//! Gauss-Legendre quadrature rules, shared by the radial layering of the spectral solver and
//! of the ring circuit.

/// Gauss-Legendre nodes and weights on [-1, 1], ascending, by Newton's iteration on the
/// Legendre polynomial from the Chebyshev-like first guess cos(pi (i - 1/4) / (n + 1/2))
/// (Abramowitz & Stegun 25.4.29 for the rule; Press et al., Numerical Recipes, 3rd ed., 2007,
/// sec. 4.6 for the iteration).
pub(crate) fn gauss_legendre(n: usize) -> (Vec<f64>, Vec<f64>) {
    let mut x = vec![0.0; n];
    let mut w = vec![0.0; n];
    for i in 0..n.div_ceil(2) {
        let mut z = (std::f64::consts::PI * (i as f64 + 0.75) / (n as f64 + 0.5)).cos();
        let mut dp = 1.0;
        for _ in 0..100 {
            // Legendre recurrence: P_k = ((2k - 1) z P_{k-1} - (k - 1) P_{k-2}) / k.
            let (mut p0, mut p1) = (1.0, z);
            for k in 2..=n {
                let p2 = ((2 * k - 1) as f64 * z * p1 - (k - 1) as f64 * p0) / k as f64;
                p0 = p1;
                p1 = p2;
            }
            let pn = if n == 0 {
                1.0
            } else if n == 1 {
                z
            } else {
                p1
            };
            let pnm1 = if n == 1 { 1.0 } else { p0 };
            dp = n as f64 * (z * pn - pnm1) / (z * z - 1.0);
            let dz = pn / dp;
            z -= dz;
            if dz.abs() < 1e-16 {
                break;
            }
        }
        let wi = 2.0 / ((1.0 - z * z) * dp * dp);
        x[i] = -z;
        x[n - 1 - i] = z;
        w[i] = wi;
        w[n - 1 - i] = wi;
    }
    (x, w)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn gauss_legendre_rules() {
        // n = 2: nodes +-1/sqrt(3), weights 1; n = 3: 0, +-sqrt(3/5), weights 8/9, 5/9
        // (source: Abramowitz & Stegun, Handbook of Mathematical Functions, 1964, Table 25.4).
        let (x, w) = gauss_legendre(2);
        assert!((x[1] - 1.0 / 3.0_f64.sqrt()).abs() < 1e-15 && (x[0] + x[1]).abs() < 1e-15);
        assert!((w[0] - 1.0).abs() < 1e-15);
        let (x, w) = gauss_legendre(3);
        assert!(x[1].abs() < 1e-15 && (x[2] - 0.6_f64.sqrt()).abs() < 1e-15);
        assert!((w[1] - 8.0 / 9.0).abs() < 1e-15 && (w[0] - 5.0 / 9.0).abs() < 1e-15);
        // An n-point rule integrates x^(2n-2) exactly: 2 / (2n - 1) on [-1, 1]
        // (source: Abramowitz & Stegun 25.4.29).
        for n in [1usize, 4, 7, 12, 32] {
            let (x, w) = gauss_legendre(n);
            let p = (2 * n - 2) as i32;
            let s: f64 = x.iter().zip(&w).map(|(xi, wi)| wi * xi.powi(p)).sum();
            assert!((s - 2.0 / (2 * n - 1) as f64).abs() < 1e-13, "n {n}: {s}");
            assert!(x.windows(2).all(|p| p[1] > p[0]));
        }
    }
}
