//! `mettle evaluate`

use std::path::PathBuf;

use clap::{Args, ValueEnum};
use mettle::data::{RowLabels, Table};
use mettle::explain::{estimate_rows, OutOfLine};
use mettle::metrics::Evaluation;
use mettle::prec::OUT_OF_LINE_Z;
use mettle::report::validation::FIGURE_HEADER;
use serde_json::json;

use super::output::{aligned, emit, num, wrap};
use super::UsageError;

/// Output formats of `evaluate`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum EvalFormat {
    /// Aligned columns.
    Table,
    /// JSON.
    Json,
}

/// Arguments of `mettle evaluate`.
#[derive(Args, Debug)]
#[command(
    about = "Measure a model's accuracy and error-bar honesty on a table with measured values.",
    long_about = "Measure a model on a table that holds the measured targets.\n\n\
rmse, mae and r2 judge the means; nlpd (mean negative log predictive density, nats per point, \
in the target's units; lower is better) and the coverages judge the error bars. Honest error \
bars put about 68 % of rows inside the central 68.27 % predictive interval (coverage_68) and \
about 95 % inside the central 95.45 % one (coverage_95). With a Gaussian error shape these are \
mean ± 1 sd and mean ± 2 sd; with the Student-t shape a model may choose (train --heavy-tails) \
the first is narrower than ± 1 sd and the second close to ± 2 sd. within_1sd and within_2sd \
count the rows inside mean ± 1 sd and ± 2 sd whatever the shape.\n\n\
JSON output (one target): an object with keys target, n, rmse, mae, r2, nlpd, coverage_68, \
coverage_95, within_1sd, within_2sd, nlpd_scores and coverages_count (what the two measure, in \
words), id_column and out_of_line; with several targets, an array of such objects.\n\nRows whose measured value lies more than 2.5 sd from its estimate (on the scale the target is learnt on) are listed as out of line, largest first, with the estimate, its 95 % interval, the standardised residual z and the domain verdict, each named by its row number and identifier (--id COLUMN, else the schema's identifier column, else a first column of text such as heat codes; JSON: out_of_line, an array of objects with row, id, measured, mean, sd, lo95, hi95, z, in_domain, gross_error_probability; id_column names the column). An honest model lists about 1 row in 80 by chance with Gaussian error bars, about 1 in 40 to 1 in 70 with a Student-t shape (train --heavy-tails); the text output says how many for the model at hand; more, or a few with |z| far beyond 3, point to heats worth checking (mix-ups, test faults) or to a region the model does not know. For a model with a share of gross errors (train --gross-errors on, the default), gross_error_probability is the probability that the measured value is a gross error rather than a test of the heat described; sd and the intervals are those of a test free of gross error, and nlpd uses the model's two-part density.\n\n\
For a model trained with a schema the table is read through the stored schema (units converted, \
derived inputs computed), and values are judged in internal units. For a target learnt on a log \
or bounded scale, nlpd is the density of the measured value on its own scale and the coverages \
count values inside the back-transformed (asymmetric) intervals.",
    after_long_help = "Example:\n  mettle evaluate --model uts.json --data held_back.csv --format json"
)]
pub struct EvaluateArgs {
    /// Model file written by `mettle train`.
    #[arg(long, value_name = "MODEL.json")]
    model: PathBuf,
    /// Table with the model's inputs and measured targets.
    #[arg(long, visible_alias = "input", value_name = "FILE")]
    data: PathBuf,
    /// Sheet to read when the table is a spreadsheet workbook (.xlsx, .xls) [default: the first].
    #[arg(long, value_name = "NAME")]
    sheet: Option<String>,
    /// Output format.
    #[arg(long, value_enum, default_value_t = EvalFormat::Table)]
    format: EvalFormat,
    /// Write to this file (atomically) instead of standard output.
    #[arg(long, value_name = "FILE")]
    out: Option<PathBuf>,
    /// Column naming each row (heat, weld, specimen), echoed beside rows out of line.
    #[arg(long, value_name = "COLUMN")]
    id: Option<String>,
}

/// What the NLPD and the coverages measure, stated with them.
const NLPD_SCORES: &str = "the model's whole predictive density: for a model with a share of gross errors, (1 − π)·(density of a test free of gross error) + π·(gross-error part)";
/// What the coverages count.
const COVERAGES_COUNT: &str = "the central intervals of a test free of gross error (the error shape's), as predict prints them";

