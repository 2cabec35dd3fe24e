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
//!   pool.rs         [partitions > 1] stages 1–4 and 7 on further held-out
//!                   partitions, their members added to Refitted
//!   residual.rs     Refitted        → the process on all rows [process chosen]
//! 8 assemble.rs     everything      → Committee
//! ```

use ndarray::{ArrayView1, ArrayView2};

use super::assemble::{assemble, Parts};
use super::by_size::ConstantCommittee;
use super::candidates::CandidateSearch;
use super::choice::Choice;
use super::noise_models::NoiseModels;
use super::pool::further_partition;
use super::refit::Refitted;
use super::residual::{process_on_all_rows, process_wanted, try_processes, ProcessRows};
use super::split::HeldOutSplit;
use super::varying::VaryingCommittee;
use super::{CheckedCommitteeParams, Committee, NoiseMode};
use crate::error::Result;
use crate::observer::TrainObserver;

/// Train a committee for one target on scaled data.
///
/// `x` (N × d) and `t` (N) are scaled; `target_width` is the target's
/// scaling width, so that `ln(target_width)` turns a scaled NLPD into
/// target units.
///
/// # Errors
/// [`crate::Error::NotEnoughRows`] when the held-out split leaves too little
/// on either side; [`crate::Error::AllCandidatesFailed`] when no candidate
/// trains, or a required noise model or residual process cannot be fitted.
pub fn train_committee(
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
    let mut refitted = Refitted::run(
        params,
        x,
        t,
        &models,
        choice.varying,
        gross.as_ref(),
        target,
        obs,
    )?;
    // 7b. [partitions > 1] further partitions' committees pooled in (pool.rs)
    let mut pooled = Vec::new();
    for p in 1..params.partitions {
        let further = further_partition(
            params,
            p,
            x,
            t,
            target_width,
            source,
            choice.varying,
            gross.as_ref(),
            target,
            obs,
        )?;
        refitted.absorb(further.refitted);
        pooled.push(further.record);
    }
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
        pooled,
    };
    Ok(assemble(parts, target, obs))
}
