//! Choosing from stocked parts: every combination of a shop's tubes (cut lengths included),
//! magnets, counts and spacers is judged against the targets ([`crate::jobs::targets`]) and the
//! feasible ones are ranked by the caller's objective.
//!
//! Work is kept small in three ways:
//! - **A steady bound before any stroke.** The braking force of a stack in any finite tube is
//!   at most c v, with c the long-tube low-speed damping of the steady solver (end effects only
//!   weaken braking, and the force-speed curve lies below its initial slope). So the linear-drag
//!   motion m v dv/dx = F - c v, from the same start, is never faster-braked than the real one:
//!   its speed at the stop is a lower bound on the landing speed and on the largest in-stroke
//!   speed, and its travel time an upper bound on the stroke time; free flight without braking
//!   bounds the stroke time from below. A combination whose bound already misses a target, nominal
//!   and hot, is rejected without a stroke; a runaway (no terminal speed) likewise.
//! - **Shared steady solvers.** The steady solver depends on the magnets and the tube's
//!   cross-section, not on the load or the tube length: combinations that differ only in the
//!   cut length share one solver per condition.
//! - **Parallel candidates** (rayon), each judged at its conditions.

use crate::jobs::metrics::Metric;
use crate::jobs::targets::{
    Achieved, Governing, Judge, Margins, SharedSolvers, TargetKind, Verdict,
};
use crate::records::caution::Caution;
use crate::records::design::Design;
use crate::records::error::ModelError;
use crate::records::limits::Limits;
use crate::records::spec::{DesignSpec, LoadSpec, MagnetSpec, Polarity, TubeSpec};
use crate::solvers::spectral::SteadySolver;
use rayon::prelude::*;
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;
use std::sync::Mutex;

/// A stocked tube profile, cut to any of `lengths_m`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
#[serde(deny_unknown_fields)]
pub struct TubePart {
    /// The shop's id for the part.
    pub id: String,
    /// Material id from `GET /v1/materials`.
    pub material: String,
    /// Bore, m.
    pub inner_diameter_m: f64,
    /// Wall thickness, m.
    pub wall_thickness_m: f64,
    /// Cut lengths offered, m (at least one).
    pub lengths_m: Vec<f64>,
    /// Cost per metre of tube (any currency; the same in every part).
    #[serde(default)]
    pub cost_per_m: Option<f64>,
    /// Cost per tube, besides the metre price.
    #[serde(default)]
    pub cost_each: Option<f64>,
}

/// A stocked magnet.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
#[serde(deny_unknown_fields)]
pub struct MagnetPart {
    /// The shop's id for the part.
    pub id: String,
    /// Grade id from `GET /v1/materials`.
    pub grade: String,
    /// Outer diameter, m.
    pub outer_diameter_m: f64,
    /// Inner diameter, m (ring magnets); default 0.
    #[serde(default)]
    pub inner_diameter_m: f64,
    /// Length along the axis, m.
    pub length_m: f64,
    /// Cost per magnet.
    #[serde(default)]
    pub cost_each: Option<f64>,
}

/// A stocked spacer (non-magnetic disc between neighbouring magnets).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
#[serde(deny_unknown_fields)]
pub struct SpacerPart {
    /// The shop's id for the part.
    pub id: String,
    /// Length along the axis, m (0: magnets touch).
    pub length_m: f64,
    /// Cost per spacer (count - 1 are used).
    #[serde(default)]
    pub cost_each: Option<f64>,
}

/// What the shop stocks.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
#[serde(deny_unknown_fields)]
pub struct Stock {
    /// Tube profiles with their cut lengths.
    pub tubes: Vec<TubePart>,
    /// Magnets.
    pub magnets: Vec<MagnetPart>,
    /// Magnet counts allowed in a stack (whole numbers).
    pub counts: Vec<u32>,
    /// Spacers; default: none (magnets touch).
    #[serde(default)]
    pub spacers: Vec<SpacerPart>,
    /// Orientation of neighbours in every stack.
    #[serde(default)]
    pub polarity: Polarity,
}

/// How feasible combinations are ranked (best first).
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
#[serde(rename_all = "snake_case")]
pub enum Objective {
    /// Lowest total cost (tube by length and piece, magnets, spacers).
    #[default]
    LowestCost,
    /// Fewest magnets.
    FewestMagnets,
    /// Lightest moving mass (magnets and payload).
    LightestMovingMass,
    /// Shortest tube.
    ShortestTube,
}

