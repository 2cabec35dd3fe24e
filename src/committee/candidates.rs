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
use super::{Candidate, CheckedCommitteeParams, Member, NoiseModel, StoppedEarly};
use crate::error::{Error, Result};
use crate::evidence::{
    fit_network_from, FitFailure, FitProgress, FittedNetwork, Groups, PausedFit, StartState,
};
use crate::net::Architecture;
use crate::observer::{TrainEvent, TrainObserver};
use crate::prec::{SEARCH_KEEP_MIN, SEARCH_RUNGS};

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
            let on_done = |trial: &Trial| {
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
            };
            let new = run_batch(params, split, &specs, &on_done);
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

/// A candidate between two rungs of the search: still running (stopped
/// after a rung's cycles, with its held-out NLPD there), or finished.
enum Running {
    Paused {
        h: usize,
        r: usize,
        seed: u64,
        state: Box<PausedFit>,
        nlpd: f64,
    },
    Finished(Box<Trial>),
}

/// Fit the candidates `specs` (hidden units, restart) of one batch, in
/// parallel: with early stopping (`params.early_stop`), by successive
/// halving over [`SEARCH_RUNGS`] — each rung scores the candidates still
/// running on the held-out part and continues only the best share of the
/// batch (at least [`SEARCH_KEEP_MIN`]); a continued candidate ends exactly
/// as it would have without the stop. `on_done` is called once per
/// candidate when it is finished or stopped.
fn run_batch(
    params: &CheckedCommitteeParams,
    split: &HeldOutSplit,
    specs: &[(usize, usize)],
    on_done: &(dyn Fn(&Trial) + Sync),
) -> Vec<Trial> {
    let rungs: &[(usize, f64)] = if params.early_stop && specs.len() > SEARCH_KEEP_MIN {
        &SEARCH_RUNGS
    } else {
        &[]
    };
    let report = |run: Running| {
        if let Running::Finished(t) = &run {
            on_done(t);
        }
        run
    };
    let first = rungs.first().map(|r| r.0);
    let mut running: Vec<Running> = specs
        .par_iter()
        .map(|&(h, r)| report(start_candidate(params, split, h, r, first)))
        .collect();
    let mut finished: Vec<Trial> = Vec::new();
    for (i, &(cycles, share)) in rungs.iter().enumerate() {
        let keep = ((specs.len() as f64 * share).ceil() as usize).max(SEARCH_KEEP_MIN);
        let mut paused = Vec::new();
        for run in running.drain(..) {
            match run {
                Running::Finished(t) => finished.push(*t),
                p @ Running::Paused { .. } => paused.push(p),
            }
        }
        paused.sort_by(|a, b| {
            rung_key(a)
                .partial_cmp(&rung_key(b))
                .unwrap_or(std::cmp::Ordering::Equal)
        });
        let stopped = paused.split_off(keep.min(paused.len()));
        for run in stopped {
            if let Running::Paused {
                h, r, seed, nlpd, ..
            } = run
            {
                let t = stopped_trial(h, r, seed, cycles, nlpd);
                on_done(&t);
                finished.push(t);
            }
        }
        let next = rungs.get(i + 1).map(|r| r.0);
        running = paused
            .into_par_iter()
            .map(|run| match run {
                Running::Paused {
                    h, r, seed, state, ..
                } => report(continue_candidate(params, split, h, r, seed, *state, next)),
                done => done,
            })
            .collect();
    }
    finished.extend(running.into_iter().filter_map(|run| match run {
        Running::Finished(t) => Some(*t),
        Running::Paused { .. } => None, // not reached: the last rung continues to the end
    }));
    finished
}

/// Order of the candidates at a rung: held-out NLPD (non-finite last),
/// then hidden units, then restart.
fn rung_key(run: &Running) -> (f64, usize, usize) {
    match run {
        Running::Paused { h, r, nlpd, .. } => (
            if nlpd.is_finite() {
                *nlpd
            } else {
                f64::INFINITY
            },
            *h,
            *r,
        ),
        Running::Finished(t) => (f64::INFINITY, t.record.n_hidden, t.record.restart),
    }
}

/// Start the candidate with `h` hidden units and restart `r` on the
/// training part, stopping after `pause_after` cycles when given.
fn start_candidate(
    params: &CheckedCommitteeParams,
    split: &HeldOutSplit,
    h: usize,
    r: usize,
    pause_after: Option<usize>,
) -> Running {
    let arch = Architecture::new(split.n_inputs(), h);
    let seed = candidate_seed(params.seed, h, r);
    let start = initial_state(&arch, params.ard, seed, split.t_tr.view());
    let state = PausedFit::start(start);
    continue_candidate(params, split, h, r, seed, state, pause_after)
}

