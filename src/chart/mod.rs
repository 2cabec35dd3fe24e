//! Charts as SVG: the frame (axes, grid, tick labels, titles) is drawn by
//! plotters, the data on top of it as compact paths (one path per series,
//! coordinates rounded to 0.1 px), legends in a strip below the plot so
//! they never cover data.
//!
//! Every chart is a valid SVG document on its own ([`standalone`]: the SVG
//! namespace, a viewBox, a `<title>`, text as `<text>`), or a fragment for
//! an HTML page ([`inline`]). Nothing refers to anything outside the file.
//! [`png`] renders the same document to PNG (resvg, the machine's fonts).
//!
//! # Colours and marks
//!
//! Series colours are from the Okabe–Ito palette (Okabe and Ito, "Color
//! Universal Design", 2008), chosen to stay distinct for the common
//! colour-vision deficiencies; the first two (a dark blue and a light
//! orange) also differ in lightness, so they stay apart in greyscale, and
//! each series has its own mark shape as well. The error-bar shade of maps
//! is a single-hue scale that only darkens, so it reads in greyscale.

mod bar;
mod map;
mod png;
mod svg;
pub mod ticks;
mod xy;

pub use bar::bar_svg;
pub use map::{map_svg, MapPanel};
pub use png::{png, png_font, PNG_SCALE, SANS_FACES};
pub use svg::{inline, standalone};
pub use xy::{draw_panels, xy_svg};

pub use plotters::style::RGBColor;

/// Near-black for text and axes.
pub const INK: RGBColor = RGBColor(0x26, 0x26, 0x2b);
/// Pale grid lines.
pub const GRID: RGBColor = RGBColor(0xe6, 0xe6, 0xea);
/// First series (Okabe–Ito blue).
pub const BLUE: RGBColor = RGBColor(0x00, 0x72, 0xb2);
/// Second series (Okabe–Ito orange).
pub const ORANGE: RGBColor = RGBColor(0xe6, 0x9f, 0x00);
/// Third series (Okabe–Ito vermilion).
pub const VERMILION: RGBColor = RGBColor(0xd5, 0x5e, 0x00);
/// Fourth series (Okabe–Ito reddish purple).
pub const PURPLE: RGBColor = RGBColor(0xcc, 0x79, 0xa7);
/// Fifth series (Okabe–Ito bluish green).
pub const GREEN: RGBColor = RGBColor(0x00, 0x9e, 0x73);
/// Reference lines (the diagonal, zero).
pub const GREY: RGBColor = RGBColor(0x8a, 0x8a, 0x8a);

/// Size of a chart, pixels, before its legend strip.
pub const SIZE: (u32, u32) = (640, 420);

/// The shape of a series' marks.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Mark {
    /// Filled circle.
    Circle,
    /// Open triangle.
    Triangle,
    /// Cross.
    Cross,
    /// Filled square.
    Square,
    /// Open diamond.
    Diamond,
}

/// Points, optionally with vertical error bars.
#[derive(Clone, Debug, PartialEq)]
pub struct Points {
    /// Legend text.
    pub label: String,
    /// (x, y) per point.
    pub xy: Vec<(f64, f64)>,
    /// (lower, upper) of the error bar per point; empty for none.
    pub y_err: Vec<(f64, f64)>,
    /// Shape of the marks.
    pub mark: Mark,
    /// Colour.
    pub colour: RGBColor,
}

/// A polyline; a non-finite vertex breaks it (a gap where there is no data).
#[derive(Clone, Debug, PartialEq)]
pub struct Line {
    /// Legend text; `None` keeps it out of the legend.
    pub label: Option<String>,
    /// Vertices.
    pub xy: Vec<(f64, f64)>,
    /// Colour.
    pub colour: RGBColor,
    /// Dashed instead of solid.
    pub dashed: bool,
}

/// A shaded band between a lower and an upper curve; a non-finite vertex
/// breaks it.
#[derive(Clone, Debug, PartialEq)]
pub struct Band {
    /// Legend text.
    pub label: String,
    /// (x, lower, upper) per vertex.
    pub x_lo_hi: Vec<(f64, f64, f64)>,
    /// Colour.
    pub colour: RGBColor,
    /// Fill opacity (0 to 1).
    pub opacity: f64,
}

/// A horizontal reference line across the plot, labelled at its right end.
#[derive(Clone, Debug, PartialEq)]
pub struct HLine {
    /// Height.
    pub y: f64,
    /// Text at its right end.
    pub label: String,
    /// Colour.
    pub colour: RGBColor,
}

/// An interval along x drawn as a bar with end caps at height `y`, with a
/// tick at its centre and a label above it.
#[derive(Clone, Debug, PartialEq)]
pub struct XInterval {
    /// Height.
    pub y: f64,
    /// Low end.
    pub lo: f64,
    /// High end.
    pub hi: f64,
    /// Centre, when there is one.
    pub centre: Option<f64>,
    /// Text above the bar.
    pub label: String,
    /// Colour.
    pub colour: RGBColor,
}

/// A marked point with a text beside it.
#[derive(Clone, Debug, PartialEq)]
pub struct Note {
    /// Where.
    pub xy: (f64, f64),
    /// The text.
    pub text: String,
    /// Mark drawn at the point.
    pub mark: Mark,
    /// Colour of the mark.
    pub colour: RGBColor,
}

/// A chart on two numeric axes.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct XyChart {
    /// Title.
    pub title: String,
    /// x-axis label, with its unit.
    pub x_label: String,
    /// y-axis label, with its unit.
    pub y_label: String,
    /// Point series.
    pub points: Vec<Points>,
    /// Lines.
    pub lines: Vec<Line>,
    /// Bands.
    pub bands: Vec<Band>,
    /// Horizontal reference lines.
    pub h_lines: Vec<HLine>,
    /// Intervals along x.
    pub x_intervals: Vec<XInterval>,
    /// Marked points with text.
    pub notes: Vec<Note>,
    /// Legend entries for shading that is not a band (a swatch and text).
    pub swatches: Vec<(String, RGBColor)>,
    /// Fixed x range; by default the data's, padded, then widened to the ticks.
    pub x_range: Option<(f64, f64)>,
    /// Fixed y range; as x.
    pub y_range: Option<(f64, f64)>,
    /// Logarithmic x axis (values ≤ 0 are left out).
    pub x_log: bool,
    /// Logarithmic y axis.
    pub y_log: bool,
    /// Size in pixels before the legend strip; [`SIZE`] when `None`.
    pub size: Option<(u32, u32)>,
}

/// The range of `values` widened by 3 % on each side; a single value gets
/// ±1 (or ±10 % of itself); no finite value gives 0..1.
pub fn padded(values: impl Iterator<Item = f64>) -> (f64, f64) {
    let (lo, hi) = values
        .filter(|v| v.is_finite())
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
            (a.min(v), b.max(v))
        });
    if !lo.is_finite() {
        return (0.0, 1.0);
    }
    let w = hi - lo;
    if w <= 0.0 {
        let d = if lo.abs() > 0.0 { 0.1 * lo.abs() } else { 1.0 };
        return (lo - d, hi + d);
    }
    (lo - 0.03 * w, hi + 0.03 * w)
}

fn hex(c: RGBColor) -> String {
    format!("#{:02x}{:02x}{:02x}", c.0, c.1, c.2)
}
