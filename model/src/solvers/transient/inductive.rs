//! The inductive stroke (full ring circuit, method `ring_circuit`): L dI/dt + R I = v G(x),
//! F = -G.I, BDF2 with a Schur-complement coupling to the mechanics on a moving window of rings
//! with one banded Cholesky factor per step size ([`super::stepper`], [`super::circuit`],
//! `kernels::banded`); its step control, resolution companions, and the steady
//! constant-speed run used for validation.

use super::circuit::RingCircuit;
use super::plan::{MIN_STEPS_PER_MAX_TIME, too_many_steps};
use super::plan::{Outcome, Plan, headline_change, start_acceleration, step_for_distance};
use super::plan::{QuasiStaticContext, STEP_FRACTION};
use super::quasistatic::radial_error_estimate;
use super::run::{Recorder, StepRecord, Tally};
use super::stepper::{Stepper, WindowMode, window_capacity_rings};
use crate::records::caution::{Caution, CautionKind, push_unique};
use crate::records::design::Design;
use crate::records::error::ModelError;
use crate::records::limits::Limits;
use crate::records::report::{Discretisation, Fidelity, ModelInfo};
use crate::records::stroke::StrokeOptions;
use crate::solvers::rings::fluxtable::FluxTable;
use crate::solvers::rings::grid::{self, RingGrid};
use crate::solvers::rings::grid::{slowest_time_constant_s, window_half_length_m};

/// The inductive step may grow to this many times the ring-width step (STEP_FRACTION of a
/// ring) where the estimated local error of the braking force stays below
/// [`FORCE_ERROR_TOLERANCE`].
const MAX_STEP_STRETCH: f64 = 8.0;

/// Local error allowed in the braking force per inductive step, relative to the larger of the
/// braking force, the drive and friction.
const FORCE_ERROR_TOLERANCE: f64 = 1e-4;

/// Longer steps than the ring-width step only while the braking force (relative to the larger
/// of it, the drive and friction) and the speed change by less than this per step: the
/// stack's motion is steady, and the largest braking force is still sampled finely.
const STEADY_CHANGE: f64 = 2e-3;

/// The step is doubled when the estimated error is below this fraction of the tolerance
/// (doubling multiplies BDF2's local error by about 8).
const GROWTH_ERROR_RATIO: f64 = 0.1;

/// The inductive step: dt <= this x m / c (BDF2 is L-stable; this is for accuracy only).
const INDUCTIVE_MECHANICAL_FRACTION: f64 = 1.0;

/// Ring-circuit steps (up to milliseconds each with the largest band) between two checks.
const CANCEL_CHECK_STEPS_INDUCTIVE: usize = 4;

/// Checks that the banded window matrix of `circuit` on `grid` fits `cap` entries
/// ([`Limits::max_band_entries`], by default [`MAX_BAND_ENTRIES`]).
pub(super) fn check_band(
    grid: &RingGrid,
    circuit: &RingCircuit,
    mode: WindowMode,
    layers_overridden: bool,
    cap: usize,
) -> Result<(), ModelError> {
    let n = window_capacity_rings(grid, mode) * grid.layers;
    let entries = n.saturating_mul(circuit.half_bandwidth().min(n) + 1);
    if entries > cap {
        let path = if layers_overridden {
            "options.radial_layers"
        } else {
            "design.tube.wall_thickness_m"
        };
        return Err(ModelError::TooLarge {
            path: path.into(),
            message: format!(
                "the ring-circuit matrix would hold {entries} band entries, above the cap of \
                 {cap}; use fewer radial layers or a coarser ring width"
            ),
        });
    }
    Ok(())
}

/// Step control of the ring circuit: at least about [`STEP_FRACTION`] of a ring width per step
/// (and the mechanical time constant); up to [`MAX_STEP_STRETCH`] times that while the motion
/// is steady and the estimated local error of the braking force stays small.
struct StepControl<'p, F: Fn(f64) -> f64> {
    plan: &'p Plan,
    /// The ring-width step at a speed.
    target: &'p F,
    /// Steps of the stroke a new factorisation must leave to pay for itself.
    payback_steps: f64,
    /// Braking force of the step before, N.
    em_last: f64,
}

