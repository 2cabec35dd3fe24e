//! SVG charts drawn with plotters: scatter and line charts with error bars
//! and shaded bands, and horizontal bar charts.
//!
//! # Style
//!
//! Marks differ in shape as well as colour, so no chart relies on colour
//! alone. The colours are this project's own pick of a blue and an orange
//! far apart in hue and lightness, a deep purple and a mid grey: pairs that
//! stay distinct under the common red–green colour-vision deficiencies
//! (blue against orange is the usual safe contrast; common practice, no
//! source). Grid lines are pale, text is near-black, fonts are the
//! viewer's sans-serif.

use plotters::coord::types::RangedCoordf64;
use plotters::prelude::*;

use crate::error::{Error, Result};

/// Near-black for text and axes.
pub const INK: RGBColor = RGBColor(0x26, 0x26, 0x2b);
/// Pale grid lines.
pub const GRID: RGBColor = RGBColor(0xe3, 0xe3, 0xe8);
/// First series: training rows, candidates.
pub const BLUE: RGBColor = RGBColor(0x1f, 0x5f, 0xa8);
/// Second series: held-out rows, chosen members.
pub const ORANGE: RGBColor = RGBColor(0xe0, 0x7b, 0x14);
/// Third series.
pub const PURPLE: RGBColor = RGBColor(0x5b, 0x2a, 0x86);
/// Reference lines (the diagonal, zero).
pub const GREY: RGBColor = RGBColor(0x8a, 0x8a, 0x8a);

/// Size of every chart, pixels.
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

/// A polyline.
#[derive(Clone, Debug, PartialEq)]
pub struct Line {
    /// Legend text; `None` keeps it out of the legend.
    pub label: Option<String>,
    /// Vertices.
    pub xy: Vec<(f64, f64)>,
    /// Colour.
    pub colour: RGBColor,
}

/// A shaded band between a lower and an upper curve.
#[derive(Clone, Debug, PartialEq)]
pub struct Band {
    /// Legend text.
    pub label: String,
    /// (x, lower, upper) per vertex.
    pub x_lo_hi: Vec<(f64, f64, f64)>,
    /// Colour (drawn pale).
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
    /// Fixed x range; by default the data's, padded.
    pub x_range: Option<(f64, f64)>,
    /// Fixed y range; by default the data's, padded.
    pub y_range: Option<(f64, f64)>,
}

fn plot_error(e: impl std::fmt::Display) -> Error {
    Error::Plot {
        message: e.to_string(),
    }
}

/// The range of `values` widened by 5 % on each side; a single value gets
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
    (lo - 0.05 * w, hi + 0.05 * w)
}

/// A tick label: short, no long decimal tails.
fn tick(v: f64) -> String {
    let a = v.abs();
    if a == 0.0 {
        "0".into()
    } else if !(1e-3..1e5).contains(&a) {
        format!("{v:.1e}")
    } else if a >= 100.0 {
        format!("{v:.0}")
    } else if a >= 1.0 {
        format!("{v:.2}")
            .trim_end_matches('0')
            .trim_end_matches('.')
            .to_string()
    } else {
        format!("{v:.3}")
            .trim_end_matches('0')
            .trim_end_matches('.')
            .to_string()
    }
}

/// Inline SVG: the namespace attribute is dropped (an inline `<svg>` in
/// HTML needs none, and the report then holds no URL at all).
fn inline(svg: String) -> String {
    svg.replacen(" xmlns=\"http://www.w3.org/2000/svg\"", "", 1)
}

type Chart2d<'a, 'b> =
    ChartContext<'a, SVGBackend<'b>, Cartesian2d<RangedCoordf64, RangedCoordf64>>;

