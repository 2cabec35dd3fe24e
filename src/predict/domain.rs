//! Is a query row inside what the training data cover? The checks live in
//! [`crate::domain`]; this is the model-level entry point.

use ndarray::ArrayView1;

use crate::domain::{self, range_excesses, range_note, DomainVerdict};
use crate::model::Model;
use crate::prec::DOMAIN_RANGE_SLACK;

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
    /// order): range, joint domain and support.
    pub fn domain_check(&self, raw: ArrayView1<f64>) -> DomainVerdict {
        domain::check(&self.inputs, self.domain.as_ref(), raw)
    }
}