impl<F: Fn(f64) -> f64> StepControl<'_, F> {
    /// Chooses the next step after a step from speed `v` to `v1`, ending at `x1` with
    /// electromagnetic force `em`. Returns whether the step was cut below the ring-width step's
    /// ceiling because the stack moves faster than the last step allowed.
    fn after_step(
        &mut self,
        st: &mut Stepper<'_>,
        x1: f64,
        v: f64,
        v1: f64,
        em: f64,
    ) -> Result<bool, ModelError> {
        let plan = self.plan;
        let mech = plan.mech;
        let target = (self.target)(v1);
        // Long steps only where the motion can stay steady: in free flight with the window
        // clear of the tube for the next steps (no factorisation needed there), or with the
        // stack inside the tube; never across the entry, and the change and error checks
        // below bring the step back down as the field reaches the far end.
        let lookahead = 4.0 * v1.abs() * MAX_STEP_STRETCH * target;
        let lt = plan.rules.tube_length_m;
        let clear = x1 + plan.reach_m + lookahead < 0.0 || x1 - plan.reach_m > lt;
        let stop = plan.rules.end_position_m.min(lt);
        let inside = x1 >= 0.0 && x1 + lookahead <= stop;
        let ceiling = if clear || inside {
            MAX_STEP_STRETCH * target
        } else {
            target
        };
        let scale = em.abs().max(mech.drive_n.abs()).max(mech.friction_n);
        let error = st
            .force_error_n()
            .map(|e| e / (FORCE_ERROR_TOLERANCE * scale).max(1e-300));
        // How much the motion changed over the step: long steps only where nothing changes.
        let change = ((em - self.em_last).abs() / scale.max(1e-300))
            .max((v1 - v).abs() / v1.abs().max(v.abs()).max(1e-300));
        self.em_last = em;
        // A longer step that needs a new factorisation pays only if enough of the stroke is
        // left to take it in (a factorisation costs about kd / 8 steps of the fused pair of
        // solves, kd the half-bandwidth).
        let pays = |dt: f64| stop - x1 >= self.payback_steps * v1.abs() * dt;
        let mut cut = false;
        if st.dt_s > 1.5 * ceiling {
            let mut new_dt = st.dt_s;
            while new_dt > 1.5 * ceiling {
                new_dt *= 0.5;
            }
            st.shrink_dt(new_dt)?;
            cut = true;
        } else if st.dt_s > 1.5 * target
            && (error.is_some_and(|e| e > 1.0) || change > 4.0 * STEADY_CHANGE)
        {
            st.shrink_dt(0.5 * st.dt_s)?;
        } else if 2.0 * st.dt_s <= target
            || (2.0 * st.dt_s <= ceiling
                && change < STEADY_CHANGE
                && error.is_some_and(|e| e < GROWTH_ERROR_RATIO)
                && (clear || st.has_factor(2.0 * st.dt_s) || pays(2.0 * st.dt_s)))
        {
            st.try_double_dt()?;
        }
        // The error estimate decides only above the ring-width step or where it may grow.
        st.estimate_error = st.dt_s > 1.5 * target || 2.0 * st.dt_s <= ceiling;
        Ok(cut)
    }
}

