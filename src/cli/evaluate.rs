//! `mettle evaluate`

use std::path::PathBuf;

use clap::{Args, ValueEnum};
use mettle::data::Table;
use mettle::metrics::Evaluation;
use mettle::Model;
use serde_json::json;

use super::output::{aligned, emit, num};
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
bars put about 68 % of rows inside mean ± 1 sd (coverage_68) and about 95 % inside mean ± 2 sd \
(coverage_95).\n\n\
JSON output (one target): an object with keys target, n, rmse, mae, r2, nlpd, coverage_68, \
coverage_95; with several targets, an array of such objects.\n\n\
For a model trained with a schema the table is read through the stored schema (units converted, \
derived inputs computed), and values are judged in internal units. For a target learnt on a log \
or bounded scale, nlpd is the density of the measured value on its own scale and the coverages \
count values inside the back-transformed (asymmetric) intervals."
)]
pub struct EvaluateArgs {
    /// Model file written by `mettle train`.
    #[arg(
        long,
        value_name = "MODEL.json\n\nExample:\n  mettle evaluate --model uts.json --data held_back.csv --format json"
    )]
    model: PathBuf,
    /// Table with the model's inputs and measured targets.
    #[arg(long, value_name = "FILE")]
    data: PathBuf,
    /// Output format.
    #[arg(long, value_enum, default_value_t = EvalFormat::Table)]
    format: EvalFormat,
    /// Write to this file (atomically) instead of standard output.
    #[arg(long, value_name = "FILE")]
    out: Option<PathBuf>,
}

pub fn run(a: EvaluateArgs) -> anyhow::Result<()> {
    let model = Model::load(&a.model)?;
    let table = Table::read(&a.data)?;
    let mut results: Vec<(String, Evaluation)> = Vec::new();
    for (name, e) in model.evaluate(&table)? {
        let e = e.ok_or_else(|| {
            UsageError(format!(
                "{}: no row has a measured '{name}'",
                a.data.display()
            ))
        })?;
        results.push((name, e));
    }
    let text = match a.format {
        EvalFormat::Json => {
            let objs: Vec<serde_json::Value> = results
                .iter()
                .map(|(name, e)| {
                    let mut v = serde_json::to_value(e).unwrap_or_default();
                    if let Some(o) = v.as_object_mut() {
                        o.insert("target".into(), json!(name));
                    }
                    v
                })
                .collect();
            let v = if objs.len() == 1 {
                objs.into_iter().next().unwrap_or_default()
            } else {
                serde_json::Value::Array(objs)
            };
            serde_json::to_string_pretty(&v)? + "\n"
        }
        EvalFormat::Table => {
            let h: Vec<String> = [
                "target",
                "n",
                "rmse",
                "mae",
                "r2",
                "nlpd",
                "coverage_68",
                "coverage_95",
            ]
            .iter()
            .map(|s| s.to_string())
            .collect();
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
            aligned(&h, &body) + "honest error bars: coverage_68 near 0.68, coverage_95 near 0.95\n"
        }
    };
    emit(&text, a.out.as_deref())
}
