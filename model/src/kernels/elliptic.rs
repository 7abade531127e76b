//! Complete elliptic integrals of the first and second kind by the arithmetic-geometric mean.
//!
//! Parameter convention: `m = k^2` (Abramowitz & Stegun 17.2; NIST DLMF 19.2 writes k).
//! The routines take the parameter *and* its complement `m1 = 1 - m`, each computed by the
//! caller from its own geometry, because forming `1 - m` near m -> 1 loses digits exactly
//! where coaxial loops are close. The AGM sequence (A&S 17.6): a0 = 1, b0 = sqrt(m1),
//! c0 = sqrt(m); a_{n+1} = (a_n + b_n)/2, b_{n+1} = sqrt(a_n b_n), c_{n+1} = (a_n - b_n)/2
//! (computed as c_n^2 / (4 a_{n+1}) to avoid cancellation); then K = pi / (2 a_N) and
//! K - E = K * sum_{n>=0} 2^{n-1} c_n^2, a sum of positive terms, so K - E and the
//! combination used by Maxwell's formula keep full relative precision for every m.

use std::f64::consts::PI;

/// Result of one AGM run.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Agm {
    /// K(m).
    pub(crate) k: f64,
    /// sum_{n>=1} 2^{n-1} c_n^2 (the c0 term excluded).
    pub(crate) tail: f64,
    /// c0^2 / 2 = m / 2.
    pub(crate) head: f64,
}

/// Runs the AGM for parameter `m` with complement `m1` (both in [0, 1], m + m1 = 1).
/// `m1 = 0` (K infinite) returns `k = +inf`.
pub(crate) fn agm(m: f64, m1: f64) -> Agm {
    let mut a = 1.0_f64;
    let mut b = m1.max(0.0).sqrt();
    let mut c = m.max(0.0).sqrt(); // c_n, starting at c_0
    let mut tail = 0.0;
    let mut pow = 1.0; // 2^{n-1} for the next term c_n, n = 1
    for _ in 0..64 {
        let a_next = 0.5 * (a + b);
        let b_next = (a * b).sqrt();
        // c_{n+1} = (a_n - b_n)/2 = c_n^2 / (4 a_{n+1}), free of cancellation.
        let c_next = c * c / (4.0 * a_next);
        a = a_next;
        b = b_next;
        c = c_next;
        let term = pow * c * c;
        tail += term;
        pow *= 2.0;
        if term <= 1e-18 * tail || c == 0.0 {
            break;
        }
    }
    // a and b agree to rounding once c is negligible.
    let k = if m1 <= 0.0 {
        f64::INFINITY
    } else {
        PI / (2.0 * a)
    };
    Agm {
        k,
        tail,
        head: 0.5 * m,
    }
}

/// K(m) and E(m) with the complement given explicitly.
#[cfg(test)] // only the checks use it since the kernels became crate-private
pub(crate) fn complete_k_e(m: f64, m1: f64) -> (f64, f64) {
    let r = agm(m, m1);
    (r.k, r.k * (1.0 - r.head - r.tail))
}

/// K(m) for 0 <= m < 1.
#[cfg(test)] // only the checks use it since the kernels became crate-private
pub(crate) fn complete_k(m: f64) -> f64 {
    complete_k_e(m, 1.0 - m).0
}

/// E(m) for 0 <= m <= 1.
#[cfg(test)] // only the checks use it since the kernels became crate-private
pub(crate) fn complete_e(m: f64) -> f64 {
    if m >= 1.0 {
        return 1.0;
    }
    complete_k_e(m, 1.0 - m).1
}

/// The bracket of Maxwell's formula, (2/k)[(1 - m/2) K - E] = (2/k) K sum_{n>=1} 2^{n-1} c_n^2,
/// evaluated without cancellation for both k -> 0 (distant loops) and k -> 1 (close loops).
pub(crate) fn maxwell_bracket(m: f64, m1: f64) -> f64 {
    if m <= 0.0 {
        return 0.0;
    }
    let r = agm(m, m1);
    2.0 / m.sqrt() * r.k * r.tail
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn k_half_closed_form() {
        // K(1/2) = Gamma(1/4)^2 / (4 sqrt(pi)) = 1.854074677301372
        // (source: Abramowitz & Stegun, Handbook of Mathematical Functions, 1964, Table 17.1).
        assert!((complete_k(0.5) - 1.854_074_677_301_372).abs() < 1e-14);
    }

    #[test]
    fn limits() {
        // K(0) = E(0) = pi/2 (source: Abramowitz & Stegun 17.3.11, 17.3.12).
        assert!((complete_k(0.0) - PI / 2.0).abs() < 1e-15);
        assert!((complete_e(0.0) - PI / 2.0).abs() < 1e-15);
        // E(1) = 1: the defining integral with m = 1 (source: Abramowitz & Stegun 17.3.3, from
        // memory; 17.3.13 is Legendre's relation, checked in kernels/properties.rs).
        assert!((complete_e(1.0 - 1e-300) - 1.0).abs() < 1e-12);
    }
}
