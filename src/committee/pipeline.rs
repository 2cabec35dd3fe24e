//! Training one target's committee as a pipeline of named stages, each in
//! its own file, each handing the next a typed result:
//!
//! ```text
//! 1 split.rs        rows            → HeldOutSplit (training part, held-out part)
//! 2 candidates.rs   HeldOutSplit    → CandidateSearch (every network tried, ranked)
//! 3 by_size.rs      ranked          → ConstantCommittee (best n, n by held-out NLPD)
//! 4 varying.rs      ConstantCommittee → VaryingCommittee      [noise not constant]
//!   noise_models.rs both            → NoiseModels (those allowed to compete)
//! 5 residual.rs     NoiseModels     → ProcessTrial per model  [kriging not off]
//! 6 choice.rs       ProcessTrials   → Choice (noise model, process, gross errors and shape)
//! 7 refit.rs        Choice          → Refitted (members on all rows)
//!   residual.rs     Refitted        → the process on all rows [process chosen]
//! 8 assemble.rs     everything      → Committee
//! ```
//!
//! With `partitions` N > 1 the whole pipeline runs N times, partition p
//! (p = 0 … N−1) with master seed `seed + p` (wrapping), each choosing its
//! own held-out part, candidates, noise model, process, gross errors and
//! error shape; partitions 2 … N are kept inside the first
//! ([`Committee::further_partitions`]) and predictions average them
//! (bagging over held-out splits, Breiman 1996, *Machine Learning*
//! 24:123; the variance by [`super::PartitionVariance`]). Partition p is
//! therefore bit for bit the committee of a training with seed `seed + p`.

use ndarray::{ArrayView1, ArrayView2};

use super::assemble::{assemble, Parts};
use super::by_size::ConstantCommittee;
use super::candidates::CandidateSearch;
use super::choice::Choice;
use super::noise_models::NoiseModels;
use super::refit::Refitted;
use super::residual::{process_on_all_rows, process_wanted, try_processes, ProcessRows};
use super::split::HeldOutSplit;
use super::varying::VaryingCommittee;
use super::{CheckedCommitteeParams, Committee, NoiseMode, PartitionVariance};
use crate::error::Result;
use crate::observer::{TrainEvent, TrainObserver};

/// Train a committee for one target on scaled data: `params.partitions`
/// whole trainings, partition p with master seed `params.seed + p`
/// (wrapping), the further ones kept in the first's
/// [`Committee::further_partitions`].
///
/// `x` (N × d) and `t` (N) are scaled; `target_width` is the target's
/// scaling width, so that `ln(target_width)` turns a scaled NLPD into
/// target units.
///
/// # Errors
/// [`crate::Error::NotEnoughRows`] when the held-out split leaves too little
/// on either side; [`crate::Error::AllCandidatesFailed`] when no candidate
/// trains, or a required noise model or residual process cannot be fitted
/// (in any partition).
pub fn train_committee(
    params: &CheckedCommitteeParams,
    x: ArrayView2<f64>,
    t: ArrayView1<f64>,
    target_width: f64,
    target_name: &str,
    source: &str,
    observer: &dyn TrainObserver,
) -> Result<Committee> {
    let n = params.partitions.max(1);
    let train = |p: usize| {
        if n > 1 {
            observer.observe(&TrainEvent::PartitionStarted {
                target: target_name,
                partition: p + 1,
                n_partitions: n,
            });
        }
        let pp = params.with_seed(partition_seed(params.seed, p));
        train_partition(&pp, x, t, target_width, target_name, source, observer)
    };
    let mut first = train(0)?;
    for p in 1..n {
        let further = train(p)?;
        first.further_partitions.push(further);
    }
    if n > 1 {
        first.partition_variance = Some(params.partition_variance);
        if params.partition_variance == PartitionVariance::Correlated {
            first.partition_correlation = Some(params.partition_correlation);
        }
    }
    Ok(first)
}

/// Master seed of partition `p` (p = 0 is the training's own seed): the
/// seed plus p, wrapping, so that partition p is the training with that
/// seed.
pub(super) fn partition_seed(master: u64, p: usize) -> u64 {
    master.wrapping_add(p as u64)
}

/// One partition's whole training (stages 1–8).
fn train_partition(
    params: &CheckedCommitteeParams,
    x: ArrayView2<f64>,
    t: ArrayView1<f64>,
    target_width: f64,
    target_name: &str,
    source: &str,
    observer: &dyn TrainObserver,
) -> Result<Committee> {
    let (target, obs) = (target_name, observer);
    // 1. the training part and the held-out part
    let split = HeldOutSplit::new(params, x, t, target_width, source)?;
    // 2. candidate networks on the training part, scored on the held-out part
    let search = CandidateSearch::run(params, &split, target, obs);
    // 3. the committee of the best n, n by its held-out NLPD
    let constant = ConstantCommittee::choose(search.ranked()?, params.max_members, &split);
    // 4. [noise not constant] the same candidates with noise varying with the inputs
    let varying = (params.noise != NoiseMode::Constant)
        .then(|| VaryingCommittee::fit(params, &split, &constant, target, obs));
    let models = NoiseModels::new(params.noise, constant, varying)?;
    // 5. [kriging not off] a residual process tried on each noise model
    let rows =
        process_wanted(params).then(|| ProcessRows::on_training_part(params, &split, target, obs));
    let tried = try_processes(
        &models,
        rows.as_ref(),
        &split,
        params.model_var_scale,
        params.model_part_min_heldout,
    );
    // 6. gross errors and error shape beside each; the noise model and process chosen
    let mut choice = Choice::make(params, &split, tried)?;
    let gross = choice.gross_over_all_rows(t);
    // 7. the chosen members refitted on all rows, then the chosen process
    let refitted = Refitted::run(
        params,
        x,
        t,
        &models,
        choice.varying,
        gross.as_ref(),
        target,
        obs,
    )?;
    let process = process_on_all_rows(
        params,
        x,
        t,
        &refitted.members,
        choice.process.as_ref(),
        &mut choice.kriging,
        target,
        obs,
    )?;
    // 8. the committee
    let mut noise = models.selection.clone();
    noise.varying = choice.varying;
    noise.varying_margin_se = choice.varying_margin_se;
    let by_size = models.by_size(choice.varying);
    let parts = Parts {
        split: &split,
        search,
        hidden_min: params.hidden_min,
        by_size,
        noise,
        kriging: choice.kriging,
        refitted,
        process,
        gross,
    };
    Ok(assemble(parts, target, obs))
}
