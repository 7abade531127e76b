//! `POST /v1/select`: the best combination of stocked parts for a load and its targets.
//!
//! The request names what a shop stocks (tube profiles with cut lengths, magnets, allowed
//! counts, spacers, optional costs), the load, the targets, the safety factor, the hot
//! temperature and optional tolerances. The model (`ringdrag_model::jobs::selection`) judges every
//! combination at every condition, after a cheap steady bound has rejected those that cannot
//! meet the targets, and ranks the feasible ones by the objective. A target no part can meet is
//! an answer (`feasible: false`, rejections counted by reason), not an error.
//!
//! Work limit: combinations x conditions x (1 steady, 5 per quasi-static stroke, 50 per
//! inductive or automatic stroke) must stay within the service's `RINGDRAG_MAX_SWEEP_POINTS`
//! (default 10000), as for `/v1/sweep`; beyond it the answer is a 422 naming the part lists.

use crate::api::report::{CautionDetail, FiniteCheck, ModelBlock, by_name, cautions};
use crate::api::simulate::{StartState, stroke_options};
use crate::extract::ApiJson;
use crate::negotiate::{self, Media};
use crate::problem::{ApiError, FieldProblem, Problem};
use crate::state::AppState;
use axum::Json;
use axum::extract::State;
use axum::http::HeaderMap;
use axum::response::{IntoResponse, Response};
use ringdrag_model::jobs::selection::{Candidate, Objective, SelectionPlan, Stock};
use ringdrag_model::jobs::sizing::{Governing, SizeTarget};
use ringdrag_model::jobs::targets::Judge;
use ringdrag_model::jobs::tolerance::Tolerances;
use ringdrag_model::records::report::{Discretisation, Fidelity, ModelInfo};
use ringdrag_model::records::spec::LoadSpec;
use ringdrag_model::{Caution, CautionKind, DesignSpec, Limits, ModelError, StrokeOptions};
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;
use utoipa::ToSchema;

fn sixty() -> f64 {
    60.0
}

/// Request of `POST /v1/select`.
#[derive(Debug, Clone, Deserialize, ToSchema)]
#[serde(deny_unknown_fields)]
pub struct SelectRequest {
    /// What the shop stocks: tubes (material, bore, wall, cut lengths, cost per metre and per
    /// piece), magnets (grade, diameters, length, cost each), allowed counts, spacers (length,
    /// cost each) and the polarity of the stacks. Costs are optional (a missing cost counts as
    /// 0), in any one currency, finite and not negative.
    #[schema(value_type = Stock)]
    pub parts: Stock,
    /// The load: payload, incline, applied force, friction, gravity.
    #[serde(default)]
    pub load: LoadSpec,
    /// Targets every chosen design must meet, at least one (as in `/v1/size`).
    pub target: SizeTarget,
    /// Safety factor applied in the safe direction, from 1 to 10.
    #[schema(minimum = 1.0, maximum = 10.0)]
    pub safety_factor: f64,
    /// Hot condition of tube and magnets, C; every target is checked cold (20 C) and hot.
    #[schema(minimum = -60.0, maximum = 400.0)]
    pub hot_temperature_c: f64,
    /// Manufacturing tolerances; when given, every target is also checked at every tolerance
    /// corner, cold and hot, and feasibility is decided at the worst.
    #[serde(default)]
    #[schema(value_type = Tolerances)]
    pub tolerances: Option<Tolerances>,
    /// How the feasible designs are ranked: `lowest_cost` (default), `fewest_magnets`,
    /// `lightest_moving_mass` or `shortest_tube`; ties go to the larger margin.
    #[serde(default)]
    #[schema(value_type = Objective)]
    pub objective: Objective,
    /// Start state of the strokes; default: the stack centre at the entry end, at rest.
    #[serde(default)]
    pub start: StartState,
    /// Where the load meets its end stop (stack centre position), m; default: each tube's far
    /// end.
    #[serde(default)]
    #[schema(minimum = -100.0, maximum = 100.0)]
    pub stop_position_m: Option<f64>,
    /// Longest simulated time of each stroke, s.
    #[serde(default = "sixty")]
    #[schema(exclusive_minimum = 0.0, maximum = 3600.0, default = 60.0)]
    pub max_time_s: f64,
    /// Fidelity of the strokes (as in `/v1/simulate`).
    #[serde(default)]
    pub fidelity: Fidelity,
}

