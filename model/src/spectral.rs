//! Steady state in a long tube by the spectral method (work in progress in this commit).

use crate::design::Design;
use crate::error::ModelError;
use crate::forcecurve::{ForceCurve, ForceCurveOptions};
use crate::limits::Limits;

/// The steady force-speed curve of `design` in a long tube.
pub fn force_curve(
    _design: &Design,
    _opts: &ForceCurveOptions,
    _limits: &Limits,
) -> Result<ForceCurve, ModelError> {
    Err(ModelError::Numerical(
        "spectral solver not yet built".into(),
    ))
}
