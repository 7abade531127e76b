//! `POST /v1/sweep`: a grid over one to three design fields, chosen metrics at every point.
//!
//! The request is validated here, once: the base design by the model (problems in the varied
//! fields are left to the points, since the sweep replaces those values), the axes and the
//! stroke settings by this module, then the grid by the model's `SweepPlan::new`, which checks
//! the paths, the metrics and the size of the job (points, and estimated work) against the
//! service limits and names the field that drives them. The points run in parallel in the
//! model; a point that fails carries its error and the others still arrive.
//!
//! Three representations, chosen with `Accept` (see [`crate::negotiate`]):
//! - `application/json` (default): every point in grid order, then the axes, metrics,
//!   cautions and model block;
//! - `application/x-ndjson`: one JSON object per line, streamed as points finish (in no fixed
//!   order). Every line has a `kind`:
//!   1. exactly one `header` line first: `points_total`, the axes, the metrics, the cautions and
//!      the model block, so that a dashboard can draw a progress bar and its axes at once;
//!   2. one `point` line per point as it finishes (`index`, `inputs`, `metrics`, `error`);
//!   3. exactly one `end` line last: `complete` (true when every point was sent),
//!      `points_sent`, `failed_points`, `elapsed_s` and, when incomplete, the `reason`. A
//!      stream that stops without an `end` line was cut off (a lost connection).
//!
//!   The computation holds a job slot while it runs. Between the computation and the
//!   connection sits a bounded buffer of lines, so a slow reader slows the computation instead
//!   of filling memory. When the client disconnects, or the request timeout passes, sending
//!   stops (the stream then ends with an incomplete `end` line if the connection is still
//!   there); points not yet started are skipped and the points already running finish, after
//!   which the slot is released.
//! - `image/svg+xml`: each metric against the first varied field, one line per combination of
//!   the other varied fields (see [`crate::plot::sweep_svg`]).

use crate::api::force_curve::check_design;
use crate::api::point_metrics::PointMetrics;
use crate::api::report::{CautionDetail, FiniteCheck, ModelBlock, cautions, field_number};
use crate::api::simulate::{StartState, stroke_options};
use crate::extract::ApiJson;
use crate::negotiate::{self, Media};
use crate::plot::{self, PlotAxis, PlotOptions};
use crate::problem::{ApiError, FieldProblem, Problem};
use crate::state::AppState;
use axum::Json;
use axum::body::{Body, Bytes};
use axum::extract::Query;
use axum::extract::State;
use axum::extract::rejection::QueryRejection;
use axum::http::HeaderMap;
use axum::response::{IntoResponse, Response};
use ringdrag_model::jobs::metrics::Metric;
use ringdrag_model::jobs::sweep::{SweepAxis, SweepPlan, SweepPoint, linspace};
use ringdrag_model::records::report::{Discretisation, Fidelity, ModelInfo};
use ringdrag_model::{
    Caution, CautionKind, Design, DesignField, DesignSpec, Limits, StrokeOptions,
};
use serde::{Deserialize, Deserializer, Serialize};
use std::collections::BTreeMap;
use std::convert::Infallible;
use std::sync::atomic::{AtomicBool, Ordering};
use tokio::sync::mpsc;
use tokio::time::Instant;
use utoipa::ToSchema;

/// Lines buffered between the computation and the connection of an NDJSON answer; a reader
/// slower than the computation holds the computation back instead of filling memory.
const STREAM_BUFFER_LINES: usize = 64;

/// An axis given by its values.
#[derive(Debug, Clone, PartialEq, Deserialize, ToSchema)]
#[serde(deny_unknown_fields)]
pub struct ValuesAxis {
    /// Dotted path of a numeric design field, e.g. `tube.wall_thickness_m` (a leading
    /// `design.` is allowed); the unit is the field's own.
    pub path: String,
    /// Values the field takes, in the field's unit.
    #[schema(min_items = 1)]
    pub values: Vec<f64>,
}

/// An axis of evenly spaced values from `from` to `to`, both included.
#[derive(Debug, Clone, PartialEq, Deserialize, ToSchema)]
#[serde(deny_unknown_fields)]
pub struct RangeAxis {
    /// Dotted path of a numeric design field, e.g. `tube.wall_thickness_m` (a leading
    /// `design.` is allowed); the unit is the field's own.
    pub path: String,
    /// First value, in the field's unit.
    pub from: f64,
    /// Last value, in the field's unit.
    pub to: f64,
    /// Number of values (1 gives `from` alone); at most the service's
    /// `RINGDRAG_MAX_SWEEP_POINTS` (default 10000).
    #[schema(minimum = 1, maximum = 10000)]
    pub steps: u32,
}

