//! Charts on two numeric axes: plotters draws the frame with nice ticks,
//! [`Layer`] the data; the legend goes in a strip under the plot.

use crate::fixedmath::FixedMath;
use plotters::coord::ranged1d::{KeyPointHint, NoDefaultFormatting, ValueFormatter};
use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::prelude::*;

use super::svg::{mark_path, mark_style, n, standalone, with_layer, Layer};
use super::ticks::{self, Ticks};
use super::{hex, padded, Mark, RGBColor, XyChart, GRID, INK, SIZE};
use crate::error::{Error, Result};

/// A plotters drawing area on the SVG backend.
pub(crate) type Area<'a> = DrawingArea<SVGBackend<'a>, Shift>;

pub(crate) fn plot_error(e: impl std::fmt::Display) -> Error {
    Error::Plot {
        message: e.to_string(),
    }
}

/// One axis: its ticks and whether it is logarithmic (then plotted in
/// log10 units).
pub(crate) struct Axis {
    pub(crate) ticks: Ticks,
    pub(crate) log: bool,
    /// Plotted range in plot units (the ticks' span unless fixed).
    lo: f64,
    hi: f64,
}

impl Axis {
    /// Ticks covering `values` (or the fixed range), about `count` of them.
    pub(crate) fn new(
        values: impl Iterator<Item = f64>,
        fixed: Option<(f64, f64)>,
        log: bool,
        count: usize,
    ) -> Axis {
        if log {
            let (lo, hi) = fixed.unwrap_or_else(|| {
                values
                    .filter(|v| v.is_finite() && *v > 0.0)
                    .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
                        (a.min(v), b.max(v))
                    })
            });
            if let Some(ticks) = ticks::log(lo, hi, count) {
                return Axis::spanning(ticks, true);
            }
            return Axis::spanning(ticks::linear(0.0, 1.0, count), false);
        }
        let (lo, hi) = fixed.unwrap_or_else(|| padded(values));
        Axis::spanning(ticks::linear(lo, hi, count), false)
    }

    fn spanning(ticks: Ticks, log: bool) -> Axis {
        let (a, b) = ticks.span();
        let t = |v: f64| if log { v.log10_fixed() } else { v };
        Axis {
            lo: t(a),
            hi: t(b),
            ticks,
            log,
        }
    }

    /// A linear axis over exactly `lo..hi`, with the nice ticks inside it.
    pub(crate) fn exact(lo: f64, hi: f64, count: usize) -> Axis {
        let mut ticks = ticks::linear(lo, hi, count);
        let tol = 1e-9 * (hi - lo).abs();
        let keep: Vec<usize> = (0..ticks.values.len())
            .filter(|&i| ticks.values[i] >= lo - tol && ticks.values[i] <= hi + tol)
            .collect();
        ticks.values = keep.iter().map(|&i| ticks.values[i]).collect();
        ticks.labels = keep.iter().map(|&i| ticks.labels[i].clone()).collect();
        Axis {
            ticks,
            log: false,
            lo,
            hi,
        }
    }

    /// A value in plot units (log10 on a log axis; NaN where undefined).
    pub(crate) fn t(&self, v: f64) -> f64 {
        if !self.log {
            v
        } else if v > 0.0 {
            v.log10_fixed()
        } else {
            f64::NAN
        }
    }

    /// The plotted range, in plot units.
    pub(crate) fn range(&self) -> (f64, f64) {
        (self.lo, self.hi)
    }

    /// Tick positions in plot units.
    pub(crate) fn keys(&self) -> Vec<f64> {
        self.ticks.values.iter().map(|&v| self.t(v)).collect()
    }

    /// The label of the tick at `u` (plot units).
    pub(crate) fn label(&self, u: f64) -> String {
        let v = if self.log { 10f64.powf_fixed(u) } else { u };
        if self.log {
            // nearest in log units
            let i = self
                .ticks
                .values
                .iter()
                .enumerate()
                .min_by(|a, b| {
                    (a.1.log10_fixed() - u)
                        .abs()
                        .total_cmp(&(b.1.log10_fixed() - u).abs())
                })
                .map_or(0, |p| p.0);
            return self.ticks.labels.get(i).cloned().unwrap_or_default();
        }
        self.ticks.label_at(v)
    }
}

