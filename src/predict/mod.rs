//! Estimates with error bars for new rows, and the domain verdict that
//! goes with each.
//!
//! A target learnt through a transform (see [`crate::model::TargetTransform`])
//! gets its error bars on the transformed scale; they are mapped back, so
//! the interval is asymmetric about the median, and [`Estimate::interval_kind`]
//! says so.

mod back_transform;
mod declared_units;
mod distribution;
mod domain;
mod fast;
mod output;
mod rows;
mod unit_hint;

pub use declared_units::UnitDeclaration;
pub use distribution::PredictiveForm;
pub use domain::{range_check, DomainGuard, DomainReport};
pub use fast::Predictor;
pub use output::{
    header_cells, json_head, json_row, row_cells, to_column_units, EstimateBatch, EstimateFormat,
    EstimateLayout, EstimateWriter, ExtraCells, TargetColumn, CAUTION,
};
pub use rows::{estimate_rows, TargetRows};
pub use unit_hint::UnitHint;

use ndarray::Array2;
use serde::Serialize;
use statrs::distribution::{ContinuousCDF, Normal};

use crate::data::schema::PrepareOptions;
use crate::data::Table;
use crate::derive::RowWarning;
use crate::domain::DomainLevel;
use crate::error::{Error, Result};
use crate::metrics::Evaluation;
use crate::model::{IntervalKind, Model};
use crate::units::Unit;

/// One target's estimate for one row, in the target's units.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Estimate {
    /// Predictive mean.
    pub mean: f64,
    /// Predictive median (equal to the mean for an untransformed target).
    pub median: f64,
    /// Predictive standard deviation (noise + model).
    pub sd: f64,
    /// Lower end of the central 95 % predictive interval.
    pub lo95: f64,
    /// Upper end of the central 95 % predictive interval.
    pub hi95: f64,
    /// Noise part of the sd: the scatter of repeat tests.
    pub noise_sd: f64,
    /// Model part of the sd: parameter uncertainty and committee spread.
    pub model_sd: f64,
    /// How the centre and interval were obtained.
    pub interval_kind: IntervalKind,
}

impl Estimate {
    /// The estimate in another unit of the same quantity (`self` in the
    /// internal unit): levels converted as values, spreads as differences.
    pub fn in_unit(&self, unit: Unit) -> Estimate {
        Estimate {
            mean: unit.from_internal(self.mean),
            median: unit.from_internal(self.median),
            sd: unit.interval_from_internal(self.sd),
            lo95: unit.from_internal(self.lo95),
            hi95: unit.from_internal(self.hi95),
            noise_sd: unit.interval_from_internal(self.noise_sd),
            model_sd: unit.interval_from_internal(self.model_sd),
            interval_kind: self.interval_kind,
        }
    }
}

/// One target's predictive distribution on the scale it was learnt on
/// (transformed target units): z = mean + sd·ε, ε of unit variance with
/// the committee's shape ([`crate::committee::Committee::shape`]).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct ScalePrediction {
    /// Mean on the learnt scale.
    pub mean: f64,
    /// Total sd on the learnt scale.
    pub sd: f64,
    /// Noise part of the sd on the learnt scale.
    pub noise_sd: f64,
    /// The committee's model sd alone on the learnt scale (parameter
    /// uncertainty and committee spread, without noise or residual
    /// process): the domain guard's signal.
    pub committee_sd: f64,
}

/// Estimates for one row, every target, with the domain verdict.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct RowPrediction {
    /// One estimate per target, in the model's target order.
    pub estimates: Vec<Estimate>,
    /// False when the row lies outside what the training data cover
    /// (level [`DomainLevel::Outside`]).
    pub in_domain: bool,
    /// The graded domain verdict.
    pub level: DomainLevel,
    /// Plain-language notes, naming the inputs responsible.
    pub notes: Vec<String>,
}

/// Everything [`Model::predict_with_scale`] returns.
#[derive(Clone, Debug, PartialEq)]
pub struct FullPrediction {
    /// Estimates and domain verdict per row.
    pub rows: Vec<RowPrediction>,
    /// Per target, per row: the distribution on the learnt scale.
    pub learnt: Vec<Vec<ScalePrediction>>,
    /// The scaled inputs (rows × inputs); the training range of each
    /// input maps to [−0.5, 0.5].
    pub scaled: Array2<f64>,
    /// Columns the table declared in another unit, converted.
    pub declarations: Vec<UnitDeclaration>,
}

/// How a table's values are shown in the notes: per input, the unit its
/// values are shown in (`None`: as the networks read them), and the inputs
/// whose unit the table declared (no unit hint for them).
#[derive(Clone, Debug, Default, PartialEq)]
struct Reading {
    note_units: Vec<Option<Unit>>,
    declared: Vec<String>,
}

