//! Inputs and results of a stroke simulation (the solver is in [`crate::solvers::transient`]).

use crate::records::caution::Caution;
use crate::records::error::{FieldError, ModelError};
use crate::records::forcecurve::check_radial_layers;
use crate::records::limits::Limits;
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

/// Bound on the magnitude of the start and stop positions, m (five lengths of the longest
/// tube the design bounds admit).
pub const MAX_POSITION_M: f64 = 100.0;
/// Largest start speed, m/s (above any speed a passive brake meets; common practice).
pub const MAX_START_SPEED_M_PER_S: f64 = 1000.0;
/// Largest axial ring width override, m (five times the largest sensible bore radius).
pub const MAX_RING_WIDTH_M: f64 = 0.1;

/// Adds a problem at `path` unless `ok` holds for a finite `value`.
fn within(
    errs: &mut Vec<FieldError>,
    path: &str,
    value: f64,
    ok: bool,
    words: impl FnOnce() -> String,
) {
    if !(value.is_finite() && ok) {
        errs.push(FieldError::new(path, words()));
    }
}

impl StrokeOptions {
    /// These options, checked once, at the edge, with the request paths of `/v1/simulate`
    /// (`start.position_m`, `start.speed_m_per_s`, `max_time_s`, `stop_position_m`,
    /// `samples`, `resolution.ring_width_m`, `resolution.radial_layers`), which `/v1/sweep`,
    /// `/v1/size` and `/v1/select` share: the start within +-[`MAX_POSITION_M`] and its speed
    /// from 0 to [`MAX_START_SPEED_M_PER_S`], a positive time, a stop ahead of the start, at
    /// least two samples, a ring width up to [`MAX_RING_WIDTH_M`], a layer count within the
    /// limits; then the time and the samples against `limits`.
    ///
    /// # Errors
    /// [`ModelError::Invalid`] naming every faulty field; [`ModelError::TooLarge`] naming
    /// `max_time_s` or `samples` when one exceeds its limit.
    pub fn checked(self, limits: &Limits) -> Result<Self, ModelError> {
        let mut errs = Vec::new();
        let p = self.start_position_m;
        within(
            &mut errs,
            "start.position_m",
            p,
            p.abs() <= MAX_POSITION_M,
            || format!("must be between -{MAX_POSITION_M} and {MAX_POSITION_M} m"),
        );
        let v = self.start_speed_m_per_s;
        within(
            &mut errs,
            "start.speed_m_per_s",
            v,
            (0.0..=MAX_START_SPEED_M_PER_S).contains(&v),
            || format!("must be between 0 and {MAX_START_SPEED_M_PER_S} m/s"),
        );
        let t = self.max_time_s;
        within(&mut errs, "max_time_s", t, t > 0.0, || {
            "must be greater than 0 s".to_string()
        });
        if let Some(x) = self.stop_position_m {
            within(
                &mut errs,
                "stop_position_m",
                x,
                x.abs() <= MAX_POSITION_M && x > p,
                || {
                    format!(
                        "must lie ahead of the start position ({p} m), between -{MAX_POSITION_M} \
                         and {MAX_POSITION_M} m"
                    )
                },
            );
        }
        if self.samples < 2 {
            errs.push(FieldError::new(
                "samples",
                "must be at least 2 (the first and the last point)",
            ));
        }
        if let Some(w) = self.ring_width_m {
            within(
                &mut errs,
                "resolution.ring_width_m",
                w,
                w > 0.0 && w <= MAX_RING_WIDTH_M,
                || format!("must be greater than 0 and at most {MAX_RING_WIDTH_M} m"),
            );
        }
        let layers = self
            .radial_layers
            .map(|n| u32::try_from(n).unwrap_or(u32::MAX));
        check_radial_layers("resolution.radial_layers", layers, limits, &mut errs);
        if !errs.is_empty() {
            return Err(ModelError::Invalid(errs));
        }
        if t > limits.max_time_s {
            return Err(ModelError::TooLarge {
                path: "max_time_s".into(),
                message: format!(
                    "{t} s of simulated time requested, above the service limit of {} s",
                    limits.max_time_s
                ),
            });
        }
        if self.samples > limits.max_samples {
            return Err(ModelError::TooLarge {
                path: "samples".into(),
                message: format!(
                    "{} samples requested, above the service limit of {}",
                    self.samples, limits.max_samples
                ),
            });
        }
        Ok(self)
    }

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
