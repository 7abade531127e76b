//! The plots' look: a pale cool canvas with white, thinly framed panels; a dark graphite
//! header band carrying the title and a line naming the design; each panel's quantity written
//! level above its axis; the key in a strip under the panels; line styles that stay apart for
//! readers with colour-vision deficiencies.
//!
//! Line styles: six colours of our own choosing, combined with two dash patterns and six
//! marker shapes, so that each of twelve sweep lines differs from every other in at least two
//! of colour, dash and marker. The colours were checked (see the test below) to stay apart
//! under simulated protanopia, deuteranopia and tritanopia.

use plotters::style::{RGBAColor, RGBColor};

/// Canvas around the panels.
pub const CANVAS: RGBColor = RGBColor(0xF2, 0xF4, 0xF7);
/// Inside of a panel.
pub const PANEL: RGBColor = RGBColor(0xFF, 0xFF, 0xFF);
/// Frame of a panel.
pub const FRAME: RGBColor = RGBColor(0xC5, 0xCE, 0xD8);
/// Header band.
pub const BAND: RGBColor = RGBColor(0x1C, 0x27, 0x33);
/// Title text on the band.
pub const BAND_TEXT: RGBColor = RGBColor(0xFF, 0xFF, 0xFF);
/// Design line on the band.
pub const BAND_SUBTEXT: RGBColor = RGBColor(0xA9, 0xBA, 0xCB);
/// Main text and axis lines.
pub const INK: RGBColor = RGBColor(0x1C, 0x27, 0x33);
/// Tick labels and notes.
pub const MUTED: RGBColor = RGBColor(0x4F, 0x5D, 0x6B);
/// Grid lines.
pub const GRID: RGBColor = RGBColor(0xE1, 0xE6, 0xEC);
/// Key strip.
pub const KEY_STRIP: RGBColor = RGBColor(0xE7, 0xEB, 0xF0);

/// Font of words.
pub const FONT: &str = "sans-serif";
/// Font of tick numbers (digits line up).
pub const NUMBER_FONT: &str = "monospace";

/// Line colours in order of use: cobalt, signal orange, rose, oxblood, sky, plum.
pub const PALETTE: [RGBColor; 6] = [
    RGBColor(0x0B, 0x3C, 0x9E),
    RGBColor(0xF2, 0x6B, 0x1D),
    RGBColor(0xCC, 0x6F, 0x9A),
    RGBColor(0x7A, 0x16, 0x31),
    RGBColor(0x1C, 0x9B, 0xE0),
    RGBColor(0x5B, 0x2A, 0x6E),
];

/// Dash pattern of a line.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Dash {
    /// Unbroken.
    Solid,
    /// Long dashes.
    Dashed,
    /// Short dots.
    Dotted,
    /// Long dash, dot.
    DashDot,
}

impl Dash {
    /// The opacity that requests this dash from the SVG writer (see [`super::canvas`]):
    /// plotters' SVG backend has no dash attribute, so a line asks for one with a reserved
    /// opacity just below 1, and the finished SVG turns it into `stroke-dasharray`.
    pub fn tag_alpha(self) -> f64 {
        match self {
            Self::Solid => 1.0,
            Self::Dashed => 0.991,
            Self::Dotted => 0.992,
            Self::DashDot => 0.993,
        }
    }

    /// The `stroke-dasharray` of this dash for lines `width` px wide.
    pub fn dasharray(self, width: f64) -> Option<String> {
        let w = width.max(1.0);
        let f = |v: f64| super::canvas::px(v * w);
        match self {
            Self::Solid => None,
            Self::Dashed => Some(format!("{} {}", f(4.0), f(2.5))),
            Self::Dotted => Some(format!("{} {}", f(0.9), f(1.8))),
            Self::DashDot => Some(format!("{} {} {} {}", f(5.0), f(2.0), f(1.0), f(2.0))),
        }
    }

    /// Every tagged dash, for the SVG rewrite.
    pub const TAGGED: [Dash; 3] = [Dash::Dashed, Dash::Dotted, Dash::DashDot];
}

/// Shape of the markers on a line's points.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Marker {
    /// A filled circle.
    Disc,
    /// A filled square.
    Square,
    /// A filled triangle pointing up.
    TriangleUp,
    /// A filled diamond.
    Diamond,
    /// A filled triangle pointing down.
    TriangleDown,
    /// An open ring.
    Ring,
}

/// Marker shapes in order of use.
pub const MARKERS: [Marker; 6] = [
    Marker::Disc,
    Marker::Square,
    Marker::TriangleUp,
    Marker::Diamond,
    Marker::TriangleDown,
    Marker::Ring,
];

/// How one line is drawn.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LineStyle {
    /// Colour.
    pub color: RGBColor,
    /// Dash pattern.
    pub dash: Dash,
    /// Marker shape.
    pub marker: Marker,
}

impl LineStyle {
    /// The colour to draw the line itself with (its dash requested through the opacity).
    pub fn stroke_color(&self) -> RGBAColor {
        let RGBColor(r, g, b) = self.color;
        RGBAColor(r, g, b, self.dash.tag_alpha())
    }
}

/// Most lines one panel draws with distinct styles.
pub const MAX_STYLES: usize = 12;

