//! Kernels: the numerical building blocks with no knowledge of designs, materials or jobs.
//!
//! Complete elliptic integrals ([`elliptic`]), scaled modified Bessel functions ([`bessel`]),
//! Gauss-Legendre rules ([`quadrature`]), inductance and resistance of coaxial rings
//! ([`inductance`]), symmetric band matrices ([`banded`]) and small dense symmetric
//! eigen-decompositions ([`eigen`]). Crate-private: the solvers are their only callers, and
//! they are checked beside their code (`kernels/tests.rs`). They use nothing else of the
//! crate but [`crate::MU0`].

pub(crate) mod banded;
pub(crate) mod bessel;
pub(crate) mod eigen;
pub(crate) mod elliptic;
pub(crate) mod inductance;
pub(crate) mod quadrature;

#[cfg(test)]
mod properties;
#[cfg(test)]
mod tests;