/// Ring-circuit run on `grid` with `mode` windows.
pub(super) fn run_inductive(
    plan: &Plan,
    grid: &RingGrid,
    table: &FluxTable,
    circuit: &RingCircuit,
    mode: WindowMode,
    c_max: f64,
) -> Result<(Outcome, usize), ModelError> {
    let mech = plan.mech;
    let m = mech.mass_kg;
    let dz = grid.ring_width_m;
    let dt_cap = (plan.max_time_s / MIN_STEPS_PER_MAX_TIME)
        .min(INDUCTIVE_MECHANICAL_FRACTION * m / c_max.max(1e-300));
    let want =
        |v: f64| step_for_distance(v, plan.accel_bound_m_per_s2, STEP_FRACTION * dz).min(dt_cap);
    let dt0 = want(plan.v0_m_per_s);
    let mut st = Stepper::new(grid, table, circuit, mode, dt0, plan.x0_m, plan.v0_m_per_s)?;
    let a0 = start_acceleration(&mech, plan.v0_m_per_s);
    st.set_speed_history(plan.v0_m_per_s - a0 * dt0, plan.v0_m_per_s - 2.0 * a0 * dt0);
    let mut tally = Tally::new(mech, plan.rules, plan.x0_m, plan.v0_m_per_s);
    let mut rec = Recorder::new(plan.samples);
    let (mut t, mut x) = (0.0, plan.x0_m);
    rec.offer([t, x, plan.v0_m_per_s, 0.0, 0.0]);
    let mut power0 = 0.0;
    let mut brake_last;
    let mut control = StepControl {
        plan,
        target: &want,
        payback_steps: (circuit.half_bandwidth() as f64 / 4.0).max(8.0),
        em_last: 0.0,
    };
    let mut dt_min = dt0;
    let mut dt_reduced = false;
    let end = loop {
        if tally.steps >= plan.max_steps {
            return Err(too_many_steps(plan));
        }
        if tally.steps.is_multiple_of(CANCEL_CHECK_STEPS_INDUCTIVE) {
            plan.cancel.check()?;
        }
        let remaining = plan.max_time_s - t;
        if st.dt_s > remaining {
            st.shrink_dt(remaining)?;
        }
        let dt = st.dt_s;
        dt_min = dt_min.min(dt);
        let (v, v_prev) = st.speeds();
        let accel = (v - v_prev) / dt;
        let x_pred = x + dt * (v + 0.5 * accel * dt);
        let (gy1, gy2) = st.prepare(x_pred)?;
        let beta = 1.5 * m / dt + gy2;
        let p = m * (4.0 * v - v_prev) / (2.0 * dt) + mech.drive_n - gy1;
        let (v1, ff) = mech.implicit_velocity(p, beta);
        let (em, power1) = st.commit(v1);
        let x1 = x + 0.5 * dt * (v + v1);
        let step = StepRecord {
            t0: t,
            x0: x,
            v0: v,
            t1: t + dt,
            x1,
            v1,
            em_force_n: em,
            friction_force_n: ff,
            power0_w: power0,
            power1_w: power1,
        };
        let done = tally.after_step(&step);
        t += dt;
        x = x1;
        power0 = power1;
        brake_last = -em;
        rec.offer([t, x, v1, -em, power1]);
        if let Some(e) = done {
            break e;
        }
        if control.after_step(&mut st, x1, v, v1, em)? {
            dt_reduced = dt_reduced || v1 > plan.speeds.overall_m_per_s;
        }
    };
    let (te, xe, ve) = tally.end_state;
    let series = rec.finish([te, xe, ve, brake_last, power0]);
    let stored = st.stored_energy_j();
    let refactors = st.refactorisations;
    Ok((
        Outcome {
            tally,
            series,
            end,
            stored_j: stored,
            dropped_j: st.dropped_energy_j,
            dt_min_s: dt_min,
            dt_reduced,
        },
        refactors,
    ))
}