/// One combination of parts.
#[derive(Debug, Clone, PartialEq)]
struct Combination {
    tube: usize,
    length_m: f64,
    magnet: usize,
    count: u32,
    spacer: Option<usize>,
}

/// A feasible combination with its figures.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
pub struct Candidate {
    /// Rank by the objective, 1 = best.
    pub rank: usize,
    /// The tube part's id.
    pub tube_id: String,
    /// The cut length, m.
    pub tube_length_m: f64,
    /// The magnet part's id.
    pub magnet_id: String,
    /// Magnets in the stack.
    pub count: u32,
    /// The spacer part's id, when spacers are used.
    pub spacer_id: Option<String>,
    /// Total cost of the parts (0 for parts without a cost).
    pub cost: f64,
    /// Moving mass: magnets and payload, kg.
    pub moving_mass_kg: f64,
    /// The complete design, ready for the other endpoints.
    pub design: DesignSpec,
    /// Achieved safety factor at the worst condition.
    pub margin: f64,
    /// Per target, at its worst condition.
    pub margins: Margins,
    /// Per target, over the nominal design cold and hot.
    pub margins_nominal: Margins,
    /// Per target, over the tolerance corners (None without tolerances).
    pub margins_worst_corner: Option<Margins>,
    /// Where each target is tightest.
    pub governing: BTreeMap<TargetKind, Governing>,
    /// Metrics of the nominal design cold.
    pub achieved_cold: Achieved,
    /// Metrics of the nominal design hot.
    pub achieved_hot: Achieved,
    /// Cautions of the design and its results (no standing caution).
    pub cautions: Vec<Caution>,
}

/// The answer of a selection.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Selection {
    /// Feasible combinations, best first.
    pub feasible: Vec<Candidate>,
    /// Combinations enumerated.
    pub combinations: usize,
    /// Combinations rejected by the steady bound, without a stroke.
    pub pruned_by_steady_bound: usize,
    /// Combinations judged in full (strokes at every condition when targets need them).
    pub judged_in_full: usize,
    /// Rejected combinations by reason (`runaway`, `clearance`, `invalid_design`,
    /// `misses_<target>`, `failed`).
    pub rejected: BTreeMap<String, usize>,
}

/// A validated selection, ready to run.
#[derive(Debug, Clone)]
pub struct SelectionPlan {
    stock: Stock,
    load: LoadSpec,
    judge: Judge,
    objective: Objective,
    combos: Vec<Combination>,
}

/// Checks a cost: absent, or finite and not negative.
fn check_cost(at: String, v: Option<f64>) -> Result<(), ModelError> {
    match v {
        Some(c) if !(c.is_finite() && c >= 0.0) => Err(ModelError::field(
            at,
            "a cost must be a finite number, zero or more",
        )),
        _ => Ok(()),
    }
}