pub fn run(a: EvaluateArgs) -> anyhow::Result<()> {
    let model = super::load_model(&a.model)?;
    let table = Table::read_sheet(&a.data, a.sheet.as_deref())?;
    let labels = model.row_labels(&table, a.id.as_deref())?;
    let mut results: Vec<(String, Evaluation)> = Vec::new();
    let mut out_of_line: Vec<(String, Vec<OutOfLine>, f64)> = Vec::new();
    for rows in estimate_rows(&model, &table)? {
        let name = rows.target.clone();
        let e = rows.evaluation().ok_or_else(|| {
            UsageError(format!(
                "{}: no row has a measured '{name}'",
                a.data.display()
            ))
        })?;
        out_of_line.push((
            name.clone(),
            rows.out_of_line(OUT_OF_LINE_Z),
            rows.expected_share_beyond(OUT_OF_LINE_Z),
        ));
        results.push((name, e));
    }
    let labels = labels.as_ref();
    let text = match a.format {
        EvalFormat::Json => json_text(&results, &out_of_line, labels)?,
        EvalFormat::Table => table_text(&results, &out_of_line, labels),
    };
    emit(&text, a.out.as_deref())
}

/// Per target: its evaluation and the rows out of line with it.
type Results = [(String, Evaluation)];
type OutOfLines = [(String, Vec<OutOfLine>, f64)];

/// One JSON object per target (one object alone when there is one target).
fn json_text(
    results: &Results,
    out_of_line: &OutOfLines,
    labels: Option<&RowLabels>,
) -> anyhow::Result<String> {
    let label = |row: usize| labels.map(|l| l.get(row - 1).to_string());
    let objs: Vec<serde_json::Value> = results
        .iter()
        .zip(out_of_line)
        .map(|((name, e), (_, odd, _))| {
            let mut v = serde_json::to_value(e).unwrap_or_default();
            if let Some(o) = v.as_object_mut() {
                o.insert("target".into(), json!(name));
                o.insert("nlpd_scores".into(), json!(NLPD_SCORES));
                o.insert("coverages_count".into(), json!(COVERAGES_COUNT));
                o.insert("id_column".into(), json!(labels.map(|l| l.column.clone())));
                o.insert(
                    "out_of_line".into(),
                    serde_json::Value::Array(
                        odd.iter()
                            .map(|r| {
                                json!({
                                    "row": r.row,
                                    "id": label(r.row),
                                    "measured": r.measured,
                                    "mean": r.estimate.mean,
                                    "sd": r.estimate.sd,
                                    "lo95": r.estimate.lo95,
                                    "hi95": r.estimate.hi95,
                                    "z": r.z,
                                    "in_domain": r.in_domain,
                                    "gross_error_probability": r.gross_error_probability,
                                })
                            })
                            .collect(),
                    ),
                );
            }
            v
        })
        .collect();
    let v = if objs.len() == 1 {
        objs.into_iter().next().unwrap_or_default()
    } else {
        serde_json::Value::Array(objs)
    };
    Ok(serde_json::to_string_pretty(&v)? + "\n")
}

/// The evaluation table, then each target's rows out of line.
fn table_text(results: &Results, out_of_line: &OutOfLines, labels: Option<&RowLabels>) -> String {
    let label = |row: usize| labels.map(|l| l.get(row - 1).to_string());
    // the same columns as validate's table of cross-validated figures
    let h: Vec<String> = FIGURE_HEADER.iter().map(|s| s.to_string()).collect();
    let body: Vec<Vec<String>> = results
        .iter()
        .map(|(name, e)| {
            vec![
                name.clone(),
                e.n.to_string(),
                num(e.rmse),
                num(e.mae),
                format!("{:.4}", e.r2),
                format!("{:.4}", e.nlpd),
                format!("{:.3}", e.coverage_68),
                format!("{:.3}", e.coverage_95),
            ]
        })
        .collect();
    let mut text = aligned(&h, &body)
        + "honest error bars: coverage_68 near 0.68, coverage_95 near 0.95\n"
        + &wrap(
            "",
            &format!("nlpd scores {NLPD_SCORES}; the coverages count {COVERAGES_COUNT}"),
            0,
        );
    for (name, odd, chance) in out_of_line {
        if odd.is_empty() {
            continue;
        }
        text += &format!(
            "\n{name}: {} row(s) more than {OUT_OF_LINE_Z} sd from the estimate (about 1 in {:.0} is expected by chance with this model's error shape):\n",
            odd.len(),
            1.0 / chance.max(1e-12)
        );
        let mut h: Vec<String> = vec!["row".into()];
        h.extend(labels.map(|l| l.column.clone()));
        h.extend(
            [
                "domain",
                "measured",
                "mean",
                "lo95",
                "hi95",
                "z",
                "gross_error_probability",
            ]
            .map(String::from),
        );
        let body: Vec<Vec<String>> = odd
            .iter()
            .map(|r| {
                let mut cells = vec![r.row.to_string()];
                cells.extend(label(r.row));
                cells.extend([
                    if r.in_domain { "in" } else { "OUT" }.to_string(),
                    num(r.measured),
                    num(r.estimate.mean),
                    num(r.estimate.lo95),
                    num(r.estimate.hi95),
                    format!("{:+.2}", r.z),
                    r.gross_error_probability
                        .map_or("-".to_string(), |p| format!("{p:.2}")),
                ]);
                cells
            })
            .collect();
        text += &aligned(&h, &body);
    }
    text
}
