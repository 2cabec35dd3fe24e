//! Stage 4 of training (when the noise is not held constant): the best
//! candidates refitted with noise that varies with the inputs, and the
//! varying-noise committee chosen by size on the held-out part.

use ndarray::Array1;
use rayon::prelude::*;

use super::by_size::ConstantCommittee;
use super::candidates::{member_from, Trial};
use super::noise::{fit_varying, VaryingFit};
use super::split::{best_size, HeldOutSplit};
use super::{combine, CheckedCommitteeParams, Member};
use crate::evidence::FitFailure;
use crate::observer::{TrainEvent, TrainObserver};

/// Candidates given a varying-noise fit: at least this many of the best,
/// or as many as the constant-noise committee has members.
const VARYING_POOL_MIN: usize = 4;

/// Mixed into a candidate's seed for its noise network's first weights.
pub(super) const NOISE_SEED_SALT: u64 = 0x0A15_E5EE_D000_0001;

/// A candidate refitted with varying noise, scored on the held-out part.
pub(super) struct VaryingCandidate<'t> {
    pub trial: &'t Trial,
    pub fit: VaryingFit,
    /// Held-out NLPD (target units).
    pub nlpd: f64,
    /// Held-out predictive mean and variance (scaled units).
    pub heldout: (Array1<f64>, Array1<f64>),
}

/// A varying-noise fit with its held-out NLPD and held-out (mean,
/// variance) in scaled units, or why it failed.
type VaryingOutcome =
    std::result::Result<(VaryingFit, f64, (Array1<f64>, Array1<f64>)), FitFailure>;

/// The varying-noise candidates, best first, and the committee chosen from
/// them.
pub(super) struct VaryingCommittee<'t> {
    /// The candidates whose varying-noise fit succeeded, best held-out NLPD
    /// first (ties by hidden units, then restart).
    pub members: Vec<VaryingCandidate<'t>>,
    /// Held-out NLPD of the committee of the best 1, 2, … of them.
    pub nlpd_by_size: Vec<f64>,
    /// Chosen size (1 when none succeeded).
    pub n_members: usize,
    /// Candidates whose varying-noise fit failed, with the reason.
    pub failures: Vec<String>,
}

impl<'t> VaryingCommittee<'t> {
    /// Refit the best max(`VARYING_POOL_MIN`, constant committee's size)
    /// ranked candidates (at most its `max_size`) with varying noise on the
    /// training part, in parallel, and choose the size on the held-out part.
    pub fn fit(
        params: &CheckedCommitteeParams,
        split: &HeldOutSplit,
        constant: &ConstantCommittee<'t>,
        target_name: &str,
        observer: &dyn TrainObserver,
    ) -> Self {
        let pool = constant
            .max_size()
            .min(constant.n_members.max(VARYING_POOL_MIN));
        observer.observe(&TrainEvent::NoiseModels {
            target: target_name,
            n_candidates: pool,
        });
        let ranked = &constant.ranked;
        let fits: Vec<(usize, VaryingOutcome)> = ranked[..pool]
            .par_iter()
            .enumerate()
            .map(|(i, trial)| (i, fit_candidate(params, split, trial)))
            .collect();
        let mut members = Vec::new();
        let mut failures = Vec::new();
        for (i, fit) in fits {
            match fit {
                Ok((fit, nlpd, heldout)) => members.push(VaryingCandidate {
                    trial: ranked[i],
                    fit,
                    nlpd,
                    heldout,
                }),
                Err(f) => failures.push(format!(
                    "{} hidden, restart {}: {f}",
                    ranked[i].record.n_hidden, ranked[i].record.restart
                )),
            }
        }
        members.sort_by(|a, b| {
            a.nlpd
                .total_cmp(&b.nlpd)
                .then(a.trial.record.n_hidden.cmp(&b.trial.record.n_hidden))
                .then(a.trial.record.restart.cmp(&b.trial.record.restart))
        });
        // the held-out predictions made when each was scored
        let (means, vars): (Vec<_>, Vec<_>) = members.iter().map(|c| c.heldout.clone()).unzip();
        let nlpd_by_size = split.nlpd_by_size(&means, &vars);
        let n_members = best_size(&nlpd_by_size);
        VaryingCommittee {
            members,
            nlpd_by_size,
            n_members,
            failures,
        }
    }

