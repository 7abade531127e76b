//! SVG plots of job results, for `Accept: image/svg+xml`.
//!
//! Presentation only: every number drawn comes from a response record the JSON answer would
//! carry; nothing here computes physics. Three plots:
//! - the force-speed curve on logarithmic speed and force axes, with the driving force of the
//!   load as a level line and the terminal and critical speeds marked ([`force_curve_svg`]);
//! - a stroke as two panels sharing the time (or position) axis, speed above and braking force
//!   below, with the tube entry and the far-end crossing marked ([`stroke_svg`]);
//! - a sweep as one panel per metric against the first varied field, one line per
//!   combination of the other varied fields ([`sweep_svg`]).
//!
//! The look ([`style`]) is the service's own, made for engineering dashboards; every SVG has
//! a `viewBox` (it scales to any tile), a `<title>` and a `<desc>` naming what is drawn for
//! which design, and its text sized from its canvas: a dashboard that shows a plot small asks
//! for it at that size (`width_px`, `aspect` in the query, [`PlotOptions`]) and gets text
//! that reads at that size. Text stays SVG text in generic families (no font files needed).

mod canvas;
mod force_curve;
mod panel;
mod stroke;
pub mod style;
mod sweep;
pub mod words;

pub use force_curve::force_curve_svg;
pub use stroke::stroke_svg;
pub use sweep::{PlotAxis, sweep_line_count, sweep_svg};
pub use words::format_number;

use crate::problem::{ApiError, FieldProblem};
use serde::Deserialize;
use utoipa::{IntoParams, ToSchema};

/// Most lines one sweep panel draws (one per combination of the second and third axes);
/// beyond this a plot is unreadable and the JSON or CSV answer serves better.
pub const MAX_SWEEP_LINES: usize = style::MAX_STYLES;

/// Narrowest and widest canvas a query may ask for, px.
pub const WIDTH_RANGE_PX: (u32, u32) = (320, 2400);
/// Smallest and largest width-to-height ratio a query may ask for.
pub const ASPECT_RANGE: (f64, f64) = (0.5, 4.0);

/// What the horizontal axis of a stroke plot shows.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Deserialize, ToSchema)]
#[serde(rename_all = "snake_case")]
pub enum StrokeAxis {
    /// Time since the start, s.
    #[default]
    Time,
    /// Position of the stack centre along the tube, mm (the entry end at 0).
    Position,
}

/// Options of an SVG plot, from the query string; ignored by the other representations.
///
/// Named in the document's description rather than as query parameters: schemathesis 4.32
/// stops with an internal error (in hypothesis' lambda description) when it generates
/// negative query values for them, which would fail the CI fuzz step.
#[derive(Debug, Clone, Default, PartialEq, Deserialize, IntoParams)]
#[into_params(parameter_in = Query)]
#[serde(deny_unknown_fields)]
pub struct PlotOptions {
    /// Width the plot will be shown at, px (320 to 2400, default 960): text and lines are
    /// sized for it, so a dashboard tile asks for its own width. The SVG also has a viewBox
    /// and scales to any size.
    #[param(minimum = 320, maximum = 2400)]
    pub width_px: Option<u32>,
    /// Width divided by height (0.5 to 4); default chosen per plot (1.5 for a force curve,
    /// taller for two or more panels).
    #[param(minimum = 0.5, maximum = 4.0)]
    pub aspect: Option<f64>,
    /// Stroke plots only: draw speed and braking force against `time` (default) or against
    /// `position` along the tube.
    #[param(inline)]
    pub against: Option<StrokeAxis>,
}

impl PlotOptions {
    /// Checks the options' ranges; every problem named by its query parameter.
    ///
    /// # Errors
    ///
    /// A 422 problem listing every plot option out of range.
    pub fn check(&self) -> Result<(), ApiError> {
        let mut errors = Vec::new();
        if let Some(w) = self.width_px
            && !(WIDTH_RANGE_PX.0..=WIDTH_RANGE_PX.1).contains(&w)
        {
            errors.push(FieldProblem {
                path: "width_px".into(),
                message: format!(
                    "{w} px is outside {} to {} px",
                    WIDTH_RANGE_PX.0, WIDTH_RANGE_PX.1
                ),
            });
        }
        if let Some(a) = self.aspect
            && !(a.is_finite() && (ASPECT_RANGE.0..=ASPECT_RANGE.1).contains(&a))
        {
            errors.push(FieldProblem {
                path: "aspect".into(),
                message: format!(
                    "must be a width-to-height ratio from {} to {}",
                    ASPECT_RANGE.0, ASPECT_RANGE.1
                ),
            });
        }
        if errors.is_empty() {
            Ok(())
        } else {
            Err(ApiError::Invalid(errors))
        }
    }

    /// The canvas width, px.
    pub(crate) fn width(&self) -> u32 {
        self.width_px.unwrap_or(960)
    }

    /// The canvas height for a plot whose default ratio is `default_aspect`, px.
    pub(crate) fn height(&self, default_aspect: f64) -> u32 {
        let aspect = self.aspect.unwrap_or(default_aspect);
        (f64::from(self.width()) / aspect).round() as u32
    }
}

/// The query options of a plot route as a handler receives them: a malformed query string is
/// an invalid-input problem naming the query.
///
/// # Errors
///
/// An invalid-input problem (422) naming `query` when the query string is malformed or names an unknown option.
pub fn options_from_query(
    query: Result<axum::extract::Query<PlotOptions>, axum::extract::rejection::QueryRejection>,
) -> Result<PlotOptions, ApiError> {
    let options = query
        .map(|q| q.0)
        .map_err(|e| ApiError::invalid("query", crate::serde_words::reword(&e.body_text())))?;
    options.check()?;
    Ok(options)
}

/// A plot could not be drawn (a defect: inputs are checked before drawing).
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("cannot draw the plot: {0}")]
pub struct PlotError(String);

impl From<PlotError> for ApiError {
    fn from(e: PlotError) -> Self {
        ApiError::Internal(e.to_string())
    }
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
        return None;
    }
    let hi = (hi * pad).min(f64::MAX);
    // Subnormal numbers are kept off the axis: their logarithms lose precision.
    let lo = (lo / pad)
        .max(hi * 10f64.powi(-MAX_DECADES))
        .max(f64::MIN_POSITIVE);
    (lo > 0.0 && lo < hi).then_some((lo, hi))
}

/// The model note at the foot of every plot.
fn model_note(version: &str, method: &str) -> String {
    format!(
        "ringdrag {version} · {method} · engineering estimate: see the cautions in the JSON answer"
    )
}

#[cfg(test)]
mod tests {
    use super::*;

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
    fn options_are_checked() {
        let ok = PlotOptions {
            width_px: Some(400),
            aspect: Some(1.6),
            against: None,
        };
        assert_eq!(ok.check(), Ok(()));
        assert_eq!(ok.height(1.5), 250);
        let bad = PlotOptions {
            width_px: Some(10),
            aspect: Some(f64::NAN),
            against: None,
        };
        assert!(matches!(bad.check(), Err(ApiError::Invalid(e)) if e.len() == 2));
    }
}
