//! Targets on what the customer feels, and the judgement of one design against them.
//!
//! A target is a limit on one metric (the landing speed at the end stop, the largest speed in
//! the stroke, the largest deceleration, the stroke time, the long-tube terminal speed...).
//! The safety factor SF applies in the safe direction: an upper limit T must be met as
//! achieved <= T / SF, a lower limit as achieved >= T SF. The ratio target / achieved (upper)
//! or achieved / target (lower) is the target's *margin*; a design meets the targets when every
//! margin is at least SF.
//!
//! Every target is checked at every *condition*: the design as given (cold, at its own
//! temperatures) and hot (`hot_temperature_c`: resistivity up, remanence down, so braking
//! weakens; speed limits bind hot, deceleration limits bind cold), and, when tolerances are
//! given, at every tolerance corner ([`crate::jobs::tolerance`]), cold and hot. Feasibility is
//! decided at the worst condition: the worst tolerance corner, hot, for a speed limit. The
//! verdict reports each target's margin at nominal and at the worst corner, and which
//! condition governs it. A corner that is not a valid design (a magnet that no longer fits the
//! bore) fails every target there.

use crate::jobs::metrics::{Metric, evaluate_estimated, evaluate_with_cautions};
use crate::jobs::tolerance::Tolerances;
use crate::records::caution::{Caution, push_unique};
use crate::records::design::Design;
use crate::records::error::ModelError;
use crate::records::limits::Limits;
use crate::records::spec::DesignSpec;
use crate::records::stroke::StrokeOptions;
use crate::solvers::spectral::SteadySolver;
use rayon::prelude::*;
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;
use std::sync::{Arc, OnceLock};

/// Smallest and largest safety factor accepted (1: none; 10: beyond any design code's factor
/// for braking devices; common practice).
pub const SAFETY_FACTOR_RANGE: (f64, f64) = (1.0, 10.0);
/// Coldest and hottest hot condition accepted, C (the tube's temperature bounds in the
/// field table, [`crate::records::designfield`]).
pub const HOT_TEMPERATURE_RANGE_C: (f64, f64) = (-60.0, 400.0);

/// Targets a design must meet (at least one).
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
#[serde(deny_unknown_fields)]
pub struct SizeTarget {
    /// Largest acceptable long-tube terminal speed, m/s.
    #[serde(default)]
    #[cfg_attr(feature = "schema", schema(exclusive_minimum = 0.0))]
    pub max_terminal_speed_m_per_s: Option<f64>,
    /// Largest acceptable speed at the end stop (the landing speed), m/s. A stroke that never
    /// reaches the stop misses it.
    #[serde(default)]
    #[cfg_attr(feature = "schema", schema(exclusive_minimum = 0.0))]
    pub max_landing_speed_m_per_s: Option<f64>,
    /// Largest acceptable speed between the entry and the stop, m/s.
    #[serde(default)]
    #[cfg_attr(feature = "schema", schema(exclusive_minimum = 0.0))]
    pub max_speed_m_per_s: Option<f64>,
    /// Longest acceptable stroke time (start to the end stop), s. A stroke that never reaches
    /// the stop misses it.
    #[serde(default)]
    #[cfg_attr(feature = "schema", schema(exclusive_minimum = 0.0))]
    pub max_stroke_time_s: Option<f64>,
    /// Shortest acceptable stroke time (start to the end stop), s.
    #[serde(default)]
    #[cfg_attr(feature = "schema", schema(exclusive_minimum = 0.0))]
    pub min_stroke_time_s: Option<f64>,
    /// Longest acceptable time for the stack centre to reach the tube's far end, s.
    #[serde(default)]
    #[cfg_attr(feature = "schema", schema(exclusive_minimum = 0.0))]
    pub max_exit_time_s: Option<f64>,
    /// Shortest acceptable time for the stack centre to reach the tube's far end, s.
    #[serde(default)]
    #[cfg_attr(feature = "schema", schema(exclusive_minimum = 0.0))]
    pub min_exit_time_s: Option<f64>,
    /// Largest acceptable deceleration between the entry and the stop, m/s^2.
    #[serde(default)]
    #[cfg_attr(feature = "schema", schema(exclusive_minimum = 0.0))]
    pub max_deceleration_m_per_s2: Option<f64>,
}

