//! The sections about the model itself: the model card, the noise along
//! the most relevant input, input relevance and how the committee was
//! chosen.

use super::{esc, figure, fmt, id_part, table};
use crate::chart::{bar_svg, xy_svg, Line, Mark, Points, XyChart, BLUE, ORANGE};
use crate::error::Result;
use crate::explain::{scale_words, ModelCard, RELEVANCE_MEANING};
use crate::model::Model;

pub(super) fn card_section(card: &ModelCard) -> String {
    let mut s = String::new();
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
        if let Some((rule, parts)) = &t.partitions {
            let each: Vec<String> = parts
                .iter()
                .map(|p| {
                    format!(
                        "partition {}: {} members, held-out NLPD {}, {} noise{}",
                        p.partition,
                        p.n_members,
                        fmt(p.heldout_nlpd),
                        if p.noise_varies {
                            "varying"
                        } else {
                            "constant"
                        },
                        if p.kriged { ", residuals kriged" } else { "" }
                    )
                })
                .collect();
            s.push_str(&format!(
                "<p>The estimates average {} whole trainings (partitions, seeds seed + 0, seed + 1, …), each with its own held-out part, noise model, residual process and gross errors; variance rule '{}' ({}). {}. The members below are all partitions'; the search chart and the process and gross-error figures are partition 1's.</p>\n",
                parts.len(),
                esc(rule),
                match rule.as_str() {
                    "mixture" => "the partitions' mean variance plus the spread of their means",
                    "within" => "the partitions' mean variance",
                    _ => "the partitions' model errors taken as correlated with the stated rho, plus the spread of their means beyond what that correlation expects",
                },
                esc(&each.join("; "))
            ));
        }
        let several = t.partitions.is_some();
        let rows: Vec<Vec<String>> = t
            .members
            .iter()
            .map(|m| {
                let mut row = vec![
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
                ];
                if let (true, Some(p)) = (several, m.partition) {
                    row.push(p.to_string());
                }
                row
            })
            .collect();
        let mut head = vec![
            "hidden units",
            "restart",
            "log evidence",
            "held-out NLPD",
            "γ",
            "weights",
            "noise",
        ];
        if several {
            head.push("partition");
        }
        s.push_str(&table(
            &head,
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
pub(super) fn noise_section(model: &Model, card: &ModelCard) -> Result<String> {
    let mut s = super::details(
        "How the noise chart is made",
        "<p>The training rows sorted by the most relevant input and cut into bins of about equal count. \
The line is the median fitted noise sd of each bin (the scatter the model expects of repeat \
tests there), broken where a stretch of the input holds no rows; the triangles are the pooled sd \
of the repeat tests found in the bin, with their 95 % chi-square interval. Where the line runs \
well below the triangles the model claims less scatter than repeat tests show; well above, \
something the inputs do not capture adds to the scatter.</p>\n",
    );
    for t in &card.targets {
        let Some(p) = &t.noise_profile else {
            s.push_str(&format!(
                "<p>{}: this model file does not record a noise profile (written before it existed).</p>\n",
                esc(&t.name)
            ));
            continue;
        };
        let unit = super::unit_of(model, &t.name);
        // a step per bin; a gap wider than a quarter of the median bin's
        // width holds no rows, and the line breaks there
        let mut widths: Vec<f64> = p.bins.iter().map(|b| b.hi - b.lo).collect();
        widths.sort_by(f64::total_cmp);
        let typical = widths.get(widths.len() / 2).copied().unwrap_or(0.0);
        let mut line = Vec::new();
        for (i, b) in p.bins.iter().enumerate() {
            if i > 0 && b.lo - p.bins[i - 1].hi > 0.25 * typical {
                line.push((f64::NAN, f64::NAN));
            }
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
                _ => crate::explain::chart_label(model, &p.input),
            },
            y_label: format!("noise sd ({unit})"),
            lines: vec![Line {
                label: Some("fitted noise sd (median of the bin)".into()),
                xy: line,
                colour: BLUE,
                dashed: false,
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
        s.push_str(&super::details(
            &format!("Bin by bin, {}", t.name),
            &table(
                &[
                    &p.input,
                    "rows",
                    &format!("noise sd ({unit})"),
                    &format!("replicate sd ({unit})"),
                ],
                &rows,
                Some(&format!("noise-profile-{}", id_part(&t.name))),
            ),
        ));
    }
    Ok(s)
}

pub(super) fn relevance_section(card: &ModelCard) -> Result<String> {
    let mut s = format!("<p>{}</p>\n", esc(RELEVANCE_MEANING));
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
                    s.push_str(&super::spread::relevance_range_table(
                        r,
                        "the committee members",
                    ));
                }
            }
            None => s.push_str(&format!("<p>{}</p>\n", esc(&t.relevance_note))),
        }
    }
    Ok(s)
}

pub(super) fn search_section(model: &Model, card: &ModelCard) -> Result<String> {
    let mut s = String::new();
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
        let failed = c.candidates.iter().filter(|k| k.failure.is_some()).count();
        let stopped = c.candidates.iter().filter(|k| k.stopped.is_some()).count();
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
                "Each mark is one candidate network trained on the search's training part ({} rows) and scored on its held-out part ({} rows); triangles are the members chosen. {failed} candidate(s) failed and {stopped} were stopped early by the search (successive halving, scored on fewer cycles); neither is shown.",
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
                dashed: false,
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
    Ok(s)
}
