//! Stroke simulation: the stack travels through the finite tube in time, entry and exit
//! included, under gravity, an applied force, Coulomb friction and the eddy-current brake.
//!
//! Two fidelities share one discretisation of the wall ([`grid`](crate::solvers::rings::grid): axial rings of width
//! dz <= min(a, Lm)/8, cut into radial layers) and one tabulation of the stack's flux
//! derivative ([`fluxtable`](crate::solvers::rings::fluxtable)):
//!
//! - **Quasi-static** (inductance neglected, method `quasi_static_ring_sum`):
//!   m dv/dt = F_drive - friction - c(x) v with the drag profile c(x) of the finite tube
//!   ([`crate::solvers::dragprofile`]), trapezoidal in v (implicit), Coulomb friction implicit.
//!   Exact at low magnetic Reynolds number.
//! - **Inductive** (full ring circuit, method `ring_circuit`): L dI/dt + R I = v G(x),
//!   F = -G.I, BDF2 with a Schur-complement coupling to the mechanics on a moving window of
//!   rings with one banded Cholesky factor (the `stepper` submodule, [`circuit`],
//!   [`crate::kernels::banded`]).
//!
//! `Auto` picks the inductive model when the magnetic Reynolds number Rm = mu0 sigma v w at
//! the expected largest speed in the tube exceeds [`AUTO_INDUCTIVE_REYNOLDS`].
//!
//! The run ends when the stack centre passes tube length + stack length, when it stops (stuck
//! by friction, or coasting below a tiny speed with no drive beyond friction), when it turns
//! back (an uphill launch: the stroke ends at the turning point), or at `max_time_s`.
//!
//! Error estimate (`model.error_estimate_relative`), the larger of two checks:
//! - *radial*: the relative change of the long-tube quasi-static damping when the radial layers
//!   are doubled (the wall quadrature is the leading spatial error; the axial ring sum of a
//!   smooth field converges much faster);
//! - *quasi-static runs*: the run is repeated at twice the ring width and step, and the relative
//!   change of the headline number (exit time, or the distance travelled when the stack does
//!   not exit) is taken; *inductive runs*: the relative imbalance of the energy ledger (work of
//!   the drive = kinetic change + heat + stored magnetic energy + friction work + energy of the
//!   currents dropped at the window edge), which measures the time integration.

pub mod circuit;
mod run;
mod stepper;

use crate::MU0;
use crate::records::caution::{Caution, CautionKind, push_unique};
use crate::records::design::Design;
use crate::records::error::{FieldError, ModelError};
use crate::records::limits::Limits;
use crate::records::report::{Discretisation, Fidelity, ModelInfo};
use crate::records::stroke::{Stroke, StrokeEnd, StrokeOptions, StrokeSeries, StrokeSummary};
use crate::solvers::dragprofile::DragProfile;
use crate::solvers::heat;
use crate::solvers::rings::fluxtable::FluxTable;
use crate::solvers::rings::grid::{self, RingGrid};
use circuit::RingCircuit;
use run::{EndRules, Mechanics, Recorder, StepRecord, Tally};
use stepper::{Stepper, WindowMode, window_capacity_rings};

/// Margin of the current-carrying window beyond each end of the stack, in outer radii of the
/// tube. The stack's dPhi/dzeta falls off as d^-4 and the dissipation as d^-8, so rings beyond
/// it carry a negligible share (the dropped energy is counted and reported).
pub const WINDOW_MARGIN_OUTER_RADII: f64 = 5.0;

/// The window is widened behind the stack by this many current decay lengths v tau, with
/// tau = mu0 sigma w r / 2 the slowest (uniform-current) time constant of a thin tube, so that
/// the wake of a fast stack stays inside it.
pub const WAKE_DECAY_LENGTHS: f64 = 3.0;

/// `Auto` chooses the inductive model above this magnetic Reynolds number mu0 sigma v w at the
/// expected largest speed in the tube. Measured with [`constant_speed_force`] against the
/// quasi-static c_mid v of the same discretisation, on four invented geometries (12 mm N42
/// magnet, 20 mm or 4 mm long, in a 13 mm bore copper tube with 0.5, 1.5 or 5 mm wall): the
/// quasi-static model overstates the steady braking by about 0.1 Rm^2 - by 0.06 to 0.12 % at
/// Rm = 0.1, 0.24 to 0.49 % at 0.2, and 1.0 to 1.9 % at 0.4. At 0.1 the quasi-static error
/// stays below the ring discretisation's own (about 0.1 %), while the quasi-static run costs a
/// fraction of a millisecond against tens of milliseconds.
pub const AUTO_INDUCTIVE_REYNOLDS: f64 = 0.1;