/// The ring-circuit run with its discretisation checks, cautions and model block.
pub(super) fn inductive_path(
    design: &Design,
    opts: &StrokeOptions,
    limits: &Limits,
    plan: &Plan,
    ctx: &QuasiStaticContext<'_>,
    cautions: &mut Vec<Caution>,
) -> Result<(Outcome, ModelInfo), ModelError> {
    let speed = plan.speeds.in_tube_m_per_s;
    let grid = RingGrid::new(
        design,
        opts.ring_width_m,
        opts.radial_layers,
        Some(speed),
        limits,
    )?;
    if opts.radial_layers.is_none()
        && grid::default_layers(design, grid.ring_width_m, Some(speed)) > grid.layers
    {
        push_unique(
            cautions,
            Caution::new(
                CautionKind::Numerical,
                format!(
                    "The skin depth at {speed:.3} m/s asks for more radial layers than the service \
                     limit of {}; the eddy currents across the wall are under-resolved.",
                    limits.max_radial_layers
                ),
            ),
        );
    }
    let circuit = RingCircuit::new(
        &grid,
        RingCircuit::default_reach_rings(&grid, design.tube.outer_radius_m),
    );
    let mode = WindowMode::Moving {
        half_length_m: plan.reach_m,
        finite: true,
    };
    check_band(
        &grid,
        &circuit,
        mode,
        opts.radial_layers.is_some(),
        limits.max_band_entries,
    )?;
    // The flux derivative beyond the base reach (half the stack plus the margin) is negligible
    // (it falls as d^-4); the wake widens the current window, not the field, so the table
    // reaches at most twice the base reach however fast the stack goes.
    let table_reach = plan.reach_m.min(2.0 * ctx.base_reach_m);
    let own_table;
    let table = if grid.layers == ctx.grid.layers && table_reach <= ctx.base_reach_m {
        ctx.table
    } else {
        own_table = FluxTable::checked(&design.magnets, &grid, table_reach, limits)?;
        &own_table
    };
    if opts.start_speed_m_per_s > 0.0 && opts.start_position_m + plan.reach_m > 0.0 {
        push_unique(
            cautions,
            Caution::new(
                CautionKind::Assumption,
                "The stack starts moving with its field already in the tube; the ring currents \
                 start at zero, as if the stack appeared there, so the first millimetres carry a \
                 start-up transient that a real stroke would not have.",
            ),
        );
    }
    // Resolution companions on the discretisation actually used: twice the ring width (and
    // so twice the step) with the same layers, and that with half the layers. Each costs about
    // 1/8 and 1/32 of the main run (cells x band x steps); they do not depend on it, so they
    // run beside it on the job's threads (rayon's pool, shared with every other job: no
    // oversubscription).
    let (main, companions) = rayon::join(
        || {
            run_inductive(
                plan,
                &grid,
                table,
                &circuit,
                mode,
                ctx.profile.max_n_s_per_m(),
            )
        },
        || companion_runs(design, limits, plan, &grid, ctx),
    );
    let (outcome, _) = main?;
    let err = outcome
        .tally
        .energy_balance_error(outcome.stored_j, outcome.dropped_j);
    let resolution = companions?.estimate(&outcome);
    let mut info = ring_circuit_info(
        "ring_circuit",
        &grid,
        &outcome,
        circuit.reach_rings() as f64 * grid.ring_width_m,
    );
    info.error_estimate_relative = Some(err.max(resolution));
    Ok((outcome, info))
}

/// The ring circuit on a grid of `dz` and `layers` (trusted values), windowed as the main run.
fn inductive_run_on(
    design: &Design,
    limits: &Limits,
    plan: &Plan,
    dz: f64,
    rings: usize,
    layers: usize,
    c_max: f64,
) -> Result<Outcome, ModelError> {
    let grid = RingGrid::build(design, dz, rings, layers);
    let circuit = RingCircuit::new(
        &grid,
        RingCircuit::default_reach_rings(&grid, design.tube.outer_radius_m),
    );
    let mode = WindowMode::Moving {
        half_length_m: plan.reach_m,
        finite: true,
    };
    check_band(&grid, &circuit, mode, false, limits.max_band_entries)?;
    // The same table reach as the main run (see `inductive_path`).
    let table_reach = plan.reach_m.min(2.0 * window_half_length_m(design, 0.0));
    let table = FluxTable::checked(&design.magnets, &grid, table_reach, limits)?;
    Ok(run_inductive(plan, &grid, &table, &circuit, mode, c_max)?.0)
}

