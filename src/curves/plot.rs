//! SVG drawings of sweeps, with plotters.
//!
//! A curve: the 95 % band pale, the 68 % band darker, the centre line
//! solid where the guard finds the point in domain and dashed where it
//! does not, the out-of-domain stretch also shaded grey behind the curve
//! and named in the legend (shape and shade, not colour alone). A map:
//! cells shaded by the predictive sd (darker = wider error bar), contour
//! lines of the centre, out-of-domain cells crossed out.

use plotters::prelude::*;

use super::Sweep;
use crate::error::{Error, Result};

const INK: RGBColor = RGBColor(0x22, 0x22, 0x28);
const LINE: RGBColor = RGBColor(0x1d, 0x4e, 0x89);
const BAND95: RGBColor = RGBColor(0xc9, 0xd9, 0xee);
const BAND68: RGBColor = RGBColor(0x8f, 0xb1, 0xdb);
const OUTSIDE: RGBColor = RGBColor(0xdd, 0xdd, 0xdd);

fn err(e: impl std::fmt::Display) -> Error {
    Error::Write {
        path: "SVG drawing".into(),
        source: std::io::Error::other(e.to_string()),
    }
}

fn span(v: impl Iterator<Item = f64>) -> (f64, f64) {
    let (lo, hi) = v
        .filter(|x| x.is_finite())
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), x| {
            (a.min(x), b.max(x))
        });
    if !lo.is_finite() {
        return (0.0, 1.0);
    }
    let pad = if hi > lo { 0.05 * (hi - lo) } else { 1.0 };
    (lo - pad, hi + pad)
}

/// Dashes of a polyline: every other piece of length `dash` (data units of x).
fn dashes(xy: &[(f64, f64)], dash: f64) -> Vec<Vec<(f64, f64)>> {
    let mut out = Vec::new();
    for w in xy.windows(2) {
        let (a, b) = (w[0], w[1]);
        let n = (((b.0 - a.0).abs() / dash).ceil() as usize).max(1);
        for i in (0..n).step_by(2) {
            let p = |t: f64| (a.0 + (b.0 - a.0) * t, a.1 + (b.1 - a.1) * t);
            out.push(vec![
                p(i as f64 / n as f64),
                p(((i + 1) as f64 / n as f64).min(1.0)),
            ]);
        }
    }
    out
}

