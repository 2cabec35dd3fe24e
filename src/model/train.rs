//! Training a model from a table.

use ndarray::{Array1, Array2};

use super::{
    summarise_prediction, DomainReference, InputColumn, Model, SetAside, TargetModel,
    TargetTransform, TrainingRecord, MODEL_FORMAT, MODEL_FORMAT_VERSION,
};
use crate::committee::{train_committee, CheckedCommitteeParams, CommitteeParams};
use crate::data::schema::{PrepareOptions, Schema};
use crate::data::{fingerprint, Table};
use crate::derive::RowWarning;
use crate::error::{Error, Result};
use crate::features::{ColumnScaling, Transform};
use crate::observer::TrainObserver;
use crate::prec::{DOMAIN_REFERENCE_QUANTILE, DOMAIN_RELEVANT_SHARE};

/// What to train: targets, inputs and committee settings.
#[derive(Clone, Debug, PartialEq)]
pub struct TrainSpec {
    /// Target columns; one committee each.
    pub targets: Vec<String>,
    /// Input columns; `None` means every other numeric column.
    pub inputs: Option<Vec<String>>,
    /// Model strictly positive, strongly skewed inputs through their logarithm.
    pub auto_log_inputs: bool,
    /// Committee settings.
    pub params: CommitteeParams,
}

impl TrainSpec {
    /// Train `targets` on every other numeric column with default settings.
    pub fn new(targets: &[&str]) -> Self {
        TrainSpec {
            targets: targets.iter().map(|s| s.to_string()).collect(),
            inputs: None,
            auto_log_inputs: true,
            params: CommitteeParams::default(),
        }
    }
}

/// Settings for training through a schema.
#[derive(Clone, Debug, PartialEq)]
pub struct SchemaTrainOptions {
    /// Committee settings.
    pub params: CommitteeParams,
    /// Model strictly positive, strongly skewed inputs through their logarithm.
    pub auto_log_inputs: bool,
    /// Leave out rows that lack an input value instead of failing.
    pub drop_incomplete_rows: bool,
}

impl Default for SchemaTrainOptions {
    fn default() -> Self {
        SchemaTrainOptions {
            params: CommitteeParams::default(),
            auto_log_inputs: true,
            drop_incomplete_rows: false,
        }
    }
}

/// What training through a schema found along the way, for the caller to
/// show (the library never prints).
#[derive(Clone, Debug, Default, PartialEq)]
pub struct SchemaTrainReport {
    /// Rows of the file (1-based) left out because an input was missing.
    pub dropped_rows: Vec<usize>,
    /// Per target, the rows of the file (1-based) without a value, left
    /// out for that target only.
    pub missing_targets: Vec<(String, Vec<usize>)>,
    /// Derivation warnings: rows outside a formula's validity range
    /// (0-based rows of the file).
    pub row_warnings: Vec<RowWarning>,
    /// Warnings about the table as a whole.
    pub notes: Vec<String>,
}

impl SchemaTrainReport {
    /// The report as the lines a caller shows (derivation warnings aside):
    /// notes, rows dropped for a missing input (`drop_option` names the
    /// setting that dropped them), rows without a target's value. `data`
    /// names the table.
    pub fn lines(&self, data: &str, drop_option: &str) -> Vec<String> {
        let mut out: Vec<String> = self.notes.iter().map(|n| format!("note: {n}")).collect();
        if !self.dropped_rows.is_empty() {
            out.push(format!(
                "warning: {} of {data} left out because an input value is missing ({drop_option}): {}",
                plural(self.dropped_rows.len(), "row"),
                row_list(&self.dropped_rows)
            ));
        }
        for (target, rows) in &self.missing_targets {
            if !rows.is_empty() {
                out.push(format!(
                    "note: {} of {data} without a value of target '{target}', left out for that target only: {}",
                    plural(rows.len(), "row"),
                    row_list(rows)
                ));
            }
        }
        out
    }
}

/// `1 row`, `3 rows`.
fn plural(n: usize, noun: &str) -> String {
    if n == 1 {
        format!("1 {noun}")
    } else {
        format!("{n} {noun}s")
    }
}

/// `row 4` or `rows 4, 9, 12`, the first 20 shown.
fn row_list(rows: &[usize]) -> String {
    const SHOWN: usize = 20;
    let mut list: Vec<String> = rows.iter().take(SHOWN).map(|x| x.to_string()).collect();
    if rows.len() > SHOWN {
        list.push(format!("... ({} in all)", rows.len()));
    }
    format!(
        "{} {}",
        if rows.len() == 1 { "row" } else { "rows" },
        list.join(", ")
    )
}