/// Ratio of the steady-force error of a one-layer wall to that of two layers, at the ring
/// circuit's constant speed (0.4 mm rings): measured on the invented 12 mm N42 magnet in a
/// 13 mm bore, 1.5 mm copper wall, at 2, 6 and 12 m/s (Rm 0.2 to 1.3): one layer was 2.6-2.7 %
/// below the refined spectral force, two layers within 0.05-0.23 % (more than ten times less);
/// the companion's change from two layers to one is divided by this (conservative) ratio.
const ONE_LAYER_ERROR_RATIO: f64 = 8.0;

/// Error estimate of an inductive run from two coarser companions (Roache's grid convergence
/// index with safety factor 3 for a two-grid study of a second-order method, which equals the
/// change itself: Roache, "Perspective: a method for uniform reporting of grid refinement
/// studies", J. Fluids Eng. 116, 405, 1994): the change of the headline numbers when the ring
/// width (and with it the step) is doubled, plus the change when, at that width, the radial
/// layers are halved (the layered wall converges about as the inverse square of the layer
/// count at speed, so this change is about three times the layer error). The two are added so
/// that errors of opposite sign in the two directions cannot hide each other. When the tube is
/// too short for a doubled ring, that part is zero.
fn companion_runs(
    design: &Design,
    limits: &Limits,
    plan: &Plan,
    grid: &RingGrid,
    ctx: &QuasiStaticContext<'_>,
) -> Result<Companions, ModelError> {
    let c_max = ctx.profile.max_n_s_per_m();
    let rings2 = grid.rings / 2;
    if rings2 < 1 {
        return radial_error_estimate(design, ctx.grid, ctx.c_mid_n_s_per_m, limits)
            .map(Companions::Radial);
    }
    let dz2 = design.tube.length_m / rings2 as f64;
    let half = grid.layers.div_ceil(2);
    let (axial, radial) = rayon::join(
        || inductive_run_on(design, limits, plan, dz2, rings2, grid.layers, c_max),
        || {
            (half < grid.layers)
                .then(|| inductive_run_on(design, limits, plan, dz2, rings2, half, c_max))
                .transpose()
        },
    );
    Ok(Companions::Runs {
        axial: Box::new(axial?),
        radial: radial?.map(Box::new),
        radial_layers: half,
    })
}

/// The companions of an inductive run (see [`companion_runs`]).
enum Companions {
    /// The tube is too short for a doubled ring: the radial check of the quasi-static grid.
    Radial(f64),
    /// Twice the ring width with the same layers, and with `radial_layers` (half) layers.
    Runs {
        axial: Box<Outcome>,
        radial: Option<Box<Outcome>>,
        radial_layers: usize,
    },
}

impl Companions {
    /// The error estimate of the main run `outcome`: the axial change plus the radial change,
    /// added so that errors of opposite sign cannot hide each other.
    fn estimate(&self, outcome: &Outcome) -> f64 {
        match self {
            Self::Radial(e) => *e,
            Self::Runs {
                axial,
                radial,
                radial_layers,
            } => {
                let axial_change = headline_change(outcome, axial);
                let radial_change = radial.as_ref().map_or(0.0, |radial| {
                    // One mid-wall layer misses the inner surface: its error is an order of
                    // magnitude above that of two layers, so that change is scaled down.
                    if *radial_layers == 1 {
                        headline_change(axial, radial) / ONE_LAYER_ERROR_RATIO
                    } else {
                        headline_change(axial, radial)
                    }
                });
                axial_change + radial_change
            }
        }
    }
}

/// The model block of an inductive run: the ring grid, the smallest step, the step count and
/// the axial reach of the mutual coupling kept.
pub(super) fn ring_circuit_info(
    method: &str,
    grid: &RingGrid,
    outcome: &Outcome,
    reach_m: f64,
) -> ModelInfo {
    ModelInfo::new(
        method,
        Fidelity::Inductive,
        Discretisation {
            radial_layers: Some(grid.layers),
            axial_rings: Some(grid.rings),
            ring_width_m: Some(grid.ring_width_m),
            time_step_s: Some(outcome.dt_min_s),
            steps: Some(outcome.tally.steps),
            coupling_reach_m: Some(reach_m),
            ..Discretisation::default()
        },
    )
}