/// One axis of a sweep: listed values, or an evenly spaced range.
#[derive(Debug, Clone, PartialEq, ToSchema)]
#[serde(untagged)]
pub enum VaryAxis {
    /// Listed values.
    Values(ValuesAxis),
    /// Evenly spaced values.
    Range(RangeAxis),
}

/// The axis as written, before deciding which form it has (so that a wrong or missing field is
/// named precisely instead of "matches no form").
#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawAxis {
    path: String,
    #[serde(default)]
    values: Option<Vec<f64>>,
    #[serde(default)]
    from: Option<f64>,
    #[serde(default)]
    to: Option<f64>,
    #[serde(default)]
    steps: Option<u32>,
}

impl TryFrom<RawAxis> for VaryAxis {
    type Error = String;

    fn try_from(raw: RawAxis) -> Result<Self, String> {
        let range_given = raw.from.is_some() || raw.to.is_some() || raw.steps.is_some();
        match (raw.values, range_given) {
            (Some(values), false) => Ok(Self::Values(ValuesAxis {
                path: raw.path,
                values,
            })),
            (Some(_), true) => {
                Err("give either `values` or `from`, `to` and `steps`, not both".to_string())
            }
            (None, false) => Err("give `values`, or `from`, `to` and `steps`".to_string()),
            (None, true) => match (raw.from, raw.to, raw.steps) {
                (Some(from), Some(to), Some(steps)) => Ok(Self::Range(RangeAxis {
                    path: raw.path,
                    from,
                    to,
                    steps,
                })),
                (from, to, steps) => {
                    let missing: Vec<&str> = [
                        ("from", from.is_none()),
                        ("to", to.is_none()),
                        ("steps", steps.is_none()),
                    ]
                    .into_iter()
                    .filter_map(|(name, gone)| gone.then_some(name))
                    .collect();
                    Err(format!(
                        "a range needs `from`, `to` and `steps`; missing {}",
                        missing.join(", ")
                    ))
                }
            },
        }
    }
}

impl<'de> Deserialize<'de> for VaryAxis {
    fn deserialize<D: Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        let raw = RawAxis::deserialize(deserializer)?;
        Self::try_from(raw).map_err(serde::de::Error::custom)
    }
}

impl VaryAxis {
    fn path(&self) -> &str {
        match self {
            Self::Values(a) => &a.path,
            Self::Range(a) => &a.path,
        }
    }
}

fn sixty() -> f64 {
    60.0
}

/// Request of `POST /v1/sweep`.
#[derive(Debug, Clone, Deserialize, ToSchema)]
#[serde(deny_unknown_fields)]
pub struct SweepRequest {
    /// The base design: magnets, tube and load. Every point sets the varied fields and keeps
    /// the rest.
    pub design: DesignSpec,
    /// One to three axes; the grid is every combination of their values, at most the
    /// service's `RINGDRAG_MAX_SWEEP_POINTS` (default 10000) points.
    #[schema(min_items = 1, max_items = 3)]
    pub vary: Vec<VaryAxis>,
    /// Metrics computed at every point: any scalar of the force-curve response or of the
    /// stroke summary. Stroke metrics (exit time, deceleration, heat...) simulate a stroke per
    /// point and count as more work (5 quasi-static, 50 inductive or automatic, against 1
    /// for the steady metrics) towards the same limit.
    #[schema(min_items = 1)]
    pub metrics: Vec<Metric>,
    /// Start state of the strokes of stroke metrics; default: the stack centre at the entry
    /// end, at rest.
    #[serde(default)]
    pub start: StartState,
    /// Longest simulated time of each stroke, s; at most the service's
    /// `RINGDRAG_MAX_SIM_TIME_S` (default 3600).
    #[serde(default = "sixty")]
    #[schema(exclusive_minimum = 0.0, maximum = 3600.0, default = 60.0)]
    pub max_time_s: f64,
    /// Fidelity of the strokes of stroke metrics (as in `/v1/simulate`).
    #[serde(default)]
    pub fidelity: Fidelity,
    /// Where the load meets its end stop in the strokes of stroke metrics and targets: the
    /// position of the stack centre, m; default: the tube's far end (`tube.length_m`, which
    /// follows a varied tube length).
    #[serde(default)]
    #[schema(minimum = -100.0, maximum = 100.0)]
    pub stop_position_m: Option<f64>,
}

