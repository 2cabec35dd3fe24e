//! Stage 8 of training: the committee assembled from the stages'
//! hand-offs, with the record of how it was chosen.

use super::candidates::CandidateSearch;
use super::gross_errors::GrossErrorModel;
use super::kriging::ResidualKriging;
use super::refit::Refitted;
use super::split::HeldOutSplit;
use super::{Committee, KrigingSelection, NoiseSelection, Selection};
use crate::observer::{TrainEvent, TrainObserver};

/// What the stages hand to the assembled committee.
pub(super) struct Parts<'a> {
    pub split: &'a HeldOutSplit,
    pub search: CandidateSearch,
    /// Bottom of the hidden-unit range asked for.
    pub hidden_min: usize,
    /// The chosen noise model's size and held-out NLPD by size.
    pub by_size: (usize, Vec<f64>),
    pub noise: NoiseSelection,
    pub kriging: KrigingSelection,
    pub refitted: Refitted,
    /// The residual process over all the rows, when used.
    pub process: Option<ResidualKriging>,
    /// The share of gross errors over all the rows, when estimated.
    pub gross: Option<GrossErrorModel>,
}

/// The committee, and the end of the target's training reported with its
/// held-out NLPD (with the process when one is used).
pub(super) fn assemble(parts: Parts, target_name: &str, observer: &dyn TrainObserver) -> Committee {
    let (n_members, nlpd_by_size) = parts.by_size;
    let heldout_nlpd = match (parts.kriging.used, parts.kriging.kriging_nlpd) {
        (true, Some(v)) => v,
        _ => nlpd_by_size[n_members - 1],
    };
    let refitted = parts.refitted;
    observer.observe(&TrainEvent::TargetDone {
        target: target_name,
        n_members: refitted.members.len(),
        heldout_nlpd,
    });
    let gross_errors = refitted.gross_errors(parts.gross);
    let (hidden_max, widened) = (parts.search.hidden_max, parts.search.widened);
    Committee {
        n_inputs: parts.split.n_inputs(),
        members: refitted.members,
        candidates: parts.search.into_records(),
        selection: Selection {
            n_train_part: parts.split.train.len(),
            n_heldout: parts.split.held.len(),
            hidden_searched: (parts.hidden_min, hidden_max),
            widened,
            nlpd_by_size,
            n_members,
            refit_failures: refitted.failures,
            noise: parts.noise,
            kriging: parts.kriging,
            pooled: Vec::new(),
        },
        kriging: parts.process,
        gross_errors,
        further_partitions: Vec::new(),
        partition_variance: None,
        partition_correlation: None,
    }
}
