//! Blocks shared by every computing response: the cautions and the `model` block, plus the
//! guard that keeps non-finite numbers out of responses.
//!
//! serde_json writes NaN and infinities as `null`, which a client would read as "not
//! applicable". Every number of a response passes through [`FiniteCheck`]; a non-finite one
//! turns the answer into a `not-computable` problem that names the output field.

use crate::problem::ApiError;
use ringdrag_model::records::report::{Fidelity, ModelInfo};
use ringdrag_model::{Caution, CautionKind};
use serde::Serialize;
use std::collections::BTreeMap;
use utoipa::ToSchema;

/// One caution with its kind, for programs that filter or highlight cautions.
#[derive(Debug, Clone, PartialEq, Serialize, ToSchema)]
pub struct CautionDetail {
    /// What the caution is about.
    pub kind: CautionKind,
    /// The caution in words (the same text as in `cautions`).
    pub message: String,
}

/// How the problem was discretised; fields that do not apply to the method are absent.
#[derive(Debug, Clone, Default, PartialEq, Serialize, ToSchema)]
pub struct DiscretisationInfo {
    /// Radial layers across the tube wall.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub radial_layers: Option<u64>,
    /// Axial rings along the tube.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub axial_rings: Option<u64>,
    /// Axial ring width, m.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub ring_width_m: Option<f64>,
    /// Wavenumber nodes of the spectral integral.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub wavenumbers: Option<u64>,
    /// Largest wavenumber integrated, 1/m.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub max_wavenumber_per_m: Option<f64>,
    /// Time step, s.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub time_step_s: Option<f64>,
    /// Time steps taken.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub steps: Option<u64>,
    /// Axial reach of the mutual coupling kept between rings, m.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub coupling_reach_m: Option<f64>,
}

/// The `model` block: which method produced the numbers, at what fidelity and resolution.
#[derive(Debug, Clone, PartialEq, Serialize, ToSchema)]
pub struct ModelBlock {
    /// Version of the model that computed the result.
    pub version: String,
    /// Method that produced the numbers (`spectral` for force curves, a ring-circuit method
    /// for strokes).
    pub method: String,
    /// Fidelity used: `quasi_static` (inductance neglected) or `inductive` (the eddy
    /// currents' own field included).
    pub fidelity: Fidelity,
    /// The discretisation used.
    pub discretisation: DiscretisationInfo,
    /// Estimated relative numerical error of the headline numbers (the change between two
    /// resolutions); null when not estimated.
    pub error_estimate_relative: Option<f64>,
}

fn count(n: Option<usize>) -> Option<u64> {
    n.map(|n| n as u64)
}

impl ModelBlock {
    /// The block for a model result, every number checked.
    pub fn from_model(info: ModelInfo, check: &mut FiniteCheck) -> Self {
        let d = &info.discretisation;
        Self {
            version: info.version,
            method: info.method,
            fidelity: info.fidelity,
            discretisation: DiscretisationInfo {
                radial_layers: count(d.radial_layers),
                axial_rings: count(d.axial_rings),
                ring_width_m: check.opt("model.discretisation.ring_width_m", d.ring_width_m),
                wavenumbers: count(d.wavenumbers),
                max_wavenumber_per_m: check.opt(
                    "model.discretisation.max_wavenumber_per_m",
                    d.max_wavenumber_per_m,
                ),
                time_step_s: check.opt("model.discretisation.time_step_s", d.time_step_s),
                steps: count(d.steps),
                coupling_reach_m: check
                    .opt("model.discretisation.coupling_reach_m", d.coupling_reach_m),
            },
            error_estimate_relative: check.opt(
                "model.error_estimate_relative",
                info.error_estimate_relative,
            ),
        }
    }
}

