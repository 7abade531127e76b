//! `POST /v1/force-curve`: the steady braking force against speed in a long tube.
//!
//! The request is validated here, once (the design by the model's `Design::from_spec`, the
//! speeds and the resolution by this module, the job size against the service limits); the
//! computation runs in the job runner; the result becomes the response record of the HTTP
//! contract, as JSON or, for `Accept: image/svg+xml`, as a plot ([`crate::plot`]). With
//! `tolerances`, the response also carries worst-case bands of the headline numbers over the
//! tolerance corners (`ringdrag_model::jobs::tolerance::bands`, at the model's default resolution).

use crate::api::report::{CautionDetail, FiniteCheck, ModelBlock, cautions};
use crate::extract::ApiJson;
use crate::negotiate::{self, Media};
use crate::plot::{self, PlotOptions};
use crate::problem::{ApiError, FieldProblem, Problem};
use crate::state::AppState;
use axum::Json;
use axum::extract::Query;
use axum::extract::State;
use axum::extract::rejection::QueryRejection;
use axum::http::HeaderMap;
use axum::response::{IntoResponse, Response};
use ringdrag_model::jobs::metrics::Metric;
use ringdrag_model::jobs::tolerance::{self, ToleranceBands, Tolerances};
use ringdrag_model::{
    Design, DesignSpec, ForceCurve, ForceCurveOptions, Limits, ModelError, StrokeOptions,
};
use serde::{Deserialize, Serialize};
use std::sync::Arc;
use utoipa::ToSchema;
use utoipa::openapi::schema::{ArrayBuilder, ObjectBuilder, Type};

pub use ringdrag_model::records::forcecurve::MAX_SPEED_M_PER_S;

/// Request of `POST /v1/force-curve`.
#[derive(Debug, Clone, Deserialize, ToSchema)]
#[serde(deny_unknown_fields)]
pub struct ForceCurveRequest {
    /// The design: magnets, tube and load.
    pub design: DesignSpec,
    /// Speeds to evaluate, m/s, each from 0 to 10000; at most the service's
    /// `RINGDRAG_MAX_SPEEDS` of them (default 2000). Omit for 40 log-spaced speeds over a
    /// range that brackets the peak.
    #[serde(default)]
    #[schema(schema_with = speeds_schema)]
    pub speeds_m_per_s: Option<Vec<f64>>,
    /// Resolution override; omit to let the model choose.
    #[serde(default)]
    pub resolution: ForceCurveResolution,
    /// Manufacturing tolerances; when given, the response carries `tolerance_bands`.
    #[serde(default)]
    #[schema(value_type = Tolerances)]
    pub tolerances: Option<Tolerances>,
}

/// Metrics banded when a force-curve request gives tolerances.
const BANDED_METRICS: [Metric; 4] = [
    Metric::Damping,
    Metric::PeakForce,
    Metric::CriticalSpeed,
    Metric::TerminalSpeed,
];

/// Resolution override of a force curve.
#[derive(Debug, Clone, Default, Deserialize, ToSchema)]
#[serde(deny_unknown_fields)]
pub struct ForceCurveResolution {
    /// Radial layers across the tube wall (default chosen from the wall and the skin depth).
    #[serde(default)]
    #[schema(minimum = 1, maximum = 32)]
    pub radial_layers: Option<u32>,
}

fn speeds_schema() -> ArrayBuilder {
    ArrayBuilder::new()
        .items(
            ObjectBuilder::new()
                .schema_type(Type::Number)
                .format(Some(utoipa::openapi::SchemaFormat::KnownFormat(
                    utoipa::openapi::KnownFormat::Double,
                )))
                .minimum(Some(0.0))
                .maximum(Some(MAX_SPEED_M_PER_S)),
        )
        .min_items(Some(1))
        .max_items(Some(Limits::default().max_speeds))
        .description(Some(
            "Speeds to evaluate, m/s, each from 0 to 10000; at most the \
             service's `RINGDRAG_MAX_SPEEDS` of them (default 2000). Omit for 40 log-spaced \
             speeds over a range that brackets the peak.",
        ))
}

/// Adds a model error to the request's problems: field problems to `errors`, a job above a
/// work limit to `too_large`.
pub(crate) fn push_model_error(
    err: ModelError,
    errors: &mut Vec<FieldProblem>,
    too_large: &mut Vec<FieldProblem>,
) {
    match ApiError::from(err) {
        ApiError::Invalid(found) => errors.extend(found),
        ApiError::JobTooLarge(found) => too_large.extend(found),
        other => errors.push(FieldProblem {
            path: String::new(),
            message: other.to_string(),
        }),
    }
}