/// Steady braking of the ring circuit at a prescribed constant speed in an infinitely long
/// uniform tube, for validation against the spectral method.
#[derive(Debug, Clone, PartialEq)]
pub struct ConstantSpeedForce {
    /// Braking force averaged over whole ring pitches once steady, N.
    pub force_n: f64,
    /// Ring width used, m.
    pub ring_width_m: f64,
    /// Radial layers used.
    pub radial_layers: usize,
    /// Axial reach of the mutual coupling, m.
    pub coupling_reach_m: f64,
    /// Rings in the current-carrying window.
    pub window_rings: usize,
}

/// Runs the stack at `speed_m_per_s` through an infinitely long copy of the design's tube
/// (currents starting at zero) with `steps_per_ring` BDF2 steps per ring width, until the
/// currents are steady, and returns the braking force averaged over the last eight ring pitches
/// (the ring ripple cancels over whole pitches).
///
/// # Errors
/// A speed or step count that is not positive, a window or band beyond `limits` ([`ModelError::TooLarge`]), a matrix that is not positive definite, or cancellation.
pub fn constant_speed_force(
    design: &Design,
    speed_m_per_s: f64,
    ring_width_m: Option<f64>,
    radial_layers: Option<usize>,
    steps_per_ring: usize,
    limits: &Limits,
) -> Result<ConstantSpeedForce, ModelError> {
    if !(speed_m_per_s.is_finite() && speed_m_per_s > 0.0) {
        return Err(ModelError::field("speed_m_per_s", "must be greater than 0"));
    }
    if steps_per_ring == 0 {
        return Err(ModelError::field("steps_per_ring", "must be at least 1"));
    }
    let probe = RingGrid::new(
        design,
        ring_width_m,
        radial_layers,
        Some(speed_m_per_s),
        limits,
    )?;
    let dz = probe.ring_width_m;
    let reach = window_half_length_m(design, speed_m_per_s);
    let window_rings = (2.0 * reach / dz).floor() as usize + 1;
    Limits::check(
        "options.ring_width_m",
        "ring cells in the window",
        window_rings * probe.layers,
        limits.max_ring_cells,
    )?;
    let grid = RingGrid::build(design, dz, window_rings, probe.layers);
    let table = FluxTable::checked(&design.magnets, &grid, reach, limits)?;
    let circuit = RingCircuit::new(
        &grid,
        RingCircuit::default_reach_rings(&grid, design.tube.outer_radius_m),
    );
    let dt = dz / (speed_m_per_s * steps_per_ring as f64);
    let mode = WindowMode::Moving {
        half_length_m: reach,
        finite: false,
    };
    check_band(
        &grid,
        &circuit,
        mode,
        radial_layers.is_some(),
        limits.max_band_entries,
    )?;
    let mut st = Stepper::new(&grid, &table, &circuit, mode, dt, 0.0, speed_m_per_s)?;
    st.set_speed_history(speed_m_per_s, speed_m_per_s);
    // Steady after the window has been swept once and ten slowest decay lengths.
    let settle = 2.0 * reach + 10.0 * speed_m_per_s * slowest_time_constant_s(design);
    let settle_steps = (settle / (speed_m_per_s * dt)).ceil() as usize;
    let average_steps = 8 * steps_per_ring;
    let total = settle_steps + average_steps;
    Limits::check("speed_m_per_s", "time steps", total, limits.max_steps)?;
    let mut sum = 0.0;
    for k in 0..total {
        if k % CANCEL_CHECK_STEPS_INDUCTIVE == 0 {
            limits.cancel.check()?;
        }
        let x_next = (k + 1) as f64 * speed_m_per_s * dt;
        st.prepare(x_next)?;
        let (em, _) = st.commit(speed_m_per_s);
        if k >= settle_steps {
            sum += -em;
        }
    }
    Ok(ConstantSpeedForce {
        force_n: sum / average_steps as f64,
        ring_width_m: dz,
        radial_layers: grid.layers,
        coupling_reach_m: circuit.reach_rings() as f64 * dz,
        window_rings,
    })
}
