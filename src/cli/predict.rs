//! `mettle predict`

use std::io::{BufWriter, Write};
use std::path::PathBuf;

use anyhow::Context;
use clap::{Args, ValueEnum};
use mettle::data::{AtomicFile, Table};
use mettle::model::IntervalKind;
use mettle::prec::PREDICT_BATCH_ROWS;
use mettle::predict::{
    to_column_units, EstimateFormat, EstimateWriter, RowPrediction, TargetColumn as Column,
};
use mettle::Model;

use super::output::{aligned, emit, num, Format};
use super::predict_extra::{BatchExtras, Extras};
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
central 95 % interval (lo95, hi95) and a graded domain verdict (domain): inside (training rows \
like it in every input that matters), thin (near the data but with few close training rows or a \
raised model uncertainty: usable, check the error bar) or outside (beyond a range, in an empty \
region of the inputs that matter, or where the committee's uncertainty is far above its usual). \
in_domain is false only for outside; the notes name the inputs responsible. An estimate outside \
the domain is an extrapolation: treat it with suspicion whatever its error bar.\n\n\
For a target learnt on the log or a bounded scale (schema transform), the interval is computed on \
that scale and mapped back: it is asymmetric about the median, and interval_kind says so \
(normal, log_normal, logit_normal). When the model chose a heavy-tailed (Student-t) error shape \
(train --heavy-tails; explain names it), the interval is that shape's central 95 % interval: the sd \
is unchanged, the interval a little narrower than ± 1.96 sd. For a model trained with a schema, the input table is read \
through the stored schema: its units are converted and its derived inputs computed from the raw \
columns; estimates are in internal units (MPa, J, %, °C) unless --units declared.\n\n\
JSON output is an array with one object per row: keys row, target, mean, median, sd, lo95, hi95, \
noise_sd, model_sd, interval_kind, unit (when known), in_domain, domain, notes, caution (for a model with several \
targets, an 'estimates' object keyed by target holds mean ... unit).\n\n\
--require REQ (repeatable; the syntax of `mettle screen`, thresholds in internal units) adds the \
probability that each row meets each requirement and all of them (P_all, from the targets' joint \
predictive distribution; `joint` says whether their scatter was taken as correlated or \
independent). --neighbours K with --training-data FILE (the model's own training table, checked \
against its fingerprint) adds each row's K nearest training rows: file row, identifier (the \
schema's identifier column), distance and measured values — what the estimate rests on. In CSV \
and JSON they are extra columns or keys after caution; in the table, blocks below it.\n\n\
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
    /// Rows read, estimated and written at a time: fewer take less memory,
    /// the estimates are the same.
    #[arg(long, value_name = "N", default_value_t = PREDICT_BATCH_ROWS as u64,
          value_parser = clap::value_parser!(u64).range(1..))]
    batch_rows: u64,
    /// A requirement, e.g. `uts_mpa>=550` or `charpy_j>=47@test_temp_c=-40` (the syntax of
    /// `mettle screen`); repeat for several: adds each row's probability of meeting each and all.
    #[arg(long = "require", value_name = "REQ")]
    require: Vec<String>,
    /// List each row's K nearest training rows (needs --training-data).
    #[arg(long, value_name = "K", value_parser = clap::value_parser!(u64).range(1..1000))]
    neighbours: Option<u64>,
    /// The model's training table, for --neighbours (checked against the model's fingerprint).
    #[arg(long, value_name = "FILE")]
    training_data: Option<PathBuf>,
}