/// Continue a candidate from `state`, to the next rung or to the end.
fn continue_candidate(
    params: &CheckedCommitteeParams,
    split: &HeldOutSplit,
    h: usize,
    r: usize,
    seed: u64,
    state: PausedFit,
    pause_after: Option<usize>,
) -> Running {
    let arch = Architecture::new(split.n_inputs(), h);
    let (x, t) = (split.x_tr.view(), split.t_tr.view());
    let progress = fit_network_from(arch, params.ard, x, t, state, &params.fit, pause_after);
    running(split, h, r, seed, progress)
}

/// A fit's progress as a running or finished candidate.
fn running(
    split: &HeldOutSplit,
    h: usize,
    r: usize,
    seed: u64,
    progress: std::result::Result<FitProgress, FitFailure>,
) -> Running {
    match progress {
        Ok(FitProgress::Paused { snapshot, state }) => {
            let (mean, var) = snapshot.predict(split.x_ho.view());
            Running::Paused {
                h,
                r,
                seed,
                state: Box::new(state),
                nlpd: split.nlpd(&mean, &var),
            }
        }
        Ok(FitProgress::Done(net)) => {
            Running::Finished(Box::new(scored(split, h, r, seed, Ok(net))))
        }
        Err(f) => Running::Finished(Box::new(failed(h, r, seed, f))),
    }
}

/// A finished fit scored on the held-out part.
fn scored(
    split: &HeldOutSplit,
    h: usize,
    r: usize,
    seed: u64,
    fit: std::result::Result<FittedNetwork, FitFailure>,
) -> Trial {
    match fit {
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
                        stopped: None,
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
            stopped: None,
        },
        net: None,
        heldout: None,
    }
}

/// A candidate stopped at a rung of the search after `cycles` cycles, with
/// its held-out NLPD there.
fn stopped_trial(h: usize, r: usize, seed: u64, cycles: usize, nlpd: f64) -> Trial {
    Trial {
        record: Candidate {
            n_hidden: h,
            restart: r,
            seed,
            heldout_nlpd: None,
            log_evidence: None,
            gamma: None,
            failure: None,
            stopped: Some(StoppedEarly {
                cycles,
                heldout_nlpd: nlpd,
            }),
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

    /// With early stopping over more candidates than SEARCH_KEEP_MIN, the
    /// worst at the first rung are recorded as stopped (no network, their
    /// rung NLPD kept) and left out of the ranking; the ones continued are
    /// the very networks a search without stopping trains.
    #[test]
    fn early_stopping_keeps_the_best_and_records_the_rest() {
        let (x, t) = small_data(60);
        let base = || {
            super::super::CommitteeParams::default()
                .hidden(1, 4)
                .restarts(3)
                .widen(false)
                .seed(3)
                .fit(crate::evidence::FitSettings {
                    max_cycles: 5,
                    first_iters: 60,
                    cycle_iters: 30,
                    ..crate::evidence::FitSettings::default()
                })
        };
        let p = base().early_stop(true).check().expect("valid");
        let full = base().early_stop(false).check().expect("valid");
        let split = HeldOutSplit::new(&p, x.view(), t.view(), 1.0, "small").expect("split");
        let stopped_search = CandidateSearch::run(&p, &split, "y", &Silent);
        let full_search = CandidateSearch::run(&full, &split, "y", &Silent);
        assert_eq!(stopped_search.trials.len(), 12);
        let n_specs = 12.0_f64;
        let keep = ((n_specs * SEARCH_RUNGS[0].1).ceil() as usize).max(SEARCH_KEEP_MIN);
        let stopped: Vec<&Trial> = stopped_search
            .trials
            .iter()
            .filter(|t| t.record.stopped.is_some())
            .collect();
        let trained = stopped_search
            .trials
            .iter()
            .filter(|t| t.net.is_some())
            .count();
        assert!(trained <= keep, "{trained} trained, {keep} kept");
        assert!(!stopped.is_empty());
        for t in &stopped {
            let s = t.record.stopped.as_ref().expect("stopped");
            assert_eq!(s.cycles, SEARCH_RUNGS[0].0);
            assert!(s.heldout_nlpd.is_finite());
            assert!(t.net.is_none() && t.record.heldout_nlpd.is_none());
        }
        let ranked = stopped_search.ranked().expect("some trained");
        assert!(ranked.iter().all(|t| t.record.stopped.is_none()));
        for t in ranked {
            let twin = full_search
                .trials
                .iter()
                .find(|f| {
                    (f.record.n_hidden, f.record.restart) == (t.record.n_hidden, t.record.restart)
                })
                .expect("same candidate");
            assert_eq!(t.record, twin.record);
            assert_eq!(t.network().weights, twin.network().weights);
        }
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