fn draw_marks<'a, 'b: 'a>(chart: &mut Chart2d<'a, 'b>, p: &Points) -> Result<()> {
    let c = p.colour;
    if !p.y_err.is_empty() {
        chart
            .draw_series(p.xy.iter().zip(&p.y_err).map(|(&(x, _), &(lo, hi))| {
                PathElement::new(vec![(x, lo), (x, hi)], c.mix(0.45).stroke_width(1))
            }))
            .map_err(plot_error)?;
    }
    let pts = p.xy.iter().copied();
    let series = match p.mark {
        Mark::Circle => chart
            .draw_series(pts.map(|xy| Circle::new(xy, 3, c.mix(0.8).filled())))
            .map_err(plot_error)?,
        Mark::Triangle => chart
            .draw_series(pts.map(|xy| TriangleMarker::new(xy, 4, c.stroke_width(1))))
            .map_err(plot_error)?,
        Mark::Cross => chart
            .draw_series(pts.map(|xy| Cross::new(xy, 3, c.stroke_width(2))))
            .map_err(plot_error)?,
    };
    let mark = p.mark;
    series.label(p.label.clone()).legend(move |(x, y)| {
        let at = (x + 8, y);
        match mark {
            Mark::Circle => Circle::new(at, 3, c.filled()).into_dyn(),
            Mark::Triangle => TriangleMarker::new(at, 4, c.stroke_width(1)).into_dyn(),
            Mark::Cross => Cross::new(at, 3, c.stroke_width(2)).into_dyn(),
        }
    });
    Ok(())
}

/// Draw `c` as an SVG document.
///
/// # Errors
/// [`Error::Plot`] when plotters fails (never for finite data).
pub fn xy_svg(c: &XyChart) -> Result<String> {
    let xs = c
        .points
        .iter()
        .flat_map(|p| p.xy.iter().map(|v| v.0))
        .chain(c.lines.iter().flat_map(|l| l.xy.iter().map(|v| v.0)))
        .chain(c.bands.iter().flat_map(|b| b.x_lo_hi.iter().map(|v| v.0)));
    let (x0, x1) = c.x_range.unwrap_or_else(|| padded(xs));
    let ys = c
        .points
        .iter()
        .flat_map(|p| {
            p.xy.iter()
                .map(|v| v.1)
                .chain(p.y_err.iter().flat_map(|e| [e.0, e.1]))
        })
        .chain(c.lines.iter().flat_map(|l| l.xy.iter().map(|v| v.1)))
        .chain(
            c.bands
                .iter()
                .flat_map(|b| b.x_lo_hi.iter().flat_map(|v| [v.1, v.2])),
        );
    let (y0, y1) = c.y_range.unwrap_or_else(|| padded(ys));
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, SIZE).into_drawing_area();
        root.fill(&WHITE).map_err(plot_error)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(&c.title, ("sans-serif", 17).into_font().color(&INK))
            .margin(14)
            .x_label_area_size(48)
            .y_label_area_size(72)
            .build_cartesian_2d(x0..x1, y0..y1)
            .map_err(plot_error)?;
        chart
            .configure_mesh()
            .x_desc(c.x_label.as_str())
            .y_desc(c.y_label.as_str())
            .axis_desc_style(("sans-serif", 14).into_font().color(&INK))
            .label_style(("sans-serif", 12).into_font().color(&INK))
            .axis_style(INK.mix(0.7))
            .bold_line_style(GRID)
            .light_line_style(TRANSPARENT)
            .x_labels(7)
            .y_labels(7)
            .x_label_formatter(&|v| tick(*v))
            .y_label_formatter(&|v| tick(*v))
            .draw()
            .map_err(plot_error)?;
        for b in &c.bands {
            let mut outline: Vec<(f64, f64)> = b.x_lo_hi.iter().map(|v| (v.0, v.1)).collect();
            outline.extend(b.x_lo_hi.iter().rev().map(|v| (v.0, v.2)));
            let colour = b.colour;
            chart
                .draw_series(std::iter::once(Polygon::new(
                    outline,
                    colour.mix(0.16).filled(),
                )))
                .map_err(plot_error)?
                .label(b.label.clone())
                .legend(move |(x, y)| {
                    Rectangle::new([(x, y - 5), (x + 16, y + 5)], colour.mix(0.16).filled())
                });
        }
        for l in &c.lines {
            let colour = l.colour;
            let s = chart
                .draw_series(std::iter::once(PathElement::new(
                    l.xy.clone(),
                    colour.stroke_width(2),
                )))
                .map_err(plot_error)?;
            if let Some(label) = &l.label {
                s.label(label.clone()).legend(move |(x, y)| {
                    PathElement::new(vec![(x, y), (x + 16, y)], colour.stroke_width(2))
                });
            }
        }
        for p in &c.points {
            draw_marks(&mut chart, p)?;
        }
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::UpperLeft)
            .background_style(WHITE.mix(0.85))
            .border_style(GRID)
            .label_font(("sans-serif", 12).into_font().color(&INK))
            .draw()
            .map_err(plot_error)?;
        root.present().map_err(plot_error)?;
    }
    Ok(inline(svg))
}

