//! The sections drawn from rows with measured values: estimated against
//! measured, calibration, the evaluation table and the residuals as small
//! multiples.

use super::{details, esc, figure, fmt, id_part, table, Ctx, Part};
use crate::chart::{padded, xy_svg, Band, Line, Points, XyChart, GREY, PURPLE};
use crate::error::Result;
use crate::explain::chart_label;
use crate::metrics::Evaluation;

/// The legend of the small multiples, once above their grid.
pub(super) fn html_legend(ps: &[Part<'_>]) -> String {
    let mut s = String::from("<p class=\"legend\">");
    for p in ps {
        let mark = match p.mark {
            crate::chart::Mark::Circle => "●",
            crate::chart::Mark::Triangle => "△",
            _ => "✕",
        };
        s.push_str(&format!(
            "<span style=\"color:#{:02x}{:02x}{:02x}\">{mark}</span> {} &#160; ",
            p.colour.0,
            p.colour.1,
            p.colour.2,
            esc(p.name)
        ));
    }
    s.push_str("</p>\n");
    s
}

fn estimates_chart(ctx: &Ctx<'_>, k: usize, ps: &[Part<'_>]) -> Result<String> {
    let name = &ctx.model.targets[k].name;
    let tu = chart_label(ctx.model, name);
    let with_bars = ps.len() - 1;
    let points: Vec<Points> = ps
        .iter()
        .enumerate()
        .map(|(i, p)| Points {
            label: if i == with_bars {
                format!("{} (bar: 95 % interval)", p.name)
            } else {
                p.name.to_string()
            },
            xy: p
                .rows
                .measured
                .iter()
                .zip(&p.rows.estimates)
                .map(|(y, e)| (*y, e.mean))
                .collect(),
            y_err: if i == with_bars {
                p.rows.estimates.iter().map(|e| (e.lo95, e.hi95)).collect()
            } else {
                vec![]
            },
            mark: p.mark,
            colour: p.colour,
        })
        .collect();
    let all = ps.iter().flat_map(|p| {
        p.rows
            .measured
            .iter()
            .copied()
            .chain(p.rows.estimates.iter().map(|e| e.mean))
    });
    let (lo, hi) = padded(all);
    xy_svg(&XyChart {
        title: format!("Estimated against measured, {name}"),
        x_label: format!("measured {tu}"),
        y_label: format!("estimated {tu}"),
        points,
        lines: vec![Line {
            label: Some("estimate = measured".into()),
            xy: vec![(lo, lo), (hi, hi)],
            colour: GREY,
            dashed: false,
        }],
        x_range: Some((lo, hi)),
        y_range: Some((lo, hi)),
        ..Default::default()
    })
}

/// Estimated against measured, one chart per target.
pub(super) fn estimates_section(ctx: &Ctx<'_>) -> Result<String> {
    let mut s = String::from(
        "<p>Each mark is one row: its measured value across, the committee's estimate up. Marks on the grey diagonal are estimated exactly; about 95 % of the bars (central 95 % predictive intervals) should cross it.</p>\n",
    );
    for k in 0..ctx.model.targets.len() {
        let ps = ctx.parts(k);
        if ps.is_empty() {
            s.push_str(&super::no_rows("estimates against measured values"));
            continue;
        }
        s.push_str(&figure(
            &format!("fig-estimates-{}", id_part(&ctx.model.targets[k].name)),
            &estimates_chart(ctx, k, &ps)?,
            &format!("{}: estimated against measured.", ctx.model.targets[k].name),
        ));
    }
    Ok(s)
}

/// Calibration curves with their tables folded away.
pub(super) fn calibration_section(ctx: &Ctx<'_>) -> Result<String> {
    let mut s = String::from(
        "<p>For each nominal level from 10 % to 99 %, the share of rows whose measured value lies inside the central interval of that level. Honest error bars follow the diagonal within the shaded band; below it the error bars are too narrow, above it too wide.</p>\n",
    );
    for (k, t) in ctx.model.targets.iter().enumerate() {
        let ps = ctx.parts(k);
        if ps.is_empty() {
            s.push_str(&super::no_rows("the calibration curve"));
            continue;
        }
        let tid = id_part(&t.name);
        let mut points = Vec::new();
        let mut bands = Vec::new();
        let mut tables = String::new();
        for (i, p) in ps.iter().enumerate() {
            let curve = p.rows.calibration();
            points.push(Points {
                label: p.name.to_string(),
                xy: curve
                    .iter()
                    .map(|c| (100.0 * c.nominal, 100.0 * c.observed))
                    .collect(),
                y_err: vec![],
                mark: p.mark,
                colour: p.colour,
            });
            if i == ps.len() - 1 {
                bands.push(Band {
                    label: format!(
                        "±2 binomial sd for {} rows",
                        curve.first().map_or(0, |c| c.n)
                    ),
                    x_lo_hi: curve
                        .iter()
                        .map(|c| {
                            (
                                100.0 * c.nominal,
                                100.0 * (c.nominal - 2.0 * c.binomial_sd).max(0.0),
                                100.0 * (c.nominal + 2.0 * c.binomial_sd).min(1.0),
                            )
                        })
                        .collect(),
                    colour: PURPLE,
                    opacity: 0.22,
                });
            }
            tables.push_str(&format!(
                "<table id=\"calibration-{tid}-{}\">\n<tr><th>{} nominal %</th><th>observed %</th><th>binomial sd %</th></tr>\n",
                id_part(p.name),
                esc(p.name)
            ));
            for c in &curve {
                tables.push_str(&format!(
                    "<tr data-nominal=\"{}\" data-observed=\"{}\" data-binomial-sd=\"{}\" data-n=\"{}\"><td>{:.0}</td><td>{:.1}</td><td>{:.1}</td></tr>\n",
                    c.nominal, c.observed, c.binomial_sd, c.n,
                    100.0 * c.nominal, 100.0 * c.observed, 100.0 * c.binomial_sd
                ));
            }
            tables.push_str("</table>\n");
        }
        let chart = XyChart {
            title: format!("Calibration curve, {}", t.name),
            x_label: "nominal coverage of the central interval (%)".into(),
            y_label: "observed share of rows inside (%)".into(),
            points,
            bands,
            lines: vec![Line {
                label: Some("honest error bars".into()),
                xy: vec![(0.0, 0.0), (100.0, 100.0)],
                colour: GREY,
                dashed: false,
            }],
            x_range: Some((0.0, 100.0)),
            y_range: Some((0.0, 100.0)),
            ..Default::default()
        };
        s.push_str(&figure(
            &format!("fig-calibration-{tid}"),
            &xy_svg(&chart)?,
            &format!("{}: calibration of the error bars.", t.name),
        ));
        s.push_str(&details(
            &format!("The numbers behind the curve, {}", t.name),
            &tables,
        ));
    }
    Ok(s)
}

