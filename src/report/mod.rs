//! The self-contained HTML report: the model card, every chart as inline
//! SVG, and an evaluation on a table when one is given. No script, no
//! style sheet, font or image is fetched: the file is complete on its own.
//!
//! # Sections (element ids)
//!
//! `caution`, `model-card`, `relevance`, `search`, `evaluation`,
//! `estimates`, `calibration`, `residuals`, `reading`. Each chart is a
//! `<figure>` whose id starts with `fig-`, holding one `<svg>`.
//!
//! # Which rows are plotted
//!
//! Rows of the training table (given separately and checked against the
//! model's fingerprint) are "training rows"; rows of the evaluation table
//! are "held-out rows", unless that table is itself the training data,
//! which the report then says.

pub mod plot;
pub mod spread;
pub mod validation;

use crate::data::Table;
use crate::error::Result;
use crate::explain::{
    data_fingerprint, estimate_rows, input_unit, label, model_card, scale_words, ModelCard,
    TargetRows, RELEVANCE_MEANING,
};
use crate::metrics::Evaluation;
use crate::model::Model;
use plot::{bar_svg, xy_svg, Band, Line, Mark, Points, XyChart, BLUE, GREY, ORANGE, PURPLE};

/// The caution the report opens with.
pub const REPORT_CAUTION: &str = "These are model estimates with error bars, not test results. They support, and never replace, the qualification tests an applicable code requires; local codes and licensed engineers decide.";

/// The section ids, in order.
pub const SECTIONS: [&str; 10] = [
    "caution",
    "model-card",
    "noise",
    "relevance",
    "search",
    "evaluation",
    "estimates",
    "calibration",
    "residuals",
    "reading",
];

/// What goes into a report besides the model.
#[derive(Clone, Copy, Debug, Default)]
pub struct ReportInputs<'a> {
    /// Name of the model file, shown in the title.
    pub model_name: &'a str,
    /// The model's training table (already checked with
    /// [`crate::explain::check_training_data`]).
    pub training: Option<&'a Table>,
    /// A table to evaluate the model on.
    pub data: Option<&'a Table>,
    /// A cross-validation (`mettle validate`) to show in its own section.
    pub validation: Option<&'a crate::validate::Validation>,
}

/// HTML text escaping for element content and attribute values.
pub fn esc(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

/// A name made safe for an element id.
fn id_part(s: &str) -> String {
    s.chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() {
                c.to_ascii_lowercase()
            } else {
                '-'
            }
        })
        .collect()
}

fn fmt(v: f64) -> String {
    if !v.is_finite() {
        return v.to_string();
    }
    let a = v.abs();
    if a != 0.0 && !(1e-3..1e6).contains(&a) {
        format!("{v:.3e}")
    } else if a >= 100.0 {
        format!("{v:.1}")
    } else {
        format!("{v:.4}")
    }
}

/// One group of rows on the charts.
struct Part<'a> {
    name: &'static str,
    mark: Mark,
    colour: plotters::style::RGBColor,
    rows: &'a TargetRows,
}

fn figure(id: &str, svg: &str, caption: &str) -> String {
    format!(
        "<figure id=\"{}\">\n{svg}\n<figcaption>{}</figcaption>\n</figure>\n",
        esc(id),
        esc(caption)
    )
}

fn table(head: &[&str], rows: &[Vec<String>], id: Option<&str>) -> String {
    let mut s = match id {
        Some(i) => format!("<table id=\"{}\">\n<tr>", esc(i)),
        None => "<table>\n<tr>".to_string(),
    };
    for h in head {
        s.push_str(&format!("<th>{}</th>", esc(h)));
    }
    s.push_str("</tr>\n");
    for r in rows {
        s.push_str("<tr>");
        for c in r {
            s.push_str(&format!("<td>{}</td>", esc(c)));
        }
        s.push_str("</tr>\n");
    }
    s.push_str("</table>\n");
    s
}

