//! Maps of an estimate over two inputs: cells shaded by the error bar in
//! steps with a colour scale beside the plot, contour lines of the
//! estimate labelled with their values, cells outside the training domain
//! hatched (thin lines, so the contour labels stay readable).
//!
//! Contours are traced by marching squares on the cell centres (Lorensen
//! and Cline, "Marching cubes", SIGGRAPH 1987, in its two-dimensional
//! form), at the nice-number levels inside the estimate's range.

use plotters::prelude::*;

use super::svg::{n, standalone, with_layer, Layer};
use super::ticks;
use super::xy::{draw_legend, frame, legend_layout, plot_error, wrap, Axis, Mapping, Swatch};
use super::{hex, RGBColor, INK};
use crate::error::Result;

/// One map: a target's estimate and error bar on a grid.
#[derive(Clone, Debug, PartialEq)]
pub struct MapPanel {
    /// Title.
    pub title: String,
    /// x-axis label with unit.
    pub x_label: String,
    /// y-axis label with unit.
    pub y_label: String,
    /// Cell centres along x, rising or falling evenly.
    pub xs: Vec<f64>,
    /// Cell centres along y.
    pub ys: Vec<f64>,
    /// Estimate per cell, row `j` (along y) after row: index j·nx + i.
    pub centre: Vec<f64>,
    /// Error-bar sd per cell.
    pub sd: Vec<f64>,
    /// Cells outside the training domain.
    pub outside: Vec<bool>,
    /// What the shade shows, with unit ("sd of the estimate (MPa)").
    pub sd_label: String,
    /// What the contours show, with unit.
    pub contour_label: String,
}

/// Lightest and darkest shade of the error-bar scale.
const LIGHT: RGBColor = RGBColor(0xf4, 0xf7, 0xfb);
const DARK: RGBColor = RGBColor(0x4f, 0x77, 0xaa);
const HATCH: RGBColor = RGBColor(0x70, 0x70, 0x70);

fn shade(k: usize, classes: usize) -> RGBColor {
    let t = if classes > 1 {
        k as f64 / (classes - 1) as f64
    } else {
        0.0
    };
    let mix = |a: u8, b: u8| (f64::from(a) + t * (f64::from(b) - f64::from(a))).round() as u8;
    RGBColor(
        mix(LIGHT.0, DARK.0),
        mix(LIGHT.1, DARK.1),
        mix(LIGHT.2, DARK.2),
    )
}

fn finite_span(v: &[f64]) -> (f64, f64) {
    v.iter()
        .filter(|x| x.is_finite())
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &x| {
            (a.min(x), b.max(x))
        })
}

/// Contour segments of level `l` (pixel coordinates).
fn contour(p: &MapPanel, m: &Mapping, l: f64) -> Vec<((f64, f64), (f64, f64))> {
    let (nx, ny) = (p.xs.len(), p.ys.len());
    let v = |i: usize, j: usize| p.centre[j * nx + i];
    let mut segs = Vec::new();
    for j in 0..ny - 1 {
        for i in 0..nx - 1 {
            let corner = [(i, j), (i + 1, j), (i + 1, j + 1), (i, j + 1)];
            let mut pts = Vec::new();
            for e in 0..4 {
                let (a, b) = (corner[e], corner[(e + 1) % 4]);
                let (va, vb) = (v(a.0, a.1), v(b.0, b.1));
                if va.is_finite() && vb.is_finite() && (va < l) != (vb < l) {
                    let t = (l - va) / (vb - va);
                    pts.push(m.p((
                        p.xs[a.0] + t * (p.xs[b.0] - p.xs[a.0]),
                        p.ys[a.1] + t * (p.ys[b.1] - p.ys[a.1]),
                    )));
                }
            }
            for pair in pts.chunks(2).filter(|c| c.len() == 2) {
                segs.push((pair[0], pair[1]));
            }
        }
    }
    segs
}

