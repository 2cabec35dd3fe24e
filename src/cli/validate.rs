//! `mettle validate`

use std::path::{Path, PathBuf};

use anyhow::Context;
use clap::{Args, ValueEnum};
use mettle::data::cells::Cell;
use mettle::data::spreadsheet::{is_xlsx_path, write_xlsx, Sheet};
use mettle::data::Table;
use mettle::report::validation::{figure_row, out_of_fold_svg, FIGURE_HEADER};
use mettle::validate::{cross_validate, CvOptions, Recipe, TargetValidation, Validation};

use super::output::{aligned, csv_field, emit};
use super::progress::TrainProgress;
use super::train::{Plan, TrainColumns, TrainSettings};

/// Output formats of `validate`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum ValidateFormat {
    /// Aligned columns.
    Table,
    /// JSON: the whole cross-validation, every out-of-fold row included.
    Json,
}

/// Arguments of `mettle validate`.
#[derive(Args, Debug)]
#[command(
    about = "Cross-validate: how accurate a model trained this way is on rows it has not seen.",
    long_about = "K-fold cross-validation of the whole training procedure.\n\n\
The rows are split into K folds (--folds, default 10). For each fold a model is trained exactly as \
`mettle train` would train it with the same options, on the other folds only, and it estimates the \
rows of the held-out fold. Every row is so estimated once by a model that never saw it: the \
figures say what to expect on new heats like those in the file, unlike `evaluate` on the training \
table, which is optimistic. The candidate search and every choice training makes happen inside \
each fold's training rows.\n\n\
Rows that are not independent must not straddle folds: a heat tested at several temperatures, \
one weld cut into several specimens. Name the column that identifies them with --group (or with \
group = \"COLUMN\" in the schema); its equal values stay in one fold (an empty cell is a group of its own).\n\n\
Per target: RMSE, MAE, R², NLPD (nats per point, lower is better) and the coverages of the 68 % \
and 95 % intervals over the out-of-fold rows, each with its standard error over folds (folds share \
training rows, so it is if anything too small); the calibration of the error bars; and the input \
relevance of every fold's committee, shown as its median and range: a wide range means the \
ranking is not settled by the data. --repeats R repeats it with R different partitions and \
averages.\n\n\
Outputs: the figures on standard output (--format json for everything, rows included); --out \
FILE.json the whole result, which `mettle report --validation FILE.json` shows; --rows FILE.csv \
(or .json, or an .xlsx workbook with the rows on sheet out_of_fold) the out-of-fold estimate of every row (columns target, row, repeat, fold, measured, \
mean, sd, lo95, hi95, in_domain) for your own plots; --svg FILE.svg the chart of out-of-fold \
estimates against measured values (one file per target when there are several: FILE_<target>.svg).\n\n\
It trains K × R models: with default settings that is K × R times as long as `train`.\n\n\
Examples:\n  mettle validate --data welds.csv --schema welds.toml --group heat_id --out cv.json\n  \
mettle validate --data welds.csv --target uts_mpa --folds 5 --repeats 2 --rows oof.csv --svg oof.svg"
)]
pub struct ValidateArgs {
    #[command(flatten)]
    columns: TrainColumns,
    /// Folds K (at least 2, at most the number of rows or groups).
    #[arg(long, value_name = "K", default_value_t = 10)]
    folds: usize,
    /// Repeats with a fresh partition of the rows.
    #[arg(long, value_name = "R", default_value_t = 1)]
    repeats: usize,
    /// Column whose equal values (a heat, a weld) must stay in one fold
    /// (default: the column the schema names with `group = "…"`).
    #[arg(long, value_name = "COLUMN")]
    group: Option<String>,
    #[command(flatten)]
    settings: TrainSettings,
    /// Output format on standard output.
    #[arg(long, value_enum, default_value_t = ValidateFormat::Table)]
    format: ValidateFormat,
    /// Write the whole result as JSON (for `mettle report --validation`).
    #[arg(long, value_name = "FILE.json")]
    out: Option<PathBuf>,
    /// Write every row's out-of-fold estimate (.csv, .json or .xlsx by extension).
    #[arg(long, value_name = "FILE.csv")]
    rows: Option<PathBuf>,
    /// Write the chart of out-of-fold estimates against measured values (SVG).
    #[arg(long, value_name = "FILE.svg")]
    svg: Option<PathBuf>,
    /// With --svg, also each chart as PNG beside it (FILE.png, twice the SVG's size), for slides.
    #[arg(long, requires = "svg")]
    png: bool,
    /// No progress display.
    #[arg(long, short)]
    quiet: bool,
}