impl Model {
    /// Train a model on `table` read through `schema`: values converted to
    /// internal units and checked, derived inputs computed, each target
    /// learnt through its transform. The schema is stored in the model, so
    /// that estimation reads tables the same way.
    ///
    /// # Errors
    /// Everything [`Schema::prepare`] reports; a schema without a target;
    /// then as [`Model::train`].
    pub fn train_with_schema(
        table: &Table,
        schema: &Schema,
        schema_name: &str,
        opts: &SchemaTrainOptions,
        observer: &dyn TrainObserver,
    ) -> Result<(Model, SchemaTrainReport)> {
        let prepared = schema.prepare(
            table,
            schema_name,
            PrepareOptions {
                need_targets: true,
                drop_incomplete_rows: opts.drop_incomplete_rows,
            },
        )?;
        if prepared.targets.is_empty() {
            return Err(Error::Schema {
                path: schema_name.to_string(),
                message: "no column has role = \"target\": there is nothing to learn".into(),
            });
        }
        let spec = TrainSpec {
            targets: prepared.targets.iter().map(|t| t.0.clone()).collect(),
            inputs: Some(prepared.inputs.clone()),
            auto_log_inputs: opts.auto_log_inputs,
            params: opts.params.clone(),
        };
        let transforms: Vec<TargetTransform> = prepared.targets.iter().map(|t| t.1).collect();
        let mut model = Self::train_transformed(&prepared.table, &spec, &transforms, observer)?;
        model.schema = Some(schema.clone());
        model.codes = code_record(schema, &prepared.table)?;
        // the guard checks each code level by level (domain.md)
        let of = model.input_codes();
        let groups: Vec<Vec<usize>> = (0..model.codes.len())
            .map(|k| (0..of.len()).filter(|&j| of[j] == Some(k)).collect())
            .collect();
        model.domain = model.domain.take().map(|r| r.with_codes(groups));
        for code in &model.codes {
            for l in code.levels.iter().filter(|l| l.training_rows == 0) {
                if let Some(s) = model.set_aside.iter_mut().find(|s| s.name == l.column) {
                    s.reason = format!(
                        "level {} = {} of code '{}': no training row holds it; rows at it are refused at prediction",
                        l.code, l.name, code.name
                    );
                }
            }
        }
        model.training.incomplete_rows_dropped = prepared.dropped_rows.clone();
        let mut notes = prepared.notes;
        for i in &model.inputs {
            if model.code_of_input(&i.name).is_none() {
                notes.extend(crate::data::audit::code_hint(
                    &i.name,
                    &prepared.table.numeric(&i.name)?,
                ));
            }
        }
        Ok((
            model,
            SchemaTrainReport {
                dropped_rows: prepared.dropped_rows,
                missing_targets: prepared.missing_targets,
                row_warnings: prepared.row_warnings,
                notes,
            },
        ))
    }

    /// Train a model on `table`.
    ///
    /// Rows whose target is missing are left out for that target (and
    /// counted); a missing input is an error naming its row. Constant input
    /// columns are set aside and recorded.
    ///
    /// # Errors
    /// Bad settings, missing or non-numeric columns, too few rows, a
    /// constant target, or every candidate failing.
    pub fn train(table: &Table, spec: &TrainSpec, observer: &dyn TrainObserver) -> Result<Model> {
        Self::train_transformed(table, spec, &[], observer)
    }

