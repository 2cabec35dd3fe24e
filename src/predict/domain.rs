//! Is a query row inside what the training data cover? The checks live in
//! [`crate::domain`]; this is the model-level entry point.

use ndarray::{ArrayView1, ArrayView2, Axis};

use crate::domain::{
    self, range_excesses, range_note, DomainIndex, DomainReference, DomainVerdict,
};
use crate::model::Model;
use crate::prec::{DOMAIN_QUERY_BLOCK, DOMAIN_RANGE_SLACK};

/// The range-only verdict for one row.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct DomainReport {
    /// False when any input lies beyond its range by more than the slack.
    pub in_domain: bool,
    /// One note per input outside its range, in plain words.
    pub notes: Vec<String>,
}

/// Check each input of `raw` (the row's raw values in model input order)
/// against its training range only (see [`Model::domain_check`] for the
/// full guard).
pub fn range_check(model: &Model, raw: ArrayView1<f64>) -> DomainReport {
    let ex = range_excesses(&model.inputs, raw);
    DomainReport {
        in_domain: ex.iter().all(|e| e.fraction <= DOMAIN_RANGE_SLACK),
        notes: ex.iter().map(range_note).collect(),
    }
}

impl Model {
    /// The full domain guard for one row (raw values in model input
    /// order): range, joint domain and support. For many rows, use
    /// [`Model::domain_guard`].
    pub fn domain_check(&self, raw: ArrayView1<f64>) -> DomainVerdict {
        self.domain_guard().check(raw)
    }

    /// The full domain guard with the training reference laid out once,
    /// for checking many rows.
    pub fn domain_guard(&self) -> DomainGuard<'_> {
        DomainGuard {
            model: self,
            index: self.domain.as_ref().map(DomainReference::index),
        }
    }
}

/// [`Model::domain_check`] for many rows: the model and its indexed
/// training reference.
pub struct DomainGuard<'a> {
    model: &'a Model,
    index: Option<DomainIndex<'a>>,
}

impl DomainGuard<'_> {
    /// As [`Model::domain_check`].
    pub fn check(&self, raw: ArrayView1<f64>) -> DomainVerdict {
        self.check_many(raw.insert_axis(Axis(0))).remove(0)
    }

    /// The guard for every row of `raw` (rows × inputs, raw values in
    /// model input order), in order; blocks of [`DOMAIN_QUERY_BLOCK`] rows
    /// are spread over the cores.
    pub fn check_many(&self, raw: ArrayView2<f64>) -> Vec<DomainVerdict> {
        use rayon::prelude::*;
        let blocks: Vec<Vec<DomainVerdict>> = raw
            .axis_chunks_iter(Axis(0), DOMAIN_QUERY_BLOCK)
            .collect::<Vec<_>>()
            .into_par_iter()
            .map(|block| domain::check_many(&self.model.inputs, self.index.as_ref(), block))
            .collect();
        blocks.into_iter().flatten().collect()
    }
}
