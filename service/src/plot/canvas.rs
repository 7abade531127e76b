//! The frame every plot shares and the finishing of its SVG text.
//!
//! A plot is a canvas `width` x `height` px (the SVG also carries a `viewBox`, so that a
//! dashboard may scale it to any tile): a header band with the title and the design line,
//! the panels, and the key strip with the model note at the foot. After drawing, the SVG text
//! gains `<title>` and `<desc>` (what is drawn, for which design) and its dashed lines their
//! `stroke-dasharray`.

use super::PlotError;
use super::style::{
    BAND, BAND_SUBTEXT, BAND_TEXT, CANVAS, Dash, FONT, INK, KEY_STRIP, LineStyle, MUTED, Marker,
    Sizes,
};
use plotters::coord::Shift;
use plotters::prelude::*;

/// A drawing area of the SVG backend.
pub(super) type Area<'a> = DrawingArea<SVGBackend<'a>, Shift>;

/// A px figure for SVG attributes (at most one decimal).
pub(super) fn px(v: f64) -> String {
    let text = format!("{v:.1}");
    text.trim_end_matches('0').trim_end_matches('.').to_string()
}

pub(super) fn fail<E: std::fmt::Display>(e: E) -> PlotError {
    PlotError(e.to_string())
}

/// A font of `size_px` as the SVG will show it (plotters writes a font's size divided by
/// 1.24; asking for 1.24 times the size gives the size wanted).
pub(super) fn font(family: &str, size_px: f64, color: &RGBColor) -> TextStyle<'static> {
    let family: &'static str = if family == FONT {
        FONT
    } else {
        super::style::NUMBER_FONT
    };
    (family, size_px * 1.24).into_font().color(color)
}

/// Estimated width of `text` at `size_px` (a sans-serif averages under 0.56 em a
/// character; the viewer's font decides the exact width).
pub(super) fn text_width(text: &str, size_px: f64) -> i32 {
    (text.chars().count() as f64 * 0.56 * size_px).ceil() as i32
}

/// One entry of a plot's key.
#[derive(Debug, Clone, PartialEq)]
pub(super) struct KeyEntry {
    /// What the line shows, in words.
    pub label: String,
    /// How it is drawn.
    pub style: LineStyle,
    /// Whether the swatch carries the marker.
    pub with_marker: bool,
}

/// What a plot says about itself besides its panels.
#[derive(Debug, Clone, PartialEq)]
pub(super) struct Frame {
    /// Title on the band.
    pub title: String,
    /// The design line under the title.
    pub subtitle: String,
    /// The key.
    pub key: Vec<KeyEntry>,
    /// The model note at the foot.
    pub note: String,
    /// `<desc>`: what is drawn, for which design, with the headline numbers.
    pub description: String,
}

/// Where key entries go: (row, x) per entry, and the row count. Entries flow left to right
/// and wrap, so that the key never covers a line.
fn key_layout(entries: &[KeyEntry], sizes: &Sizes) -> (Vec<(i32, i32)>, i32) {
    let left = sizes.u(1.0);
    let right = sizes.width as i32 - sizes.u(1.0);
    let mut row = 0;
    let mut x = left;
    let mut places = Vec::with_capacity(entries.len());
    for e in entries {
        let width = sizes.u(2.6) + text_width(&e.label, sizes.text * 0.92);
        if x > left && x + width > right {
            row += 1;
            x = left;
        }
        places.push((row, x));
        x += width + sizes.u(1.6);
    }
    (places, if entries.is_empty() { 0 } else { row + 1 })
}

/// Height of the header band.
fn band_px(sizes: &Sizes) -> i32 {
    sizes.u(3.9)
}

/// Height of the key strip with the foot note.
fn strip_px(frame: &Frame, sizes: &Sizes) -> i32 {
    let (_, rows) = key_layout(&frame.key, sizes);
    sizes.u(0.7) + rows * sizes.u(1.6) + sizes.u(1.7)
}

/// Canvas height for panels of at least `min_panels_px` and this frame.
pub(super) fn height_for(frame: &Frame, sizes: &Sizes, wanted_px: u32, min_panels_px: i32) -> u32 {
    let fixed = band_px(sizes) + strip_px(frame, sizes);
    (wanted_px as i32).max(fixed + min_panels_px) as u32
}

/// Draws a marker of `style` centred at backend pixel `(x, y)`.
pub(super) fn draw_marker_px(
    area: &Area<'_>,
    (x, y): (i32, i32),
    marker: Marker,
    color: RGBColor,
    r: i32,
) -> Result<(), PlotError> {
    let filled = color.filled();
    let result = match marker {
        Marker::Disc => area.draw(&Circle::new((x, y), r, filled)),
        Marker::Ring => area.draw(&Circle::new((x, y), r, color.stroke_width(2))),
        Marker::Square => area.draw(&Rectangle::new([(x - r, y - r), (x + r, y + r)], filled)),
        Marker::TriangleUp => area.draw(&Polygon::new(
            vec![(x, y - r - 1), (x + r + 1, y + r), (x - r - 1, y + r)],
            filled,
        )),
        Marker::TriangleDown => area.draw(&Polygon::new(
            vec![(x, y + r + 1), (x + r + 1, y - r), (x - r - 1, y - r)],
            filled,
        )),
        Marker::Diamond => area.draw(&Polygon::new(
            vec![
                (x, y - r - 1),
                (x + r + 1, y),
                (x, y + r + 1),
                (x - r - 1, y),
            ],
            filled,
        )),
    };
    result.map_err(fail)
}