/// Relative overstatement of steady braking by the quasi-static model at magnetic Reynolds
/// number `rm`, the measured law behind [`AUTO_INDUCTIVE_REYNOLDS`] (upper end of the range).
pub fn quasi_static_overstatement(rm: f64) -> f64 {
    0.12 * rm * rm
}

/// The stack moves at most about this fraction of a ring width per step.
pub const STEP_FRACTION: f64 = 0.5;

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

/// The quasi-static step also resolves the mechanical time constant m / c: dt <= this x m / c.
const QS_MECHANICAL_FRACTION: f64 = 0.5;
/// The inductive step: dt <= this x m / c (BDF2 is L-stable; this is for accuracy only).
const INDUCTIVE_MECHANICAL_FRACTION: f64 = 1.0;
/// Largest band storage of one factorised window matrix, entries (16 MB of f64; up to four
/// factors are cached per run). It also bounds the work of one step to about 4x this many
/// multiply-adds.
pub const MAX_BAND_ENTRIES: usize = 2 << 20;

/// Quasi-static steps (tens of nanoseconds each) between two cancellation checks.
const CANCEL_CHECK_STEPS: usize = 1024;
/// Ring-circuit steps (up to milliseconds each with the largest band) between two checks.
const CANCEL_CHECK_STEPS_INDUCTIVE: usize = 4;

/// Every run has at least this many steps over `max_time_s`.
const MIN_STEPS_PER_MAX_TIME: f64 = 100.0;
/// Below this fraction of the expected speed, a stack with no drive beyond friction counts as
/// stopped (it would coast a further 1e-7 of its stopping distance).
const STOP_SPEED_FRACTION: f64 = 1e-7;

/// Half-length of the current-carrying window around the stack centre, m: half the stack,
/// the margin, and the wake at `speed_m_per_s`.
pub fn window_half_length_m(design: &Design, speed_m_per_s: f64) -> f64 {
    let b = design.tube.outer_radius_m;
    0.5 * design.magnets.total_length_m()
        + WINDOW_MARGIN_OUTER_RADII * b
        + WAKE_DECAY_LENGTHS * speed_m_per_s.abs() * slowest_time_constant_s(design)
}

/// Slowest current decay time of the tube, mu0 sigma w r_mean / 2, s (uniform azimuthal current
/// in a thin tube: L' = mu0 pi r^2, R' = 2 pi r / (sigma w) per unit length).
pub fn slowest_time_constant_s(design: &Design) -> f64 {
    let t = &design.tube;
    let r = 0.5 * (t.inner_radius_m + t.outer_radius_m);
    0.5 * MU0 * t.conductivity_s_per_m * t.wall_thickness_m() * r
}

/// Magnetic Reynolds number mu0 sigma v w of the wall at `speed_m_per_s`.
pub fn magnetic_reynolds_number(design: &Design, speed_m_per_s: f64) -> f64 {
    MU0 * design.tube.conductivity_s_per_m * speed_m_per_s.abs() * design.tube.wall_thickness_m()
}

/// Speeds expected in a stroke, m/s, from the start speed, free flight to the entry, the
/// quasi-static terminal speed F/c_mid and free flight beyond the exit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ExpectedSpeeds {
    /// Largest speed expected while the stack is in the tube.
    pub in_tube_m_per_s: f64,
    /// Largest speed expected anywhere in the run (exit fall included).
    pub overall_m_per_s: f64,
}

/// Expected speeds of a stroke of `design` from (`x0_m`, `v0_m_per_s`), with the long-tube
/// quasi-static damping `c_mid_n_s_per_m`.
pub fn expected_speeds(
    design: &Design,
    x0_m: f64,
    v0_m_per_s: f64,
    c_mid_n_s_per_m: f64,
) -> ExpectedSpeeds {
    let m = design.moving_mass_kg();
    let net = design.drive_force_n() - design.friction_force_n();
    let a = net / m;
    let v0 = v0_m_per_s.abs();
    let ls = design.magnets.total_length_m();
    let lt = design.tube.length_m;
    if a <= 0.0 {
        return ExpectedSpeeds {
            in_tube_m_per_s: v0,
            overall_m_per_s: v0,
        };
    }
    let fall = |v: f64, d: f64| (v * v + 2.0 * a * d.max(0.0)).sqrt();
    let bound = fall(v0, lt + ls - x0_m);
    let entry = fall(v0, -x0_m);
    let terminal = if c_mid_n_s_per_m > 0.0 {
        net / c_mid_n_s_per_m
    } else {
        f64::INFINITY
    };
    let in_tube = entry
        .max(terminal.min(fall(v0, lt - x0_m)))
        .max(v0)
        .min(bound);
    let overall = fall(in_tube, ls).min(bound).max(in_tube);
    ExpectedSpeeds {
        in_tube_m_per_s: in_tube,
        overall_m_per_s: overall,
    }
}

