//! A stroke in two panels sharing the horizontal axis (time, or position along the tube):
//! speed above, braking force below, with the tube entry and the far end marked.

use super::canvas::{Frame, KeyEntry, draw_frame, height_for, render};
use super::panel::{draw_mesh, event_line, new_panel};
use super::style::{Dash, LineStyle, Marker, PALETTE, Sizes};
use super::words::{design_summary, format_number};
use super::{PlotError, PlotOptions, StrokeAxis, model_note, padded};
use crate::api::simulate::SimulateResponse;
use plotters::prelude::*;
use ringdrag_model::{DesignSpec, StrokeEnd};

/// Time at which the stack centre first crosses the tube's entry end (position 0) going
/// forward, by linear interpolation between samples; None if it starts inside or never enters.
fn entry_time_s(time_s: &[f64], position_m: &[f64]) -> Option<f64> {
    time_s
        .windows(2)
        .zip(position_m.windows(2))
        .find(|(_, x)| x[0] < 0.0 && x[1] >= 0.0)
        .map(|(t, x)| t[0] + (t[1] - t[0]) * (-x[0]) / (x[1] - x[0]))
}

fn style(i: usize, dash: Dash) -> LineStyle {
    LineStyle {
        color: PALETTE[i],
        dash,
        marker: Marker::Disc,
    }
}

/// The title: how the stroke ended, with the summary's own figure.
fn title(stroke: &SimulateResponse) -> String {
    let s = &stroke.summary;
    match (s.end_reason, s.exit_time_s) {
        (StrokeEnd::ReachedStop, _) => match (s.stroke_time_s, s.landing_speed_m_per_s) {
            (Some(t), Some(v)) => format!(
                "Stroke: reaches the stop at {} s, landing at {} m/s",
                format_number(t),
                format_number(v)
            ),
            _ => format!(
                "Stroke: reaches the stop at {} s",
                format_number(s.end_time_s)
            ),
        },
        (StrokeEnd::PassedTube, Some(t)) => {
            format!("Stroke: reaches the far end at {} s", format_number(t))
        }
        (StrokeEnd::PassedTube, None) => {
            format!(
                "Stroke: passes the tube in {} s",
                format_number(s.end_time_s)
            )
        }
        (StrokeEnd::Stopped, _) => format!(
            "Stroke: stops after {} s, {} mm along the tube",
            format_number(s.end_time_s),
            format_number(s.end_position_m * 1e3)
        ),
        (StrokeEnd::TimeLimit, _) => format!(
            "Stroke: still moving at the time limit, {} s",
            format_number(s.end_time_s)
        ),
    }
}

