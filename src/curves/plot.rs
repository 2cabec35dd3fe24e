//! SVG drawings of sweeps, maps and transition curves (through
//! [`crate::chart`]).
//!
//! A curve: the 95 % band pale, the 68 % band darker, the centre line
//! solid where the guard finds the point in domain and dashed where it
//! does not, the out-of-domain stretch also shaded grey behind the curve
//! and named in the legend (shape and shade, not colour alone). A map: one
//! panel per target, cells shaded by the predictive sd with a scale,
//! labelled contours of the centre, out-of-domain cells hatched. A
//! transition curve: the energy target only, the requested energies as
//! lines with the crossing temperatures' 95 % intervals on them, and the
//! requirement's point with its probability.

use super::{Sweep, Transition};
use crate::chart::{
    draw_panels, map_svg, Band, HLine, Line, MapPanel, Mark, Note, Points, XInterval, XyChart,
    BLUE, GREY, INK, VERMILION,
};
use crate::error::{Error, Result};
use crate::explain::{chart_label, chart_unit};
use crate::model::Model;

/// The unit symbol of `name` for text ("MPa"), empty when unknown.
fn unit_text(model: &Model, name: &str) -> String {
    chart_unit(model, name)
        .map(|u| u.symbol().to_string())
        .filter(|s| s != "1")
        .unwrap_or_default()
}

/// The curve of target `k` along the sweep's single axis: bands, the
/// centre line (dashed outside the domain), the out-of-domain stretch
/// shaded, impossible estimates crossed.
fn curve_chart(model: &Model, s: &Sweep, k: usize, title: String) -> XyChart {
    let x: Vec<f64> = s.points.iter().map(|p| p.at[0]).collect();
    let b: Vec<_> = s.points.iter().map(|p| &p.bands[k]).collect();
    let inside: Vec<bool> = s.points.iter().map(|p| p.verdict.in_domain).collect();
    let (y0, y1) = crate::chart::padded(b.iter().flat_map(|b| [b.lo95, b.hi95]));
    // the dashed runs reach one point into the solid ones, so they join
    let run = |solid: bool| -> Vec<(f64, f64)> {
        let out = |i: usize| !inside[i];
        (0..x.len())
            .map(|i| {
                let keep = if solid {
                    inside[i]
                } else {
                    out(i) || (i > 0 && out(i - 1)) || (i + 1 < x.len() && out(i + 1))
                };
                if keep {
                    (x[i], b[i].median)
                } else {
                    (f64::NAN, f64::NAN)
                }
            })
            .collect()
    };
    let dx = if x.len() > 1 {
        0.5 * (x[1] - x[0]).abs()
    } else {
        0.0
    };
    // the shade reaches past the fixed y range: the chart clips it to the plot
    let far = 1e3 * (y1 - y0).abs().max(1.0);
    let mut shade = Vec::new();
    for i in 0..x.len() {
        if inside[i] {
            shade.push((f64::NAN, f64::NAN, f64::NAN));
        } else {
            shade.push((x[i] - dx, y0 - far, y1 + far));
            shade.push((x[i] + dx, y0 - far, y1 + far));
        }
    }
    let mut bands = Vec::new();
    if inside.iter().any(|v| !v) {
        bands.push(Band {
            label: "outside the training domain (centre line dashed)".into(),
            x_lo_hi: shade,
            colour: GREY,
            opacity: 0.2,
        });
    }
    bands.push(Band {
        label: "95 % band".into(),
        x_lo_hi: x
            .iter()
            .zip(&b)
            .map(|(x, b)| (*x, b.lo95, b.hi95))
            .collect(),
        colour: BLUE,
        opacity: 0.16,
    });
    bands.push(Band {
        label: "68 % band".into(),
        x_lo_hi: x
            .iter()
            .zip(&b)
            .map(|(x, b)| (*x, b.lo68, b.hi68))
            .collect(),
        colour: BLUE,
        opacity: 0.28,
    });
    let mut lines = vec![Line {
        label: Some("centre estimate (median)".into()),
        xy: run(true),
        colour: BLUE,
        dashed: false,
    }];
    if inside.iter().any(|v| !v) {
        lines.push(Line {
            label: None,
            xy: run(false),
            colour: BLUE,
            dashed: true,
        });
    }
    let impossible: Vec<(f64, f64)> = x
        .iter()
        .zip(&b)
        .filter(|(_, b)| b.impossible)
        .map(|(x, b)| (*x, b.median))
        .collect();
    let points = if impossible.is_empty() {
        vec![]
    } else {
        vec![Points {
            label: "physically impossible estimate".into(),
            xy: impossible,
            y_err: vec![],
            mark: Mark::Cross,
            colour: VERMILION,
        }]
    };
    XyChart {
        title,
        x_label: chart_label(model, &s.axes[0].name),
        y_label: chart_label(model, &s.targets[k]),
        bands,
        lines,
        points,
        x_range: Some((x[0].min(x[x.len() - 1]), x[0].max(x[x.len() - 1]))),
        y_range: Some((y0, y1)),
        size: Some((720, 380)),
        ..Default::default()
    }
}

/// The curve of target `k` of a one-axis sweep as a chart (bands, centre
/// line dashed outside the domain, the out-of-domain stretch shaded), for
/// drawing elsewhere (the report's effect curves).
pub fn effect_chart(model: &Model, s: &Sweep, k: usize) -> XyChart {
    curve_chart(
        model,
        s,
        k,
        format!("{} along {}", s.targets[k], s.axes[0].name),
    )
}

