//! `mettle predict`

use std::io::{BufWriter, Write};
use std::path::PathBuf;

use anyhow::Context;
use clap::{Args, ValueEnum};
use mettle::data::spreadsheet::is_xlsx_path;
use mettle::data::{AtomicFile, Table};
use mettle::domain::DomainLevel;
use mettle::model::IntervalKind;
use mettle::prec::PREDICT_BATCH_ROWS;
use mettle::predict::{
    EstimateBatch, EstimateFormat, EstimateLayout, EstimateWriter, RowPrediction,
};

use super::output::{aligned, emit, num, wrap, Format, DEFAULT_DIGITS};
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
Rows are named by their number in the file (1 = first data row) and, when the table has one, by \
an identifier: the column --id names, else the column the model's schema declares as identifier, \
else a first column of text such as heat codes (FH-1023) that is not an input.\n\n\
The table shows one block per target (--wide: all targets side by side), the domain verdict \
beside the row, and the notes below. CSV has one line per row: row, the identifier, in_domain, \
domain, then per target TARGET_mean, _median, _sd, _lo95, _hi95, _noise_sd, _model_sd and _unit, then \
notes; numbers to 6 significant digits (--digits); the caution in the first row's caution cell.\n\n\
JSON output is one object: caution; id_column; targets, keyed by target, each with unit, \
interval_kind and the predictive distribution's form (shape gaussian or student_t, dof, scale, \
gross_error_share, gross_error_mean, gross_error_sd); and rows, one object per row with row, id, \
in_domain, domain, notes and estimates keyed by target (mean, median, sd, lo95, hi95, noise_sd, model_sd; \
for a target learnt on a log or logit scale also scale_mean and scale_sd on that scale). With \
these a measured value's density is (1 − π)·t_ν((z − m)/(a·s))/(a·s) + π·N(z; μ_g, σ_g²), \
a = √((ν − 2)/ν), the density `mettle evaluate` scores (docs/model-format.md).\n\n\
With --out FILE.xlsx the estimates are written as an Excel workbook: the CSV's cells on sheet \
'estimates' (numbers stored as numbers), each target's distribution on sheet 'targets'.\n\n\
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
    /// Rows to estimate (CSV with a header row, Parquet, or a spreadsheet workbook .xlsx); must hold every input column of the model.
    #[arg(long, visible_alias = "data", value_name = "FILE")]
    input: PathBuf,
    /// Sheet to read when the table is a spreadsheet workbook (.xlsx, .xls) [default: the first].
    #[arg(long, value_name = "NAME")]
    sheet: Option<String>,
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
    /// Every error bar by the exact Laplace variance and residual process. By default each
    /// row's sd comes from the members' leading posterior directions and the process's nearby
    /// rows, with a bound computed per row; a row whose sd could be more than 0.5 % off goes
    /// the exact way (docs/benchmarks.md, the fast prediction path).
    #[arg(long)]
    exact: bool,
}

pub fn run(a: PredictArgs) -> anyhow::Result<()> {
    let model = super::load_model(&a.model)?;
    let predictor = model.predictor(a.exact);
    let declared = a.units == UnitChoice::Declared;
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
    let mut batches =
        Table::read_sheet_batches(&a.input, rows_per_batch, a.sheet.as_deref())?.peekable();
    // the identifier column is chosen on the first batch and kept
    let first = match batches.peek() {
        Some(Ok(first)) => Some(first),
        _ => None,
    };
    let mut layout = model.estimate_layout(
        first,
        a.id.as_deref(),
        declared,
        usize::try_from(a.digits).unwrap_or(DEFAULT_DIGITS),
    )?;
    if let Some(x) = &extras {
        layout.extra_columns = x.column_names();
    }
    // each batch's estimates, with what --require and --neighbours add
    let estimate =
        |batch: mettle::Result<Table>| -> anyhow::Result<(EstimateBatch, Option<BatchExtras>)> {
            let batch = batch?;
            let context = || format!("estimating with model {}", a.model.display());
            match &extras {
                None => Ok((
                    predictor
                        .estimate_batch(&batch, &layout)
                        .with_context(context)?,
                    None,
                )),
                Some(x) => {
                    let (mut b, full) = predictor
                        .estimate_batch_full(&batch, &layout)
                        .with_context(context)?;
                    let extra = x.batch(&batch, &full).with_context(context)?;
                    b.extra = x.cells(&extra);
                    Ok((b, Some(extra)))
                }
            }
        };
    let xlsx = a.out.as_deref().is_some_and(is_xlsx_path);
    let mut tally = Tally::default();
    let mut told = false;
    let mut tell = |b: &EstimateBatch| {
        // the conversions of the header, once
        if !told {
            for d in &b.declarations {
                eprintln!("note: {}", d.describe());
            }
            told = true;
        }
    };
    match a.format {
        Format::Table if !xlsx => {
            // aligned columns need every row: for small inputs
            let mut all = Vec::new();
            let mut more = Vec::new();
            for b in batches {
                let (b, extra) = estimate(b)?;
                tell(&b);
                tally.add(&b.rows);
                more.extend(extra.map(|x| (b.first_row, x)));
                all.push(b);
            }
            let mut s = to_table(&layout, &all, a.wide);
            if let Some(x) = &extras {
                s.push_str(&x.table_blocks(&more));
            }
            s.push('\n');
            s.push_str(&wrap("", CAUTION, 0));
            emit(&s, a.out.as_deref())?;
        }
        _ => {
            let format = match a.format {
                _ if xlsx => EstimateFormat::Xlsx,
                Format::Csv => EstimateFormat::Csv,
                _ => EstimateFormat::Json,
            };
            let write = |w: &mut dyn Write| -> anyhow::Result<()> {
                let mut out = EstimateWriter::start(w, format, &layout)?;
                for b in batches {
                    let (b, _) = estimate(b)?;
                    tell(&b);
                    tally.add(&b.rows);
                    out.rows(&b)?;
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

/// Rows estimated, and how many lie outside the domain or have thin support.
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
        self.thin += rows.iter().filter(|r| r.level == DomainLevel::Thin).count();
    }
}

fn to_table(layout: &EstimateLayout, batches: &[EstimateBatch], wide: bool) -> String {
    let unit_of =
        |c: &mettle::predict::TargetColumn| c.unit.map_or(String::new(), |u| format!(" [{u}]"));
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
        cells.push(r.level.short().to_string());
        cells
    };
    let groups: Vec<Vec<usize>> = if wide {
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
            for f in [c.centre_name(), "sd", "lo95", "hi95"] {
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
                    cells.extend([c.centre(e), e.sd, e.lo95, e.hi95].iter().map(|v| num(*v)));
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
                    match r.level {
                        DomainLevel::Outside => "OUT: ",
                        DomainLevel::Thin => "thin: ",
                        _ => "",
                    },
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
