//! The self-contained HTML report: a summary first, a table of contents,
//! the most telling charts (estimated against measured, calibration, the
//! effect of each main input), then the evaluation, residuals as small
//! multiples, the noise, relevance, the search and the model card. Long
//! explanations are folded in `<details>`. No script, no style sheet,
//! font or image is fetched: the file is complete on its own, and a print
//! style sheet lays it out for paper.
//!
//! # Sections (element ids)
//!
//! [`SECTIONS`], in order. Each chart is a `<figure>` whose id starts with
//! `fig-`, holding one `<svg>`. A new section is one more [`Section`] in
//! the list [`report_html`] assembles: the table of contents follows it.
//!
//! # Which rows are plotted
//!
//! Rows of the training table (given separately and checked against the
//! model's fingerprint) are "training rows"; rows of the evaluation table
//! are "held-out rows", unless that table is itself the training data,
//! which the report then says.

mod effects;
mod model_sections;
mod rows;
pub mod spread;
mod summary;
pub mod validation;

pub use model_sections::sd_interval95;
pub use summary::calibration_verdict;

use crate::chart::{inline, Mark, RGBColor, BLUE, ORANGE};
use crate::data::Table;
use crate::error::Result;
use crate::explain::{
    chart_unit, data_fingerprint, estimate_rows, model_card, ModelCard, TargetRows,
};
use crate::model::Model;

/// The caution the report opens with.
pub const REPORT_CAUTION: &str = "These are model estimates with error bars, not test results. They support, and never replace, the qualification tests an applicable code requires; local codes and licensed engineers decide.";

/// The section ids, in order.
pub const SECTIONS: [&str; 13] = [
    "caution",
    "summary",
    "contents",
    "estimates",
    "calibration",
    "effects",
    "evaluation",
    "residuals",
    "noise",
    "relevance",
    "search",
    "model-card",
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

/// One section of the report: element id, heading, body.
#[derive(Clone, Debug, PartialEq)]
pub struct Section {
    /// Element id (also the table of contents' anchor).
    pub id: String,
    /// Heading.
    pub title: String,
    /// HTML inside the section, after the heading; or, when `whole`, the
    /// whole `<section>` element already (with this id and heading).
    pub body: String,
    /// `body` is the whole section element.
    pub whole: bool,
}

impl Section {
    fn new(id: &str, title: &str, body: String) -> Section {
        Section {
            id: id.into(),
            title: title.into(),
            body,
            whole: false,
        }
    }

    fn html(&self) -> String {
        if self.whole {
            return self.body.clone();
        }
        format!(
            "<section id=\"{}\">\n<h2>{}</h2>\n{}</section>\n",
            esc(&self.id),
            esc(&self.title),
            self.body
        )
    }
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

/// The unit symbol of a target or input for text, or words saying it is
/// the training file's.
fn unit_of(model: &Model, name: &str) -> String {
    match chart_unit(model, name) {
        Some(u) if u.symbol() != "1" => u.symbol().to_string(),
        Some(_) => "dimensionless".into(),
        None => "unit of the training file".into(),
    }
}

/// One group of rows on the charts.
struct Part<'a> {
    name: &'static str,
    mark: Mark,
    colour: RGBColor,
    rows: &'a TargetRows,
}

/// What every section draws from.
struct Ctx<'a> {
    model: &'a Model,
    card: ModelCard,
    training: Option<Vec<TargetRows>>,
    heldout: Option<Vec<TargetRows>>,
    data_is_training: bool,
    /// The training table, else the evaluation table.
    table: Option<&'a Table>,
}

