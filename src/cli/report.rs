//! `mettle report`

use std::path::PathBuf;

use anyhow::Context;
use clap::Args;
use mettle::data::Table;
use mettle::explain::check_training_data;
use mettle::report::{report_html, ReportInputs};

/// Arguments of `mettle report`.
#[derive(Args, Debug)]
#[command(
    about = "Write one self-contained HTML report: model card, charts and an evaluation.",
    long_about = "Write one self-contained HTML file about a model: the model card, input relevance, \
the candidate search (held-out NLPD of every candidate, committee NLPD against size) and, when a \
table is given, an evaluation, estimated against measured values with 95 % intervals, the \
calibration curve of the error bars and residuals against each input. Charts are inline SVG; \
nothing is fetched over a network, so the file can be mailed or archived as it is. It opens \
with the caution that estimates support, never replace, the qualification tests an applicable \
code requires.\n\n\
--data is a table with measured values not used in training (its rows are the held-out rows). \
--training-data is the model's own training table; it is checked against the fingerprint the \
model records, and its rows are drawn as training rows. Either, both or neither may be given. --validation adds the cross-validation \
written by `mettle validate --out`.\n\n\
Example:\n  mettle report --model uts.json --data held_back.csv --training-data welds.csv --out uts_report.html"
)]
pub struct ReportArgs {
    /// Model file written by `mettle train`.
    #[arg(long, value_name = "MODEL.json")]
    model: PathBuf,
    /// Table with the model's inputs and measured targets to evaluate on.
    #[arg(long, value_name = "FILE")]
    data: Option<PathBuf>,
    /// The model's training table (checked against its fingerprint).
    #[arg(long, value_name = "FILE")]
    training_data: Option<PathBuf>,
    /// A cross-validation written by `mettle validate --out FILE.json`: shown in a section of
    /// its own (figures with standard errors, relevance over the folds, out-of-fold estimates).
    #[arg(long, value_name = "VALIDATION.json")]
    validation: Option<PathBuf>,
    /// Where to write the report (HTML, written atomically).
    #[arg(long, value_name = "REPORT.html")]
    out: PathBuf,
}

pub fn run(a: ReportArgs) -> anyhow::Result<()> {
    let model = super::load_model(&a.model)?;
    let training = a.training_data.as_deref().map(Table::read).transpose()?;
    if let Some(t) = &training {
        check_training_data(&model, t)?;
    }
    let data = a.data.as_deref().map(Table::read).transpose()?;
    let validation = a
        .validation
        .as_deref()
        .map(super::validate::load)
        .transpose()?;
    let name = a.model.file_name().map_or_else(
        || a.model.display().to_string(),
        |f| f.to_string_lossy().into_owned(),
    );
    let html = report_html(
        &model,
        &ReportInputs {
            model_name: &name,
            training: training.as_ref(),
            data: data.as_ref(),
            validation: validation.as_ref(),
        },
    )?;
    mettle::data::write_atomic(&a.out, html.as_bytes())
        .with_context(|| format!("writing {}", a.out.display()))?;
    eprintln!("report written to {}", a.out.display());
    Ok(())
}