/// One kind of target: a limit on one metric, upper or lower.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
#[serde(rename_all = "snake_case")]
pub enum TargetKind {
    /// `max_terminal_speed_m_per_s`.
    MaxTerminalSpeedMPerS,
    /// `max_landing_speed_m_per_s`.
    MaxLandingSpeedMPerS,
    /// `max_speed_m_per_s`.
    MaxSpeedMPerS,
    /// `max_stroke_time_s`.
    MaxStrokeTimeS,
    /// `min_stroke_time_s`.
    MinStrokeTimeS,
    /// `max_exit_time_s`.
    MaxExitTimeS,
    /// `min_exit_time_s`.
    MinExitTimeS,
    /// `max_deceleration_m_per_s2`.
    MaxDecelerationMPerS2,
}

/// The target table: (kind, request name, metric, upper limit), in the order targets are
/// listed and checked.
const TARGETS: [(TargetKind, &str, Metric, bool); 8] = [
    (
        TargetKind::MaxTerminalSpeedMPerS,
        "max_terminal_speed_m_per_s",
        Metric::TerminalSpeed,
        true,
    ),
    (
        TargetKind::MaxLandingSpeedMPerS,
        "max_landing_speed_m_per_s",
        Metric::LandingSpeed,
        true,
    ),
    (
        TargetKind::MaxSpeedMPerS,
        "max_speed_m_per_s",
        Metric::MaxSpeed,
        true,
    ),
    (
        TargetKind::MaxStrokeTimeS,
        "max_stroke_time_s",
        Metric::StrokeTime,
        true,
    ),
    (
        TargetKind::MinStrokeTimeS,
        "min_stroke_time_s",
        Metric::StrokeTime,
        false,
    ),
    (
        TargetKind::MaxExitTimeS,
        "max_exit_time_s",
        Metric::ExitTime,
        true,
    ),
    (
        TargetKind::MinExitTimeS,
        "min_exit_time_s",
        Metric::ExitTime,
        false,
    ),
    (
        TargetKind::MaxDecelerationMPerS2,
        "max_deceleration_m_per_s2",
        Metric::MaxDeceleration,
        true,
    ),
];

impl TargetKind {
    /// Every kind, in table order.
    pub const ALL: [Self; 8] = [
        Self::MaxTerminalSpeedMPerS,
        Self::MaxLandingSpeedMPerS,
        Self::MaxSpeedMPerS,
        Self::MaxStrokeTimeS,
        Self::MinStrokeTimeS,
        Self::MaxExitTimeS,
        Self::MinExitTimeS,
        Self::MaxDecelerationMPerS2,
    ];

    /// The target's name in requests and responses.
    pub fn name(self) -> &'static str {
        TARGETS[self as usize].1
    }

    /// The metric it limits.
    pub fn metric(self) -> Metric {
        TARGETS[self as usize].2
    }

    /// Whether it is an upper limit.
    pub fn upper(self) -> bool {
        TARGETS[self as usize].3
    }
}

/// Target kinds order by name, so that maps keyed by them list names alphabetically.
impl Ord for TargetKind {
    fn cmp(&self, other: &Self) -> std::cmp::Ordering {
        self.name().cmp(other.name())
    }
}

impl PartialOrd for TargetKind {
    fn partial_cmp(&self, other: &Self) -> Option<std::cmp::Ordering> {
        Some(self.cmp(other))
    }
}

impl std::fmt::Display for TargetKind {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}

/// One target in normalised form.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Bound {
    /// Which target.
    pub kind: TargetKind,
    /// The metric it limits.
    pub metric: Metric,
    /// The limit, in the metric's unit.
    pub limit: f64,
    /// Upper limit (true) or lower limit (false).
    pub upper: bool,
}

