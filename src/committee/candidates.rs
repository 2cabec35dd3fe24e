//! Stage 2 of training: the candidate networks, hidden units × restarts,
//! fitted on the training part and scored on the held-out part; the range
//! widened while the best candidate sits at its top.

use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::Mutex;

use ndarray::{Array1, ArrayView1};
use rand::{Rng, SeedableRng};
use rand_distr::{Distribution, Normal};
use rand_xoshiro::Xoshiro256PlusPlus;
use rayon::prelude::*;

use super::split::HeldOutSplit;
use super::{Candidate, CheckedCommitteeParams, Member, NoiseModel};
use crate::error::{Error, Result};
use crate::evidence::{fit_network, FitFailure, FittedNetwork, Groups, StartState};
use crate::net::Architecture;
use crate::observer::{TrainEvent, TrainObserver};

/// Initial α of every group (scaled space): weak enough not to constrain
/// weights of order one.
const ALPHA_START: f64 = 0.1;

/// Initial noise variance as a share of the target's variance.
const NOISE_SHARE_START: f64 = 0.1;

/// One candidate as tried: its record, and when it trained its network and
/// held-out (mean, variance) in scaled units.
pub(super) struct Trial {
    pub record: Candidate,
    pub net: Option<FittedNetwork>,
    pub heldout: Option<(Array1<f64>, Array1<f64>)>,
}

/// Every candidate tried, and the hidden-unit range finally searched.
pub(super) struct CandidateSearch {
    /// The trials, ordered by (hidden units, restart).
    pub trials: Vec<Trial>,
    /// Top of the hidden-unit range searched (after any widening).
    pub hidden_max: usize,
    /// Whether the range was widened.
    pub widened: bool,
}

impl CandidateSearch {
    /// Fit every candidate of `params`' hidden-unit range on the training
    /// part, in parallel, largest networks first; while the best held-out
    /// NLPD is at the top of the range (and widening is on), search the
    /// next range up to `hidden_cap`.
    pub fn run(
        params: &CheckedCommitteeParams,
        split: &HeldOutSplit,
        target_name: &str,
        observer: &dyn TrainObserver,
    ) -> Self {
        let linear_only = params.hidden_max == 0;
        let restarts = if linear_only { 1 } else { params.restarts };
        let mut trials: Vec<Trial> = Vec::new();
        let mut lo = params.hidden_min;
        let mut hi = params.hidden_max;
        let mut widened = false;
        let done = AtomicUsize::new(0);
        let best = Mutex::new(None::<f64>);
        let mut planned = (hi - lo + 1) * restarts;
        observer.observe(&TrainEvent::SearchStarted {
            target: target_name,
            n_candidates: planned,
        });
        loop {
            // largest networks first, so that no long fit starts last on an
            // otherwise idle machine
            let specs: Vec<(usize, usize)> = (lo..=hi)
                .rev()
                .flat_map(|h| (0..if h == 0 { 1 } else { restarts }).map(move |r| (h, r)))
                .collect();
            let new: Vec<Trial> = specs
                .par_iter()
                .map(|&(h, r)| {
                    let trial = try_candidate(params, split, h, r);
                    let k = done.fetch_add(1, Ordering::SeqCst) + 1;
                    let best_now = {
                        let mut b = best.lock().unwrap_or_else(|p| p.into_inner());
                        if let Some(v) = trial.record.heldout_nlpd {
                            *b = Some(b.map_or(v, |old: f64| old.min(v)));
                        }
                        *b
                    };
                    observer.observe(&TrainEvent::CandidateDone {
                        target: target_name,
                        done: k,
                        total: planned,
                        best_nlpd: best_now,
                    });
                    trial
                })
                .collect();
            trials.extend(new);
            trials.sort_by_key(|t| (t.record.n_hidden, t.record.restart));
            let top = trials
                .iter()
                .filter_map(|t| t.record.heldout_nlpd.map(|v| (v, t.record.n_hidden)))
                .min_by(|a, b| a.0.total_cmp(&b.0));
            match top {
                Some((_, h_best))
                    if params.widen && h_best == hi && hi > 0 && hi < params.hidden_cap =>
                {
                    lo = hi + 1;
                    hi = (hi + (hi / 2).max(2)).min(params.hidden_cap);
                    widened = true;
                    planned += (hi - lo + 1) * restarts;
                    observer.observe(&TrainEvent::RangeWidened {
                        target: target_name,
                        max_hidden: hi,
                        n_candidates: planned,
                    });
                }
                _ => break,
            }
        }
        CandidateSearch {
            trials,
            hidden_max: hi,
            widened,
        }
    }

