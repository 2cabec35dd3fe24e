//! Horizontal bar charts (input relevance).

use plotters::prelude::*;

use super::svg::standalone;
use super::ticks;
use super::xy::{plot_error, TickedAxis};
use super::{BLUE, GRID, INK, SIZE};
use crate::error::Result;

/// A horizontal bar chart of `values` (0 to `x_max`), the first name at
/// the top, as a standalone SVG document.
///
/// # Errors
/// [`crate::Error::Plot`] when plotters fails.
pub fn bar_svg(
    title: &str,
    x_label: &str,
    names: &[String],
    values: &[f64],
    x_max: f64,
) -> Result<String> {
    let d = names.len().max(1);
    let longest = names.iter().map(|n| n.chars().count()).max().unwrap_or(4);
    let label_width = (24 + 8 * longest).min(280) as u32;
    let height = (96 + 22 * d as u32).max(180);
    let t = ticks::linear(0.0, x_max, 6);
    let (_, x1) = t.span();
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (SIZE.0, height)).into_drawing_area();
        root.fill(&WHITE).map_err(plot_error)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(title, ("sans-serif", 17).into_font().color(&INK))
            .margin(10)
            .margin_right(18)
            .x_label_area_size(46)
            .y_label_area_size(label_width)
            .build_cartesian_2d(
                TickedAxis::new(0.0, x1, t.values.clone()),
                (0..d).into_segmented(),
            )
            .map_err(plot_error)?;
        let at = |v: &SegmentValue<usize>| match v {
            SegmentValue::CenterOf(i) if *i < names.len() => names[names.len() - 1 - i].clone(),
            _ => String::new(),
        };
        chart
            .configure_mesh()
            .x_desc(x_label)
            .axis_desc_style(("sans-serif", 15).into_font().color(&INK))
            .label_style(("sans-serif", 14).into_font().color(&INK))
            .axis_style(INK.mix(0.7))
            .bold_line_style(GRID)
            .light_line_style(TRANSPARENT)
            .disable_y_mesh()
            .y_labels(d)
            .x_labels(t.values.len())
            .x_label_formatter(&|v| t.label_at(*v))
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
                bar.set_margin(3, 3, 0, 0);
                bar
            }))
            .map_err(plot_error)?;
        root.present().map_err(plot_error)?;
    }
    Ok(standalone(&super::svg::compact(&svg), title))
}