impl SizeTarget {
    /// The limit given for `kind`, if any.
    pub fn limit(&self, kind: TargetKind) -> Option<f64> {
        match kind {
            TargetKind::MaxTerminalSpeedMPerS => self.max_terminal_speed_m_per_s,
            TargetKind::MaxLandingSpeedMPerS => self.max_landing_speed_m_per_s,
            TargetKind::MaxSpeedMPerS => self.max_speed_m_per_s,
            TargetKind::MaxStrokeTimeS => self.max_stroke_time_s,
            TargetKind::MinStrokeTimeS => self.min_stroke_time_s,
            TargetKind::MaxExitTimeS => self.max_exit_time_s,
            TargetKind::MinExitTimeS => self.min_exit_time_s,
            TargetKind::MaxDecelerationMPerS2 => self.max_deceleration_m_per_s2,
        }
    }

    /// The targets given, in table order.
    pub fn bounds(&self) -> Vec<Bound> {
        TargetKind::ALL
            .into_iter()
            .filter_map(|kind| {
                self.limit(kind).map(|limit| Bound {
                    kind,
                    metric: kind.metric(),
                    limit,
                    upper: kind.upper(),
                })
            })
            .collect()
    }

    /// Checks that at least one target is given and every limit is finite and positive,
    /// naming fields under `at` (e.g. `target`).
    ///
    /// # Errors
    /// [`ModelError::Invalid`] naming `at` without targets, or the first faulty limit.
    pub fn check(&self, at: &str) -> Result<(), ModelError> {
        let bounds = self.bounds();
        if bounds.is_empty() {
            return Err(ModelError::field(at, "give at least one target"));
        }
        for b in &bounds {
            if !(b.limit.is_finite() && b.limit > 0.0) {
                return Err(ModelError::field(
                    format!("{at}.{}", b.kind.name()),
                    "must be a finite number above zero",
                ));
            }
        }
        Ok(())
    }
}

/// Metrics at one temperature, by name.
pub type Achieved = BTreeMap<Metric, Option<f64>>;

/// A ratio per target.
pub type Margins = BTreeMap<TargetKind, f64>;

/// Where a target is tightest.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
pub struct Governing {
    /// `nominal`, or the tolerance corner (e.g. `remanence- conductivity+ wall-`).
    pub corner: String,
    /// `cold` (the design's own temperatures) or `hot` (`hot_temperature_c`).
    pub temperature: String,
}

/// How one design fares against the targets.
#[derive(Debug, Clone, PartialEq)]
pub struct Verdict {
    /// Smallest margin over targets and conditions, divided by the safety factor, minus one:
    /// >= 0 meets every target.
    pub slack: f64,
    /// Smallest margin over targets and conditions (the achieved safety factor).
    pub margin: f64,
    /// Each target's margin at its worst condition.
    pub margins: Margins,
    /// Each target's margin over the nominal design, cold and hot.
    pub margins_nominal: Margins,
    /// Each target's margin over the tolerance corners, cold and hot (None without
    /// tolerances).
    pub margins_worst_corner: Option<Margins>,
    /// Where each target is tightest.
    pub governing: BTreeMap<TargetKind, Governing>,
    /// The target with the smallest margin.
    pub tightest: TargetKind,
    /// Metrics of the nominal design cold.
    pub cold: Achieved,
    /// Metrics of the nominal design hot.
    pub hot: Achieved,
    /// Cautions of the nominal design and its results, cold and hot (no standing caution).
    pub cautions: Vec<Caution>,
    /// Tolerance corners that are not valid designs or failed, with the reason.
    pub failed_corners: Vec<String>,
    /// Estimated relative numerical error of the nominal design's metrics, cold and hot (the
    /// larger), None when not measured.
    pub estimate: Option<f64>,
}

/// Judges designs against targets, at every condition.
#[derive(Debug, Clone)]
pub struct Judge {
    bounds: Vec<Bound>,
    metrics: Vec<Metric>,
    safety_factor: f64,
    hot_temperature_c: Option<f64>,
    tolerances: Option<Tolerances>,
    stroke: StrokeOptions,
    limits: Limits,
}