/// One feasible combination.
#[derive(Debug, Clone, PartialEq, Serialize, ToSchema)]
pub struct SelectedDesign {
    /// Rank by the objective, 1 = best.
    pub rank: u64,
    /// The tube part's id.
    pub tube_id: String,
    /// The cut length, m.
    pub tube_length_m: f64,
    /// The magnet part's id.
    pub magnet_id: String,
    /// Magnets in the stack.
    pub count: u32,
    /// The spacer part's id; null without spacers.
    pub spacer_id: Option<String>,
    /// Total cost of the parts: tube by length and piece, magnets, count - 1 spacers.
    pub cost: f64,
    /// Moving mass: magnets and payload, kg.
    pub moving_mass_kg: f64,
    /// The complete design, ready for `/v1/simulate` and the other endpoints.
    pub design: DesignSpec,
    /// Achieved safety factor at the worst condition (at least the requested one).
    pub margin: Option<f64>,
    /// Per target, at its worst condition; null when unbounded.
    pub margins: BTreeMap<String, Option<f64>>,
    /// Per target, over the nominal design cold and hot.
    pub margins_nominal: BTreeMap<String, Option<f64>>,
    /// Per target, over the tolerance corners; present with tolerances.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub margins_worst_corner: Option<BTreeMap<String, Option<f64>>>,
    /// Which condition governs each target.
    pub governing: BTreeMap<String, Governing>,
    /// Metrics of the nominal design at 20 C, by name.
    pub achieved_cold: BTreeMap<String, Option<f64>>,
    /// Metrics of the nominal design at `hot_temperature_c`, by name.
    pub achieved_hot: BTreeMap<String, Option<f64>>,
    /// This design's cautions as text (the standing safety caution is the response's).
    pub cautions: Vec<String>,
    /// The same cautions with their kinds.
    pub caution_details: Vec<CautionDetail>,
}

/// Response of `POST /v1/select`.
#[derive(Debug, Clone, PartialEq, Serialize, ToSchema)]
pub struct SelectResponse {
    /// Whether any combination meets every target.
    pub feasible: bool,
    /// The objective used.
    #[schema(value_type = Objective)]
    pub objective: Objective,
    /// Every feasible combination, best first.
    pub designs: Vec<SelectedDesign>,
    /// Combinations enumerated.
    pub combinations: u64,
    /// Combinations rejected by the steady bound, before any stroke.
    pub pruned_by_steady_bound: u64,
    /// Combinations judged in full at every condition.
    pub judged_in_full: u64,
    /// Rejected combinations by reason: `runaway`, `clearance` (the magnet does not fit the
    /// bore), `invalid_design`, `misses_<target>` (the tightest target, e.g.
    /// `misses_max_landing_speed_m_per_s`), `failed` (not computable).
    pub rejected: BTreeMap<String, u64>,
    /// Cautions as text, the standing safety caution first.
    pub cautions: Vec<String>,
    /// The same cautions with their kinds.
    pub caution_details: Vec<CautionDetail>,
    /// Method and fidelity; each design chooses its own discretisation.
    pub model: ModelBlock,
}

fn finite_map(m: BTreeMap<String, f64>) -> BTreeMap<String, Option<f64>> {
    m.into_iter()
        .map(|(k, v)| (k, Some(v).filter(|x| x.is_finite())))
        .collect()
}

fn finite_opt_map(m: BTreeMap<String, Option<f64>>) -> BTreeMap<String, Option<f64>> {
    m.into_iter()
        .map(|(k, v)| (k, v.filter(|x| x.is_finite())))
        .collect()
}