const STYLE: &str = "body{font-family:sans-serif;color:#26262b;max-width:60em;margin:2em auto;padding:0 1em;line-height:1.45}\
h1{font-size:1.6em}h2{border-bottom:2px solid #1f5fa8;padding-bottom:.2em;margin-top:2em}\
.caution{border-left:6px solid #e07b14;background:#fdf3e7;padding:.8em 1em;font-weight:bold}\
table{border-collapse:collapse;margin:.8em 0}td,th{border:1px solid #d0d0d8;padding:.25em .6em;text-align:right}\
th{background:#eef2f8}td:first-child,th:first-child{text-align:left}\
figure{margin:1.2em 0}figcaption{font-size:.9em;color:#4a4a55;max-width:640px}.note{color:#4a4a55}";

fn card_section(card: &ModelCard) -> String {
    let mut s = String::from("<section id=\"model-card\">\n<h2>Model card</h2>\n");
    s.push_str(&format!(
        "<p>Trained by mettle {} on <b>{}</b>: {} rows, fingerprint <code>{}</code>, seed {}.</p>\n",
        esc(&card.tool_version),
        esc(&card.data_file),
        card.n_rows,
        esc(&card.data_sha256),
        card.seed
    ));
    let rows: Vec<Vec<String>> = card
        .inputs
        .iter()
        .map(|i| {
            vec![
                i.name.clone(),
                i.unit.clone().unwrap_or_else(|| "as in the file".into()),
                fmt(i.min),
                fmt(i.max),
                if i.log_scale { "log" } else { "linear" }.into(),
            ]
        })
        .collect();
    s.push_str("<h3>Inputs</h3>\n");
    s.push_str(&table(
        &["input", "unit", "min", "max", "seen by the networks"],
        &rows,
        Some("card-inputs"),
    ));
    for (name, why) in &card.set_aside {
        s.push_str(&format!(
            "<p class=\"note\">Set aside: {} ({}).</p>\n",
            esc(name),
            esc(why)
        ));
    }
    for t in &card.targets {
        let unit = t
            .unit
            .clone()
            .unwrap_or_else(|| "unit of the training file".into());
        s.push_str(&format!(
            "<h3>Target {}</h3>\n<p>{} rows ({} left out without a value), range {} to {} {}, learnt {}.</p>\n",
            esc(&t.name), t.n_rows, t.n_missing, fmt(t.min), fmt(t.max), esc(&unit), esc(&scale_words(&t.scale))
        ));
        let noise = if t.noise_sd_range.0.to_bits() == t.noise_sd_range.1.to_bits() {
            format!("{} {}", fmt(t.noise_sd), unit)
        } else {
            format!(
                "typically {} {}, from {} to {} over the training rows",
                fmt(t.noise_sd),
                unit,
                fmt(t.noise_sd_range.0),
                fmt(t.noise_sd_range.1)
            )
        };
        s.push_str(&format!(
            "<p>Fitted noise sd: {} ({}).</p>\n",
            esc(&noise),
            esc(&t.noise_basis)
        ));
        s.push_str(&match &t.replicate_sd {
            Some(r) => format!(
                "<p>Measured replicate scatter: pooled sd {} {} over {} groups of repeat tests ({} degrees of freedom). A noise sd well below it points to overfitting; well above, to something the inputs do not capture.</p>\n",
                fmt(r.pooled_sd), esc(&unit), r.n_groups, r.dof
            ),
            None => "<p>Measured replicate scatter: the training rows hold no repeat tests (no two rows with identical inputs).</p>\n".into(),
        });
        let rows: Vec<Vec<String>> = t
            .members
            .iter()
            .map(|m| {
                vec![
                    m.n_hidden.to_string(),
                    m.restart.to_string(),
                    fmt(m.log_evidence),
                    fmt(m.heldout_nlpd),
                    fmt(m.gamma),
                    m.n_weights.to_string(),
                    if m.varying_noise {
                        "varies"
                    } else {
                        "constant"
                    }
                    .into(),
                ]
            })
            .collect();
        s.push_str(&table(
            &[
                "hidden units",
                "restart",
                "log evidence",
                "held-out NLPD",
                "γ",
                "weights",
                "noise",
            ],
            &rows,
            Some(&format!("card-members-{}", id_part(&t.name))),
        ));
        if let Some(k) = &t.kriging {
            s.push_str(&format!("<p>{}</p>\n", esc(&k.sentence())));
        }
        if let Some(k) = &t.gross_errors {
            s.push_str(&format!("<p>{}</p>\n", esc(&k.sentence())));
        }
        for n in &t.fit_notes {
            s.push_str(&format!("<p class=\"note\">Note: {}</p>\n", esc(n)));
        }
    }
    s.push_str("</section>\n");
    s
}

