//! `POST /v1/size`: the smallest value of one design field that meets every target with a
//! safety factor, at the worse of the cold and the hot condition.
//!
//! The request is validated here, once, with every problem reported together: the base design
//! by the model (problems of the sized field are left out, since the search replaces its
//! value), the range, the safety factor, the hot temperature, the targets, the tolerances and
//! the stroke settings by this module. The search itself is the model's
//! (`ringdrag_model::jobs::sizing::size`): it samples the range, checks that meeting the targets
//! switches once, and bisects. When `tolerances` are given, the worst-case bands of the
//! metrics are evaluated at the sized design, hot (`ringdrag_model::jobs::tolerance::bands`).

use crate::api::report::{CautionDetail, FiniteCheck, ModelBlock, by_name, cautions, field_number};
use crate::api::simulate::{StartState, stroke_options};
use crate::api::sweep::check_base_design;
use crate::extract::ApiJson;
use crate::negotiate::{self, Media};
use crate::problem::{ApiError, FieldProblem, Problem};
use crate::state::AppState;
use axum::Json;
use axum::extract::State;
use axum::http::HeaderMap;
use axum::response::{IntoResponse, Response};
use ringdrag_model::jobs::metrics::Metric;
use ringdrag_model::jobs::sizing::{self, Governing, Margins, Seek, SizeResult, SizeTarget};
use ringdrag_model::jobs::tolerance::{self, ToleranceBands, Tolerances};
use ringdrag_model::records::report::Fidelity;
use ringdrag_model::{DesignField, DesignSpec, Limits, ModelError, StrokeOptions};
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;
use std::sync::Arc;
use utoipa::ToSchema;

use ringdrag_model::jobs::targets::{HOT_TEMPERATURE_RANGE_C, SAFETY_FACTOR_RANGE};

/// The field to size and the range to search.
#[derive(Debug, Clone, Deserialize, ToSchema)]
#[serde(deny_unknown_fields)]
pub struct SizeVary {
    /// Dotted path of a numeric design field, e.g. `tube.wall_thickness_m` (a leading
    /// `design.` is allowed). Integer fields (`magnets.count`) size to whole numbers.
    pub path: String,
    /// Smallest value allowed, in the field's unit.
    pub min: f64,
    /// Largest value allowed, in the field's unit; greater than `min`. For integer fields
    /// both ends must be whole numbers.
    pub max: f64,
    /// `smallest` (default): the smallest value that meets every target (a wall, a magnet
    /// count, a tube length). `largest`: the largest value that still meets every target (the
    /// rated payload `load.payload_mass_kg`, the steepest incline `load.incline_deg`, the
    /// longest stroke `tube.length_m`).
    #[serde(default)]
    pub seek: Seek,
}

fn sixty() -> f64 {
    60.0
}

/// Request of `POST /v1/size`.
#[derive(Debug, Clone, Deserialize, ToSchema)]
#[serde(deny_unknown_fields)]
pub struct SizeRequest {
    /// The design to size: magnets, tube and load; the sized field's value in it is ignored.
    pub design: DesignSpec,
    /// The field to size and its range.
    pub vary: SizeVary,
    /// Targets the sized design must meet, at least one.
    pub target: SizeTarget,
    /// Safety factor applied in the safe direction (speed and time limits divided by it, a
    /// minimum time multiplied by it), from 1 to 10.
    #[schema(minimum = 1.0, maximum = 10.0)]
    pub safety_factor: f64,
    /// Hot condition of tube and magnets, C: resistivity rises and remanence falls, so braking
    /// weakens. Every target is checked both at the design's own temperatures (cold) and here.
    /// Give the design's temperature to size cold only.
    #[schema(minimum = -60.0, maximum = 400.0)]
    pub hot_temperature_c: f64,
    /// Start state of the strokes of time and deceleration targets; default: the stack centre
    /// at the entry end, at rest.
    #[serde(default)]
    pub start: StartState,
    /// Longest simulated time of each stroke, s; at most the service's
    /// `RINGDRAG_MAX_SIM_TIME_S` (default 3600).
    #[serde(default = "sixty")]
    #[schema(exclusive_minimum = 0.0, maximum = 3600.0, default = 60.0)]
    pub max_time_s: f64,
    /// Fidelity of the strokes of time and deceleration targets (as in `/v1/simulate`).
    #[serde(default)]
    pub fidelity: Fidelity,
    /// Manufacturing tolerances; when given, every target is also checked at every tolerance
    /// corner, cold and hot, and feasibility is decided at the worst of them (for a speed
    /// limit: the worst corner, hot). The response then carries `margins_worst_corner`,
    /// `governing` names the corner, and `tolerance_bands` gives the bands of the metrics at
    /// the sized design, hot.
    #[serde(default)]
    #[schema(value_type = Tolerances)]
    pub tolerances: Option<Tolerances>,
    /// Where the load meets its end stop in the strokes of stroke metrics and targets: the
    /// position of the stack centre, m; default: the tube's far end (`tube.length_m`, which
    /// follows a varied tube length).
    #[serde(default)]
    #[schema(minimum = -100.0, maximum = 100.0)]
    pub stop_position_m: Option<f64>,
}