/// Largest step for which a stack at `speed` with acceleration up to `accel` moves at most
/// `distance`: v dt + a dt^2 / 2 = distance.
fn step_for_distance(speed: f64, accel: f64, distance: f64) -> f64 {
    let v = speed.abs();
    let a = accel.abs();
    if a > 0.0 {
        (2.0 * distance) / (v + (v * v + 2.0 * a * distance).sqrt())
    } else if v > 0.0 {
        distance / v
    } else {
        f64::INFINITY
    }
}

/// A validated stroke request with the quantities both solvers need.
#[derive(Debug, Clone)]
struct Plan {
    mech: Mechanics,
    x0_m: f64,
    v0_m_per_s: f64,
    max_time_s: f64,
    samples: usize,
    speeds: ExpectedSpeeds,
    /// Largest acceleration the drive and friction can give, m/s^2.
    accel_bound_m_per_s2: f64,
    /// Window half-length (field reach and wake), m.
    reach_m: f64,
    max_steps: usize,
    rules: EndRules,
    /// The job's cancellation token, checked every few steps.
    cancel: crate::records::cancel::CancelToken,
}

/// What a solver returns.
#[derive(Debug, Clone)]
struct Outcome {
    tally: Tally,
    series: StrokeSeries,
    end: StrokeEnd,
    stored_j: f64,
    dropped_j: f64,
    dt_min_s: f64,
    dt_reduced: bool,
}

fn validate(opts: &StrokeOptions, design: &Design, limits: &Limits) -> Result<(), ModelError> {
    let mut errs = Vec::new();
    let lt = design.tube.length_m;
    if !(opts.start_position_m.is_finite() && opts.start_position_m.abs() <= 1000.0) {
        errs.push(FieldError::new(
            "start.position_m",
            "must be a finite number between -1000 and 1000",
        ));
    } else if opts.start_position_m >= lt {
        errs.push(FieldError::new(
            "start.position_m",
            format!("must be below the far end of the tube ({lt} m)"),
        ));
    }
    if !(opts.start_speed_m_per_s.is_finite() && (0.0..=1000.0).contains(&opts.start_speed_m_per_s))
    {
        errs.push(FieldError::new(
            "start.speed_m_per_s",
            "must be between 0 and 1000 (speeds are positive in the direction of travel)",
        ));
    }
    if !(opts.max_time_s.is_finite() && opts.max_time_s > 0.0) {
        errs.push(FieldError::new("max_time_s", "must be greater than 0"));
    }
    if let Some(stop) = opts.stop_position_m
        && !(stop.is_finite() && stop.abs() <= 1000.0 && stop > opts.start_position_m)
    {
        errs.push(FieldError::new(
            "stop_position_m",
            format!(
                "must be a finite position ahead of the start ({} m) and within 1000 m",
                opts.start_position_m
            ),
        ));
    }
    if opts.samples < 2 {
        errs.push(FieldError::new("samples", "must be at least 2"));
    }
    if !errs.is_empty() {
        return Err(ModelError::Invalid(errs));
    }
    if opts.max_time_s > limits.max_time_s {
        return Err(ModelError::TooLarge {
            path: "max_time_s".into(),
            message: format!(
                "simulated time would be {} s, above the service limit of {} s",
                opts.max_time_s, limits.max_time_s
            ),
        });
    }
    Limits::check("samples", "samples", opts.samples, limits.max_samples)
}

fn plan(design: &Design, opts: &StrokeOptions, limits: &Limits, c_mid: f64) -> Plan {
    let mech = Mechanics {
        mass_kg: design.moving_mass_kg(),
        drive_n: design.drive_force_n(),
        friction_n: design.friction_force_n(),
    };
    let speeds = expected_speeds(
        design,
        opts.start_position_m,
        opts.start_speed_m_per_s,
        c_mid,
    );
    let reach = window_half_length_m(design, speeds.overall_m_per_s);
    let lt = design.tube.length_m;
    let ls = design.magnets.total_length_m();
    let stop = opts.stop_for(lt);
    let end_position_m = if opts.run_out {
        stop.max(lt + ls)
    } else {
        stop
    };
    let mut speeds = speeds;
    if end_position_m > lt + ls {
        // Free flight from the far end of the tube on to a stop beyond it.
        let a = (mech.drive_n - mech.friction_n).max(0.0) / mech.mass_kg;
        let beyond = (speeds.overall_m_per_s.powi(2) + 2.0 * a * (end_position_m - lt - ls)).sqrt();
        speeds.overall_m_per_s = speeds.overall_m_per_s.max(beyond);
    }
    let rules = EndRules {
        tube_length_m: lt,
        stop_position_m: stop,
        end_position_m,
        max_time_s: opts.max_time_s,
        stop_speed_m_per_s: STOP_SPEED_FRACTION * speeds.overall_m_per_s.max(1e-6),
    };
    Plan {
        mech,
        x0_m: opts.start_position_m,
        v0_m_per_s: opts.start_speed_m_per_s,
        max_time_s: opts.max_time_s,
        samples: opts.samples,
        speeds,
        accel_bound_m_per_s2: (mech.drive_n.abs() + mech.friction_n) / mech.mass_kg,
        reach_m: reach,
        max_steps: limits.max_steps,
        rules,
        cancel: limits.cancel.clone(),
    }
}