/// 95 % interval of a standard deviation `sd` estimated with `dof`
/// degrees of freedom from normal data: `[sd·√(ν/χ²₀.₉₇₅,ν), sd·√(ν/χ²₀.₀₂₅,ν)]`
/// (the textbook chi-square interval for a variance, e.g. NIST/SEMATECH
/// e-Handbook of Statistical Methods, §7.2.3.1).
pub fn sd_interval95(sd: f64, dof: usize) -> Option<(f64, f64)> {
    use statrs::distribution::{ChiSquared, ContinuousCDF};
    let nu = dof as f64;
    let chi = ChiSquared::new(nu).ok()?;
    Some((
        sd * (nu / chi.inverse_cdf(0.975)).sqrt(),
        sd * (nu / chi.inverse_cdf(0.025)).sqrt(),
    ))
}

/// The fitted noise sd along the most relevant input, with the replicate
/// scatter of each bin's repeat tests beside it.
fn noise_section(card: &ModelCard) -> Result<String> {
    let mut s = String::from(
        "<section id=\"noise\">\n<h2>Noise along the most relevant input</h2>\n\
<p>The training rows sorted by the most relevant input and cut into bins of about equal count. \
The line is the median fitted noise sd of each bin (the scatter the model expects of repeat \
tests there); the triangles are the pooled sd of the repeat tests actually found in the bin, \
with their 95 % chi-square interval. Where the line runs well below the triangles the model \
claims less scatter than repeat tests show; well above, something the inputs do not capture \
adds to the scatter.</p>\n",
    );
    for t in &card.targets {
        let Some(p) = &t.noise_profile else {
            s.push_str(&format!(
                "<p>{}: this model file does not record a noise profile (written before it existed).</p>\n",
                esc(&t.name)
            ));
            continue;
        };
        let unit = t
            .unit
            .clone()
            .unwrap_or_else(|| "unit of the training file".into());
        let mut line = Vec::new();
        for b in &p.bins {
            line.push((b.lo, b.noise_sd));
            line.push((b.hi, b.noise_sd));
        }
        let (mut xy, mut err) = (Vec::new(), Vec::new());
        for b in &p.bins {
            if let Some(r) = &b.replicates {
                xy.push((0.5 * (b.lo + b.hi), r.pooled_sd));
                err.push(sd_interval95(r.pooled_sd, r.dof).unwrap_or((r.pooled_sd, r.pooled_sd)));
            }
        }
        let chart = XyChart {
            title: format!("Noise sd of {} along {}", t.name, p.input),
            x_label: match p.input_unit.as_deref() {
                Some(u) if !u.is_empty() => format!("{} ({u})", p.input),
                _ => p.input.clone(),
            },
            y_label: format!("noise sd ({unit})"),
            lines: vec![Line {
                label: Some("fitted noise sd (median of the bin)".into()),
                xy: line,
                colour: BLUE,
            }],
            points: if xy.is_empty() {
                vec![]
            } else {
                vec![Points {
                    label: "replicate sd (95 % interval)".into(),
                    xy,
                    y_err: err,
                    mark: Mark::Triangle,
                    colour: ORANGE,
                }]
            },
            ..Default::default()
        };
        s.push_str(&figure(
            &format!("fig-noise-{}", id_part(&t.name)),
            &xy_svg(&chart)?,
            &format!(
                "Fitted noise sd of {} along {}, bin by bin{}.",
                t.name,
                p.input,
                if p.bins.iter().any(|b| b.replicates.is_some()) {
                    ", with the repeat tests' pooled sd"
                } else {
                    "; the training rows hold no repeat tests to compare with"
                }
            ),
        ));
        let rows: Vec<Vec<String>> = p
            .bins
            .iter()
            .map(|b| {
                vec![
                    format!("{} to {}", fmt(b.lo), fmt(b.hi)),
                    b.n_rows.to_string(),
                    fmt(b.noise_sd),
                    b.replicates.as_ref().map_or("—".into(), |r| {
                        format!("{} ({} dof)", fmt(r.pooled_sd), r.dof)
                    }),
                ]
            })
            .collect();
        s.push_str(&table(
            &[
                &p.input,
                "rows",
                &format!("noise sd ({unit})"),
                &format!("replicate sd ({unit})"),
            ],
            &rows,
            Some(&format!("noise-profile-{}", id_part(&t.name))),
        ));
    }
    s.push_str("</section>\n");
    Ok(s)
}

