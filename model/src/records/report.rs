//! Records shared by every computing result: which method ran, at what resolution, and how
//! large its numerical error is believed to be.

use serde::{Deserialize, Serialize};

/// Fidelity of a stroke simulation.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
#[serde(rename_all = "snake_case")]
pub enum Fidelity {
    /// Choose from the magnetic Reynolds number; the result says which ran.
    #[default]
    Auto,
    /// Inductance neglected: ring currents follow the EMF instantly (exact at low speed).
    QuasiStatic,
    /// Full ring circuit with self and mutual inductance, implicit time stepping.
    Inductive,
}

/// How the problem was discretised. Fields that do not apply to a method are absent.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
pub struct Discretisation {
    /// Radial layers across the wall.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub radial_layers: Option<usize>,
    /// Axial rings along the tube.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub axial_rings: Option<usize>,
    /// Axial ring width, m.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub ring_width_m: Option<f64>,
    /// Wavenumber nodes of the spectral integral.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub wavenumbers: Option<usize>,
    /// Largest wavenumber integrated, 1/m.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub max_wavenumber_per_m: Option<f64>,
    /// Time step, s.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub time_step_s: Option<f64>,
    /// Time steps taken.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub steps: Option<usize>,
    /// Axial reach of mutual coupling kept in the ring circuit, m.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub coupling_reach_m: Option<f64>,
}

/// The `model` block of every computing result.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
pub struct ModelInfo {
    /// Version of the model crate.
    pub version: String,
    /// Method that produced the numbers (`spectral`, `ring_circuit`...).
    pub method: String,
    /// Fidelity used (for strokes: `quasi_static` or `inductive`; for force curves `inductive`,
    /// since the spectral method includes the eddy currents' own field).
    pub fidelity: Fidelity,
    /// The discretisation used.
    pub discretisation: Discretisation,
    /// Estimated relative numerical error of the headline numbers (the change between two
    /// resolutions), when estimated.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub error_estimate_relative: Option<f64>,
}

impl ModelInfo {
    /// A model block for `method` at `fidelity`.
    pub fn new(method: &str, fidelity: Fidelity, discretisation: Discretisation) -> Self {
        Self {
            version: crate::MODEL_VERSION.to_string(),
            method: method.to_string(),
            fidelity,
            discretisation,
            error_estimate_relative: None,
        }
    }
}
