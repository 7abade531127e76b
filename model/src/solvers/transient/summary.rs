//! The stroke record: summary, heat, and the run's cautions (time limit, turn-back, runaway
//! and its margin, reduced steps, dropped currents, numerical error, heating).

use super::plan::{Outcome, Plan};
use crate::records::caution::{Caution, CautionKind, push_unique};
use crate::records::design::Design;
use crate::records::report::{Fidelity, ModelInfo};
use crate::records::stroke::{Stroke, StrokeEnd, StrokeSummary};
use crate::solvers::heat;
use crate::solvers::rings::grid::window_half_length_m;

/// The stroke record of a run: summary, heat, and the cautions of the run added to
/// `cautions` (runaway and its margin from `runaway`).
pub(super) fn assemble(
    design: &Design,
    plan: &Plan,
    o: Outcome,
    model: ModelInfo,
    mut cautions: Vec<Caution>,
    runaway: Vec<Caution>,
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
    // Runaway and the margin against it (the design's, from the steady curve).
    for c in runaway {
        push_unique(&mut cautions, c);
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
    estimate_and_heat_cautions(design, &model, rise, &mut cautions);
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

/// The numerical caution when the error estimate exceeds 1 % (naming what to refine and its
/// cost), and the heating caution when the swept tube warms by more than 10 K per stroke.
fn estimate_and_heat_cautions(
    design: &Design,
    model: &ModelInfo,
    rise: Option<f64>,
    cautions: &mut Vec<Caution>,
) {
    if let Some(e) = model.error_estimate_relative
        && e > crate::solvers::spectral::NUMERICAL_CAUTION_RELATIVE
    {
        let d = &model.discretisation;
        push_unique(
            cautions,
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
            cautions,
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
}