fn relevance_section(card: &ModelCard) -> Result<String> {
    let mut s = format!(
        "<section id=\"relevance\">\n<h2>Input relevance</h2>\n<p>{}</p>\n",
        esc(RELEVANCE_MEANING)
    );
    for t in &card.targets {
        match &t.relevance {
            Some(r) => {
                let ranked = r.ranked();
                let names: Vec<String> = ranked.iter().map(|p| p.0.clone()).collect();
                let values: Vec<f64> = ranked.iter().map(|p| p.1).collect();
                let svg = bar_svg(
                    &format!("Relevance of each input for {}", t.name),
                    "relevance σ_w / largest σ_w (dimensionless)",
                    &names,
                    &values,
                    1.05,
                )?;
                s.push_str(&figure(
                    &format!("fig-relevance-{}", id_part(&t.name)),
                    &svg,
                    "Bars: each input's prior weight size α^−½, averaged over the members, most relevant input = 1.",
                ));
                if let Some(r) = &t.relevance_range {
                    s.push_str(&spread::relevance_range_table(r, "the committee members"));
                }
            }
            None => s.push_str(&format!("<p>{}</p>\n", esc(&t.relevance_note))),
        }
    }
    s.push_str("</section>\n");
    Ok(s)
}

fn search_section(model: &Model, card: &ModelCard) -> Result<String> {
    let mut s = String::from("<section id=\"search\">\n<h2>How the committee was chosen</h2>\n");
    for (t, tc) in model.targets.iter().zip(&card.targets) {
        let c = &t.committee;
        let restarts = c.candidates.iter().map(|k| k.restart).max().unwrap_or(0) as f64;
        let shift = |r: usize| 0.08 * (r as f64 - restarts / 2.0);
        let ok: Vec<(f64, f64)> = c
            .candidates
            .iter()
            .filter_map(|k| {
                k.heldout_nlpd
                    .map(|v| (k.n_hidden as f64 + shift(k.restart), v))
            })
            .collect();
        let failed = c.candidates.len() - ok.len();
        let members: Vec<(f64, f64)> = c
            .members
            .iter()
            .map(|m| (m.n_hidden as f64 + shift(m.restart), m.heldout_nlpd))
            .collect();
        let chart = XyChart {
            title: format!("Held-out NLPD of every candidate, {}", t.name),
            x_label: "hidden units (restarts side by side)".into(),
            y_label: "held-out NLPD (nats per point; lower is better)".into(),
            points: vec![
                Points {
                    label: "candidate".into(),
                    xy: ok,
                    y_err: vec![],
                    mark: Mark::Circle,
                    colour: BLUE,
                },
                Points {
                    label: "committee member".into(),
                    xy: members,
                    y_err: vec![],
                    mark: Mark::Triangle,
                    colour: ORANGE,
                },
            ],
            ..Default::default()
        };
        s.push_str(&figure(
            &format!("fig-candidates-{}", id_part(&t.name)),
            &xy_svg(&chart)?,
            &format!(
                "Each mark is one candidate network trained on the search's training part ({} rows) and scored on its held-out part ({} rows); triangles are the members chosen. {failed} candidate(s) failed and are not shown.",
                tc.search_rows.0, tc.search_rows.1
            ),
        ));
        let by_size: Vec<(f64, f64)> = c
            .selection
            .nlpd_by_size
            .iter()
            .enumerate()
            .map(|(i, v)| ((i + 1) as f64, *v))
            .collect();
        let chosen: Vec<(f64, f64)> = by_size
            .get(c.selection.n_members.saturating_sub(1))
            .copied()
            .into_iter()
            .collect();
        let chart = XyChart {
            title: format!("Committee NLPD against committee size, {}", t.name),
            x_label: "committee size (best candidates first)".into(),
            y_label: "held-out NLPD (nats per point)".into(),
            lines: vec![Line {
                label: Some("committee of the best n".into()),
                xy: by_size.clone(),
                colour: BLUE,
            }],
            points: vec![
                Points {
                    label: "size n".into(),
                    xy: by_size,
                    y_err: vec![],
                    mark: Mark::Circle,
                    colour: BLUE,
                },
                Points {
                    label: "chosen size".into(),
                    xy: chosen,
                    y_err: vec![],
                    mark: Mark::Triangle,
                    colour: ORANGE,
                },
            ],
            ..Default::default()
        };
        s.push_str(&figure(
            &format!("fig-committee-size-{}", id_part(&t.name)),
            &xy_svg(&chart)?,
            "The held-out NLPD of the committee made of the n best candidates; the size with the lowest value is chosen.",
        ));
    }
    s.push_str("</section>\n");
    Ok(s)
}