/// Steady solvers per condition, shared by designs that differ only in what the steady solver
/// does not see (the load, the tube length): build once, use for every such design.
#[derive(Debug, Default)]
pub struct SharedSolvers {
    slots: Vec<OnceLock<Option<Arc<SteadySolver>>>>,
}

impl SharedSolvers {
    /// Empty slots for `judge`'s conditions.
    pub fn for_judge(judge: &Judge) -> Self {
        Self {
            slots: (0..judge.condition_count())
                .map(|_| OnceLock::new())
                .collect(),
        }
    }

    fn get(&self, i: usize, design: &Design) -> Option<Arc<SteadySolver>> {
        let slot = self.slots.get(i)?;
        slot.get_or_init(|| SteadySolver::new(design, None).ok().map(Arc::new))
            .clone()
    }
}

/// What one condition gave.
struct ConditionResult {
    corner: String,
    hot: bool,
    values: Result<Vec<Option<f64>>, ModelError>,
    cautions: Vec<Caution>,
    estimate: Option<f64>,
}

impl Judge {
    /// A judge for `target` with safety factor `safety_factor` (1 to 10), hot condition
    /// `hot_temperature_c` and optional tolerances; strokes run with `stroke`. Validates the
    /// targets (under `target`), the safety factor, the hot temperature and the tolerances.
    ///
    /// # Errors
    /// [`ModelError::Invalid`] naming the first faulty field.
    pub fn new(
        target: &SizeTarget,
        safety_factor: f64,
        hot_temperature_c: Option<f64>,
        tolerances: Option<Tolerances>,
        stroke: StrokeOptions,
        limits: Limits,
    ) -> Result<Self, ModelError> {
        let (sf_lo, sf_hi) = SAFETY_FACTOR_RANGE;
        if !(safety_factor.is_finite() && (sf_lo..=sf_hi).contains(&safety_factor)) {
            return Err(ModelError::field(
                "safety_factor",
                format!("must be between {sf_lo} and {sf_hi}"),
            ));
        }
        let (t_lo, t_hi) = HOT_TEMPERATURE_RANGE_C;
        if let Some(t) = hot_temperature_c
            && !(t.is_finite() && (t_lo..=t_hi).contains(&t))
        {
            return Err(ModelError::field(
                "hot_temperature_c",
                format!("must be between {t_lo} and {t_hi} C"),
            ));
        }
        target.check("target")?;
        if let Some(t) = &tolerances {
            t.check("tolerances")?;
        }
        let bounds = target.bounds();
        let mut metrics = vec![Metric::TerminalSpeed, Metric::Damping, Metric::PeakForce];
        metrics.extend(bounds.iter().map(|b| b.metric));
        if metrics.iter().any(|m| m.needs_stroke()) {
            metrics.extend([
                Metric::LandingSpeed,
                Metric::StrokeTime,
                Metric::MaxSpeed,
                Metric::MaxDeceleration,
                Metric::ExitTime,
                Metric::Heat,
            ]);
        }
        metrics.sort();
        metrics.dedup();
        Ok(Self {
            bounds,
            metrics,
            safety_factor,
            hot_temperature_c,
            tolerances,
            stroke,
            limits,
        })
    }

    /// The same judge under the job's cancellation token (checked between conditions and
    /// inside every solver).
    pub fn with_cancel(mut self, cancel: crate::records::cancel::CancelToken) -> Self {
        self.limits = self.limits.with_cancel(cancel);
        self
    }

    /// The same judge with a fresh table cache for one job (see `Limits::with_job_cache`).
    pub fn with_job_cache(&self) -> Self {
        let mut j = self.clone();
        j.limits = self.limits.with_job_cache();
        j
    }

    /// The targets.
    pub fn bounds(&self) -> &[Bound] {
        &self.bounds
    }

    /// The metrics evaluated at each condition.
    pub fn metrics(&self) -> &[Metric] {
        &self.metrics
    }