/// The style of line `i` of a multi-line panel: colours cycle through the palette; the second
/// six lines are dashed and take their markers three places on, so that line `i` and line
/// `i + 6` share a colour but neither dash nor marker. Beyond twelve lines styles repeat
/// (callers keep to [`MAX_STYLES`]).
pub fn line_style(i: usize) -> LineStyle {
    let i = i % MAX_STYLES;
    let round = i / PALETTE.len();
    LineStyle {
        color: PALETTE[i % PALETTE.len()],
        dash: if round == 0 {
            Dash::Solid
        } else {
            Dash::Dashed
        },
        marker: MARKERS[(i + 3 * round) % MARKERS.len()],
    }
}

/// Sizes of one plot, all relative to its canvas, px.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Sizes {
    /// Canvas width.
    pub width: u32,
    /// Base text size (tick labels are a little smaller, titles larger).
    pub text: f64,
}

impl Sizes {
    /// Sizes for a canvas `width` px wide: text about 1/60 of the width, never under 12 px
    /// nor over 18 px (tick numbers at 0.85 of it), so that a plot asked for at its display size reads at that size.
    pub fn for_width(width: u32) -> Self {
        Self {
            width,
            text: (f64::from(width) / 60.0).clamp(12.0, 18.0),
        }
    }

    /// A length of `k` text units, whole px.
    pub fn u(&self, k: f64) -> i32 {
        (k * self.text).round() as i32
    }

    /// Width of a line: about a fifth of the text size.
    pub fn line_px(&self) -> u32 {
        (self.text / 5.5).round().max(2.0) as u32
    }

    /// Marker half-size.
    pub fn marker_px(&self) -> i32 {
        (self.text * 0.33).round().max(3.0) as i32
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// sRGB to linear light (source: IEC 61966-2-1, the sRGB transfer function).
    fn linear(c: u8) -> f64 {
        let c = f64::from(c) / 255.0;
        if c <= 0.04045 {
            c / 12.92
        } else {
            ((c + 0.055) / 1.055).powf(2.4)
        }
    }

    /// CIE L*a*b* (D65) of a linear RGB triple (source: CIE 15:2004 colorimetry; the sRGB
    /// to XYZ matrix of IEC 61966-2-1).
    fn lab(rgb: [f64; 3]) -> [f64; 3] {
        let [r, g, b] = rgb.map(|v| v.clamp(0.0, 1.0));
        let x = (0.4124 * r + 0.3576 * g + 0.1805 * b) / 0.95047;
        let y = 0.2126 * r + 0.7152 * g + 0.0722 * b;
        let z = (0.0193 * r + 0.1192 * g + 0.9505 * b) / 1.08883;
        let f = |t: f64| {
            if t > 0.008856 {
                t.cbrt()
            } else {
                7.787 * t + 16.0 / 116.0
            }
        };
        let (fx, fy, fz) = (f(x), f(y), f(z));
        [116.0 * fy - 16.0, 500.0 * (fx - fy), 200.0 * (fy - fz)]
    }

    #[test]
    fn the_palette_stays_apart_under_colour_vision_deficiencies() {
        // Simulation matrices for full protanopia, deuteranopia and tritanopia, applied to
        // linear RGB (from memory: Machado, Oliveira & Fernandes, "A physiologically-based
        // model for simulation of color vision deficiency", IEEE TVCG 15(6), 2009, severity
        // 1.0).
        let identity = [[1.0, 0.0, 0.0], [0.0, 1.0, 0.0], [0.0, 0.0, 1.0]];
        let protan = [
            [0.152286, 1.052583, -0.204868],
            [0.114503, 0.786281, 0.099216],
            [-0.003882, -0.048116, 1.051998],
        ];
        let deutan = [
            [0.367322, 0.860646, -0.227968],
            [0.280085, 0.672501, 0.047413],
            [-0.011820, 0.042940, 0.968881],
        ];
        let tritan = [
            [1.255528, -0.076749, -0.178779],
            [-0.078411, 0.930809, 0.147602],
            [0.004733, 0.691367, 0.303900],
        ];
        for (name, m) in [
            ("normal", identity),
            ("protanopia", protan),
            ("deuteranopia", deutan),
            ("tritanopia", tritan),
        ] {
            let seen: Vec<[f64; 3]> = PALETTE
                .iter()
                .map(|&RGBColor(r, g, b)| {
                    let v = [linear(r), linear(g), linear(b)];
                    lab(m.map(|row| row[0] * v[0] + row[1] * v[1] + row[2] * v[2]))
                })
                .collect();
            for i in 0..seen.len() {
                for j in i + 1..seen.len() {
                    let d = seen[i]
                        .iter()
                        .zip(&seen[j])
                        .map(|(a, b)| (a - b).powi(2))
                        .sum::<f64>()
                        .sqrt();
                    // A CIE76 difference above 20 is clearly distinct at a glance (common
                    // practice: about 2.3 is just noticeable).
                    assert!(d > 20.0, "{name}: colours {i} and {j} differ by {d:.1}");
                }
            }
        }
    }

    #[test]
    fn twelve_lines_have_twelve_styles() {
        let styles: Vec<LineStyle> = (0..MAX_STYLES).map(line_style).collect();
        for i in 0..styles.len() {
            for j in i + 1..styles.len() {
                let (a, b) = (styles[i], styles[j]);
                let differences = usize::from(a.color != b.color)
                    + usize::from(a.dash != b.dash)
                    + usize::from(a.marker != b.marker);
                assert!(differences >= 2, "lines {i} and {j}: {a:?} {b:?}");
            }
        }
    }
}