    /// Train as [`Model::train`], target `k` learnt through `transforms[k]`
    /// (identity where the slice is shorter).
    ///
    /// # Errors
    /// As [`Model::train`], plus [`Error::Cell`] for a target value outside
    /// its transform's domain.
    pub fn train_transformed(
        table: &Table,
        spec: &TrainSpec,
        transforms: &[TargetTransform],
        observer: &dyn TrainObserver,
    ) -> Result<Model> {
        let params = spec.params.clone().check()?;
        let path = table.label();
        if spec.targets.is_empty() {
            return Err(Error::InvalidParameter {
                name: "target",
                value: String::new(),
                expected: "at least one target column".into(),
            });
        }
        let mut target_values = Vec::new();
        for name in &spec.targets {
            target_values.push(table.numeric_optional(name)?);
        }
        let offered = offered_inputs(table, spec)?;
        let kept = KeptInputs::choose(table, &offered, spec.auto_log_inputs, &path)?;
        let x = kept.scaled(table.n_rows());

        let mut targets = Vec::new();
        let mut target_rows = Vec::new();
        let mut evals = 0;
        for (k, (name, values)) in spec.targets.iter().zip(&target_values).enumerate() {
            let transform = transforms.get(k).copied().unwrap_or_default();
            target_rows.push((0..values.len()).filter(|&i| values[i].is_some()).collect());
            let target = TargetRun {
                params: &params,
                x: &x,
                input_values: &kept.values,
                path: &path,
                observer,
            }
            .train(name, values, transform)?;
            evals += target
                .committee
                .all_members()
                .map(|(_, m)| m.diagnostics.gradient_evaluations)
                .sum::<u64>();
            targets.push(target);
        }

        let KeptInputs {
            columns: inputs,
            set_aside,
            values: input_values,
        } = kept;
        let n = table.n_rows();
        let mut names: Vec<&str> = inputs.iter().map(|c| c.name.as_str()).collect();
        names.extend(spec.targets.iter().map(String::as_str));
        let input_opt: Vec<Vec<Option<f64>>> = input_values
            .iter()
            .map(|v| v.iter().map(|x| Some(*x)).collect())
            .collect();
        let mut cols: Vec<&[Option<f64>]> = input_opt.iter().map(|v| v.as_slice()).collect();
        cols.extend(target_values.iter().map(|v| v.as_slice()));
        let data_file = table
            .source()
            .file_name()
            .map(|f| f.to_string_lossy().into_owned())
            .unwrap_or_default();
        let data_sha256 = fingerprint(&names, &cols);
        Ok(Model {
            format: MODEL_FORMAT.to_string(),
            format_version: MODEL_FORMAT_VERSION,
            tool_version: env!("CARGO_PKG_VERSION").to_string(),
            inputs,
            set_aside,
            training: TrainingRecord {
                data_file,
                n_rows: n,
                data_sha256,
                settings: CommitteeParams::clone(&params),
                gradient_evaluations: evals,
                wall_seconds: None,
                incomplete_rows_dropped: Vec::new(),
            },
            schema: None,
            scatter_correlations: super::correlation::scatter_correlations(
                &targets,
                x.view(),
                &target_values,
            ),
            codes: Vec::new(),
            domain: DomainReference::build(x.view())
                .map(|r| r.with_relevance(input_weights(&targets, x.view(), &target_rows))),
            targets,
        })
    }
}

/// The record of each input the schema declares as a code: every level
/// with its indicator column and the training rows at it.
///
/// # Errors
/// An indicator column missing from the prepared table (not expected).
fn code_record(schema: &Schema, prepared: &Table) -> Result<Vec<super::CodeInput>> {
    let mut out = Vec::new();
    for c in schema.columns.iter().filter(|c| c.is_code()) {
        let mut levels = Vec::new();
        for (code, name) in c.level_list() {
            let column = crate::data::schema::indicator_name(&c.name, &name);
            let training_rows = if c.implied_level.as_deref() == Some(name.as_str()) {
                // the rows with no other level (every row has one level)
                let mut n = prepared.n_rows();
                for (_, other) in c.level_list().iter().filter(|l| l.1 != name) {
                    let col = crate::data::schema::indicator_name(&c.name, other);
                    let ones = prepared.numeric(&col)?;
                    n -= ones.iter().filter(|v| v.total_cmp(&1.0).is_eq()).count();
                }
                n
            } else {
                prepared
                    .numeric(&column)?
                    .iter()
                    .filter(|v| v.total_cmp(&1.0).is_eq())
                    .count()
            };
            levels.push(super::CodeLevel {
                code,
                name,
                column,
                training_rows,
            });
        }
        out.push(super::CodeInput {
            name: c.name.clone(),
            levels,
        });
    }
    Ok(out)
}

/// The input columns offered: those listed (none of them a target), else
/// every numeric column that is not a target.
fn offered_inputs(table: &Table, spec: &TrainSpec) -> Result<Vec<String>> {
    Ok(match &spec.inputs {
        Some(list) => {
            for name in list {
                if spec.targets.contains(name) {
                    return Err(Error::InvalidParameter {
                        name: "inputs",
                        value: name.clone(),
                        expected: "input columns other than the target".into(),
                    });
                }
            }
            list.clone()
        }
        None => table
            .names()
            .iter()
            .filter(|n| !spec.targets.contains(n) && table.has_numbers(n))
            .cloned()
            .collect(),
    })
}

