//! A sweep: one panel per metric against the first varied field (in its display unit), one
//! line per combination of the other varied fields, each line with its own colour, dash and
//! marker; lines that coincide in a panel are said so there, and their markers sit at
//! different points so that each stays visible.

use super::canvas::{Frame, KeyEntry, draw_frame, fail, height_for, render};
use super::panel::{draw_mesh, markers, new_panel, panel_note};
use super::style::{FONT, MUTED, Sizes, line_style};
use super::words::{design_summary, field_axis_title, field_scale, field_value};
use super::{PlotError, PlotOptions, model_note, padded};
use crate::api::sweep::SweepPointDto;
use plotters::prelude::*;
use ringdrag_model::jobs::metrics::Metric;
use ringdrag_model::{DesignField, DesignSpec};
use std::collections::BTreeMap;

/// One axis of a sweep as the plot needs it: the field, the path as requested and its values.
#[derive(Debug, Clone, PartialEq)]
pub struct PlotAxis {
    /// The varied field (its words and display unit are the model's field table's).
    pub field: DesignField,
    /// Dotted path as the request wrote it (the key of each point's `inputs`).
    pub path: String,
    /// Values in the request's order.
    pub values: Vec<f64>,
}

/// Lines a sweep plot would draw per panel: one per combination of the second and third axes.
pub fn sweep_line_count(axes: &[PlotAxis]) -> usize {
    axes.iter()
        .skip(1)
        .map(|a| a.values.len())
        .product::<usize>()
        .max(1)
}

/// The points of one line as runs of consecutive points (by the first axis) that have a
/// value: a gap wherever a point failed or has no value. `x` is scaled to display units.
fn line_runs(
    points: &[&SweepPointDto],
    x_path: &str,
    x_scale: f64,
    metric: &str,
) -> Vec<Vec<(f64, f64)>> {
    let mut sorted: Vec<(f64, Option<f64>)> = points
        .iter()
        .filter_map(|p| {
            let x = *p.inputs.get(x_path)?;
            Some((x * x_scale, p.metrics.get(metric).copied().flatten()))
        })
        .collect();
    sorted.sort_by(|a, b| a.0.total_cmp(&b.0));
    let mut runs: Vec<Vec<(f64, f64)>> = Vec::new();
    let mut current = Vec::new();
    for (x, y) in sorted {
        match y {
            Some(y) => current.push((x, y)),
            None if !current.is_empty() => runs.push(std::mem::take(&mut current)),
            None => {}
        }
    }
    if !current.is_empty() {
        runs.push(current);
    }
    runs
}

/// Whether two lines coincide within `tolerance` (the same points, values within it).
fn coincide(a: &[Vec<(f64, f64)>], b: &[Vec<(f64, f64)>], tolerance: f64) -> bool {
    let flat = |l: &[Vec<(f64, f64)>]| -> Vec<(f64, f64)> { l.iter().flatten().copied().collect() };
    let (a, b) = (flat(a), flat(b));
    !a.is_empty()
        && a.len() == b.len()
        && a.iter()
            .zip(&b)
            .all(|(p, q)| p.0 == q.0 && (p.1 - q.1).abs() <= tolerance)
}

/// Groups of lines (by index) that coincide; only groups of two or more.
fn coinciding_groups(lines: &[Vec<Vec<(f64, f64)>>], tolerance: f64) -> Vec<Vec<usize>> {
    let mut taken = vec![false; lines.len()];
    let mut groups = Vec::new();
    for i in 0..lines.len() {
        if taken[i] {
            continue;
        }
        let group: Vec<usize> = (i..lines.len())
            .filter(|&j| !taken[j] && coincide(&lines[i], &lines[j], tolerance))
            .collect();
        for &j in &group {
            taken[j] = true;
        }
        if group.len() > 1 {
            groups.push(group);
        }
    }
    groups
}

/// Which points of a line carry markers. A line on its own marks every point when it has
/// few, else about eight spread along it. A line that coincides with others (it is the
/// `k`-th of `g` in its group) marks every `g`-th of those points from its own offset, so
/// that the coinciding lines show their markers side by side instead of on top of each
/// other.
fn marker_points(run: &[(f64, f64)], k: usize, g: usize) -> Vec<(f64, f64)> {
    const FEW: usize = 14;
    let spacing = if run.len() <= FEW { 1 } else { run.len() / 8 };
    let g = g.max(1);
    run.iter()
        .step_by(spacing.max(1))
        .enumerate()
        .filter(|(n, _)| n % g == k % g)
        .map(|(_, p)| *p)
        .collect()
}
/// Points of one plotted line each, keyed by the positions of their values on the axes after
/// the first (in the order the request lists them), with the line's label.
type PointGroups<'a> = BTreeMap<Vec<usize>, (String, Vec<&'a SweepPointDto>)>;

