//! SVG plots of job results, for `Accept: image/svg+xml`.
//!
//! Presentation only: every number drawn comes from a response record the JSON answer would
//! carry; nothing here computes physics. Three plots:
//! - the force-speed curve on logarithmic speed and force axes, with the driving force of the
//!   load as a level line and the terminal and critical speeds marked;
//! - a stroke as two panels sharing the time axis, speed above and braking force below (what
//!   an engineer checks first: how fast it gets, how hard it brakes, and when), with the tube
//!   entry and the far-end crossing marked;
//! - a sweep as one panel per metric against the first varied field, one line per
//!   combination of the other varied fields (points that failed or have no value leave gaps).
//!
//! The look is the service's own: warm paper background, ink-coloured axes, a muted grid, a
//! palette of eight earthy, distinguishable line colours, legends in a framed box. Text stays
//! SVG text in a generic sans-serif family, so no font files are needed to draw.

use crate::api::force_curve::ForceCurveResponse;
use crate::api::simulate::SimulateResponse;
use crate::api::sweep::SweepPointDto;
use crate::problem::ApiError;
use plotters::coord::Shift;
use plotters::coord::ranged1d::{AsRangedCoord, Ranged, ValueFormatter};
use plotters::prelude::*;
use ringdrag_model::StrokeEnd;
use std::collections::BTreeMap;

/// Background of every plot.
const PAPER: RGBColor = RGBColor(0xFB, 0xF8, 0xF1);
/// Axes, titles and the main text.
const INK: RGBColor = RGBColor(0x24, 0x2C, 0x33);
/// Tick labels and notes.
const MUTED: RGBColor = RGBColor(0x6A, 0x6F, 0x73);
/// Major grid lines.
const GRID_MAJOR: RGBColor = RGBColor(0xDF, 0xD8, 0xC9);
/// Minor grid lines.
const GRID_MINOR: RGBColor = RGBColor(0xF0, 0xEB, 0xE0);
/// Line colours, in order of use: teal, brick, indigo, olive, saffron, plum, steel, umber.
const PALETTE: [RGBColor; 8] = [
    RGBColor(0x1E, 0x6F, 0x74),
    RGBColor(0xBF, 0x55, 0x36),
    RGBColor(0x4A, 0x4C, 0x8C),
    RGBColor(0x76, 0x88, 0x2C),
    RGBColor(0xD6, 0x96, 0x1B),
    RGBColor(0x8C, 0x3A, 0x68),
    RGBColor(0x3D, 0x7D, 0xAE),
    RGBColor(0x86, 0x5F, 0x3E),
];
/// Font family of every text (generic, resolved by the viewer).
const FONT: &str = "sans-serif";
/// Plot width, px.
const WIDTH_PX: u32 = 960;
/// Height of one panel, px.
const PANEL_PX: u32 = 360;
/// Height of the title band, px.
const TITLE_PX: u32 = 52;
/// Height of the note band at the foot, px.
const NOTE_PX: u32 = 30;

/// Most lines one sweep panel draws (one per combination of the second and third axes);
/// beyond this a plot is unreadable and the JSON answer serves better.
pub const MAX_SWEEP_LINES: usize = 12;

/// A plot could not be drawn (a defect: inputs are checked before drawing).
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("cannot draw the plot: {0}")]
pub struct PlotError(String);

impl From<PlotError> for ApiError {
    fn from(e: PlotError) -> Self {
        ApiError::Internal(e.to_string())
    }
}

fn fail<E: std::fmt::Display>(e: E) -> PlotError {
    PlotError(e.to_string())
}

/// A number for a label: three significant digits, plain notation between 1e-4 and 1e5.
pub fn format_number(v: f64) -> String {
    if !v.is_finite() {
        return "n/a".to_string();
    }
    if v == 0.0 {
        return "0".to_string();
    }
    let magnitude = v.abs().log10().floor();
    if (-4.0..5.0).contains(&magnitude) {
        let decimals = (2.0 - magnitude).max(0.0) as usize;
        let text = format!("{v:.decimals$}");
        if text.contains('.') {
            text.trim_end_matches('0').trim_end_matches('.').to_string()
        } else {
            text
        }
    } else {
        format!("{v:.2e}")
    }
}

