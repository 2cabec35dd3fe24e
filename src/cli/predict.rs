//! `mettle predict`

use std::io::{BufWriter, Write};
use std::path::PathBuf;

use anyhow::Context;
use clap::{Args, ValueEnum};
use mettle::data::RowLabels;
use mettle::data::{AtomicFile, Table};
use mettle::model::IntervalKind;
use mettle::prec::PREDICT_BATCH_ROWS;
use mettle::predict::{Estimate, PredictiveForm, RowPrediction, ScalePrediction};
use mettle::units::Unit;
use serde_json::{json, Map, Value};

use super::output::{aligned, csv_line, emit, num, wrap, Cell, Format, DEFAULT_DIGITS};
use super::CAUTION;

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
(normal, log_normal, logit_normal). When the model chose a heavy-tailed (Student-t) error shape \
(train --heavy-tails; explain names it), the interval is that shape's central 95 % interval: the sd \
is unchanged, the interval a little narrower than ± 1.96 sd. For a model trained with a schema, the input table is read \
through the stored schema: its units are converted and its derived inputs computed from the raw \
columns; estimates are in internal units (MPa, J, %, °C) unless --units declared.\n\n\
Rows are named by their number in the file (1 = first data row) and, when the table has one, by \
an identifier: the column --id names, else the column the model's schema declares as identifier, \
else a first column of text such as heat codes (FH-1023) that is not an input.\n\n\
The table shows one block per target (--wide: all targets side by side), the domain verdict \
beside the row, and the notes below. CSV has one line per row: row, the identifier, in_domain, \
then per target TARGET_mean, _median, _sd, _lo95, _hi95, _noise_sd, _model_sd and _unit, then \
notes; numbers to 6 significant digits (--digits); the caution in the first row's caution cell.\n\n\
JSON output is one object: caution; id_column; targets, keyed by target, each with unit, \
interval_kind and the predictive distribution's form (shape gaussian or student_t, dof, scale, \
gross_error_share, gross_error_mean, gross_error_sd); and rows, one object per row with row, id, \
in_domain, notes and estimates keyed by target (mean, median, sd, lo95, hi95, noise_sd, model_sd; \
for a target learnt on a log or logit scale also scale_mean and scale_sd on that scale). With \
these a measured value's density is (1 − π)·t_ν((z − m)/(a·s))/(a·s) + π·N(z; μ_g, σ_g²), \
a = √((ν − 2)/ν), the density `mettle evaluate` scores (docs/model-format.md).\n\n\
Large inputs: the table is read, estimated and written a batch of rows at a time, so csv and json \
output for millions of rows (CSV or Parquet input) take bounded memory; with --out nothing appears \
under the name until the last row is written. The table format aligns every row, so it holds them \
all: use csv or json for large inputs.\n\n\
Estimates are not test results: qualification testing per the applicable code decides.",
    after_long_help = "Example:\n  mettle predict --model uts.json --input new_heats.csv --format json --out estimates.json"
)]
pub struct PredictArgs {
    /// Model file written by `mettle train`.
    #[arg(long, value_name = "MODEL.json")]
    model: PathBuf,
    /// Rows to estimate (CSV with a header row, or Parquet); must hold every input column of the model.
    #[arg(long, visible_alias = "data", value_name = "FILE")]
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
    /// Column naming each row (heat, weld, specimen), echoed in the output.
    #[arg(long, value_name = "COLUMN")]
    id: Option<String>,
    /// Significant digits of the numbers in CSV output.
    #[arg(long, value_name = "N", default_value_t = DEFAULT_DIGITS as u64,
          value_parser = clap::value_parser!(u64).range(1..=17))]
    digits: u64,
    /// Table format: every target side by side in one table (default: one block per target).
    #[arg(long)]
    wide: bool,
    /// Rows read, estimated and written at a time: fewer take less memory,
    /// the estimates are the same.
    #[arg(long, value_name = "N", default_value_t = PREDICT_BATCH_ROWS as u64,
          value_parser = clap::value_parser!(u64).range(1..))]
    batch_rows: u64,
}

/// One target as printed: name, unit, and the form of its distribution.
struct Column {
    name: String,
    unit: Option<Unit>,
    kind: IntervalKind,
    form: PredictiveForm,
}

/// How the output is laid out.
struct Layout {
    cols: Vec<Column>,
    id_column: Option<String>,
    digits: usize,
    wide: bool,
}