    /// The safety factor.
    pub fn safety_factor(&self) -> f64 {
        self.safety_factor
    }

    /// The hot condition, C.
    pub fn hot_temperature_c(&self) -> Option<f64> {
        self.hot_temperature_c
    }

    /// The stroke settings.
    pub fn stroke(&self) -> &StrokeOptions {
        &self.stroke
    }

    /// Whether any target needs a stroke simulation.
    pub fn needs_stroke(&self) -> bool {
        self.metrics.iter().any(|m| m.needs_stroke())
    }

    /// Tolerance corners per temperature (1 without tolerances).
    pub fn corner_count(&self) -> usize {
        let active = self.tolerances.as_ref().map_or(0, Tolerances::active_count);
        if active == 0 { 1 } else { 1 + (1 << active) }
    }

    /// Conditions checked per design: nominal and each tolerance corner, cold and hot.
    pub fn condition_count(&self) -> usize {
        self.corner_count()
            * if self.hot_temperature_c.is_some() {
                2
            } else {
                1
            }
    }

    /// The designs of every condition: (corner label, hot, design or why it is not one).
    fn conditions(&self, spec: &DesignSpec) -> Vec<(String, bool, Result<Design, ModelError>)> {
        let mut bases = vec![("nominal".to_string(), Design::from_spec(spec))];
        if let Some(t) = &self.tolerances
            && t.active_count() > 0
        {
            bases.extend(t.corners(spec));
        }
        let mut out = Vec::new();
        for (label, d) in bases {
            if let Some(hot) = self.hot_temperature_c {
                let h = d
                    .as_ref()
                    .map(|d| d.at_temperatures(hot, hot))
                    .map_err(Clone::clone);
                out.push((label.clone(), false, d));
                out.push((label, true, h));
            } else {
                out.push((label, false, d));
            }
        }
        out
    }

    /// Judges one design at every condition (conditions in parallel). Fails only when the
    /// nominal design is not valid or `keep_going` answers false; a failing corner fails its
    /// targets.
    ///
    /// # Errors
    /// The nominal design's validation error; [`ModelError::Cancelled`].
    pub fn judge(
        &self,
        spec: &DesignSpec,
        solvers: Option<&SharedSolvers>,
        keep_going: &(dyn Fn() -> bool + Sync),
    ) -> Result<Verdict, ModelError> {
        let conditions = self.conditions(spec);
        if let Some((_, _, Err(e))) = conditions.first() {
            return Err(e.clone());
        }
        let results: Vec<ConditionResult> = conditions
            .into_par_iter()
            .enumerate()
            .map(|(i, (corner, hot, design))| {
                if !keep_going() || self.limits.cancel.check().is_err() {
                    return ConditionResult {
                        corner,
                        hot,
                        values: Err(ModelError::Cancelled),
                        cautions: Vec::new(),
                        estimate: None,
                    };
                }
                let eval = design.and_then(|d| match solvers {
                    // Shared solvers (selection): no steady companion per condition; the
                    // stroke's own estimate still counts.
                    Some(shared) => {
                        let solver = shared.get(i, &d);
                        evaluate_with_cautions(
                            &d,
                            &self.metrics,
                            &self.stroke,
                            &self.limits,
                            solver.as_deref(),
                        )
                    }
                    None => evaluate_estimated(&d, &self.metrics, &self.stroke, &self.limits, None),
                });
                match eval {
                    Ok(e) => ConditionResult {
                        corner,
                        hot,
                        values: Ok(e.values),
                        cautions: e.cautions,
                        estimate: e.error_estimate_relative,
                    },
                    Err(e) => ConditionResult {
                        corner,
                        hot,
                        values: Err(e),
                        cautions: Vec::new(),
                        estimate: None,
                    },
                }
            })
            .collect();
        if !keep_going() {
            return Err(ModelError::Cancelled);
        }
        self.limits.cancel.check()?;
        self.verdict(results)
    }