fn eval_row(part: &str, e: &Evaluation) -> Vec<String> {
    vec![
        part.to_string(),
        e.n.to_string(),
        fmt(e.rmse),
        fmt(e.mae),
        format!("{:.3}", e.r2),
        format!("{:.3}", e.nlpd),
        format!("{:.1}", 100.0 * e.coverage_68),
        format!("{:.1}", 100.0 * e.coverage_95),
    ]
}

/// The evaluation tables, units in the headings.
pub(super) fn evaluation_section(ctx: &Ctx<'_>) -> String {
    let mut s = String::new();
    if ctx.data_is_training {
        s.push_str("<p class=\"note\">The table given with --data holds the training rows (same fingerprint): this evaluation is optimistic, since the model has seen every row.</p>\n");
    }
    for (k, t) in ctx.model.targets.iter().enumerate() {
        let ps = ctx.parts(k);
        if ps.is_empty() {
            s.push_str(&super::no_rows("the evaluation"));
            continue;
        }
        let u = super::unit_of(ctx.model, &t.name);
        let rows: Vec<Vec<String>> = ps
            .iter()
            .filter_map(|p| p.rows.evaluation().map(|e| eval_row(p.name, &e)))
            .collect();
        s.push_str(&format!("<h3>{}</h3>\n", esc(&t.name)));
        s.push_str(&table(
            &[
                "rows",
                "n",
                &format!("RMSE ({u})"),
                &format!("MAE ({u})"),
                "R²",
                "NLPD (nats per row)",
                "inside ±1 sd (%)",
                "inside ±2 sd (%)",
            ],
            &rows,
            Some(&format!("evaluation-{}", id_part(&t.name))),
        ));
    }
    s.push_str(&details(
        "How to read the table",
        "<p>RMSE, MAE and R² judge the estimates; NLPD (the negative log predictive density, lower is better) and the two coverages judge the error bars: honest ones put about 68 % of rows inside ±1 sd and 95 % inside ±2 sd.</p>",
    ));
    s
}

/// Residuals against every input, as a grid of small charts per target.
pub(super) fn residuals_section(ctx: &Ctx<'_>) -> Result<String> {
    let mut s = String::from("<p>Measured minus estimated against each input: a trend or a funnel shape is structure the model has missed.</p>\n");
    for (k, t) in ctx.model.targets.iter().enumerate() {
        let ps = ctx.parts(k);
        if ps.is_empty() {
            s.push_str(&super::no_rows("residuals"));
            continue;
        }
        let tid = id_part(&t.name);
        let u = super::unit_of(ctx.model, &t.name);
        s.push_str(&format!("<h3>{}</h3>\n", esc(&t.name)));
        s.push_str(&html_legend(&ps));
        s.push_str("<div class=\"grid\">\n");
        for (j, inp) in ctx.model.inputs.iter().enumerate() {
            let points: Vec<Points> = ps
                .iter()
                .map(|p| Points {
                    label: String::new(),
                    xy: p
                        .rows
                        .inputs
                        .iter()
                        .zip(p.rows.measured.iter().zip(&p.rows.estimates))
                        .map(|(x, (y, e))| (x[j], y - e.mean))
                        .collect(),
                    y_err: vec![],
                    mark: p.mark,
                    colour: p.colour,
                })
                .collect();
            let (x0, x1) = padded(points.iter().flat_map(|p| p.xy.iter().map(|v| v.0)));
            let chart = XyChart {
                title: inp.name.clone(),
                x_label: chart_label(ctx.model, &inp.name),
                y_label: format!("residual ({u})"),
                points,
                lines: vec![Line {
                    label: None,
                    xy: vec![(x0, 0.0), (x1, 0.0)],
                    colour: GREY,
                    dashed: false,
                }],
                size: Some((320, 240)),
                ..Default::default()
            };
            s.push_str(&figure(
                &format!("fig-residuals-{tid}-{}", id_part(&inp.name)),
                &xy_svg(&chart)?,
                "",
            ));
        }
        s.push_str("</div>\n");
    }
    Ok(s)
}