/// Adds the model's validation of the design to `errors`; the design when it is valid.
pub(crate) fn check_design(spec: &DesignSpec, errors: &mut Vec<FieldProblem>) -> Option<Design> {
    match Design::from_spec(spec) {
        Ok(design) => Some(design),
        Err(err) => {
            match ApiError::from(err) {
                ApiError::Invalid(found) | ApiError::JobTooLarge(found) => errors.extend(found),
                other => errors.push(FieldProblem {
                    path: "design".to_string(),
                    message: other.to_string(),
                }),
            }
            None
        }
    }
}

impl ForceCurveRequest {
    /// The validated design and options, or every problem found.
    ///
    /// # Errors
    ///
    /// A 422 problem listing every invalid field of the design and the options, or a 413 when
    /// the curve is larger than `limits` allow.
    pub fn validate(self, limits: &Limits) -> Result<(Design, ForceCurveOptions), ApiError> {
        let mut errors = Vec::new();
        let design = check_design(&self.design, &mut errors);
        let mut too_large = Vec::new();
        let options = ForceCurveOptions::new(
            self.speeds_m_per_s,
            self.resolution.radial_layers,
            "resolution.radial_layers",
            limits,
        )
        .map_err(|e| push_model_error(e, &mut errors, &mut too_large))
        .ok();
        if let Some(t) = &self.tolerances
            && let Err(e) = t.check("tolerances")
        {
            match ApiError::from(e) {
                ApiError::Invalid(found) => errors.extend(found),
                other => errors.push(FieldProblem {
                    path: "tolerances".into(),
                    message: other.to_string(),
                }),
            }
        }
        if !errors.is_empty() {
            return Err(ApiError::Invalid(errors));
        }
        if !too_large.is_empty() {
            return Err(ApiError::JobTooLarge(too_large));
        }
        let design = design.ok_or_else(|| ApiError::Internal("design lost".into()))?;
        let options = options.ok_or_else(|| ApiError::Internal("options lost".into()))?;
        Ok((design, options))
    }
}

/// One point of the force-speed curve.
#[derive(Debug, Clone, PartialEq, Serialize, ToSchema)]
pub struct ForcePointDto {
    /// Speed, m/s.
    pub speed_m_per_s: f64,
    /// Braking force, N (positive opposes motion).
    pub force_n: f64,
}

/// Response of `POST /v1/force-curve`.
#[derive(Debug, Clone, PartialEq, Serialize, ToSchema)]
pub struct ForceCurveResponse {
    /// Braking force at each speed, in the order requested (or ascending for the default set).
    pub points: Vec<ForcePointDto>,
    /// Low-speed damping coefficient, the slope F/v of the curve at small speed, N s/m.
    pub damping_n_s_per_m: f64,
    /// Largest braking force over all speeds, N.
    pub peak_force_n: f64,
    /// Speed of the peak force, m/s; above it a faster load brakes less.
    pub critical_speed_m_per_s: f64,
    /// Speed at which braking balances the steady driving force of `load`, m/s; null when the
    /// driving force exceeds `peak_force_n` (the brake cannot hold the load; a caution says so)
    /// or when there is no driving force.
    pub terminal_speed_m_per_s: Option<f64>,
    /// Steady driving force of the load along travel (gravity plus applied force, less
    /// friction), N.
    pub drive_force_n: f64,
    /// Magnetic Reynolds number mu0 sigma v w (w the wall thickness) at the terminal speed, or
    /// at the critical speed when there is no terminal speed.
    pub magnetic_reynolds_number: f64,
    /// Thin-sheet characteristic speed 2 / (mu0 sigma w), m/s (Reitz, J. Appl. Phys. 41, 2067,
    /// 1970).
    pub characteristic_speed_m_per_s: f64,
    /// Cautions as text, the standing safety caution first.
    pub cautions: Vec<String>,
    /// The same cautions with their kinds.
    pub caution_details: Vec<CautionDetail>,
    /// Method, fidelity and discretisation used.
    pub model: ModelBlock,
    /// Worst-case bands of damping, peak force, critical speed and terminal speed over every
    /// corner of the tolerances (each tolerance at its low or high end), at the model's
    /// default resolution; present when `tolerances` were given.
    #[serde(skip_serializing_if = "Option::is_none")]
    #[schema(value_type = ToleranceBands)]
    pub tolerance_bands: Option<ToleranceBands>,
}