/// Unit suffixes of the HTTP contract's names, longest first, with the unit as printed.
const UNITS: [(&str, &str); 20] = [
    ("_j_per_kg_k", "J/(kg K)"),
    ("_kg_per_m3", "kg/m³"),
    ("_n_s_per_m", "N s/m"),
    ("_m_per_s2", "m/s²"),
    ("_m_per_s", "m/s"),
    ("_s_per_m", "S/m"),
    ("_per_k", "1/K"),
    ("_fraction", "1"),
    ("_deg", "°"),
    ("_kg", "kg"),
    ("_m", "m"),
    ("_s", "s"),
    ("_n", "N"),
    ("_j", "J"),
    ("_w", "W"),
    ("_t", "T"),
    ("_c", "°C"),
    ("_k", "K"),
    ("_number", "1"),
    ("_error", "1"),
];

/// An axis title for a contract name: the name without its unit suffix, words spaced, and the
/// unit in brackets (`tube.wall_thickness_m` -> `tube wall thickness [m]`).
pub fn axis_title(name: &str) -> String {
    let name = name.strip_prefix("design.").unwrap_or(name);
    for (suffix, unit) in UNITS {
        if let Some(stem) = name.strip_suffix(suffix) {
            // `_number`, `_error` and `_fraction` stay part of the words (dimensionless).
            let stem = if matches!(suffix, "_number" | "_error" | "_fraction") {
                name
            } else {
                stem
            };
            return format!("{} [{unit}]", stem.replace(['_', '.'], " "));
        }
    }
    format!("{} [1]", name.replace(['_', '.'], " "))
}

/// A range with room around `lo..hi` (a degenerate range is widened so that it can be
/// drawn); None when no finite, non-empty range holds the values (their spread overflows a
/// 64-bit float), since the axis could not be drawn.
fn padded(lo: f64, hi: f64) -> Option<std::ops::Range<f64>> {
    if !(lo.is_finite() && hi.is_finite() && lo <= hi && (hi - lo).is_finite()) {
        return None;
    }
    let span = hi - lo;
    let (a, b) = if span > 1e-12 * hi.abs().max(lo.abs()) {
        (lo - 0.06 * span, hi + 0.06 * span)
    } else {
        let d = if lo == 0.0 { 1.0 } else { 0.1 * lo.abs() };
        (lo - d, hi + d)
    };
    if a.is_finite() && b.is_finite() && a < b {
        Some(a..b)
    } else if lo < hi {
        // At the ends of the f64 range: no room to pad.
        Some(lo..hi)
    } else {
        None
    }
}

/// Whether `values` fit on one drawable axis (their spread is a finite number).
pub fn drawable(values: &[f64]) -> bool {
    let lo = values.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = values.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    padded(lo, hi).is_some()
}

/// Most decades a logarithmic axis spans, down from its largest value: more is unreadable,
/// and the tick placement of a logarithmic axis grows with its decade count, so the count must
/// stay bounded whatever the data.
const MAX_DECADES: i32 = 12;

/// The range of a logarithmic axis holding the positive, finite `values` with a margin factor
/// `pad` on each side, at most [`MAX_DECADES`] wide and above the smallest normal number;
/// None when no value is positive (or every value is subnormal).
fn log_window(values: impl Iterator<Item = f64>, pad: f64) -> Option<(f64, f64)> {
    let (lo, hi) = values
        .filter(|v| v.is_finite() && *v > 0.0)
        .fold((f64::INFINITY, 0.0_f64), |(lo, hi), v| {
            (lo.min(v), hi.max(v))
        });
    if lo > hi {
        // No value was positive and finite (lo is still infinite).
        return None;
    }
    let hi = (hi * pad).min(f64::MAX);
    // Subnormal numbers are kept off the axis: their logarithms lose precision.
    let lo = (lo / pad)
        .max(hi * 10f64.powi(-MAX_DECADES))
        .max(f64::MIN_POSITIVE);
    (lo > 0.0 && lo < hi).then_some((lo, hi))
}

type Area<'a> = DrawingArea<SVGBackend<'a>, Shift>;

/// A chart on an SVG drawing area with coordinates `X` by `Y`.
type Chart<'a, 'b, X, Y> = ChartContext<'a, SVGBackend<'b>, Cartesian2d<X, Y>>;

/// How a line is drawn.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Stroke {
    /// A solid line, px wide.
    Solid(u32),
    /// A dashed marker line, px wide.
    Dashed(u32),
}