/// A plotters axis over `range` whose grid lines and labels sit at the
/// given ticks (plotters' own `WithKeyPoints` gives up its f64 label
/// formatting, which its mesh needs).
pub(crate) struct TickedAxis {
    inner: RangedCoordf64,
    keys: Vec<f64>,
}

impl TickedAxis {
    pub(crate) fn new(lo: f64, hi: f64, keys: Vec<f64>) -> TickedAxis {
        TickedAxis {
            inner: (lo..hi).into(),
            keys,
        }
    }
}

impl Ranged for TickedAxis {
    type FormatOption = NoDefaultFormatting;
    type ValueType = f64;

    fn map(&self, value: &f64, limit: (i32, i32)) -> i32 {
        self.inner.map(value, limit)
    }

    fn key_points<Hint: KeyPointHint>(&self, hint: Hint) -> Vec<f64> {
        if hint.weight().allow_light_points() {
            Vec::new()
        } else {
            self.keys.clone()
        }
    }

    fn range(&self) -> std::ops::Range<f64> {
        self.inner.range()
    }
}

impl ValueFormatter<f64> for TickedAxis {
    fn format(value: &f64) -> String {
        format!("{value}")
    }
}

/// Data units to pixels, clamped into the plot.
pub(crate) struct Mapping {
    x: (f64, f64, f64, f64),
    y: (f64, f64, f64, f64),
    xa: Axis,
    ya: Axis,
}

impl Mapping {
    /// From the pixels of the plot's corners and the axes.
    pub(crate) fn new(p0: (i32, i32), p1: (i32, i32), xa: Axis, ya: Axis) -> Mapping {
        let (x0, x1) = xa.range();
        let (y0, y1) = ya.range();
        Mapping {
            x: (x0, x1, f64::from(p0.0), f64::from(p1.0)),
            y: (y0, y1, f64::from(p0.1), f64::from(p1.1)),
            xa,
            ya,
        }
    }

    fn lin(v: f64, (a, b, pa, pb): (f64, f64, f64, f64)) -> f64 {
        let p = pa + (v - a) / (b - a) * (pb - pa);
        p.clamp(pa.min(pb), pa.max(pb))
    }

    /// Pixel x of a data x.
    pub(crate) fn px(&self, x: f64) -> f64 {
        Self::lin(self.xa.t(x), self.x)
    }

    /// Pixel y of a data y.
    pub(crate) fn py(&self, y: f64) -> f64 {
        Self::lin(self.ya.t(y), self.y)
    }

    /// Pixel position of a data point (NaN where undefined).
    pub(crate) fn p(&self, (x, y): (f64, f64)) -> (f64, f64) {
        (self.px(x), self.py(y))
    }

    /// The plot's pixel rectangle: left, top, right, bottom.
    pub(crate) fn rect(&self) -> (f64, f64, f64, f64) {
        (
            self.x.2.min(self.x.3),
            self.y.2.min(self.y.3),
            self.x.2.max(self.x.3),
            self.y.2.max(self.y.3),
        )
    }
}

/// What a legend entry shows beside its text.
#[derive(Clone, Copy)]
pub(crate) enum Swatch {
    Fill(RGBColor, f64),
    /// An empty box crossed by the thin diagonal lines of a hatched area.
    Hatch(RGBColor),
    Line(RGBColor, bool),
    Marks(Mark, RGBColor),
    Interval(RGBColor),
}

