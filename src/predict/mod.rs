//! Estimates with error bars for new rows, and the domain verdict that
//! goes with each.

mod domain;

pub use domain::{range_check, DomainReport};

use ndarray::Array2;
use serde::Serialize;
use statrs::distribution::{ContinuousCDF, Normal};

use crate::data::Table;
use crate::error::{Error, Result};
use crate::model::Model;

/// One target's estimate for one row, in the target's units.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Estimate {
    /// Predictive mean.
    pub mean: f64,
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
}

/// Estimates for one row, every target, with the domain verdict.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct RowPrediction {
    /// One estimate per target, in the model's target order.
    pub estimates: Vec<Estimate>,
    /// False when the row lies outside what the training data cover.
    pub in_domain: bool,
    /// Plain-language notes, naming the inputs responsible.
    pub notes: Vec<String>,
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
                    row: i + 1,
                    column: inp.name.clone(),
                    problem: format!("{v} is not above zero, but the model takes this input through its logarithm"),
                })?;
            }
        }
        Ok((raw, scaled))
    }

    /// Estimate every target for every row of `table`.
    ///
    /// # Errors
    /// As [`Model::scaled_inputs`].
    pub fn predict(&self, table: &Table) -> Result<Vec<RowPrediction>> {
        let (raw, scaled) = self.scaled_inputs(table)?;
        Ok(self.predict_arrays(&raw, &scaled))
    }

    /// Estimates from raw and scaled input matrices (rows × inputs).
    pub fn predict_arrays(&self, raw: &Array2<f64>, scaled: &Array2<f64>) -> Vec<RowPrediction> {
        let z = z975();
        let per_target: Vec<Vec<Estimate>> = self
            .targets
            .iter()
            .map(|t| {
                let p = t.committee.predict_scaled(scaled.view());
                let w = t.scaling.width();
                p.mean
                    .iter()
                    .zip(&p.var)
                    .zip(&p.noise_var)
                    .map(|((m, v), nv)| {
                        let mean = t.scaling.unscale_linear(*m);
                        let sd = v.sqrt() * w;
                        Estimate {
                            mean,
                            sd,
                            lo95: mean - z * sd,
                            hi95: mean + z * sd,
                            noise_sd: nv.sqrt() * w,
                            model_sd: (v - nv).max(0.0).sqrt() * w,
                        }
                    })
                    .collect()
            })
            .collect();
        (0..raw.nrows())
            .map(|i| {
                let dom = range_check(self, raw.row(i));
                RowPrediction {
                    estimates: per_target.iter().map(|e| e[i].clone()).collect(),
                    in_domain: dom.in_domain,
                    notes: dom.notes,
                }
            })
            .collect()
    }
}