/// A validated sizing job.
#[derive(Debug)]
pub struct ValidSize {
    job: sizing::SizeRequest,
    hot_temperature_c: f64,
    tolerances: Option<Tolerances>,
}

/// Adds the field problems of a model validation error to `errors`.
fn push_model_error(err: ModelError, errors: &mut Vec<FieldProblem>) {
    match ApiError::from(err) {
        ApiError::Invalid(found) | ApiError::JobTooLarge(found) => errors.extend(found),
        other => errors.push(FieldProblem {
            path: String::new(),
            message: other.to_string(),
        }),
    }
}

impl SizeRequest {
    /// The validated job, or every problem found.
    ///
    /// # Errors
    ///
    /// A 422 problem listing every invalid field (design, sized field and range, targets,
    /// tolerances), or a 413 when the search is larger than `limits` allow.
    pub fn validate(self, limits: &Limits) -> Result<ValidSize, ApiError> {
        let mut errors = Vec::new();
        let mut too_large = Vec::new();
        check_base_design(&self.design, &[self.vary.path.as_str()], &mut errors);
        let field = match DesignField::parse(&self.vary.path, "vary.path") {
            Ok(f) => Some(f),
            Err(e) => {
                push_model_error(e, &mut errors);
                None
            }
        };
        if self.vary.min.partial_cmp(&self.vary.max) != Some(std::cmp::Ordering::Less) {
            errors.push(FieldProblem {
                path: "vary.max".into(),
                message: format!("must be greater than vary.min ({})", self.vary.min),
            });
        }
        let (sf_lo, sf_hi) = SAFETY_FACTOR_RANGE;
        if !(sf_lo..=sf_hi).contains(&self.safety_factor) {
            errors.push(FieldProblem {
                path: "safety_factor".into(),
                message: format!("must be between {sf_lo} and {sf_hi}"),
            });
        }
        let (t_lo, t_hi) = HOT_TEMPERATURE_RANGE_C;
        if !(t_lo..=t_hi).contains(&self.hot_temperature_c) {
            errors.push(FieldProblem {
                path: "hot_temperature_c".into(),
                message: format!("must be between {t_lo} and {t_hi} C"),
            });
        }
        if let Err(e) = self.target.check("target") {
            push_model_error(e, &mut errors);
        }
        if let Some(f) = field {
            for (at, v) in [("vary.min", self.vary.min), ("vary.max", self.vary.max)] {
                if v.is_finite()
                    && let Err(e) = f.check_whole(v, at, "")
                {
                    push_model_error(e, &mut errors);
                }
            }
        }
        if let Some(t) = &self.tolerances
            && let Err(e) = t.check("tolerances")
        {
            push_model_error(e, &mut errors);
        }
        let stroke = stroke_options(
            StrokeOptions {
                start_position_m: self.start.position_m,
                start_speed_m_per_s: self.start.speed_m_per_s,
                max_time_s: self.max_time_s,
                fidelity: self.fidelity,
                samples: 2,
                ring_width_m: None,
                radial_layers: None,
                stop_position_m: self.stop_position_m,
                run_out: false,
            },
            limits,
            &mut errors,
            &mut too_large,
        );
        let Some(field) = field.filter(|_| errors.is_empty()) else {
            return Err(ApiError::Invalid(errors));
        };
        if !too_large.is_empty() {
            return Err(ApiError::JobTooLarge(too_large));
        }
        let stroke = stroke.ok_or_else(|| ApiError::Internal("stroke options lost".into()))?;
        Ok(ValidSize {
            job: sizing::SizeRequest {
                base: self.design,
                field,
                min: self.vary.min,
                max: self.vary.max,
                target: self.target,
                safety_factor: self.safety_factor,
                hot_temperature_c: Some(self.hot_temperature_c),
                stroke,
                seek: self.vary.seek,
                tolerances: self.tolerances.clone(),
            },
            hot_temperature_c: self.hot_temperature_c,
            tolerances: self.tolerances,
        })
    }
}