/// The cautions of a result as the contract wants them: the standing safety caution first
/// (added if the model left it out), duplicates dropped; once as plain strings, once with
/// their kinds.
pub fn cautions(model_cautions: Vec<Caution>) -> (Vec<String>, Vec<CautionDetail>) {
    let standing = Caution::standing_safety();
    let mut ordered = vec![standing.clone()];
    for c in model_cautions {
        let duplicate = ordered.iter().any(|o| o.message == c.message);
        if !duplicate {
            ordered.push(c);
        }
    }
    let strings = ordered.iter().map(|c| c.message.clone()).collect();
    let details = ordered
        .into_iter()
        .map(|c| CautionDetail {
            kind: c.kind,
            message: c.message,
        })
        .collect();
    (strings, details)
}

/// A design field's value as JSON: a whole number for integer fields (`magnets.count`), so
/// that counts are reported as integers; None when not finite.
pub fn field_number(value: f64, integer: bool) -> Option<serde_json::Number> {
    if integer && value.fract() == 0.0 && value.abs() < 9.0e15 {
        Some(serde_json::Number::from(value as i64))
    } else {
        serde_json::Number::from_f64(value)
    }
}

/// A map keyed by a model name type (a metric, a target) as the contract writes it: keyed
/// by the names.
pub fn by_name<K: std::fmt::Display, V>(map: BTreeMap<K, V>) -> BTreeMap<String, V> {
    map.into_iter().map(|(k, v)| (k.to_string(), v)).collect()
}

/// Collects the names of output fields whose values are not finite.
#[derive(Debug, Default)]
pub struct FiniteCheck {
    bad: Vec<String>,
}

impl FiniteCheck {
    /// Checks one number.
    pub fn num(&mut self, path: &str, value: f64) -> f64 {
        if !value.is_finite() {
            self.bad.push(path.to_string());
        }
        value
    }

    /// Checks an optional number (`None` is fine: it is written as null on purpose).
    pub fn opt(&mut self, path: &str, value: Option<f64>) -> Option<f64> {
        value.map(|v| self.num(path, v))
    }

    /// Checks every number of a series, naming the first bad index.
    pub fn all(&mut self, path: &str, values: Vec<f64>) -> Vec<f64> {
        if let Some(i) = values.iter().position(|v| !v.is_finite()) {
            self.bad.push(format!("{path}[{i}]"));
        }
        values
    }

    /// `value` when every checked number was finite; otherwise a `not-computable` problem.
    ///
    /// # Errors
    ///
    /// A 500 problem naming every output field whose value is not finite.
    pub fn finish<T>(self, value: T) -> Result<T, ApiError> {
        if self.bad.is_empty() {
            Ok(value)
        } else {
            tracing::warn!(fields = ?self.bad, "model produced non-finite output");
            Err(ApiError::NotComputable(format!(
                "the model produced non-finite values for {}",
                self.bad.join(", ")
            )))
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn safety_caution_comes_first_once() {
        let other = Caution::new(CautionKind::Clearance, "tight");
        let (strings, details) = cautions(vec![other.clone(), Caution::standing_safety()]);
        assert_eq!(strings.len(), 2);
        assert_eq!(strings[0], Caution::standing_safety().message);
        assert_eq!(details[0].kind, CautionKind::Safety);
        assert_eq!(strings[1], "tight");
        let (strings, _) = cautions(Vec::new());
        assert_eq!(strings, vec![Caution::standing_safety().message]);
    }

    #[test]
    fn non_finite_numbers_are_refused_by_name() {
        let mut check = FiniteCheck::default();
        check.num("peak_force_n", 1.0);
        check.opt("terminal_speed_m_per_s", None);
        check.all("series.force_n", vec![0.0, f64::NAN]);
        check.num("damping_n_s_per_m", f64::INFINITY);
        match check.finish(()) {
            Err(ApiError::NotComputable(detail)) => {
                assert!(detail.contains("series.force_n[1]"), "{detail}");
                assert!(detail.contains("damping_n_s_per_m"), "{detail}");
                assert!(!detail.contains("peak_force_n"), "{detail}");
            }
            other => panic!("expected not-computable, got {other:?}"),
        }
    }
}
