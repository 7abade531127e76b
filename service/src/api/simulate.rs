//! `POST /v1/simulate`: one stroke of the magnet stack through the finite tube, in time.
//!
//! The request is validated here, once (the design by the model, the start state, time,
//! samples and resolution by this module, the simulated time and samples against the service
//! limits); the model checks the sizes that only it can know (rings, steps) against the same
//! limits and names the field that drives them. The answer is JSON or, for
//! `Accept: image/svg+xml`, a two-panel plot of speed and braking force against time
//! ([`crate::plot::stroke_svg`]).

use crate::api::force_curve::{check_design, push_model_error};
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
use ringdrag_model::records::report::Fidelity;
use ringdrag_model::{Design, DesignSpec, Limits, Stroke, StrokeEnd, StrokeOptions};
use serde::{Deserialize, Serialize};
use std::sync::Arc;
use utoipa::ToSchema;

/// Where and how fast the stack starts.
#[derive(Debug, Clone, Default, Deserialize, ToSchema)]
#[serde(deny_unknown_fields)]
pub struct StartState {
    /// Position of the stack centre, m: the tube's entry end is at 0, its far end at
    /// `tube.length_m`; negative is before the entry (above it in a vertical drop).
    #[serde(default)]
    #[schema(minimum = -100.0, maximum = 100.0)]
    pub position_m: f64,
    /// Speed along the direction of travel, m/s.
    #[serde(default)]
    #[schema(minimum = 0.0, maximum = 1000.0)]
    pub speed_m_per_s: f64,
}

/// Resolution override of a stroke simulation.
#[derive(Debug, Clone, Default, Deserialize, ToSchema)]
#[serde(deny_unknown_fields)]
pub struct StrokeResolution {
    /// Axial ring width, m (default chosen from the bore and the magnet length).
    #[serde(default)]
    #[schema(exclusive_minimum = 0.0, maximum = 0.1)]
    pub ring_width_m: Option<f64>,
    /// Radial layers across the tube wall (default chosen from the wall and the skin depth).
    #[serde(default)]
    #[schema(minimum = 1, maximum = 32)]
    pub radial_layers: Option<u32>,
}

fn sixty() -> f64 {
    60.0
}

fn two_hundred() -> u32 {
    200
}

/// Request of `POST /v1/simulate`.
#[derive(Debug, Clone, Deserialize, ToSchema)]
#[serde(deny_unknown_fields)]
pub struct SimulateRequest {
    /// The design: magnets, tube and load.
    pub design: DesignSpec,
    /// Start state; default: the stack centre at the entry end, at rest.
    #[serde(default)]
    pub start: StartState,
    /// Longest simulated time, s; at most the service's `RINGDRAG_MAX_SIM_TIME_S` (default
    /// 3600).
    #[serde(default = "sixty")]
    #[schema(exclusive_minimum = 0.0, maximum = 3600.0, default = 60.0)]
    pub max_time_s: f64,
    /// Fidelity: `auto` chooses from the magnetic Reynolds number and the response says which
    /// ran; `quasi_static` neglects inductance; `inductive` runs the full ring circuit.
    #[serde(default)]
    pub fidelity: Fidelity,
    /// Points in the returned series (first and last included); at most the service's
    /// `RINGDRAG_MAX_SAMPLES` (default 20000).
    #[serde(default = "two_hundred")]
    #[schema(minimum = 2, maximum = 20000, default = 200)]
    pub samples: u32,
    /// Resolution override; omit to let the model choose.
    #[serde(default)]
    pub resolution: StrokeResolution,
    /// Where the load meets its end stop: the position of the stack centre, m (same axis as
    /// `start.position_m`); must lie ahead of the start. Default: the tube's far end
    /// (`tube.length_m`). The stroke, its summary and its series end there.
    #[serde(default)]
    #[schema(minimum = -100.0, maximum = 100.0)]
    pub stop_position_m: Option<f64>,
    /// Keep simulating past the stop until the stack centre has passed the tube's far end by
    /// one stack length (the run-out of a stack that leaves the tube); the landing and
    /// in-stroke figures of the summary still refer to the stop. Default false.
    #[serde(default)]
    pub run_out: bool,
}

/// The stroke options of a request, checked once by the model
/// ([`StrokeOptions::checked`], which holds the bounds); its problems go to `errors`, a job
/// above a limit to `too_large`.
pub(crate) fn stroke_options(
    options: StrokeOptions,
    limits: &Limits,
    errors: &mut Vec<FieldProblem>,
    too_large: &mut Vec<FieldProblem>,
) -> Option<StrokeOptions> {
    options
        .checked(limits)
        .map_err(|e| push_model_error(e, errors, too_large))
        .ok()
}

