//! One panel: a white, thinly framed chart with a light grid, tick numbers, the x title under
//! the axis and the y quantity written level above the plotting area (readable in a small
//! tile, where turned text is not).

use super::PlotError;
use super::canvas::{Area, fail, font};
use super::style::{FONT, FRAME, GRID, INK, MUTED, Marker, NUMBER_FONT, PANEL, Sizes};
use super::words::format_number;
use plotters::coord::ranged1d::{AsRangedCoord, Ranged, ValueFormatter};
use plotters::prelude::*;

/// A chart on an SVG drawing area with coordinates `X` by `Y`.
pub(super) type Chart<'a, 'b, X, Y> = ChartContext<'a, SVGBackend<'b>, Cartesian2d<X, Y>>;

/// Builds a panel's chart over `x` by `y`, with its frame and the y quantity above it.
pub(super) fn new_panel<'a, 'b, X, Y>(
    area: &'a Area<'b>,
    sizes: &Sizes,
    x: X,
    y: Y,
    y_title: &str,
) -> Result<Chart<'a, 'b, X::CoordDescType, Y::CoordDescType>, PlotError>
where
    X: AsRangedCoord<Value = f64>,
    Y: AsRangedCoord<Value = f64>,
{
    let (w, h) = area.dim_in_pixel();
    area.draw(&Rectangle::new(
        [(0, 0), (w as i32 - 1, h as i32 - 1)],
        PANEL.filled(),
    ))
    .map_err(fail)?;
    area.draw(&Rectangle::new(
        [(0, 0), (w as i32 - 1, h as i32 - 1)],
        FRAME.stroke_width(1),
    ))
    .map_err(fail)?;
    let y_labels_px = sizes.u(4.4);
    area.draw(&Text::new(
        y_title.to_string(),
        (y_labels_px - sizes.u(0.3), sizes.u(0.45)),
        font(FONT, sizes.text, &INK),
    ))
    .map_err(fail)?;
    ChartBuilder::on(area)
        .margin_left(sizes.u(0.4))
        .margin_right(sizes.u(1.2))
        .margin_top(sizes.u(1.9))
        .margin_bottom(sizes.u(0.3))
        .x_label_area_size(sizes.u(2.9))
        .y_label_area_size(y_labels_px)
        .build_cartesian_2d(x, y)
        .map_err(fail)
}

/// Grid, axes, tick numbers and the x title of a panel.
pub(super) fn draw_mesh<X, Y>(
    chart: &mut Chart<'_, '_, X, Y>,
    sizes: &Sizes,
    x_title: &str,
) -> Result<(), PlotError>
where
    X: Ranged<ValueType = f64> + ValueFormatter<f64>,
    Y: Ranged<ValueType = f64> + ValueFormatter<f64>,
{
    let ticks = (f64::from(sizes.width) / (sizes.text * 7.5)).clamp(3.0, 10.0) as usize;
    chart
        .configure_mesh()
        .x_desc(x_title)
        .axis_desc_style(font(FONT, sizes.text, &INK))
        .label_style(font(NUMBER_FONT, sizes.text * 0.85, &MUTED))
        .x_label_formatter(&|v| format_number(*v))
        .y_label_formatter(&|v| format_number(*v))
        .bold_line_style(GRID.stroke_width(1))
        .light_line_style(TRANSPARENT)
        .axis_style(INK.stroke_width(1))
        .x_labels(ticks)
        .y_labels(6)
        .draw()
        .map_err(fail)
}

/// A vertical event line at `x` across `y`, in `style`'s colour and dash.
pub(super) fn event_line<X, Y>(
    chart: &mut Chart<'_, '_, X, Y>,
    x: f64,
    y: &std::ops::Range<f64>,
    color: RGBAColor,
    width: u32,
) -> Result<(), PlotError>
where
    X: Ranged<ValueType = f64>,
    Y: Ranged<ValueType = f64>,
{
    chart
        .draw_series(std::iter::once(PathElement::new(
            vec![(x, y.start), (x, y.end)],
            color.stroke_width(width),
        )))
        .map_err(fail)?;
    Ok(())
}

/// Offsets of a marker's outline around its centre, px (None for the round shapes).
fn outline(marker: Marker, r: i32) -> Option<Vec<(i32, i32)>> {
    let s = r + 1;
    match marker {
        Marker::Disc | Marker::Ring => None,
        Marker::Square => Some(vec![(-r, -r), (r, -r), (r, r), (-r, r)]),
        Marker::TriangleUp => Some(vec![(0, -s), (s, r), (-s, r)]),
        Marker::TriangleDown => Some(vec![(0, s), (s, -r), (-s, -r)]),
        Marker::Diamond => Some(vec![(0, -s), (s, 0), (0, s), (-s, 0)]),
    }
}

/// Draws markers of one shape at data points.
pub(super) fn markers<X, Y>(
    chart: &mut Chart<'_, '_, X, Y>,
    points: &[(f64, f64)],
    marker: Marker,
    color: RGBColor,
    sizes: &Sizes,
) -> Result<(), PlotError>
where
    X: Ranged<ValueType = f64>,
    Y: Ranged<ValueType = f64>,
{
    let r = sizes.marker_px();
    match (marker, outline(marker, r)) {
        (_, Some(shape)) => chart.draw_series(
            points
                .iter()
                .map(|&p| EmptyElement::at(p) + Polygon::new(shape.clone(), color.filled())),
        ),
        (Marker::Ring, None) => chart.draw_series(
            points
                .iter()
                .map(|&p| EmptyElement::at(p) + Circle::new((0, 0), r, color.stroke_width(2))),
        ),
        (_, None) => chart.draw_series(
            points
                .iter()
                .map(|&p| EmptyElement::at(p) + Circle::new((0, 0), r, color.filled())),
        ),
    }
    .map_err(fail)?;
    Ok(())
}

/// A note at the top right of a panel, level with its quantity (e.g. lines that coincide).
pub(super) fn panel_note(area: &Area<'_>, text: &str, sizes: &Sizes) -> Result<(), PlotError> {
    let (w, _) = area.dim_in_pixel();
    let style = font(FONT, sizes.text * 0.85, &MUTED).pos(plotters::style::text_anchor::Pos::new(
        plotters::style::text_anchor::HPos::Right,
        plotters::style::text_anchor::VPos::Top,
    ));
    area.draw(&Text::new(
        text.to_string(),
        (w as i32 - sizes.u(1.2), sizes.u(0.5)),
        style,
    ))
    .map_err(fail)
}