/// The inputs kept, with their training values, and those set aside.
struct KeptInputs {
    columns: Vec<InputColumn>,
    set_aside: Vec<SetAside>,
    /// Each kept input's values, row by row.
    values: Vec<Vec<f64>>,
}

impl KeptInputs {
    /// Keep each offered column that is neither a restatement of one kept
    /// before it nor constant, with its scaling.
    ///
    /// # Errors
    /// [`Error::NoInputs`] when none is kept; a column's read error.
    fn choose(table: &Table, offered: &[String], auto_log: bool, path: &str) -> Result<Self> {
        let mut inputs = Vec::new();
        let mut set_aside = Vec::new();
        let mut input_values = Vec::new();
        for name in offered {
            let values = table.numeric(name)?;
            if let Some(reason) = restates(&values, &inputs, &input_values) {
                set_aside.push(SetAside {
                    name: name.clone(),
                    reason,
                });
                continue;
            }
            match ColumnScaling::fit(&values, auto_log) {
                Some(scaling) => {
                    let (min, max) = min_max(&values);
                    inputs.push(InputColumn {
                        name: name.clone(),
                        min,
                        max,
                        scaling,
                    });
                    input_values.push(values);
                }
                None => set_aside.push(SetAside {
                    name: name.clone(),
                    reason: format!(
                        "constant: every row is {}",
                        values.first().copied().unwrap_or(f64::NAN)
                    ),
                }),
            }
        }
        if inputs.is_empty() {
            let detail = if set_aside.is_empty() {
                "no numeric input columns".to_string()
            } else {
                set_aside
                    .iter()
                    .map(|s| format!("{} ({})", s.name, s.reason))
                    .collect::<Vec<_>>()
                    .join(", ")
            };
            return Err(Error::NoInputs {
                path: path.to_string(),
                detail,
            });
        }
        Ok(KeptInputs {
            columns: inputs,
            set_aside,
            values: input_values,
        })
    }

    /// The scaled input matrix (`n` rows × kept inputs).
    fn scaled(&self, n: usize) -> Array2<f64> {
        let mut x = Array2::zeros((n, self.columns.len()));
        for (j, (col, values)) in self.columns.iter().zip(&self.values).enumerate() {
            for (i, v) in values.iter().enumerate() {
                // training values are inside the fitted range, and a log
                // transform is only chosen for strictly positive columns
                x[[i, j]] = col.scaling.scale(*v).unwrap_or(f64::NAN);
            }
        }
        x
    }
}

/// What training each target shares.
struct TargetRun<'a> {
    params: &'a CheckedCommitteeParams,
    x: &'a Array2<f64>,
    input_values: &'a [Vec<f64>],
    path: &'a str,
    observer: &'a dyn TrainObserver,
}

impl TargetRun<'_> {
    /// Train target `name` on the rows where it has a value, learnt through
    /// `transform`, with its training summary.
    ///
    /// # Errors
    /// [`Error::Cell`] for a value outside the transform's domain,
    /// [`Error::ConstantTarget`], and the committee's errors.
    fn train(
        &self,
        name: &str,
        values: &[Option<f64>],
        transform: TargetTransform,
    ) -> Result<TargetModel> {
        let n = values.len();
        let rows: Vec<usize> = (0..n).filter(|&i| values[i].is_some()).collect();
        let present: Vec<f64> = rows
            .iter()
            .map(|&i| values[i].unwrap_or(f64::NAN))
            .collect();
        let mut learnt = Vec::with_capacity(present.len());
        for (&i, &y) in rows.iter().zip(&present) {
            learnt.push(transform.forward(y).ok_or_else(|| Error::Cell {
                path: self.path.to_string(),
                row: i + 1,
                line: i + 2,
                column: name.to_string(),
                problem: format!(
                    "{y} cannot be learnt through transform '{}': expected {}",
                    transform.name(),
                    transform.domain_text()
                ),
            })?);
        }
        let scaling = ColumnScaling::fit(&learnt, false).ok_or_else(|| Error::ConstantTarget {
            path: self.path.to_string(),
            name: name.to_string(),
            value: present.first().copied().unwrap_or(f64::NAN),
        })?;
        debug_assert_eq!(scaling.transform, Transform::Identity);
        let t: Array1<f64> = learnt
            .iter()
            .map(|v| scaling.scale(*v).unwrap_or(f64::NAN))
            .collect();
        let x_t = self.x.select(ndarray::Axis(0), &rows);
        let committee = train_committee(
            self.params,
            x_t.view(),
            t.view(),
            scaling.width(),
            name,
            self.path,
            self.observer,
        )?;
        let raw_rows: Vec<Vec<f64>> = rows
            .iter()
            .map(|&i| self.input_values.iter().map(|v| v[i]).collect())
            .collect();
        // one prediction of the training rows for the summary and the
        // domain guard's yardsticks
        let p = committee.predict_scaled(x_t.view());
        let summary =
            summarise_prediction(&committee, &p, &scaling, &transform, &raw_rows, &present);
        let (typical_committee_sd, high_committee_sd) = committee_sd_quantiles(&p, scaling.width());
        let (min, max) = min_max(&present);
        Ok(TargetModel {
            name: name.to_string(),
            min,
            max,
            scaling,
            n_rows: rows.len(),
            n_missing: n - rows.len(),
            transform,
            committee,
            training_summary: Some(summary),
            typical_committee_sd,
            high_committee_sd,
        })
    }
}