/// Read a cross-validation written by `validate --out`.
///
/// # Errors
/// An unreadable or malformed file.
pub fn load(path: &Path) -> anyhow::Result<Validation> {
    let text = std::fs::read_to_string(path)
        .with_context(|| format!("{}: cannot read", path.display()))?;
    serde_json::from_str(&text).with_context(|| {
        format!(
            "{}: not a cross-validation written by `mettle validate --out`",
            path.display()
        )
    })
}

pub fn run(a: ValidateArgs) -> anyhow::Result<()> {
    let table = Table::read_sheet(&a.columns.data, a.columns.sheet.as_deref())?;
    let plan = Plan::new(&a.columns, &a.settings)?;
    let recipe = match &plan {
        Plan::Schema(schema, name, options) => Recipe::Schema {
            schema,
            name,
            options,
        },
        Plan::Columns(spec) => Recipe::Columns(spec),
    };
    let options = CvOptions {
        n_folds: a.folds,
        n_repeats: a.repeats,
        seed: a.settings.seed,
        // --group, else the group column the schema names
        group: a.group.clone().or_else(|| match &plan {
            Plan::Schema(schema, ..) => schema.group.clone(),
            Plan::Columns(_) => None,
        }),
    };
    let progress = TrainProgress::new(a.quiet);
    let started = std::time::Instant::now();
    let result = cross_validate(&table, recipe, &options, &progress);
    progress.finish();
    let v = result?;
    if let Some(path) = &a.out {
        emit(&(serde_json::to_string_pretty(&v)? + "\n"), Some(path))?;
    }
    if let Some(path) = &a.rows {
        if is_xlsx_path(path) {
            write_xlsx(path, &[rows_sheet(&v)], 17)?;
        } else {
            emit(&rows_text(&v, path)?, Some(path))?;
        }
    }
    if let Some(path) = &a.svg {
        write_svgs(&v, path, a.png)?;
    }
    let text = match a.format {
        ValidateFormat::Json => serde_json::to_string_pretty(&v)? + "\n",
        ValidateFormat::Table => summary_text(&v),
    };
    emit(&text, None)?;
    if !a.quiet {
        eprintln!(
            "{} models trained in {:.1} s",
            v.n_folds * v.n_repeats,
            started.elapsed().as_secs_f64()
        );
    }
    Ok(())
}

fn summary_text(v: &Validation) -> String {
    let mut s = format!(
        "{}: {} rows, {} folds{}{}, seed {}\n",
        v.data_file,
        v.n_rows,
        v.n_folds,
        if v.n_repeats > 1 {
            format!(" × {} repeats", v.n_repeats)
        } else {
            String::new()
        },
        v.group.as_ref().map_or(String::new(), |g| format!(
            ", grouped by '{g}' ({} groups)",
            v.n_groups
        )),
        v.seed
    );
    let head: Vec<String> = FIGURE_HEADER.iter().map(|x| x.to_string()).collect();
    let body: Vec<Vec<String>> = v.targets.iter().map(figure_row).collect();
    s += &aligned(&head, &body);
    s += "out-of-fold rows, ± the standard error over folds; honest error bars: coverage_68 near 0.68, coverage_95 near 0.95\n";
    for t in &v.targets {
        s += &target_detail(t);
    }
    s
}