/// One entry of a plot's key: what a line shows.
#[derive(Debug, Clone, PartialEq)]
struct KeyEntry {
    label: String,
    color: RGBColor,
    stroke: Stroke,
}

impl KeyEntry {
    fn new(label: impl Into<String>, color: RGBColor, stroke: Stroke) -> Self {
        Self {
            label: label.into(),
            color,
            stroke,
        }
    }
}

/// Width of the key's line sample, px.
const SWATCH_PX: i32 = 30;
/// Height of one row of the key, px.
const KEY_ROW_PX: u32 = 22;
/// Left and right margin of the title, key and note, px.
const SIDE_PX: i32 = 24;

/// Estimated width of a key label, px (13 px sans-serif averages under 6.4 px a character; the
/// text is SVG text, so the viewer's font decides the exact width).
fn label_width_px(label: &str) -> i32 {
    (label.chars().count() as f64 * 6.4).ceil() as i32
}

/// Where each key entry goes: (row, x) per entry, and the number of rows. The key is a strip
/// under the title, entries flowing left to right and wrapping, so that no legend box ever
/// covers a line.
fn key_layout(entries: &[KeyEntry]) -> (Vec<(u32, i32)>, u32) {
    let right = WIDTH_PX as i32 - SIDE_PX;
    let mut row = 0;
    let mut x = SIDE_PX;
    let mut places = Vec::with_capacity(entries.len());
    for e in entries {
        let width = SWATCH_PX + 8 + label_width_px(&e.label);
        if x > SIDE_PX && x + width > right {
            row += 1;
            x = SIDE_PX;
        }
        places.push((row, x));
        x += width + 28;
    }
    let rows = if entries.is_empty() { 0 } else { row + 1 };
    (places, rows)
}

/// Height of the band a key takes, px.
fn key_height_px(entries: &[KeyEntry]) -> u32 {
    let (_, rows) = key_layout(entries);
    if rows == 0 { 0 } else { rows * KEY_ROW_PX + 10 }
}

fn draw_key(area: &Area<'_>, entries: &[KeyEntry]) -> Result<(), PlotError> {
    let (places, _) = key_layout(entries);
    for (e, (row, x)) in entries.iter().zip(places) {
        let y = (row * KEY_ROW_PX) as i32 + 11;
        match e.stroke {
            Stroke::Solid(w) => area
                .draw(&PathElement::new(
                    vec![(x, y), (x + SWATCH_PX, y)],
                    e.color.stroke_width(w),
                ))
                .map_err(fail)?,
            Stroke::Dashed(w) => {
                for k in 0..3 {
                    let x0 = x + 12 * k;
                    area.draw(&PathElement::new(
                        vec![(x0, y), (x0 + 7, y)],
                        e.color.stroke_width(w),
                    ))
                    .map_err(fail)?;
                }
            }
        }
        area.draw(&Text::new(
            e.label.clone(),
            (x + SWATCH_PX + 8, y - 7),
            (FONT, 13).into_font().color(&INK),
        ))
        .map_err(fail)?;
    }
    Ok(())
}

/// Total height of a plot with `panels_px` of panels and this key, px.
fn plot_height_px(panels_px: u32, key: &[KeyEntry]) -> u32 {
    TITLE_PX + key_height_px(key) + panels_px + NOTE_PX
}

/// Draws the frame shared by every plot (background, title with its rule, the key strip, the
/// foot note) and returns the area left for the panels.
fn frame<'a>(
    root: &Area<'a>,
    title: &str,
    key: &[KeyEntry],
    note: &str,
) -> Result<Area<'a>, PlotError> {
    root.fill(&PAPER).map_err(fail)?;
    let (_, height) = root.dim_in_pixel();
    let key_px = key_height_px(key);
    let (head, rest) = root.split_vertically(TITLE_PX);
    let (key_area, rest) = rest.split_vertically(key_px);
    let (body, foot) = rest.split_vertically(height.saturating_sub(TITLE_PX + key_px + NOTE_PX));
    head.draw(&Text::new(
        title.to_string(),
        (SIDE_PX, 14),
        (FONT, 22).into_font().color(&INK),
    ))
    .map_err(fail)?;
    head.draw(&Rectangle::new(
        [
            (SIDE_PX, TITLE_PX as i32 - 9),
            (WIDTH_PX as i32 - SIDE_PX, TITLE_PX as i32 - 8),
        ],
        GRID_MAJOR.filled(),
    ))
    .map_err(fail)?;
    head.draw(&Rectangle::new(
        [
            (SIDE_PX, TITLE_PX as i32 - 11),
            (SIDE_PX + 96, TITLE_PX as i32 - 7),
        ],
        PALETTE[0].filled(),
    ))
    .map_err(fail)?;
    draw_key(&key_area, key)?;
    foot.draw(&Text::new(
        note.to_string(),
        (SIDE_PX, 8),
        (FONT, 12).into_font().color(&MUTED),
    ))
    .map_err(fail)?;
    Ok(body)
}

