//! Errors of the model crate.
//!
//! Policy: every failure that a caller can cause (an invalid design, a job larger than the
//! limits, a numerical breakdown that the inputs provoke) is a [`ModelError`] variant with
//! enough structure for the service to build a problem response once. Nothing in the model
//! panics on input-derived data.

use thiserror::Error;

/// One invalid input field, named by its dotted path in the design object
/// (for example `tube.inner_diameter_m`).
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
pub struct FieldError {
    /// Dotted path of the offending field in the request.
    pub path: String,
    /// What is wrong with it, in words an engineer can act on.
    pub message: String,
}

impl FieldError {
    /// A field error at `path`.
    pub fn new(path: impl Into<String>, message: impl Into<String>) -> Self {
        Self {
            path: path.into(),
            message: message.into(),
        }
    }
}

/// Everything that can go wrong in the model.
#[derive(Debug, Clone, Error, PartialEq)]
#[non_exhaustive]
pub enum ModelError {
    /// The design or job failed validation; every offending field is listed.
    #[error("invalid input: {}", summarise(.0))]
    Invalid(Vec<FieldError>),
    /// The job would exceed a work limit (rings, steps, points...). `path` names the field
    /// that drives the size, `limit` the cap.
    #[error("job too large: {path}: {message}")]
    TooLarge {
        /// Field that drives the size of the job.
        path: String,
        /// What exceeded which cap.
        message: String,
    },
    /// The discretised inductance matrix is not positive definite: the discretisation is
    /// outside the range where the cell model holds.
    #[error(
        "inductance matrix not positive definite at row {row}; refine or change the discretisation"
    )]
    NotPositiveDefinite {
        /// Row at which the Cholesky factorisation broke down.
        row: usize,
    },
    /// A numerical procedure failed to converge.
    #[error("numerical failure: {0}")]
    Numerical(String),
    /// The caller stopped the job before it finished (its deadline passed).
    #[error("the job was stopped before it finished")]
    Cancelled,
}

/// A number for a message: plain decimals for ordinary magnitudes, scientific notation for
/// very small or very large ones (Rust's `Display` never uses an exponent, so 5e-324 would
/// print as 324 digits).
pub fn show(v: f64) -> String {
    if v == 0.0 || (1e-4..1e7).contains(&v.abs()) || !v.is_finite() {
        format!("{v}")
    } else {
        format!("{v:e}")
    }
}

fn summarise(errors: &[FieldError]) -> String {
    errors
        .iter()
        .map(|e| format!("{}: {}", e.path, e.message))
        .collect::<Vec<_>>()
        .join("; ")
}

impl ModelError {
    /// A validation error with a single field.
    pub fn field(path: impl Into<String>, message: impl Into<String>) -> Self {
        Self::Invalid(vec![FieldError::new(path, message)])
    }
}

impl From<crate::kernels::banded::NotPositiveDefinite> for ModelError {
    fn from(e: crate::kernels::banded::NotPositiveDefinite) -> Self {
        ModelError::NotPositiveDefinite { row: e.row }
    }
}
