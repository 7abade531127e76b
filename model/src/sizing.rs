//! Inverse sizing: the smallest value of one design field that meets every target with a
//! safety factor, at the worst of the cold and the hot condition.
//!
//! Targets and how the safety factor SF applies (the achieved value must beat the target by
//! SF, in the safe direction):
//! - `max_terminal_speed_m_per_s` T: terminal speed <= T / SF (runaway fails);
//! - `max_exit_time_s` T: exit time <= T / SF (a stroke that never exits fails);
//! - `min_exit_time_s` T: exit time >= T * SF;
//! - `max_deceleration_m_per_s2` A: largest deceleration <= A / SF.
//!
//! Each target is checked with the tube and magnets at their job temperature (cold) and at
//! `hot_temperature_c` (conductor resistivity up, remanence down: weaker braking, so speed
//! limits bind hot while deceleration limits bind cold). The search samples the range,
//! checks that feasibility switches once, then bisects to a relative width of 1e-6 of the
//! range (integer fields: to the smallest whole number).

use crate::caution::{Caution, CautionKind, push_unique};
use crate::design::Design;
use crate::designpath;
use crate::error::{ModelError, show};
use crate::limits::Limits;
use crate::metrics::{Metric, evaluate_estimated};
use crate::report::{Discretisation, Fidelity, ModelInfo};
use crate::spec::DesignSpec;
use crate::stroke::StrokeOptions;
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;

/// Targets a sized design must meet (at least one).
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
#[serde(deny_unknown_fields)]
pub struct SizeTarget {
    /// Largest acceptable terminal speed, m/s.
    #[serde(default)]
    #[cfg_attr(feature = "schema", schema(exclusive_minimum = 0.0))]
    pub max_terminal_speed_m_per_s: Option<f64>,
    /// Longest acceptable stroke time (stack centre reaching the far end), s.
    #[serde(default)]
    #[cfg_attr(feature = "schema", schema(exclusive_minimum = 0.0))]
    pub max_exit_time_s: Option<f64>,
    /// Shortest acceptable stroke time, s.
    #[serde(default)]
    #[cfg_attr(feature = "schema", schema(exclusive_minimum = 0.0))]
    pub min_exit_time_s: Option<f64>,
    /// Largest acceptable deceleration, m/s^2.
    #[serde(default)]
    #[cfg_attr(feature = "schema", schema(exclusive_minimum = 0.0))]
    pub max_deceleration_m_per_s2: Option<f64>,
}

/// One target in normalised form.
#[derive(Debug, Clone, Copy)]
struct Bound {
    name: &'static str,
    metric: Metric,
    limit: f64,
    upper: bool,
}

impl SizeTarget {
    fn bounds(&self) -> Vec<Bound> {
        let mut v = Vec::new();
        let mut add = |name, metric, limit: Option<f64>, upper| {
            if let Some(limit) = limit {
                v.push(Bound {
                    name,
                    metric,
                    limit,
                    upper,
                });
            }
        };
        add(
            "max_terminal_speed_m_per_s",
            Metric::TerminalSpeed,
            self.max_terminal_speed_m_per_s,
            true,
        );
        add(
            "max_exit_time_s",
            Metric::ExitTime,
            self.max_exit_time_s,
            true,
        );
        add(
            "min_exit_time_s",
            Metric::ExitTime,
            self.min_exit_time_s,
            false,
        );
        add(
            "max_deceleration_m_per_s2",
            Metric::MaxDeceleration,
            self.max_deceleration_m_per_s2,
            true,
        );
        v
    }
}

/// A sizing job.
#[derive(Debug, Clone, PartialEq)]
pub struct SizeRequest {
    /// The design to size; the varied field's value in it is ignored.
    pub base: DesignSpec,
    /// Dotted path of the field to size.
    pub path: String,
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
}

/// Metrics of the sized design at one temperature.
pub type Achieved = BTreeMap<String, Option<f64>>;

/// The answer of a sizing job.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
pub struct SizeResult {
    /// Whether some value in the range meets every target with the safety factor.
    pub feasible: bool,
    /// The smallest such value (null when infeasible).
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
    /// The same ratio per target.
    pub margins: BTreeMap<String, f64>,
    /// Designs evaluated during the search.
    pub evaluations: usize,
    /// Cautions, the standing safety caution first.
    pub cautions: Vec<Caution>,
    /// Method and resolution.
    pub model: ModelInfo,
}

struct Evaluation {
    /// Smallest ratio margin / safety factor minus one: >= 0 is feasible.
    slack: f64,
    margin: f64,
    margins: BTreeMap<String, f64>,
    cold: Achieved,
    hot: Achieved,
    /// Estimated relative numerical error of the metrics, cold and hot.
    estimate: Option<f64>,
}