/// A horizontal bar chart of `values` (0 to `x_max`), the first name at
/// the top.
///
/// # Errors
/// [`Error::Plot`] when plotters fails.
pub fn bar_svg(
    title: &str,
    x_label: &str,
    names: &[String],
    values: &[f64],
    x_max: f64,
) -> Result<String> {
    let d = names.len().max(1);
    let longest = names.iter().map(|n| n.chars().count()).max().unwrap_or(4);
    let label_width = (24 + 7 * longest).min(280) as u32;
    let height = (90 + 26 * d as u32).max(200);
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (SIZE.0, height)).into_drawing_area();
        root.fill(&WHITE).map_err(plot_error)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(title, ("sans-serif", 17).into_font().color(&INK))
            .margin(14)
            .x_label_area_size(48)
            .y_label_area_size(label_width)
            .build_cartesian_2d(0.0..x_max, (0..d).into_segmented())
            .map_err(plot_error)?;
        let at = |v: &SegmentValue<usize>| match v {
            SegmentValue::CenterOf(i) if *i < names.len() => names[names.len() - 1 - i].clone(),
            _ => String::new(),
        };
        chart
            .configure_mesh()
            .x_desc(x_label)
            .axis_desc_style(("sans-serif", 14).into_font().color(&INK))
            .label_style(("sans-serif", 12).into_font().color(&INK))
            .axis_style(INK.mix(0.7))
            .bold_line_style(GRID)
            .light_line_style(TRANSPARENT)
            .disable_y_mesh()
            .y_labels(d)
            .x_labels(6)
            .x_label_formatter(&|v| tick(*v))
            .y_label_formatter(&at)
            .draw()
            .map_err(plot_error)?;
        chart
            .draw_series(values.iter().enumerate().map(|(k, &v)| {
                let i = names.len() - 1 - k;
                let mut bar = Rectangle::new(
                    [
                        (0.0, SegmentValue::Exact(i)),
                        (v, SegmentValue::Exact(i + 1)),
                    ],
                    BLUE.mix(0.85).filled(),
                );
                bar.set_margin(4, 4, 0, 0);
                bar
            }))
            .map_err(plot_error)?;
        root.present().map_err(plot_error)?;
    }
    Ok(inline(svg))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn padding_and_degenerate_ranges() {
        assert_eq!(padded([0.0, 10.0].into_iter()), (-0.5, 10.5));
        assert_eq!(padded([5.0].into_iter()), (4.5, 5.5));
        assert_eq!(padded([f64::NAN].into_iter()), (0.0, 1.0));
    }

    #[test]
    fn charts_are_svg_without_urls() {
        let c = XyChart {
            title: "t".into(),
            x_label: "x (mm)".into(),
            y_label: "y (MPa)".into(),
            points: vec![Points {
                label: "rows".into(),
                xy: vec![(0.0, 1.0), (1.0, 2.0)],
                y_err: vec![(0.5, 1.5), (1.5, 2.5)],
                mark: Mark::Triangle,
                colour: BLUE,
            }],
            ..Default::default()
        };
        let svg = xy_svg(&c).expect("drawn");
        assert!(svg.starts_with("<svg") && svg.trim_end().ends_with("</svg>"));
        assert!(svg.contains("x (mm)") && !svg.contains("http"));
        let bars = bar_svg(
            "r",
            "relevance",
            &["a".into(), "b".into()],
            &[1.0, 0.2],
            1.05,
        )
        .expect("drawn");
        assert!(bars.contains("relevance") && !bars.contains("http"));
    }
}