/// Checks the stock: non-empty lists, known materials and grades, sizes and lengths in range,
/// costs finite and not negative, counts whole and in range.
fn check_stock(stock: &Stock) -> Result<(), ModelError> {
    for (name, empty) in [
        ("parts.tubes", stock.tubes.is_empty()),
        ("parts.magnets", stock.magnets.is_empty()),
        ("parts.counts", stock.counts.is_empty()),
    ] {
        if empty {
            return Err(ModelError::field(name, "give at least one part"));
        }
    }
    for (i, t) in stock.tubes.iter().enumerate() {
        if t.lengths_m.is_empty() {
            return Err(ModelError::field(
                format!("parts.tubes[{i}].lengths_m"),
                "give at least one length",
            ));
        }
        if crate::records::materials::find_conductor(&t.material).is_err() {
            return Err(ModelError::field(
                format!("parts.tubes[{i}].material"),
                format!(
                    "unknown or unsuitable conductor '{}'; see GET /v1/materials",
                    t.material
                ),
            ));
        }
        for (name, v) in [
            ("inner_diameter_m", t.inner_diameter_m),
            ("wall_thickness_m", t.wall_thickness_m),
        ] {
            if !(v.is_finite() && v > 0.0 && v <= 1.0) {
                return Err(ModelError::field(
                    format!("parts.tubes[{i}].{name}"),
                    "must be greater than 0 and at most 1 m",
                ));
            }
        }
        if let Some(j) = t
            .lengths_m
            .iter()
            .position(|l| !(l.is_finite() && *l > 0.0 && *l <= 20.0))
        {
            return Err(ModelError::field(
                format!("parts.tubes[{i}].lengths_m[{j}]"),
                "must be greater than 0 and at most 20 m",
            ));
        }
        check_cost(format!("parts.tubes[{i}].cost_per_m"), t.cost_per_m)?;
        check_cost(format!("parts.tubes[{i}].cost_each"), t.cost_each)?;
    }
    for (i, m) in stock.magnets.iter().enumerate() {
        if crate::records::materials::find_grade(&m.grade).is_none() {
            return Err(ModelError::field(
                format!("parts.magnets[{i}].grade"),
                format!("unknown grade '{}'; see GET /v1/materials", m.grade),
            ));
        }
        for (name, v) in [
            ("outer_diameter_m", m.outer_diameter_m),
            ("length_m", m.length_m),
        ] {
            if !(v.is_finite() && v > 0.0 && v <= 1.0) {
                return Err(ModelError::field(
                    format!("parts.magnets[{i}].{name}"),
                    "must be greater than 0 and at most 1 m",
                ));
            }
        }
        check_cost(format!("parts.magnets[{i}].cost_each"), m.cost_each)?;
    }
    for (i, s) in stock.spacers.iter().enumerate() {
        if !(s.length_m.is_finite() && (0.0..=1.0).contains(&s.length_m)) {
            return Err(ModelError::field(
                format!("parts.spacers[{i}].length_m"),
                "must be between 0 and 1 m",
            ));
        }
        check_cost(format!("parts.spacers[{i}].cost_each"), s.cost_each)?;
    }
    for (i, &c) in stock.counts.iter().enumerate() {
        if !(1..=crate::records::design::MAX_MAGNETS).contains(&c) {
            return Err(ModelError::field(
                format!("parts.counts[{i}]"),
                format!(
                    "must be a whole number from 1 to {}",
                    crate::records::design::MAX_MAGNETS
                ),
            ));
        }
    }
    Ok(())
}

/// Work units of one combination: conditions x (1 steady, or 5 per quasi-static stroke, 50 per
/// inductive or automatic stroke), as for `/v1/sweep`.
pub fn work_per_combination(judge: &Judge) -> usize {
    let per = if judge.needs_stroke() {
        match judge.stroke().fidelity {
            crate::records::report::Fidelity::QuasiStatic => 5,
            _ => 50,
        }
    } else {
        1
    };
    judge.condition_count() * per
}

impl SelectionPlan {
    /// Checks the stock (non-empty lists, costs finite and not negative, counts whole and in
    /// range) and the work against `limits.max_sweep_points`, naming the lists that drive it.
    ///
    /// # Errors
    /// [`ModelError::Invalid`] naming the first faulty part; [`ModelError::TooLarge`] naming
    /// `parts` when the combinations' work exceeds the limit.
    pub fn new(
        stock: Stock,
        load: LoadSpec,
        judge: Judge,
        objective: Objective,
        limits: &Limits,
    ) -> Result<Self, ModelError> {
        check_stock(&stock)?;
        let mut combos = Vec::new();
        let spacers: Vec<Option<usize>> = if stock.spacers.is_empty() {
            vec![None]
        } else {
            (0..stock.spacers.len()).map(Some).collect()
        };
        // Enumerated so that combinations sharing a steady solver (same cross-section, magnet,
        // count and spacer; only the cut length differs) are neighbours.
        let lengths: usize = stock.tubes.iter().map(|t| t.lengths_m.len()).sum();
        let total = lengths
            .saturating_mul(stock.magnets.len())
            .saturating_mul(stock.counts.len())
            .saturating_mul(spacers.len());
        let work = total.saturating_mul(work_per_combination(&judge));
        if work > limits.max_sweep_points {
            return Err(ModelError::TooLarge {
                path: "parts".into(),
                message: format!(
                    "{lengths} tube lengths (parts.tubes) x {} magnets (parts.magnets) x {} counts \
                     (parts.counts) x {} spacers (parts.spacers) = {total} combinations, at {} \
                     work units each ({} conditions), is {work} units, above the service limit of \
                     {}; offer fewer parts, or drop tolerances or stroke targets",
                    stock.magnets.len(),
                    stock.counts.len(),
                    spacers.len(),
                    work_per_combination(&judge),
                    judge.condition_count(),
                    limits.max_sweep_points
                ),
            });
        }
        for (ti, t) in stock.tubes.iter().enumerate() {
            for (mi, _) in stock.magnets.iter().enumerate() {
                for &count in &stock.counts {
                    for &spacer in &spacers {
                        for &length_m in &t.lengths_m {
                            combos.push(Combination {
                                tube: ti,
                                length_m,
                                magnet: mi,
                                count,
                                spacer,
                            });
                        }
                    }
                }
            }
        }
        Ok(Self {
            stock,
            load,
            judge,
            objective,
            combos,
        })
    }