fn eval_row(part: &str, e: &Evaluation) -> Vec<String> {
    vec![
        part.to_string(),
        e.n.to_string(),
        fmt(e.rmse),
        fmt(e.mae),
        format!("{:.4}", e.r2),
        format!("{:.4}", e.nlpd),
        format!("{:.3}", e.coverage_68),
        format!("{:.3}", e.coverage_95),
    ]
}

/// Parts of one target: training rows and held-out rows.
fn parts<'a>(
    training: Option<&'a TargetRows>,
    heldout: Option<(&'a TargetRows, bool)>,
) -> Vec<Part<'a>> {
    let mut out = Vec::new();
    if let Some(r) = training {
        out.push(Part {
            name: "training rows",
            mark: Mark::Circle,
            colour: BLUE,
            rows: r,
        });
    }
    if let Some((r, is_training)) = heldout {
        out.push(Part {
            name: if is_training {
                "evaluation table (= training rows)"
            } else {
                "held-out rows"
            },
            mark: Mark::Triangle,
            colour: ORANGE,
            rows: r,
        });
    }
    out
}

fn no_rows(what: &str) -> String {
    format!("<p class=\"note\">No table was given: run <code>mettle report</code> with --data (a table with measured values) and/or --training-data to see {what}.</p>\n")
}