/// The first axis's padded range in display units.
fn x_range_of(x_axis: &PlotAxis, x_scale: f64) -> Result<std::ops::Range<f64>, PlotError> {
    let x_lo = x_axis.values.iter().copied().fold(f64::INFINITY, f64::min) * x_scale;
    let x_hi = x_axis
        .values
        .iter()
        .copied()
        .fold(f64::NEG_INFINITY, f64::max)
        * x_scale;
    padded(x_lo.min(x_hi), x_hi.max(x_lo))
        .ok_or_else(|| PlotError("the first axis's values do not fit one axis".into()))
}

/// Groups the points by the values of the other axes, in the order the request lists them.
fn group_points<'a>(axes: &[PlotAxis], points: &'a [SweepPointDto]) -> PointGroups<'a> {
    let mut groups: BTreeMap<Vec<usize>, (String, Vec<&SweepPointDto>)> = BTreeMap::new();
    for p in points {
        let mut key = Vec::new();
        let mut label = Vec::new();
        for axis in &axes[1..] {
            let v = p.inputs.get(&axis.path).copied().unwrap_or(f64::NAN);
            let position = axis
                .values
                .iter()
                .position(|a| a.to_bits() == v.to_bits())
                .unwrap_or(usize::MAX);
            key.push(position);
            label.push(field_value(axis.field, v));
        }
        groups
            .entry(key)
            .or_insert_with(|| (label.join(", "), Vec::new()))
            .1
            .push(p);
    }
    groups
}

/// The key: one entry per line (one for a one-axis sweep).
fn sweep_key(n_axes: usize, n_points: usize, groups: &PointGroups<'_>) -> Vec<KeyEntry> {
    if n_axes == 1 {
        vec![KeyEntry {
            label: format!("{} points (failed points leave gaps)", n_points),
            style: line_style(0),
            with_marker: true,
        }]
    } else {
        groups
            .values()
            .enumerate()
            .map(|(i, (label, _))| KeyEntry {
                label: label.clone(),
                style: line_style(i),
                with_marker: true,
            })
            .collect()
    }
}

