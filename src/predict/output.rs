//! The estimate files of `mettle predict --format csv|json`, written by the
//! command line and by the local web server alike, so that both give the
//! same bytes for the same rows.
//!
//! CSV: one header row (`row`, then per target `<target>_mean`, `_median`,
//! `_sd`, `_lo95`, `_hi95`, `_noise_sd`, `_model_sd`, `_interval_kind`,
//! `_unit`, then `in_domain`, `domain`, `notes`, `caution`, then any extra
//! columns of [`ExtraCells`] such as `predict --require`'s probabilities),
//! one line per row.
//! JSON: a pretty-printed array with one object per row (keys in
//! docs/guide-qa.md); every row carries [`ROW_CAUTION`].

use std::io::{self, Write};

use serde_json::{json, Map, Value};

use super::{Estimate, RowPrediction};
use crate::data::csv_field;
use crate::model::{IntervalKind, Model};
use crate::units::Unit;

/// The caution shown wherever an estimate could feed a structural decision.
pub const CAUTION: &str = "Caution: these are model estimates with error bars, not test results. \
Qualification testing per the applicable code decides; local codes and licensed engineers have the final word.";

/// The caution carried by every row of a machine-readable estimate file,
/// so that it travels with the numbers.
pub const ROW_CAUTION: &str = "model estimate, not a test result: qualification testing per the applicable code decides; local codes and licensed engineers have the final word";

/// The two machine-readable formats of an estimate file.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum EstimateFormat {
    /// Comma-separated values with a header row.
    Csv,
    /// A JSON array, one object per row.
    Json,
}

/// One target as written: name, unit, and the kind of its interval.
#[derive(Clone, Debug, PartialEq)]
pub struct TargetColumn {
    /// Target name.
    pub name: String,
    /// Unit of the estimates, when known.
    pub unit: Option<Unit>,
    /// Symmetric or mapped back from a transformed scale.
    pub kind: IntervalKind,
}

impl Model {
    /// The targets as an estimate file names them: in internal units, or
    /// in the units the schema declares when `declared`.
    pub fn target_columns(&self, declared: bool) -> Vec<TargetColumn> {
        self.targets
            .iter()
            .map(|t| TargetColumn {
                name: t.name.clone(),
                unit: self.target_unit(&t.name, declared),
                kind: t.transform.interval_kind(),
            })
            .collect()
    }
}

/// Estimates converted to the columns' units (for `declared` columns from
/// [`Model::target_columns`]).
pub fn to_column_units(cols: &[TargetColumn], rows: &mut [RowPrediction]) {
    for r in rows {
        for (e, c) in r.estimates.iter_mut().zip(cols) {
            if let Some(u) = c.unit {
                *e = e.in_unit(u);
            }
        }
    }
}

/// An estimate file written as batches of rows come: the same bytes as
/// formatting all rows at once.
pub struct EstimateWriter<'a> {
    w: &'a mut dyn Write,
    format: EstimateFormat,
    cols: &'a [TargetColumn],
    written: usize,
}

/// Cells appended to one row of an estimate file after its `caution`
/// (`predict --require`, `--neighbours`): CSV cells already formatted,
/// in the order of the extra header names, and JSON keys with values.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct ExtraCells {
    /// CSV cells (quoted where needed).
    pub csv: Vec<String>,
    /// JSON keys and values.
    pub json: Vec<(String, Value)>,
}

impl<'a> EstimateWriter<'a> {
    /// Write the opening (CSV header or `[`).
    ///
    /// # Errors
    /// Whatever the writer reports.
    pub fn start(
        w: &'a mut dyn Write,
        format: EstimateFormat,
        cols: &'a [TargetColumn],
    ) -> io::Result<Self> {
        Self::start_with(w, format, cols, &[])
    }

    /// As [`EstimateWriter::start`], the CSV header followed by `extra`
    /// column names (the rows then written by
    /// [`EstimateWriter::rows_with`]).
    ///
    /// # Errors
    /// Whatever the writer reports.
    pub fn start_with(
        w: &'a mut dyn Write,
        format: EstimateFormat,
        cols: &'a [TargetColumn],
        extra: &[String],
    ) -> io::Result<Self> {
        match format {
            EstimateFormat::Csv => {
                let mut h = csv_header(cols);
                h.pop();
                for x in extra {
                    h.push(',');
                    h.push_str(&csv_field(x));
                }
                h.push('\n');
                w.write_all(h.as_bytes())?
            }
            EstimateFormat::Json => w.write_all(b"[")?,
        }
        Ok(EstimateWriter {
            w,
            format,
            cols,
            written: 0,
        })
    }

