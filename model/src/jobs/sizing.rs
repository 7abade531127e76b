//! Inverse sizing: the smallest (or the largest) value of one design field that meets every
//! target with a safety factor, at the worst condition.
//!
//! Targets, the safety factor and the conditions (cold, hot, tolerance corners) are those of
//! [`crate::jobs::targets`]: feasibility is decided at the worst condition, the worst tolerance
//! corner, hot, for a speed limit. `Seek::Smallest` looks for the smallest feasible value (a
//! wall, a magnet count, a tube length); `Seek::Largest` for the largest (the rated payload,
//! the steepest incline, the longest stroke). The search samples the range, checks that
//! feasibility switches once, then bisects to a relative width of 1e-6 of the range (integer
//! fields: to the whole number; their range ends must be whole numbers).

use crate::jobs::targets::{Judge, Verdict};
use crate::jobs::tolerance::Tolerances;
use crate::records::caution::{Caution, CautionKind, push_unique};
use crate::records::designfield::DesignField;
use crate::records::error::{ModelError, show};
use crate::records::limits::Limits;
use crate::records::report::{Discretisation, Fidelity, ModelInfo};
use crate::records::spec::DesignSpec;
use crate::records::stroke::StrokeOptions;
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;

pub use crate::jobs::targets::{Achieved, Governing, Margins, SizeTarget, TargetKind};

/// Which end of the feasible values a sizing looks for.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
#[serde(rename_all = "snake_case")]
pub enum Seek {
    /// The smallest value that meets every target (a wall, a magnet count, a tube length).
    #[default]
    Smallest,
    /// The largest value that meets every target (the rated payload, the steepest incline,
    /// the longest stroke).
    Largest,
}

/// A sizing job.
#[derive(Debug, Clone, PartialEq)]
pub struct SizeRequest {
    /// The design to size; the varied field's value in it is ignored.
    pub base: DesignSpec,
    /// The field to size.
    pub field: DesignField,
    /// Smallest value allowed.
    pub min: f64,
    /// Largest value allowed.
    pub max: f64,
    /// Targets.
    pub target: SizeTarget,
    /// Safety factor, >= 1.
    pub safety_factor: f64,
    /// Hot condition for tube and magnets, C (None: only the job temperature).
    pub hot_temperature_c: Option<f64>,
    /// How strokes are run for time and deceleration targets.
    pub stroke: StrokeOptions,
    /// Which end of the feasible values to find.
    pub seek: Seek,
    /// Manufacturing tolerances: every target is also checked at each corner, cold and hot.
    pub tolerances: Option<Tolerances>,
}

/// The answer of a sizing job.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
pub struct SizeResult {
    /// Whether some value in the range meets every target with the safety factor.
    pub feasible: bool,
    /// The smallest (or, seeking the largest, the largest) such value (null when infeasible).
    pub value: Option<f64>,
    /// When infeasible: the value in the range that comes closest.
    pub best_value: f64,
    /// The design with the field set to `value` (or `best_value` when infeasible).
    pub design: DesignSpec,
    /// Metrics at the job temperature.
    pub achieved_cold: Achieved,
    /// Metrics at the hot temperature.
    pub achieved_hot: Achieved,
    /// Achieved safety factor: the smallest over targets of target / achieved (upper
    /// targets) or achieved / target (lower targets), at the worse temperature. Equals the
    /// requested safety factor at a tight optimum; below 1 means a target is missed.
    pub margin: f64,
    /// The same ratio per target, at its worst condition.
    pub margins: Margins,
    /// The ratio per target over the nominal design, cold and hot.
    pub margins_nominal: Margins,
    /// The ratio per target over the tolerance corners, cold and hot (None without
    /// tolerances).
    pub margins_worst_corner: Option<Margins>,
    /// Where each target is tightest: the corner and the temperature.
    pub governing: BTreeMap<TargetKind, Governing>,
    /// Tolerance corners of the reported design that are not valid designs or failed.
    pub failed_corners: Vec<String>,
    /// Which end was sought.
    pub seek: Seek,
    /// Designs evaluated during the search.
    pub evaluations: usize,
    /// Cautions, the standing safety caution first.
    pub cautions: Vec<Caution>,
    /// Method and resolution.
    pub model: ModelInfo,
}

/// Sampled values: each with its verdict (None where not a valid design), and the reasons.
type Sampled = (Vec<(f64, Option<Verdict>)>, Vec<String>);

struct Search<'a> {
    req: &'a SizeRequest,
    keep_going: &'a (dyn Fn() -> bool + Sync),
    limits: &'a Limits,
    judge: Judge,
    evaluations: usize,
}