    /// Held-out NLPD of the best varying-noise committee; None when no
    /// candidate could be fitted with varying noise.
    pub fn nlpd(&self) -> Option<f64> {
        self.nlpd_by_size.iter().copied().min_by(f64::total_cmp)
    }

    /// The chosen candidates.
    pub fn chosen(&self) -> &[VaryingCandidate<'t>] {
        &self.members[..self.n_members]
    }

    /// Held-out NLPD and held-out mean and variance (scaled units) of the
    /// chosen committee.
    pub fn heldout(&self) -> (f64, (Array1<f64>, Array1<f64>)) {
        let (means, vars): (Vec<_>, Vec<_>) =
            self.chosen().iter().map(|c| c.heldout.clone()).unzip();
        (
            self.nlpd_by_size[self.n_members - 1],
            combine(&means, &vars),
        )
    }

    /// The chosen candidates as members fitted on the training part.
    pub fn provisional_members(&self) -> Vec<Member> {
        self.chosen()
            .iter()
            .map(|c| provisional_member(c.trial, &c.fit))
            .collect()
    }
}

/// Fit varying noise to one ranked candidate on the training part and
/// score it on the held-out part.
fn fit_candidate(
    params: &CheckedCommitteeParams,
    split: &HeldOutSplit,
    trial: &Trial,
) -> VaryingOutcome {
    let seed = trial.record.seed ^ NOISE_SEED_SALT;
    fit_varying(
        trial.network(),
        None,
        None,
        params.reweight_mean,
        params.ard,
        split.x_tr.view(),
        split.t_tr.view(),
        seed,
        &params.fit,
        &params.fit,
    )
    .and_then(|vf| {
        let member = provisional_member(trial, &vf);
        let (m, v, _) = member.predictive(split.n_inputs(), split.x_ho.view());
        let nlpd = split.nlpd(&m, &v);
        if nlpd.is_finite() {
            Ok((vf, nlpd, (m, v)))
        } else {
            Err(FitFailure::Diverged("non-finite held-out NLPD".into()))
        }
    })
}

/// A member from a varying-noise fit (its held-out NLPD still that of the
/// constant-noise candidate until the caller sets it).
pub(super) fn provisional_member(trial: &Trial, vf: &VaryingFit) -> Member {
    member_from(&trial.record, &vf.mean, Some(vf.noise.clone()))
}

#[cfg(test)]
mod tests {
    use super::super::candidates::CandidateSearch;
    use super::super::stage_fixture::{params, small_data, Silent};
    use super::*;

    /// The pool is the best max(4, committee size) ranked candidates; those
    /// fitted are sorted by held-out NLPD, each carries a noise model, and
    /// the chosen size minimises the held-out NLPD.
    #[test]
    fn varying_candidates_are_scored_and_the_size_chosen() {
        let (x, t) = small_data(40);
        let p = params();
        let split = HeldOutSplit::new(&p, x.view(), t.view(), 1.0, "small").expect("split");
        let search = CandidateSearch::run(&p, &split, "y", &Silent);
        let constant = ConstantCommittee::choose(search.ranked().expect("trained"), 3, &split);
        let v = VaryingCommittee::fit(&p, &split, &constant, "y", &Silent);
        let pool = constant
            .max_size()
            .min(constant.n_members.max(VARYING_POOL_MIN));
        assert_eq!(v.members.len() + v.failures.len(), pool);
        assert!(v.members.windows(2).all(|w| w[0].nlpd <= w[1].nlpd));
        if let Some(best) = v.nlpd() {
            let (nlpd, (m, var)) = v.heldout();
            assert!((best - nlpd).abs() < 1e-12);
            assert!((split.nlpd(&m, &var) - nlpd).abs() < 1e-12);
            assert!(v.provisional_members().iter().all(|m| m.noise.is_some()));
        }
    }
}