/// One panel per target of a one-axis sweep; `caution` is printed under
/// the charts.
///
/// # Errors
/// [`Error::InvalidParameter`] for a sweep without exactly one axis;
/// [`Error::Write`] when drawing fails.
pub fn sweep_svg(s: &Sweep, caution: &str) -> Result<String> {
    if s.axes.len() != 1 {
        return Err(Error::InvalidParameter {
            name: "vary",
            value: format!("{} axes", s.axes.len()),
            expected: "one axis for a curve".into(),
        });
    }
    let (w, ph) = (720u32, 340u32);
    let h = ph * s.targets.len() as u32 + 40;
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (w, h)).into_drawing_area();
        root.fill(&WHITE).map_err(err)?;
        let (body, foot) = root.split_vertically(h - 40);
        foot.draw(&Text::new(
            caution.to_string(),
            (10, 12),
            ("sans-serif", 11).into_font().color(&INK),
        ))
        .map_err(err)?;
        let x: Vec<f64> = s.points.iter().map(|p| p.at[0]).collect();
        let (x0, x1) = (x[0].min(x[x.len() - 1]), x[0].max(x[x.len() - 1]));
        for (k, panel) in body.split_evenly((s.targets.len(), 1)).iter().enumerate() {
            let b: Vec<_> = s.points.iter().map(|p| &p.bands[k]).collect();
            let (y0, y1) = span(b.iter().flat_map(|b| [b.lo95, b.hi95]));
            let mut chart = ChartBuilder::on(panel)
                .caption(
                    format!(
                        "{} against {} (other inputs at the base heat)",
                        s.targets[k], s.axes[0].name
                    ),
                    ("sans-serif", 15).into_font().color(&INK),
                )
                .margin(10)
                .x_label_area_size(36)
                .y_label_area_size(56)
                .build_cartesian_2d(x0..x1, y0..y1)
                .map_err(err)?;
            chart
                .configure_mesh()
                .x_desc(s.axes[0].name.as_str())
                .y_desc(s.targets[k].as_str())
                .light_line_style(WHITE.mix(0.0))
                .label_style(("sans-serif", 11).into_font().color(&INK))
                .draw()
                .map_err(err)?;
            // out-of-domain stretch: grey background per grid interval
            let dx = if x.len() > 1 {
                (x[1] - x[0]).abs() / 2.0
            } else {
                0.0
            };
            let outside: Vec<_> = s
                .points
                .iter()
                .filter(|p| !p.verdict.in_domain)
                .map(|p| Rectangle::new([(p.at[0] - dx, y0), (p.at[0] + dx, y1)], OUTSIDE.filled()))
                .collect();
            chart
                .draw_series(outside)
                .map_err(err)?
                .label("outside the training domain (dashed)")
                .legend(|(a, b)| Rectangle::new([(a, b - 5), (a + 14, b + 5)], OUTSIDE.filled()));
            type Edge = fn(&super::Band) -> f64;
            let bands: [(Edge, Edge, RGBColor, &str); 2] = [
                (|b| b.lo95, |b| b.hi95, BAND95, "95 % band"),
                (|b| b.lo68, |b| b.hi68, BAND68, "68 % band"),
            ];
            for (lo, hi, c, label) in bands {
                let mut poly: Vec<(f64, f64)> =
                    x.iter().zip(&b).map(|(x, b)| (*x, hi(b))).collect();
                poly.extend(x.iter().zip(&b).rev().map(|(x, b)| (*x, lo(b))));
                chart
                    .draw_series(std::iter::once(Polygon::new(poly, c.mix(0.8).filled())))
                    .map_err(err)?
                    .label(label)
                    .legend(move |(a, y)| {
                        Rectangle::new([(a, y - 5), (a + 14, y + 5)], c.filled())
                    });
            }
            // centre line: solid inside the domain, dashed outside
            let mut inside_runs: Vec<Vec<(f64, f64)>> = Vec::new();
            let mut outside_runs: Vec<Vec<(f64, f64)>> = Vec::new();
            for (i, p) in s.points.iter().enumerate() {
                let runs = if p.verdict.in_domain {
                    &mut inside_runs
                } else {
                    &mut outside_runs
                };
                let pt = (x[i], b[i].median);
                let prev_same = i > 0 && s.points[i - 1].verdict.in_domain == p.verdict.in_domain;
                match runs.last_mut() {
                    Some(r) if prev_same => r.push(pt),
                    _ => {
                        // start a run at the previous point so the line joins up
                        let mut r = Vec::new();
                        if i > 0 {
                            r.push((x[i - 1], b[i - 1].median));
                        }
                        r.push(pt);
                        runs.push(r);
                    }
                }
            }
            let style = ShapeStyle::from(&LINE).stroke_width(2);
            chart
                .draw_series(inside_runs.into_iter().map(|r| PathElement::new(r, style)))
                .map_err(err)?
                .label("centre estimate")
                .legend(move |(a, y)| PathElement::new(vec![(a, y), (a + 14, y)], style));
            let dash = (x1 - x0) / 80.0;
            chart
                .draw_series(
                    outside_runs
                        .iter()
                        .flat_map(|r| dashes(r, dash))
                        .map(|d| PathElement::new(d, style)),
                )
                .map_err(err)?;
            let impossible: Vec<_> = s
                .points
                .iter()
                .zip(&b)
                .filter(|(_, b)| b.impossible)
                .map(|(p, b)| {
                    Cross::new(
                        (p.at[0], b.median),
                        4,
                        ShapeStyle::from(&RED).stroke_width(2),
                    )
                })
                .collect();
            if !impossible.is_empty() {
                chart
                    .draw_series(impossible)
                    .map_err(err)?
                    .label("physically impossible estimate")
                    .legend(|(a, y)| {
                        Cross::new((a + 7, y), 4, ShapeStyle::from(&RED).stroke_width(2))
                    });
            }
            chart
                .configure_series_labels()
                .background_style(WHITE.mix(0.85))
                .border_style(INK)
                .label_font(("sans-serif", 11).into_font().color(&INK))
                .draw()
                .map_err(err)?;
        }
        root.present().map_err(err)?;
    }
    Ok(svg)
}