/// Metrics of the sized design at both temperatures.
#[derive(Debug, Clone, PartialEq, Serialize, ToSchema)]
pub struct AchievedDto {
    /// At the design's own temperatures, by metric name; null where a metric does not exist
    /// (no terminal speed when the brake cannot hold the load, no exit time).
    pub cold: BTreeMap<String, Option<f64>>,
    /// At `hot_temperature_c`, by metric name.
    pub hot: BTreeMap<String, Option<f64>>,
}

/// Response of `POST /v1/size`.
#[derive(Debug, Clone, PartialEq, Serialize, ToSchema)]
pub struct SizeResponse {
    /// Whether some value in the range meets every target with the safety factor at every
    /// condition: cold and hot, and with `tolerances` at every tolerance corner (feasibility
    /// is decided at the worst corner, hot, for a speed limit).
    pub feasible: bool,
    /// Which end was sought: `smallest` or `largest`.
    pub seek: Seek,
    /// The smallest (or, seeking `largest`, the largest) such value, in the field's unit; a
    /// whole number for integer fields (`magnets.count`); null when infeasible.
    #[schema(value_type = Option<f64>)]
    pub value: Option<serde_json::Number>,
    /// The value reported in `design` and `achieved`: `value` when feasible, otherwise the
    /// value in the range that comes closest; a whole number for integer fields.
    #[schema(value_type = f64)]
    pub best_value: serde_json::Number,
    /// The design with the field set to `best_value` (a complete design object, ready for
    /// `/v1/force-curve` or `/v1/simulate`).
    pub design: DesignSpec,
    /// The metrics at `best_value`, cold and hot.
    pub achieved: AchievedDto,
    /// Achieved safety factor: the smallest over the targets of target / achieved (maximum
    /// targets) or achieved / target (minimum targets), at the worse temperature. It equals
    /// the requested safety factor at a tight optimum and is below 1 where a target is missed;
    /// null when unbounded (every target met whatever the size, e.g. a minimum time on a
    /// stroke that never exits).
    pub margin: Option<f64>,
    /// The same ratio per target, by target name, at the target's worst condition; null when
    /// unbounded.
    pub margins: BTreeMap<String, Option<f64>>,
    /// The ratio per target over the nominal design (no tolerances), cold and hot.
    pub margins_nominal: BTreeMap<String, Option<f64>>,
    /// The ratio per target over the tolerance corners, cold and hot; present when
    /// `tolerances` were given.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub margins_worst_corner: Option<BTreeMap<String, Option<f64>>>,
    /// Which condition governs each target: the corner (`nominal` or the tolerance corner,
    /// e.g. `remanence- conductivity- wall-`) and the temperature (`cold` or `hot`).
    pub governing: BTreeMap<String, Governing>,
    /// Tolerance corners of the reported design that are not valid designs (they count as
    /// missing every target), with the reason; empty when none.
    pub failed_corners: Vec<String>,
    /// Designs evaluated during the search (each cold and hot).
    pub evaluations: u64,
    /// Worst-case bands of the metrics over the tolerance corners, at the sized design, hot;
    /// present when `tolerances` were given.
    #[serde(skip_serializing_if = "Option::is_none")]
    #[schema(value_type = ToleranceBands)]
    pub tolerance_bands: Option<ToleranceBands>,
    /// Cautions as text, the standing safety caution first.
    pub cautions: Vec<String>,
    /// The same cautions with their kinds.
    pub caution_details: Vec<CautionDetail>,
    /// Method and fidelity; each evaluation chooses its own discretisation.
    pub model: ModelBlock,
}

fn finite_map(map: BTreeMap<String, Option<f64>>) -> BTreeMap<String, Option<f64>> {
    map.into_iter()
        .map(|(k, v)| (k, v.filter(|x| x.is_finite())))
        .collect()
}

