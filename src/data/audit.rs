//! What to check before trusting a table of test records (the library side
//! of `mettle audit`).
//!
//! # What is computed
//!
//! - per column: count, missing, min, max, median, distinct values, unit;
//! - cells that cannot be used (not a number, NaN, infinity; with a schema
//!   also negative concentrations, values outside declared bounds,
//!   compositions above 100 wt%);
//! - exact duplicate rows (every column equal, identifiers and ignored
//!   columns aside);
//! - replicate groups: rows with identical inputs, duplicates counted once,
//!   and per target the pooled replicate standard deviation
//!
//!   ```text
//!   s_p = √( Σ_g Σ_i (y_gi − ȳ_g)² / Σ_g (n_g − 1) )
//!   ```
//!
//!   the scatter of repeat tests, which a model's fitted noise level should
//!   be compared with (a noise sd well below s_p means overfitting);
//! - strongly correlated input pairs, |Pearson r| ≥ [`STRONG_CORRELATION`];
//! - outliers by the robust z-score z = 0.6745·(x − median)/MAD, flagged
//!   when |z| > [`ROBUST_Z_OUTLIER`] (Iglewicz & Hoaglin 1993, *How to
//!   Detect and Handle Outliers*, ASQC) **and** the value lies outside the
//!   fences of the adjusted boxplot for skewed data (Hubert & Vandervieren
//!   2008, *Computational Statistics & Data Analysis* 52:5186):
//!   ```text
//!   [Q1 − 1.5·e^(−4·MC)·IQR, Q3 + 1.5·e^(3·MC)·IQR]   for MC ≥ 0
//!   [Q1 − 1.5·e^(−3·MC)·IQR, Q3 + 1.5·e^(4·MC)·IQR]   for MC < 0
//!   ```
//!   with MC the medcouple. The second test keeps the long right tail of a
//!   legitimately skewed column (a trace element, a test age) from being
//!   reported value by value; for symmetric data MC ≈ 0 and the z-score
//!   decides. A column whose MAD is zero is not judged;
//! - inputs with fewer than [`FEW_DISTINCT_VALUES`] distinct values;
//! - a short verdict list, most urgent first.

use crate::fixedmath::FixedMath;
use serde::Serialize;

use crate::data::modes::{modes, Mode};
use crate::data::schema::{Role, Schema};
use crate::data::Table;
use crate::error::Result;
use crate::prec::{FEW_DISTINCT_VALUES, ROBUST_Z_OUTLIER, STRONG_CORRELATION};

/// What to audit when there is no schema.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct AuditOptions {
    /// Target columns (for replicate groups and missing targets).
    pub targets: Vec<String>,
    /// Input columns; `None` means every other column holding numbers.
    pub inputs: Option<Vec<String>>,
}

/// One column's summary.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct ColumnSummary {
    /// Header.
    pub name: String,
    /// Role: from the schema, or input/target as asked, or "text".
    pub role: String,
    /// Unit of min, max and median (internal unit with a schema).
    pub unit: Option<String>,
    /// Unit the file is written in, when the schema declares another.
    pub declared_unit: Option<String>,
    /// Cells holding a usable number.
    pub count: usize,
    /// Empty cells.
    pub missing: usize,
    /// Cells that hold something unusable.
    pub bad: usize,
    /// Smallest value.
    pub min: Option<f64>,
    /// Largest value.
    pub max: Option<f64>,
    /// Median value.
    pub median: Option<f64>,
    /// Distinct values (or distinct texts for a text column).
    pub distinct: usize,
}

/// Rows (1-based) identical in every compared column.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct DuplicateGroup {
    /// The rows, first one first.
    pub rows: Vec<usize>,
}

/// Rows with identical inputs and several measured values of one target.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct ReplicateGroup {
    /// The rows (1-based).
    pub rows: Vec<usize>,
    /// The target values, in row order.
    pub values: Vec<f64>,
    /// Their sample standard deviation.
    pub sd: f64,
}

/// Replicate scatter of one target.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct ReplicateSummary {
    /// Target column.
    pub target: String,
    /// Pooled replicate sd (target unit); `None` without replicates.
    pub pooled_sd: Option<f64>,
    /// Degrees of freedom of the pooled sd, Σ (n_g − 1).
    pub dof: usize,
    /// The groups.
    pub groups: Vec<ReplicateGroup>,
}

/// Two strongly correlated inputs.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct CorrelatedPair {
    /// First input.
    pub a: String,
    /// Second input.
    pub b: String,
    /// Pearson correlation coefficient.
    pub r: f64,
    /// Rows with both values.
    pub n: usize,
}

/// A value far from the rest of its column.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Outlier {
    /// Column.
    pub column: String,
    /// Row (1-based).
    pub row: usize,
    /// The value (unit of the column summary).
    pub value: f64,
    /// Its robust z-score.
    pub robust_z: f64,
}