    /// Write `rows`, the first being data row `first_row + 1` of the input.
    ///
    /// # Errors
    /// Whatever the writer reports.
    pub fn rows(&mut self, first_row: usize, rows: &[RowPrediction]) -> io::Result<()> {
        self.rows_with(first_row, rows, &[])
    }

    /// As [`EstimateWriter::rows`], each row followed by its extra cells
    /// (`extra[i]` for `rows[i]`; none where `extra` is shorter).
    ///
    /// # Errors
    /// Whatever the writer reports.
    pub fn rows_with(
        &mut self,
        first_row: usize,
        rows: &[RowPrediction],
        extra: &[ExtraCells],
    ) -> io::Result<()> {
        for (i, r) in rows.iter().enumerate() {
            let number = first_row + i + 1;
            let more = extra.get(i);
            if self.format == EstimateFormat::Csv {
                let mut line = csv_row(self.cols, number, r);
                if let Some(x) = more {
                    line.pop();
                    for c in &x.csv {
                        line.push(',');
                        line.push_str(c);
                    }
                    line.push('\n');
                }
                self.w.write_all(line.as_bytes())?;
                continue;
            }
            let mut obj = json_row(self.cols, number, r);
            if let (Some(x), Value::Object(o)) = (more, &mut obj) {
                o.extend(x.json.iter().cloned());
            }
            // one element of a pretty-printed array: each line indented by two
            let text = serde_json::to_string_pretty(&obj).map_err(io::Error::other)?;
            self.w
                .write_all(if self.written == 0 { b"\n" } else { b",\n" })?;
            for (k, line) in text.lines().enumerate() {
                if k > 0 {
                    self.w.write_all(b"\n")?;
                }
                self.w.write_all(b"  ")?;
                self.w.write_all(line.as_bytes())?;
            }
            self.written += 1;
        }
        Ok(())
    }

    /// Write the closing (`]` for JSON).
    ///
    /// # Errors
    /// Whatever the writer reports.
    pub fn finish(self) -> io::Result<()> {
        if self.format == EstimateFormat::Json {
            self.w
                .write_all(if self.written == 0 { b"]\n" } else { b"\n]\n" })?;
        }
        Ok(())
    }
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

fn estimate_object(c: &TargetColumn, e: &Estimate) -> Map<String, Value> {
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

/// One row of the JSON estimate file; `number` is its data row (1-based).
pub fn json_row(cols: &[TargetColumn], number: usize, r: &RowPrediction) -> Value {
    let mut obj = Map::new();
    obj.insert("row".into(), json!(number));
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
    obj.insert("domain".into(), json!(r.level.name()));
    obj.insert("notes".into(), json!(r.notes));
    obj.insert("caution".into(), json!(ROW_CAUTION));
    Value::Object(obj)
}

/// The header line of the CSV estimate file.
pub fn csv_header(cols: &[TargetColumn]) -> String {
    let mut h = vec!["row".to_string()];
    for c in cols {
        for f in FIELDS {
            h.push(format!("{}_{f}", c.name));
        }
        h.push(format!("{}_interval_kind", c.name));
        h.push(format!("{}_unit", c.name));
    }
    h.push("in_domain".into());
    h.push("domain".into());
    h.push("notes".into());
    h.push("caution".into());
    let mut s: String = h.iter().map(|x| csv_field(x)).collect::<Vec<_>>().join(",");
    s.push('\n');
    s
}

/// One line of the CSV estimate file; `number` is its data row (1-based).
pub fn csv_row(cols: &[TargetColumn], number: usize, r: &RowPrediction) -> String {
    let mut cells = vec![number.to_string()];
    for (c, e) in cols.iter().zip(&r.estimates) {
        cells.extend(estimate_values(e).iter().map(|v| v.to_string()));
        cells.push(kind_name(c.kind).as_str().unwrap_or_default().to_string());
        cells.push(csv_field(c.unit.map_or("", |u| u.symbol())));
    }
    cells.push(r.in_domain.to_string());
    cells.push(r.level.name().to_string());
    cells.push(csv_field(&r.notes.join("; ")));
    cells.push(csv_field(ROW_CAUTION));
    let mut s = cells.join(",");
    s.push('\n');
    s
}