struct Search<'a> {
    req: &'a SizeRequest,
    keep_going: &'a (dyn Fn() -> bool + Sync),
    limits: &'a Limits,
    bounds: Vec<Bound>,
    metrics: Vec<Metric>,
    evaluations: usize,
}

impl Search<'_> {
    fn spec_at(&self, x: f64) -> Result<DesignSpec, ModelError> {
        let mut spec = self.req.base.clone();
        designpath::set(&mut spec, &self.req.path, x)?;
        Ok(spec)
    }

    fn evaluate(&mut self, x: f64) -> Result<Evaluation, ModelError> {
        if !(self.keep_going)() {
            return Err(ModelError::Cancelled);
        }
        self.limits.cancel.check()?;
        self.evaluations += 1;
        let cold = Design::from_spec(&self.spec_at(x)?)?;
        let hot = match self.req.hot_temperature_c {
            Some(t) => cold.at_temperatures(t, t),
            None => cold.clone(),
        };
        let (vc, ec) =
            evaluate_estimated(&cold, &self.metrics, &self.req.stroke, self.limits, None)?;
        let (vh, eh) =
            evaluate_estimated(&hot, &self.metrics, &self.req.stroke, self.limits, None)?;
        let estimate = match (ec, eh) {
            (Some(a), Some(b)) => Some(a.max(b)),
            (a, b) => a.or(b),
        };
        let sf = self.req.safety_factor;
        let mut margins = BTreeMap::new();
        let mut margin = f64::INFINITY;
        for b in &self.bounds {
            let idx = self
                .metrics
                .iter()
                .position(|m| *m == b.metric)
                .unwrap_or(0);
            let mut ratio = f64::INFINITY;
            for v in [vc[idx], vh[idx]] {
                let r = match (v, b.upper) {
                    (Some(a), true) if a > 0.0 => b.limit / a,
                    (Some(_), true) => f64::INFINITY,
                    (Some(a), false) => a / b.limit,
                    // No terminal speed (runaway) or no exit: an upper bound fails.
                    (None, true) => 0.0,
                    // Never exiting satisfies a minimum time.
                    (None, false) => f64::INFINITY,
                };
                ratio = ratio.min(r);
            }
            margins.insert(b.name.to_string(), ratio);
            margin = margin.min(ratio);
        }
        let named = |v: Vec<Option<f64>>| {
            self.metrics
                .iter()
                .map(|m| m.name().to_string())
                .zip(v)
                .collect()
        };
        Ok(Evaluation {
            slack: margin / sf - 1.0,
            margin,
            margins,
            cold: named(vc),
            hot: named(vh),
            estimate,
        })
    }
}

/// Sizes one field. See the module documentation for the rules.
pub fn size(req: &SizeRequest, limits: &Limits) -> Result<SizeResult, ModelError> {
    size_while(req, limits, &|| true)
}

