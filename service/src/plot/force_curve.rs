//! The force-speed curve on logarithmic axes.

use super::canvas::{Frame, KeyEntry, draw_frame, fail, height_for, render};
use super::panel::{draw_mesh, event_line, new_panel};
use super::style::{Dash, LineStyle, Marker, PALETTE, Sizes};
use super::words::{design_summary, format_number};
use super::{PlotError, PlotOptions, log_window, model_note};
use crate::api::force_curve::ForceCurveResponse;
use plotters::prelude::*;
use ringdrag_model::DesignSpec;

/// The styles of the force-curve plot: the curve, the load's level, the critical and the
/// terminal speed.
fn styles() -> [LineStyle; 4] {
    let s = |i: usize, dash: Dash| LineStyle {
        color: PALETTE[i],
        dash,
        marker: Marker::Disc,
    };
    [
        s(0, Dash::Solid),
        s(3, Dash::Dashed),
        s(5, Dash::Dotted),
        s(1, Dash::DashDot),
    ]
}

/// The force-speed curve on logarithmic axes: braking force, the driving force of the load,
/// and the terminal and critical speeds. Speeds and forces of zero are left out (a logarithmic
/// axis has no zero); the caller makes sure at least one speed is positive.
///
/// # Errors
///
/// A [`PlotError`] when the curve has no speed above 0 to draw, or the drawing backend fails.
pub fn force_curve_svg(
    curve: &ForceCurveResponse,
    design: &DesignSpec,
    options: &PlotOptions,
) -> Result<String, PlotError> {
    let points: Vec<(f64, f64)> = curve
        .points
        .iter()
        .filter(|p| p.speed_m_per_s > 0.0)
        .map(|p| (p.speed_m_per_s, p.force_n))
        .collect();
    if points.is_empty() {
        return Err(PlotError("no positive speed to draw".into()));
    }
    // Both axes logarithmic: the curve spans decades of speed and of force, the low-speed
    // branch (F = c v) is a straight line of slope one, and the crossing with the load's
    // driving force stays visible however small that force is.
    let speeds = points
        .iter()
        .map(|p| p.0)
        .chain([curve.critical_speed_m_per_s])
        .chain(curve.terminal_speed_m_per_s);
    let (v_lo, v_hi) =
        log_window(speeds, 1.4).ok_or_else(|| PlotError("no positive speed to draw".into()))?;
    let forces = points
        .iter()
        .map(|p| p.1)
        .chain([curve.peak_force_n, curve.drive_force_n]);
    let (f_lo, f_hi) = log_window(forces, 2.0).unwrap_or((1e-6, 1.0));
    // Points below the window (far below the largest values) are left out.
    let points: Vec<(f64, f64)> = points
        .into_iter()
        .filter(|p| p.0 >= v_lo && p.1 >= f_lo)
        .collect();
    let [force, drive, critical, terminal] = styles();
    let (key, terminal_words) = key_entries(curve, [force, drive, critical, terminal]);
    let summary = design_summary(design);
    let frame = Frame {
        title: "Braking force against speed".into(),
        subtitle: summary.clone(),
        key,
        note: model_note(&curve.model.version, &curve.model.method),
        description: format!(
            "Steady braking force against speed in a long tube, both axes logarithmic, for {summary}. \
             Damping {} N s/m, peak force {} N at the critical speed {} m/s, {terminal_words}; \
             driving force of the load {} N.",
            format_number(curve.damping_n_s_per_m),
            format_number(curve.peak_force_n),
            format_number(curve.critical_speed_m_per_s),
            format_number(curve.drive_force_n),
        ),
    };
    let sizes = Sizes::for_width(options.width());
    let height = height_for(&frame, &sizes, options.height(1.5), sizes.u(12.0));
    let line = sizes.line_px();
    render(&frame, &sizes, height, |root| {
        let body = draw_frame(root, &frame, &sizes)?;
        let mut chart = new_panel(
            &body,
            &sizes,
            (v_lo..v_hi).log_scale(),
            (f_lo..f_hi).log_scale(),
            "braking force [N]",
        )?;
        draw_mesh(&mut chart, &sizes, "speed [m/s]")?;
        if curve.drive_force_n > 0.0 {
            chart
                .draw_series(std::iter::once(PathElement::new(
                    vec![(v_lo, curve.drive_force_n), (v_hi, curve.drive_force_n)],
                    drive.stroke_color().stroke_width(line),
                )))
                .map_err(fail)?;
        }
        event_line(
            &mut chart,
            curve.critical_speed_m_per_s,
            &(f_lo..f_hi),
            critical.stroke_color(),
            line,
        )?;
        if let Some(vt) = curve.terminal_speed_m_per_s {
            event_line(&mut chart, vt, &(f_lo..f_hi), terminal.stroke_color(), line)?;
        }
        chart
            .draw_series(LineSeries::new(
                points.clone(),
                force.stroke_color().stroke_width(line + 1),
            ))
            .map_err(fail)?;
        if let Some(vt) = curve.terminal_speed_m_per_s {
            // The operating point: where braking meets the load.
            chart
                .draw_series(std::iter::once(Circle::new(
                    (vt, curve.drive_force_n),
                    sizes.marker_px() + 2,
                    terminal.color.filled(),
                )))
                .map_err(fail)?;
        }
        Ok(())
    })
}

/// The key of the force-curve plot (braking force, driving force, critical and terminal
/// speed) and the words for the terminal speed in the plot's description.
fn key_entries(
    curve: &ForceCurveResponse,
    [force, drive, critical, terminal]: [LineStyle; 4],
) -> (Vec<KeyEntry>, String) {
    let entry = |label: String, style: LineStyle| KeyEntry {
        label,
        style,
        with_marker: false,
    };
    let mut key = vec![entry("braking force in a long tube".into(), force)];
    if curve.drive_force_n > 0.0 {
        key.push(entry(
            format!(
                "driving force of the load, {} N",
                format_number(curve.drive_force_n)
            ),
            drive,
        ));
    }
    key.push(entry(
        format!(
            "critical speed {} m/s (peak {} N)",
            format_number(curve.critical_speed_m_per_s),
            format_number(curve.peak_force_n)
        ),
        critical,
    ));
    let terminal_words = match curve.terminal_speed_m_per_s {
        Some(vt) => {
            let label = format!("terminal speed {} m/s", format_number(vt));
            key.push(entry(label.clone(), terminal));
            label
        }
        None if curve.drive_force_n > curve.peak_force_n => {
            let label = "no terminal speed: the load exceeds the peak force".to_string();
            key.push(entry(label.clone(), terminal));
            label
        }
        None => "no driving force, so no terminal speed".to_string(),
    };
    (key, terminal_words)
}
