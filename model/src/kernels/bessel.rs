//! Exponentially scaled modified Bessel functions of order one, from `pxfm`
//! (correctly rounded implementations; checked here against a committed mpmath fixture).
//!
//! The spectral kernel needs I1(x) K1(y) for y >= x, which over- and underflows for large
//! arguments; written with the scaled forms it is i1e(x) k1e(y) e^{x - y}, always finite.

/// e^{-|x|} I1(x).
pub(crate) fn i1e(x: f64) -> f64 {
    pxfm::f_i1e(x)
}

/// e^{x} K1(x), x > 0.
pub(crate) fn k1e(x: f64) -> f64 {
    pxfm::f_k1e(x)
}

/// I1(x) K1(y) for 0 <= x <= y, y > 0, via the scaled forms.
/// At x = 0, I1(0) = 0.
pub(crate) fn i1_k1(x: f64, y: f64) -> f64 {
    if x <= 0.0 {
        return 0.0;
    }
    i1e(x) * k1e(y) * (x - y).exp()
}