/// A two-axis sweep of target `k` as a map.
///
/// # Errors
/// [`Error::InvalidParameter`] for a sweep without exactly two axes;
/// [`Error::Write`] when drawing fails.
pub fn sweep_map_svg(s: &Sweep, k: usize, caution: &str) -> Result<String> {
    if s.axes.len() != 2 {
        return Err(Error::InvalidParameter {
            name: "vary",
            value: format!("{} axes", s.axes.len()),
            expected: "two axes for a map".into(),
        });
    }
    let (nx, ny) = (s.axes[0].steps, s.axes[1].steps);
    let xs = s.axes[0].values();
    let ys = s.axes[1].values();
    let at = |i: usize, j: usize| &s.points[j * nx + i];
    let (sd_lo, sd_hi) = s
        .points
        .iter()
        .map(|p| p.bands[k].sd)
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
            (a.min(v), b.max(v))
        });
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (720, 600)).into_drawing_area();
        root.fill(&WHITE).map_err(err)?;
        let (body, foot) = root.split_vertically(560);
        foot.draw(&Text::new(
            caution.to_string(),
            (10, 12),
            ("sans-serif", 11).into_font().color(&INK),
        ))
        .map_err(err)?;
        let hx = (xs[1] - xs[0]).abs() / 2.0;
        let hy = (ys[1] - ys[0]).abs() / 2.0;
        let (x0, x1) = (xs[0].min(xs[nx - 1]) - hx, xs[0].max(xs[nx - 1]) + hx);
        let (y0, y1) = (ys[0].min(ys[ny - 1]) - hy, ys[0].max(ys[ny - 1]) + hy);
        let mut chart = ChartBuilder::on(&body)
            .caption(
                format!(
                    "{}: contours of the centre, shade = sd (darker wider), × outside the domain",
                    s.targets[k]
                ),
                ("sans-serif", 14).into_font().color(&INK),
            )
            .margin(10)
            .x_label_area_size(36)
            .y_label_area_size(56)
            .build_cartesian_2d(x0..x1, y0..y1)
            .map_err(err)?;
        chart
            .configure_mesh()
            .x_desc(s.axes[0].name.as_str())
            .y_desc(s.axes[1].name.as_str())
            .label_style(("sans-serif", 11).into_font().color(&INK))
            .draw()
            .map_err(err)?;
        let shade = |sd: f64| {
            let t = if sd_hi > sd_lo {
                (sd - sd_lo) / (sd_hi - sd_lo)
            } else {
                0.0
            };
            let g = (235.0 - 150.0 * t) as u8;
            RGBColor(g, g, g)
        };
        let mut cells = Vec::new();
        let mut crosses = Vec::new();
        for (j, &y) in ys.iter().enumerate() {
            for (i, &x) in xs.iter().enumerate() {
                let p = at(i, j);
                cells.push(Rectangle::new(
                    [(x - hx, y - hy), (x + hx, y + hy)],
                    shade(p.bands[k].sd).filled(),
                ));
                if !p.verdict.in_domain {
                    crosses.push(Cross::new(
                        (xs[i], ys[j]),
                        3,
                        ShapeStyle::from(&INK).stroke_width(1),
                    ));
                }
            }
        }
        chart.draw_series(cells).map_err(err)?;
        chart.draw_series(crosses).map_err(err)?;
        // contours by marching squares on the cell centres, 8 levels
        let (c_lo, c_hi) = s
            .points
            .iter()
            .map(|p| p.bands[k].median)
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
                (a.min(v), b.max(v))
            });
        let mut segs = Vec::new();
        for l in 1..8 {
            let level = c_lo + (c_hi - c_lo) * l as f64 / 8.0;
            for j in 0..ny - 1 {
                for i in 0..nx - 1 {
                    let corner = [(i, j), (i + 1, j), (i + 1, j + 1), (i, j + 1)];
                    let mut pts = Vec::new();
                    for e in 0..4 {
                        let (a, b) = (corner[e], corner[(e + 1) % 4]);
                        let (va, vb) = (at(a.0, a.1).bands[k].median, at(b.0, b.1).bands[k].median);
                        if (va < level) != (vb < level) {
                            let t = (level - va) / (vb - va);
                            pts.push((
                                xs[a.0] + t * (xs[b.0] - xs[a.0]),
                                ys[a.1] + t * (ys[b.1] - ys[a.1]),
                            ));
                        }
                    }
                    for pair in pts.chunks(2).filter(|c| c.len() == 2) {
                        segs.push(PathElement::new(
                            pair.to_vec(),
                            ShapeStyle::from(&LINE).stroke_width(1),
                        ));
                    }
                }
            }
        }
        chart.draw_series(segs).map_err(err)?;
        root.present().map_err(err)?;
    }
    Ok(svg)
}