    /// The same plan under the job's cancellation token.
    pub fn with_cancel(mut self, cancel: crate::records::cancel::CancelToken) -> Self {
        self.judge = self.judge.with_cancel(cancel);
        self
    }

    /// Number of combinations.
    pub fn len(&self) -> usize {
        self.combos.len()
    }

    /// Whether there are none (never, once validated).
    pub fn is_empty(&self) -> bool {
        self.combos.is_empty()
    }

    /// The design of one combination.
    fn spec(&self, c: &Combination) -> DesignSpec {
        let t = &self.stock.tubes[c.tube];
        let m = &self.stock.magnets[c.magnet];
        DesignSpec {
            magnets: MagnetSpec {
                grade: Some(m.grade.clone()),
                remanence_t: None,
                density_kg_per_m3: None,
                outer_diameter_m: m.outer_diameter_m,
                inner_diameter_m: m.inner_diameter_m,
                length_m: m.length_m,
                count: c.count,
                polarity: self.stock.polarity,
                spacer_length_m: c.spacer.map_or(0.0, |s| self.stock.spacers[s].length_m),
                temperature_c: None,
            },
            tube: TubeSpec {
                material: Some(t.material.clone()),
                conductivity_s_per_m: None,
                resistivity_temperature_coefficient_per_k: None,
                density_kg_per_m3: None,
                specific_heat_j_per_kg_k: None,
                inner_diameter_m: t.inner_diameter_m,
                wall_thickness_m: t.wall_thickness_m,
                length_m: c.length_m,
                temperature_c: 20.0,
                perforation_fraction: 0.0,
            },
            load: self.load.clone(),
        }
    }

    fn cost(&self, c: &Combination) -> f64 {
        let t = &self.stock.tubes[c.tube];
        let m = &self.stock.magnets[c.magnet];
        let spacer = c
            .spacer
            .and_then(|s| self.stock.spacers[s].cost_each)
            .unwrap_or(0.0);
        t.cost_per_m.unwrap_or(0.0) * c.length_m
            + t.cost_each.unwrap_or(0.0)
            + f64::from(c.count) * m.cost_each.unwrap_or(0.0)
            + f64::from(c.count.saturating_sub(1)) * spacer
    }

    /// The steady bound: the reason a combination can be rejected without a stroke, if any.
    fn steady_reject(&self, design: &Design, solver: &SteadySolver) -> Option<String> {
        let m = solver.metrics(design);
        if m.terminal_speed_m_per_s.is_none() {
            return Some("runaway".into());
        }
        let sf = self.judge.safety_factor();
        let stroke = self.judge.stroke();
        let stop = stroke.stop_for(design.tube.length_m);
        let distance = stop - stroke.start_position_m;
        let mass = design.moving_mass_kg();
        let net = design.steady_drive_force_n();
        let c = m.damping_n_s_per_m;
        for b in self.judge.bounds() {
            if b.metric == Metric::TerminalSpeed {
                let t = m.terminal_speed_m_per_s.unwrap_or(f64::INFINITY);
                if t > 0.0 && b.limit / t < sf {
                    return Some(format!("misses_{}", b.kind));
                }
                continue;
            }
            if net <= 0.0 || distance <= 0.0 {
                continue;
            }
            let v0 = stroke.start_speed_m_per_s;
            match (b.metric, b.upper) {
                (Metric::LandingSpeed | Metric::MaxSpeed, true) => {
                    let v = linear_drag_speed(mass, net, c, v0, distance);
                    if v > 0.0 && b.limit / v < sf {
                        return Some(format!("misses_{}", b.kind));
                    }
                }
                (Metric::StrokeTime, false) => {
                    let t = linear_drag_time(mass, net, c, v0, distance);
                    if t.is_finite() && t / b.limit < sf {
                        return Some(format!("misses_{}", b.kind));
                    }
                }
                (Metric::StrokeTime, true) => {
                    // Free flight is the fastest any brake allows.
                    let a = net / mass;
                    let t = ((v0 * v0 + 2.0 * a * distance).sqrt() - v0) / a;
                    if t > 0.0 && b.limit / t < sf {
                        return Some(format!("misses_{}", b.kind));
                    }
                }
                _ => {}
            }
        }
        None
    }

