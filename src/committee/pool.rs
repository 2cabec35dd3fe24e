//! Cross-fitting: further held-out partitions of the rows, each with its
//! own candidate search and committee, pooled into one committee.
//!
//! # Why
//!
//! A committee chosen on one held-out part carries the chance of that
//! part and of its candidates' random starts: on the concrete data the
//! cross-validated RMSE inside the training rows moved by 0.3 MPa with the
//! seed alone, most of the gap to gradient-boosted trees (issue 29,
//! docs/benchmarks.md). Averaging models fitted on different random splits
//! lowers that variance (bagging, Breiman 1996, *Machine Learning*
//! 24:123; Bishop 1995 §9.6 on committees): partition p ≥ 1 draws its own
//! held-out part and candidates from the master seed mixed with p, chooses
//! its committee by size on its own held-out part, with the noise model
//! the first partition chose, and its members are refitted on all the rows
//! (under the first partition's share of gross errors) and added to the
//! committee. The committee's mean is then the average over all the pooled
//! members and its variance the members' mean variance plus their spread
//! about it, as for any committee; the residual process keeps the
//! hyperparameters fitted in the first partition and takes the pooled
//! committee's residuals.
//!
//! The first partition alone makes every held-out choice (noise model,
//! residual process, gross errors and error shape): the further ones only
//! add members, so their held-out parts need no process of their own.

use ndarray::{ArrayView1, ArrayView2};

use super::by_size::ConstantCommittee;
use super::candidates::CandidateSearch;
use super::gross_errors::GrossErrorModel;
use super::noise_models::NoiseModels;
use super::refit::Refitted;
use super::split::HeldOutSplit;
use super::varying::VaryingCommittee;
use super::{CheckedCommitteeParams, NoiseMode, PooledPartition};
use crate::error::Result;
use crate::observer::TrainObserver;

/// Mixed, times the partition's index, into the master seed of a further
/// partition.
const PARTITION_SEED_SALT: u64 = 0x9E37_79B9_7F4A_7C15;

/// Master seed of partition `p` (p = 0 is the first partition's own seed).
pub(super) fn partition_seed(master: u64, p: usize) -> u64 {
    master ^ PARTITION_SEED_SALT.wrapping_mul(p as u64)
}

/// A further partition's refitted members and its record.
pub(super) struct Pooled {
    pub refitted: Refitted,
    pub record: PooledPartition,
}

/// Train partition `p`'s committee on scaled rows `x`, `t` and refit its
/// members on all of them: noise varying with the inputs when `varying`
/// (the first partition's choice; constant noise when no candidate could
/// be fitted with varying noise), refitted under `gross` when given.
///
/// # Errors
/// As the first partition's stages: too few rows, no candidate trained,
/// every refit failed.
#[allow(clippy::too_many_arguments)]
pub(super) fn further_partition(
    params: &CheckedCommitteeParams,
    p: usize,
    x: ArrayView2<f64>,
    t: ArrayView1<f64>,
    target_width: f64,
    source: &str,
    varying: bool,
    gross: Option<&GrossErrorModel>,
    target: &str,
    obs: &dyn TrainObserver,
) -> Result<Pooled> {
    let pp = params.with_seed(partition_seed(params.seed, p));
    let split = HeldOutSplit::new(&pp, x, t, target_width, source)?;
    let search = CandidateSearch::run(&pp, &split, target, obs);
    let (refitted, use_varying, (n_members, nlpd_by_size)) = {
        let constant = ConstantCommittee::choose(search.ranked()?, pp.max_members, &split);
        let varying_fit =
            varying.then(|| VaryingCommittee::fit(&pp, &split, &constant, target, obs));
        // Auto never refuses: a partition where varying noise failed keeps constant noise
        let models = NoiseModels::new(NoiseMode::Auto, constant, varying_fit)?;
        let use_varying = varying && models.selection.varying_nlpd.is_some();
        let refitted = Refitted::run(&pp, x, t, &models, use_varying, gross, target, obs)?;
        (refitted, use_varying, models.by_size(use_varying))
    };
    Ok(Pooled {
        record: PooledPartition {
            seed: pp.seed,
            n_train_part: split.train.len(),
            n_heldout: split.held.len(),
            hidden_searched: (pp.hidden_min, search.hidden_max),
            nlpd_by_size,
            n_members,
            varying: use_varying,
            refit_failures: refitted.failures.clone(),
            candidates: search.into_records(),
        },
        refitted,
    })
}

#[cfg(test)]
mod tests {
    use super::super::stage_fixture::{params, small_data, Silent};
    use super::super::{train_committee, CommitteeParams};
    use super::*;

    /// Pooling leaves the first partition's committee as it was and adds
    /// the further partition's members after it, as its record says: the
    /// partition's own seed, split and size (cross-fitting; the committee
    /// of the pooled members is then any committee's mean and spread,
    /// Bishop 1995 §9.6).
    #[test]
    fn a_further_partition_adds_its_members_after_the_first() {
        let (x, t) = small_data(60);
        let one = params();
        let two = CommitteeParams::clone(&one)
            .partitions(2)
            .check()
            .expect("valid");
        let train = |p| train_committee(p, x.view(), t.view(), 1.0, "y", "small", &Silent);
        let a = train(&one).expect("one partition");
        let b = train(&two).expect("two partitions");
        assert!(a.selection.pooled.is_empty());
        assert_eq!(b.selection.pooled.len(), 1);
        let rec = &b.selection.pooled[0];
        assert_eq!(rec.seed, partition_seed(one.seed, 1));
        assert_eq!(rec.n_train_part + rec.n_heldout, 60);
        let n_first = a.members.len();
        assert_eq!(b.members[..n_first], a.members[..]);
        assert_eq!(
            b.members.len(),
            n_first + rec.n_members - rec.refit_failures.len()
        );
        assert!(b.members[n_first..]
            .iter()
            .all(|m| m.noise.is_some() == rec.varying));
        assert_eq!(b.selection.n_members, a.selection.n_members);
        assert!(!rec.candidates.is_empty());
    }

    /// Partition 0 keeps the master seed; the others differ from it and
    /// from each other (common practice, no source).
    #[test]
    fn partition_seeds_are_distinct() {
        assert_eq!(partition_seed(7, 0), 7);
        let s: Vec<u64> = (0..4).map(|p| partition_seed(7, p)).collect();
        let mut d = s.clone();
        d.sort_unstable();
        d.dedup();
        assert_eq!(d.len(), 4);
    }
}