/// Adds the model's validation of a base design to `errors`, leaving out problems of the
/// fields in `varied` (the job replaces their values); the design when it is valid as given.
pub(crate) fn check_base_design(
    spec: &DesignSpec,
    varied: &[&str],
    errors: &mut Vec<FieldProblem>,
) -> Option<Design> {
    let mut found = Vec::new();
    let design = check_design(spec, &mut found);
    let varied: Vec<String> = varied
        .iter()
        .filter_map(|p| DesignField::from_path(p))
        .map(|f| format!("design.{}", f.path()))
        .collect();
    errors.extend(found.into_iter().filter(|e| !varied.contains(&e.path)));
    design
}

/// The model block of a job made of many model runs: the method by the metrics asked, no
/// single discretisation (each run chooses its own).
pub(crate) fn composite_model(metrics: &[Metric], stroke_fidelity: Fidelity) -> ModelInfo {
    let steady = metrics.iter().any(|m| m.needs_steady());
    let stroke = metrics.iter().any(|m| m.needs_stroke());
    let (method, fidelity) = match (steady, stroke) {
        (true, true) => ("spectral+ring_circuit", stroke_fidelity),
        (false, true) => ("ring_circuit", stroke_fidelity),
        // The spectral method includes the eddy currents' own field.
        (true, false) => ("spectral", Fidelity::Inductive),
        (false, false) => ("design_record", Fidelity::QuasiStatic),
    };
    ModelInfo::new(method, fidelity, Discretisation::default())
}

/// A validated sweep, ready to run.
#[derive(Debug)]
pub struct ValidSweep {
    plan: SweepPlan,
    /// The axes in the request's order, for plots.
    requested_axes: Vec<PlotAxis>,
    /// Cautions of the base design, the standing safety caution first.
    cautions: Vec<Caution>,
    model: ModelInfo,
}

impl SweepRequest {
    /// The validated sweep, or every problem found.
    ///
    /// # Errors
    ///
    /// A 422 problem listing every invalid field (axes, metrics, design, stroke options), or a
    /// 413 when the grid is larger than `limits` allow.
    pub fn validate(self, limits: &Limits) -> Result<ValidSweep, ApiError> {
        let mut errors = Vec::new();
        let mut too_large = Vec::new();
        let varied: Vec<&str> = self.vary.iter().map(VaryAxis::path).collect();
        let base = check_base_design(&self.design, &varied, &mut errors);
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
        let mut axes = Vec::with_capacity(self.vary.len());
        for (i, axis) in self.vary.iter().enumerate() {
            match axis {
                VaryAxis::Values(a) => axes.push((a.path.clone(), a.values.clone())),
                VaryAxis::Range(a) => {
                    let steps = a.steps as usize;
                    if steps == 0 {
                        errors.push(FieldProblem {
                            path: format!("vary[{i}].steps"),
                            message: "must be at least 1".into(),
                        });
                    } else if steps > limits.max_sweep_points {
                        // Checked before the values are made, so that no request allocates
                        // more than the limit allows.
                        too_large.push(FieldProblem {
                            path: format!("vary[{i}].steps"),
                            message: format!(
                                "{steps} steps requested, above the service limit of {} \
                                 sweep points",
                                limits.max_sweep_points
                            ),
                        });
                    } else {
                        axes.push((a.path.clone(), linspace(a.from, a.to, steps)));
                    }
                }
            }
        }
        if !errors.is_empty() {
            return Err(ApiError::Invalid(errors));
        }
        if !too_large.is_empty() {
            return Err(ApiError::JobTooLarge(too_large));
        }
        let mut requested_axes = Vec::with_capacity(axes.len());
        for (i, (path, values)) in axes.into_iter().enumerate() {
            let field = DesignField::parse(&path, &format!("vary[{i}].path"))?;
            requested_axes.push(PlotAxis {
                field,
                path,
                values,
            });
        }
        let axes = requested_axes
            .iter()
            .map(|a| SweepAxis {
                field: a.field,
                values: a.values.clone(),
            })
            .collect();
        let stroke = stroke.ok_or_else(|| ApiError::Internal("stroke options lost".into()))?;
        let model = composite_model(&self.metrics, self.fidelity);
        let plan = SweepPlan::new(self.design, axes, self.metrics, stroke, limits.clone())?;
        let mut base_cautions = vec![Caution::standing_safety()];
        base_cautions.extend(base.map(|d| d.cautions).unwrap_or_default());
        Ok(ValidSweep {
            plan,
            requested_axes,
            cautions: base_cautions,
            model,
        })
    }
}