/// An input with few distinct values.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct FewLevels {
    /// Input column.
    pub column: String,
    /// The distinct values, ascending.
    pub values: Vec<f64>,
}

/// Everything `mettle audit` reports.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct AuditReport {
    /// The file audited.
    pub file: String,
    /// Data rows.
    pub n_rows: usize,
    /// Columns.
    pub n_columns: usize,
    /// Per column.
    pub columns: Vec<ColumnSummary>,
    /// Values that cannot be used, each naming file, row and column.
    pub problems: Vec<String>,
    /// Problems beyond those listed.
    pub problems_not_listed: usize,
    /// Rows (1-based) lacking at least one input value.
    pub rows_missing_inputs: Vec<usize>,
    /// Exact duplicate rows.
    pub duplicates: Vec<DuplicateGroup>,
    /// Which columns the duplicate check compared, in words.
    pub duplicates_compared: String,
    /// Replicate scatter per target.
    pub replicates: Vec<ReplicateSummary>,
    /// Strongly correlated input pairs.
    pub correlated: Vec<CorrelatedPair>,
    /// Outliers, largest |z| first, each judged within its column's mode.
    pub outliers: Vec<Outlier>,
    /// Columns whose values fall into several modes (grades, families of
    /// heats at another level): judged mode by mode, not faults.
    pub clusters: Vec<ColumnModes>,
    /// Inputs with few distinct values.
    pub few_levels: Vec<FewLevels>,
    /// What to fix first, most urgent first: likely faults only.
    pub verdict: Vec<String>,
    /// What to know about the data that is not a fault (modes, few
    /// levels, correlated inputs, missing targets, replicate scatter).
    pub notes: Vec<String>,
}

/// A column whose values fall into several modes.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct ColumnModes {
    /// Column.
    pub column: String,
    /// Its modes, ascending.
    pub modes: Vec<Mode>,
}

/// The most problems an audit lists one by one.
const PROBLEMS_LISTED: usize = 50;

/// Median of values (sorted copy); `None` when empty.
pub fn median(values: &[f64]) -> Option<f64> {
    if values.is_empty() {
        return None;
    }
    let mut v = values.to_vec();
    v.sort_by(f64::total_cmp);
    let n = v.len();
    Some(if n % 2 == 1 {
        v[n / 2]
    } else {
        0.5 * (v[n / 2 - 1] + v[n / 2])
    })
}

/// Largest sample the medcouple is computed on exactly; a larger column is
/// thinned to this many evenly spaced order statistics (the medcouple of
/// the thinned sample estimates the same population value).
const MEDCOUPLE_MAX_N: usize = 2000;

/// The medcouple of Brys, Hubert & Struyf (2004), "A robust measure of
/// skewness", *J. Computational and Graphical Statistics* 13:996: the
/// median over pairs x_i ≤ m ≤ x_j (m the median, x_i < x_j) of
/// h = ((x_j − m) − (m − x_i))/(x_j − x_i). Pairs tied with the median on
/// both sides are left out (their kernel is a sign convention). 0 for fewer
/// than three values. O(n²) on at most [`MEDCOUPLE_MAX_N`] values.
pub fn medcouple(values: &[f64]) -> f64 {
    let mut v: Vec<f64> = values.iter().copied().filter(|x| x.is_finite()).collect();
    v.sort_by(f64::total_cmp);
    if v.len() > MEDCOUPLE_MAX_N {
        let n = v.len();
        v = (0..MEDCOUPLE_MAX_N)
            .map(|k| v[k * (n - 1) / (MEDCOUPLE_MAX_N - 1)])
            .collect();
    }
    let Some(m) = median(&v) else { return 0.0 };
    if v.len() < 3 {
        return 0.0;
    }
    let lower: Vec<f64> = v.iter().copied().filter(|x| *x <= m).collect();
    let upper: Vec<f64> = v.iter().copied().filter(|x| *x >= m).collect();
    let mut h = Vec::with_capacity(lower.len() * upper.len());
    for &xi in &lower {
        for &xj in &upper {
            if xj > xi {
                h.push(((xj - m) - (m - xi)) / (xj - xi));
            }
        }
    }
    median(&h).unwrap_or(0.0)
}

