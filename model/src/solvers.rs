//! Solvers: the physics of one design, built on records and kernels.
//!
//! The stack's flux through coaxial loops ([`flux`]); the ring discretisation of the wall and
//! the tabulated flux derivative shared by the finite-tube solvers ([`rings`]); steady braking
//! in a long tube by the spectral method ([`spectral`]); the quasi-static drag profile of a
//! finite tube ([`dragprofile`]); the stroke in time ([`transient`]); and the tube's heating
//! ([`heat`]). Solvers use records and kernels, never a job.

pub mod dragprofile;
pub mod flux;
pub mod heat;
pub mod rings;
pub mod spectral;
pub mod transient;