impl Reading {
    /// The reading of a table with `declarations` (`Model::apply_declared_units`).
    fn new(model: &Model, declarations: &[UnitDeclaration]) -> Reading {
        let mut note_units = model.input_note_units();
        for d in declarations {
            let Some(j) = model.inputs.iter().position(|i| i.name == d.column) else {
                continue;
            };
            // raw values are internal for a model with a schema; without
            // one they are in the column's own unit, shown converted only
            // when that is the internal unit of its quantity
            if model.schema.is_some() || d.to.is_internal() {
                note_units[j] = Some(d.from);
            }
        }
        Reading {
            note_units,
            declared: declarations.iter().map(|d| d.column.clone()).collect(),
        }
    }
}

/// One target's committee prediction on the learnt scale.
fn learnt_from(
    t: &crate::model::TargetModel,
    p: &crate::committee::ScaledPrediction,
) -> Vec<ScalePrediction> {
    let w = t.scaling.width();
    p.mean
        .iter()
        .zip(&p.var)
        .zip(&p.noise_var)
        .zip(&p.committee_var)
        .map(|(((m, v), nv), cv)| ScalePrediction {
            mean: t.scaling.unscale_linear(*m),
            sd: v.sqrt() * w,
            noise_sd: nv.sqrt() * w,
            committee_sd: cv.sqrt() * w,
        })
        .collect()
}

/// The standard-normal quantile of 0.975 (≈ 1.959964), from statrs.
pub fn z975() -> f64 {
    Normal::standard().inverse_cdf(0.975)
}

impl Model {
    /// Scaled input matrix for `table`'s rows; errors name the row and column.
    ///
    /// # Errors
    /// A missing or non-numeric input column or cell; a value at or below
    /// zero for an input the model takes through its logarithm.
    pub fn scaled_inputs(&self, table: &Table) -> Result<(Array2<f64>, Array2<f64>)> {
        let n = table.n_rows();
        let mut raw = Array2::zeros((n, self.inputs.len()));
        let mut scaled = Array2::zeros((n, self.inputs.len()));
        for (j, inp) in self.inputs.iter().enumerate() {
            let values = table.numeric(&inp.name)?;
            for (i, v) in values.into_iter().enumerate() {
                raw[[i, j]] = v;
                scaled[[i, j]] = inp.scaling.scale(v).ok_or_else(|| Error::PredictInput {
                    path: table.source().display().to_string(),
                    row: table.first_row() + i + 1,
                    column: inp.name.clone(),
                    problem: format!("{v} is not above zero, but the model takes this input through its logarithm"),
                })?;
            }
        }
        Ok((raw, scaled))
    }

    /// The table as the model's inputs see it: for a model trained through
    /// a schema, read through that schema (units converted, values checked,
    /// derived inputs computed; rows are never dropped); otherwise as it is.
    /// Returns the table and the derivations' row warnings.
    ///
    /// # Errors
    /// As [`crate::data::schema::Schema::prepare`].
    pub fn read_through_schema(
        &self,
        table: &Table,
        need_targets: bool,
    ) -> Result<(Table, Vec<RowWarning>)> {
        let (table, _) = self.apply_declared_units(table)?;
        match &self.schema {
            None => Ok((table, Vec::new())),
            Some(schema) => {
                let p = schema.prepare(
                    &table,
                    "stored in the model",
                    PrepareOptions {
                        need_targets,
                        drop_incomplete_rows: false,
                    },
                )?;
                self.refuse_unseen_levels(&p.table)?;
                Ok((p.table, p.row_warnings))
            }
        }
    }

    /// Refuse a row at a level of a declared code that no training row
    /// held: a new code has no data behind it, nothing to extrapolate to.
    /// `prepared` is the table read through the model's schema (indicator
    /// columns present).
    ///
    /// # Errors
    /// [`Error::PredictInput`] naming the file, row, code column, the level
    /// and the levels training saw.
    pub fn refuse_unseen_levels(&self, prepared: &Table) -> Result<()> {
        for code in &self.codes {
            for level in code.levels.iter().filter(|l| l.training_rows == 0) {
                let Some(values) = prepared.numeric_optional(&level.column).ok() else {
                    continue;
                };
                if let Some(i) = values.iter().position(|v| *v == Some(1.0)) {
                    return Err(Error::PredictInput {
                        path: prepared.label(),
                        row: prepared.first_row() + i + 1,
                        column: code.name.clone(),
                        problem: format!(
                            "level {} = {} is declared but no training row held it: the model has nothing to say about it; levels seen in training: {}",
                            level.code,
                            level.name,
                            code.seen_text()
                        ),
                    });
                }
            }
        }
        Ok(())
    }

    /// Estimate every target for every row of `table`.
    ///
    /// # Errors
    /// As [`Model::read_through_schema`] and [`Model::scaled_inputs`].
    pub fn predict(&self, table: &Table) -> Result<Vec<RowPrediction>> {
        Ok(self.predict_with_scale(table)?.rows)
    }

