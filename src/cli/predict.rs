//! `mettle predict`

use std::path::PathBuf;

use anyhow::Context;
use clap::{Args, ValueEnum};
use mettle::data::Table;
use mettle::model::IntervalKind;
use mettle::predict::{Estimate, RowPrediction};
use mettle::units::Unit;
use mettle::Model;
use serde_json::{json, Map, Value};

use super::output::{aligned, csv_field, emit, num, Format};
use super::{CAUTION, ROW_CAUTION};

/// Units of the estimates.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum UnitChoice {
    /// The internal unit of each quantity (MPa, J, %, °C ...).
    Internal,
    /// The unit the schema declares for each target (the training file's).
    Declared,
}

/// Arguments of `mettle predict`.
#[derive(Args, Debug)]
#[command(
    about = "Estimate the targets, with error bars and a domain verdict, for new rows.",
    long_about = "Estimate every target of a model, with error bars, for each row of a table.\n\n\
Each estimate has a mean, a median, a standard deviation (sd = noise + model uncertainty), the \
central 95 % interval (lo95, hi95) and a domain verdict: in_domain is false, with notes naming the \
inputs, when a row lies outside what the training data cover. An estimate outside the domain is an \
extrapolation: treat it with suspicion whatever its error bar.\n\n\
For a target learnt on the log or a bounded scale (schema transform), the interval is computed on \
that scale and mapped back: it is asymmetric about the median, and interval_kind says so \
(normal, log_normal, logit_normal). For a model trained with a schema, the input table is read \
through the stored schema: its units are converted and its derived inputs computed from the raw \
columns; estimates are in internal units (MPa, J, %, °C) unless --units declared.\n\n\
JSON output is an array with one object per row: keys row, target, mean, median, sd, lo95, hi95, \
noise_sd, model_sd, interval_kind, unit (when known), in_domain, notes, caution (for a model with several \
targets, an 'estimates' object keyed by target holds mean ... unit).\n\n\
Estimates are not test results: qualification testing per the applicable code decides.",
    after_long_help = "Example:\n  mettle predict --model uts.json --input new_heats.csv --format json --out estimates.json"
)]
pub struct PredictArgs {
    /// Model file written by `mettle train`.
    #[arg(long, value_name = "MODEL.json")]
    model: PathBuf,
    /// Rows to estimate (CSV with a header row, or Parquet); must hold every input column of the model.
    #[arg(long, value_name = "FILE")]
    input: PathBuf,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Table)]
    format: Format,
    /// Units of the estimates (for a model trained with a schema).
    #[arg(long, value_enum, default_value_t = UnitChoice::Internal)]
    units: UnitChoice,
    /// Write to this file (atomically) instead of standard output.
    #[arg(long, value_name = "FILE")]
    out: Option<PathBuf>,
}

/// One target as printed: name, unit, and its estimates per row.
struct Column {
    name: String,
    unit: Option<Unit>,
    kind: IntervalKind,
}