/// The adjusted-boxplot fences (Hubert & Vandervieren 2008) of a column:
/// `None` for fewer than four values.
pub fn adjusted_fences(values: &[f64]) -> Option<(f64, f64)> {
    let mut v: Vec<f64> = values.iter().copied().filter(|x| x.is_finite()).collect();
    if v.len() < 4 {
        return None;
    }
    v.sort_by(f64::total_cmp);
    let q = |p: f64| {
        let pos = p * (v.len() - 1) as f64;
        let (lo, frac) = (pos.floor() as usize, pos - pos.floor());
        v[lo] + frac * (v[(lo + 1).min(v.len() - 1)] - v[lo])
    };
    let (q1, q3) = (q(0.25), q(0.75));
    let iqr = q3 - q1;
    let mc = medcouple(&v);
    let (a, b) = if mc >= 0.0 { (-4.0, 3.0) } else { (-3.0, 4.0) };
    Some((
        q1 - 1.5 * (a * mc).exp_fixed() * iqr,
        q3 + 1.5 * (b * mc).exp_fixed() * iqr,
    ))
}

/// Robust z-scores 0.6745·(x − median)/MAD (Iglewicz & Hoaglin 1993);
/// `None` when the MAD is zero or there are no values.
pub fn robust_z(values: &[f64]) -> Option<Vec<f64>> {
    let med = median(values)?;
    let dev: Vec<f64> = values.iter().map(|x| (x - med).abs()).collect();
    let mad = median(&dev)?;
    if mad.is_nan() || mad <= 0.0 {
        return None;
    }
    Some(values.iter().map(|x| 0.6745 * (x - med) / mad).collect())
}

/// Pearson correlation of paired values; `None` for fewer than 3 pairs or
/// no spread.
pub fn pearson(x: &[f64], y: &[f64]) -> Option<f64> {
    let n = x.len();
    if n < 3 || y.len() != n {
        return None;
    }
    let mx = x.iter().sum::<f64>() / n as f64;
    let my = y.iter().sum::<f64>() / n as f64;
    let (mut sxy, mut sxx, mut syy) = (0.0, 0.0, 0.0);
    for (a, b) in x.iter().zip(y) {
        sxy += (a - mx) * (b - my);
        sxx += (a - mx).powi(2);
        syy += (b - my).powi(2);
    }
    (sxx > 0.0 && syy > 0.0).then(|| sxy / (sxx * syy).sqrt())
}

/// Pooled standard deviation of groups (each with ≥ 2 values):
/// √(Σ SS_g / Σ (n_g − 1)) and its degrees of freedom.
pub fn pooled_sd(groups: &[Vec<f64>]) -> Option<(f64, usize)> {
    let (mut ss, mut dof) = (0.0, 0usize);
    for g in groups.iter().filter(|g| g.len() >= 2) {
        let m = g.iter().sum::<f64>() / g.len() as f64;
        ss += g.iter().map(|y| (y - m).powi(2)).sum::<f64>();
        dof += g.len() - 1;
    }
    (dof > 0).then(|| ((ss / dof as f64).sqrt(), dof))
}

fn sample_sd(v: &[f64]) -> f64 {
    pooled_sd(&[v.to_vec()]).map_or(0.0, |p| p.0)
}

/// A column as the audit sees it.
struct Col {
    name: String,
    role: String,
    numeric: Option<Vec<Option<f64>>>,
    compare: bool,
}

/// The columns as the audit reads them, with the cells that cannot be used.
struct Read {
    cols: Vec<Col>,
    /// (internal unit, declared unit when it differs) per column.
    units: Vec<(Option<String>, Option<String>)>,
    problems: Vec<String>,
    n_problems: usize,
}

/// Read every column: through the schema's checks when given, else as
/// `opts` names the targets and inputs.
fn read_columns(
    table: &Table,
    schema: Option<(&Schema, &str)>,
    opts: &AuditOptions,
) -> Result<Read> {
    let mut r = Read {
        cols: Vec::new(),
        units: Vec::new(),
        problems: Vec::new(),
        n_problems: 0,
    };
    let checked = schema.map(|(s, name)| s.check(table, name, true, usize::MAX));
    if let Some(c) = &checked {
        r.n_problems += c.problems.len();
        r.problems.extend(c.problems.iter().map(|e| e.to_string()));
    }
    for name in opts.targets.iter().chain(opts.inputs.iter().flatten()) {
        table.numeric_lenient(name)?;
    }
    for name in table.names() {
        let spec = schema.and_then(|(s, _)| s.columns.iter().position(|c| &c.name == name));
        if let (Some((s, _)), Some(k), Some(c)) = (schema, spec, &checked) {
            let cs = &s.columns[k];
            r.cols.push(Col {
                name: name.clone(),
                role: cs.role.name().to_string(),
                numeric: c.values[k].clone(),
                compare: !matches!(cs.role, Role::Identifier | Role::Ignored),
            });
            let internal = cs.internal_unit();
            r.units.push((
                cs.unit.map(|_| internal.symbol().to_string()),
                cs.unit
                    .filter(|u| *u != internal)
                    .map(|u| u.symbol().to_string()),
            ));
            continue;
        }
        let has_numbers = table.has_numbers(name);
        let role = if schema.is_some() {
            "not in schema"
        } else if opts.targets.contains(name) {
            "target"
        } else if opts
            .inputs
            .as_ref()
            .map_or(has_numbers, |l| l.contains(name))
        {
            "input"
        } else if has_numbers {
            "other"
        } else {
            "text"
        };
        let numeric = if has_numbers && schema.is_none() {
            let (v, bad) = table.numeric_lenient(name)?;
            r.n_problems += bad.len();
            r.problems.extend(bad.iter().map(|e| e.to_string()));
            Some(v)
        } else {
            None
        };
        r.cols.push(Col {
            name: name.clone(),
            role: role.to_string(),
            numeric,
            // a column the schema does not name is not compared
            compare: schema.is_none(),
        });
        r.units.push((None, None));
    }
    r.problems.truncate(PROBLEMS_LISTED);
    Ok(r)
}