    /// As [`Model::predict`], also returning the scaled inputs and, per
    /// target, per row, the predictive distribution on the scale the target
    /// was learnt on (what probabilities of meeting a requirement are
    /// computed from).
    ///
    /// # Errors
    /// As [`Model::predict`].
    pub fn predict_with_scale(&self, table: &Table) -> Result<FullPrediction> {
        self.predict_with_scale_by(table, &|scaled| self.predict_learnt_scale(scaled))
    }

    /// [`Model::predict_with_scale`] with the learnt-scale distributions
    /// from `learnt_of` (the exact path or [`Predictor`]'s fast one).
    fn predict_with_scale_by(
        &self,
        table: &Table,
        learnt_of: &dyn Fn(&Array2<f64>) -> Vec<Vec<ScalePrediction>>,
    ) -> Result<FullPrediction> {
        let (table, declarations) = self.apply_declared_units(table)?;
        let (prepared, warnings) = self.read_through_schema(&table, false)?;
        let (raw, scaled) = self.scaled_inputs(&prepared)?;
        let learnt = learnt_of(&scaled);
        let reading = Reading::new(self, &declarations);
        let mut rows = self.rows_from_learnt(&raw, &learnt, &reading);
        for w in warnings {
            if let Some(r) = rows.get_mut(w.row) {
                r.notes.push(w.message);
            }
        }
        Ok(FullPrediction {
            rows,
            learnt,
            scaled,
            declarations,
        })
    }

    /// The unit estimates of target `name` are given in: with `declared`,
    /// the unit the schema declares for it (the unit of the training file),
    /// otherwise the internal unit of its quantity. `None` for a model
    /// trained without a schema (its units are whatever the file used).
    pub fn target_unit(&self, name: &str, declared: bool) -> Option<Unit> {
        let c = self.schema.as_ref()?.column(name)?;
        Some(if declared {
            c.unit_or_1()
        } else {
            c.internal_unit()
        })
    }

    /// Per target, per row: the predictive distribution on the scale the
    /// target was learnt on.
    pub fn predict_learnt_scale(&self, scaled: &Array2<f64>) -> Vec<Vec<ScalePrediction>> {
        self.targets
            .iter()
            .map(|t| learnt_from(t, &t.committee.predict_scaled(scaled.view())))
            .collect()
    }

    /// Estimates from raw and scaled input matrices (rows × inputs).
    pub fn predict_arrays(&self, raw: &Array2<f64>, scaled: &Array2<f64>) -> Vec<RowPrediction> {
        let reading = Reading::new(self, &[]);
        self.rows_from_learnt(raw, &self.predict_learnt_scale(scaled), &reading)
    }

    /// Estimates and domain verdicts from raw inputs and the learnt-scale
    /// distributions of [`Model::predict_learnt_scale`].
    fn rows_from_learnt(
        &self,
        raw: &Array2<f64>,
        learnt: &[Vec<ScalePrediction>],
        reading: &Reading,
    ) -> Vec<RowPrediction> {
        let per_target: Vec<Vec<Estimate>> = self
            .targets
            .iter()
            .zip(learnt)
            .map(|(t, preds)| {
                let z = t.committee.shape().quantile(0.975);
                preds
                    .iter()
                    .map(|p| t.transform.back_transform(p.mean, p.sd, p.noise_sd, z))
                    .collect()
            })
            .collect();
        let bounds: Vec<_> = self
            .targets
            .iter()
            .map(|t| crate::domain::physical_bound(self, &t.name))
            .collect();
        // the domain check costs one pass over the training rows per row;
        // check_many spreads it over the cores
        let readings = self.unit_readings();
        let verdicts =
            self.domain_guard()
                .check_many_shown(raw.view(), learnt, &reading.note_units);
        verdicts
            .into_iter()
            .enumerate()
            .map(|(i, dom)| {
                let estimates: Vec<Estimate> = per_target.iter().map(|e| e[i].clone()).collect();
                let mut notes = dom.notes;
                notes.extend(
                    self.unit_hints_with(&readings, raw.row(i), &reading.declared)
                        .into_iter()
                        .map(|h| h.note),
                );
                for ((t, b), e) in self.targets.iter().zip(&bounds).zip(&estimates) {
                    notes.extend(b.as_ref().and_then(|b| b.note(&t.name, e.median)));
                }
                RowPrediction {
                    estimates,
                    in_domain: dom.in_domain,
                    level: dom.level,
                    notes,
                }
            })
            .collect()
    }

    /// Measure the model on a table holding measured targets: per target,
    /// its name and the evaluation over the rows where it was measured
    /// (`None` when no row was). For a transformed target the NLPD is the
    /// density of the measured value on its own scale (Jacobian included)
    /// and the coverages count values inside the back-transformed intervals.
    ///
    /// # Errors
    /// As [`Model::predict`], plus a missing or unreadable target column.
    pub fn evaluate(&self, table: &Table) -> Result<Vec<(String, Option<Evaluation>)>> {
        Ok(estimate_rows(self, table)?
            .into_iter()
            .map(|r| {
                let e = r.evaluation();
                (r.target, e)
            })
            .collect())
    }
}