impl Search<'_> {
    fn spec_at(&self, x: f64) -> Result<DesignSpec, ModelError> {
        let mut spec = self.req.base.clone();
        self.req.field.set(&mut spec, x)?;
        Ok(spec)
    }

    /// Samples the range at up to nine values (whole numbers for whole-number fields): each
    /// value's verdict, None where it is not a valid design, and the reasons of those.
    fn sample(&mut self, integer: bool) -> Result<Sampled, ModelError> {
        let (lo, hi) = (self.req.min, self.req.max);
        let samples = if integer {
            ((hi - lo) as usize + 1).min(9)
        } else {
            9
        };
        let xs: Vec<f64> = (0..samples)
            .map(|i| {
                let x = if samples == 1 {
                    lo
                } else {
                    lo + (hi - lo) * i as f64 / (samples - 1) as f64
                };
                if integer { x.round() } else { x }
            })
            .collect();
        let mut evals: Vec<(f64, Option<Verdict>)> = Vec::new();
        let mut errors = Vec::new();
        for &x in &xs {
            match self.evaluate(x) {
                Ok(e) => evals.push((x, Some(e))),
                Err(ModelError::Cancelled) => return Err(ModelError::Cancelled),
                Err(e) => {
                    errors.push(format!("{x}: {e}"));
                    evals.push((x, None));
                }
            }
        }
        Ok((evals, errors))
    }

    fn evaluate(&mut self, x: f64) -> Result<Verdict, ModelError> {
        if !(self.keep_going)() {
            return Err(ModelError::Cancelled);
        }
        self.limits.cancel.check()?;
        self.evaluations += 1;
        let spec = self.spec_at(x)?;
        self.judge.judge(&spec, None, self.keep_going)
    }
}

/// Sizes one field. See the module documentation for the rules.
///
/// # Errors
/// [`ModelError::Invalid`] for an empty range, a whole-number field with a fractional end, or
/// invalid targets, safety factor, hot temperature or tolerances; the solvers' errors.
pub fn size(req: &SizeRequest, limits: &Limits) -> Result<SizeResult, ModelError> {
    size_while(req, limits, &|| true)
}

/// Like [`size`], but gives up with [`ModelError::Cancelled`] before the next design
/// evaluation once `keep_going` answers false (a caller whose deadline has passed).
///
/// # Errors
/// As [`size`], and [`ModelError::Cancelled`].
pub fn size_while(
    req: &SizeRequest,
    limits: &Limits,
    keep_going: &(dyn Fn() -> bool + Sync),
) -> Result<SizeResult, ModelError> {
    let integer = req.field.is_whole();
    if !(req.min.is_finite() && req.max.is_finite()) || req.min >= req.max {
        return Err(ModelError::field(
            "vary.max",
            "need finite vary.min < vary.max",
        ));
    }
    for (at, v) in [("vary.min", req.min), ("vary.max", req.max)] {
        req.field.check_whole(v, at, "")?;
    }
    let judge = Judge::new(
        &req.target,
        req.safety_factor,
        req.hot_temperature_c,
        req.tolerances.clone(),
        req.stroke.clone(),
        // One table cache for the whole search: its evaluations and their conditions share
        // the flux tables of every geometry they meet.
        limits.with_job_cache(),
    )?;
    let mut search = Search {
        req,
        keep_going,
        limits,
        judge,
        evaluations: 0,
    };
    let mut cautions = vec![Caution::standing_safety()];
    let largest = req.seek == Seek::Largest;

    let (lo, hi) = (req.min, req.max);
    let (evals, errors) = search.sample(integer)?;
    if !errors.is_empty() {
        cautions.push(Caution::new(
            CautionKind::ModelLimit,
            format!(
                "Some values in the range are not valid designs and were skipped: {}",
                errors.join("; ")
            ),
        ));
    }
    let feasible_at = |e: &Option<Verdict>| e.as_ref().is_some_and(|e| e.slack >= 0.0);
    let pick = if largest {
        evals.iter().rposition(|(_, e)| feasible_at(e))
    } else {
        evals.iter().position(|(_, e)| feasible_at(e))
    };
    let switches = evals
        .windows(2)
        .filter(|w| feasible_at(&w[0].1) != feasible_at(&w[1].1))
        .count();
    if switches > 1 {
        cautions.push(Caution::new(
            CautionKind::Numerical,
            format!(
                "Meeting the targets is not monotone in {} over the range: the {} feasible value \
                 is reported; check the neighbourhood.",
                req.field,
                if largest { "largest" } else { "smallest" }
            ),
        ));
    }
    let edge = if largest { evals.len() - 1 } else { 0 };

    let (feasible, x_final, eval_final) = match pick {
        None => {
            // Infeasible: report the value that comes closest.
            let (bx, _) = evals
                .iter()
                .filter_map(|(x, e)| e.as_ref().map(|e| (*x, e.slack)))
                .fold((lo, f64::NEG_INFINITY), |acc, (x, s)| {
                    if s > acc.1 { (x, s) } else { acc }
                });
            let e = search.evaluate(bx)?;
            (false, bx, e)
        }
        Some(i) if i == edge => {
            let x = evals[i].0;
            cautions.push(Caution::new(
                CautionKind::ModelLimit,
                format!(
                    "The {} value of the range, {}, already meets every target.",
                    if largest { "largest" } else { "smallest" },
                    show(x)
                ),
            ));
            let e = search.evaluate(x)?;
            (true, x, e)
        }
        Some(i) => {
            // `good` meets the targets, `bad` does not; bisect between them.
            let mut good = evals[i].0;
            let mut bad = if largest {
                evals[i + 1].0
            } else {
                evals[i - 1].0
            };
            let tol = if integer { 1.0 } else { 1e-6 * (hi - lo) };
            while (good - bad).abs() > tol {
                let mid = if integer {
                    ((good + bad) / 2.0).floor()
                } else {
                    0.5 * (good + bad)
                };
                if mid <= good.min(bad) || mid >= good.max(bad) {
                    break;
                }
                match search.evaluate(mid) {
                    Ok(e) if e.slack >= 0.0 => good = mid,
                    Err(ModelError::Cancelled) => return Err(ModelError::Cancelled),
                    _ => bad = mid,
                }
            }
            let e = search.evaluate(good)?;
            (true, good, e)
        }
    };
    finish(search, feasible, x_final, eval_final, cautions)
}