/// Without a schema, a text column with a different value in every row
/// names the records (heat, weld, specimen): a row entered twice under two
/// names is still a copy, so such columns are not compared. Returns their
/// names, quoted.
fn skip_identifier_like(table: &Table, cols: &mut [Col]) -> Vec<String> {
    let n = table.n_rows();
    let mut found: Vec<String> = Vec::new();
    if n < 2 {
        return found;
    }
    for (i, c) in cols.iter_mut().enumerate() {
        if c.numeric.is_some() {
            continue;
        }
        let mut seen: Vec<String> = Vec::with_capacity(n);
        let all_distinct = (0..n).all(|row| match table.cell_text(i, row) {
            Some(t) if !seen.contains(&t) => {
                seen.push(t);
                true
            }
            _ => false,
        });
        if all_distinct {
            c.compare = false;
            found.push(format!("'{}'", c.name));
        }
    }
    found
}

/// Count, missing, range, median and distinct values of every column.
fn summarise_columns(
    table: &Table,
    cols: &[Col],
    units: &[(Option<String>, Option<String>)],
) -> Vec<ColumnSummary> {
    let n = table.n_rows();
    let mut columns = Vec::new();
    for (i, (c, (unit, declared))) in cols.iter().zip(units).enumerate() {
        let mut missing = 0;
        let mut distinct_text: Vec<String> = Vec::new();
        for row in 0..n {
            match table.cell_text(i, row) {
                None => missing += 1,
                Some(t) if c.numeric.is_none() => {
                    if !distinct_text.contains(&t) {
                        distinct_text.push(t);
                    }
                }
                Some(_) => {}
            }
        }
        let present: Vec<f64> = c.numeric.iter().flatten().flatten().copied().collect();
        let (count, distinct) = match &c.numeric {
            Some(_) => (present.len(), distinct_values(&present).len()),
            None => (n - missing, distinct_text.len()),
        };
        columns.push(ColumnSummary {
            name: c.name.clone(),
            role: c.role.clone(),
            unit: unit.clone(),
            declared_unit: declared.clone(),
            count,
            missing,
            bad: n - missing - count,
            min: present.iter().copied().reduce(f64::min),
            max: present.iter().copied().reduce(f64::max),
            median: median(&present),
            distinct,
        });
    }
    columns
}

/// The key of a row over the columns `which` selects: exact bits of
/// numbers, text as written.
fn row_key(table: &Table, cols: &[Col], row: usize, which: &dyn Fn(&Col) -> bool) -> Vec<String> {
    let mut key = Vec::new();
    for (i, c) in cols.iter().enumerate().filter(|(_, c)| which(c)) {
        key.push(match &c.numeric {
            Some(v) => v[row].map_or(String::new(), |x| format!("{:016x}", x.to_bits())),
            None => table.cell_text(i, row).unwrap_or_default(),
        });
    }
    key
}

/// Rows of `rows` grouped by their key, in order of first appearance.
fn group_rows(
    table: &Table,
    cols: &[Col],
    rows: impl Iterator<Item = usize>,
    which: &dyn Fn(&Col) -> bool,
) -> Vec<(Vec<String>, Vec<usize>)> {
    let mut groups: Vec<(Vec<String>, Vec<usize>)> = Vec::new();
    for row in rows {
        let key = row_key(table, cols, row, which);
        match groups.iter_mut().find(|g| g.0 == key) {
            Some(g) => g.1.push(row),
            None => groups.push((key, vec![row])),
        }
    }
    groups
}

fn is_input(c: &Col) -> bool {
    c.role == "input" && c.numeric.is_some()
}