impl ForceCurveResponse {
    /// The response record of a model result; refuses non-finite numbers.
    ///
    /// # Errors
    ///
    /// A 500 problem naming every output field whose value is not finite (the model never
    /// returns one on purpose).
    pub fn from_model(curve: ForceCurve) -> Result<Self, ApiError> {
        let mut check = FiniteCheck::default();
        let points = curve
            .points
            .iter()
            .enumerate()
            .map(|(i, p)| ForcePointDto {
                speed_m_per_s: check.num(&format!("points[{i}].speed_m_per_s"), p.speed_m_per_s),
                force_n: check.num(&format!("points[{i}].force_n"), p.force_n),
            })
            .collect();
        let (cautions, caution_details) = cautions(curve.cautions);
        let response = Self {
            points,
            damping_n_s_per_m: check.num("damping_n_s_per_m", curve.damping_n_s_per_m),
            peak_force_n: check.num("peak_force_n", curve.peak_force_n),
            critical_speed_m_per_s: check
                .num("critical_speed_m_per_s", curve.critical_speed_m_per_s),
            terminal_speed_m_per_s: check
                .opt("terminal_speed_m_per_s", curve.terminal_speed_m_per_s),
            drive_force_n: check.num("drive_force_n", curve.drive_force_n),
            magnetic_reynolds_number: check
                .num("magnetic_reynolds_number", curve.magnetic_reynolds_number),
            characteristic_speed_m_per_s: check.num(
                "characteristic_speed_m_per_s",
                curve.characteristic_speed_m_per_s,
            ),
            cautions,
            caution_details,
            model: ModelBlock::from_model(curve.model, &mut check),
            tolerance_bands: None,
        };
        check.finish(response)
    }
}

/// Computes the steady force-speed curve of a design in a long tube.
#[utoipa::path(
    post,
    path = "/v1/force-curve",
    tag = "jobs",
    operation_id = "compute_force_curve",
    request_body(
        content = ForceCurveRequest,
        content_type = "application/json",
        description = "The design and, optionally, the speeds and the resolution."
    ),
    responses(
        (status = 200, description = "The force-speed curve and the numbers derived from it: \
            as `application/json` (default) the response record; as `image/svg+xml` a plot of \
            braking force against speed on logarithmic axes, with the driving force of \
            the load and the terminal and critical speeds marked (zeros, and values more than \
            twelve decades below the largest, are not drawn); as `text/csv` (RFC 4180) one row \
            per point under the header `speed_m_per_s,force_n`.",
            content(
                (ForceCurveResponse = "application/json"),
                (String = "image/svg+xml"),
                (String = "text/csv")
            )),
        (status = 400, description = "The body is not well-formed JSON.", body = Problem,
            content_type = "application/problem+json"),
        (status = 406, description = "The Accept header allows none of application/json, \
            image/svg+xml and text/csv.", body = Problem, content_type = "application/problem+json"),
        (status = 413, description = "The body exceeds the service's size limit.", body = Problem,
            content_type = "application/problem+json"),
        (status = 415, description = "The body is not declared as application/json.",
            body = Problem, content_type = "application/problem+json"),
        (status = 422, description = "Invalid fields, a job above the service limits, or a \
            design the model cannot compute; `errors` names each field.", body = Problem,
            content_type = "application/problem+json"),
        (status = 503, description = "Overloaded or timed out; retry after `Retry-After` \
            seconds.", body = Problem, content_type = "application/problem+json",
            headers(("Retry-After" = u64, description = "Seconds to wait before retrying."))),
    )
)]
pub(crate) async fn compute_force_curve(
    State(state): State<AppState>,
    headers: HeaderMap,
    query: Result<Query<PlotOptions>, QueryRejection>,
    ApiJson(request): ApiJson<ForceCurveRequest>,
) -> Result<Response, ApiError> {
    let media = negotiate::choose(&headers, &[Media::Json, Media::Svg, Media::Csv])?;
    let plot_options = plot::options_from_query(query)?;
    if media == Media::Svg
        && let Some(speeds) = &request.speeds_m_per_s
        && !speeds.iter().any(|v| *v > 0.0)
    {
        return Err(ApiError::invalid(
            "speeds_m_per_s",
            "the plot draws speed on a logarithmic axis: give at least one speed above 0",
        ));
    }
    let spec = request.design.clone();
    let tolerances = request.tolerances.clone();
    let (design, options) = request.validate(&state.limits)?;
    let limits = Arc::clone(&state.limits);
    // The answer is built and, for a plot, drawn inside the job: CPU work stays off the async
    // workers and within the job's slot and deadline.
    state
        .jobs
        .run("force_curve", move |cancel| {
            let limits = limits.with_cancel(cancel);
            let curve = ringdrag_model::force_curve(&design, &options, &limits)?;
            let mut response = ForceCurveResponse::from_model(curve)?;
            if let Some(t) = &tolerances {
                response.tolerance_bands = Some(tolerance::bands(
                    &spec,
                    t,
                    &BANDED_METRICS,
                    &StrokeOptions::default(),
                    &limits,
                )?);
            }
            match media {
                Media::Svg => Ok(negotiate::respond(
                    Media::Svg,
                    plot::force_curve_svg(&response, &spec, &plot_options)?,
                )),
                Media::Csv => Ok(negotiate::respond(
                    Media::Csv,
                    crate::csv::force_curve_csv(&response),
                )),
                _ => Ok(Json(response).into_response()),
            }
        })
        .await
}