/// Legend entries of a chart, in drawing order.
fn entries(c: &XyChart) -> Vec<(Swatch, String)> {
    let mut e: Vec<(Swatch, String)> = c
        .swatches
        .iter()
        .map(|(t, col)| (Swatch::Fill(*col, 1.0), t.clone()))
        .collect();
    e.extend(
        c.bands
            .iter()
            .map(|b| (Swatch::Fill(b.colour, b.opacity), b.label.clone())),
    );
    for l in &c.lines {
        if let Some(t) = &l.label {
            e.push((Swatch::Line(l.colour, l.dashed), t.clone()));
        }
    }
    e.extend(
        c.points
            .iter()
            .map(|p| (Swatch::Marks(p.mark, p.colour), p.label.clone())),
    );
    if let Some(i) = c.x_intervals.first() {
        e.push((
            Swatch::Interval(i.colour),
            "95 % interval of the crossing temperature".into(),
        ));
    }
    e.retain(|(_, t)| !t.is_empty());
    e
}

/// Text width estimate at `size` px (sans-serif averages about 0.55 em).
pub(crate) fn text_width(s: &str, size: f64) -> f64 {
    0.56 * size * s.chars().count() as f64
}

/// Places of legend entries in rows of at most `width` px: (x, row).
pub(crate) fn legend_layout(e: &[(Swatch, String)], width: f64) -> (Vec<(f64, usize)>, usize) {
    let (mut x, mut row, mut out) = (0.0, 0usize, Vec::new());
    for (_, t) in e {
        let w = 26.0 + text_width(t, 12.0) + 18.0;
        if x > 0.0 && x + w > width {
            x = 0.0;
            row += 1;
        }
        out.push((x, row));
        x += w;
    }
    let rows = if e.is_empty() { 0 } else { row + 1 };
    (out, rows)
}

/// Draw the legend entries at `origin` (pixels of the root).
pub(crate) fn draw_legend(
    layer: &mut Layer,
    e: &[(Swatch, String)],
    places: &[(f64, usize)],
    origin: (f64, f64),
) {
    for ((s, t), (dx, row)) in e.iter().zip(places) {
        let (x, y) = (origin.0 + dx, origin.1 + 18.0 * *row as f64 + 9.0);
        match *s {
            Swatch::Fill(c, o) => layer.path(
                &format!("M{} {}h18v10h-18z", n(x), n(y - 5.0)),
                &format!(
                    "fill=\"{}\" fill-opacity=\"{}\" stroke=\"#bbb\" stroke-width=\"0.5\"",
                    hex(c),
                    n(o.max(0.12))
                ),
            ),
            Swatch::Hatch(c) => {
                layer.path(
                    &format!("M{} {}h18v10h-18z", n(x), n(y - 5.0)),
                    "fill=\"none\" stroke=\"#bbb\" stroke-width=\"0.5\"",
                );
                layer.path(
                    &format!(
                        "M{} {}l10 -10M{} {}l10 -10",
                        n(x),
                        n(y + 5.0),
                        n(x + 8.0),
                        n(y + 5.0)
                    ),
                    &format!(
                        "stroke=\"{}\" stroke-width=\"0.7\" stroke-opacity=\"0.8\"",
                        hex(c)
                    ),
                );
            }
            Swatch::Line(c, dashed) => layer.path(
                &format!("M{} {}h20", n(x), n(y)),
                &format!(
                    "stroke=\"{}\" stroke-width=\"2.2\"{}",
                    hex(c),
                    if dashed {
                        " stroke-dasharray=\"5 3\""
                    } else {
                        ""
                    }
                ),
            ),
            Swatch::Marks(m, c) => {
                layer.path(&mark_path(m, x + 9.0, y, 3.5), &mark_style(m, c, 3.5))
            }
            Swatch::Interval(c) => layer.path(
                &format!("M{} {}v8m0 -4h18m0 -4v8", n(x + 1.0), n(y - 4.0)),
                &format!("fill=\"none\" stroke=\"{}\" stroke-width=\"2\"", hex(c)),
            ),
        }
        layer.text((x + 26.0, y + 4.0), t, 12.0, "start", INK, false, false);
    }
}

