//! Worst-case bands from manufacturing tolerances by corner evaluation.
//!
//! Each tolerance moves one quantity to the low or the high end of its band: remanence and
//! conductivity by a fraction, magnet outer diameter, tube bore and wall by a length. The
//! metrics are evaluated at every corner of that box (2^k designs for k tolerances given,
//! k <= 5) and the band is the smallest and largest value seen. For the smooth, monotone
//! dependences of braking on these quantities the extremes lie at corners (common practice
//! in tolerance stack-up; it is exact for monotone responses). A corner that is not a valid
//! design (a magnet that no longer fits the bore) is reported, not skipped silently.

use crate::jobs::metrics::{Metric, evaluate};
use crate::records::design::Design;
use crate::records::error::ModelError;
use crate::records::limits::Limits;
use crate::records::spec::DesignSpec;
use crate::records::stroke::StrokeOptions;
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;

/// Symmetric tolerances (plus or minus). Absent or zero entries are not varied.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
#[serde(deny_unknown_fields)]
pub struct Tolerances {
    /// Relative tolerance of remanence (e.g. 0.02 for +-2 %).
    #[serde(default)]
    #[cfg_attr(feature = "schema", schema(minimum = 0.0, maximum = 0.5))]
    pub remanence_fraction: Option<f64>,
    /// Relative tolerance of tube conductivity (e.g. 0.05 for +-5 %, temper spread).
    #[serde(default)]
    #[cfg_attr(feature = "schema", schema(minimum = 0.0, maximum = 0.5))]
    pub conductivity_fraction: Option<f64>,
    /// Tolerance of the magnet outer diameter, m.
    #[serde(default)]
    #[cfg_attr(feature = "schema", schema(minimum = 0.0, maximum = 0.01))]
    pub magnet_outer_diameter_m: Option<f64>,
    /// Tolerance of the tube bore, m.
    #[serde(default)]
    #[cfg_attr(feature = "schema", schema(minimum = 0.0, maximum = 0.01))]
    pub tube_inner_diameter_m: Option<f64>,
    /// Tolerance of the wall thickness, m.
    #[serde(default)]
    #[cfg_attr(feature = "schema", schema(minimum = 0.0, maximum = 0.01))]
    pub wall_thickness_m: Option<f64>,
}

/// Lowest and highest value of one metric over the corners.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
pub struct Band {
    /// Lowest value, or null when some corner has no value (e.g. runaway).
    pub min: Option<f64>,
    /// Highest value, or null when some corner has no value.
    pub max: Option<f64>,
}

/// Bands of every metric, and the corners that failed.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
pub struct ToleranceBands {
    /// Band per metric name.
    pub bands: BTreeMap<String, Band>,
    /// Corners evaluated.
    pub corners: usize,
    /// Corners that are not valid designs or failed, with the reason.
    pub failed_corners: Vec<String>,
}

impl Tolerances {
    /// Validates ranges, naming fields under `at` (e.g. `tolerances`).
    pub fn check(&self, at: &str) -> Result<(), ModelError> {
        let fields = [
            ("remanence_fraction", self.remanence_fraction, 0.5),
            ("conductivity_fraction", self.conductivity_fraction, 0.5),
            (
                "magnet_outer_diameter_m",
                self.magnet_outer_diameter_m,
                0.01,
            ),
            ("tube_inner_diameter_m", self.tube_inner_diameter_m, 0.01),
            ("wall_thickness_m", self.wall_thickness_m, 0.01),
        ];
        for (name, v, max) in fields {
            if let Some(v) = v
                && !(v.is_finite() && (0.0..=max).contains(&v))
            {
                return Err(ModelError::field(
                    format!("{at}.{name}"),
                    format!("must be between 0 and {max}"),
                ));
            }
        }
        Ok(())
    }

    /// How many tolerances are given (non-zero): the corners are 2^this.
    pub fn active_count(&self) -> usize {
        self.active().len()
    }

    fn active(&self) -> Vec<(usize, f64)> {
        [
            self.remanence_fraction,
            self.conductivity_fraction,
            self.magnet_outer_diameter_m,
            self.tube_inner_diameter_m,
            self.wall_thickness_m,
        ]
        .iter()
        .enumerate()
        .filter_map(|(i, v)| v.filter(|x| *x > 0.0).map(|x| (i, x)))
        .collect()
    }

    /// The corner designs: every combination of low and high ends.
    pub fn corners(&self, spec: &DesignSpec) -> Vec<(String, Result<Design, ModelError>)> {
        let active = self.active();
        let names = [
            "remanence",
            "conductivity",
            "magnet_diameter",
            "bore",
            "wall",
        ];
        (0..1usize << active.len())
            .map(|mask| {
                let mut s = spec.clone();
                let mut label = Vec::new();
                let mut factors = (1.0, 1.0);
                for (bit, &(which, tol)) in active.iter().enumerate() {
                    let sign = if mask >> bit & 1 == 1 { 1.0 } else { -1.0 };
                    label.push(format!(
                        "{}{}",
                        names[which],
                        if sign > 0.0 { "+" } else { "-" }
                    ));
                    match which {
                        0 => factors.0 = 1.0 + sign * tol,
                        1 => factors.1 = 1.0 + sign * tol,
                        2 => s.magnets.outer_diameter_m += sign * tol,
                        3 => s.tube.inner_diameter_m += sign * tol,
                        _ => s.tube.wall_thickness_m += sign * tol,
                    }
                }
                let design = Design::from_spec(&s).map(|mut d| {
                    d.magnets.remanence_20c_t *= factors.0;
                    d.magnets.remanence_t *= factors.0;
                    d.tube = d.tube.with_conductivity_scaled(factors.1);
                    d
                });
                (label.join(" "), design)
            })
            .collect()
    }
}

/// Evaluates `metrics` at every corner and returns the bands.
pub fn bands(
    spec: &DesignSpec,
    tolerances: &Tolerances,
    metrics: &[Metric],
    stroke: &StrokeOptions,
    limits: &Limits,
) -> Result<ToleranceBands, ModelError> {
    tolerances.check("tolerances")?;
    let corners = tolerances.corners(spec);
    let mut bands: BTreeMap<String, (Option<f64>, Option<f64>, bool)> = BTreeMap::new();
    let mut failed = Vec::new();
    for (label, design) in &corners {
        limits.cancel.check()?;
        let values = match design {
            Ok(d) => evaluate(d, metrics, stroke, limits, None),
            Err(e) => Err(e.clone()),
        };
        match values {
            Ok(v) => {
                for (m, x) in metrics.iter().zip(v) {
                    let e = bands
                        .entry(m.name().to_string())
                        .or_insert((None, None, false));
                    match x {
                        Some(x) => {
                            e.0 = Some(e.0.map_or(x, |y: f64| y.min(x)));
                            e.1 = Some(e.1.map_or(x, |y: f64| y.max(x)));
                        }
                        None => e.2 = true,
                    }
                }
            }
            Err(ModelError::Cancelled) => return Err(ModelError::Cancelled),
            Err(e) => failed.push(format!("{label}: {e}")),
        }
    }
    Ok(ToleranceBands {
        bands: bands
            .into_iter()
            .map(|(k, (lo, hi, missing))| {
                // A corner without a value (runaway) makes the band open-ended.
                (
                    k,
                    if missing {
                        Band { min: lo, max: None }
                    } else {
                        Band { min: lo, max: hi }
                    },
                )
            })
            .collect(),
        corners: corners.len(),
        failed_corners: failed,
    })
}