/// Like [`size`], but gives up with [`ModelError::Cancelled`] before the next design
/// evaluation once `keep_going` answers false (a caller whose deadline has passed).
pub fn size_while(
    req: &SizeRequest,
    limits: &Limits,
    keep_going: &(dyn Fn() -> bool + Sync),
) -> Result<SizeResult, ModelError> {
    designpath::check_path(&req.path, "vary.path")?;
    let integer = designpath::is_integer_path(&req.path);
    if !(req.min.is_finite() && req.max.is_finite()) || req.min >= req.max {
        return Err(ModelError::field(
            "vary.max",
            "need finite vary.min < vary.max",
        ));
    }
    if !(req.safety_factor.is_finite() && (1.0..=10.0).contains(&req.safety_factor)) {
        return Err(ModelError::field(
            "safety_factor",
            "must be between 1 and 10",
        ));
    }
    if let Some(t) = req.hot_temperature_c
        && !(t.is_finite() && (-60.0..=400.0).contains(&t))
    {
        return Err(ModelError::field(
            "hot_temperature_c",
            "must be between -60 and 400 C",
        ));
    }
    let bounds = req.target.bounds();
    if bounds.is_empty() {
        return Err(ModelError::field("target", "give at least one target"));
    }
    for b in &bounds {
        if !(b.limit.is_finite() && b.limit > 0.0) {
            return Err(ModelError::field(
                format!("target.{}", b.name),
                "must be a finite number above zero",
            ));
        }
    }
    let mut metrics: Vec<Metric> = vec![Metric::TerminalSpeed, Metric::Damping, Metric::PeakForce];
    for b in &bounds {
        if !metrics.contains(&b.metric) {
            metrics.push(b.metric);
        }
    }
    if bounds.iter().any(|b| b.metric.needs_stroke()) {
        metrics.extend([
            Metric::ExitTime,
            Metric::MaxSpeed,
            Metric::MaxDeceleration,
            Metric::Heat,
        ]);
        metrics.dedup();
        metrics.sort();
        metrics.dedup();
    }
    let mut search = Search {
        req,
        keep_going,
        limits,
        bounds,
        metrics,
        evaluations: 0,
    };
    let mut cautions = vec![Caution::standing_safety()];

    // Sample the range.
    let (lo, hi) = if integer {
        (req.min.ceil(), req.max.floor())
    } else {
        (req.min, req.max)
    };
    if lo > hi {
        return Err(ModelError::field(
            "vary.min",
            "the range holds no whole number",
        ));
    }
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
    let mut evals: Vec<(f64, Option<Evaluation>)> = Vec::new();
    let mut errors = Vec::new();
    for &x in &xs {
        match search.evaluate(x) {
            Ok(e) => evals.push((x, Some(e))),
            Err(ModelError::Cancelled) => return Err(ModelError::Cancelled),
            Err(e) => {
                errors.push(format!("{x}: {e}"));
                evals.push((x, None));
            }
        }
    }
    if !errors.is_empty() {
        cautions.push(Caution::new(
            CautionKind::ModelLimit,
            format!(
                "Some values in the range are not valid designs and were skipped: {}",
                errors.join("; ")
            ),
        ));
    }
    let feasible_at = |e: &Option<Evaluation>| e.as_ref().is_some_and(|e| e.slack >= 0.0);
    let first = evals.iter().position(|(_, e)| feasible_at(e));
    let switches = evals
        .windows(2)
        .filter(|w| feasible_at(&w[0].1) != feasible_at(&w[1].1))
        .count();
    if switches > 1 {
        cautions.push(Caution::new(
            CautionKind::Numerical,
            format!(
                "Meeting the targets is not monotone in {} over the range: the smallest feasible value \
                 is reported; check the neighbourhood.",
                req.path
            ),
        ));
    }

    let (feasible, x_final, eval_final) = match first {
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
        Some(0) => {
            cautions.push(Caution::new(
                CautionKind::ModelLimit,
                format!(
                    "The smallest value of the range, {}, already meets every target.",
                    show(lo)
                ),
            ));
            let e = search.evaluate(lo)?;
            (true, lo, e)
        }
        Some(i) => {
            let (mut a, mut b) = (evals[i - 1].0, evals[i].0);
            let tol = if integer { 1.0 } else { 1e-6 * (hi - lo) };
            while b - a > tol {
                let mid = if integer {
                    ((a + b) / 2.0).floor()
                } else {
                    0.5 * (a + b)
                };
                if mid <= a || mid >= b {
                    break;
                }
                match search.evaluate(mid) {
                    Ok(e) if e.slack >= 0.0 => b = mid,
                    Err(ModelError::Cancelled) => return Err(ModelError::Cancelled),
                    _ => a = mid,
                }
            }
            let e = search.evaluate(b)?;
            (true, b, e)
        }
    };
    if !feasible {
        cautions.push(Caution::new(
            CautionKind::ModelLimit,
            format!(
                "No value of {} in [{}, {}] meets the targets with safety factor {}; the closest is {} \
                 (achieved safety factor {:.3}).",
                req.path,
                show(req.min),
                show(req.max),
                req.safety_factor,
                show(x_final),
                eval_final.margin
            ),
        ));
    }
    let design_spec = search.spec_at(x_final)?;
    if let Ok(d) = Design::from_spec(&design_spec) {
        for c in d.cautions.clone() {
            push_unique(&mut cautions, c);
        }
        if let Some(t) = req.hot_temperature_c {
            for c in d.at_temperatures(t, t).cautions {
                push_unique(&mut cautions, c);
            }
        }
    }
    let mut model = ModelInfo::new(
        if search.metrics.iter().any(|m| m.needs_stroke()) {
            "spectral+ring_circuit"
        } else {
            "spectral"
        },
        if search.metrics.iter().any(|m| m.needs_stroke()) {
            req.stroke.fidelity
        } else {
            Fidelity::Inductive
        },
        Discretisation::default(),
    );
    // The numbers reported are those of the final design: its estimate is theirs.
    model.error_estimate_relative = eval_final.estimate;
    if let Some(e) = eval_final.estimate
        && e > crate::spectral::NUMERICAL_CAUTION_RELATIVE
    {
        cautions.push(Caution::new(
            CautionKind::Numerical,
            format!(
                "Estimated numerical error of the sized design's metrics is {:.2} %, above {:.0} %; \
                 check the design with a force curve or stroke at finer resolution.",
                100.0 * e,
                100.0 * crate::spectral::NUMERICAL_CAUTION_RELATIVE
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
        evaluations: search.evaluations,
        cautions,
        model,
    })
}