/// Split `xy` at non-finite points into runs of pixel positions.
fn runs(m: &Mapping, xy: impl Iterator<Item = (f64, f64)>) -> Vec<Vec<(f64, f64)>> {
    let mut out = vec![Vec::new()];
    for v in xy {
        let p = m.p(v);
        if v.0.is_finite() && v.1.is_finite() && p.0.is_finite() && p.1.is_finite() {
            if let Some(r) = out.last_mut() {
                r.push(p);
            }
        } else if out.last().is_some_and(|r| !r.is_empty()) {
            out.push(Vec::new());
        }
    }
    out
}

/// Draw the data of `c` over the frame, in plotting order.
fn draw_data(layer: &mut Layer, c: &XyChart, m: &Mapping, small: bool) {
    for b in &c.bands {
        let mut d = String::new();
        for run in b
            .x_lo_hi
            .split(|v| !(v.0.is_finite() && v.1.is_finite() && v.2.is_finite()))
        {
            let mut poly: Vec<(f64, f64)> = run.iter().map(|v| m.p((v.0, v.2))).collect();
            poly.extend(run.iter().rev().map(|v| m.p((v.0, v.1))));
            if poly.len() > 2 {
                d.push_str(&Layer::polyline(&[poly]));
                d.push('Z');
            }
        }
        layer.path(
            &d,
            &format!(
                "fill=\"{}\" fill-opacity=\"{:.2}\"",
                hex(b.colour),
                b.opacity
            ),
        );
    }
    let (left, _, right, _) = m.rect();
    for h in &c.h_lines {
        let y = m.py(h.y);
        layer.path(
            &format!("M{} {}H{}", n(left), n(y), n(right)),
            &format!(
                "stroke=\"{}\" stroke-width=\"1.2\" stroke-dasharray=\"2 3\"",
                hex(h.colour)
            ),
        );
        layer.text(
            (right - 4.0, y - 4.0),
            &h.label,
            12.0,
            "end",
            h.colour,
            true,
            true,
        );
    }
    for l in &c.lines {
        let d = Layer::polyline(&runs(m, l.xy.iter().copied()));
        layer.path(
            &d,
            &format!(
                "fill=\"none\" stroke=\"{}\" stroke-width=\"{}\" stroke-linejoin=\"round\"{}",
                hex(l.colour),
                if small { "1.5" } else { "2.2" },
                if l.dashed {
                    " stroke-dasharray=\"7 5\""
                } else {
                    ""
                }
            ),
        );
    }
    let r = if small { 2.3 } else { 3.3 };
    for p in &c.points {
        if !p.y_err.is_empty() {
            let mut d = String::new();
            for (&(x, _), &(lo, hi)) in p.xy.iter().zip(&p.y_err) {
                let (px, a, b) = (m.px(x), m.py(lo), m.py(hi));
                if px.is_finite() && a.is_finite() && b.is_finite() {
                    d.push_str(&format!("M{} {}V{}", n(px), n(a), n(b)));
                }
            }
            layer.path(
                &d,
                &format!(
                    "stroke=\"{}\" stroke-opacity=\"0.45\" stroke-width=\"1\"",
                    hex(p.colour)
                ),
            );
        }
        let at: Vec<(f64, f64)> = p.xy.iter().map(|&v| m.p(v)).collect();
        layer.marks(&at, p.mark, p.colour, r, if small { 1.0 } else { 0.5 });
    }
    for i in &c.x_intervals {
        let (a, b, y) = (m.px(i.lo), m.px(i.hi), m.py(i.y));
        let mut d = format!("M{} {}v10m0 -5H{}m0 -5v10", n(a), n(y - 5.0), n(b));
        if let Some(cx) = i.centre {
            d.push_str(&format!("M{} {}v14", n(m.px(cx)), n(y - 7.0)));
        }
        layer.path(
            &d,
            &format!(
                "fill=\"none\" stroke=\"{}\" stroke-width=\"2.4\"",
                hex(i.colour)
            ),
        );
        let mid = 0.5 * (a + b);
        let (left, _, right, _) = m.rect();
        let half = 0.5 * text_width(&i.label, 12.0);
        let x = mid.clamp(
            left + half + 2.0,
            (right - half - 2.0).max(left + half + 2.0),
        );
        layer.text((x, y - 10.0), &i.label, 12.0, "middle", INK, true, false);
    }
    for note in &c.notes {
        let (x, y) = m.p(note.xy);
        layer.path(
            &mark_path(note.mark, x, y, 5.5),
            &mark_style(note.mark, note.colour, 5.5),
        );
        let (_, top, right, _) = m.rect();
        let w = text_width(&note.text, 12.5);
        let (tx, anchor) = if x + 10.0 + w < right {
            (x + 10.0, "start")
        } else {
            (x - 10.0, "end")
        };
        // below the point: the interval labels sit above their lines
        let ty = if y + 22.0 < m.rect().3 {
            y + 20.0
        } else {
            (y - 10.0).max(top + 12.0)
        };
        layer.text((tx, ty), &note.text, 12.5, anchor, INK, true, true);
    }
}

