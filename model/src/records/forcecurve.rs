//! Inputs and results of the steady force-speed curve in a long tube (solver in
//! [`crate::solvers::spectral`]).

use crate::records::caution::Caution;
use crate::records::report::ModelInfo;
use serde::Serialize;

/// How a force curve is computed.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ForceCurveOptions {
    /// Speeds to evaluate, m/s; default: 40 log-spaced speeds bracketing the peak.
    pub speeds_m_per_s: Option<Vec<f64>>,
    /// Radial layer count override.
    pub radial_layers: Option<usize>,
}

/// One point of the curve.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
pub struct ForcePoint {
    /// Speed, m/s.
    pub speed_m_per_s: f64,
    /// Braking force (positive opposes motion), N.
    pub force_n: f64,
}

/// The steady force-speed curve and the numbers derived from it.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
pub struct ForceCurve {
    /// Force at each requested speed.
    pub points: Vec<ForcePoint>,
    /// Low-speed slope F/v, N s/m.
    pub damping_n_s_per_m: f64,
    /// Largest braking force over all speeds, N.
    pub peak_force_n: f64,
    /// Speed of the peak, m/s.
    pub critical_speed_m_per_s: f64,
    /// Speed at which braking balances the load's steady driving force, m/s; None when the
    /// driving force exceeds the peak force (runaway).
    pub terminal_speed_m_per_s: Option<f64>,
    /// Driving force of the load (gravity along travel + applied - friction), N.
    pub drive_force_n: f64,
    /// mu0 sigma v w at the terminal speed (or at the critical speed when there is none).
    pub magnetic_reynolds_number: f64,
    /// Thin-sheet characteristic speed 2 / (mu0 sigma w), m/s (Reitz, J. Appl. Phys. 41, 2067, 1970).
    pub characteristic_speed_m_per_s: f64,
    /// Cautions, the standing safety caution first.
    pub cautions: Vec<Caution>,
    /// Method and resolution.
    pub model: ModelInfo,
}