/// Grid, axes, tick labels and axis titles of one panel.
fn draw_mesh<X, Y>(
    chart: &mut Chart<'_, '_, X, Y>,
    x_title: &str,
    y_title: &str,
) -> Result<(), PlotError>
where
    X: Ranged<ValueType = f64> + ValueFormatter<f64>,
    Y: Ranged<ValueType = f64> + ValueFormatter<f64>,
{
    chart
        .configure_mesh()
        .x_desc(x_title)
        .y_desc(y_title)
        .axis_desc_style((FONT, 15).into_font().color(&INK))
        .label_style((FONT, 12).into_font().color(&MUTED))
        .x_label_formatter(&|v| format_number(*v))
        .y_label_formatter(&|v| format_number(*v))
        .bold_line_style(GRID_MAJOR)
        .light_line_style(GRID_MINOR)
        .max_light_lines(2)
        .axis_style(INK)
        .x_labels(9)
        .y_labels(7)
        .draw()
        .map_err(fail)
}

fn new_chart<'a, 'b, X, Y>(
    area: &'a Area<'b>,
    x: X,
    y: Y,
) -> Result<Chart<'a, 'b, X::CoordDescType, Y::CoordDescType>, PlotError>
where
    X: AsRangedCoord<Value = f64>,
    Y: AsRangedCoord<Value = f64>,
{
    ChartBuilder::on(area)
        .margin_left(18)
        .margin_right(28)
        .margin_top(12)
        .margin_bottom(6)
        .x_label_area_size(52)
        .y_label_area_size(86)
        .build_cartesian_2d(x, y)
        .map_err(fail)
}

/// A dashed vertical marker from `y.start` to `y.end` at `x`.
fn marker<X, Y>(
    chart: &mut Chart<'_, '_, X, Y>,
    x: f64,
    y: &std::ops::Range<f64>,
    color: RGBColor,
) -> Result<(), PlotError>
where
    X: Ranged<ValueType = f64>,
    Y: Ranged<ValueType = f64>,
{
    chart
        .draw_series(DashedLineSeries::new(
            vec![(x, y.start), (x, y.end)],
            6,
            6,
            color.stroke_width(2),
        ))
        .map_err(fail)?;
    Ok(())
}

fn render(
    height_px: u32,
    draw: impl FnOnce(&Area<'_>) -> Result<(), PlotError>,
) -> Result<String, PlotError> {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (WIDTH_PX, height_px)).into_drawing_area();
        draw(&root)?;
        root.present().map_err(fail)?;
    }
    Ok(svg)
}

fn model_note(version: &str, method: &str) -> String {
    format!(
        "ringdrag model {version}, method {method}. Engineering estimates: read the cautions of \
         the JSON answer before relying on them."
    )
}