/// The frame of a chart in `area`: title, axes with their labels and
/// ticks, pale grid; returns the mapping of data to pixels.
///
/// # Errors
/// [`Error::Plot`] when plotters fails.
pub(crate) fn frame(
    area: &Area<'_>,
    title: &str,
    (x_label, y_label): (&str, &str),
    xa: Axis,
    ya: Axis,
    small: bool,
) -> Result<Mapping> {
    let ylab = ya
        .ticks
        .labels
        .iter()
        .map(|l| l.chars().count())
        .max()
        .unwrap_or(3);
    let (fs_title, fs_desc, fs_tick) = if small { (14, 13, 12) } else { (17, 15, 14) };
    let (x0, x1) = xa.range();
    let (y0, y1) = ya.range();
    let mut chart = ChartBuilder::on(area)
        .caption(title, ("sans-serif", fs_title).into_font().color(&INK))
        .margin(10)
        .margin_right(18)
        .x_label_area_size(if small { 38 } else { 46 })
        .y_label_area_size(28 + 7 * ylab as u32)
        .build_cartesian_2d(
            TickedAxis::new(x0, x1, xa.keys()),
            TickedAxis::new(y0, y1, ya.keys()),
        )
        .map_err(plot_error)?;
    chart
        .configure_mesh()
        .x_desc(x_label)
        .y_desc(y_label)
        .axis_desc_style(("sans-serif", fs_desc).into_font().color(&INK))
        .label_style(("sans-serif", fs_tick).into_font().color(&INK))
        .axis_style(INK.mix(0.7))
        .bold_line_style(GRID)
        .light_line_style(TRANSPARENT)
        .x_labels(xa.ticks.values.len())
        .y_labels(ya.ticks.values.len())
        .x_label_formatter(&|v| xa.label(*v))
        .y_label_formatter(&|v| ya.label(*v))
        .draw()
        .map_err(plot_error)?;
    let p0 = chart.backend_coord(&(x0, y0));
    let p1 = chart.backend_coord(&(x1, y1));
    Ok(Mapping::new(p0, p1, xa, ya))
}