    /// The candidates that trained, best held-out NLPD first (ties by
    /// hidden units, then restart).
    ///
    /// # Errors
    /// [`Error::AllCandidatesFailed`] with every distinct reason when none
    /// trained.
    pub fn ranked(&self) -> Result<Vec<&Trial>> {
        let mut ranked: Vec<&Trial> = self.trials.iter().filter(|t| t.net.is_some()).collect();
        if ranked.is_empty() {
            let mut reasons: Vec<String> = self
                .trials
                .iter()
                .filter_map(|t| t.record.failure.as_ref().map(|f| f.to_string()))
                .collect();
            reasons.sort();
            reasons.dedup();
            return Err(Error::AllCandidatesFailed {
                reasons: reasons.join("; "),
            });
        }
        ranked.sort_by(|a, b| {
            let (va, vb) = (
                a.record.heldout_nlpd.unwrap_or(f64::INFINITY),
                b.record.heldout_nlpd.unwrap_or(f64::INFINITY),
            );
            va.total_cmp(&vb)
                .then(a.record.n_hidden.cmp(&b.record.n_hidden))
                .then(a.record.restart.cmp(&b.record.restart))
        });
        Ok(ranked)
    }

    /// The records of every candidate tried, for the committee file.
    pub fn into_records(self) -> Vec<Candidate> {
        self.trials.into_iter().map(|t| t.record).collect()
    }
}

/// Fit the candidate with `h` hidden units and restart `r` on the training
/// part and score it on the held-out part.
fn try_candidate(
    params: &CheckedCommitteeParams,
    split: &HeldOutSplit,
    h: usize,
    r: usize,
) -> Trial {
    let arch = Architecture::new(split.n_inputs(), h);
    let seed = candidate_seed(params.seed, h, r);
    let start = initial_state(&arch, params.ard, seed, split.t_tr.view());
    match fit_network(
        arch,
        params.ard,
        split.x_tr.view(),
        split.t_tr.view(),
        start,
        &params.fit,
    ) {
        Ok(net) => {
            let (mean, var) = net.predict(split.x_ho.view());
            let nlpd = split.nlpd(&mean, &var);
            if nlpd.is_finite() {
                Trial {
                    record: Candidate {
                        n_hidden: h,
                        restart: r,
                        seed,
                        heldout_nlpd: Some(nlpd),
                        log_evidence: Some(net.log_evidence),
                        gamma: Some(net.gamma.iter().sum()),
                        failure: None,
                    },
                    net: Some(net),
                    heldout: Some((mean, var)),
                }
            } else {
                failed(
                    h,
                    r,
                    seed,
                    FitFailure::Diverged("non-finite held-out NLPD".into()),
                )
            }
        }
        Err(f) => failed(h, r, seed, f),
    }
}

/// Seed of one candidate, derived from the master seed so that every
/// candidate's stream is fixed whatever the thread count.
fn candidate_seed(master: u64, n_hidden: usize, restart: usize) -> u64 {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(master);
    let salt: u64 = rng.random();
    salt ^ ((n_hidden as u64) << 32 | restart as u64).wrapping_mul(0x9E37_79B9_7F4A_7C15)
}

/// Random initial weights: input weights ~ N(0, 12/d) so that a hidden
/// unit's net input has sd ≈ 1 on inputs spread over [−0.5, 0.5]; hidden
/// biases ~ N(0, 0.5²); output weights ~ N(0, 0.25/H); output bias = target
/// mean.
fn initial_state(arch: &Architecture, ard: bool, seed: u64, t: ArrayView1<f64>) -> StartState {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    let groups = Groups::new(arch, ard);
    let lay = arch.layout();
    let d = arch.n_inputs as f64;
    let h = arch.n_hidden.max(1) as f64;
    let n_in = Normal::new(0.0, (12.0 / d).sqrt()).expect("positive sd");
    let n_hb = Normal::new(0.0, 0.5).expect("positive sd");
    let n_out = Normal::new(0.0, (0.25 / h).sqrt()).expect("positive sd");
    let mut w: Vec<f64> = (0..arch.n_params())
        .map(|k| {
            if k < lay.hidden_bias {
                n_in.sample(&mut rng)
            } else if k < lay.output_weights {
                n_hb.sample(&mut rng)
            } else {
                n_out.sample(&mut rng)
            }
        })
        .collect();
    if arch.is_linear() {
        for v in w.iter_mut().take(arch.n_inputs) {
            *v = 0.0;
        }
    }
    let mean = t.mean().unwrap_or(0.0);
    w[lay.output_bias] = mean;
    let var = t.var(0.0).max(1e-6);
    StartState {
        weights: w,
        alpha: vec![ALPHA_START; groups.len()],
        beta: 1.0 / (NOISE_SHARE_START * var),
    }
}

