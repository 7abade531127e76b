//! Records: what callers write and what results say, validated once.
//!
//! The design object as written ([`spec`]) and its validated form ([`design`]), dotted paths
//! into it ([`designpath`]), the material table ([`materials`]), errors ([`error`]) and their
//! plain words ([`fieldtext`]), cautions ([`caution`]), work limits and cancellation
//! ([`limits`], [`cancel`]), the method report every result carries ([`report`]), and the
//! inputs and results of the two solvers ([`forcecurve`], [`stroke`]). Records use the
//! kernels at most, never a solver or a job.

pub mod cancel;
pub mod caution;
pub mod design;
pub mod designpath;
pub mod error;
pub mod fieldtext;
pub mod forcecurve;
pub mod limits;
pub mod materials;
pub mod report;
pub mod spec;
pub mod stroke;
