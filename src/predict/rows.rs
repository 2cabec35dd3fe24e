//! Every target's estimates on the rows of a table that hold its measured
//! value, with what evaluating them needs on the learnt scale: read by
//! [`Model::evaluate`], the model comparison and the report.

use super::{range_check, Estimate};
use crate::committee::GrossErrors;
use crate::data::Table;
use crate::error::{Error, Result};
use crate::metrics::{evaluate_on_scale, Evaluation};
use crate::model::Model;

/// One target's estimates on the rows of a table where it was measured.
#[derive(Clone, Debug, PartialEq)]
pub struct TargetRows {
    /// Target name.
    pub target: String,
    /// Rows of the table (0-based) with a measured value.
    pub rows: Vec<usize>,
    /// Measured values (target units).
    pub measured: Vec<f64>,
    /// Estimates (target units).
    pub estimates: Vec<Estimate>,
    /// Measured values on the learnt scale.
    pub z_measured: Vec<f64>,
    /// Predictive means on the learnt scale.
    pub z_mean: Vec<f64>,
    /// Predictive sds on the learnt scale.
    pub z_sd: Vec<f64>,
    /// ln |g′(y)| per row (0 for an untransformed target).
    pub log_jacobian: Vec<f64>,
    /// Raw input values per row, model input order.
    pub inputs: Vec<Vec<f64>>,
    /// Domain verdict per row.
    pub in_domain: Vec<bool>,
    /// The model's gross-error part on the learnt scale, when it has one.
    pub gross: Option<GrossErrors>,
}

impl TargetRows {
    /// RMSE, NLPD, coverage … over the rows (`None` for no rows).
    pub fn evaluation(&self) -> Option<Evaluation> {
        let point: Vec<f64> = self.estimates.iter().map(|e| e.mean).collect();
        evaluate_on_scale(
            &self.measured,
            &point,
            &self.z_measured,
            &self.z_mean,
            &self.z_sd,
            &self.log_jacobian,
            self.gross,
        )
    }

    /// Each row's negative log predictive density (as in the NLPD of
    /// [`Self::evaluation`], one row at a time).
    pub fn row_nlpd(&self) -> Vec<f64> {
        (0..self.rows.len())
            .map(|k| {
                evaluate_on_scale(
                    &self.measured[k..=k],
                    &[self.estimates[k].mean],
                    &self.z_measured[k..=k],
                    &self.z_mean[k..=k],
                    &self.z_sd[k..=k],
                    &self.log_jacobian[k..=k],
                    self.gross,
                )
                .map_or(f64::NAN, |e| e.nlpd)
            })
            .collect()
    }
}

/// Estimates of every target on the rows of `table` that hold its measured
/// value, read as [`Model::evaluate`] reads a table.
///
/// # Errors
/// As [`Model::evaluate`].
pub fn estimate_rows(model: &Model, table: &Table) -> Result<Vec<TargetRows>> {
    let (prepared, _) = model.read_through_schema(table, true)?;
    let (raw, scaled) = model.scaled_inputs(&prepared)?;
    let learnt = model.predict_learnt_scale(&scaled);
    let mut out = Vec::new();
    for (t, preds) in model.targets.iter().zip(&learnt) {
        let z = t.committee.shape().quantile(0.975);
        let measured = prepared.numeric_optional(&t.name)?;
        let mut r = TargetRows {
            target: t.name.clone(),
            rows: vec![],
            measured: vec![],
            estimates: vec![],
            z_measured: vec![],
            z_mean: vec![],
            z_sd: vec![],
            log_jacobian: vec![],
            inputs: vec![],
            in_domain: vec![],
            gross: t
                .committee
                .gross_errors
                .as_ref()
                .map(|g| g.on_scale(|z| t.scaling.unscale_linear(z), t.scaling.width())),
        };
        for (row, (v, p)) in measured.iter().zip(preds).enumerate() {
            let Some(v) = *v else { continue };
            let (Some(g), Some(lj)) = (t.transform.forward(v), t.transform.log_jacobian(v)) else {
                return Err(Error::Cell {
                    path: table.source().display().to_string(),
                    row: row + 1,
                    line: row + 2,
                    column: t.name.clone(),
                    problem: format!(
                        "{v} cannot be judged on the scale '{}' the model learnt: expected {}",
                        t.transform.name(),
                        t.transform.domain_text()
                    ),
                });
            };
            r.rows.push(row);
            r.measured.push(v);
            r.estimates
                .push(t.transform.back_transform(p.mean, p.sd, p.noise_sd, z));
            r.z_measured.push(g);
            r.z_mean.push(p.mean);
            r.z_sd.push(p.sd);
            r.log_jacobian.push(lj);
            r.inputs.push(raw.row(row).to_vec());
            r.in_domain.push(range_check(model, raw.row(row)).in_domain);
        }
        out.push(r);
    }
    Ok(out)
}