    fn ratio(&self, b: &Bound, values: &Result<Vec<Option<f64>>, ModelError>) -> f64 {
        let Ok(values) = values else {
            return 0.0;
        };
        let idx = self.metrics.iter().position(|m| *m == b.metric);
        let v = idx.and_then(|i| values.get(i).copied().flatten());
        match (v, b.upper) {
            (Some(a), true) if a > 0.0 => b.limit / a,
            (Some(_), true) => f64::INFINITY,
            (Some(a), false) => a / b.limit,
            // No terminal speed (runaway), never reaching the stop or the far end: an upper
            // limit fails.
            (None, true) => 0.0,
            // Never getting there satisfies a minimum time.
            (None, false) => f64::INFINITY,
        }
    }

    fn verdict(&self, results: Vec<ConditionResult>) -> Result<Verdict, ModelError> {
        let named = |v: &Result<Vec<Option<f64>>, ModelError>| -> Achieved {
            match v {
                Ok(v) => self
                    .metrics
                    .iter()
                    .copied()
                    .zip(v.iter().copied())
                    .collect(),
                Err(_) => self.metrics.iter().map(|m| (*m, None)).collect(),
            }
        };
        let nominal: Vec<&ConditionResult> =
            results.iter().filter(|r| r.corner == "nominal").collect();
        let cold = nominal
            .iter()
            .find(|r| !r.hot)
            .map(|r| named(&r.values))
            .unwrap_or_default();
        let hot = nominal
            .iter()
            .find(|r| r.hot)
            .or_else(|| nominal.first())
            .map(|r| named(&r.values))
            .unwrap_or_default();
        if let Some(r) = nominal.first()
            && let Err(e) = &r.values
        {
            return Err(e.clone());
        }
        let mut cautions = Vec::new();
        for r in &nominal {
            for c in &r.cautions {
                push_unique(&mut cautions, c.clone());
            }
        }
        let estimate = nominal
            .iter()
            .filter_map(|r| r.estimate)
            .fold(None, |acc: Option<f64>, e| {
                Some(acc.map_or(e, |a| a.max(e)))
            });
        let failed_corners: Vec<String> = results
            .iter()
            .filter(|r| r.corner != "nominal")
            .filter_map(|r| {
                r.values
                    .as_ref()
                    .err()
                    .map(|e| format!("{} ({}): {e}", r.corner, if r.hot { "hot" } else { "cold" }))
            })
            .collect();
        let has_corners = results.iter().any(|r| r.corner != "nominal");
        let mut margins = BTreeMap::new();
        let mut margins_nominal = BTreeMap::new();
        let mut margins_corner = BTreeMap::new();
        let mut governing = BTreeMap::new();
        let mut margin = f64::INFINITY;
        // A judge has at least one target (`SizeTarget::check`).
        let mut tightest = self
            .bounds
            .first()
            .map_or(TargetKind::MaxTerminalSpeedMPerS, |b| b.kind);
        for b in &self.bounds {
            let mut worst = (f64::INFINITY, "nominal".to_string(), false);
            let mut nom = f64::INFINITY;
            let mut corner = f64::INFINITY;
            for r in &results {
                let q = self.ratio(b, &r.values);
                if r.corner == "nominal" {
                    nom = nom.min(q);
                } else {
                    corner = corner.min(q);
                }
                if q < worst.0 {
                    worst = (q, r.corner.clone(), r.hot);
                }
            }
            margins.insert(b.kind, worst.0);
            margins_nominal.insert(b.kind, nom);
            margins_corner.insert(b.kind, corner);
            governing.insert(
                b.kind,
                Governing {
                    corner: worst.1,
                    temperature: if worst.2 { "hot" } else { "cold" }.to_string(),
                },
            );
            if worst.0 < margin {
                margin = worst.0;
                tightest = b.kind;
            }
        }
        Ok(Verdict {
            slack: margin / self.safety_factor - 1.0,
            margin,
            margins,
            margins_nominal,
            margins_worst_corner: has_corners.then_some(margins_corner),
            governing,
            tightest,
            cold,
            hot,
            cautions,
            failed_corners,
            estimate,
        })
    }
}