/// Draw `c` into `area`: frame by plotters, data and legend into `layer`.
///
/// # Errors
/// [`Error::Plot`] when plotters fails.
pub(crate) fn draw_xy(area: &Area<'_>, c: &XyChart, layer: &mut Layer) -> Result<()> {
    let (w, h) = area.dim_in_pixel();
    let e = entries(c);
    let (places, rows) = legend_layout(&e, f64::from(w) - 40.0);
    let legend_h = if rows == 0 { 0 } else { 18 * rows as u32 + 10 };
    let (top, _) = area.split_vertically(h - legend_h);
    let small = w < 420;
    let xs = c
        .points
        .iter()
        .flat_map(|p| p.xy.iter().map(|v| v.0))
        .chain(c.lines.iter().flat_map(|l| l.xy.iter().map(|v| v.0)))
        .chain(c.bands.iter().flat_map(|b| b.x_lo_hi.iter().map(|v| v.0)))
        .chain(c.x_intervals.iter().flat_map(|i| [i.lo, i.hi]))
        .chain(c.notes.iter().map(|n| n.xy.0));
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
        )
        .chain(c.h_lines.iter().map(|l| l.y))
        .chain(c.x_intervals.iter().map(|i| i.y))
        .chain(c.notes.iter().map(|n| n.xy.1));
    let plot_h = f64::from(h - legend_h);
    let xa = Axis::new(
        xs,
        c.x_range,
        c.x_log,
        (f64::from(w) / 100.0).clamp(3.0, 8.0) as usize,
    );
    let ya = Axis::new(
        ys,
        c.y_range,
        c.y_log,
        (plot_h / 70.0).clamp(3.0, 7.0) as usize,
    );
    let m = frame(&top, &c.title, (&c.x_label, &c.y_label), xa, ya, small)?;
    draw_data(layer, c, &m, small);
    let base = area.get_base_pixel();
    draw_legend(
        layer,
        &e,
        &places,
        (f64::from(base.0) + 24.0, f64::from(base.1) + plot_h + 2.0),
    );
    Ok(())
}

/// Draw `c` as a standalone SVG document.
///
/// # Errors
/// [`Error::Plot`] when plotters fails.
pub fn xy_svg(c: &XyChart) -> Result<String> {
    draw_panels(std::slice::from_ref(c), None, &c.title)
}

/// Height of a chart's legend strip at `width`.
fn legend_height(c: &XyChart, width: u32) -> u32 {
    let (_, rows) = legend_layout(&entries(c), f64::from(width) - 40.0);
    if rows == 0 {
        0
    } else {
        18 * rows as u32 + 10
    }
}

/// Charts stacked in one standalone SVG document, each with its legend,
/// and `foot` (the caution) under them in small type.
///
/// # Errors
/// [`Error::Plot`] when plotters fails.
pub fn draw_panels(panels: &[XyChart], foot: Option<&str>, title: &str) -> Result<String> {
    let width = panels
        .iter()
        .map(|c| c.size.unwrap_or(SIZE).0)
        .max()
        .unwrap_or(SIZE.0);
    let heights: Vec<u32> = panels
        .iter()
        .map(|c| c.size.unwrap_or(SIZE).1 + legend_height(c, width))
        .collect();
    let foot_lines = foot.map_or(Vec::new(), |f| wrap(f, f64::from(width) - 20.0, 11.0));
    let foot_h = if foot_lines.is_empty() {
        0
    } else {
        16 * foot_lines.len() as u32 + 8
    };
    let total = heights.iter().sum::<u32>() + foot_h;
    let mut svg = String::new();
    let mut layer = Layer::default();
    {
        let root = SVGBackend::with_string(&mut svg, (width, total)).into_drawing_area();
        root.fill(&WHITE).map_err(plot_error)?;
        let mut y = 0i32;
        for (c, &ph) in panels.iter().zip(&heights) {
            let area = root.clone().shrink((0, y), (width, ph));
            draw_xy(&area, c, &mut layer)?;
            y += ph as i32;
        }
        for (i, l) in foot_lines.iter().enumerate() {
            layer.text(
                (10.0, f64::from(y) + 14.0 + 16.0 * i as f64),
                l,
                11.0,
                "start",
                INK,
                false,
                false,
            );
        }
        root.present().map_err(plot_error)?;
    }
    Ok(standalone(&with_layer(svg, &layer), title))
}

/// Words of `s` in lines of at most `width` px at `size`.
pub(crate) fn wrap(s: &str, width: f64, size: f64) -> Vec<String> {
    let mut lines: Vec<String> = Vec::new();
    let mut cur = String::new();
    for word in s.split_whitespace() {
        if !cur.is_empty() && text_width(&format!("{cur} {word}"), size) > width {
            lines.push(std::mem::take(&mut cur));
        }
        if !cur.is_empty() {
            cur.push(' ');
        }
        cur.push_str(word);
    }
    if !cur.is_empty() {
        lines.push(cur);
    }
    lines
}