fn failed(h: usize, r: usize, seed: u64, f: FitFailure) -> Trial {
    Trial {
        record: Candidate {
            n_hidden: h,
            restart: r,
            seed,
            heldout_nlpd: None,
            log_evidence: None,
            gamma: None,
            failure: Some(f),
        },
        net: None,
        heldout: None,
    }
}

/// A committee member from a candidate's record and a fitted network, with
/// its noise model when the noise varies.
pub(super) fn member_from(
    rec: &Candidate,
    net: &FittedNetwork,
    noise: Option<NoiseModel>,
) -> Member {
    Member {
        n_hidden: rec.n_hidden,
        restart: rec.restart,
        seed: rec.seed,
        groups: net.group_kinds.clone(),
        alpha: net.alpha.clone(),
        gamma: net.gamma.clone(),
        beta: net.beta,
        log_evidence: net.log_evidence,
        heldout_nlpd: rec.heldout_nlpd.unwrap_or(f64::NAN),
        hessian: net.hessian,
        weights: net.weights.clone(),
        posterior_cov: net.posterior_cov.clone(),
        diagnostics: net.diagnostics.clone(),
        noise,
    }
}

impl Trial {
    /// The trial as a constant-noise member (a trained trial only).
    pub fn member(&self) -> Member {
        member_from(&self.record, self.network(), None)
    }

    /// The trained network (ranked trials always have one).
    pub fn network(&self) -> &FittedNetwork {
        self.net.as_ref().expect("ranked trials have networks")
    }
}

#[cfg(test)]
mod tests {
    use super::super::stage_fixture::{params, small_data, Silent};
    use super::*;

    /// Seeds differ across hidden units and restarts, and depend only on
    /// the master seed (the rule that results do not depend on the thread
    /// count; common practice, no source).
    #[test]
    fn candidate_seeds_are_distinct_and_fixed_by_the_master_seed() {
        let mut seeds: Vec<u64> = (0..4)
            .flat_map(|h| (0..3).map(move |r| candidate_seed(9, h, r)))
            .collect();
        assert_eq!(candidate_seed(9, 2, 1), candidate_seed(9, 2, 1));
        seeds.sort_unstable();
        seeds.dedup();
        assert_eq!(seeds.len(), 12);
        assert_ne!(candidate_seed(9, 1, 0), candidate_seed(10, 1, 0));
    }

    /// The initial output bias is the target mean, and the input weights
    /// of the linear model start at zero.
    #[test]
    fn initial_state_starts_at_the_target_mean() {
        let t = Array1::from(vec![1.0, 2.0, 3.0, 6.0]);
        let arch = Architecture::new(2, 0);
        let s = initial_state(&arch, true, 3, t.view());
        assert!((s.weights[arch.layout().output_bias] - 3.0).abs() < 1e-15);
        assert!(s
            .weights
            .iter()
            .take(2)
            .all(|w| w.abs() < f64::MIN_POSITIVE));
    }

    /// Every (hidden, restart) of the range is tried once, in (hidden,
    /// restart) order, and the ranking puts the least held-out NLPD first.
    #[test]
    fn every_candidate_is_tried_and_ranked_by_heldout_nlpd() {
        let (x, t) = small_data(40);
        let p = params();
        let split = HeldOutSplit::new(&p, x.view(), t.view(), 1.0, "small").expect("split");
        let search = CandidateSearch::run(&p, &split, "y", &Silent);
        let tried: Vec<(usize, usize)> = search
            .trials
            .iter()
            .map(|t| (t.record.n_hidden, t.record.restart))
            .collect();
        assert_eq!(tried, vec![(1, 0), (1, 1), (2, 0), (2, 1)]);
        let ranked = search.ranked().expect("some trained");
        let nlpd: Vec<f64> = ranked
            .iter()
            .map(|t| t.record.heldout_nlpd.expect("trained"))
            .collect();
        assert!(nlpd.windows(2).all(|w| w[0] <= w[1]), "{nlpd:?}");
        // the score kept is the held-out NLPD of the kept predictions
        let (m, v) = ranked[0].heldout.clone().expect("trained");
        assert!((split.nlpd(&m, &v) - nlpd[0]).abs() < 1e-12);
    }

    /// No trained candidate: every distinct reason is reported once.
    #[test]
    fn no_trained_candidate_is_an_error_with_the_reasons() {
        let search = CandidateSearch {
            trials: vec![
                failed(1, 0, 1, FitFailure::Diverged("a".into())),
                failed(1, 1, 2, FitFailure::Diverged("a".into())),
            ],
            hidden_max: 1,
            widened: false,
        };
        match search.ranked() {
            Err(Error::AllCandidatesFailed { reasons }) => {
                assert_eq!(reasons, "diverged: a");
            }
            _ => panic!("expected AllCandidatesFailed"),
        }
    }
}