/// One axis of the grid as computed.
#[derive(Debug, Clone, PartialEq, Serialize, ToSchema)]
pub struct SweepAxisDto {
    /// Dotted path of the varied field, as requested.
    pub path: String,
    /// Values the field takes, in the field's unit; integers for integer fields.
    #[schema(value_type = Vec<f64>)]
    pub values: Vec<serde_json::Number>,
}

/// One point of a sweep.
#[derive(Debug, Clone, PartialEq, Serialize, ToSchema)]
pub struct SweepPointDto {
    /// Position of the point in the grid: row-major over `axes` as the response lists them
    /// (the last axis fastest).
    pub index: u64,
    /// Value of each varied field at this point, by path as requested; integer fields
    /// (`magnets.count`) as integers.
    #[serde(serialize_with = "whole_inputs")]
    pub inputs: BTreeMap<String, f64>,
    /// Each requested metric by name, in the order asked; null where it does not exist (no
    /// terminal speed when the brake cannot hold the load, no exit time when the stack never
    /// exits) or the point failed.
    #[schema(value_type = BTreeMap<String, Option<f64>>)]
    pub metrics: PointMetrics,
    /// Why the point failed (for example a magnet wider than the bore at this corner of the
    /// grid), or null.
    pub error: Option<String>,
    /// Estimated relative numerical error of this point's metrics (the change between two
    /// resolutions), or null when not estimated.
    pub error_estimate_relative: Option<f64>,
    /// This point's cautions as text (runaway, margin against it, clearance, magnet
    /// temperature, heating...), decided as on `/v1/force-curve` and `/v1/simulate`; the
    /// standing safety caution is the response's, not repeated here.
    pub cautions: Vec<String>,
    /// The kinds of those cautions, in the same order (e.g. `runaway`).
    pub caution_kinds: Vec<CautionKind>,
}

/// Writes the inputs of integer fields (`magnets.count`) as JSON integers.
fn whole_inputs<S: serde::Serializer>(
    inputs: &BTreeMap<String, f64>,
    serializer: S,
) -> Result<S::Ok, S::Error> {
    use serde::ser::SerializeMap;
    let mut map = serializer.serialize_map(Some(inputs.len()))?;
    for (k, v) in inputs {
        let whole = DesignField::from_path(k).is_some_and(DesignField::is_whole);
        match field_number(*v, whole) {
            Some(n) => map.serialize_entry(k, &n)?,
            None => map.serialize_entry(k, v)?,
        }
    }
    map.end()
}

impl SweepPointDto {
    /// The record of a model point, its metrics in the order `asked`, its inputs by the paths
    /// of the `requested` axes as the request wrote them.
    pub fn in_order(p: SweepPoint, asked: &[Metric], requested: &[PlotAxis]) -> Self {
        Self {
            index: p.index as u64,
            metrics: PointMetrics::in_order(&p.metrics, asked),
            inputs: p
                .inputs
                .into_iter()
                .map(|(f, v)| (requested_path(requested, f), v))
                .collect(),
            error: p.error,
            error_estimate_relative: p.error_estimate_relative.filter(|x| x.is_finite()),
            caution_kinds: p.cautions.iter().map(|c| c.kind).collect(),
            cautions: p.cautions.into_iter().map(|c| c.message).collect(),
        }
    }
}

/// Response of `POST /v1/sweep` as JSON.
#[derive(Debug, Clone, PartialEq, Serialize, ToSchema)]
pub struct SweepResponse {
    /// Every point, in grid order.
    pub points: Vec<SweepPointDto>,
    /// The axes in grid order: the request's order, except that axes which leave the steady
    /// solver unchanged (load fields, magnet density, tube length) come last, so that points
    /// sharing a solver are neighbours.
    pub axes: Vec<SweepAxisDto>,
    /// The metrics computed, in the order asked.
    pub metrics: Vec<Metric>,
    /// Points that failed (each carries its error).
    pub failed_points: u64,
    /// Cautions as text, the standing safety caution first (those of the base design, and a
    /// note when points failed).
    pub cautions: Vec<String>,
    /// The same cautions with their kinds.
    pub caution_details: Vec<CautionDetail>,
    /// Method and fidelity; each point chooses its own discretisation. Its
    /// `error_estimate_relative` is the largest of the points'.
    pub model: ModelBlock,
}