/// One panel per target of a one-axis sweep; `caution` is printed under
/// the charts.
///
/// # Errors
/// [`Error::InvalidParameter`] for a sweep without exactly one axis;
/// [`Error::Plot`] when drawing fails.
pub fn sweep_svg(model: &Model, s: &Sweep, caution: &str) -> Result<String> {
    if s.axes.len() != 1 {
        return Err(Error::InvalidParameter {
            name: "vary",
            value: format!("{} axes", s.axes.len()),
            expected: "one axis for a curve".into(),
        });
    }
    let panels: Vec<XyChart> = (0..s.targets.len())
        .map(|k| {
            let title = format!(
                "{} against {} (other inputs held at the base)",
                s.targets[k], s.axes[0].name
            );
            curve_chart(model, s, k, title)
        })
        .collect();
    draw_panels(
        &panels,
        Some(caution),
        &format!("Sweep of {} along {}", s.targets.join(", "), s.axes[0].name),
    )
}

/// A two-axis sweep as maps, one panel per target in `targets` (indices
/// into the sweep's targets; every target when empty).
///
/// # Errors
/// [`Error::InvalidParameter`] for a sweep without exactly two axes or a
/// target index out of range; [`Error::Plot`] when drawing fails.
pub fn sweep_map_svg(model: &Model, s: &Sweep, targets: &[usize], caution: &str) -> Result<String> {
    if s.axes.len() != 2 {
        return Err(Error::InvalidParameter {
            name: "vary",
            value: format!("{} axes", s.axes.len()),
            expected: "two axes for a map".into(),
        });
    }
    let all: Vec<usize> = (0..s.targets.len()).collect();
    let chosen = if targets.is_empty() {
        &all[..]
    } else {
        targets
    };
    let mut panels = Vec::new();
    for &k in chosen {
        let name = s.targets.get(k).ok_or_else(|| Error::InvalidParameter {
            name: "target",
            value: k.to_string(),
            expected: format!("one of the model's {} targets", s.targets.len()),
        })?;
        let unit = unit_text(model, name);
        panels.push(MapPanel {
            title: format!("{name} over {} and {}", s.axes[0].name, s.axes[1].name),
            x_label: chart_label(model, &s.axes[0].name),
            y_label: chart_label(model, &s.axes[1].name),
            xs: s.axes[0].values(),
            ys: s.axes[1].values(),
            centre: s.points.iter().map(|p| p.bands[k].median).collect(),
            sd: s.points.iter().map(|p| p.bands[k].sd).collect(),
            outside: s.points.iter().map(|p| !p.verdict.in_domain).collect(),
            sd_label: format!(
                "error bar: sd of the estimate ({})",
                if unit.is_empty() {
                    "unit of the training file"
                } else {
                    unit.as_str()
                }
            ),
            contour_label: chart_label(model, name),
        });
    }
    map_svg(
        &panels,
        Some(caution),
        &format!("Map over {} and {}", s.axes[0].name, s.axes[1].name),
    )
}

/// The transition curve of the energy target: bands, centre line, the
/// requested energies as lines with the crossings' 95 % intervals, the
/// requirement's point with its probability.
///
/// # Errors
/// [`Error::Plot`] when drawing fails.
pub fn transition_svg(model: &Model, t: &Transition, caution: &str) -> Result<String> {
    let s = &t.curve;
    let name = &s.targets[t.target];
    let tu = unit_text(model, &s.axes[0].name);
    let tu = if tu.is_empty() { "°C".to_string() } else { tu };
    let eu = unit_text(model, name);
    let eu = if eu.is_empty() { "J".to_string() } else { eu };
    let mut c = curve_chart(
        model,
        s,
        t.target,
        format!("Transition curve of {name}: crossings with 95 % intervals"),
    );
    c.x_label = format!("test temperature {} ({tu})", s.axes[0].name);
    c.y_label = format!("impact energy {name} ({eu})");
    let t_fmt = |v: f64| format!("{v:.0}");
    // short labels on the chart, the numbers in full under it
    let mut foot = Vec::new();
    for x in &t.crossings {
        let e = format!("{}", x.energy);
        let text = match (x.lo95, x.hi95) {
            (Some(lo), Some(hi)) => {
                let mid = x.median.or(x.centre);
                c.x_intervals.push(XInterval {
                    y: x.energy,
                    lo,
                    hi,
                    centre: mid,
                    label: format!("T{e}J"),
                    colour: INK,
                });
                foot.push(format!(
                    "T{e}J {}(95 % interval {} to {} {tu}).",
                    mid.map_or(String::new(), |m| format!("{} {tu} ", t_fmt(m))),
                    t_fmt(lo),
                    t_fmt(hi)
                ));
                format!("{e} {eu}")
            }
            _ => {
                foot.push(format!(
                    "{e} {eu}: crossed inside the range by {:.0} % of the drawn curves, too few for an interval.",
                    100.0 * x.reached
                ));
                format!("{e} {eu} (no interval)")
            }
        };
        c.h_lines.push(HLine {
            y: x.energy,
            label: text,
            colour: GREY,
        });
    }
    if let Some((r, p_test, p_mean)) = &t.requirement {
        c.notes.push(Note {
            xy: (r.temperature, r.energy),
            text: format!("P = {p_test:.2}"),
            mark: Mark::Diamond,
            colour: VERMILION,
        });
        foot.push(format!(
            "Requirement {}: probability {p_test:.2} that one test meets it, {p_mean:.2} that the heat's mean energy does.",
            r.label
        ));
    }
    c.size = Some((760, 500));
    foot.push(caution.to_string());
    draw_panels(
        std::slice::from_ref(&c),
        Some(&foot.join(" ")),
        &c.title.clone(),
    )
}