impl SelectedDesign {
    fn from_model(c: Candidate, check: &mut FiniteCheck) -> Self {
        let (texts, details) = cautions(c.cautions);
        // The standing caution is carried once, by the response.
        let skip = usize::from(!texts.is_empty());
        Self {
            rank: c.rank as u64,
            tube_id: c.tube_id,
            tube_length_m: check.num("designs[].tube_length_m", c.tube_length_m),
            magnet_id: c.magnet_id,
            count: c.count,
            spacer_id: c.spacer_id,
            cost: check.num("designs[].cost", c.cost),
            moving_mass_kg: check.num("designs[].moving_mass_kg", c.moving_mass_kg),
            design: c.design,
            margin: Some(c.margin).filter(|m| m.is_finite()),
            margins: finite_map(by_name(c.margins)),
            margins_nominal: finite_map(by_name(c.margins_nominal)),
            margins_worst_corner: c.margins_worst_corner.map(|m| finite_map(by_name(m))),
            governing: by_name(c.governing),
            achieved_cold: finite_opt_map(by_name(c.achieved_cold)),
            achieved_hot: finite_opt_map(by_name(c.achieved_hot)),
            cautions: texts.into_iter().skip(skip).collect(),
            caution_details: details.into_iter().skip(skip).collect(),
        }
    }
}

/// A validated selection.
#[derive(Debug)]
pub struct ValidSelect {
    plan: Option<SelectionPlan>,
    objective: Objective,
    fidelity: Fidelity,
    needs_stroke: bool,
    cost_missing: bool,
}

fn push_model_error(err: ModelError, errors: &mut Vec<FieldProblem>) {
    match ApiError::from(err) {
        ApiError::Invalid(found) | ApiError::JobTooLarge(found) => errors.extend(found),
        other => errors.push(FieldProblem {
            path: String::new(),
            message: other.to_string(),
        }),
    }
}

impl SelectRequest {
    /// The validated selection, or every problem found.
    ///
    /// # Errors
    ///
    /// A 422 problem listing every invalid field (catalogue, targets, tolerances, stroke), or a
    /// 413 when the enumeration is larger than `limits` allow.
    pub fn validate(self, limits: &Limits) -> Result<ValidSelect, ApiError> {
        let mut errors = Vec::new();
        let mut too_large = Vec::new();
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
        // Judged even when the stroke options are refused, so that every problem is named
        // at once; the judge is used only when there are none.
        let judge = match Judge::new(
            &self.target,
            self.safety_factor,
            Some(self.hot_temperature_c),
            self.tolerances.clone(),
            stroke.unwrap_or_default(),
            limits.clone(),
        ) {
            Ok(j) => Some(j),
            Err(e) => {
                push_model_error(e, &mut errors);
                None
            }
        };
        if !errors.is_empty() {
            return Err(ApiError::Invalid(errors));
        }
        if !too_large.is_empty() {
            return Err(ApiError::JobTooLarge(too_large));
        }
        let judge = judge.ok_or_else(|| ApiError::Internal("judge lost".into()))?;
        let needs_stroke = judge.needs_stroke();
        let cost_missing = self.objective == Objective::LowestCost
            && (self
                .parts
                .tubes
                .iter()
                .any(|t| t.cost_per_m.is_none() && t.cost_each.is_none())
                || self.parts.magnets.iter().any(|m| m.cost_each.is_none()));
        let plan = SelectionPlan::new(self.parts, self.load, judge, self.objective, limits)
            .map_err(|e| match e {
                // Name every list that drives the number of combinations.
                ModelError::TooLarge { path, message } if path == "parts" => ApiError::JobTooLarge(
                    [
                        "parts.tubes",
                        "parts.magnets",
                        "parts.counts",
                        "parts.spacers",
                    ]
                    .into_iter()
                    .map(|p| FieldProblem {
                        path: p.into(),
                        message: message.clone(),
                    })
                    .collect(),
                ),
                other => ApiError::from(other),
            })?;
        Ok(ValidSelect {
            plan: Some(plan),
            objective: self.objective,
            fidelity: self.fidelity,
            needs_stroke,
            cost_missing,
        })
    }
}