/// The force-speed curve on logarithmic axes: braking force, the driving force of the load,
/// and the terminal and critical speeds. Speeds and forces of zero are left out (a logarithmic
/// axis has no zero); the caller makes sure at least one speed is positive.
pub fn force_curve_svg(curve: &ForceCurveResponse) -> Result<String, PlotError> {
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
    let (force, drive, critical, terminal) = (PALETTE[0], PALETTE[7], PALETTE[2], PALETTE[1]);
    let mut key = vec![KeyEntry::new(
        "braking force in a long tube",
        force,
        Stroke::Solid(3),
    )];
    if curve.drive_force_n > 0.0 {
        key.push(KeyEntry::new(
            format!(
                "driving force of the load, {} N",
                format_number(curve.drive_force_n)
            ),
            drive,
            Stroke::Dashed(2),
        ));
    }
    key.push(KeyEntry::new(
        format!(
            "critical speed {} m/s (peak {} N)",
            format_number(curve.critical_speed_m_per_s),
            format_number(curve.peak_force_n)
        ),
        critical,
        Stroke::Dashed(2),
    ));
    match curve.terminal_speed_m_per_s {
        Some(vt) => key.push(KeyEntry::new(
            format!("terminal speed {} m/s", format_number(vt)),
            terminal,
            Stroke::Dashed(2),
        )),
        None if curve.drive_force_n > curve.peak_force_n => key.push(KeyEntry::new(
            "no terminal speed: the load exceeds the peak force",
            terminal,
            Stroke::Dashed(2),
        )),
        None => {}
    }
    render(plot_height_px(PANEL_PX + 120, &key), |root| {
        let body = frame(
            root,
            "Steady braking force against speed",
            &key,
            &model_note(&curve.model.version, &curve.model.method),
        )?;
        let mut chart = new_chart(&body, (v_lo..v_hi).log_scale(), (f_lo..f_hi).log_scale())?;
        draw_mesh(&mut chart, "speed [m/s]", "braking force [N]")?;
        chart
            .draw_series(LineSeries::new(points.clone(), force.stroke_width(3)))
            .map_err(fail)?;
        if curve.drive_force_n > 0.0 {
            chart
                .draw_series(DashedLineSeries::new(
                    vec![(v_lo, curve.drive_force_n), (v_hi, curve.drive_force_n)],
                    10,
                    6,
                    drive.stroke_width(2),
                ))
                .map_err(fail)?;
        }
        marker(
            &mut chart,
            curve.critical_speed_m_per_s,
            &(f_lo..f_hi),
            critical,
        )?;
        if let Some(vt) = curve.terminal_speed_m_per_s {
            marker(&mut chart, vt, &(f_lo..f_hi), terminal)?;
            chart
                .draw_series(std::iter::once(Circle::new(
                    (vt, curve.drive_force_n),
                    6,
                    terminal.filled(),
                )))
                .map_err(fail)?;
        }
        Ok(())
    })
}

/// Time at which the stack centre first crosses the tube's entry end (position 0) going
/// forward, by linear interpolation between samples; None if it starts inside or never enters.
fn entry_time_s(time_s: &[f64], position_m: &[f64]) -> Option<f64> {
    time_s
        .windows(2)
        .zip(position_m.windows(2))
        .find(|(_, x)| x[0] < 0.0 && x[1] >= 0.0)
        .map(|(t, x)| t[0] + (t[1] - t[0]) * (-x[0]) / (x[1] - x[0]))
}

/// Draws one time panel of a stroke with the event markers.
fn stroke_panel(
    area: &Area<'_>,
    series: &[(f64, f64)],
    color: RGBColor,
    y_title: &str,
    t_end: f64,
    events: &[(f64, RGBColor)],
) -> Result<(), PlotError> {
    let y_lo = series.iter().map(|p| p.1).fold(0.0, f64::min);
    let y_hi = series.iter().map(|p| p.1).fold(0.0, f64::max);
    let y = padded(y_lo, y_hi).unwrap_or(0.0..1.0);
    let mut chart = new_chart(area, 0.0..t_end.max(1e-9), y.clone())?;
    draw_mesh(&mut chart, "time [s]", y_title)?;
    for &(t, c) in events {
        marker(&mut chart, t, &y, c)?;
    }
    chart
        .draw_series(LineSeries::new(series.to_vec(), color.stroke_width(3)))
        .map_err(fail)?;
    Ok(())
}