/// A stroke in two panels sharing the horizontal axis: speed above, braking force below, with
/// the moments (or places) the stack enters the tube and reaches its far end.
///
/// # Errors
///
/// A [`PlotError`] when the drawing backend fails (answered as a 500 problem).
pub fn stroke_svg(
    stroke: &SimulateResponse,
    design: &DesignSpec,
    options: &PlotOptions,
) -> Result<String, PlotError> {
    let s = &stroke.series;
    let against = options.against.unwrap_or_default();
    let (xs, x_title): (Vec<f64>, &str) = match against {
        StrokeAxis::Time => (s.time_s.clone(), "time [s]"),
        StrokeAxis::Position => (
            s.position_m.iter().map(|x| x * 1e3).collect(),
            "position of the stack centre [mm]",
        ),
    };
    let pairs =
        |ys: &[f64]| -> Vec<(f64, f64)> { xs.iter().copied().zip(ys.iter().copied()).collect() };
    let speed = pairs(&s.speed_m_per_s);
    let force = pairs(&s.force_n);
    let (speed_style, force_style) = (style(0, Dash::Solid), style(1, Dash::Solid));
    let (entry_style, end_style) = (style(3, Dash::Dashed), style(5, Dash::DashDot));
    let entry = |label: String, style: LineStyle| KeyEntry {
        label,
        style,
        with_marker: false,
    };
    let mut key = vec![
        entry("speed of the stack".into(), speed_style),
        entry("braking force on the stack".into(), force_style),
    ];
    let mut events = Vec::new();
    let entry_t = entry_time_s(&s.time_s, &s.position_m);
    if let Some(t) = entry_t {
        key.push(entry(
            format!("enters the tube at {} s", format_number(t)),
            entry_style,
        ));
        events.push((
            match against {
                StrokeAxis::Time => t,
                StrokeAxis::Position => 0.0,
            },
            entry_style,
        ));
    }
    if let Some(t) = stroke.summary.exit_time_s {
        key.push(entry(
            format!("reaches the far end at {} s", format_number(t)),
            end_style,
        ));
        events.push((
            match against {
                StrokeAxis::Time => t,
                StrokeAxis::Position => design.tube.length_m * 1e3,
            },
            end_style,
        ));
    }
    let x_lo = xs.iter().copied().fold(f64::INFINITY, f64::min);
    let x_hi = xs.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let x_range = match against {
        // Time starts at 0 and the axis ends where the stroke ends.
        StrokeAxis::Time => 0.0..x_hi.max(stroke.summary.end_time_s).max(1e-9),
        StrokeAxis::Position => padded(x_lo, x_hi).unwrap_or(0.0..1.0),
    };
    let summary = design_summary(design);
    let title = title(stroke);
    let sm = &stroke.summary;
    let frame = Frame {
        title: title.clone(),
        subtitle: summary.clone(),
        key,
        note: model_note(&stroke.model.version, &stroke.model.method),
        description: format!(
            "{title}. Speed and braking force against {} for {summary}. Peak speed {} m/s, \
             largest braking force {} N, largest deceleration {} m/s², heat {} J; the run ends \
             at {} s.",
            match against {
                StrokeAxis::Time => "time",
                StrokeAxis::Position => "position along the tube",
            },
            format_number(sm.max_speed_m_per_s),
            format_number(sm.max_braking_force_n),
            format_number(sm.max_deceleration_m_per_s2),
            format_number(sm.heat_j),
            format_number(sm.end_time_s),
        ),
    };
    let sizes = Sizes::for_width(options.width());
    let height = height_for(&frame, &sizes, options.height(1.1), sizes.u(22.0));
    let line = sizes.line_px();
    render(&frame, &sizes, height, |root| {
        let body = draw_frame(root, &frame, &sizes)?;
        let (upper, lower) = body.split_vertically(body.dim_in_pixel().1 / 2);
        let lower = lower.margin(sizes.u(0.5), 0, 0, 0);
        for (area, series, style, y_title) in [
            (&upper, &speed, speed_style, "speed [m/s]"),
            (&lower, &force, force_style, "braking force [N]"),
        ] {
            let y_lo = series.iter().map(|p| p.1).fold(0.0, f64::min);
            let y_hi = series.iter().map(|p| p.1).fold(0.0, f64::max);
            let y = padded(y_lo, y_hi).unwrap_or(0.0..1.0);
            let mut chart = new_panel(area, &sizes, x_range.clone(), y.clone(), y_title)?;
            draw_mesh(&mut chart, &sizes, x_title)?;
            for (x, event) in &events {
                event_line(&mut chart, *x, &y, event.stroke_color(), line)?;
            }
            chart
                .draw_series(LineSeries::new(
                    series.clone(),
                    style.stroke_color().stroke_width(line + 1),
                ))
                .map_err(super::canvas::fail)?;
        }
        Ok(())
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn entry_time_is_interpolated() {
        let t = [0.0, 1.0, 2.0];
        let x = [-0.3, -0.1, 0.1];
        assert_eq!(entry_time_s(&t, &x), Some(1.5));
        assert_eq!(entry_time_s(&t, &[0.0, 0.1, 0.2]), None);
    }
}