    /// Judges every combination (in parallel) and ranks the feasible ones. Combinations not
    /// yet started are skipped once `keep_going` answers false, and the job reports
    /// [`ModelError::Cancelled`].
    ///
    /// # Errors
    /// [`ModelError::Cancelled`] when `keep_going` answers false or the job's token fires.
    pub fn run_while(
        &self,
        keep_going: &(dyn Fn() -> bool + Sync),
    ) -> Result<Selection, ModelError> {
        // Groups of neighbours sharing a steady solver: same everything but the cut length.
        let key = |c: &Combination| (c.tube, c.magnet, c.count, c.spacer);
        let mut groups: Vec<(usize, usize)> = Vec::new();
        let mut start = 0;
        for i in 1..=self.combos.len() {
            if i == self.combos.len() || key(&self.combos[i]) != key(&self.combos[start]) {
                groups.push((start, i));
                start = i;
            }
        }
        let rejected = Mutex::new(BTreeMap::<String, usize>::new());
        let reject = |reason: String| {
            *rejected
                .lock()
                .unwrap_or_else(|p| p.into_inner())
                .entry(reason)
                .or_insert(0) += 1;
        };
        let pruned = std::sync::atomic::AtomicUsize::new(0);
        let judged = std::sync::atomic::AtomicUsize::new(0);
        // One table cache for the job: candidates and their conditions share flux tables.
        let judge = self.judge.with_job_cache();
        let judge = &judge;
        let hot = judge.hot_temperature_c();
        let found: Vec<Candidate> = groups
            .par_iter()
            .flat_map_iter(|&(a, b)| {
                let shared = SharedSolvers::for_judge(judge);
                let mut out = Vec::new();
                // The steady bound is taken hot (braking weakest of the nominal conditions).
                let mut bound_solver: Option<SteadySolver> = None;
                for c in &self.combos[a..b] {
                    if !keep_going() {
                        break;
                    }
                    let spec = self.spec(c);
                    let design = match Design::from_spec(&spec) {
                        Ok(d) => d,
                        Err(e) => {
                            let clearance = matches!(&e, ModelError::Invalid(errs)
                                if errs.iter().any(|f| f.message.contains("bore")));
                            reject(
                                if clearance {
                                    "clearance"
                                } else {
                                    "invalid_design"
                                }
                                .into(),
                            );
                            continue;
                        }
                    };
                    let bound_design = match hot {
                        Some(t) => design.at_temperatures(t, t),
                        None => design.clone(),
                    };
                    if bound_solver.is_none() {
                        bound_solver = SteadySolver::new(&bound_design, None).ok();
                    }
                    if let Some(s) = &bound_solver
                        && let Some(reason) = self.steady_reject(&bound_design, s)
                    {
                        pruned.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
                        reject(reason);
                        continue;
                    }
                    judged.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
                    match judge.judge(&spec, Some(&shared), keep_going) {
                        Ok(v) if v.slack >= 0.0 => out.push(self.candidate(c, spec, &design, v)),
                        Ok(v) => reject(
                            if v.margins.get(&v.tightest).is_some_and(|m| *m == 0.0)
                                && v.hot.get(&Metric::TerminalSpeed) == Some(&None)
                            {
                                "runaway".into()
                            } else {
                                format!("misses_{}", v.tightest)
                            },
                        ),
                        Err(ModelError::Cancelled) => {}
                        Err(_) => reject("failed".into()),
                    }
                }
                out
            })
            .collect();
        if !keep_going() {
            return Err(ModelError::Cancelled);
        }
        let mut feasible = found;
        let objective = self.objective;
        let score = |c: &Candidate| -> (f64, f64) {
            let primary = match objective {
                Objective::LowestCost => c.cost,
                Objective::FewestMagnets => f64::from(c.count),
                Objective::LightestMovingMass => c.moving_mass_kg,
                Objective::ShortestTube => c.tube_length_m,
            };
            // Ties: the larger margin first.
            (primary, -c.margin)
        };
        feasible.sort_by(|x, y| {
            score(x)
                .partial_cmp(&score(y))
                .unwrap_or(std::cmp::Ordering::Equal)
        });
        for (i, c) in feasible.iter_mut().enumerate() {
            c.rank = i + 1;
        }
        Ok(Selection {
            feasible,
            combinations: self.combos.len(),
            pruned_by_steady_bound: pruned.into_inner(),
            judged_in_full: judged.into_inner(),
            rejected: rejected.into_inner().unwrap_or_else(|p| p.into_inner()),
        })
    }