pub fn run(a: PredictArgs) -> anyhow::Result<()> {
    let model = Model::load(&a.model)?;
    let table = Table::read(&a.input)?;
    let mut rows = model
        .predict(&table)
        .with_context(|| format!("estimating with model {}", a.model.display()))?;
    let declared = a.units == UnitChoice::Declared;
    let cols: Vec<Column> = model
        .targets
        .iter()
        .map(|t| Column {
            name: t.name.clone(),
            unit: model.target_unit(&t.name, declared),
            kind: t.transform.interval_kind(),
        })
        .collect();
    if declared {
        for r in &mut rows {
            for (e, c) in r.estimates.iter_mut().zip(&cols) {
                if let Some(u) = c.unit {
                    *e = e.in_unit(u);
                }
            }
        }
    }
    let text = match a.format {
        Format::Json => to_json(&cols, &rows)?,
        Format::Csv => to_csv(&cols, &rows),
        Format::Table => {
            let mut s = to_table(&cols, &rows);
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

const FIELDS: [&str; 7] = [
    "mean", "median", "sd", "lo95", "hi95", "noise_sd", "model_sd",
];

fn estimate_values(e: &Estimate) -> [f64; 7] {
    [
        e.mean, e.median, e.sd, e.lo95, e.hi95, e.noise_sd, e.model_sd,
    ]
}

fn kind_name(k: IntervalKind) -> Value {
    serde_json::to_value(k).unwrap_or(Value::Null)
}

fn estimate_object(c: &Column, e: &Estimate) -> Map<String, Value> {
    let mut m: Map<String, Value> = FIELDS
        .iter()
        .zip(estimate_values(e))
        .map(|(k, v)| ((*k).to_string(), json!(v)))
        .collect();
    m.insert("interval_kind".into(), kind_name(c.kind));
    if let Some(u) = c.unit {
        m.insert("unit".into(), json!(u.symbol()));
    }
    m
}

fn to_json(cols: &[Column], rows: &[RowPrediction]) -> anyhow::Result<String> {
    let arr: Vec<Value> = rows
        .iter()
        .enumerate()
        .map(|(i, r)| {
            let mut obj = Map::new();
            obj.insert("row".into(), json!(i + 1));
            if cols.len() == 1 {
                obj.insert("target".into(), json!(cols[0].name));
                obj.extend(estimate_object(&cols[0], &r.estimates[0]));
            } else {
                let est: Map<String, Value> = cols
                    .iter()
                    .zip(&r.estimates)
                    .map(|(c, e)| (c.name.clone(), Value::Object(estimate_object(c, e))))
                    .collect();
                obj.insert("estimates".into(), Value::Object(est));
            }
            obj.insert("in_domain".into(), json!(r.in_domain));
            obj.insert("notes".into(), json!(r.notes));
            obj.insert("caution".into(), json!(ROW_CAUTION));
            Value::Object(obj)
        })
        .collect();
    let mut s = serde_json::to_string_pretty(&arr)?;
    s.push('\n');
    Ok(s)
}

fn to_csv(cols: &[Column], rows: &[RowPrediction]) -> String {
    let mut h = vec!["row".to_string()];
    for c in cols {
        for f in FIELDS {
            h.push(format!("{}_{f}", c.name));
        }
        h.push(format!("{}_interval_kind", c.name));
        h.push(format!("{}_unit", c.name));
    }
    h.push("in_domain".into());
    h.push("notes".into());
    h.push("caution".into());
    let mut s: String = h.iter().map(|x| csv_field(x)).collect::<Vec<_>>().join(",");
    s.push('\n');
    for (i, r) in rows.iter().enumerate() {
        let mut cells = vec![(i + 1).to_string()];
        for (c, e) in cols.iter().zip(&r.estimates) {
            cells.extend(estimate_values(e).iter().map(|v| v.to_string()));
            cells.push(kind_name(c.kind).as_str().unwrap_or_default().to_string());
            cells.push(csv_field(c.unit.map_or("", |u| u.symbol())));
        }
        cells.push(r.in_domain.to_string());
        cells.push(csv_field(&r.notes.join("; ")));
        cells.push(csv_field(ROW_CAUTION));
        s.push_str(&cells.join(","));
        s.push('\n');
    }
    s
}

fn to_table(cols: &[Column], rows: &[RowPrediction]) -> String {
    let mut h = vec!["row".to_string()];
    for c in cols {
        let centre = if c.kind == IntervalKind::Normal {
            "mean"
        } else {
            "median"
        };
        for f in [centre, "sd", "lo95", "hi95"] {
            h.push(if cols.len() == 1 {
                f.to_string()
            } else {
                format!("{}_{f}", c.name)
            });
        }
    }
    h.push("domain".into());
    let body: Vec<Vec<String>> = rows
        .iter()
        .enumerate()
        .map(|(i, r)| {
            let mut cells = vec![(i + 1).to_string()];
            for (c, e) in cols.iter().zip(&r.estimates) {
                let centre = if c.kind == IntervalKind::Normal {
                    e.mean
                } else {
                    e.median
                };
                cells.extend([centre, e.sd, e.lo95, e.hi95].iter().map(|v| num(*v)));
            }
            cells.push(if r.in_domain {
                if r.notes.is_empty() {
                    "in".to_string()
                } else {
                    format!("in; {}", r.notes.join("; "))
                }
            } else {
                format!("OUT: {}", r.notes.join("; "))
            });
            cells
        })
        .collect();
    let unit_of = |c: &Column| c.unit.map_or(String::new(), |u| format!(" [{u}]"));
    let mut title = if cols.len() == 1 {
        format!(
            "estimates of {}{} (sd = noise + model uncertainty; lo95..hi95 = central 95 % interval)\n",
            cols[0].name,
            unit_of(&cols[0])
        )
    } else {
        let names: Vec<String> = cols
            .iter()
            .map(|c| format!("{}{}", c.name, unit_of(c)))
            .collect();
        format!(
            "estimates of {} (sd = noise + model uncertainty; lo95..hi95 = central 95 % interval)\n",
            names.join(", ")
        )
    };
    for c in cols.iter().filter(|c| c.kind != IntervalKind::Normal) {
        title.push_str(&format!("{}: {}\n", c.name, c.kind.describe()));
    }
    title + &aligned(&h, &body)
}