/// A stroke in two panels sharing the time axis: speed above, braking force below, with the
/// moments the stack enters the tube and reaches its far end.
pub fn stroke_svg(stroke: &SimulateResponse) -> Result<String, PlotError> {
    let s = &stroke.series;
    let t_end = s.time_s.last().copied().unwrap_or(0.0);
    let pairs = |ys: &[f64]| -> Vec<(f64, f64)> {
        s.time_s.iter().copied().zip(ys.iter().copied()).collect()
    };
    let speed = pairs(&s.speed_m_per_s);
    let force = pairs(&s.force_n);
    let mut key = vec![
        KeyEntry::new("speed of the stack", PALETTE[0], Stroke::Solid(3)),
        KeyEntry::new("braking force on the stack", PALETTE[1], Stroke::Solid(3)),
    ];
    let mut events = Vec::new();
    if let Some(t) = entry_time_s(&s.time_s, &s.position_m) {
        key.push(KeyEntry::new(
            format!("enters the tube at {} s", format_number(t)),
            PALETTE[3],
            Stroke::Dashed(2),
        ));
        events.push((t, PALETTE[3]));
    }
    if let Some(t) = stroke.summary.exit_time_s {
        key.push(KeyEntry::new(
            format!("reaches the far end at {} s", format_number(t)),
            PALETTE[5],
            Stroke::Dashed(2),
        ));
        events.push((t, PALETTE[5]));
    }
    let t = format_number(stroke.summary.end_time_s);
    let title = match stroke.summary.end_reason {
        StrokeEnd::ReachedStop => format!("Stroke through the tube: reached the stop in {t} s"),
        StrokeEnd::PassedTube => format!("Stroke through the tube: passed it in {t} s"),
        StrokeEnd::Stopped => format!("Stroke through the tube: stopped after {t} s"),
        StrokeEnd::TimeLimit => format!("Stroke through the tube: time limit of {t} s reached"),
    };
    render(plot_height_px(2 * PANEL_PX, &key), |root| {
        let body = frame(
            root,
            &title,
            &key,
            &model_note(&stroke.model.version, &stroke.model.method),
        )?;
        let panels = body.split_evenly((2, 1));
        let (upper, lower) = match panels.as_slice() {
            [upper, lower] => (upper, lower),
            _ => return Err(PlotError("two panels expected".into())),
        };
        stroke_panel(upper, &speed, PALETTE[0], "speed [m/s]", t_end, &events)?;
        stroke_panel(
            lower,
            &force,
            PALETTE[1],
            "braking force [N]",
            t_end,
            &events,
        )
    })
}