pub fn run(a: PredictArgs) -> anyhow::Result<()> {
    let model = Model::load(&a.model)?;
    let declared = a.units == UnitChoice::Declared;
    let cols = model.target_columns(declared);
    // the input is read, estimated and written a batch at a time, so a
    // file of millions of rows is estimated in bounded memory
    let rows_per_batch = usize::try_from(a.batch_rows).unwrap_or(usize::MAX);
    let extras = Extras::new(
        &model,
        &a.require,
        a.neighbours.map(|k| k as usize),
        a.training_data.as_deref(),
        declared,
    )?;
    let batches = Table::read_batches(&a.input, rows_per_batch)?;
    let estimate = |batch: mettle::Result<Table>| -> anyhow::Result<Batch> {
        let batch = batch?;
        let context = || format!("estimating with model {}", a.model.display());
        let (mut rows, extra) = match &extras {
            None => (model.predict(&batch).with_context(context)?, None),
            Some(x) => {
                let full = model.predict_with_scale(&batch).with_context(context)?;
                let extra = x.batch(&batch, &full).with_context(context)?;
                (full.rows, Some(extra))
            }
        };
        if declared {
            to_column_units(&cols, &mut rows);
        }
        Ok(Batch {
            first_row: batch.first_row(),
            rows,
            extra,
        })
    };
    let mut tally = Tally::default();
    match a.format {
        Format::Table => {
            // aligned columns need every row: for small inputs
            let mut all = Vec::new();
            let mut more = Vec::new();
            for b in batches {
                let b = estimate(b)?;
                tally.add(&b.rows);
                all.extend(b.rows);
                more.extend(b.extra.map(|x| (b.first_row, x)));
            }
            let mut s = to_table(&cols, &all);
            if let Some(x) = &extras {
                s.push_str(&x.table_blocks(&more));
            }
            s.push('\n');
            s.push_str(CAUTION);
            s.push('\n');
            emit(&s, a.out.as_deref())?;
        }
        Format::Csv | Format::Json => {
            let write = |w: &mut dyn Write| -> anyhow::Result<()> {
                let format = if a.format == Format::Csv {
                    EstimateFormat::Csv
                } else {
                    EstimateFormat::Json
                };
                let header = extras.as_ref().map_or_else(Vec::new, |x| x.csv_header());
                let mut out = EstimateWriter::start_with(w, format, &cols, &header)?;
                for b in batches {
                    let b = estimate(b)?;
                    tally.add(&b.rows);
                    let cells = match (&extras, &b.extra) {
                        (Some(x), Some(e)) => x.cells(e),
                        _ => Vec::new(),
                    };
                    out.rows_with(b.first_row, &b.rows, &cells)?;
                }
                Ok(out.finish()?)
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
    if tally.thin > 0 {
        eprintln!(
            "note: {} of {} rows have thin support (domain = thin: near the data, few close \
             training rows or a raised model uncertainty; see notes)",
            tally.thin, tally.rows
        );
    }
    Ok(())
}

/// The estimates of one batch of input rows.
struct Batch {
    /// Data rows of the file before the batch.
    first_row: usize,
    rows: Vec<RowPrediction>,
    /// --require and --neighbours, when asked for.
    extra: Option<BatchExtras>,
}

/// Rows estimated, and how many lie outside the domain.
#[derive(Default)]
struct Tally {
    rows: usize,
    out_of_domain: usize,
    thin: usize,
}

impl Tally {
    fn add(&mut self, rows: &[RowPrediction]) {
        self.rows += rows.len();
        self.out_of_domain += rows.iter().filter(|r| !r.in_domain).count();
        self.thin += rows
            .iter()
            .filter(|r| r.level == mettle::domain::DomainLevel::Thin)
            .count();
    }
}

/// The verdict cell of a table: `in`, `thin` or `OUT`, then the notes.
pub(crate) fn domain_cell(level: mettle::domain::DomainLevel, notes: &[String]) -> String {
    match (level, notes.is_empty()) {
        (mettle::domain::DomainLevel::Outside, _) => format!("OUT: {}", notes.join("; ")),
        (_, true) => level.short().to_string(),
        (_, false) => format!("{}; {}", level.short(), notes.join("; ")),
    }
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
            cells.push(domain_cell(r.level, &r.notes));
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