fn draw_key(area: &Area<'_>, entries: &[KeyEntry], sizes: &Sizes) -> Result<(), PlotError> {
    let (places, _) = key_layout(entries, sizes);
    let swatch = sizes.u(2.0);
    for (e, (row, x)) in entries.iter().zip(places) {
        let y = sizes.u(0.7) + row * sizes.u(1.6) + sizes.u(0.55);
        area.draw(&PathElement::new(
            vec![(x, y), (x + swatch, y)],
            e.style.stroke_color().stroke_width(sizes.line_px()),
        ))
        .map_err(fail)?;
        if e.with_marker {
            draw_marker_px(
                area,
                (x + swatch / 2, y),
                e.style.marker,
                e.style.color,
                sizes.marker_px(),
            )?;
        }
        area.draw(&Text::new(
            e.label.clone(),
            (x + swatch + sizes.u(0.5), y - sizes.u(0.5)),
            font(FONT, sizes.text * 0.92, &INK),
        ))
        .map_err(fail)?;
    }
    Ok(())
}

/// `text` shortened with an ellipsis to fit `room` px at `size_px`.
fn fit(text: &str, size_px: f64, room: i32) -> String {
    let mut chars: Vec<char> = text.chars().collect();
    if text_width(text, size_px) <= room {
        return text.to_string();
    }
    while chars.len() > 4
        && text_width(&chars.iter().collect::<String>(), size_px) + (size_px as i32) > room
    {
        chars.pop();
    }
    let mut out: String = chars.iter().collect();
    out = out.trim_end_matches([' ', ',', ';']).to_string();
    out.push('…');
    out
}

/// The note, its middle parts (`a · b · c` -> `a · c`) left out while it is too wide.
fn short_note(note: &str, size_px: f64, room: i32) -> String {
    let mut parts: Vec<&str> = note.split(" · ").collect();
    while parts.len() > 2 && text_width(&parts.join(" · "), size_px) > room {
        parts.remove(1);
    }
    parts.join(" · ")
}

/// Draws the frame on `root` and returns the area left for the panels.
pub(super) fn draw_frame<'a>(
    root: &Area<'a>,
    frame: &Frame,
    sizes: &Sizes,
) -> Result<Area<'a>, PlotError> {
    root.fill(&CANVAS).map_err(fail)?;
    let (_, height) = root.dim_in_pixel();
    let band = band_px(sizes);
    let strip = strip_px(frame, sizes);
    let (head, rest) = root.split_vertically(band);
    let body_px = (height as i32 - band - strip).max(1);
    let (body, foot) = rest.split_vertically(body_px);
    head.fill(&BAND).map_err(fail)?;
    head.draw(&Text::new(
        frame.title.clone(),
        (sizes.u(1.0), sizes.u(0.55)),
        (FONT, sizes.text * 1.3 * 1.24, FontStyle::Bold)
            .into_font()
            .color(&BAND_TEXT),
    ))
    .map_err(fail)?;
    // The design line, shortened to the width of the band.
    let room = (sizes.width as i32 - sizes.u(2.0)).max(1);
    head.draw(&Text::new(
        fit(&frame.subtitle, sizes.text * 0.85, room),
        (sizes.u(1.0), sizes.u(2.35)),
        font(FONT, sizes.text * 0.85, &BAND_SUBTEXT),
    ))
    .map_err(fail)?;
    foot.fill(&KEY_STRIP).map_err(fail)?;
    draw_key(&foot, &frame.key, sizes)?;
    let (_, foot_h) = foot.dim_in_pixel();
    foot.draw(&Text::new(
        fit(
            &short_note(&frame.note, sizes.text * 0.75, room),
            sizes.text * 0.75,
            room,
        ),
        (sizes.u(1.0), foot_h as i32 - sizes.u(1.25)),
        font(FONT, sizes.text * 0.75, &MUTED),
    ))
    .map_err(fail)?;
    Ok(body.margin(sizes.u(0.6), 0, sizes.u(0.6), sizes.u(0.6)))
}

/// Escapes text for XML content.
fn xml_escape(text: &str) -> String {
    text.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
}

/// Draws a plot of `width` x `height` px and finishes its SVG: `<title>` and `<desc>` first
/// inside the root (with `role="img"` and the labels that point to them), dashed lines with
/// their `stroke-dasharray`.
pub(super) fn render(
    frame: &Frame,
    sizes: &Sizes,
    height: u32,
    draw: impl FnOnce(&Area<'_>) -> Result<(), PlotError>,
) -> Result<String, PlotError> {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (sizes.width, height)).into_drawing_area();
        draw(&root)?;
        root.present().map_err(fail)?;
    }
    let open_end = svg
        .find("<svg")
        .and_then(|start| svg[start..].find('>').map(|end| start + end))
        .ok_or_else(|| PlotError("the SVG writer produced no root element".into()))?;
    let head = format!(
        "<title id=\"plot-title\">{}</title>\n<desc id=\"plot-desc\">{}</desc>\n",
        xml_escape(&frame.title),
        xml_escape(&frame.description)
    );
    let mut out = String::with_capacity(svg.len() + head.len() + 256);
    out.push_str(&svg[..open_end]);
    out.push_str(
        " role=\"img\" aria-labelledby=\"plot-title plot-desc\" preserveAspectRatio=\"xMidYMid meet\"",
    );
    out.push_str(">\n");
    out.push_str(&head);
    out.push_str(svg[open_end + 1..].trim_start_matches('\n'));
    let width = f64::from(sizes.line_px());
    for dash in Dash::TAGGED {
        if let Some(pattern) = dash.dasharray(width) {
            out = out.replace(
                &format!("opacity=\"{}\"", dash.tag_alpha()),
                &format!("opacity=\"1\" stroke-dasharray=\"{pattern}\""),
            );
        }
    }
    Ok(out)
}