/// First line of an NDJSON sweep.
#[derive(Debug, Clone, PartialEq, Serialize, ToSchema)]
pub struct SweepStreamHeader {
    /// Number of `point` lines that will follow when the sweep completes.
    pub points_total: u64,
    /// The axes in grid order (see the JSON response).
    pub axes: Vec<SweepAxisDto>,
    /// The metrics computed, in the order asked.
    pub metrics: Vec<Metric>,
    /// Cautions of the base design as text, the standing safety caution first.
    pub cautions: Vec<String>,
    /// The same cautions with their kinds.
    pub caution_details: Vec<CautionDetail>,
    /// Method and fidelity.
    pub model: ModelBlock,
}

/// Last line of an NDJSON sweep.
#[derive(Debug, Clone, PartialEq, Serialize, ToSchema)]
pub struct SweepStreamEnd {
    /// Whether every point was sent.
    pub complete: bool,
    /// `point` lines sent.
    pub points_sent: u64,
    /// Of those, points that failed (each carries its error).
    pub failed_points: u64,
    /// Time from the start of the stream to this line, s.
    pub elapsed_s: f64,
    /// Why the stream ended early; null when complete.
    pub reason: Option<String>,
}

/// One line of an NDJSON sweep (`application/x-ndjson`): a `header` first, a `point` per
/// point as it finishes, an `end` last.
#[derive(Debug, Clone, PartialEq, Serialize, ToSchema)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum SweepStreamLine {
    /// The first line: the grid, the metrics, the cautions and the model block.
    Header(Box<SweepStreamHeader>),
    /// A finished point.
    Point(SweepPointDto),
    /// The last line.
    End(SweepStreamEnd),
}

/// The path of `field` as the request wrote it (a leading `design.` kept).
fn requested_path(requested: &[PlotAxis], field: DesignField) -> String {
    requested
        .iter()
        .find(|a| a.field == field)
        .map_or_else(|| field.path().to_string(), |a| a.path.clone())
}

fn axes_dto(plan: &SweepPlan, requested: &[PlotAxis]) -> Vec<SweepAxisDto> {
    plan.axes()
        .iter()
        .map(|a| SweepAxisDto {
            path: requested_path(requested, a.field),
            values: a
                .values
                .iter()
                .filter_map(|v| field_number(*v, a.field.is_whole()))
                .collect(),
        })
        .collect()
}

impl SweepResponse {
    /// The response record of a finished sweep.
    ///
    /// # Errors
    ///
    /// A 500 problem naming the output fields whose values are not finite.
    pub fn new(sweep: &ValidSweep, points: Vec<SweepPoint>) -> Result<Self, ApiError> {
        let asked = sweep.plan.metrics();
        let points: Vec<SweepPointDto> = points
            .into_iter()
            .map(|p| SweepPointDto::in_order(p, asked, &sweep.requested_axes))
            .collect();
        let failed = points.iter().filter(|p| p.error.is_some()).count();
        let mut notes = sweep.cautions.clone();
        if failed > 0 {
            notes.push(Caution::new(
                CautionKind::ModelLimit,
                format!(
                    "{failed} of {} points failed; each carries its error.",
                    points.len()
                ),
            ));
        }
        let (cautions, caution_details) = cautions(notes);
        let mut check = FiniteCheck::default();
        // The whole sweep's estimate: the largest of its points'.
        let mut info = sweep.model.clone();
        info.error_estimate_relative = points
            .iter()
            .filter_map(|p| p.error_estimate_relative)
            .reduce(f64::max);
        let model = ModelBlock::from_model(info, &mut check);
        check.finish(Self {
            axes: axes_dto(&sweep.plan, &sweep.requested_axes),
            metrics: sweep.plan.metrics().to_vec(),
            failed_points: failed as u64,
            points,
            cautions,
            caution_details,
            model,
        })
    }
}

/// Refuses an SVG plot with more lines than a panel can show legibly, or a first axis whose
/// values do not fit one drawable axis.
fn check_plottable(sweep: &ValidSweep) -> Result<(), ApiError> {
    if let Some(first) = sweep.requested_axes.first()
        && !plot::drawable(&first.values)
    {
        return Err(ApiError::invalid(
            "vary[0]",
            "an SVG plot draws the first axis's values on one axis; these spread wider than a \
             64-bit float holds. Ask for JSON or NDJSON.",
        ));
    }
    let lines = plot::sweep_line_count(&sweep.requested_axes);
    if lines > plot::MAX_SWEEP_LINES {
        return Err(ApiError::invalid(
            "vary",
            format!(
                "an SVG plot draws one line per combination of the second and third axes, at \
                 most {}; this sweep has {lines}. Ask for JSON, NDJSON or CSV, or use fewer values",
                plot::MAX_SWEEP_LINES
            ),
        ));
    }
    Ok(())
}

