//! `mettle audit`

use std::path::PathBuf;

use clap::{Args, ValueEnum};
use mettle::data::audit::{audit, AuditOptions, AuditReport};
use mettle::data::schema::{Role, Schema};
use mettle::data::{identifier_column, RowLabels, Table};
use serde_json::json;

use super::output::{aligned, emit, num};

/// Output formats of `audit`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum AuditFormat {
    /// Sections of aligned text.
    Table,
    /// One JSON object.
    Json,
}

/// Arguments of `mettle audit`.
#[derive(Args, Debug)]
#[command(
    about = "Check a table of test records before trusting it: bad cells, duplicates, replicate scatter, outliers.",
    long_about = "Check a table of test records before training on it.\n\n\
Reports rows and columns; per column the count, missing and unusable cells, min, max, median and \
unit; exact duplicate rows; replicate groups (rows with identical inputs and several measured \
values of a target) with the pooled replicate standard deviation per target — the measured scatter \
of repeat tests, which a model's fitted noise level should be compared with; strongly correlated \
input pairs (|r| ≥ 0.95); outliers (robust z-score 0.6745·(x − median)/MAD above 3.5, and outside the fences of the \
adjusted boxplot for skewed data, so that the long tail of a skewed column is not listed value by \
value), each value judged within its column's group: a column whose values fall into separate \
groups (two grades, a family of heats at another Mn level; found as the clear modes of a kernel \
density estimate, each of at least 8 values and 2 % of the column) is judged group by group, and \
a lone typing slip is judged against the group it strayed from; inputs with fewer than 4 distinct \
values; a short list of what to fix first (likely faults only: unusable values, missing inputs, \
exact copies, outliers); and notes that are not faults (groups of values, few levels, correlated \
inputs, missing targets, replicate scatter).\n\n\
With --schema the table is read as training would read it: values in internal units, and negative \
concentrations, values outside declared bounds and compositions above 100 wt% are reported (all of \
them, not only the first). Without a schema, --target names the targets and every other column \
holding numbers is taken as an input (or those given with --inputs).\n\n\
JSON output: one object with keys file, n_rows, n_columns, columns, problems, problems_not_listed, \
rows_missing_inputs, duplicates, duplicates_compared, replicates, correlated, outliers, clusters \
(column and its modes, each with lo, hi, n), few_levels, verdict, notes, and with an identifier \
column id_column (each outlier then has an id). Rows are numbered from 1, header excluded, and \
named by their identifier: the column --id names, else the schema's identifier column, else a \
first column of text (heat codes) that is not a target or input.\n\n\
Example:\n  mettle audit --data welds.csv --schema welds.toml"
)]
pub struct AuditArgs {
    /// Table to check (CSV with a header row, Parquet, or a spreadsheet workbook .xlsx).
    #[arg(long, visible_alias = "input", value_name = "FILE")]
    data: PathBuf,
    /// Sheet to read when the table is a spreadsheet workbook (.xlsx, .xls) [default: the first].
    #[arg(long, value_name = "NAME")]
    sheet: Option<String>,
    /// Schema file: roles, units and bounds of the columns.
    #[arg(long, value_name = "SCHEMA.toml")]
    schema: Option<PathBuf>,
    /// Without a schema: the target column(s).
    #[arg(
        long,
        value_name = "NAME",
        value_delimiter = ',',
        conflicts_with = "schema"
    )]
    target: Vec<String>,
    /// Without a schema: the input columns [default: every other column holding numbers].
    #[arg(
        long,
        value_name = "A,B,...",
        value_delimiter = ',',
        conflicts_with = "schema"
    )]
    inputs: Option<Vec<String>>,
    /// Output format.
    #[arg(long, value_enum, default_value_t = AuditFormat::Table)]
    format: AuditFormat,
    /// Write to this file (atomically) instead of standard output.
    #[arg(long, value_name = "FILE")]
    out: Option<PathBuf>,
    /// Column naming each row (heat, weld, specimen), echoed beside rows listed.
    #[arg(long, value_name = "COLUMN")]
    id: Option<String>,
}

pub fn run(a: AuditArgs) -> anyhow::Result<()> {
    let schema = match &a.schema {
        Some(p) => Some((Schema::load(p)?, p.display().to_string())),
        None => None,
    };
    let table = Table::read_sheet(&a.data, a.sheet.as_deref())?;
    let opts = AuditOptions {
        targets: a.target.clone(),
        inputs: a.inputs.clone(),
    };
    let report = audit(&table, schema.as_ref().map(|(s, n)| (s, n.as_str())), &opts)?;
    let declared: Vec<String> = schema.as_ref().map_or_else(Vec::new, |(s, _)| {
        s.with_role(Role::Identifier)
            .map(|c| c.name.clone())
            .collect()
    });
    let mut inputs: Vec<&str> = a.target.iter().map(String::as_str).collect();
    inputs.extend(a.inputs.iter().flatten().map(String::as_str));
    let labels = identifier_column(&table, a.id.as_deref(), &declared, &inputs)?
        .map(|c| RowLabels::read(&table, &c))
        .transpose()?;
    let text = match a.format {
        AuditFormat::Json => {
            let mut v = serde_json::to_value(&report)?;
            if let Some(l) = &labels {
                name_rows(&mut v, l);
            }
            serde_json::to_string_pretty(&v)? + "\n"
        }
        AuditFormat::Table => to_text(&report, labels.as_ref()),
    };
    emit(&text, a.out.as_deref())
}