pub fn run(a: PredictArgs) -> anyhow::Result<()> {
    let model = super::load_model(&a.model)?;
    let declared = a.units == UnitChoice::Declared;
    let cols: Vec<Column> = model
        .targets
        .iter()
        .map(|t| {
            let unit = model.target_unit(&t.name, declared);
            let form = PredictiveForm::of(t);
            Column {
                name: t.name.clone(),
                unit,
                kind: t.transform.interval_kind(),
                form: match (declared, unit) {
                    (true, Some(u)) => form.in_unit(u),
                    _ => form,
                },
            }
        })
        .collect();
    // the input is read, estimated and written a batch at a time, so a
    // file of millions of rows is estimated in bounded memory
    let rows_per_batch = usize::try_from(a.batch_rows).unwrap_or(usize::MAX);
    let mut batches = Table::read_batches(&a.input, rows_per_batch)?.peekable();
    // the identifier column is chosen on the first batch and kept
    let id_column = match batches.peek() {
        Some(Ok(first)) => model.row_labels(first, a.id.as_deref())?.map(|l| l.column),
        _ => None,
    };
    let layout = Layout {
        cols,
        id_column,
        digits: usize::try_from(a.digits).unwrap_or(DEFAULT_DIGITS),
        wide: a.wide,
    };
    let estimate = |batch: mettle::Result<Table>| -> anyhow::Result<Batch> {
        let batch = batch?;
        let full = model
            .predict_with_scale(&batch)
            .with_context(|| format!("estimating with model {}", a.model.display()))?;
        let mut rows = full.rows;
        if declared {
            for r in &mut rows {
                for (e, c) in r.estimates.iter_mut().zip(&layout.cols) {
                    if let Some(u) = c.unit {
                        *e = e.in_unit(u);
                    }
                }
            }
        }
        let labels = match &layout.id_column {
            Some(c) => Some(RowLabels::read(&batch, c)?),
            None => None,
        };
        Ok(Batch {
            first_row: batch.first_row(),
            rows,
            learnt: full.learnt,
            labels,
        })
    };
    let mut tally = Tally::default();
    match a.format {
        Format::Table => {
            // aligned columns need every row: for small inputs
            let mut all = Vec::new();
            for b in batches {
                let b = estimate(b)?;
                tally.add(&b.rows);
                all.push(b);
            }
            let mut s = to_table(&layout, &all);
            s.push('\n');
            s.push_str(&wrap("", CAUTION, 0));
            emit(&s, a.out.as_deref())?;
        }
        Format::Csv | Format::Json => {
            let write = |w: &mut dyn Write| -> anyhow::Result<()> {
                let mut out = StreamWriter::start(w, a.format, &layout)?;
                for b in batches {
                    let b = estimate(b)?;
                    tally.add(&b.rows);
                    out.rows(&b)?;
                }
                out.finish()
            };
            match &a.out {
                Some(path) => {
                    let io = || format!("writing {}", path.display());
                    let mut f = AtomicFile::create(path).with_context(io)?;
                    write(&mut f).with_context(io)?;
                    f.commit().with_context(io)?;
                }
                None => {
                    let mut w = BufWriter::new(std::io::stdout().lock());
                    write(&mut w)?;
                    w.flush()?;
                }
            }
        }
    }
    if a.format != Format::Table || a.out.is_some() {
        eprintln!("{CAUTION}");
    }
    if tally.out_of_domain > 0 {
        eprintln!(
            "warning: {} of {} rows are outside the training domain (see notes)",
            tally.out_of_domain, tally.rows
        );
    }
    Ok(())
}

/// The estimates of one batch of input rows.
struct Batch {
    /// Data rows of the file before the batch.
    first_row: usize,
    rows: Vec<RowPrediction>,
    /// Per target, per row: the distribution on the learnt scale.
    learnt: Vec<Vec<ScalePrediction>>,
    /// The rows' identifiers, when the table has an identifier column.
    labels: Option<RowLabels>,
}

impl Batch {
    fn label(&self, i: usize) -> Option<&str> {
        self.labels.as_ref().map(|l| l.get(i))
    }
}

/// Rows estimated, and how many lie outside the domain.
#[derive(Default)]
struct Tally {
    rows: usize,
    out_of_domain: usize,
}

impl Tally {
    fn add(&mut self, rows: &[RowPrediction]) {
        self.rows += rows.len();
        self.out_of_domain += rows.iter().filter(|r| !r.in_domain).count();
    }
}

/// CSV or JSON estimates written as the batches come: the same bytes as
/// formatting all rows at once.
struct StreamWriter<'a> {
    w: &'a mut dyn Write,
    format: Format,
    layout: &'a Layout,
    written: usize,
}