/// The report as one HTML document.
///
/// # Errors
/// As [`estimate_rows`] reading either table; [`crate::Error::Plot`].
pub fn report_html(model: &Model, inputs: &ReportInputs<'_>) -> Result<String> {
    let card = model_card(model);
    let training = inputs
        .training
        .map(|t| estimate_rows(model, t))
        .transpose()?;
    let heldout = inputs.data.map(|t| estimate_rows(model, t)).transpose()?;
    let data_is_training = match inputs.data {
        Some(t) => data_fingerprint(model, t)? == model.training.data_sha256,
        None => false,
    };
    let mut h =
        String::from("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\"/>\n");
    h.push_str(&format!(
        "<title>mettle report: {}</title>\n<style>{STYLE}</style>\n</head>\n<body>\n",
        esc(inputs.model_name)
    ));
    h.push_str(&format!(
        "<h1>mettle report: {}</h1>\n",
        esc(inputs.model_name)
    ));
    h.push_str(&format!(
        "<section id=\"caution\">\n<p class=\"caution\">Caution. {}</p>\n</section>\n",
        esc(REPORT_CAUTION)
    ));
    h.push_str(&card_section(&card));
    h.push_str(&noise_section(&card)?);
    h.push_str(&relevance_section(&card)?);
    h.push_str(&search_section(model, &card)?);

    let mut ev = String::from("<section id=\"evaluation\">\n<h2>Evaluation</h2>\n");
    let mut est = String::from("<section id=\"estimates\">\n<h2>Estimated against measured</h2>\n");
    let mut cal =
        String::from("<section id=\"calibration\">\n<h2>Calibration of the error bars</h2>\n");
    let mut res =
        String::from("<section id=\"residuals\">\n<h2>Residuals against each input</h2>\n");
    if data_is_training {
        ev.push_str("<p class=\"note\">The table given with --data holds the training rows (same fingerprint): this evaluation is optimistic, since the model has seen every row.</p>\n");
    }
    for (k, (t, tc)) in model.targets.iter().zip(&card.targets).enumerate() {
        let tid = id_part(&t.name);
        let tu = label(&t.name, model.target_unit(&t.name, false));
        let ps = parts(
            training.as_ref().map(|v| &v[k]),
            heldout.as_ref().map(|v| (&v[k], data_is_training)),
        );
        let ps: Vec<Part<'_>> = ps.into_iter().filter(|p| !p.rows.rows.is_empty()).collect();
        if ps.is_empty() {
            ev.push_str(&no_rows("the evaluation"));
            est.push_str(&no_rows("estimates against measured values"));
            cal.push_str(&no_rows("the calibration curve"));
            res.push_str(&no_rows("residuals"));
            continue;
        }
        // evaluation table
        let rows: Vec<Vec<String>> = ps
            .iter()
            .filter_map(|p| p.rows.evaluation().map(|e| eval_row(p.name, &e)))
            .collect();
        ev.push_str(&format!("<h3>{}</h3>\n", esc(&tc.name)));
        ev.push_str(&table(
            &[
                "rows",
                "n",
                "rmse",
                "mae",
                "r2",
                "nlpd",
                "coverage_68",
                "coverage_95",
            ],
            &rows,
            Some(&format!("evaluation-{tid}")),
        ));
        ev.push_str("<p class=\"note\">rmse, mae and r2 judge the estimates; nlpd (nats per point, lower is better) and the coverages judge the error bars: honest ones put about 68 % of rows inside ±1 sd and 95 % inside ±2 sd.</p>\n");
        // estimated against measured
        let points: Vec<Points> = ps
            .iter()
            .map(|p| Points {
                label: format!("{} (95 % interval)", p.name),
                xy: p
                    .rows
                    .measured
                    .iter()
                    .zip(&p.rows.estimates)
                    .map(|(y, e)| (*y, e.mean))
                    .collect(),
                y_err: p.rows.estimates.iter().map(|e| (e.lo95, e.hi95)).collect(),
                mark: p.mark,
                colour: p.colour,
            })
            .collect();
        let all = ps.iter().flat_map(|p| {
            p.rows
                .measured
                .iter()
                .copied()
                .chain(p.rows.estimates.iter().flat_map(|e| [e.lo95, e.hi95]))
        });
        let (lo, hi) = plot::padded(all);
        let chart = XyChart {
            title: format!("Estimated against measured, {}", t.name),
            x_label: format!("measured {tu}"),
            y_label: format!("estimated {tu}"),
            points,
            lines: vec![Line {
                label: Some("estimate = measured".into()),
                xy: vec![(lo, lo), (hi, hi)],
                colour: GREY,
            }],
            x_range: Some((lo, hi)),
            y_range: Some((lo, hi)),
            ..Default::default()
        };
        est.push_str(&figure(
            &format!("fig-estimates-{tid}"),
            &xy_svg(&chart)?,
            "Each mark is one row: its measured value across, the committee's estimate up, the bar its central 95 % predictive interval. Marks on the grey diagonal are estimated exactly; about 95 % of bars should cross it.",
        ));
        // calibration
        let mut cal_points = Vec::new();
        let mut bands = Vec::new();
        let mut cal_tables = String::new();
        for (i, p) in ps.iter().enumerate() {
            let curve = p.rows.calibration();
            cal_points.push(Points {
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
                });
            }
            cal_tables.push_str(&format!(
                "<table id=\"calibration-{tid}-{}\">\n<tr><th>{} nominal %</th><th>observed %</th><th>binomial sd %</th></tr>\n",
                id_part(p.name),
                esc(p.name)
            ));
            for c in &curve {
                cal_tables.push_str(&format!(
                    "<tr data-nominal=\"{}\" data-observed=\"{}\" data-binomial-sd=\"{}\" data-n=\"{}\"><td>{:.0}</td><td>{:.1}</td><td>{:.1}</td></tr>\n",
                    c.nominal, c.observed, c.binomial_sd, c.n,
                    100.0 * c.nominal, 100.0 * c.observed, 100.0 * c.binomial_sd
                ));
            }
            cal_tables.push_str("</table>\n");
        }
        let chart = XyChart {
            title: format!("Calibration curve, {}", t.name),
            x_label: "nominal coverage of the central interval (%)".into(),
            y_label: "observed share of rows inside (%)".into(),
            points: cal_points,
            bands,
            lines: vec![Line {
                label: Some("honest error bars".into()),
                xy: vec![(0.0, 0.0), (100.0, 100.0)],
                colour: GREY,
            }],
            x_range: Some((0.0, 100.0)),
            y_range: Some((0.0, 100.0)),
        };
        cal.push_str(&figure(
            &format!("fig-calibration-{tid}"),
            &xy_svg(&chart)?,
            "For each nominal level from 10 % to 99 %, the share of rows whose measured value lies inside the central interval of that level. Honest error bars follow the diagonal within the shaded band; a curve below it means the error bars are too narrow, above it too wide.",
        ));
        cal.push_str(&cal_tables);
        // residuals
        for (j, inp) in model.inputs.iter().enumerate() {
            let points: Vec<Points> = ps
                .iter()
                .map(|p| Points {
                    label: p.name.to_string(),
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
            let (x0, x1) = plot::padded(points.iter().flat_map(|p| p.xy.iter().map(|v| v.0)));
            let chart = XyChart {
                title: format!("Residuals of {} against {}", t.name, inp.name),
                x_label: label(&inp.name, input_unit(model, &inp.name)),
                y_label: format!("measured − estimated {tu}"),
                points,
                lines: vec![Line {
                    label: None,
                    xy: vec![(x0, 0.0), (x1, 0.0)],
                    colour: GREY,
                }],
                x_range: Some((x0, x1)),
                ..Default::default()
            };
            res.push_str(&figure(
                &format!("fig-residuals-{tid}-{}", id_part(&inp.name)),
                &xy_svg(&chart)?,
                &format!("Measured minus estimated {} against {}: a trend or a funnel shape is structure the model has missed.", t.name, inp.name),
            ));
        }
    }
    for s in [&mut ev, &mut est, &mut cal, &mut res] {
        s.push_str("</section>\n");
    }
    h.push_str(&ev);
    h.push_str(&est);
    h.push_str(&cal);
    h.push_str(&res);
    if let Some(v) = inputs.validation {
        h.push_str(&validation::section(v)?);
    }
    h.push_str(READING);
    h.push_str("</body>\n</html>\n");
    Ok(h)
}

const READING: &str = "<section id=\"reading\">\n<h2>What each view tells you</h2>\n<ul>\n\
<li><b>Noise along the most relevant input</b>: where the scatter of the tests is large or small, and whether the model's noise level agrees with the repeat tests bin by bin.</li>\n\
<li><b>Model card</b>: what the model was trained on (the fingerprint identifies the exact rows), the ranges it can vouch for, and how noisy it found the data. Compare the fitted noise sd with the measured replicate scatter: the model cannot honestly claim less scatter than repeat tests show.</li>\n\
<li><b>Relevance</b>: which inputs the networks lean on. Use it to question the data (an input expected to matter that scores low may vary too little in the table), not as a causal effect.</li>\n\
<li><b>Candidates and committee size</b>: whether the search was wide enough (the best candidates should not all sit at the largest hidden-unit count) and how much averaging several networks helped.</li>\n\
<li><b>Evaluation</b>: accuracy (rmse, mae, r2) and honesty of the error bars (nlpd, coverages) on the rows given.</li>\n\
<li><b>Estimated against measured</b>: where the model is accurate and where its error bars widen; held-out rows far from the diagonal with narrow bars are the warning sign.</li>\n\
<li><b>Calibration</b>: whether an interval said to hold p % of outcomes does; inside the band the error bars can be trusted at every level.</li>\n\
<li><b>Residuals against each input</b>: trends or funnels show structure or noise the model has not captured, and the input where it happens.</li>\n\
</ul>\n</section>\n";

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn escaping_and_ids() {
        assert_eq!(esc("a<b & \"c\">"), "a&lt;b &amp; &quot;c&quot;&gt;");
        assert_eq!(id_part("UTS_mpa 2"), "uts-mpa-2");
    }

    #[test]
    fn sd_interval_matches_the_chi_square_table() {
        // critical values of χ² with 10 degrees of freedom: 3.247 (2.5 %)
        // and 20.483 (97.5 %), NIST/SEMATECH e-Handbook §1.3.6.7.4 (values
        // from memory of that table): s = 1 gives √(10/20.483) to √(10/3.247)
        let (lo, hi) = sd_interval95(1.0, 10).expect("interval");
        assert!((lo - (10.0_f64 / 20.483).sqrt()).abs() < 1e-4, "{lo}");
        assert!((hi - (10.0_f64 / 3.247).sqrt()).abs() < 1e-3, "{hi}");
        assert!(sd_interval95(1.0, 0).is_none());
    }
}