fn target_detail(t: &TargetValidation) -> String {
    let mut s = format!(
        "\n{}: calibration of the out-of-fold error bars\n",
        t.target
    );
    let head: Vec<String> = ["nominal", "observed", "n", "honest_range"]
        .iter()
        .map(|x| x.to_string())
        .collect();
    let body: Vec<Vec<String>> = t
        .calibration
        .iter()
        .map(|c| {
            vec![
                format!("{:.2}", c.nominal),
                format!("{:.3}", c.observed),
                c.n.to_string(),
                format!(
                    "{:.3} to {:.3}",
                    (c.nominal - 2.0 * c.binomial_sd).max(0.0),
                    (c.nominal + 2.0 * c.binomial_sd).min(1.0)
                ),
            ]
        })
        .collect();
    s += &aligned(&head, &body);
    if let Some(rel) = &t.relevance {
        let mut ranked = rel.clone();
        ranked.sort_by(|a, b| b.value.total_cmp(&a.value));
        s += &format!("\n{}: input relevance over the folds\n", t.target);
        let head: Vec<String> = ["input", "median", "low", "high"]
            .iter()
            .map(|x| x.to_string())
            .collect();
        let body: Vec<Vec<String>> = ranked
            .iter()
            .map(|r| {
                vec![
                    r.input.clone(),
                    format!("{:.2}", r.value),
                    format!("{:.2}", r.low),
                    format!("{:.2}", r.high),
                ]
            })
            .collect();
        s += &aligned(&head, &body);
        s += &format!("{}\n", mettle::explain::RELEVANCE_MEANING);
    }
    s
}

/// The out-of-fold rows as a workbook sheet: the CSV's columns, numbers
/// stored as numbers.
fn rows_sheet(v: &Validation) -> Sheet {
    let head = [
        "target",
        "row",
        "repeat",
        "fold",
        "measured",
        "mean",
        "sd",
        "lo95",
        "hi95",
        "in_domain",
    ];
    let mut rows = vec![head.iter().map(|h| Cell::Text((*h).into())).collect()];
    for t in &v.targets {
        for r in &t.rows {
            rows.push(vec![
                Cell::Text(t.target.clone()),
                Cell::Int(r.row),
                Cell::Int(r.repeat),
                Cell::Int(r.fold),
                Cell::Num(r.measured),
                Cell::Num(r.mean),
                Cell::Num(r.sd),
                Cell::Num(r.lo95),
                Cell::Num(r.hi95),
                Cell::Bool(r.in_domain),
            ]);
        }
    }
    Sheet {
        name: "out_of_fold".into(),
        rows,
    }
}

fn rows_text(v: &Validation, path: &Path) -> anyhow::Result<String> {
    let json = path
        .extension()
        .is_some_and(|e| e.eq_ignore_ascii_case("json"));
    if json {
        let all: Vec<serde_json::Value> = v
            .targets
            .iter()
            .flat_map(|t| {
                t.rows.iter().map(|r| {
                    let mut o = serde_json::to_value(r).unwrap_or_default();
                    if let Some(m) = o.as_object_mut() {
                        m.insert("target".into(), serde_json::json!(t.target));
                    }
                    o
                })
            })
            .collect();
        return Ok(serde_json::to_string_pretty(&all)? + "\n");
    }
    let mut s = String::from("target,row,repeat,fold,measured,mean,sd,lo95,hi95,in_domain\n");
    for t in &v.targets {
        for r in &t.rows {
            s += &format!(
                "{},{},{},{},{},{},{},{},{},{}\n",
                csv_field(&t.target),
                r.row,
                r.repeat,
                r.fold,
                r.measured,
                r.mean,
                r.sd,
                r.lo95,
                r.hi95,
                r.in_domain
            );
        }
    }
    Ok(s)
}

fn write_svgs(v: &Validation, path: &Path, png: bool) -> anyhow::Result<()> {
    for t in &v.targets {
        let p = if v.targets.len() == 1 {
            path.to_path_buf()
        } else {
            let stem = path
                .file_stem()
                .map_or_else(String::new, |s| s.to_string_lossy().into_owned());
            path.with_file_name(format!("{stem}_{}.svg", t.target))
        };
        super::chart_file::write_chart(&p, &out_of_fold_svg(t)?, png)
            .with_context(|| format!("writing {}", p.display()))?;
    }
    Ok(())
}
