//! Inputs and results of the steady force-speed curve in a long tube (solver in
//! [`crate::solvers::spectral`]).

use crate::records::caution::Caution;
use crate::records::error::{FieldError, ModelError};
use crate::records::limits::Limits;
use crate::records::report::ModelInfo;
use serde::Serialize;

/// Largest speed of a force curve, m/s (ten times the fastest critical speed of the designs
/// the bounds admit; common practice for a margin).
pub const MAX_SPEED_M_PER_S: f64 = 10_000.0;
/// Hard cap on radial layers across the wall, whatever the limits say (the layered solvers'
/// cost grows as the cube of the count; 32 resolves the skin depth of every admitted design at
/// its critical speed several times over).
pub const MAX_RADIAL_LAYERS: usize = 32;
/// Most faulty speeds named in one answer (the rest are alike).
const MAX_LISTED: usize = 10;

/// How a force curve is computed: checked once, by [`ForceCurveOptions::new`]; the solvers
/// trust it. The default (no speeds, no layer count) lets the solver choose both.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ForceCurveOptions {
    /// Speeds to evaluate, m/s; default: 40 log-spaced speeds bracketing the peak.
    pub(crate) speeds_m_per_s: Option<Vec<f64>>,
    /// Radial layer count override.
    pub(crate) radial_layers: Option<usize>,
}

impl ForceCurveOptions {
    /// Checks a force curve's options: at least one speed when a list is given, every speed
    /// finite and from 0 to [`MAX_SPEED_M_PER_S`], no more speeds than `limits.max_speeds`,
    /// and a layer count from 1 to `limits.max_radial_layers` (at most
    /// [`MAX_RADIAL_LAYERS`]). `layers_at` is the request path of the layer
    /// count.
    ///
    /// # Errors
    /// [`ModelError::Invalid`] naming every faulty field (speeds by index, at most ten);
    /// [`ModelError::TooLarge`] naming `speeds_m_per_s` when the list is longer than the
    /// limit.
    pub fn new(
        speeds_m_per_s: Option<Vec<f64>>,
        radial_layers: Option<u32>,
        layers_at: &str,
        limits: &Limits,
    ) -> Result<Self, ModelError> {
        let mut errs = Vec::new();
        if let Some(speeds) = &speeds_m_per_s {
            if speeds.is_empty() {
                errs.push(FieldError::new(
                    "speeds_m_per_s",
                    "give at least one speed, or omit the field for the default set",
                ));
            }
            let bad = speeds
                .iter()
                .enumerate()
                .filter(|(_, v)| !(v.is_finite() && (0.0..=MAX_SPEED_M_PER_S).contains(*v)))
                .take(MAX_LISTED);
            for (i, _) in bad {
                errs.push(FieldError::new(
                    format!("speeds_m_per_s[{i}]"),
                    format!("must be a speed from 0 to {MAX_SPEED_M_PER_S} m/s"),
                ));
            }
        }
        let radial_layers = check_radial_layers(layers_at, radial_layers, limits, &mut errs);
        if !errs.is_empty() {
            return Err(ModelError::Invalid(errs));
        }
        if let Some(speeds) = &speeds_m_per_s {
            Limits::check(
                "speeds_m_per_s",
                "number of speeds",
                speeds.len(),
                limits.max_speeds,
            )
            .map_err(|_| ModelError::TooLarge {
                path: "speeds_m_per_s".into(),
                message: format!(
                    "{} speeds requested, above the service limit of {}",
                    speeds.len(),
                    limits.max_speeds
                ),
            })?;
        }
        Ok(Self {
            speeds_m_per_s,
            radial_layers,
        })
    }

    /// The speeds asked, m/s (None: the solver's default set).
    pub fn speeds_m_per_s(&self) -> Option<&[f64]> {
        self.speeds_m_per_s.as_deref()
    }

    /// The layer count asked (None: chosen from the wall and the skin depth).
    pub fn radial_layers(&self) -> Option<usize> {
        self.radial_layers
    }
}

/// Checks a radial layer count at `path`: 1 to `limits.max_radial_layers`, at most
/// [`MAX_RADIAL_LAYERS`]; the count, or None (with the problem in `errs`
/// when it is out of range).
pub fn check_radial_layers(
    path: &str,
    layers: Option<u32>,
    limits: &Limits,
    errs: &mut Vec<FieldError>,
) -> Option<usize> {
    let layers = layers?;
    let max = limits.max_radial_layers.min(MAX_RADIAL_LAYERS);
    if layers == 0 || layers as usize > max {
        errs.push(FieldError::new(
            path,
            format!("must be between 1 and {max}"),
        ));
        None
    } else {
        Some(layers as usize)
    }
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