impl<'a> StreamWriter<'a> {
    fn start(w: &'a mut dyn Write, format: Format, layout: &'a Layout) -> anyhow::Result<Self> {
        match format {
            Format::Csv => w.write_all(csv_header(layout).as_bytes())?,
            _ => {
                // the head object, left open for the rows
                let head = serde_json::to_string_pretty(&json_head(layout))?;
                let head = head.strip_suffix("\n}").unwrap_or(&head);
                w.write_all(head.as_bytes())?;
                w.write_all(b",\n  \"rows\": [")?;
            }
        }
        Ok(StreamWriter {
            w,
            format,
            layout,
            written: 0,
        })
    }

    fn rows(&mut self, b: &Batch) -> anyhow::Result<()> {
        for (i, r) in b.rows.iter().enumerate() {
            let number = b.first_row + i + 1;
            if self.format == Format::Csv {
                let cells = csv_cells(self.layout, number, b.label(i), r, self.written == 0);
                self.w
                    .write_all(csv_line(&cells, self.layout.digits).as_bytes())?;
                self.written += 1;
                continue;
            }
            let learnt: Vec<&ScalePrediction> = b.learnt.iter().map(|t| &t[i]).collect();
            // one element of a pretty-printed array: each line indented by four
            let row = json_row(self.layout, number, b.label(i), r, &learnt);
            let text = serde_json::to_string_pretty(&row)?;
            self.w
                .write_all(if self.written == 0 { b"\n" } else { b",\n" })?;
            for (k, line) in text.lines().enumerate() {
                if k > 0 {
                    self.w.write_all(b"\n")?;
                }
                self.w.write_all(b"    ")?;
                self.w.write_all(line.as_bytes())?;
            }
            self.written += 1;
        }
        Ok(())
    }