/// Chooses the best combinations of stocked parts for a load and its targets.
#[utoipa::path(
    post,
    path = "/v1/select",
    tag = "jobs",
    operation_id = "select_parts",
    request_body(
        content = SelectRequest,
        content_type = "application/json",
        description = "The stocked parts, the load, the targets, the safety factor, the hot \
            temperature, optional tolerances, the objective and the stroke settings."
    ),
    responses(
        (status = 200, description = "Every feasible combination ranked by the objective, \
            each with its design, cost, margins and governing conditions, and the rejected \
            combinations counted by reason. No feasible combination is an answer with \
            `feasible: false`, not an error.", body = SelectResponse),
        (status = 400, description = "The body is not well-formed JSON.", body = Problem,
            content_type = "application/problem+json"),
        (status = 406, description = "The Accept header does not allow application/json.",
            body = Problem, content_type = "application/problem+json"),
        (status = 413, description = "The body exceeds the service's size limit.", body = Problem,
            content_type = "application/problem+json"),
        (status = 415, description = "The body is not declared as application/json.",
            body = Problem, content_type = "application/problem+json"),
        (status = 422, description = "Invalid fields (an empty part list, a negative or \
            non-finite cost, an unknown material or grade, a stop behind the start, no \
            target...), or more work than the service limit (`errors` names the part \
            lists).", body = Problem, content_type = "application/problem+json"),
        (status = 503, description = "Overloaded or timed out; retry after `Retry-After` \
            seconds.", body = Problem, content_type = "application/problem+json",
            headers(("Retry-After" = u64, description = "Seconds to wait before retrying."))),
    )
)]
pub(crate) async fn select_parts(
    State(state): State<AppState>,
    headers: HeaderMap,
    ApiJson(request): ApiJson<SelectRequest>,
) -> Result<Response, ApiError> {
    negotiate::choose(&headers, &[Media::Json])?;
    let valid = request.validate(&state.limits)?;
    let selection = state
        .jobs
        .run("select", move |cancel| {
            let mut valid = valid;
            let plan = valid.plan.take();
            let plan = plan
                .ok_or_else(|| ApiError::Internal("plan lost".into()))?
                .with_cancel(cancel.clone());
            let keep_going = move || cancel.check().is_ok();
            Ok(plan.run_while(&keep_going).map(|s| (s, valid))?)
        })
        .await?;
    let (s, valid) = selection;
    let mut check = FiniteCheck::default();
    let mut notes = vec![Caution::standing_safety()];
    if valid.cost_missing {
        notes.push(Caution::new(
            CautionKind::Assumption,
            "Some parts have no cost; they count as costing nothing in the lowest-cost ranking.",
        ));
    }
    if s.feasible.is_empty() {
        notes.push(Caution::new(
            CautionKind::ModelLimit,
            "No combination of the stocked parts meets every target with the safety factor; \
             `rejected` counts the reasons.",
        ));
    }
    let (texts, details) = cautions(notes);
    let model = ModelBlock::from_model(
        ModelInfo::new(
            if valid.needs_stroke {
                "spectral+ring_circuit"
            } else {
                "spectral"
            },
            if valid.needs_stroke {
                valid.fidelity
            } else {
                Fidelity::Inductive
            },
            Discretisation::default(),
        ),
        &mut check,
    );
    let designs: Vec<SelectedDesign> = s
        .feasible
        .into_iter()
        .map(|c| SelectedDesign::from_model(c, &mut check))
        .collect();
    let response = SelectResponse {
        feasible: !designs.is_empty(),
        objective: valid.objective,
        designs,
        combinations: s.combinations as u64,
        pruned_by_steady_bound: s.pruned_by_steady_bound as u64,
        judged_in_full: s.judged_in_full as u64,
        rejected: s.rejected.into_iter().map(|(k, v)| (k, v as u64)).collect(),
        cautions: texts,
        caution_details: details,
        model,
    };
    check.finish(response).map(|r| Json(r).into_response())
}
