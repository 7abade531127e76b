//! ringdrag-model: eddy-current braking of permanent-magnet stacks moving through
//! non-ferrous conducting tubes.
//!
//! The crate holds the physics and numerics only (no HTTP): validated design types
//! ([`design`]), the material table ([`materials`]), field and circuit kernels
//! ([`elliptic`], [`bessel`], [`inductance`], [`flux`]), and the solvers built on them.
//!
//! Model limits, stated once: axisymmetric parts; relative permeability 1 everywhere (no
//! ferromagnetic tubes, no iron pole pieces); magnets rigid and uniformly magnetised along
//! the axis; conductivity uniform across the wall.

pub mod jobs;
pub(crate) mod kernels;
pub mod records;
pub mod solvers;

pub use records::cancel::CancelToken;
pub use records::caution::{Caution, CautionKind};
pub use records::design::Design;
pub use records::error::{FieldError, ModelError};
pub use records::forcecurve::{ForceCurve, ForceCurveOptions, ForcePoint};
pub use records::limits::Limits;
pub use records::report::{Discretisation, Fidelity, ModelInfo};
pub use records::spec::DesignSpec;
pub use records::stroke::{Stroke, StrokeEnd, StrokeOptions, StrokeSeries, StrokeSummary};
pub use solvers::spectral::force_curve;
pub use solvers::transient::simulate_stroke;

/// Vacuum permeability, H/m, the classical defined value 4 pi 1e-7 (the 2019 SI value differs
/// by 5.5e-10 relative, far below every other uncertainty here).
pub const MU0: f64 = 4.0e-7 * std::f64::consts::PI;

/// Version of the model, reported in every result.
pub const MODEL_VERSION: &str = env!("CARGO_PKG_VERSION");