impl Ctx<'_> {
    /// The groups of rows with values for target `k`: training rows, then
    /// held-out rows.
    fn parts(&self, k: usize) -> Vec<Part<'_>> {
        let mut out = Vec::new();
        if let Some(r) = self.training.as_ref().map(|v| &v[k]) {
            out.push(Part {
                name: "training rows",
                mark: Mark::Circle,
                colour: BLUE,
                rows: r,
            });
        }
        if let Some(r) = self.heldout.as_ref().map(|v| &v[k]) {
            out.push(Part {
                name: if self.data_is_training {
                    "evaluation table (= training rows)"
                } else {
                    "held-out rows"
                },
                mark: Mark::Triangle,
                colour: ORANGE,
                rows: r,
            });
        }
        out.retain(|p| !p.rows.rows.is_empty());
        out
    }
}

fn figure(id: &str, svg: &str, caption: &str) -> String {
    let caption = if caption.is_empty() {
        String::new()
    } else {
        format!("<figcaption>{}</figcaption>\n", esc(caption))
    };
    format!(
        "<figure id=\"{}\">\n{}{caption}</figure>\n",
        esc(id),
        inline(svg)
    )
}

/// Text folded away under a one-line summary.
fn details(summary: &str, html: &str) -> String {
    format!(
        "<details><summary>{}</summary>\n{html}</details>\n",
        esc(summary)
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

const STYLE: &str = "body{font-family:system-ui,sans-serif;color:#26262b;max-width:64em;margin:2em auto;padding:0 1em;line-height:1.45}\
h1{font-size:1.6em;margin-bottom:.2em}h2{border-bottom:2px solid #0072b2;padding-bottom:.2em;margin-top:2em}\
.caution{border-left:6px solid #e69f00;background:#fdf5e6;padding:.8em 1em;font-weight:bold}\
table{border-collapse:collapse;margin:.8em 0}td,th{border:1px solid #d0d0d8;padding:.25em .6em;text-align:right}\
th{background:#eef2f8}td:first-child,th:first-child{text-align:left}\
#summary-table td{text-align:left}\
figure{margin:1em 0}figcaption{font-size:.9em;color:#4a4a55;max-width:640px}.note{color:#4a4a55}\
svg{max-width:100%;height:auto}\
.grid{display:grid;grid-template-columns:repeat(auto-fill,minmax(300px,1fr));gap:.4em 1em}.grid figure{margin:0}\
.legend{margin:.3em 0;font-size:.95em}\
details{margin:.6em 0}summary{cursor:pointer;color:#0072b2}\
nav ol{columns:2;margin:.4em 0}\
@media print{body{max-width:none;margin:0;font-size:10pt}a{color:inherit;text-decoration:none}\
h2{break-after:avoid}figure,table,tr{break-inside:avoid}.grid{grid-template-columns:repeat(3,1fr)}\
summary{color:inherit}.caution{background:none;border:2px solid #e69f00}}";

fn contents(sections: &[Section]) -> String {
    let mut s = String::from("<nav><ol>\n");
    for x in sections {
        s.push_str(&format!(
            "<li><a href=\"#{}\">{}</a></li>\n",
            esc(&x.id),
            esc(&x.title)
        ));
    }
    s.push_str("</ol></nav>\n");
    s
}

fn no_rows(what: &str) -> String {
    format!("<p class=\"note\">No table was given: run <code>mettle report</code> with --data (a table with measured values) and/or --training-data to see {what}.</p>\n")
}

/// The report as one HTML document.
///
/// # Errors
/// As [`estimate_rows`] reading either table; [`crate::Error::Plot`].
pub fn report_html(model: &Model, inputs: &ReportInputs<'_>) -> Result<String> {
    let ctx = Ctx {
        model,
        card: model_card(model),
        training: inputs
            .training
            .map(|t| estimate_rows(model, t))
            .transpose()?,
        heldout: inputs.data.map(|t| estimate_rows(model, t)).transpose()?,
        data_is_training: match inputs.data {
            Some(t) => data_fingerprint(model, t)? == model.training.data_sha256,
            None => false,
        },
        table: inputs.training.or(inputs.data),
    };
    // the body's sections, in reading order; the table of contents lists them
    let mut sections = vec![
        Section::new(
            "estimates",
            "Estimated against measured",
            rows::estimates_section(&ctx)?,
        ),
        Section::new(
            "calibration",
            "Calibration of the error bars",
            rows::calibration_section(&ctx)?,
        ),
        Section::new(
            "effects",
            "Effect of the main inputs",
            effects::effects_section(&ctx)?,
        ),
        Section::new("evaluation", "Evaluation", rows::evaluation_section(&ctx)),
        Section::new(
            "residuals",
            "Residuals against each input",
            rows::residuals_section(&ctx)?,
        ),
        Section::new(
            "noise",
            "Noise along the most relevant input",
            model_sections::noise_section(model, &ctx.card)?,
        ),
        Section::new(
            "relevance",
            "Input relevance",
            model_sections::relevance_section(&ctx.card)?,
        ),
        Section::new(
            "search",
            "How the committee was chosen",
            model_sections::search_section(model, &ctx.card)?,
        ),
        Section::new(
            "model-card",
            "Model card",
            model_sections::card_section(&ctx.card),
        ),
    ];
    if let Some(v) = inputs.validation {
        sections.push(Section {
            id: "validation".into(),
            title: "Cross-validation".into(),
            body: validation::section(v)?,
            whole: true,
        });
    }
    sections.push(Section::new(
        "reading",
        "What each view tells you",
        READING.into(),
    ));
    let mut h =
        String::from("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\"/>\n");
    h.push_str(&format!(
        "<title>mettle report: {}</title>\n<style>{STYLE}</style>\n</head>\n<body>\n<h1>mettle report: {}</h1>\n",
        esc(inputs.model_name),
        esc(inputs.model_name)
    ));
    h.push_str(&format!(
        "<section id=\"caution\">\n<p class=\"caution\">Caution. {}</p>\n</section>\n",
        esc(REPORT_CAUTION)
    ));
    h.push_str(&Section::new("summary", "Summary", summary::summary_section(&ctx)).html());
    h.push_str(&Section::new("contents", "Contents", contents(&sections)).html());
    for s in &sections {
        h.push_str(&s.html());
    }
    h.push_str("</body>\n</html>\n");
    Ok(h)
}

const READING: &str = "<details open=\"open\"><summary>Each section in one line</summary>\n<ul>\n\
<li><b>Summary</b>: per target, how accurate the estimates are on the rows given (RMSE in the target's unit), whether the error bars hold what they claim, how noisy the tests are and which inputs matter most.</li>\n\
<li><b>Estimated against measured</b>: where the model is accurate and where its error bars widen; held-out rows far from the diagonal with narrow bars are the warning sign.</li>\n\
<li><b>Calibration</b>: whether an interval said to hold p % of outcomes does; inside the band the error bars can be trusted at every level.</li>\n\
<li><b>Effect of the main inputs</b>: what the model has learnt along each input at a typical heat, with its uncertainty; not a causal effect.</li>\n\
<li><b>Evaluation</b>: accuracy (RMSE, MAE, R²) and honesty of the error bars (NLPD, coverages) on the rows given.</li>\n\
<li><b>Residuals against each input</b>: trends or funnels show structure or noise the model has not captured, and the input where it happens.</li>\n\
<li><b>Noise along the most relevant input</b>: where the scatter of the tests is large or small, and whether the model's noise level agrees with the repeat tests bin by bin.</li>\n\
<li><b>Relevance</b>: which inputs the networks lean on. Use it to question the data (an input expected to matter that scores low may vary too little in the table), not as a causal effect.</li>\n\
<li><b>Candidates and committee size</b>: whether the search was wide enough (the best candidates should not all sit at the largest hidden-unit count) and how much averaging several networks helped.</li>\n\
<li><b>Model card</b>: what the model was trained on (the fingerprint identifies the exact rows), the ranges it can vouch for, and how noisy it found the data. The model cannot honestly claim less scatter than repeat tests show.</li>\n\
</ul>\n</details>\n";

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