/// Replicate groups per target: rows with identical (complete) inputs,
/// each exact copy counted once (`representatives`), with their pooled sd.
fn replicate_summaries(
    table: &Table,
    cols: &[Col],
    targets: &[&Col],
    representatives: &[usize],
    rows_missing_inputs: &[usize],
) -> Vec<ReplicateSummary> {
    let rep_groups = if cols.iter().any(is_input) {
        let complete = representatives
            .iter()
            .copied()
            .filter(|r| !rows_missing_inputs.contains(&(r + 1)));
        group_rows(table, cols, complete, &is_input)
    } else {
        Vec::new()
    };
    targets
        .iter()
        .map(|t| {
            let v = t.numeric.as_deref().unwrap_or_default();
            let groups: Vec<ReplicateGroup> = rep_groups
                .iter()
                .filter_map(|g| {
                    let rows: Vec<usize> =
                        g.1.iter().copied().filter(|&r| v[r].is_some()).collect();
                    let values: Vec<f64> = rows.iter().filter_map(|&r| v[r]).collect();
                    (values.len() >= 2).then(|| ReplicateGroup {
                        rows: rows.iter().map(|r| r + 1).collect(),
                        sd: sample_sd(&values),
                        values,
                    })
                })
                .collect();
            let pooled = pooled_sd(&groups.iter().map(|g| g.values.clone()).collect::<Vec<_>>());
            ReplicateSummary {
                target: t.name.clone(),
                pooled_sd: pooled.map(|p| p.0),
                dof: pooled.map_or(0, |p| p.1),
                groups,
            }
        })
        .collect()
}

/// Input pairs with |r| ≥ [`STRONG_CORRELATION`], strongest first.
fn correlated_pairs(inputs: &[&Col]) -> Vec<CorrelatedPair> {
    let mut correlated = Vec::new();
    for (a_i, a) in inputs.iter().enumerate() {
        for b in &inputs[a_i + 1..] {
            let (va, vb) = (
                a.numeric.as_deref().unwrap_or_default(),
                b.numeric.as_deref().unwrap_or_default(),
            );
            let (x, y): (Vec<f64>, Vec<f64>) = va
                .iter()
                .zip(vb)
                .filter_map(|(p, q)| Some(((*p)?, (*q)?)))
                .unzip();
            if let Some(r) = pearson(&x, &y) {
                if r.abs() >= STRONG_CORRELATION {
                    correlated.push(CorrelatedPair {
                        a: a.name.clone(),
                        b: b.name.clone(),
                        r,
                        n: x.len(),
                    });
                }
            }
        }
    }
    correlated.sort_by(|p, q| q.r.abs().total_cmp(&p.r.abs()));
    correlated
}

/// Outliers of one column, each judged within its mode (robust z above
/// [`ROBUST_Z_OUTLIER`] and outside the adjusted fences of the mode's
/// values); the modes when there are several.
pub fn column_outliers(name: &str, v: &[Option<f64>]) -> (Vec<Outlier>, Option<ColumnModes>) {
    let rows: Vec<usize> = (0..v.len()).filter(|&r| v[r].is_some()).collect();
    let values: Vec<f64> = rows.iter().filter_map(|&r| v[r]).collect();
    let (found, mode_of) = modes(&values);
    let mut out = Vec::new();
    for g in 0..found.len() {
        let members: Vec<usize> = (0..values.len()).filter(|&k| mode_of[k] == g).collect();
        let x: Vec<f64> = members.iter().map(|&k| values[k]).collect();
        let Some(z) = robust_z(&x) else { continue };
        let (lo, hi) = adjusted_fences(&x).unwrap_or((f64::INFINITY, f64::NEG_INFINITY));
        for ((&k, &x), &z) in members.iter().zip(&x).zip(&z) {
            if z.abs() > ROBUST_Z_OUTLIER && (x < lo || x > hi) {
                out.push(Outlier {
                    column: name.to_string(),
                    row: rows[k] + 1,
                    value: x,
                    robust_z: z,
                });
            }
        }
    }
    let several = (found.len() > 1).then(|| ColumnModes {
        column: name.to_string(),
        modes: found,
    });
    (out, several)
}

/// The hint for an input that may be a code: every value an integer, with
/// [`CODE_HINT_LEVELS`] distinct values. `None` otherwise. Never acted on:
/// an integer-valued quantity (a temperature in whole degrees, a number of
/// passes) looks the same, so a code is declared, not detected (method.md
/// §1b).
pub fn code_hint(column: &str, values: &[f64]) -> Option<String> {
    if values.iter().any(|v| !v.is_finite() || v.fract() != 0.0) {
        return None;
    }
    let levels = distinct_values(values);
    let (lo, hi) = crate::prec::CODE_HINT_LEVELS;
    (lo..=hi).contains(&levels.len()).then(|| {
        let shown: Vec<String> = levels.iter().map(|v| format!("{v}")).collect();
        format!(
            "input '{column}' holds only the whole numbers {}: if they name kinds rather than measure an amount, declare it a code in the schema (kind = \"levels\", docs/schema.md) so each level gets its own indicator; if it is a quantity, leave it as it is",
            shown.join(", ")
        )
    })
}