/// The JSON report with each outlier's identifier (`id`) and the
/// identifier column (`id_column`).
fn name_rows(v: &mut serde_json::Value, labels: &RowLabels) {
    if let Some(list) = v["outliers"].as_array_mut() {
        for o in list {
            let row = o["row"].as_u64().and_then(|r| usize::try_from(r).ok());
            if let (Some(row), Some(obj)) = (row, o.as_object_mut()) {
                obj.insert("id".into(), json!(labels.get(row - 1)));
            }
        }
    }
    if let Some(obj) = v.as_object_mut() {
        obj.insert("id_column".into(), json!(labels.column));
    }
}

/// "12" or "12 (FH-1023)".
fn row_name(row: usize, labels: Option<&RowLabels>) -> String {
    match labels {
        Some(l) => format!("{row} ({})", l.get(row - 1)),
        None => row.to_string(),
    }
}

fn opt(v: Option<f64>) -> String {
    v.map_or("-".to_string(), num)
}

fn to_text(r: &AuditReport, labels: Option<&RowLabels>) -> String {
    let mut s = format!(
        "audit of {}: {} rows, {} columns\n\nwhat to fix first:\n",
        r.file, r.n_rows, r.n_columns
    );
    for (i, v) in r.verdict.iter().enumerate() {
        s.push_str(&format!("  {}. {v}\n", i + 1));
    }
    if !r.notes.is_empty() {
        s.push_str("\nto know (not faults):\n");
        for v in &r.notes {
            s.push_str(&format!("  - {v}\n"));
        }
    }
    s.push_str("\ncolumns:\n");
    let h: Vec<String> = [
        "column", "role", "count", "missing", "bad", "min", "max", "median", "distinct", "unit",
    ]
    .iter()
    .map(|x| x.to_string())
    .collect();
    let body: Vec<Vec<String>> = r
        .columns
        .iter()
        .map(|c| {
            vec![
                c.name.clone(),
                c.role.clone(),
                c.count.to_string(),
                c.missing.to_string(),
                c.bad.to_string(),
                opt(c.min),
                opt(c.max),
                opt(c.median),
                c.distinct.to_string(),
                match (&c.unit, &c.declared_unit) {
                    (Some(u), Some(d)) => format!("{u} (file: {d})"),
                    (Some(u), None) => u.clone(),
                    _ => "-".to_string(),
                },
            ]
        })
        .collect();
    s.push_str(&aligned(&h, &body));
    if !r.problems.is_empty() {
        s.push_str("\nvalues that cannot be used:\n");
        for p in &r.problems {
            s.push_str(&format!("  {p}\n"));
        }
        if r.problems_not_listed > 0 {
            s.push_str(&format!("  ... and {} more\n", r.problems_not_listed));
        }
    }
    if !r.duplicates.is_empty() {
        s.push_str(&format!(
            "\nexact duplicate rows (compared on {}):\n",
            r.duplicates_compared
        ));
        for g in &r.duplicates {
            let rows: Vec<String> = g.rows.iter().map(|x| row_name(*x, labels)).collect();
            s.push_str(&format!("  rows {}\n", rows.join(", ")));
        }
    }
    for rep in &r.replicates {
        s.push_str(&format!(
            "\nreplicates of {}: {} groups with identical inputs",
            rep.target,
            rep.groups.len()
        ));
        match rep.pooled_sd {
            Some(sd) => s.push_str(&format!(
                ", pooled sd {} ({} degrees of freedom)\n",
                num(sd),
                rep.dof
            )),
            None => s.push('\n'),
        }
        for g in rep.groups.iter().take(10) {
            let rows: Vec<String> = g.rows.iter().map(|x| row_name(*x, labels)).collect();
            let vals: Vec<String> = g.values.iter().map(|x| num(*x)).collect();
            s.push_str(&format!(
                "  rows {}: {} (sd {})\n",
                rows.join(", "),
                vals.join(", "),
                num(g.sd)
            ));
        }
        if rep.groups.len() > 10 {
            s.push_str(&format!(
                "  ... and {} more groups\n",
                rep.groups.len() - 10
            ));
        }
    }
    if !r.correlated.is_empty() {
        s.push_str("\nstrongly correlated inputs:\n");
        for p in &r.correlated {
            s.push_str(&format!(
                "  {} ~ {}: r = {:.4} ({} rows)\n",
                p.a, p.b, p.r, p.n
            ));
        }
    }
    if !r.outliers.is_empty() {
        s.push_str("\noutliers (robust z above 3.5 and outside the skew-adjusted fences, within the value's group):\n");
        for o in r.outliers.iter().take(20) {
            s.push_str(&format!(
                "  {} row {}: {} (z = {:.1})\n",
                o.column,
                row_name(o.row, labels),
                num(o.value),
                o.robust_z
            ));
        }
        if r.outliers.len() > 20 {
            s.push_str(&format!("  ... and {} more\n", r.outliers.len() - 20));
        }
    }
    if !r.few_levels.is_empty() {
        s.push_str("\ninputs with few distinct values:\n");
        for f in &r.few_levels {
            let vals: Vec<String> = f.values.iter().map(|x| num(*x)).collect();
            s.push_str(&format!("  {}: {}\n", f.column, vals.join(", ")));
        }
    }
    s
}