    fn finish(self) -> anyhow::Result<()> {
        if self.format == Format::Json {
            self.w.write_all(if self.written == 0 {
                b"]\n}\n"
            } else {
                b"\n  ]\n}\n"
            })?;
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

/// What stays the same for every row: the caution, the identifier column,
/// and per target its unit, interval kind and distribution's form.
fn json_head(layout: &Layout) -> Value {
    let targets: Map<String, Value> = layout
        .cols
        .iter()
        .map(|c| {
            let mut m = Map::new();
            m.insert("unit".into(), json!(c.unit.map(|u| u.symbol())));
            m.insert("interval_kind".into(), kind_name(c.kind));
            if let Value::Object(f) = json!(c.form) {
                m.extend(f);
            }
            (c.name.clone(), Value::Object(m))
        })
        .collect();
    json!({
        "caution": CAUTION,
        "id_column": layout.id_column,
        "targets": targets,
    })
}

fn json_row(
    layout: &Layout,
    number: usize,
    label: Option<&str>,
    r: &RowPrediction,
    learnt: &[&ScalePrediction],
) -> Value {
    let mut obj = Map::new();
    obj.insert("row".into(), json!(number));
    if let Some(l) = label {
        obj.insert("id".into(), json!(l));
    }
    obj.insert("in_domain".into(), json!(r.in_domain));
    obj.insert("notes".into(), json!(r.notes));
    let est: Map<String, Value> = layout
        .cols
        .iter()
        .zip(&r.estimates)
        .zip(learnt)
        .map(|((c, e), p)| {
            let mut m: Map<String, Value> = FIELDS
                .iter()
                .zip(estimate_values(e))
                .map(|(k, v)| ((*k).to_string(), json!(v)))
                .collect();
            if c.form.scale != "target" {
                m.insert("scale_mean".into(), json!(p.mean));
                m.insert("scale_sd".into(), json!(p.sd));
            }
            (c.name.clone(), Value::Object(m))
        })
        .collect();
    obj.insert("estimates".into(), Value::Object(est));
    Value::Object(obj)
}

fn csv_header(layout: &Layout) -> String {
    csv_line(&csv_header_cells(layout), layout.digits)
}

fn csv_header_cells(layout: &Layout) -> Vec<Cell> {
    let mut h = vec![Cell::Text("row".into())];
    if let Some(c) = &layout.id_column {
        h.push(Cell::Text(c.clone()));
    }
    h.push(Cell::Text("in_domain".into()));
    for c in &layout.cols {
        for f in FIELDS {
            h.push(Cell::Text(format!("{}_{f}", c.name)));
        }
        h.push(Cell::Text(format!("{}_unit", c.name)));
    }
    h.push(Cell::Text("notes".into()));
    h.push(Cell::Text("caution".into()));
    h
}

fn csv_cells(
    layout: &Layout,
    number: usize,
    label: Option<&str>,
    r: &RowPrediction,
    first: bool,
) -> Vec<Cell> {
    let mut cells = vec![Cell::Int(number)];
    if let Some(l) = label {
        cells.push(Cell::Text(l.to_string()));
    }
    cells.push(Cell::Bool(r.in_domain));
    for (c, e) in layout.cols.iter().zip(&r.estimates) {
        cells.extend(estimate_values(e).map(Cell::Num));
        cells.push(Cell::Text(c.unit.map_or("", |u| u.symbol()).to_string()));
    }
    cells.push(Cell::Text(r.notes.join("; ")));
    cells.push(if first {
        Cell::Text(CAUTION.into())
    } else {
        Cell::Empty
    });
    cells
}

/// The estimate's centre: the mean on the target's own scale, the median
/// for a transformed target.
fn centre(c: &Column, e: &Estimate) -> f64 {
    if c.kind == IntervalKind::Normal {
        e.mean
    } else {
        e.median
    }
}

/// The name of [`centre`].
fn centre_name(c: &Column) -> &'static str {
    if c.kind == IntervalKind::Normal {
        "mean"
    } else {
        "median"
    }
}

fn to_table(layout: &Layout, batches: &[Batch]) -> String {
    let unit_of = |c: &Column| c.unit.map_or(String::new(), |u| format!(" [{u}]"));
    let lead = |h: &mut Vec<String>| {
        h.push("row".into());
        if let Some(c) = &layout.id_column {
            h.push(c.clone());
        }
        h.push("domain".into());
    };
    let rows: Vec<(usize, Option<&str>, &RowPrediction)> = batches
        .iter()
        .flat_map(|b| {
            b.rows
                .iter()
                .enumerate()
                .map(move |(i, r)| (b.first_row + i + 1, b.label(i), r))
        })
        .collect();
    let lead_cells = |number: usize, label: Option<&str>, r: &RowPrediction| {
        let mut cells = vec![number.to_string()];
        if let Some(l) = label {
            cells.push(l.to_string());
        }
        cells.push(if r.in_domain { "in" } else { "OUT" }.to_string());
        cells
    };
    let groups: Vec<Vec<usize>> = if layout.wide {
        vec![(0..layout.cols.len()).collect()]
    } else {
        (0..layout.cols.len()).map(|k| vec![k]).collect()
    };
    let mut out = String::new();
    for group in groups {
        let names: Vec<String> = group
            .iter()
            .map(|&k| format!("{}{}", layout.cols[k].name, unit_of(&layout.cols[k])))
            .collect();
        out.push_str(&format!(
            "{}estimates of {} (sd = noise + model uncertainty; lo95..hi95 = central 95 % interval)\n",
            if out.is_empty() { "" } else { "\n" },
            names.join(", ")
        ));
        for &k in &group {
            let c = &layout.cols[k];
            if c.kind != IntervalKind::Normal {
                out.push_str(&format!("{}: {}\n", c.name, c.kind.describe()));
            }
        }
        let mut h = Vec::new();
        lead(&mut h);
        for &k in &group {
            let c = &layout.cols[k];
            for f in [centre_name(c), "sd", "lo95", "hi95"] {
                h.push(if group.len() == 1 {
                    f.to_string()
                } else {
                    format!("{}_{f}", c.name)
                });
            }
        }
        let body: Vec<Vec<String>> = rows
            .iter()
            .map(|&(number, label, r)| {
                let mut cells = lead_cells(number, label, r);
                for &k in &group {
                    let (c, e) = (&layout.cols[k], &r.estimates[k]);
                    cells.extend([centre(c, e), e.sd, e.lo95, e.hi95].iter().map(|v| num(*v)));
                }
                cells
            })
            .collect();
        out.push_str(&aligned(&h, &body));
    }
    let noted: Vec<String> = rows
        .iter()
        .filter(|(_, _, r)| !r.notes.is_empty())
        .map(|&(number, label, r)| {
            wrap(
                &format!(
                    "  row {number}{}: {}",
                    label.map_or(String::new(), |l| format!(" ({l})")),
                    if r.in_domain { "" } else { "OUT: " },
                ),
                &r.notes.join("; "),
                4,
            )
        })
        .collect();
    if !noted.is_empty() {
        out.push_str("\nnotes:\n");
        out.extend(noted);
    }
    out
}
