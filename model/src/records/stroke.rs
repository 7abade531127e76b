//! Inputs and results of a stroke simulation (the solver is in [`crate::solvers::transient`]).

use crate::records::caution::Caution;
use crate::records::report::{Fidelity, ModelInfo};
use serde::Serialize;

/// How a stroke is run.
#[derive(Debug, Clone, PartialEq)]
pub struct StrokeOptions {
    /// Start position of the stack centre, m (entry end of the tube at 0; negative = above it).
    pub start_position_m: f64,
    /// Start speed along travel, m/s.
    pub start_speed_m_per_s: f64,
    /// Longest simulated time, s.
    pub max_time_s: f64,
    /// Requested fidelity.
    pub fidelity: Fidelity,
    /// Points in the returned series.
    pub samples: usize,
    /// Axial ring width override, m (default chosen from the geometry).
    pub ring_width_m: Option<f64>,
    /// Radial layer count override (default chosen from the wall and skin depth).
    pub radial_layers: Option<usize>,
    /// Position of the stack centre where the load meets its end stop, m (None: the tube's
    /// far end, `tube.length_m`). The stroke ends there unless `run_out` is set.
    pub stop_position_m: Option<f64>,
    /// Keep simulating past the stop until the stack centre has passed the far end of the tube
    /// by one stack length (the run-out of a stack that leaves the tube); the summary's
    /// landing and in-stroke figures still refer to the stop.
    pub run_out: bool,
}

impl Default for StrokeOptions {
    fn default() -> Self {
        Self {
            start_position_m: 0.0,
            start_speed_m_per_s: 0.0,
            max_time_s: 60.0,
            fidelity: Fidelity::Auto,
            samples: 200,
            ring_width_m: None,
            radial_layers: None,
            stop_position_m: None,
            run_out: false,
        }
    }
}

impl StrokeOptions {
    /// The stop position for `tube_length_m`: the one given, or the tube's far end.
    pub fn stop_for(&self, tube_length_m: f64) -> f64 {
        self.stop_position_m.unwrap_or(tube_length_m)
    }
}

/// Why a stroke ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
#[serde(rename_all = "snake_case")]
pub enum StrokeEnd {
    /// The stack centre reached the stop position (the load met its end stop).
    ReachedStop,
    /// Run-out requested: the stack centre passed the far end by one stack length.
    PassedTube,
    /// The stack stopped (friction, uphill, or no drive).
    Stopped,
    /// `max_time_s` was reached.
    TimeLimit,
}

/// Scalar results of a stroke.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
pub struct StrokeSummary {
    /// Time at which the stack centre reaches the far end (`tube.length_m`), s; None if never.
    pub exit_time_s: Option<f64>,
    /// Speed at that moment, m/s; None if never.
    pub exit_speed_m_per_s: Option<f64>,
    /// Position of the stack centre at the end stop, m.
    pub stop_position_m: f64,
    /// Time at which the stack centre reaches the stop (the stroke time), s; None if never.
    pub stroke_time_s: Option<f64>,
    /// Speed at the stop (the landing speed), m/s; None if the stack never gets there.
    pub landing_speed_m_per_s: Option<f64>,
    /// Largest speed between the entry (or the start, when it is inside the tube) and the
    /// stop, m/s.
    pub max_speed_m_per_s: f64,
    /// Largest deceleration (braking beyond the driving force) between the entry and the
    /// stop, m/s^2.
    pub max_deceleration_m_per_s2: f64,
    /// Largest speed before the stack centre reaches the entry (the fall or run-up to the
    /// tube), m/s; None when the start is inside the tube.
    pub max_speed_before_entry_m_per_s: Option<f64>,
    /// Largest braking force, N.
    pub max_braking_force_n: f64,
    /// Energy dissipated in the tube, J.
    pub heat_j: f64,
    /// Adiabatic temperature rise of the swept tube, K; None when the tube's heat capacity is unknown.
    pub tube_temperature_rise_k: Option<f64>,
    /// Relative imbalance of the energy ledger (work in vs kinetic + heat + magnetic + friction).
    pub energy_balance_error: f64,
    /// Why the run ended.
    pub end_reason: StrokeEnd,
    /// Simulated time at the end, s.
    pub end_time_s: f64,
    /// Position of the stack centre at the end, m.
    pub end_position_m: f64,
    /// Speed at the end, m/s.
    pub end_speed_m_per_s: f64,
}

/// Equal-length series, downsampled to the requested number of samples.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
pub struct StrokeSeries {
    /// Time, s.
    pub time_s: Vec<f64>,
    /// Stack centre position, m.
    pub position_m: Vec<f64>,
    /// Speed, m/s.
    pub speed_m_per_s: Vec<f64>,
    /// Braking force (positive opposes motion), N.
    pub force_n: Vec<f64>,
    /// Power dissipated in the tube, W.
    pub power_w: Vec<f64>,
}

/// A simulated stroke.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
pub struct Stroke {
    /// Scalar results.
    pub summary: StrokeSummary,
    /// Time series.
    pub series: StrokeSeries,
    /// Cautions, the standing safety caution first.
    pub cautions: Vec<Caution>,
    /// Method and resolution.
    pub model: ModelInfo,
}