/// The median and the [`DOMAIN_REFERENCE_QUANTILE`] quantile over the
/// training rows (their prediction `p`) of the committee's model sd alone
/// (learnt-scale target units: scaled sd times `width`): the domain
/// guard's yardsticks. `None` without rows.
fn committee_sd_quantiles(
    p: &crate::committee::ScaledPrediction,
    width: f64,
) -> (Option<f64>, Option<f64>) {
    let mut sd: Vec<f64> = p.committee_var.iter().map(|v| v.sqrt() * width).collect();
    sd.sort_by(f64::total_cmp);
    let q = |q: f64| Some(super::reference::quantile_sorted(&sd, q)).filter(|v| v.is_finite());
    (q(0.5), q(DOMAIN_REFERENCE_QUANTILE))
}

/// Each input's weight in the domain guard's relevance-weighted distance:
/// per target, the committee's sensitivity to the input on its training
/// rows ([`crate::committee::Committee::input_sensitivity`]) over that of
/// the input it uses most; the largest over the targets; then
/// w = min(1, s / [`DOMAIN_RELEVANT_SHARE`]): an input moving a target by
/// at least that share of what the strongest input does counts in full,
/// one the networks ignore hardly at all. `None` when no committee has a
/// sensitivity to measure.
fn input_weights(
    targets: &[TargetModel],
    x: ndarray::ArrayView2<f64>,
    rows: &[Vec<usize>],
) -> Option<Vec<f64>> {
    let mut w: Option<Vec<f64>> = None;
    for (t, r) in targets.iter().zip(rows) {
        let s = t
            .committee
            .input_sensitivity(x.select(ndarray::Axis(0), r).view());
        let top = s.iter().copied().fold(0.0, f64::max);
        if top.partial_cmp(&0.0) != Some(std::cmp::Ordering::Greater) {
            continue;
        }
        let s: Vec<f64> = s.iter().map(|v| v / top).collect();
        w = Some(match w {
            None => s,
            Some(w) => w.iter().zip(&s).map(|(a, b)| a.max(*b)).collect(),
        });
    }
    w.map(|w| {
        w.iter()
            .map(|v| (v / DOMAIN_RELEVANT_SHARE).min(1.0))
            .collect()
    })
}

/// Why `values` adds nothing to the inputs already kept, if it does not: an
/// exact copy of one, or perfectly collinear with one (|r| within
/// [`crate::prec::COLLINEAR_ONE_MINUS_R`] of 1, Pearson's r).
/// Only copies and linear restatements go: a strong but imperfect
/// correlation is left to the evidence framework (and named by `audit`).
fn restates(values: &[f64], kept: &[InputColumn], kept_values: &[Vec<f64>]) -> Option<String> {
    for (col, other) in kept.iter().zip(kept_values) {
        if other == values {
            return Some(format!(
                "a copy of '{}' (the same value in every row)",
                col.name
            ));
        }
        let Some(r) = crate::data::audit::pearson(values, other) else {
            continue;
        };
        if 1.0 - r.abs() <= crate::prec::COLLINEAR_ONE_MINUS_R {
            return Some(format!(
                "perfectly collinear with '{}' (r = {r:.12}): a linear restatement of it",
                col.name
            ));
        }
    }
    None
}

fn min_max(values: &[f64]) -> (f64, f64) {
    values
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), v| {
            (lo.min(*v), hi.max(*v))
        })
}