/// Draw one map panel into `area`.
fn draw_map(area: &super::xy::Area<'_>, p: &MapPanel, layer: &mut Layer) -> Result<()> {
    let (w, h) = area.dim_in_pixel();
    let (nx, ny) = (p.xs.len(), p.ys.len());
    let legend: Vec<(Swatch, String)> = vec![
        (
            Swatch::Line(INK, false),
            format!("contours of {} (labelled)", p.contour_label),
        ),
        (
            Swatch::Hatch(HATCH),
            "hatched: outside the training domain".into(),
        ),
    ];
    let (places, rows) = legend_layout(&legend, f64::from(w) - 40.0);
    let legend_h = 18 * rows as u32 + 10;
    let (top, _) = area.split_vertically(h - legend_h);
    let (plot, scale) = top.split_horizontally(w - 120);
    let hx = 0.5 * (p.xs[1] - p.xs[0]).abs();
    let hy = 0.5 * (p.ys[1] - p.ys[0]).abs();
    let (xa, xb) = finite_span(&p.xs);
    let (ya, yb) = finite_span(&p.ys);
    let m = frame(
        &plot,
        &p.title,
        (&p.x_label, &p.y_label),
        Axis::exact(xa - hx, xb + hx, 6),
        Axis::exact(ya - hy, yb + hy, 6),
        false,
    )?;
    // shaded cells, one path per class of the nice-number scale
    let (s0, s1) = finite_span(&p.sd);
    let st = ticks::linear(s0, s1, 6);
    let classes = st.values.len().saturating_sub(1).max(1);
    let class_of = |sd: f64| {
        st.values
            .windows(2)
            .position(|w| sd <= w[1])
            .unwrap_or(classes - 1)
    };
    let mut paths = vec![String::new(); classes];
    let mut hatch = String::new();
    for j in 0..ny {
        for i in 0..nx {
            let k = j * nx + i;
            let (a, b) = (
                m.p((p.xs[i] - hx, p.ys[j] + hy)),
                m.p((p.xs[i] + hx, p.ys[j] - hy)),
            );
            let (x0, y0, x1, y1) = (a.0.min(b.0), a.1.min(b.1), a.0.max(b.0), a.1.max(b.1));
            if p.sd[k].is_finite() {
                paths[class_of(p.sd[k])].push_str(&format!(
                    "M{} {}H{}V{}H{}z",
                    n(x0),
                    n(y0),
                    n(x1),
                    n(y1),
                    n(x0)
                ));
            }
            if p.outside[k] {
                hatch.push_str(&format!(
                    "M{} {}L{} {}M{} {}L{} {}",
                    n(x0),
                    n(y1),
                    n(x1),
                    n(y0),
                    n(x0),
                    n(0.5 * (y0 + y1)),
                    n(0.5 * (x0 + x1)),
                    n(y0)
                ));
            }
        }
    }
    for (k, d) in paths.iter().enumerate() {
        layer.path(d, &format!("fill=\"{}\"", hex(shade(k, classes))));
    }
    layer.path(
        &hatch,
        &format!(
            "stroke=\"{}\" stroke-width=\"0.7\" stroke-opacity=\"0.8\"",
            hex(HATCH)
        ),
    );
    draw_contours(p, &m, layer);
    // colour scale
    let base = scale.get_base_pixel();
    let (bx, by, bh) = (
        f64::from(base.0) + 12.0,
        f64::from(base.1) + 80.0,
        f64::from(h - legend_h) - 150.0,
    );
    for (i, line) in wrap(&p.sd_label, 110.0, 11.0).iter().enumerate() {
        layer.text(
            (bx, by - 40.0 + 13.0 * i as f64),
            line,
            11.0,
            "start",
            INK,
            false,
            i == 0,
        );
    }
    let step = bh / classes as f64;
    for k in 0..classes {
        let y = by + bh - step * (k + 1) as f64;
        layer.path(
            &format!("M{} {}h18v{}h-18z", n(bx), n(y), n(step)),
            &format!(
                "fill=\"{}\" stroke=\"#999\" stroke-width=\"0.5\"",
                hex(shade(k, classes))
            ),
        );
    }
    for (k, l) in st.labels.iter().enumerate() {
        let y = by + bh - step * k as f64;
        layer.text((bx + 24.0, y + 4.0), l, 11.5, "start", INK, false, false);
    }
    let origin = (
        f64::from(area.get_base_pixel().0) + 24.0,
        f64::from(area.get_base_pixel().1 + (h - legend_h) as i32) + 2.0,
    );
    draw_legend(layer, &legend, &places, origin);
    Ok(())
}