impl SimulateRequest {
    /// The validated design and options, or every problem found.
    ///
    /// # Errors
    ///
    /// A 422 problem listing every invalid field of the design and the stroke options, or a 413
    /// when the stroke is larger than `limits` allow.
    pub fn validate(self, limits: &Limits) -> Result<(Design, StrokeOptions), ApiError> {
        let mut errors = Vec::new();
        let mut too_large = Vec::new();
        let design = check_design(&self.design, &mut errors);
        let stroke = stroke_options(
            StrokeOptions {
                start_position_m: self.start.position_m,
                start_speed_m_per_s: self.start.speed_m_per_s,
                max_time_s: self.max_time_s,
                fidelity: self.fidelity,
                samples: self.samples as usize,
                ring_width_m: self.resolution.ring_width_m,
                radial_layers: self.resolution.radial_layers.map(|n| n as usize),
                stop_position_m: self.stop_position_m,
                run_out: self.run_out,
            },
            limits,
            &mut errors,
            &mut too_large,
        );
        if !errors.is_empty() {
            return Err(ApiError::Invalid(errors));
        }
        if !too_large.is_empty() {
            return Err(ApiError::JobTooLarge(too_large));
        }
        let design = design.ok_or_else(|| ApiError::Internal("design lost".into()))?;
        let stroke = stroke.ok_or_else(|| ApiError::Internal("stroke options lost".into()))?;
        Ok((design, stroke))
    }
}