/// Inputs with fewer than [`FEW_DISTINCT_VALUES`] distinct values.
fn few_levels(inputs: &[&Col]) -> Vec<FewLevels> {
    inputs
        .iter()
        .filter_map(|c| {
            let present: Vec<f64> = c.numeric.iter().flatten().flatten().copied().collect();
            let values = distinct_values(&present);
            (!values.is_empty() && values.len() < FEW_DISTINCT_VALUES).then(|| FewLevels {
                column: c.name.clone(),
                values,
            })
        })
        .collect()
}

/// Audit `table`, through `schema` when given (values then in internal
/// units, with the schema's checks), else with `opts` naming the targets.
///
/// # Errors
/// Only a column named in `opts` that the table lacks; every problem in
/// the data is reported, not raised.
pub fn audit(
    table: &Table,
    schema: Option<(&Schema, &str)>,
    opts: &AuditOptions,
) -> Result<AuditReport> {
    let n = table.n_rows();
    let Read {
        mut cols,
        units,
        problems,
        n_problems,
    } = read_columns(table, schema, opts)?;
    let identifier_like = if schema.is_none() {
        skip_identifier_like(table, &mut cols)
    } else {
        Vec::new()
    };
    let columns = summarise_columns(table, &cols, &units);
    let inputs: Vec<&Col> = cols.iter().filter(|c| is_input(c)).collect();
    let targets: Vec<&Col> = cols
        .iter()
        .filter(|c| c.role == "target" && c.numeric.is_some())
        .collect();
    let rows_missing_inputs: Vec<usize> = (0..n)
        .filter(|&r| {
            inputs
                .iter()
                .any(|c| c.numeric.as_ref().is_some_and(|v| v[r].is_none()))
        })
        .map(|r| r + 1)
        .collect();
    let dup_groups = group_rows(table, &cols, 0..n, &|c: &Col| c.compare);
    let representatives: Vec<usize> = dup_groups.iter().map(|g| g.1[0]).collect();
    let duplicates_compared = if schema.is_some() {
        "every column of the schema except identifiers and ignored columns".to_string()
    } else if identifier_like.is_empty() {
        "every column".to_string()
    } else {
        format!(
            "every column except {}, whose value differs in every row (taken as record names)",
            identifier_like.join(", ")
        )
    };
    let (mut outliers, mut clusters) = (Vec::new(), Vec::new());
    for c in inputs.iter().chain(&targets) {
        let (o, m) = column_outliers(&c.name, c.numeric.as_deref().unwrap_or_default());
        outliers.extend(o);
        clusters.extend(m);
    }
    outliers.sort_by(|p, q| q.robust_z.abs().total_cmp(&p.robust_z.abs()));
    let mut report = AuditReport {
        file: table.source().display().to_string(),
        n_rows: n,
        n_columns: table.names().len(),
        columns,
        problems,
        problems_not_listed: n_problems.saturating_sub(PROBLEMS_LISTED),
        duplicates: dup_groups
            .iter()
            .filter(|g| g.1.len() > 1)
            .map(|g| DuplicateGroup {
                rows: g.1.iter().map(|r| r + 1).collect(),
            })
            .collect(),
        replicates: replicate_summaries(
            table,
            &cols,
            &targets,
            &representatives,
            &rows_missing_inputs,
        ),
        rows_missing_inputs,
        duplicates_compared,
        correlated: correlated_pairs(&inputs),
        outliers,
        clusters,
        few_levels: few_levels(&inputs),
        verdict: Vec::new(),
        notes: Vec::new(),
    };
    report.verdict = verdict(&report, n_problems);
    report.notes = notes(&report, targets.is_empty());
    for c in &inputs {
        let declared = schema.is_some_and(|(s, _)| s.column(&c.name).is_some_and(|d| d.is_code()));
        let present: Vec<f64> = c.numeric.iter().flatten().flatten().copied().collect();
        if let (false, Some(h)) = (declared, code_hint(&c.name, &present)) {
            report.notes.push(h);
        }
    }
    Ok(report)
}

fn distinct_values(values: &[f64]) -> Vec<f64> {
    let mut v = values.to_vec();
    v.sort_by(f64::total_cmp);
    v.dedup_by(|a, b| a.to_bits() == b.to_bits());
    v
}

fn rows_text(rows: &[usize], most: usize) -> String {
    let mut s: Vec<String> = rows.iter().take(most).map(|r| r.to_string()).collect();
    if rows.len() > most {
        s.push(format!("… ({} in all)", rows.len()));
    }
    s.join(", ")
}

