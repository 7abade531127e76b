//! Stroke simulation through a finite tube (work in progress in this commit).

use crate::design::Design;
use crate::error::ModelError;
use crate::limits::Limits;
use crate::stroke::{Stroke, StrokeOptions};

/// Simulates one stroke of `design` through its finite tube.
pub fn simulate_stroke(
    _design: &Design,
    _opts: &StrokeOptions,
    _limits: &Limits,
) -> Result<Stroke, ModelError> {
    Err(ModelError::Numerical(
        "ring-circuit solver not yet built".into(),
    ))
}
