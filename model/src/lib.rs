//! ringdrag-model: eddy-current braking of permanent-magnet stacks moving through
//! non-ferrous conducting tubes.
//!
//! The crate holds the physics and numerics only (no HTTP). Model limits, stated once:
//! axisymmetric parts; relative permeability 1 everywhere (no ferromagnetic tubes, no iron
//! pole pieces); magnets rigid and uniformly magnetised along the axis; conductivity uniform
//! across the wall.
//!
//! # A tour in four layers
//!
//! Each layer imports only the layers below it (`.ci/import_cycles.py` checks this and that
//! no file imports another in a circle).
//!
//! **Kernels** (`kernels`, crate-private): numbers without physics objects. Complete elliptic
//! integrals by the AGM, scaled Bessel functions I1 and K1, Gauss-Legendre rules, the mutual
//! and self inductance and resistance of coaxial rings, symmetric band matrices with their
//! Cholesky factor, and small dense symmetric eigen-decompositions. They know nothing of
//! designs; their checks against handbook values and mpmath fixtures sit beside them.
//!
//! **Records** ([`records`]): what a caller writes and what a result says. A
//! [`DesignSpec`] is the design object as written (SI fields, units in the names);
//! [`Design::from_spec`] validates it once and every solver trusts the result. The material
//! table, errors ([`ModelError`]), cautions ([`Caution`]), work limits ([`Limits`]) with
//! cancellation, and the result records ([`ForceCurve`], [`Stroke`]) live here too.
//!
//! **Solvers** ([`solvers`]): the physics of one design. The stack's flux through coaxial
//! loops; the ring grid of the wall and the tabulated flux derivative; the steady force-speed
//! curve of a long tube by the spectral method ([`force_curve`]); the quasi-static drag
//! profile of a finite tube; the stroke through the finite tube in time, quasi-static or with
//! the full ring circuit ([`simulate_stroke`]); and the tube's heating.
//!
//! **Jobs** ([`jobs`]): many solver runs for one question. Named metrics of a design, sweeps
//! over design fields, worst-case tolerance bands, inverse sizing, targets on what the
//! customer feels, and choosing from stocked parts.
//!
//! From a JSON design to a force curve and a stroke (an invented scenario: a 12 mm N42
//! cylinder dropped from rest at the entry of a 0.5 m copper tube):
//!
//! ```
//! use ringdrag_model::{
//!     Design, DesignSpec, ForceCurveOptions, Limits, StrokeOptions, force_curve,
//!     simulate_stroke,
//! };
//!
//! let spec: DesignSpec = serde_json::from_str(
//!     r#"{"magnets": {"grade": "N42", "outer_diameter_m": 0.012, "length_m": 0.02},
//!         "tube": {"material": "copper-c12200", "inner_diameter_m": 0.013,
//!                  "wall_thickness_m": 0.0015, "length_m": 0.5}}"#,
//! )?;
//! let design = Design::from_spec(&spec)?;
//! let limits = Limits::default();
//!
//! let curve = force_curve(&design, &ForceCurveOptions::default(), &limits)?;
//! // The brake is stronger than the stack's weight, so the stack has a terminal speed, and
//! // there the braking force equals the drive (source: Newton's second law at a = 0).
//! let terminal = curve.terminal_speed_m_per_s.expect("the brake holds the stack");
//! assert!(curve.peak_force_n > curve.drive_force_n);
//! // At low speed the force is linear in speed, F = c v, so v_t is near drive / c (common
//! // practice: the low magnetic Reynolds number limit; here Rm at v_t is small).
//! let linear = curve.drive_force_n / curve.damping_n_s_per_m;
//! assert!((terminal / linear - 1.0).abs() < 0.1, "{terminal} vs {linear}");
//!
//! let stroke = simulate_stroke(&design, &StrokeOptions::default(), &limits)?;
//! // Dropped from rest, the stack soon falls at the terminal speed, so it takes about
//! // tube length / v_t to get through; the entry transient and the end regions (a few stack
//! // lengths) shift that by a few percent (common practice: a steady-speed estimate).
//! let exit_time = stroke.summary.exit_time_s.expect("the stack leaves the tube");
//! let steady_time = 0.5 / terminal;
//! assert!((exit_time / steady_time - 1.0).abs() < 0.05, "{exit_time} vs {steady_time}");
//! # Ok::<(), Box<dyn std::error::Error>>(())
//! ```

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
