//! The plan of a stroke: validated options, the mechanics, the expected speeds that size the
//! window and the steps, the end rules, and what a run returns; shared by both fidelities.

use super::run::{EndRules, Mechanics, Tally};
use super::{ExpectedSpeeds, expected_speeds, window_half_length_m};
use crate::records::design::Design;
use crate::records::error::{FieldError, ModelError};
use crate::records::limits::Limits;
use crate::records::stroke::{StrokeEnd, StrokeOptions, StrokeSeries};

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