/// One NDJSON line, newline included.
fn ndjson_line(line: &SweepStreamLine) -> Bytes {
    match serde_json::to_vec(line) {
        Ok(mut bytes) => {
            bytes.push(b'\n');
            Bytes::from(bytes)
        }
        // The records hold strings, finite numbers and string-keyed maps: serialising them
        // cannot fail. Should it ever, the line is left out and the `end` line's counts show it.
        Err(e) => {
            tracing::error!(error = %e, "cannot serialise an NDJSON line");
            Bytes::new()
        }
    }
}

/// What the computation hands to the connection.
enum Line {
    /// A finished point, serialised, and whether it failed.
    Point { bytes: Bytes, failed: bool },
    /// Every point was handed over.
    Done,
}

/// State of an NDJSON body while it streams.
struct StreamState {
    header: Option<Bytes>,
    lines: mpsc::Receiver<Line>,
    deadline: Instant,
    timeout_s: u64,
    started: std::time::Instant,
    total: u64,
    sent: u64,
    failed: u64,
    finished: bool,
}

impl StreamState {
    fn end(&mut self, reason: Option<String>) -> Bytes {
        self.finished = true;
        ndjson_line(&SweepStreamLine::End(SweepStreamEnd {
            complete: reason.is_none(),
            points_sent: self.sent,
            failed_points: self.failed,
            elapsed_s: self.started.elapsed().as_secs_f64(),
            reason,
        }))
    }
}

/// Why a stream ended at its deadline.
fn timeout_reason(timeout_s: u64) -> String {
    format!(
        "the request timeout of {timeout_s} s passed; the points sent are valid. Ask for fewer \
         points or cheaper metrics."
    )
}

/// The NDJSON body: the header, each point as the computation hands it over, and the end line
/// (incomplete when the deadline passes or the computation stops without finishing).
fn ndjson_body(state: StreamState) -> Body {
    let stream = futures_util::stream::unfold(state, |mut st| async move {
        if let Some(header) = st.header.take() {
            return Some((Ok::<Bytes, Infallible>(header), st));
        }
        if st.finished {
            return None;
        }
        // The deadline first: once it has passed, the stream ends as timed out even when the
        // computation's last lines (or its `Done`, sent as the cancelled job wound down) are
        // already queued; an unbiased choice between two ready branches made that a coin toss.
        let next = tokio::select! {
            biased;
            () = tokio::time::sleep_until(st.deadline) => None,
            line = st.lines.recv() => Some(line),
        };
        let bytes = match next {
            Some(Some(Line::Point { bytes, failed })) => {
                st.sent += 1;
                st.failed += u64::from(failed);
                bytes
            }
            Some(Some(Line::Done)) => st.end(None),
            // The computation ended without its `Done` (it was cancelled): complete only if
            // every point arrived anyway. The timer wheel fires up to a tick after the job's
            // token (which reads the clock), so the clock, not the timer, says whether the
            // deadline is why.
            Some(None) if st.sent >= st.total => st.end(None),
            Some(None) if Instant::now() >= st.deadline => {
                st.end(Some(timeout_reason(st.timeout_s)))
            }
            Some(None) => st.end(Some(
                "the computation stopped before every point was computed; the points sent are \
                 valid"
                    .to_string(),
            )),
            None => st.end(Some(timeout_reason(st.timeout_s))),
        };
        Some((Ok(bytes), st))
    });
    Body::from_stream(stream)
}