/// Contour lines at the nice levels inside the estimate's range, each
/// labelled once where it runs farthest from the plot's edges and from the
/// other labels.
fn draw_contours(p: &MapPanel, m: &Mapping, layer: &mut Layer) {
    let (c0, c1) = finite_span(&p.centre);
    if c1 <= c0 || !c1.is_finite() {
        return;
    }
    let levels = ticks::linear(c0, c1, 8);
    let (left, top, right, bottom) = m.rect();
    let mut placed: Vec<(f64, f64)> = Vec::new();
    let mut labels = Vec::new();
    let mut d = String::new();
    for (l, text) in levels.values.iter().zip(&levels.labels) {
        if *l <= c0 || *l >= c1 {
            continue;
        }
        let segs = contour(p, m, *l);
        for (a, b) in &segs {
            d.push_str(&format!("M{} {}L{} {}", n(a.0), n(a.1), n(b.0), n(b.1)));
        }
        let best = segs
            .iter()
            .map(|(a, b)| (0.5 * (a.0 + b.0), 0.5 * (a.1 + b.1)))
            .map(|c| {
                let edge = (c.0 - left - 20.0)
                    .min(right - c.0 - 20.0)
                    .min(c.1 - top - 10.0)
                    .min(bottom - c.1 - 10.0);
                let apart = placed
                    .iter()
                    .map(|q| ((q.0 - c.0).powi(2) + (q.1 - c.1).powi(2)).sqrt())
                    .fold(f64::INFINITY, f64::min);
                (c, edge.min(apart - 30.0))
            })
            .max_by(|a, b| a.1.total_cmp(&b.1));
        if let Some((c, _)) = best {
            placed.push(c);
            labels.push((c, text.clone()));
        }
    }
    layer.path(
        &d,
        &format!(
            "fill=\"none\" stroke=\"{}\" stroke-width=\"1.2\" stroke-linecap=\"round\"",
            hex(INK)
        ),
    );
    for (c, t) in labels {
        layer.text((c.0, c.1 + 4.0), &t, 12.0, "middle", INK, true, true);
    }
}

/// Map panels stacked in one standalone SVG document, `foot` (the
/// caution) under them.
///
/// # Errors
/// [`crate::Error::Plot`] when plotters fails; [`crate::Error::InvalidParameter`]
/// for a panel whose grid is smaller than 2 × 2 or whose value counts do
/// not match it.
pub fn map_svg(panels: &[MapPanel], foot: Option<&str>, title: &str) -> Result<String> {
    for p in panels {
        let cells = p.xs.len() * p.ys.len();
        if p.xs.len() < 2
            || p.ys.len() < 2
            || [p.centre.len(), p.sd.len(), p.outside.len()]
                .iter()
                .any(|&l| l != cells)
        {
            return Err(crate::error::Error::InvalidParameter {
                name: "map",
                value: format!(
                    "{} × {} grid with {} values",
                    p.xs.len(),
                    p.ys.len(),
                    p.centre.len()
                ),
                expected: "a grid of at least 2 × 2 with one value per cell".into(),
            });
        }
    }
    let (width, ph) = (760u32, 600u32);
    let foot_lines = foot.map_or(Vec::new(), |f| wrap(f, f64::from(width) - 20.0, 11.0));
    let foot_h = if foot_lines.is_empty() {
        0
    } else {
        16 * foot_lines.len() as u32 + 8
    };
    let total = ph * panels.len() as u32 + foot_h;
    let mut svg = String::new();
    let mut layer = Layer::default();
    {
        let root = SVGBackend::with_string(&mut svg, (width, total)).into_drawing_area();
        root.fill(&WHITE).map_err(plot_error)?;
        for (k, p) in panels.iter().enumerate() {
            let area = root.clone().shrink((0, ph * k as u32), (width, ph));
            draw_map(&area, p, &mut layer)?;
        }
        let y = f64::from(ph * panels.len() as u32);
        for (i, l) in foot_lines.iter().enumerate() {
            layer.text(
                (10.0, y + 14.0 + 16.0 * i as f64),
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
