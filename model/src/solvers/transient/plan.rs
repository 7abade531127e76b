//! The plan of a stroke: validated options, the mechanics, the expected speeds that size the
//! window and the steps, the end rules, and what a run returns; shared by both fidelities.

use super::run::{EndRules, Mechanics, Tally};
use crate::MU0;
use crate::records::caution::Caution;
use crate::records::design::Design;
use crate::records::error::{FieldError, ModelError};
use crate::records::limits::Limits;
use crate::records::stroke::{StrokeEnd, StrokeOptions, StrokeSeries};
use crate::solvers::dragprofile::DragProfile;
use crate::solvers::rings::fluxtable::FluxTable;
use crate::solvers::rings::grid::{RingGrid, window_half_length_m};
use crate::solvers::spectral::SteadySolver;

/// Every run has at least this many steps over `max_time_s`.
pub(super) const MIN_STEPS_PER_MAX_TIME: f64 = 100.0;

/// Below this fraction of the expected speed, a stack with no drive beyond friction counts as
/// stopped (it would coast a further 1e-7 of its stopping distance).
const STOP_SPEED_FRACTION: f64 = 1e-7;

/// Largest step for which a stack at `speed` with acceleration up to `accel` moves at most
/// `distance`: v dt + a dt^2 / 2 = distance.
pub(super) fn step_for_distance(speed: f64, accel: f64, distance: f64) -> f64 {
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
pub(super) struct Plan {
    pub(super) mech: Mechanics,
    pub(super) x0_m: f64,
    pub(super) v0_m_per_s: f64,
    pub(super) max_time_s: f64,
    pub(super) samples: usize,
    pub(super) speeds: ExpectedSpeeds,
    /// Largest acceleration the drive and friction can give, m/s^2.
    pub(super) accel_bound_m_per_s2: f64,
    /// Window half-length (field reach and wake), m.
    pub(super) reach_m: f64,
    pub(super) max_steps: usize,
    pub(super) rules: EndRules,
    /// The job's cancellation token, checked every few steps.
    pub(super) cancel: crate::records::cancel::CancelToken,
}

/// What a solver returns.
#[derive(Debug, Clone)]
pub(super) struct Outcome {
    pub(super) tally: Tally,
    pub(super) series: StrokeSeries,
    pub(super) end: StrokeEnd,
    pub(super) stored_j: f64,
    pub(super) dropped_j: f64,
    pub(super) dt_min_s: f64,
    pub(super) dt_reduced: bool,
}

pub(super) fn validate(
    opts: &StrokeOptions,
    design: &Design,
    limits: &Limits,
) -> Result<(), ModelError> {
    let mut errs = Vec::new();
    let lt = design.tube.length_m;
    let max_x = crate::records::stroke::MAX_POSITION_M;
    if !(opts.start_position_m.is_finite() && opts.start_position_m.abs() <= max_x) {
        errs.push(FieldError::new(
            "start.position_m",
            format!("must be between -{max_x} and {max_x} m"),
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
        && !(stop.is_finite() && stop.abs() <= max_x && stop > opts.start_position_m)
    {
        errs.push(FieldError::new(
            "stop_position_m",
            format!(
                "must lie ahead of the start position ({} m), between -{max_x} and {max_x} m",
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

pub(super) fn plan(design: &Design, opts: &StrokeOptions, limits: &Limits, c_mid: f64) -> Plan {
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

pub(super) fn too_many_steps(plan: &Plan) -> ModelError {
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
pub(super) fn start_acceleration(mech: &Mechanics, v0: f64) -> f64 {
    if v0 > 0.0 {
        (mech.drive_n - mech.friction_n) / mech.mass_kg
    } else {
        mech.implicit_velocity(mech.drive_n, mech.mass_kg).0
    }
}

/// Relative change of the headline numbers between two resolutions: the largest of the exit
/// time, the exit speed and the largest braking force when both runs exit, otherwise of the
/// distance travelled and the largest braking force.
pub(super) fn headline_change(fine: &Outcome, coarse: &Outcome) -> f64 {
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

/// Runaway and the margin against it are the design's, decided from the steady curve as on
/// every other endpoint: from `steady` when given, else from a solver built within `limits`.
/// A solver that cannot be built within the limits leaves these cautions out (the stroke
/// itself shows what happens); cancellation is passed on.
pub(super) fn runaway_cautions(
    design: &Design,
    plan: &Plan,
    limits: &Limits,
    steady: Option<&SteadySolver>,
) -> Result<Vec<Caution>, ModelError> {
    if plan.mech.drive_n - plan.mech.friction_n <= 0.0 {
        return Ok(Vec::new());
    }
    let own;
    let solver = match steady {
        Some(s) => s,
        None => match SteadySolver::new_within(design, None, limits) {
            Ok(s) => {
                own = s;
                &own
            }
            Err(ModelError::Cancelled) => return Err(ModelError::Cancelled),
            Err(_) => return Ok(Vec::new()),
        },
    };
    let m = solver.metrics(design);
    Ok(crate::records::caution::steady_load_cautions(
        m.drive_force_n,
        m.peak_force_n,
        m.critical_speed_m_per_s,
        m.terminal_speed_m_per_s,
    ))
}

/// The quasi-static pieces built for every stroke (also used for the expected speed).
pub(super) struct QuasiStaticContext<'a> {
    pub(super) grid: &'a RingGrid,
    pub(super) table: &'a FluxTable,
    pub(super) profile: &'a DragProfile,
    pub(super) base_reach_m: f64,
    pub(super) c_mid_n_s_per_m: f64,
    pub(super) reynolds: f64,
}

/// What the quasi-static model misses at magnetic Reynolds number `rm`, in words.
pub(super) fn overstatement_note(rm: f64) -> String {
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
