//! A model prepared for many predictions: the fast path of
//! [`crate::committee::FastCommittee`] for every target (each row's sd
//! within [`crate::prec::FAST_SD_TOL`] of the exact one, by a bound
//! computed per row), or the exact path.

use std::sync::atomic::{AtomicUsize, Ordering};

use ndarray::{Array2, ArrayView2};

use super::{learnt_from, EstimateBatch, EstimateLayout, FullPrediction, ScalePrediction};
use crate::committee::{FastCommittee, FastStats};
use crate::data::Table;
use crate::error::Result;
use crate::model::Model;

/// A model ready to estimate many rows ([`Model::predictor`]).
pub struct Predictor<'a> {
    model: &'a Model,
    /// Per target; None for the exact path.
    fast: Option<Vec<FastCommittee<'a>>>,
    /// Rows the fast path handed to the exact one, summed over targets.
    exact_rows: AtomicUsize,
}

impl Model {
    /// This model prepared for many predictions: with `exact`, the exact
    /// path of [`Model::predict`]; otherwise the fast path, each target's
    /// ranks and cut chosen on the model's stored training rows.
    pub fn predictor(&self, exact: bool) -> Predictor<'_> {
        let fast = (!exact).then(|| {
            let d = self.inputs.len();
            let cal = self
                .domain
                .as_ref()
                .filter(|r| r.n_inputs == d && d > 0)
                .and_then(|r| {
                    ArrayView2::from_shape((r.scaled_rows.len() / d, d), &r.scaled_rows).ok()
                })
                .map_or_else(|| Array2::zeros((0, d)), |v| v.to_owned());
            self.targets
                .iter()
                .map(|t| t.committee.fast(cal.view()))
                .collect()
        });
        Predictor {
            model: self,
            fast,
            exact_rows: AtomicUsize::new(0),
        }
    }
}

impl Predictor<'_> {
    /// True for the exact path.
    pub fn is_exact(&self) -> bool {
        self.fast.is_none()
    }

    /// Per target, the ranks and cut the fast path chose (empty for the
    /// exact path).
    pub fn stats(&self) -> Vec<FastStats> {
        self.fast
            .iter()
            .flatten()
            .map(FastCommittee::stats)
            .collect()
    }

    /// Rows the fast path has computed exactly so far (their bound was
    /// above the tolerance), summed over targets.
    pub fn exact_rows(&self) -> usize {
        self.exact_rows.load(Ordering::Relaxed)
    }

    /// As [`Model::predict_learnt_scale`].
    pub fn learnt_scale(&self, scaled: &Array2<f64>) -> Vec<Vec<ScalePrediction>> {
        match &self.fast {
            None => self.model.predict_learnt_scale(scaled),
            Some(fast) => self
                .model
                .targets
                .iter()
                .zip(fast)
                .map(|(t, f)| {
                    let (p, n) = f.predict_scaled(scaled.view());
                    self.exact_rows.fetch_add(n, Ordering::Relaxed);
                    learnt_from(t, &p)
                })
                .collect(),
        }
    }

    /// As [`Model::predict_with_scale`].
    ///
    /// # Errors
    /// As [`Model::predict_with_scale`].
    pub fn predict_with_scale(&self, table: &Table) -> Result<FullPrediction> {
        self.model
            .predict_with_scale_by(table, &|scaled| self.learnt_scale(scaled))
    }

    /// As [`Model::estimate_batch`].
    ///
    /// # Errors
    /// As [`Model::estimate_batch`].
    pub fn estimate_batch(&self, table: &Table, layout: &EstimateLayout) -> Result<EstimateBatch> {
        self.model.unit_check(table)?;
        let full = self.predict_with_scale(table)?;
        self.model.estimate_batch_from(table, layout, full)
    }

    /// As [`Model::estimate_batch_full`].
    ///
    /// # Errors
    /// As [`Model::estimate_batch`].
    pub fn estimate_batch_full(
        &self,
        table: &Table,
        layout: &EstimateLayout,
    ) -> Result<(EstimateBatch, FullPrediction)> {
        self.model.unit_check(table)?;
        let full = self.predict_with_scale(table)?;
        let batch = self
            .model
            .estimate_batch_from(table, layout, full.clone())?;
        Ok((batch, full))
    }
}
