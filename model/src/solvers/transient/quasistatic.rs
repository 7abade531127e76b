//! The quasi-static stroke (inductance neglected, method `quasi_static_ring_sum`):
//! m dv/dt = F_drive - friction - c(x) v with the drag profile c(x) of the finite tube
//! ([`crate::solvers::dragprofile`]), trapezoidal in v (implicit), Coulomb friction implicit;
//! its resolution check repeats the run at twice the ring width and step.

use super::plan::{AUTO_INDUCTIVE_REYNOLDS, QuasiStaticContext, STEP_FRACTION, overstatement_note};
use super::plan::{
    MIN_STEPS_PER_MAX_TIME, Outcome, Plan, headline_change, start_acceleration, step_for_distance,
    too_many_steps,
};
use super::run::{Recorder, StepRecord, Tally};
use crate::records::caution::{Caution, CautionKind, push_unique};
use crate::records::design::Design;
use crate::records::error::ModelError;
use crate::records::limits::Limits;
use crate::records::report::{Discretisation, Fidelity, ModelInfo};
use crate::solvers::dragprofile::DragProfile;
use crate::solvers::rings::fluxtable::FluxTable;
use crate::solvers::rings::grid::RingGrid;
use crate::solvers::rings::grid::window_half_length_m;

/// The quasi-static step also resolves the mechanical time constant m / c: dt <= this x m / c.
const QS_MECHANICAL_FRACTION: f64 = 0.5;

/// Quasi-static steps (tens of nanoseconds each) between two cancellation checks.
const CANCEL_CHECK_STEPS: usize = 1024;

/// Quasi-static run with the drag profile `profile` of a grid of ring width `dz`.
pub(super) fn run_quasi_static(
    plan: &Plan,
    profile: &DragProfile,
    dz: f64,
) -> Result<Outcome, ModelError> {
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

/// The quasi-static run with its second-resolution check, cautions and model block.
pub(super) fn quasi_static_path(
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

/// Radial resolution check: relative change of the long-tube damping when the layers of
/// `grid` are doubled (up to 32), given its value `c_mid` at the grid's own layers.
pub(super) fn radial_error_estimate(
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