/// Scalar results of a stroke.
#[derive(Debug, Clone, PartialEq, Serialize, ToSchema)]
pub struct StrokeSummaryDto {
    /// Time at which the stack centre reaches the far end (`tube.length_m`), s; null if it
    /// never does.
    pub exit_time_s: Option<f64>,
    /// Speed at that moment, m/s; null if the stack never gets there.
    pub exit_speed_m_per_s: Option<f64>,
    /// Position of the stack centre at the end stop, m (the request's `stop_position_m`, or
    /// the tube's far end).
    pub stop_position_m: f64,
    /// Time from the start to the stop (the stroke time), s; null if the stack never gets
    /// there.
    pub stroke_time_s: Option<f64>,
    /// Speed at the stop (the landing speed the load meets its stop with), m/s; null if the
    /// stack never gets there.
    pub landing_speed_m_per_s: Option<f64>,
    /// Largest speed between the entry (or the start, when it is inside the tube) and the
    /// stop, m/s. Free flight before the entry is reported apart, in
    /// `max_speed_before_entry_m_per_s`; a run-out past the stop is not counted.
    pub max_speed_m_per_s: f64,
    /// Largest deceleration (braking and friction beyond the driving force) between the entry
    /// and the stop, m/s^2.
    pub max_deceleration_m_per_s2: f64,
    /// Largest speed before the stack centre reaches the tube's entry (the fall or run-up to
    /// the tube), m/s; null when the start is inside the tube.
    pub max_speed_before_entry_m_per_s: Option<f64>,
    /// Largest braking force, N.
    pub max_braking_force_n: f64,
    /// Energy dissipated in the tube, J.
    pub heat_j: f64,
    /// Adiabatic temperature rise of the swept tube, K; null when the tube's density or
    /// specific heat is unknown.
    pub tube_temperature_rise_k: Option<f64>,
    /// Relative imbalance of the energy ledger (work in against kinetic energy, heat, stored
    /// magnetic energy and friction work); a measure of the time integration's error.
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

/// Time series of a stroke: equal-length arrays, first and last points included.
#[derive(Debug, Clone, PartialEq, Serialize, ToSchema)]
pub struct StrokeSeriesDto {
    /// Time, s.
    pub time_s: Vec<f64>,
    /// Position of the stack centre, m.
    pub position_m: Vec<f64>,
    /// Speed along travel, m/s.
    pub speed_m_per_s: Vec<f64>,
    /// Braking force, N (positive opposes motion).
    pub force_n: Vec<f64>,
    /// Power dissipated in the tube, W.
    pub power_w: Vec<f64>,
}

/// Response of `POST /v1/simulate`.
#[derive(Debug, Clone, PartialEq, Serialize, ToSchema)]
pub struct SimulateResponse {
    /// Scalar results.
    pub summary: StrokeSummaryDto,
    /// Time series.
    pub series: StrokeSeriesDto,
    /// Cautions as text, the standing safety caution first.
    pub cautions: Vec<String>,
    /// The same cautions with their kinds.
    pub caution_details: Vec<CautionDetail>,
    /// Method, fidelity and discretisation used.
    pub model: ModelBlock,
}

impl SimulateResponse {
    /// The response record of a model result; refuses non-finite numbers.
    ///
    /// # Errors
    ///
    /// A 500 problem naming every output field whose value is not finite (the model never
    /// returns one on purpose).
    pub fn from_model(stroke: Stroke) -> Result<Self, ApiError> {
        let mut c = FiniteCheck::default();
        let s = stroke.summary;
        let summary = StrokeSummaryDto {
            exit_time_s: c.opt("summary.exit_time_s", s.exit_time_s),
            exit_speed_m_per_s: c.opt("summary.exit_speed_m_per_s", s.exit_speed_m_per_s),
            stop_position_m: c.num("summary.stop_position_m", s.stop_position_m),
            stroke_time_s: c.opt("summary.stroke_time_s", s.stroke_time_s),
            landing_speed_m_per_s: c.opt("summary.landing_speed_m_per_s", s.landing_speed_m_per_s),
            max_speed_m_per_s: c.num("summary.max_speed_m_per_s", s.max_speed_m_per_s),
            max_speed_before_entry_m_per_s: c.opt(
                "summary.max_speed_before_entry_m_per_s",
                s.max_speed_before_entry_m_per_s,
            ),
            max_deceleration_m_per_s2: c.num(
                "summary.max_deceleration_m_per_s2",
                s.max_deceleration_m_per_s2,
            ),
            max_braking_force_n: c.num("summary.max_braking_force_n", s.max_braking_force_n),
            heat_j: c.num("summary.heat_j", s.heat_j),
            tube_temperature_rise_k: c
                .opt("summary.tube_temperature_rise_k", s.tube_temperature_rise_k),
            energy_balance_error: c.num("summary.energy_balance_error", s.energy_balance_error),
            end_reason: s.end_reason,
            end_time_s: c.num("summary.end_time_s", s.end_time_s),
            end_position_m: c.num("summary.end_position_m", s.end_position_m),
            end_speed_m_per_s: c.num("summary.end_speed_m_per_s", s.end_speed_m_per_s),
        };
        let r = stroke.series;
        let series = StrokeSeriesDto {
            time_s: c.all("series.time_s", r.time_s),
            position_m: c.all("series.position_m", r.position_m),
            speed_m_per_s: c.all("series.speed_m_per_s", r.speed_m_per_s),
            force_n: c.all("series.force_n", r.force_n),
            power_w: c.all("series.power_w", r.power_w),
        };
        let n = series.time_s.len();
        let lengths = [
            series.position_m.len(),
            series.speed_m_per_s.len(),
            series.force_n.len(),
            series.power_w.len(),
        ];
        if lengths.iter().any(|&l| l != n) {
            return Err(ApiError::Internal(format!(
                "stroke series of unequal lengths: {n} and {lengths:?}"
            )));
        }
        let (cautions, caution_details) = cautions(stroke.cautions);
        let response = Self {
            summary,
            series,
            cautions,
            caution_details,
            model: ModelBlock::from_model(stroke.model, &mut c),
        };
        c.finish(response)
    }
}

/// Simulates one stroke of the stack through the finite tube, entry and exit included.
#[utoipa::path(
    post,
    path = "/v1/simulate",
    tag = "jobs",
    operation_id = "simulate_stroke",
    request_body(
        content = SimulateRequest,
        content_type = "application/json",
        description = "The design, the start state, the time limit, the fidelity, the number \
            of samples and, optionally, the resolution."
    ),
    responses(
        (status = 200, description = "The stroke: as `application/json` (default) the summary, \
            time series, cautions and model; as `image/svg+xml` a plot in two panels sharing \
            the time axis, speed above and braking force below, with the moments the stack \
            enters the tube and reaches its far end marked; as `text/csv` (RFC 4180) the \
            series, one row per sample under the header \
            `time_s,position_m,speed_m_per_s,force_n,power_w`.",
            content(
                (SimulateResponse = "application/json"),
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
pub(crate) async fn simulate_stroke(
    State(state): State<AppState>,
    headers: HeaderMap,
    query: Result<Query<PlotOptions>, QueryRejection>,
    ApiJson(request): ApiJson<SimulateRequest>,
) -> Result<Response, ApiError> {
    let media = negotiate::choose(&headers, &[Media::Json, Media::Svg, Media::Csv])?;
    let plot_options = plot::options_from_query(query)?;
    let spec = request.design.clone();
    let (design, options) = request.validate(&state.limits)?;
    let limits = Arc::clone(&state.limits);
    // The answer is built and, for a plot, drawn inside the job: CPU work stays off the async
    // workers and within the job's slot and deadline.
    state
        .jobs
        .run("simulate", move |cancel| {
            let limits = limits.with_cancel(cancel);
            let stroke = ringdrag_model::simulate_stroke(&design, &options, &limits)?;
            let response = SimulateResponse::from_model(stroke)?;
            match media {
                Media::Svg => Ok(negotiate::respond(
                    Media::Svg,
                    plot::stroke_svg(&response, &spec, &plot_options)?,
                )),
                Media::Csv => Ok(negotiate::respond(
                    Media::Csv,
                    crate::csv::stroke_csv(&response),
                )),
                _ => Ok(Json(response).into_response()),
            }
        })
        .await
}