    fn candidate(
        &self,
        c: &Combination,
        spec: DesignSpec,
        design: &Design,
        v: Verdict,
    ) -> Candidate {
        Candidate {
            rank: 0,
            tube_id: self.stock.tubes[c.tube].id.clone(),
            tube_length_m: c.length_m,
            magnet_id: self.stock.magnets[c.magnet].id.clone(),
            count: c.count,
            spacer_id: c.spacer.map(|s| self.stock.spacers[s].id.clone()),
            cost: self.cost(c),
            moving_mass_kg: design.moving_mass_kg(),
            design: spec,
            margin: v.margin,
            margins: v.margins,
            margins_nominal: v.margins_nominal,
            margins_worst_corner: v.margins_worst_corner,
            governing: v.governing,
            achieved_cold: v.cold,
            achieved_hot: v.hot,
            cautions: v.cautions,
        }
    }
}

/// Speed after `distance` of m v dv/dx = F - c v from `v0` (linear drag; the braking of any
/// finite tube is at most c v, so this is a lower bound on the real speed). From
/// x(v) = (m/c) [(v0 - v) + (F/c) ln((F - c v0)/(F - c v))] (source: closed form of linear
/// drag with a constant force, common practice), solved for v by bisection.
pub fn linear_drag_speed(mass_kg: f64, force_n: f64, c: f64, v0: f64, distance_m: f64) -> f64 {
    if c <= 0.0 {
        return (v0 * v0 + 2.0 * force_n / mass_kg * distance_m).sqrt();
    }
    let vt = force_n / c;
    if v0 >= vt {
        return vt.min(v0);
    }
    let x = |v: f64| (mass_kg / c) * ((v0 - v) + vt * ((vt - v0) / (vt - v)).ln());
    let (mut lo, mut hi) = (v0, vt);
    for _ in 0..100 {
        let mid = 0.5 * (lo + hi);
        if x(mid) < distance_m {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    lo
}

/// Travel time over `distance` under linear drag (as [`linear_drag_speed`]): an upper bound
/// on the real stroke time. From m dv/dt = F - c v: t = (m/c) ln((F - c v0)/(F - c v1))
/// (source: closed form of linear drag with a constant force, common practice).
pub fn linear_drag_time(mass_kg: f64, force_n: f64, c: f64, v0: f64, distance_m: f64) -> f64 {
    let v1 = linear_drag_speed(mass_kg, force_n, c, v0, distance_m);
    if c <= 0.0 {
        return mass_kg * (v1 - v0) / force_n;
    }
    (mass_kg / c) * ((force_n - c * v0) / (force_n - c * v1)).ln()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_linear_drag_bound_matches_its_closed_forms() {
        // Without drag: v = sqrt(v0^2 + 2 a d), t = (v - v0) / a (source: textbook kinematics,
        // common practice).
        let v = linear_drag_speed(2.0, 19.6133, 0.0, 0.0, 0.5);
        assert!((v - (2.0 * 9.80665 * 0.5_f64).sqrt()).abs() < 1e-12, "{v}");
        let t = linear_drag_time(2.0, 19.6133, 0.0, 0.0, 0.5);
        assert!((t - v / 9.80665).abs() < 1e-12, "{t}");
        // With drag: the distance x(v) = (m/c) [(v0 - v) + (F/c) ln((F - c v0)/(F - c v))] of
        // the speed found is the distance asked, the speed stays below F/c, and the time
        // equals (m/c) ln(F / (F - c v)) (source: closed form of linear drag with a constant
        // force, common practice). Here m = 2 kg, F = 19.6 N, c = 10 N s/m: 0.5 m is about
        // 1.3 lengths (m/c)(F/c) of the approach to the terminal speed.
        let (m, f, c) = (2.0, 19.6133, 10.0);
        let v = linear_drag_speed(m, f, c, 0.0, 0.5);
        let x = (m / c) * (-v + (f / c) * (f / (f - c * v)).ln());
        assert!((x - 0.5).abs() < 1e-9, "{x}");
        assert!(v < f / c && v > 0.5 * f / c, "{v}");
        let t = linear_drag_time(m, f, c, 0.0, 0.5);
        assert!((t - (m / c) * (f / (f - c * v)).ln()).abs() < 1e-12);
        assert!(
            t > 0.5 / (f / c),
            "slower than the terminal speed throughout"
        );
    }
}