/// Starts the sweep under a job slot and answers with its NDJSON stream.
async fn stream_sweep(state: &AppState, sweep: ValidSweep) -> Result<Response, ApiError> {
    let timeout = state.jobs.timeout();
    let deadline = Instant::now() + timeout;
    let header = {
        let (cautions, caution_details) = cautions(sweep.cautions.clone());
        let mut check = FiniteCheck::default();
        let model = ModelBlock::from_model(sweep.model.clone(), &mut check);
        check.finish(())?;
        ndjson_line(&SweepStreamLine::Header(Box::new(SweepStreamHeader {
            points_total: sweep.plan.len() as u64,
            axes: axes_dto(&sweep.plan, &sweep.requested_axes),
            metrics: sweep.plan.metrics().to_vec(),
            cautions,
            caution_details,
            model,
        })))
    };
    let (tx, rx) = mpsc::channel::<Line>(STREAM_BUFFER_LINES);
    let runtime = tokio::runtime::Handle::current();
    let plan = sweep.plan;
    let requested = sweep.requested_axes;
    let total = plan.len() as u64;
    state
        .jobs
        .start("sweep", move |cancel| {
            let plan = plan.with_cancel(cancel.clone());
            // A reader that goes away stops the points in flight too, not only those not yet
            // started (the receiver is dropped with the response body).
            {
                let tx = tx.clone();
                let cancel = cancel.clone();
                runtime.spawn(async move {
                    tx.closed().await;
                    cancel.cancel();
                });
            }
            // Set once a line cannot be handed over (the reader is gone or the deadline
            // passed): points not yet started are skipped; those running finish unsent.
            let stopped = AtomicBool::new(false);
            let send = |line: Line| -> bool {
                if stopped.load(Ordering::Relaxed) {
                    return false;
                }
                // Waits for room in the buffer, but never past the deadline: a reader that
                // stops reading cannot hold the slot beyond the request timeout.
                // (The timer is made inside `block_on`, where the runtime is entered.)
                let sent = runtime
                    .block_on(async { tokio::time::timeout_at(deadline, tx.send(line)).await });
                let ok = matches!(sent, Ok(Ok(())));
                if !ok {
                    stopped.store(true, Ordering::Relaxed);
                    cancel.cancel();
                }
                ok
            };
            plan.run_while(
                || !stopped.load(Ordering::Relaxed),
                |point| {
                    let failed = point.error.is_some();
                    let bytes = ndjson_line(&SweepStreamLine::Point(SweepPointDto::in_order(
                        point,
                        plan.metrics(),
                        &requested,
                    )));
                    send(Line::Point { bytes, failed });
                },
            );
            // A cancelled run dropped the points it had not finished: no `Done`, so the stream
            // ends incomplete (see `ndjson_body`).
            if !cancel.is_cancelled() && send(Line::Done) {
                "ok"
            } else if Instant::now() >= deadline {
                "timeout"
            } else {
                "client_gone"
            }
        })
        .await?;
    let body = ndjson_body(StreamState {
        header: Some(header),
        lines: rx,
        deadline,
        timeout_s: timeout.as_secs(),
        started: std::time::Instant::now(),
        total,
        sent: 0,
        failed: 0,
        finished: false,
    });
    Ok(negotiate::respond(Media::NdJson, body))
}

