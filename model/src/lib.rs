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

pub mod banded;
pub mod bessel;
pub mod cancel;
pub mod caution;
pub mod design;
pub mod designfield;
pub mod dragprofile;
pub mod elliptic;
pub mod error;
pub mod fieldtext;
pub mod flux;
pub mod forcecurve;
pub mod heat;
pub mod inductance;
pub mod limits;
pub mod materials;
pub mod metrics;
pub mod quadrature;
pub mod report;
pub mod selection;
pub mod sizing;
pub mod spec;
pub mod spectral;
pub mod stroke;
pub mod sweep;
pub mod symeig;
pub mod targets;
pub mod tolerance;
pub mod transient;

pub use cancel::CancelToken;
pub use caution::{Caution, CautionKind};
pub use design::Design;
pub use designfield::DesignField;
pub use error::{FieldError, ModelError};
pub use forcecurve::{ForceCurve, ForceCurveOptions, ForcePoint};
pub use limits::Limits;
pub use report::{Discretisation, Fidelity, ModelInfo};
pub use spec::DesignSpec;
pub use spectral::force_curve;
pub use stroke::{Stroke, StrokeEnd, StrokeOptions, StrokeSeries, StrokeSummary};
pub use transient::simulate_stroke;

/// Vacuum permeability, H/m, the classical defined value 4 pi 1e-7 (the 2019 SI value differs
/// by 5.5e-10 relative, far below every other uncertainty here).
pub const MU0: f64 = 4.0e-7 * std::f64::consts::PI;

/// Version of the model, reported in every result.
pub const MODEL_VERSION: &str = env!("CARGO_PKG_VERSION");