/// One axis of a sweep as the plot needs it: the path as requested and its values.
#[derive(Debug, Clone, PartialEq)]
pub struct PlotAxis {
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
/// value: a gap wherever a point failed or has no value.
fn line_runs(points: &[&SweepPointDto], x_path: &str, metric: &str) -> Vec<Vec<(f64, f64)>> {
    let mut sorted: Vec<(f64, Option<f64>)> = points
        .iter()
        .filter_map(|p| {
            let x = *p.inputs.get(x_path)?;
            Some((x, p.metrics.get(metric).copied().flatten()))
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

/// A sweep: one panel per metric against the first axis, one line per combination of the
/// other axes. The caller keeps the line count within [`MAX_SWEEP_LINES`].
pub fn sweep_svg(
    axes: &[PlotAxis],
    metrics: &[String],
    points: &[SweepPointDto],
    version: &str,
    method: &str,
) -> Result<String, PlotError> {
    let Some(x_axis) = axes.first() else {
        return Err(PlotError("a sweep without axes".into()));
    };
    // Group the points by the values of the other axes, in the order the request lists them.
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
            label.push(format!("{} = {}", axis.path, format_number(v)));
        }
        groups
            .entry(key)
            .or_insert_with(|| (label.join(", "), Vec::new()))
            .1
            .push(p);
    }
    let key: Vec<KeyEntry> = if axes.len() == 1 {
        vec![KeyEntry::new(
            format!(
                "{} points over {} (failed points leave gaps)",
                points.len(),
                x_axis.path
            ),
            PALETTE[0],
            Stroke::Solid(3),
        )]
    } else {
        groups
            .values()
            .enumerate()
            .map(|(i, (label, _))| {
                KeyEntry::new(label.clone(), PALETTE[i % PALETTE.len()], Stroke::Solid(3))
            })
            .collect()
    };
    let x_lo = x_axis.values.iter().copied().fold(f64::INFINITY, f64::min);
    let x_hi = x_axis
        .values
        .iter()
        .copied()
        .fold(f64::NEG_INFINITY, f64::max);
    let x_range = padded(x_lo, x_hi)
        .ok_or_else(|| PlotError("the first axis's values do not fit one axis".into()))?;
    let panels = metrics.len().max(1);
    let title = format!("Sweep over {}", axis_title(&x_axis.path));
    render(plot_height_px(panels as u32 * PANEL_PX, &key), |root| {
        let body = frame(root, &title, &key, &model_note(version, method))?;
        let areas = body.split_evenly((panels, 1));
        for (metric, area) in metrics.iter().zip(&areas) {
            let lines: Vec<Vec<Vec<(f64, f64)>>> = groups
                .values()
                .map(|(_, pts)| line_runs(pts, &x_axis.path, metric))
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
            let mut chart = new_chart(area, x_range.clone(), y_range.clone())?;
            draw_mesh(&mut chart, &axis_title(&x_axis.path), &axis_title(metric))?;
            if !has_values {
                chart
                    .draw_series(std::iter::once(Text::new(
                        "no values to draw: every point failed or has no value for this metric",
                        (x_range.start, 0.5),
                        (FONT, 14).into_font().color(&MUTED),
                    )))
                    .map_err(fail)?;
                continue;
            }
            for (i, runs) in lines.iter().enumerate() {
                let color = PALETTE[i % PALETTE.len()];
                for run in runs {
                    chart
                        .draw_series(
                            LineSeries::new(run.clone(), color.stroke_width(3)).point_size(4),
                        )
                        .map_err(fail)?;
                }
            }
        }
        Ok(())
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_read_well() {
        assert_eq!(format_number(0.0505431), "0.0505");
        assert_eq!(format_number(62.768), "62.8");
        assert_eq!(format_number(1.0), "1");
        assert_eq!(format_number(1500.0), "1500");
        assert_eq!(format_number(2.5e-6), "2.50e-6");
        assert_eq!(format_number(-0.25), "-0.25");
        assert_eq!(format_number(f64::NAN), "n/a");
    }

    #[test]
    fn titles_carry_units() {
        assert_eq!(
            axis_title("tube.wall_thickness_m"),
            "tube wall thickness [m]"
        );
        assert_eq!(
            axis_title("design.load.payload_mass_kg"),
            "load payload mass [kg]"
        );
        assert_eq!(axis_title("terminal_speed_m_per_s"), "terminal speed [m/s]");
        assert_eq!(axis_title("damping_n_s_per_m"), "damping [N s/m]");
        assert_eq!(
            axis_title("max_deceleration_m_per_s2"),
            "max deceleration [m/s²]"
        );
        assert_eq!(
            axis_title("magnetic_reynolds_number"),
            "magnetic reynolds number [1]"
        );
        assert_eq!(axis_title("tube.temperature_c"), "tube temperature [°C]");
        assert_eq!(axis_title("magnets.count"), "magnets count [1]");
        assert_eq!(
            axis_title("tube.perforation_fraction"),
            "tube perforation fraction [1]"
        );
    }

    #[test]
    fn ranges_stay_drawable() {
        assert_eq!(padded(1.0, 1.0), Some(0.9..1.1));
        assert_eq!(padded(0.0, 0.0), Some(-1.0..1.0));
        assert_eq!(padded(-1e308, 1e308), None, "the spread overflows");
        assert_eq!(
            padded(1e307, 1.79e308),
            Some(1e307..1.79e308),
            "no room to pad"
        );
        assert_eq!(padded(f64::INFINITY, f64::NEG_INFINITY), None, "no values");
        assert!(drawable(&[0.001, 0.004]));
        assert!(!drawable(&[-1e308, 1e308]));
    }

    #[test]
    fn log_axes_stay_within_twelve_decades() {
        let w = |v: &[f64]| log_window(v.iter().copied(), 2.0);
        assert_eq!(w(&[1.0, 100.0]), Some((0.5, 200.0)));
        assert_eq!(w(&[0.0, -1.0]), None);
        let (lo, hi) = w(&[5e-324, 10.0]).expect("window");
        assert_eq!(hi, 20.0);
        assert!((lo / 20e-12 - 1.0).abs() < 1e-12, "{lo}");
        assert_eq!(w(&[5e-324]), None, "subnormal values only");
        let (_, hi) = w(&[1e308]).expect("window");
        assert!(hi.is_finite());
    }

    #[test]
    fn entry_time_is_interpolated() {
        let t = [0.0, 1.0, 2.0];
        let x = [-0.3, -0.1, 0.1];
        assert_eq!(entry_time_s(&t, &x), Some(1.5));
        assert_eq!(entry_time_s(&t, &[0.0, 0.1, 0.2]), None);
    }

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
            line_runs(&refs, "a", "m"),
            vec![vec![(1.0, 1.0)], vec![(3.0, 3.0), (4.0, 4.0)]]
        );
    }
}