impl SizeResponse {
    /// The response record of a model result; refuses non-finite numbers where a number is
    /// due, and writes unbounded margins as null.
    ///
    /// # Errors
    ///
    /// A 500 problem naming every output field whose value is not finite (the model never
    /// returns one on purpose).
    pub fn from_model(
        result: SizeResult,
        field: DesignField,
        tolerance_bands: Option<ToleranceBands>,
    ) -> Result<Self, ApiError> {
        let mut check = FiniteCheck::default();
        let (cautions, caution_details) = cautions(result.cautions);
        let integer = field.is_whole();
        let margin_map = |m: Margins| -> BTreeMap<String, Option<f64>> {
            m.into_iter()
                .map(|(k, v)| (k.to_string(), Some(v).filter(|m| m.is_finite())))
                .collect()
        };
        let best_value = field_number(check.num("best_value", result.best_value), integer)
            .unwrap_or_else(|| serde_json::Number::from(0));
        let response = Self {
            feasible: result.feasible,
            seek: result.seek,
            value: check
                .opt("value", result.value)
                .and_then(|v| field_number(v, integer)),
            best_value,
            margins_nominal: margin_map(result.margins_nominal),
            margins_worst_corner: result.margins_worst_corner.map(margin_map),
            governing: by_name(result.governing),
            failed_corners: result.failed_corners,
            design: result.design,
            achieved: AchievedDto {
                cold: finite_map(by_name(result.achieved_cold)),
                hot: finite_map(by_name(result.achieved_hot)),
            },
            margin: Some(result.margin).filter(|m| m.is_finite()),
            margins: margin_map(result.margins),
            evaluations: result.evaluations as u64,
            tolerance_bands,
            cautions,
            caution_details,
            model: ModelBlock::from_model(result.model, &mut check),
        };
        check.finish(response)
    }
}

/// Sizes one design field to meet targets with a safety factor, cold and hot.
#[utoipa::path(
    post,
    path = "/v1/size",
    tag = "jobs",
    operation_id = "size_design",
    request_body(
        content = SizeRequest,
        content_type = "application/json",
        description = "The design, the field and range to search, the targets, the safety \
            factor, the hot temperature and, optionally, stroke settings and tolerances."
    ),
    responses(
        (status = 200, description = "The sized value (or, when infeasible, the closest), the \
            sized design, the metrics cold and hot, the achieved safety factor and, with \
            tolerances, the worst-case bands.", body = SizeResponse),
        (status = 400, description = "The body is not well-formed JSON.", body = Problem,
            content_type = "application/problem+json"),
        (status = 406, description = "The Accept header does not allow application/json.",
            body = Problem, content_type = "application/problem+json"),
        (status = 413, description = "The body exceeds the service's size limit.", body = Problem,
            content_type = "application/problem+json"),
        (status = 415, description = "The body is not declared as application/json.",
            body = Problem, content_type = "application/problem+json"),
        (status = 422, description = "Invalid fields (an unknown path, an empty range, no \
            target, a safety factor out of range...), or a job above the service limits; \
            `errors` names each field.", body = Problem,
            content_type = "application/problem+json"),
        (status = 503, description = "Overloaded or timed out; retry after `Retry-After` \
            seconds.", body = Problem, content_type = "application/problem+json",
            headers(("Retry-After" = u64, description = "Seconds to wait before retrying."))),
    )
)]
pub(crate) async fn size_design(
    State(state): State<AppState>,
    headers: HeaderMap,
    ApiJson(request): ApiJson<SizeRequest>,
) -> Result<Response, ApiError> {
    negotiate::choose(&headers, &[Media::Json])?;
    let valid = request.validate(&state.limits)?;
    let field = valid.job.field;
    let limits = Arc::clone(&state.limits);
    // The runner answers 503 once the request deadline passes and raises the job's token; the
    // search, and the stroke or solver inside it, then stop at their next check instead of
    // holding the slot to the end.
    let (result, bands) = state
        .jobs
        .run("size", move |cancel| {
            let limits = limits.with_cancel(cancel);
            let result = sizing::size(&valid.job, &limits)?;
            let bands = match &valid.tolerances {
                Some(tolerances) => {
                    let mut hot = result.design.clone();
                    hot.tube.temperature_c = valid.hot_temperature_c;
                    hot.magnets.temperature_c = Some(valid.hot_temperature_c);
                    let metrics: Vec<Metric> = result.achieved_hot.keys().copied().collect();
                    Some(tolerance::bands(
                        &hot,
                        tolerances,
                        &metrics,
                        &valid.job.stroke,
                        &limits,
                    )?)
                }
                None => None,
            };
            Ok((result, bands))
        })
        .await?;
    SizeResponse::from_model(result, field, bands).map(|r| Json(r).into_response())
}
