//! `mettle compare`

use std::path::PathBuf;

use clap::Args;
use mettle::data::Table;
use mettle::explain::{compare, Comparison};
use mettle::prec::PAIRED_SHOWN_SE;

use super::evaluate::EvalFormat;
use super::output::{aligned, emit, num};

/// Arguments of `mettle compare`.
#[derive(Args, Debug)]
#[command(
    about = "Compare two models on the same table: metrics side by side, rows where they disagree, what changed in training.",
    long_about = "Compare an old and a new model (for instance before and after retraining) on the \
same held-out table.\n\n\
For each target both models estimate: rmse, mae, r2, nlpd and the coverages side by side; the \
paired differences new − old of RMSE and NLPD on the rows both estimate, with their standard \
errors (paired t for NLPD, delta method for RMSE) and a verdict: better or worse by so much, or \
no difference this table can show (within 2 standard errors; a small table rarely shows one); the \
rows where the two estimates differ by more than their combined error bars (the 95 % interval \
half-widths added in quadrature); and what changed in the training: fingerprint, file, row \
counts, inputs added or removed, input and target ranges, settings. The last line counts every \
difference found, and says how many of each kind and how many rows are left out of the listing: a \
model compared with itself has none.\n\n\
JSON output: an object with n_rows, targets (each with target, old, new, metric_changes, \
disagreements, paired: n, rmse and nlpd each with old, new, difference, se, t), training_changes and n_differences.\n\n\
Example:\n  mettle compare --old uts_2024.json --new uts_2025.json --data held_back.csv"
)]
pub struct CompareArgs {
    /// The model in use.
    #[arg(long, value_name = "MODEL.json")]
    old: PathBuf,
    /// The retrained model.
    #[arg(long, value_name = "MODEL.json")]
    new: PathBuf,
    /// Held-out table with the inputs and measured targets.
    #[arg(long, value_name = "FILE")]
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
}

/// Rows of disagreement listed one by one in the table output.
const ROWS_SHOWN: usize = 20;

fn text(c: &Comparison) -> String {
    let mut s = String::new();
    for t in &c.targets {
        s += &format!("target {}:\n", t.target);
        let h: Vec<String> = ["metric", "old", "new"]
            .iter()
            .map(|x| x.to_string())
            .collect();
        let rows: Vec<Vec<String>> = match (&t.old, &t.new) {
            (Some(o), Some(n)) => {
                std::iter::once(vec!["n".to_string(), o.n.to_string(), n.n.to_string()])
                    .chain(
                        o.named()
                            .into_iter()
                            .zip(n.named())
                            .map(|((k, a), (_, b))| vec![k.to_string(), num(a), num(b)]),
                    )
                    .collect()
            }
            _ => vec![vec![
                "(no measured rows)".into(),
                String::new(),
                String::new(),
            ]],
        };
        s += &aligned(&h, &rows);
        if let Some(p) = &t.paired {
            s += &format!(
                "paired on the {} row(s) both estimate (± one standard error; a difference is shown beyond {PAIRED_SHOWN_SE} SE):\n  {}\n  {}\n",
                p.n,
                p.rmse.verdict("RMSE", ""),
                p.nlpd.verdict("NLPD", " nats per row")
            );
        }
        s += &format!(
            "{} row(s) where the estimates differ by more than their combined 95 % error bars\n",
            t.disagreements.len()
        );
        if !t.disagreements.is_empty() {
            let h: Vec<String> = ["row", "measured", "old", "old_±", "new", "new_±"]
                .iter()
                .map(|x| x.to_string())
                .collect();
            let rows: Vec<Vec<String>> = t
                .disagreements
                .iter()
                .take(ROWS_SHOWN)
                .map(|d| {
                    vec![
                        d.row.to_string(),
                        num(d.measured),
                        num(d.old_mean),
                        num(d.old_half_width),
                        num(d.new_mean),
                        num(d.new_half_width),
                    ]
                })
                .collect();
            s += &aligned(&h, &rows);
            if t.disagreements.len() > ROWS_SHOWN {
                s += &format!("... ({} in all)\n", t.disagreements.len());
            }
        }
    }
    if c.training_changes.is_empty() {
        s += "training: same rows, ranges and settings\n";
    } else {
        s += "training changes:\n";
        for ch in &c.training_changes {
            s += &format!("  {ch}\n");
        }
    }
    let metrics: usize = c.targets.iter().map(|t| t.metric_changes.len()).sum();
    let rows: usize = c.targets.iter().map(|t| t.disagreements.len()).sum();
    let listed: usize = c
        .targets
        .iter()
        .map(|t| t.disagreements.len().min(ROWS_SHOWN))
        .sum();
    s += &format!(
        "{} difference(s) in all: {} training change(s) (listed), {metrics} metric value(s) that changed (in the tables), {rows} row(s) of disagreement ({})\n",
        c.n_differences,
        c.training_changes.len(),
        if listed == rows {
            "all listed".to_string()
        } else {
            format!("{listed} listed, {} left out", rows - listed)
        }
    );
    s
}

pub fn run(a: CompareArgs) -> anyhow::Result<()> {
    let old = super::load_model(&a.old)?;
    let new = super::load_model(&a.new)?;
    let table = Table::read_sheet(&a.data, a.sheet.as_deref())?;
    let c = compare(&old, &new, &table)?;
    let out = match a.format {
        EvalFormat::Json => serde_json::to_string_pretty(&c)? + "\n",
        EvalFormat::Table => text(&c),
    };
    emit(&out, a.out.as_deref())
}