/// Computes chosen metrics over a grid of one to three design fields.
#[utoipa::path(
    post,
    path = "/v1/sweep",
    tag = "jobs",
    operation_id = "sweep_design",
    request_body(
        content = SweepRequest,
        content_type = "application/json",
        description = "The base design, one to three axes, the metrics and, for stroke \
            metrics, the stroke settings."
    ),
    responses(
        (status = 200, description = "The points. As `application/json` (default): every point \
            in grid order with the axes, metrics, cautions and model. As \
            `application/x-ndjson`: one `SweepStreamLine` per line, streamed as points finish: \
            a `header` line (points_total, axes, metrics, cautions, model), one `point` line \
            per point in the order they finish, and an `end` line (complete, points_sent, \
            failed_points, elapsed_s, reason); a stream without an `end` line was cut off. As \
            `image/svg+xml`: each metric against the first axis, one line per combination of \
            the other axes (at most 12). As `text/csv` (RFC 4180): one row per point in grid \
            order, the columns `index`, the varied fields as the request lists them, the \
            metrics in the order asked, and `error` (empty fields where a value does not exist).",
            content(
                (SweepResponse = "application/json"),
                (SweepStreamLine = "application/x-ndjson"),
                (String = "image/svg+xml"),
                (String = "text/csv")
            )),
        (status = 400, description = "The body is not well-formed JSON.", body = Problem,
            content_type = "application/problem+json"),
        (status = 406, description = "The Accept header allows none of application/json, \
            application/x-ndjson, image/svg+xml and text/csv.", body = Problem,
            content_type = "application/problem+json"),
        (status = 413, description = "The body exceeds the service's size limit.", body = Problem,
            content_type = "application/problem+json"),
        (status = 415, description = "The body is not declared as application/json.",
            body = Problem, content_type = "application/problem+json"),
        (status = 422, description = "Invalid fields (an unknown path or metric, a bad axis), \
            a sweep above the service limits (points, estimated work, steps), or a plot with \
            too many lines; `errors` names each field.", body = Problem,
            content_type = "application/problem+json"),
        (status = 503, description = "Overloaded or timed out; retry after `Retry-After` \
            seconds.", body = Problem, content_type = "application/problem+json",
            headers(("Retry-After" = u64, description = "Seconds to wait before retrying."))),
    )
)]
pub(crate) async fn sweep_design(
    State(state): State<AppState>,
    headers: HeaderMap,
    query: Result<Query<PlotOptions>, QueryRejection>,
    ApiJson(request): ApiJson<SweepRequest>,
) -> Result<Response, ApiError> {
    let plot_options = plot::options_from_query(query)?;
    let spec = request.design.clone();
    let media = negotiate::choose(
        &headers,
        &[Media::Json, Media::NdJson, Media::Svg, Media::Csv],
    )?;
    let sweep = request.validate(&state.limits)?;
    if media == Media::NdJson {
        return stream_sweep(&state, sweep).await;
    }
    if media == Media::Svg {
        check_plottable(&sweep)?;
    }
    // The answer is built and, for a plot, drawn inside the job: CPU work stays off the async
    // workers and within the job's slot and deadline.
    state
        .jobs
        .run("sweep", move |cancel| {
            let plan = sweep.plan.clone().with_cancel(cancel.clone());
            let points = plan.run_collect();
            cancel.check()?;
            let response = SweepResponse::new(&sweep, points)?;
            match media {
                Media::Svg => {
                    let svg = plot::sweep_svg(
                        &sweep.requested_axes,
                        &response.metrics,
                        &response.points,
                        &spec,
                        &response.model.version,
                        &response.model.method,
                        &plot_options,
                    )?;
                    Ok(negotiate::respond(Media::Svg, svg))
                }
                Media::Csv => Ok(negotiate::respond(
                    Media::Csv,
                    crate::csv::sweep_csv(
                        &sweep.requested_axes,
                        &response.metrics,
                        &response.points,
                    ),
                )),
                _ => Ok(Json(response).into_response()),
            }
        })
        .await
}

#[cfg(test)]
mod tests {
    use super::*;

    fn axis(json: &str) -> Result<VaryAxis, ApiError> {
        crate::extract::parse_json::<VaryAxis>(json.as_bytes())
    }

    #[test]
    fn both_axis_forms_parse_and_faults_are_named() {
        assert_eq!(
            axis(r#"{"path": "tube.wall_thickness_m", "values": [0.001]}"#),
            Ok(VaryAxis::Values(ValuesAxis {
                path: "tube.wall_thickness_m".into(),
                values: vec![0.001]
            }))
        );
        assert!(matches!(
            axis(r#"{"path": "a", "from": 1, "to": 2, "steps": 3}"#),
            Ok(VaryAxis::Range(RangeAxis { steps: 3, .. }))
        ));
        let message = |r: Result<VaryAxis, ApiError>| match r {
            Err(ApiError::Invalid(e)) => format!("{}: {}", e[0].path, e[0].message),
            other => panic!("expected a field problem, got {other:?}"),
        };
        assert!(message(axis(r#"{"path": "a", "from": 1, "to": 2}"#)).contains("missing steps"));
        assert!(message(axis(r#"{"path": "a", "values": [1], "steps": 2}"#)).contains("not both"));
        assert!(message(axis(r#"{"path": "a"}"#)).contains("give `values`"));
        assert!(message(axis(r#"{"path": "a", "value": [1]}"#)).starts_with("value:"));
        assert!(message(axis(r#"{"values": [1]}"#)).starts_with("path:"));
    }

    #[test]
    fn varied_fields_are_left_to_the_points() {
        let spec: DesignSpec = serde_json::from_str(
            r#"{"magnets":{"grade":"N42","outer_diameter_m":0.012,"length_m":0.02},
                "tube":{"material":"copper-c12200","inner_diameter_m":0.013,
                        "wall_thickness_m":0.9,"length_m":0.3}}"#,
        )
        .expect("parses");
        let mut errors = Vec::new();
        check_base_design(&spec, &["tube.wall_thickness_m"], &mut errors);
        assert!(errors.is_empty(), "{errors:?}");
        check_base_design(&spec, &["load.payload_mass_kg"], &mut errors);
        assert_eq!(errors[0].path, "design.tube.wall_thickness_m");
    }
}