fn too_many_steps(plan: &Plan) -> ModelError {
    ModelError::TooLarge {
        path: "max_time_s".into(),
        message: format!(
            "time steps would exceed the service limit of {} before the stroke ends",
            plan.max_steps
        ),
    }
}

/// Acceleration at the start, before any eddy current: sliding forward at `v0` > 0, or from
/// rest as Coulomb friction allows (the history that makes the second-order schemes exact for
/// constant acceleration).
fn start_acceleration(mech: &Mechanics, v0: f64) -> f64 {
    if v0 > 0.0 {
        (mech.drive_n - mech.friction_n) / mech.mass_kg
    } else {
        mech.implicit_velocity(mech.drive_n, mech.mass_kg).0
    }
}

/// Quasi-static run with the drag profile `profile` of a grid of ring width `dz`.
fn run_quasi_static(plan: &Plan, profile: &DragProfile, dz: f64) -> Result<Outcome, ModelError> {
    let mech = plan.mech;
    let m = mech.mass_kg;
    let dt_cap = (plan.max_time_s / MIN_STEPS_PER_MAX_TIME)
        .min(QS_MECHANICAL_FRACTION * m / profile.max_n_s_per_m().max(1e-300));
    let mut tally = Tally::new(mech, plan.rules, plan.x0_m, plan.v0_m_per_s);
    let mut rec = Recorder::new(plan.samples);
    let (mut t, mut x, mut v) = (0.0, plan.x0_m, plan.v0_m_per_s);
    let mut c0 = profile.damping_n_s_per_m(x);
    rec.offer([t, x, v, c0 * v, c0 * v * v]);
    let mut accel = start_acceleration(&mech, plan.v0_m_per_s);
    let mut dt_min = f64::INFINITY;
    let end = loop {
        if tally.steps >= plan.max_steps {
            return Err(too_many_steps(plan));
        }
        if tally.steps.is_multiple_of(CANCEL_CHECK_STEPS) {
            plan.cancel.check()?;
        }
        let dt = step_for_distance(v, plan.accel_bound_m_per_s2, STEP_FRACTION * dz)
            .min(dt_cap)
            .min(plan.max_time_s - t);
        dt_min = dt_min.min(dt);
        let x_pred = x + dt * (v + 0.5 * accel * dt);
        let c1 = profile.damping_n_s_per_m(x_pred);
        let beta = m / dt + 0.5 * c1;
        let p = m * v / dt - 0.5 * c0 * v + mech.drive_n;
        let (v1, ff) = mech.implicit_velocity(p, beta);
        let x1 = x + 0.5 * dt * (v + v1);
        let step = StepRecord {
            t0: t,
            x0: x,
            v0: v,
            t1: t + dt,
            x1,
            v1,
            em_force_n: -c1 * v1,
            friction_force_n: ff,
            power0_w: c0 * v * v,
            power1_w: c1 * v1 * v1,
        };
        accel = (v1 - v) / dt;
        let done = tally.after_step(&step);
        t += dt;
        x = x1;
        v = v1;
        rec.offer([t, x, v, c1 * v, c1 * v * v]);
        c0 = profile.damping_n_s_per_m(x);
        if let Some(e) = done {
            break e;
        }
    };
    let (te, xe, ve) = tally.end_state;
    let ce = profile.damping_n_s_per_m(xe);
    let series = rec.finish([te, xe, ve, ce * ve, ce * ve * ve]);
    Ok(Outcome {
        tally,
        series,
        end,
        stored_j: 0.0,
        dropped_j: 0.0,
        dt_min_s: dt_min,
        dt_reduced: false,
    })
}