/// The verdict list, most urgent first.
/// What to fix first: likely faults only, most urgent first.
fn verdict(r: &AuditReport, n_problems: usize) -> Vec<String> {
    let mut v = Vec::new();
    if n_problems > 0 {
        v.push(format!(
            "values that cannot be used: {n_problems} (first: {}); fix them first: training stops at the first one",
            r.problems.first().map_or("", String::as_str)
        ));
    }
    if !r.rows_missing_inputs.is_empty() {
        v.push(format!(
            "rows lacking an input value: {} (rows {}); complete them, or leave them out explicitly with --drop-incomplete-rows; nothing is filled in",
            r.rows_missing_inputs.len(),
            rows_text(&r.rows_missing_inputs, 10)
        ));
    }
    if !r.duplicates.is_empty() {
        let extra: usize = r.duplicates.iter().map(|g| g.rows.len() - 1).sum();
        let shown: Vec<String> = r
            .duplicates
            .iter()
            .take(5)
            .map(|g| rows_text(&g.rows, 4).replace(", ", " = "))
            .collect();
        v.push(format!(
            "rows that are exact copies of others: {extra} ({}); remove the copies: they make the data look more certain than it is",
            shown.join("; ")
        ));
    }
    if let Some(o) = r.outliers.first() {
        v.push(format!(
            "values far from the rest of their group in their column: {} (largest: '{}' row {} = {}, robust z {:.1}); check them against the test records",
            r.outliers.len(),
            o.column,
            o.row,
            o.value,
            o.robust_z
        ));
    }
    if v.is_empty() {
        v.push("nothing found to fix".to_string());
    }
    v
}