/// A sweep: one panel per metric against the first axis, one line per combination of the
/// other axes. The caller keeps the line count within [`super::MAX_SWEEP_LINES`].
///
/// # Errors
///
/// A [`PlotError`] for a sweep without axes, or when the drawing backend fails.
pub fn sweep_svg(
    axes: &[PlotAxis],
    metrics: &[Metric],
    points: &[SweepPointDto],
    design: &DesignSpec,
    version: &str,
    method: &str,
    options: &PlotOptions,
) -> Result<String, PlotError> {
    let Some(x_axis) = axes.first() else {
        return Err(PlotError("a sweep without axes".into()));
    };
    let x_scale = field_scale(x_axis.field);
    let groups = group_points(axes, points);
    let n_lines = groups.len();
    let key = sweep_key(axes.len(), points.len(), &groups);
    let x_range = x_range_of(x_axis, x_scale)?;
    let x_title = field_axis_title(x_axis.field);
    let panels = metrics.len().max(1);
    let summary = design_summary(design);
    let varied: Vec<String> = axes.iter().map(|a| field_axis_title(a.field)).collect();
    let metric_words: Vec<String> = metrics.iter().map(|m| m.axis_title()).collect();
    let title = format!("Sweep over {x_title}");
    let frame = Frame {
        title: title.clone(),
        subtitle: format!("base design: {summary}"),
        key,
        note: model_note(version, method),
        description: format!(
            "{title}: {} against {}, one line per {}; {} points, {n_lines} line(s) per panel. \
             Base design: {summary}.",
            metric_words.join(", "),
            x_title,
            if varied.len() > 1 {
                varied[1..].join(" and ")
            } else {
                "sweep".into()
            },
            points.len(),
        ),
    };
    let sizes = Sizes::for_width(options.width());
    let default_aspect = match panels {
        1 => 1.5,
        2 => 1.0,
        _ => 0.75,
    };
    let height = height_for(
        &frame,
        &sizes,
        options.height(default_aspect),
        sizes.u(13.0) * panels as i32,
    );
    let line = sizes.line_px();
    render(&frame, &sizes, height, |root| {
        let body = draw_frame(root, &frame, &sizes)?;
        let areas = body.split_evenly((panels, 1));
        for ((metric, words), area) in metrics.iter().zip(&metric_words).zip(&areas) {
            let area = area.margin(0, sizes.u(0.5), 0, 0);
            let lines: Vec<Vec<Vec<(f64, f64)>>> = groups
                .values()
                .map(|(_, pts)| line_runs(pts, &x_axis.path, x_scale, metric.name()))
                .collect();
            let (y_lo, y_hi) = lines
                .iter()
                .flatten()
                .flatten()
                .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), p| {
                    (lo.min(p.1), hi.max(p.1))
                });
            let y_range = padded(y_lo, y_hi);
            let has_values = y_range.is_some();
            let y_range = y_range.unwrap_or(0.0..1.0);
            let mut chart = new_panel(&area, &sizes, x_range.clone(), y_range.clone(), words)?;
            draw_mesh(&mut chart, &sizes, &x_title)?;
            if !has_values {
                chart
                    .draw_series(std::iter::once(Text::new(
                        "no values to draw: every point failed or has no value for this metric",
                        (x_range.start, 0.5),
                        super::canvas::font(FONT, sizes.text, &MUTED),
                    )))
                    .map_err(fail)?;
                continue;
            }
            // Lines that coincide (within a thousandth of the panel's height) are said so,
            // and their markers take turns.
            let tolerance = 1e-3 * (y_range.end - y_range.start);
            let groups_here = coinciding_groups(&lines, tolerance);
            let place = |i: usize| -> (usize, usize) {
                groups_here
                    .iter()
                    .find_map(|g| g.iter().position(|&j| j == i).map(|k| (k, g.len())))
                    .unwrap_or((0, 1))
            };
            for (i, runs) in lines.iter().enumerate() {
                let style = line_style(i);
                let (k, g) = place(i);
                for run in runs {
                    chart
                        .draw_series(LineSeries::new(
                            run.clone(),
                            style.stroke_color().stroke_width(line),
                        ))
                        .map_err(fail)?;
                    let at = marker_points(run, k, g);
                    markers(&mut chart, &at, style.marker, style.color, &sizes)?;
                }
            }
            let note = if groups_here.len() == 1 && groups_here[0].len() == n_lines {
                format!("all {n_lines} lines coincide here")
            } else {
                groups_here
                    .iter()
                    .map(|g| format!("{} lines coincide", g.len()))
                    .collect::<Vec<_>>()
                    .join("; ")
            };
            if !note.is_empty() {
                panel_note(&area, &note, &sizes)?;
            }
        }
        Ok(())
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn gaps_split_lines() {
        let point = |x: f64, y: Option<f64>| SweepPointDto {
            index: 0,
            inputs: [("a".to_string(), x)].into_iter().collect(),
            metrics: [("m".to_string(), y)].into_iter().collect(),
            error: None,
            error_estimate_relative: None,
            cautions: Vec::new(),
            caution_kinds: Vec::new(),
        };
        let pts = [
            point(3.0, Some(3.0)),
            point(1.0, Some(1.0)),
            point(2.0, None),
            point(4.0, Some(4.0)),
        ];
        let refs: Vec<&SweepPointDto> = pts.iter().collect();
        assert_eq!(
            line_runs(&refs, "a", 1.0, "m"),
            vec![vec![(1.0, 1.0)], vec![(3.0, 3.0), (4.0, 4.0)]]
        );
    }

    #[test]
    fn coinciding_lines_are_found() {
        let a = vec![vec![(1.0, 1.0), (2.0, 2.0)]];
        let b = vec![vec![(1.0, 1.0), (2.0, 2.0005)]];
        let c = vec![vec![(1.0, 1.5), (2.0, 2.0)]];
        assert_eq!(
            coinciding_groups(&[a.clone(), c, b], 1e-3),
            vec![vec![0, 2]]
        );
        // Markers of coinciding lines start at different points.
        let run: Vec<(f64, f64)> = (0..6).map(|i| (f64::from(i), 0.0)).collect();
        assert_eq!(marker_points(&run, 0, 1).len(), 6);
        assert_eq!(marker_points(&run, 1, 3), vec![(1.0, 0.0), (4.0, 0.0)]);
    }
}
