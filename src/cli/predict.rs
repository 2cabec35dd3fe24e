//! `mettle predict`

use std::path::PathBuf;

use anyhow::Context;
use clap::Args;
use mettle::data::Table;
use mettle::predict::RowPrediction;
use mettle::Model;
use serde_json::{json, Map, Value};

use super::output::{aligned, csv_field, emit, num, Format};
use super::CAUTION;

/// Arguments of `mettle predict`.
#[derive(Args, Debug)]
#[command(
    long_about = "Estimate every target of a model, with error bars, for each row of a table.\n\n\
Each estimate has a mean, a standard deviation (sd = noise + model uncertainty), the central \
95 % interval (lo95, hi95) and a domain verdict: in_domain is false, with notes naming the inputs, \
when a row lies outside what the training data cover. An estimate outside the domain is an \
extrapolation: treat it with suspicion whatever its error bar.\n\n\
JSON output is an array with one object per row: keys row, target, mean, sd, lo95, hi95, \
noise_sd, model_sd, in_domain, notes (for a model with several targets, an 'estimates' object \
keyed by target holds mean ... model_sd).\n\n\
Estimates are not test results: qualification testing per the applicable code decides."
)]
pub struct PredictArgs {
    /// Model file written by `mettle train`.
    #[arg(long, value_name = "MODEL.json")]
    model: PathBuf,
    /// Rows to estimate (CSV with a header row, or .parquet); must hold every input column of the model.
    #[arg(long, value_name = "FILE")]
    input: PathBuf,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Table)]
    format: Format,
    /// Write to this file (atomically) instead of standard output.
    #[arg(long, value_name = "FILE")]
    out: Option<PathBuf>,
}

pub fn run(a: PredictArgs) -> anyhow::Result<()> {
    let model = Model::load(&a.model)?;
    let table = Table::read(&a.input)?;
    let rows = model
        .predict(&table)
        .with_context(|| format!("estimating with model {}", a.model.display()))?;
    let targets: Vec<&str> = model.targets.iter().map(|t| t.name.as_str()).collect();
    let text = match a.format {
        Format::Json => to_json(&targets, &rows)?,
        Format::Csv => to_csv(&targets, &rows),
        Format::Table => {
            let mut s = to_table(&targets, &rows);
            s.push('\n');
            s.push_str(CAUTION);
            s.push('\n');
            s
        }
    };
    if a.format != Format::Table || a.out.is_some() {
        eprintln!("{CAUTION}");
    }
    let out_of_domain = rows.iter().filter(|r| !r.in_domain).count();
    if out_of_domain > 0 {
        eprintln!(
            "warning: {out_of_domain} of {} rows are outside the training domain (see notes)",
            rows.len()
        );
    }
    emit(&text, a.out.as_deref())
}

const FIELDS: [&str; 6] = ["mean", "sd", "lo95", "hi95", "noise_sd", "model_sd"];

fn estimate_values(e: &mettle::predict::Estimate) -> [f64; 6] {
    [e.mean, e.sd, e.lo95, e.hi95, e.noise_sd, e.model_sd]
}

fn to_json(targets: &[&str], rows: &[RowPrediction]) -> anyhow::Result<String> {
    let arr: Vec<Value> = rows
        .iter()
        .enumerate()
        .map(|(i, r)| {
            let mut obj = Map::new();
            obj.insert("row".into(), json!(i + 1));
            if targets.len() == 1 {
                obj.insert("target".into(), json!(targets[0]));
                for (k, v) in FIELDS.iter().zip(estimate_values(&r.estimates[0])) {
                    obj.insert((*k).into(), json!(v));
                }
            } else {
                let mut est = Map::new();
                for (t, e) in targets.iter().zip(&r.estimates) {
                    let m: Map<String, Value> = FIELDS
                        .iter()
                        .zip(estimate_values(e))
                        .map(|(k, v)| ((*k).to_string(), json!(v)))
                        .collect();
                    est.insert((*t).to_string(), Value::Object(m));
                }
                obj.insert("estimates".into(), Value::Object(est));
            }
            obj.insert("in_domain".into(), json!(r.in_domain));
            obj.insert("notes".into(), json!(r.notes));
            Value::Object(obj)
        })
        .collect();
    let mut s = serde_json::to_string_pretty(&arr)?;
    s.push('\n');
    Ok(s)
}

fn header(targets: &[&str]) -> Vec<String> {
    let mut h = vec!["row".to_string()];
    for t in targets {
        for f in FIELDS {
            h.push(format!("{t}_{f}"));
        }
    }
    h.push("in_domain".into());
    h.push("notes".into());
    h
}

fn to_csv(targets: &[&str], rows: &[RowPrediction]) -> String {
    let mut s = header(targets).join(",");
    s.push('\n');
    for (i, r) in rows.iter().enumerate() {
        let mut cells = vec![(i + 1).to_string()];
        for e in &r.estimates {
            cells.extend(estimate_values(e).iter().map(|v| v.to_string()));
        }
        cells.push(r.in_domain.to_string());
        cells.push(csv_field(&r.notes.join("; ")));
        s.push_str(&cells.join(","));
        s.push('\n');
    }
    s
}

fn to_table(targets: &[&str], rows: &[RowPrediction]) -> String {
    let mut h = vec!["row".to_string()];
    for t in targets {
        for f in ["mean", "sd", "lo95", "hi95"] {
            h.push(if targets.len() == 1 {
                f.to_string()
            } else {
                format!("{t}_{f}")
            });
        }
    }
    h.push("domain".into());
    let body: Vec<Vec<String>> = rows
        .iter()
        .enumerate()
        .map(|(i, r)| {
            let mut cells = vec![(i + 1).to_string()];
            for e in &r.estimates {
                cells.extend([e.mean, e.sd, e.lo95, e.hi95].iter().map(|v| num(*v)));
            }
            cells.push(if r.in_domain {
                "in".to_string()
            } else {
                format!("OUT: {}", r.notes.join("; "))
            });
            cells
        })
        .collect();
    let title = if targets.len() == 1 {
        format!("estimates of {} (sd = noise + model uncertainty; lo95..hi95 = central 95 % interval)\n", targets[0])
    } else {
        "estimates (sd = noise + model uncertainty; lo95..hi95 = central 95 % interval)\n"
            .to_string()
    };
    title + &aligned(&h, &body)
}