/// What to know that is not a fault.
fn notes(r: &AuditReport, no_targets: bool) -> Vec<String> {
    let mut v = Vec::new();
    for c in &r.clusters {
        let groups: Vec<String> = c
            .modes
            .iter()
            .map(|m| format!("{} to {}: {} rows", m.lo, m.hi, m.n))
            .collect();
        v.push(format!(
            "'{}' falls into {} groups of values ({}); each is judged on its own, so a family of heats at another level is not reported value by value. Make sure the groups are what you expect (grades, processes), and that the model sees what sets them apart",
            c.column,
            c.modes.len(),
            groups.join("; ")
        ));
    }
    for f in &r.few_levels {
        if f.values.len() == 1 {
            v.push(format!(
                "input '{}' is constant ({}); it will be set aside",
                f.column, f.values[0]
            ));
        } else {
            v.push(format!(
                "input '{}' takes only {} distinct values; its effect is learnt at those levels only",
                f.column,
                f.values.len()
            ));
        }
    }
    for p in r.correlated.iter().take(5) {
        v.push(format!(
            "inputs '{}' and '{}' move together (r = {:.3}); the model cannot tell their effects apart",
            p.a, p.b, p.r
        ));
    }
    for c in r
        .columns
        .iter()
        .filter(|c| c.role == "target" && c.missing > 0)
    {
        v.push(format!(
            "target '{}' has no value in {} row(s); they are left out for it",
            c.name, c.missing
        ));
    }
    for s in &r.replicates {
        if let Some(sd) = s.pooled_sd {
            v.push(format!(
                "target '{}': replicate tests scatter with pooled sd {:.4} ({} groups, {} degrees of freedom); a model's noise sd well below this is overfitting",
                s.target,
                sd,
                s.groups.len(),
                s.dof
            ));
        }
    }
    if no_targets {
        v.push(
            "no target known: give --schema or --target to see replicate scatter and missing targets"
                .to_string(),
        );
    }
    v
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    #[test]
    fn medcouple_of_symmetric_and_skewed_samples() {
        // symmetric data: MC = 0 (Brys, Hubert & Struyf 2004, by symmetry)
        assert!(medcouple(&[1.0, 2.0, 3.0, 4.0, 5.0]).abs() < 1e-12);
        // by hand: 1, 2, 3, 10 has median 2.5; the pairs x_i ≤ 2.5 ≤ x_j
        // give h = ((3−2.5)−1.5)/2, ((10−2.5)−1.5)/9, ((3−2.5)−0.5)/1,
        // ((10−2.5)−0.5)/8 = −0.5, 0.6667, 0, 0.875, whose median is 1/3
        assert!((medcouple(&[1.0, 2.0, 3.0, 10.0]) - 1.0 / 3.0).abs() < 1e-12);
        // the exponential distribution's medcouple is 1/3 (from memory,
        // Brys et al. 2004): a sample of 4000 from its quantile function
        let n = 4000;
        let exp: Vec<f64> = (1..=n)
            .map(|k| -(1.0 - k as f64 / (n + 1) as f64).ln_fixed())
            .collect();
        let mc = medcouple(&exp);
        assert!((mc - 1.0 / 3.0).abs() < 0.02, "MC {mc}");
        // the long right tail of that sample is inside the adjusted fences,
        // while plain robust z-scores flag many of its values
        let (_, hi) = adjusted_fences(&exp).expect("fences");
        let z = robust_z(&exp).expect("z");
        let z_flags = z.iter().filter(|z| z.abs() > ROBUST_Z_OUTLIER).count();
        let both = exp
            .iter()
            .zip(&z)
            .filter(|(x, z)| z.abs() > ROBUST_Z_OUTLIER && **x > hi)
            .count();
        assert!(z_flags > 50 && both < z_flags / 3, "{z_flags} {both}");
    }

    #[test]
    fn robust_statistics_by_hand() {
        assert_abs_diff_eq!(median(&[3.0, 1.0, 2.0]).expect("m"), 2.0, epsilon = 0.0);
        assert_abs_diff_eq!(
            median(&[4.0, 1.0, 2.0, 3.0]).expect("m"),
            2.5,
            epsilon = 0.0
        );
        // 1..5 and 100: median 3.5, MAD 1.5, z(100) = 0.6745·96.5/1.5
        // (Iglewicz & Hoaglin 1993 definition; arithmetic by hand)
        let z = robust_z(&[1.0, 2.0, 3.0, 4.0, 5.0, 100.0]).expect("z");
        assert_abs_diff_eq!(z[5], 0.6745 * 96.5 / 1.5, epsilon = 1e-12);
        assert!(robust_z(&[2.0, 2.0, 2.0, 9.0]).is_none(), "MAD 0");
        // groups {1, 3} and {10, 14}: SS 2 + 8 over 2 dof → √5
        let (sd, dof) = pooled_sd(&[vec![1.0, 3.0], vec![10.0, 14.0]]).expect("pooled");
        assert_abs_diff_eq!(sd, 5.0_f64.sqrt(), epsilon = 1e-12);
        assert_eq!(dof, 2);
        assert_abs_diff_eq!(
            pearson(&[1.0, 2.0, 3.0], &[2.0, 4.0, 6.5]).expect("r"),
            0.9979487158,
            epsilon = 1e-9
        );
    }

    /// Two grades in one column (Mn 0.8 and 1.5 wt%, invented): the robust
    /// z-score and adjusted fences (Iglewicz & Hoaglin 1993; Hubert &
    /// Vandervieren 2008) applied within each mode find no outlier inside
    /// either grade, while a typing slip (0.8 keyed as 8.0, ×10) is still
    /// found, judged against the grade it strayed from. The whole-column
    /// test would list the smaller grade value by value (checked here too).
    #[test]
    fn two_grades_are_no_outliers_but_a_slip_is() {
        use rand::SeedableRng;
        use rand_distr::{Distribution, Normal};
        let mut rng = rand_xoshiro::Xoshiro256PlusPlus::seed_from_u64(17);
        let a = Normal::new(0.8, 0.06).expect("sd");
        let b = Normal::new(1.5, 0.06).expect("sd");
        let mut v: Vec<Option<f64>> = (0..300).map(|_| Some(a.sample(&mut rng))).collect();
        v.extend((0..57).map(|_| Some(b.sample(&mut rng))));
        // the old whole-column judgement flags the Mn 1.5 family
        let all: Vec<f64> = v.iter().flatten().copied().collect();
        let z = robust_z(&all).expect("spread");
        let (lo, hi) = adjusted_fences(&all).expect("fences");
        let old = all
            .iter()
            .zip(&z)
            .filter(|(x, z)| z.abs() > ROBUST_Z_OUTLIER && (**x < lo || **x > hi))
            .count();
        assert!(old >= 50, "{old}");
        let (found, modes) = column_outliers("mn_wt", &v);
        assert!(found.is_empty(), "{found:?}");
        assert_eq!(modes.expect("two modes").modes.len(), 2);
        // plant the slip in row 10
        let keyed = v[9].expect("value") * 10.0;
        v[9] = Some(keyed);
        let (found, _) = column_outliers("mn_wt", &v);
        assert_eq!(found.len(), 1, "{found:?}");
        assert_eq!(
            (found[0].row, found[0].value.to_bits()),
            (10, keyed.to_bits())
        );
    }

    #[test]
    fn whole_numbers_with_three_to_eight_levels_get_the_code_hint() {
        // energy's glazing area distribution takes 0..5 (UCI energy efficiency)
        let gad: Vec<f64> = (0..24).map(|i| (i % 6) as f64).collect();
        let h = code_hint("gad", &gad).expect("six whole-number levels");
        assert!(
            h.contains("0, 1, 2, 3, 4, 5") && h.contains("kind = \"levels\""),
            "{h}"
        );
        // two levels are an indicator already; nine or more, or fractions: no hint
        assert!(code_hint("a", &[0.0, 1.0, 0.0]).is_none());
        assert!(code_hint("b", &(0..9).map(f64::from).collect::<Vec<_>>()).is_none());
        assert!(code_hint("c", &[0.1, 0.25, 0.4]).is_none());
        assert!(code_hint("d", &[2.0, 3.0, 4.0, 5.0]).is_some());
    }
}