/// Checks that the banded window matrix of `circuit` on `grid` fits `cap` entries
/// ([`Limits::max_band_entries`], by default [`MAX_BAND_ENTRIES`]).
fn check_band(
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

/// Ring-circuit run on `grid` with `mode` windows.
fn run_inductive(
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
    let mut em_last = 0.0;
    let payback_steps = (circuit.half_bandwidth() as f64 / 4.0).max(8.0);
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
        // Step control: at least about STEP_FRACTION of a ring width per step; up to
        // MAX_STEP_STRETCH times that while the estimated force error stays small.
        let target = want(v1);
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
        // A longer step that needs a new factorisation pays only if enough of the stroke is
        // left to take it in (a factorisation costs about kd / 8 steps of the fused pair of
        // solves, kd the half-bandwidth).
        let steady_run_m = stop - x1;
        // How much the motion changed over the step: long steps only where nothing changes.
        let change = ((em - em_last).abs() / scale.max(1e-300))
            .max((v1 - v).abs() / v1.abs().max(v.abs()).max(1e-300));
        em_last = em;
        if st.dt_s > 1.5 * ceiling {
            let mut new_dt = st.dt_s;
            while new_dt > 1.5 * ceiling {
                new_dt *= 0.5;
            }
            st.shrink_dt(new_dt)?;
            dt_reduced = dt_reduced || v1 > plan.speeds.overall_m_per_s;
        } else if st.dt_s > 1.5 * target
            && (error.is_some_and(|e| e > 1.0) || change > 4.0 * STEADY_CHANGE)
        {
            st.shrink_dt(0.5 * st.dt_s)?;
        } else if 2.0 * st.dt_s <= target
            || (2.0 * st.dt_s <= ceiling
                && change < STEADY_CHANGE
                && error.is_some_and(|e| e < GROWTH_ERROR_RATIO)
                && (clear
                    || st.has_factor(2.0 * st.dt_s)
                    || steady_run_m >= payback_steps * v1.abs() * 2.0 * st.dt_s))
        {
            st.try_double_dt()?;
        }
        // The error estimate decides only above the ring-width step or where it may grow.
        st.estimate_error = st.dt_s > 1.5 * target || 2.0 * st.dt_s <= ceiling;
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

/// Simulates one stroke of `design` through its finite tube.
///
/// Validates the options (paths `start.position_m`, `start.speed_m_per_s`, `max_time_s`,
/// `samples`, `options.ring_width_m`, `options.radial_layers`), picks the fidelity, runs it,
/// and returns the summary, the series downsampled to `samples` points (first and last
/// included), the cautions (the standing safety caution first, then the design's, then the
/// run's) and the model block. See the module documentation for methods and the error
/// estimate.
pub fn simulate_stroke(
    design: &Design,
    opts: &StrokeOptions,
    limits: &Limits,
) -> Result<Stroke, ModelError> {
    validate(opts, design, limits)?;
    // Quasi-static profile at the default (or requested) resolution: needed by both
    // fidelities for the expected speed.
    let qs_grid = RingGrid::new(design, opts.ring_width_m, opts.radial_layers, None, limits)?;
    let base_reach = window_half_length_m(design, 0.0);
    let qs_table = FluxTable::checked(&design.magnets, &qs_grid, base_reach, limits)?;
    let profile = DragProfile::new(&qs_grid, &qs_table, base_reach);
    let c_mid = profile.mid_tube_n_s_per_m();
    let plan = plan(design, opts, limits, c_mid);
    let rm = magnetic_reynolds_number(design, plan.speeds.in_tube_m_per_s);
    let fidelity = match opts.fidelity {
        Fidelity::Auto => {
            if rm > AUTO_INDUCTIVE_REYNOLDS {
                Fidelity::Inductive
            } else {
                Fidelity::QuasiStatic
            }
        }
        f => f,
    };
    let mut cautions = vec![Caution::standing_safety()];
    for c in &design.cautions {
        push_unique(&mut cautions, c.clone());
    }
    let ctx = QuasiStaticContext {
        grid: &qs_grid,
        table: &qs_table,
        profile: &profile,
        base_reach_m: base_reach,
        c_mid_n_s_per_m: c_mid,
        reynolds: rm,
    };
    let (outcome, info) = match fidelity {
        Fidelity::Inductive => {
            match inductive_path(design, opts, limits, &plan, &ctx, &mut cautions) {
                Err(ModelError::TooLarge { message, .. }) if opts.fidelity == Fidelity::Auto => {
                    push_unique(
                        &mut cautions,
                        Caution::new(
                            CautionKind::Numerical,
                            format!(
                                "The inductive model is too large for the service limits ({message}); \
                                 the quasi-static model was used instead. {}",
                                overstatement_note(rm)
                            ),
                        ),
                    );
                    quasi_static_path(design, limits, &plan, &ctx, &mut cautions, false)?
                }
                other => other?,
            }
        }
        _ => quasi_static_path(design, limits, &plan, &ctx, &mut cautions, true)?,
    };
    Ok(assemble(design, &plan, outcome, info, cautions))
}

/// The quasi-static pieces built for every stroke (also used for the expected speed).
struct QuasiStaticContext<'a> {
    grid: &'a RingGrid,
    table: &'a FluxTable,
    profile: &'a DragProfile,
    base_reach_m: f64,
    c_mid_n_s_per_m: f64,
    reynolds: f64,
}

/// What the quasi-static model misses at magnetic Reynolds number `rm`, in words.
fn overstatement_note(rm: f64) -> String {
    if rm <= 0.5 {
        format!(
            "At magnetic Reynolds number {rm:.2} it neglects the eddy currents' own field and \
             overstates braking by roughly {:.1} %.",
            100.0 * quasi_static_overstatement(rm)
        )
    } else {
        format!(
            "At magnetic Reynolds number {rm:.2} it neglects the eddy currents' own field and \
             overstates braking by several percent or more; it also misses the force peak."
        )
    }
}

/// The ring-circuit run with its discretisation checks, cautions and model block.
fn inductive_path(
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
    let (outcome, _) = run_inductive(
        plan,
        &grid,
        table,
        &circuit,
        mode,
        ctx.profile.max_n_s_per_m(),
    )?;
    let err = outcome
        .tally
        .energy_balance_error(outcome.stored_j, outcome.dropped_j);
    // Resolution companions on the discretisation actually used: twice the ring width (and
    // so twice the step) with the same layers, and that with half the layers. Each costs about
    // 1/8 and 1/32 of the main run (cells x band x steps).
    let resolution = inductive_companions(design, limits, plan, &grid, ctx, &outcome)?;
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
fn inductive_companions(
    design: &Design,
    limits: &Limits,
    plan: &Plan,
    grid: &RingGrid,
    ctx: &QuasiStaticContext<'_>,
    outcome: &Outcome,
) -> Result<f64, ModelError> {
    let c_max = ctx.profile.max_n_s_per_m();
    let rings2 = grid.rings / 2;
    if rings2 < 1 {
        return radial_error_estimate(design, ctx.grid, ctx.c_mid_n_s_per_m, limits);
    }
    let dz2 = design.tube.length_m / rings2 as f64;
    let axial = inductive_run_on(design, limits, plan, dz2, rings2, grid.layers, c_max)?;
    let axial_change = headline_change(outcome, &axial);

    let half = grid.layers.div_ceil(2);
    let radial_change = if half < grid.layers {
        let radial = inductive_run_on(design, limits, plan, dz2, rings2, half, c_max)?;
        // One mid-wall layer misses the inner surface: its error is an order of magnitude
        // above that of two layers, so that change is scaled down.
        if half == 1 {
            headline_change(&axial, &radial) / ONE_LAYER_ERROR_RATIO
        } else {
            headline_change(&axial, &radial)
        }
    } else {
        0.0
    };
    Ok(axial_change + radial_change)
}

/// The quasi-static run with its second-resolution check, cautions and model block.
fn quasi_static_path(
    design: &Design,
    limits: &Limits,
    plan: &Plan,
    ctx: &QuasiStaticContext<'_>,
    cautions: &mut Vec<Caution>,
    reynolds_caution: bool,
) -> Result<(Outcome, ModelInfo), ModelError> {
    let grid = ctx.grid;
    let outcome = run_quasi_static(plan, ctx.profile, grid.ring_width_m)?;
    // Second resolution along the axis and in time: twice the ring width and step.
    let coarse_w = 2.0 * grid.ring_width_m;
    let axial_err = if coarse_w <= design.tube.length_m {
        let cg = RingGrid::new(design, Some(coarse_w), Some(grid.layers), None, limits)?;
        let ct = FluxTable::checked(&design.magnets, &cg, ctx.base_reach_m, limits)?;
        let cp = DragProfile::new(&cg, &ct, ctx.base_reach_m);
        let coarse = run_quasi_static(plan, &cp, cg.ring_width_m)?;
        headline_change(&outcome, &coarse)
    } else {
        0.0
    };
    let mut info = ModelInfo::new(
        "quasi_static_ring_sum",
        Fidelity::QuasiStatic,
        Discretisation {
            radial_layers: Some(grid.layers),
            axial_rings: Some(grid.rings),
            ring_width_m: Some(grid.ring_width_m),
            time_step_s: Some(outcome.dt_min_s),
            steps: Some(outcome.tally.steps),
            ..Discretisation::default()
        },
    );
    // The two checks are added so that errors of opposite sign cannot hide each other.
    info.error_estimate_relative =
        Some(axial_err + radial_error_estimate(design, grid, ctx.c_mid_n_s_per_m, limits)?);
    if reynolds_caution && ctx.reynolds > AUTO_INDUCTIVE_REYNOLDS {
        push_unique(
            cautions,
            Caution::new(
                CautionKind::Numerical,
                format!(
                    "Quasi-static model requested. {} Use the inductive fidelity.",
                    overstatement_note(ctx.reynolds)
                ),
            ),
        );
    }
    Ok((outcome, info))
}

/// The model block of an inductive run: the ring grid, the smallest step, the step count and
/// the axial reach of the mutual coupling kept.
fn ring_circuit_info(method: &str, grid: &RingGrid, outcome: &Outcome, reach_m: f64) -> ModelInfo {
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

/// Radial resolution check: relative change of the long-tube damping when the layers of
/// `grid` are doubled (up to 32), given its value `c_mid` at the grid's own layers.
fn radial_error_estimate(
    design: &Design,
    grid: &RingGrid,
    c_mid: f64,
    limits: &Limits,
) -> Result<f64, ModelError> {
    let layers = (2 * grid.layers).min(32);
    if layers == grid.layers || c_mid <= 0.0 {
        return Ok(0.0);
    }
    let reach = window_half_length_m(design, 0.0);
    let fine = RingGrid::build(design, grid.ring_width_m, grid.rings, layers);
    let table = FluxTable::checked(&design.magnets, &fine, reach, limits)?;
    let c_fine = crate::solvers::dragprofile::long_tube_damping_n_s_per_m(&fine, &table, reach);
    Ok((c_fine - c_mid).abs() / c_fine)
}

/// Relative change of the headline numbers between two resolutions: the largest of the exit
/// time, the exit speed and the largest braking force when both runs exit, otherwise of the
/// distance travelled and the largest braking force.
fn headline_change(fine: &Outcome, coarse: &Outcome) -> f64 {
    let rel = |f: f64, c: f64| {
        if f.abs() > 0.0 {
            (f - c).abs() / f.abs()
        } else {
            0.0
        }
    };
    let braking = rel(fine.tally.max_braking_n, coarse.tally.max_braking_n);
    braking.max(match (fine.tally.exit, coarse.tally.exit) {
        (Some((tf, vf)), Some((tc, vc))) if tf > 0.0 => rel(tf, tc).max(rel(vf, vc)),
        _ => {
            let df = fine.tally.end_state.1 - fine.tally.start_x_m;
            let dc = coarse.tally.end_state.1 - coarse.tally.start_x_m;
            if df.abs() > 0.0 {
                (df - dc).abs() / df.abs()
            } else {
                0.0
            }
        }
    })
}

fn assemble(
    design: &Design,
    plan: &Plan,
    o: Outcome,
    model: ModelInfo,
    mut cautions: Vec<Caution>,
) -> Stroke {
    let tally = &o.tally;
    let base_reach = window_half_length_m(design, 0.0);
    let swept = heat::swept_length_m(design, tally.x_range_m.0, tally.x_range_m.1, base_reach);
    let rise = heat::adiabatic_rise_k(design, tally.heat_j, swept);
    let balance = tally.energy_balance_error(o.stored_j, o.dropped_j);
    let (end_t, end_x, end_v) = tally.end_state;
    match o.end {
        StrokeEnd::TimeLimit => push_unique(
            &mut cautions,
            Caution::new(
                CautionKind::Numerical,
                format!(
                    "The run reached max_time_s = {} s before the stack reached its stop or stopped; \
                     the summary describes a stroke in progress.",
                    plan.max_time_s
                ),
            ),
        ),
        StrokeEnd::Stopped if plan.mech.drive_n < -plan.mech.friction_n => push_unique(
            &mut cautions,
            Caution::new(
                CautionKind::Assumption,
                "The drive points against the direction of travel: the stroke ends where the stack \
                 turns back.",
            ),
        ),
        _ => {}
    }
    // Runaway and the margin against it are the design's, decided from the steady curve as
    // on every other endpoint.
    if plan.mech.drive_n - plan.mech.friction_n > 0.0
        && let Ok(solver) = crate::solvers::spectral::SteadySolver::new(design, None)
    {
        let m = solver.metrics(design);
        for c in crate::records::caution::steady_load_cautions(
            m.drive_force_n,
            m.peak_force_n,
            m.critical_speed_m_per_s,
            m.terminal_speed_m_per_s,
        ) {
            push_unique(&mut cautions, c);
        }
    }
    if o.dt_reduced {
        push_unique(
            &mut cautions,
            Caution::new(
                CautionKind::Numerical,
                "The stack ran faster than planned; the time step was reduced during the run.",
            ),
        );
    }
    if o.dropped_j.abs() > 1e-3 * tally.heat_j.max(1e-300) {
        push_unique(
            &mut cautions,
            Caution::new(
                CautionKind::Numerical,
                format!(
                    "Currents dropped at the edge of the computed window carried {:.2e} J ({:.2} % of \
                     the heat); the wake is longer than the window.",
                    o.dropped_j,
                    100.0 * o.dropped_j / tally.heat_j.max(1e-300)
                ),
            ),
        );
    }
    if let Some(e) = model.error_estimate_relative
        && e > crate::solvers::spectral::NUMERICAL_CAUTION_RELATIVE
    {
        let d = &model.discretisation;
        push_unique(
            &mut cautions,
            Caution::new(
                CautionKind::Numerical,
                format!(
                    "Estimated numerical error {:.1} % exceeds {:.0} % at {} radial layers and ring \
                     width {:.3e} m; raise options.radial_layers and refine options.ring_width_m \
                     (halving the ring width costs about {}x the run time, doubling the layers \
                     about 4x).",
                    100.0 * e,
                    100.0 * crate::solvers::spectral::NUMERICAL_CAUTION_RELATIVE,
                    d.radial_layers.unwrap_or(0),
                    d.ring_width_m.unwrap_or(0.0),
                    if model.fidelity == Fidelity::Inductive {
                        8
                    } else {
                        2
                    },
                ),
            ),
        );
    }
    if let Some(r) = rise
        && r > 10.0
    {
        let change = heat::braking_change_after_rise(design, r);
        push_unique(
            &mut cautions,
            Caution::new(
                CautionKind::Heating,
                format!(
                    "The swept tube warms by about {r:.1} K per stroke (adiabatic mean); at that \
                     temperature low-speed braking changes by {:.1} %. Repeated strokes heat further.",
                    100.0 * change
                ),
            ),
        );
    }
    let summary = StrokeSummary {
        exit_time_s: tally.exit.map(|e| e.0),
        exit_speed_m_per_s: tally.exit.map(|e| e.1),
        stop_position_m: plan.rules.stop_position_m,
        stroke_time_s: tally.landing.map(|l| l.0),
        landing_speed_m_per_s: tally.landing.map(|l| l.1),
        max_speed_m_per_s: tally.max_speed_m_per_s,
        max_deceleration_m_per_s2: tally.max_deceleration_m_per_s2,
        max_speed_before_entry_m_per_s: tally.max_speed_before_entry_m_per_s,
        max_braking_force_n: tally.max_braking_n,
        heat_j: tally.heat_j,
        tube_temperature_rise_k: rise,
        energy_balance_error: balance,
        end_reason: o.end,
        end_time_s: end_t,
        end_position_m: end_x,
        end_speed_m_per_s: end_v,
    };
    Stroke {
        summary,
        series: o.series,
        cautions,
        model,
    }
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

/// The naive dense reference of the inductive stroke, for benchmarks and tests only: the same
/// discretisation, time stepping and step control, but every ring of the tube carries current,
/// the inductance matrix is dense (no truncation of mutual coupling), each step size is
/// factorised by a dense Cholesky, and every step does dense triangular solves over all rings.
/// Returns the stroke and the number of factorisations.
#[doc(hidden)]
pub fn simulate_stroke_dense_reference(
    design: &Design,
    opts: &StrokeOptions,
    limits: &Limits,
) -> Result<(Stroke, usize), ModelError> {
    validate(opts, design, limits)?;
    let qs_grid = RingGrid::new(design, opts.ring_width_m, opts.radial_layers, None, limits)?;
    let base_reach = window_half_length_m(design, 0.0);
    let qs_table = FluxTable::checked(&design.magnets, &qs_grid, base_reach, limits)?;
    let profile = DragProfile::new(&qs_grid, &qs_table, base_reach);
    let plan = plan(design, opts, limits, profile.mid_tube_n_s_per_m());
    let grid = RingGrid::new(
        design,
        opts.ring_width_m,
        opts.radial_layers,
        Some(plan.speeds.in_tube_m_per_s),
        limits,
    )?;
    // The whole tube is within reach of every ring: tabulate over the tube length.
    // Every ring is within reach of the stack while it is near the tube (beyond the table the
    // flux derivative counts as zero, as in the windowed solver).
    let table = FluxTable::checked(
        &design.magnets,
        &grid,
        design.tube.length_m + design.magnets.total_length_m() + base_reach,
        limits,
    )?;
    let circuit = RingCircuit::new(&grid, grid.rings.saturating_sub(1));
    check_band(
        &grid,
        &circuit,
        WindowMode::WholeTube,
        opts.radial_layers.is_some(),
        limits.max_band_entries,
    )?;
    let (outcome, factors) = run_inductive(
        &plan,
        &grid,
        &table,
        &circuit,
        WindowMode::WholeTube,
        profile.max_n_s_per_m(),
    )?;
    let err = outcome
        .tally
        .energy_balance_error(outcome.stored_j, outcome.dropped_j);
    let mut info = ring_circuit_info(
        "ring_circuit_dense_reference",
        &grid,
        &outcome,
        design.tube.length_m,
    );
    info.error_estimate_relative = Some(err);
    let cautions = vec![Caution::standing_safety()];
    Ok((assemble(design, &plan, outcome, info, cautions), factors))
}