/// The answer for the value found (`x_final`, judged as `eval_final`), with the cautions.
fn finish(
    search: Search<'_>,
    feasible: bool,
    x_final: f64,
    eval_final: Verdict,
    mut cautions: Vec<Caution>,
) -> Result<SizeResult, ModelError> {
    let req = search.req;
    if !feasible {
        cautions.push(Caution::new(
            CautionKind::ModelLimit,
            format!(
                "No value of {} in [{}, {}] meets the targets with safety factor {} at every \
                 condition; the closest is {} (achieved safety factor {:.3}, {} governing).",
                req.field,
                show(req.min),
                show(req.max),
                req.safety_factor,
                show(x_final),
                eval_final.margin,
                eval_final.tightest
            ),
        ));
    }
    if !eval_final.failed_corners.is_empty() {
        cautions.push(Caution::new(
            CautionKind::ModelLimit,
            format!(
                "Tolerance corners that are not valid designs count as missing every target: {}",
                eval_final.failed_corners.join("; ")
            ),
        ));
    }
    let design_spec = search.spec_at(x_final)?;
    for c in eval_final.cautions.clone() {
        push_unique(&mut cautions, c);
    }
    let stroke = search.judge.needs_stroke();
    let mut model = ModelInfo::new(
        if stroke {
            "spectral+ring_circuit"
        } else {
            "spectral"
        },
        if stroke {
            req.stroke.fidelity
        } else {
            Fidelity::Inductive
        },
        Discretisation::default(),
    );
    // The numbers reported are those of the final design: its estimate is theirs.
    model.error_estimate_relative = eval_final.estimate;
    if let Some(e) = eval_final.estimate
        && e > crate::solvers::spectral::NUMERICAL_CAUTION_RELATIVE
    {
        cautions.push(Caution::new(
            CautionKind::Numerical,
            format!(
                "Estimated numerical error of the sized design's metrics is {:.2} %, above {:.0} %; \
                 check the design with a force curve or stroke at finer resolution.",
                100.0 * e,
                100.0 * crate::solvers::spectral::NUMERICAL_CAUTION_RELATIVE
            ),
        ));
    }
    Ok(SizeResult {
        feasible,
        value: feasible.then_some(x_final),
        best_value: x_final,
        design: design_spec,
        achieved_cold: eval_final.cold,
        achieved_hot: eval_final.hot,
        margin: eval_final.margin,
        margins: eval_final.margins,
        margins_nominal: eval_final.margins_nominal,
        margins_worst_corner: eval_final.margins_worst_corner,
        governing: eval_final.governing,
        failed_corners: eval_final.failed_corners,
        seek: req.seek,
        evaluations: search.evaluations,
        cautions,
        model,
    })
}
