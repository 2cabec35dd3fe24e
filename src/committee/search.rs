//! The candidate search, committee choice and refit.

use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::Mutex;

use ndarray::{Array1, ArrayView1, ArrayView2, Axis};
use rand::seq::SliceRandom;
use rand::{Rng, SeedableRng};
use rand_distr::{Distribution, Normal};
use rand_xoshiro::Xoshiro256PlusPlus;
use rayon::prelude::*;

use super::gross_errors::GrossErrorModel;
use super::kriging::{process_rows, ResidualKriging};
use super::noise::{fit_varying, VaryingFit};
use super::{
    combine, members_predict, Candidate, CheckedCommitteeParams, Committee, KrigingMode,
    KrigingSelection, Member, NoiseMode, NoiseModel, NoiseSelection, Selection,
};
use crate::error::{Error, Result};
use crate::evidence::{fit_network, FitFailure, FittedNetwork, Groups, StartState};
use crate::net::Architecture;
use crate::observer::{TrainEvent, TrainObserver};
use crate::prec::VAR_FLOOR;

/// Initial α of every group (scaled space): weak enough not to constrain
/// weights of order one.
const ALPHA_START: f64 = 0.1;

/// Initial noise variance as a share of the target's variance.
const NOISE_SHARE_START: f64 = 0.1;

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

/// Mean Gaussian NLPD in scaled units.
fn nlpd_scaled(mean: &Array1<f64>, var: &Array1<f64>, t: ArrayView1<f64>) -> f64 {
    let n = t.len() as f64;
    mean.iter()
        .zip(var)
        .zip(t)
        .map(|((m, v), y)| {
            let v = v.max(VAR_FLOOR);
            0.5 * (2.0 * std::f64::consts::PI * v).ln() + (y - m).powi(2) / (2.0 * v)
        })
        .sum::<f64>()
        / n
}

struct Trial {
    record: Candidate,
    net: Option<FittedNetwork>,
    heldout: Option<(Array1<f64>, Array1<f64>)>,
}

/// Train a committee for one target on scaled data.
///
/// `x` (N × d) and `t` (N) are scaled; `target_width` is the target's
/// scaling width, so that `ln(target_width)` turns a scaled NLPD into
/// target units.
///
/// # Errors
/// [`Error::NotEnoughRows`] when the held-out split leaves too little on
/// either side; [`Error::AllCandidatesFailed`] when no candidate trains.
pub fn train_committee(
    params: &CheckedCommitteeParams,
    x: ArrayView2<f64>,
    t: ArrayView1<f64>,
    target_width: f64,
    target_name: &str,
    source: &str,
    observer: &dyn TrainObserver,
) -> Result<Committee> {
    let n = x.nrows();
    let d = x.ncols();
    let n_heldout = ((n as f64) * params.holdout_fraction).round() as usize;
    let needed = (2 * d + 10).max(20);
    if n < needed || n_heldout < 5 {
        return Err(Error::NotEnoughRows {
            path: source.to_string(),
            n_rows: n,
            n_inputs: d,
            needed,
        });
    }
    let mut order: Vec<usize> = (0..n).collect();
    order.shuffle(&mut Xoshiro256PlusPlus::seed_from_u64(
        params.seed ^ 0x005E_ED0F_5B11,
    ));
    let (held, train) = order.split_at(n_heldout);
    let mut train = train.to_vec();
    train.sort_unstable();
    let mut held = held.to_vec();
    held.sort_unstable();
    let x_tr = x.select(Axis(0), &train);
    let t_tr = t.select(Axis(0), &train);
    let x_ho = x.select(Axis(0), &held);
    let t_ho = t.select(Axis(0), &held);
    let ln_width = target_width.ln();

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
                let arch = Architecture::new(d, h);
                let seed = candidate_seed(params.seed, h, r);
                let start = initial_state(&arch, params.ard, seed, t_tr.view());
                let outcome = fit_network(
                    arch,
                    params.ard,
                    x_tr.view(),
                    t_tr.view(),
                    start,
                    &params.fit,
                );
                let trial = match outcome {
                    Ok(net) => {
                        let (mean, var) = net.predict(x_ho.view());
                        let nlpd = nlpd_scaled(&mean, &var, t_ho.view()) + ln_width;
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
                };
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

    // rank the candidates that trained
    let mut ranked: Vec<&Trial> = trials.iter().filter(|t| t.net.is_some()).collect();
    if ranked.is_empty() {
        let mut reasons: Vec<String> = trials
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
    let max_size = ranked.len().min(params.max_members);
    // every ranked trial trained, so each has held-out predictions
    let (means, vars): (Vec<Array1<f64>>, Vec<Array1<f64>>) = ranked[..max_size]
        .iter()
        .filter_map(|t| t.heldout.clone())
        .unzip();
    let mut nlpd_by_size = Vec::with_capacity(max_size);
    for size in 1..=max_size {
        let (m, v) = combine(&means[..size], &vars[..size]);
        nlpd_by_size.push(nlpd_scaled(&m, &v, t_ho.view()) + ln_width);
    }
    let n_members = nlpd_by_size
        .iter()
        .enumerate()
        .min_by(|a, b| a.1.total_cmp(b.1))
        .map_or(1, |(i, _)| i + 1);

    let constant_nlpd = nlpd_by_size[n_members - 1];

    // the same candidates with noise that varies with the inputs
    let mut noise_sel = NoiseSelection {
        requested: params.noise,
        varying: false,
        constant_nlpd: Some(constant_nlpd),
        varying_nlpd: None,
        varying_failures: Vec::new(),
    };
    let mut varying_members: Vec<VaryingCandidate> = Vec::new();
    let mut varying_sizes: Vec<f64> = Vec::new();
    if params.noise != NoiseMode::Constant {
        let pool = max_size.min(n_members.max(VARYING_POOL_MIN));
        observer.observe(&TrainEvent::NoiseModels {
            target: target_name,
            n_candidates: pool,
        });
        let fits: Vec<(usize, VaryingOutcome)> = ranked[..pool]
            .par_iter()
            .enumerate()
            .map(|(i, trial)| {
                let net = trial.net.as_ref().expect("ranked trials have networks");
                let seed = trial.record.seed ^ NOISE_SEED_SALT;
                let fit = fit_varying(
                    net,
                    None,
                    None,
                    params.reweight_mean,
                    params.ard,
                    x_tr.view(),
                    t_tr.view(),
                    seed,
                    &params.fit,
                )
                .and_then(|vf| {
                    let member = provisional_member(trial, &vf);
                    let (m, v, _) = member.predictive(d, x_ho.view());
                    let nlpd = nlpd_scaled(&m, &v, t_ho.view()) + ln_width;
                    if nlpd.is_finite() {
                        Ok((vf, nlpd, (m, v)))
                    } else {
                        Err(FitFailure::Diverged("non-finite held-out NLPD".into()))
                    }
                });
                (i, fit)
            })
            .collect();
        for (i, fit) in fits {
            match fit {
                Ok((fit, nlpd, heldout)) => varying_members.push(VaryingCandidate {
                    trial: ranked[i],
                    fit,
                    nlpd,
                    heldout,
                }),
                Err(f) => noise_sel.varying_failures.push(format!(
                    "{} hidden, restart {}: {f}",
                    ranked[i].record.n_hidden, ranked[i].record.restart
                )),
            }
        }
        varying_members.sort_by(|a, b| {
            a.nlpd
                .total_cmp(&b.nlpd)
                .then(a.trial.record.n_hidden.cmp(&b.trial.record.n_hidden))
                .then(a.trial.record.restart.cmp(&b.trial.record.restart))
        });
        // the held-out predictions made when each was scored
        let (means, vars): (Vec<_>, Vec<_>) =
            varying_members.iter().map(|c| c.heldout.clone()).unzip();
        for size in 1..=means.len() {
            let (m, v) = combine(&means[..size], &vars[..size]);
            varying_sizes.push(nlpd_scaled(&m, &v, t_ho.view()) + ln_width);
        }
        noise_sel.varying_nlpd = varying_sizes.iter().copied().min_by(f64::total_cmp);
    }
    let varying_available = noise_sel.varying_nlpd.is_some();
    if params.noise == NoiseMode::Varying && !varying_available {
        return Err(Error::AllCandidatesFailed {
            reasons: format!(
                "no candidate could be fitted with varying noise: {}",
                noise_sel.varying_failures.join("; ")
            ),
        });
    }
    let n_varying = varying_sizes
        .iter()
        .enumerate()
        .min_by(|a, b| a.1.total_cmp(b.1))
        .map_or(1, |(i, _)| i + 1);

    // kriging of the residuals, tried on each noise model still in the
    // running and judged with it on the held-out part: the noise model and
    // the process are chosen together
    // (the linear baseline stays a linear model unless the process is asked for)
    let try_kriging = match params.kriging {
        KrigingMode::Off => false,
        KrigingMode::Auto => !linear_only,
        KrigingMode::On => true,
    };
    let allowed: Vec<bool> = [false, true]
        .into_iter()
        .filter(|&varying| match params.noise {
            NoiseMode::Constant => !varying,
            NoiseMode::Varying => varying,
            NoiseMode::Auto => !varying || varying_available,
        })
        .collect();
    // the training part's rows the processes are fitted on, chosen once
    let kriging_rows = try_kriging.then(|| {
        let rows = process_rows(x_tr.view(), t_tr.view(), params.seed ^ KRIGING_SEED_SALT);
        observer.observe(&TrainEvent::Kriging {
            target: target_name,
            n_rows: rows.len(),
        });
        (x_tr.select(Axis(0), &rows), t_tr.select(Axis(0), &rows))
    });
    // the share of gross errors on the held-out part, their values spread
    // as the target over the training part
    let (bg_mean, bg_sd) = (t_tr.mean().unwrap_or(0.0), t_tr.std(0.0));
    let gross_errors = |(m, v): &(Array1<f64>, Array1<f64>)| {
        (params.gross_errors || params.heavy_tails)
            .then(|| {
                GrossErrorModel::fit(
                    m.view(),
                    v.view(),
                    t_ho.view(),
                    (bg_mean, bg_sd),
                    params.gross_errors,
                    params.heavy_tails,
                    ln_width,
                )
            })
            .flatten()
    };
    // one process per noise model, fitted side by side on the cores
    let options: Vec<NoiseOption> = allowed
        .par_iter()
        .map(|&varying| {
            let (committee_nlpd, committee_heldout) = if varying {
                let (means, vars): (Vec<_>, Vec<_>) = varying_members[..n_varying]
                    .iter()
                    .map(|c| c.heldout.clone())
                    .unzip();
                (varying_sizes[n_varying - 1], combine(&means, &vars))
            } else {
                (
                    constant_nlpd,
                    combine(&means[..n_members], &vars[..n_members]),
                )
            };
            let mut option = NoiseOption {
                varying,
                committee_nlpd,
                committee_gross: gross_errors(&committee_heldout),
                kriging_nlpd: None,
                kriging_gross: None,
                process: None,
                failure: None,
            };
            if let Some((xk, tk)) = &kriging_rows {
                let provisional: Vec<Member> = if varying {
                    varying_members[..n_varying]
                        .iter()
                        .map(|c| provisional_member(c.trial, &c.fit))
                        .collect()
                } else {
                    ranked[..n_members]
                        .iter()
                        .map(|t| member_from(&t.record, t.net.as_ref().expect("trained"), None))
                        .collect()
                };
                match fit_process(&provisional, d, xk.view(), tk.view(), None) {
                    Ok(process) => {
                        let p = members_predict(&provisional, d, x_ho.view());
                        if let Some((gm, gv)) = process.predict(x_ho.view()) {
                            let s = process.noise_factor;
                            let mean = &p.mean + &gm;
                            let var = &p.var + &(&p.noise_var * (s - 1.0)) + &gv;
                            let nlpd = nlpd_scaled(&mean, &var, t_ho.view()) + ln_width;
                            if nlpd.is_finite() {
                                option.kriging_nlpd = Some(nlpd);
                                option.kriging_gross = gross_errors(&(mean, var));
                            }
                        }
                        option.process = Some(process);
                    }
                    Err(f) => option.failure = Some(f.to_string()),
                }
            }
            option
        })
        .collect();
    // (held-out NLPD, varying, kriged) of every allowed combination, each
    // judged as it will predict: with its share of gross errors when asked for
    let judged =
        |nlpd: f64, g: &Option<GrossErrorModel>| g.as_ref().map_or(nlpd, |g| g.heldout_nlpd);
    let mut choices: Vec<(f64, bool, bool)> = Vec::new();
    for o in &options {
        if params.kriging != KrigingMode::On {
            choices.push((
                judged(o.committee_nlpd, &o.committee_gross),
                o.varying,
                false,
            ));
        }
        if let (true, Some(k)) = (params.kriging != KrigingMode::Off, o.kriging_nlpd) {
            choices.push((judged(k, &o.kriging_gross), o.varying, true));
        }
    }
    let Some(&(_, use_varying, use_kriging)) = choices.iter().min_by(|a, b| a.0.total_cmp(&b.0))
    else {
        return Err(Error::AllCandidatesFailed {
            reasons: format!(
                "the residual process could not be fitted: {}",
                options
                    .iter()
                    .filter_map(|o| o.failure.clone())
                    .collect::<Vec<_>>()
                    .join("; ")
            ),
        });
    };
    let chosen = options
        .into_iter()
        .find(|o| o.varying == use_varying)
        .expect("the choice is one of the options");
    noise_sel.varying = use_varying;
    let mut kriging_sel = KrigingSelection {
        requested: params.kriging,
        committee_nlpd: Some(chosen.committee_nlpd),
        kriging_nlpd: chosen.kriging_nlpd,
        failure: chosen.failure,
        ..KrigingSelection::default()
    };
    let trial_process = if use_kriging { chosen.process } else { None };
    let gross = if use_kriging {
        chosen.kriging_gross
    } else {
        chosen.committee_gross
    };
    let (n_members, nlpd_by_size) = if use_varying {
        varying_members.truncate(n_varying);
        (n_varying, varying_sizes)
    } else {
        (n_members, nlpd_by_size)
    };

    // refit the chosen members on all the data, warm-started
    observer.observe(&TrainEvent::Refitting {
        target: target_name,
        n_members,
    });
    // warm-started: the first cycle needs no more iterations than the others
    let refit_settings = crate::evidence::FitSettings {
        first_iters: params.fit.cycle_iters,
        ..params.fit.clone()
    };
    // the gross errors' spread over all the training rows; the members are
    // refitted under the contamination model with the held-out share
    let final_gross = gross.map(|g| GrossErrorModel {
        background_mean: t.mean().unwrap_or(g.background_mean),
        background_sd: t.std(0.0),
        ..g
    });
    // without a share (only the shape asked for) the refit stays Gaussian
    let refit_gross = final_gross.as_ref().filter(|g| g.share > 0.0);
    // (member, Σ(1 − r_n) when refitted with the share, why the refit with
    // the share failed and the Gaussian one was kept instead)
    type Refit = std::result::Result<(Member, Option<f64>, Option<String>), String>;
    let refits: Vec<Refit> = if use_varying {
        varying_members
            .par_iter()
            .map(|c| {
                let rec = &c.trial.record;
                let refit = |gross: Option<&GrossErrorModel>| {
                    fit_varying(
                        &c.fit.mean,
                        Some(&c.fit.noise),
                        gross,
                        params.reweight_mean,
                        params.ard,
                        x.view(),
                        t.view(),
                        rec.seed ^ NOISE_SEED_SALT,
                        &params.fit,
                    )
                };
                let (fit, fallback) = match refit(refit_gross) {
                    Err(f) if refit_gross.is_some() => (refit(None), Some(f.to_string())),
                    other => (other, None),
                };
                fit.map(|refit| {
                    let mut m = provisional_member(c.trial, &refit);
                    m.heldout_nlpd = c.nlpd;
                    (m, refit.gross_rows, fallback)
                })
                .map_err(|f| format!("{} hidden, restart {}: {f}", rec.n_hidden, rec.restart))
            })
            .collect()
    } else {
        ranked[..n_members]
            .par_iter()
            .map(|trial| {
                let net = trial.net.as_ref().expect("ranked trials have networks");
                let start = StartState {
                    weights: net.weights.clone(),
                    alpha: net.alpha.clone(),
                    beta: net.beta,
                };
                let rec = &trial.record;
                fit_network(
                    net.arch,
                    params.ard,
                    x.view(),
                    t.view(),
                    start,
                    &refit_settings,
                )
                .map(|refit| match refit_gross {
                    Some(g) => {
                        match g.refit_constant(refit.clone(), params.ard, x, t, &refit_settings) {
                            Ok((net, rows)) => (net, Some(rows), None),
                            Err(f) => (refit, None, Some(f.to_string())),
                        }
                    }
                    None => (refit, None, None),
                })
                .map(|(refit, rows, fallback)| (member_from(rec, &refit, None), rows, fallback))
                .map_err(|f| format!("{} hidden, restart {}: {f}", rec.n_hidden, rec.restart))
            })
            .collect()
    };
    let mut members = Vec::new();
    let mut refit_failures = Vec::new();
    let mut gross_rows = Vec::new();
    let mut gross_fallbacks = Vec::new();
    for r in refits {
        match r {
            Ok((m, rows, fallback)) => {
                if let Some(why) = fallback {
                    gross_fallbacks.push(format!(
                        "{} hidden, restart {}: {why}",
                        m.n_hidden, m.restart
                    ));
                }
                members.push(m);
                gross_rows.extend(rows);
            }
            Err(e) => refit_failures.push(e),
        }
    }
    if members.is_empty() {
        return Err(Error::AllCandidatesFailed {
            reasons: format!(
                "every refit on all the data failed: {}",
                refit_failures.join("; ")
            ),
        });
    }
    // the process judged on the held-out part, with its hyperparameters,
    // on the final members' residuals over all the rows
    let mut kriging = None;
    if let (true, Some(trial)) = (use_kriging, trial_process.as_ref()) {
        let rows = process_rows(x, t, params.seed ^ KRIGING_SEED_SALT);
        observer.observe(&TrainEvent::Kriging {
            target: target_name,
            n_rows: rows.len(),
        });
        let (xs, ts) = (x.select(Axis(0), &rows), t.select(Axis(0), &rows));
        match fit_process(&members, d, xs.view(), ts.view(), Some(trial)) {
            Ok(process) => {
                kriging_sel.used = true;
                kriging_sel.n_rows = rows.len();
                kriging = Some(process);
            }
            Err(f) => kriging_sel.failure = Some(format!("on all the rows: {f}")),
        }
    }
    if params.kriging == KrigingMode::On && kriging.is_none() {
        return Err(Error::AllCandidatesFailed {
            reasons: format!(
                "the residual process could not be fitted: {}",
                kriging_sel
                    .failure
                    .as_deref()
                    .unwrap_or("no finite held-out NLPD")
            ),
        });
    }
    let heldout_nlpd = match (kriging_sel.used, kriging_sel.kriging_nlpd) {
        (true, Some(v)) => v,
        _ => nlpd_by_size[n_members - 1],
    };
    observer.observe(&TrainEvent::TargetDone {
        target: target_name,
        n_members: members.len(),
        heldout_nlpd,
    });
    Ok(Committee {
        n_inputs: d,
        members,
        candidates: trials.into_iter().map(|t| t.record).collect(),
        selection: Selection {
            n_train_part: train.len(),
            n_heldout: held.len(),
            hidden_searched: (params.hidden_min, hi),
            widened,
            nlpd_by_size,
            n_members,
            refit_failures,
            noise: noise_sel,
            kriging: kriging_sel,
        },
        kriging,
        gross_errors: final_gross.map(|g| GrossErrorModel {
            refit_gross_rows: (!gross_rows.is_empty())
                .then(|| gross_rows.iter().sum::<f64>() / gross_rows.len() as f64),
            refit_fallbacks: gross_fallbacks,
            ..g
        }),
    })
}

/// Mixed into the master seed for the rows a residual process is fitted
/// on, when there are more than [`super::KRIGING_MAX_ROWS`].
const KRIGING_SEED_SALT: u64 = 0x6B72_6967_0000_0001;

/// Fit a residual process to the committee of `members` on scaled rows
/// `xs`, `ts`; with `fitted`, keep its hyperparameters and only take the
/// new residuals.
fn fit_process(
    members: &[Member],
    d: usize,
    xs: ArrayView2<f64>,
    ts: ArrayView1<f64>,
    fitted: Option<&ResidualKriging>,
) -> std::result::Result<ResidualKriging, FitFailure> {
    let p = members_predict(members, d, xs);
    let residual = &ts - &p.mean;
    match fitted {
        None => ResidualKriging::fit(xs.view(), residual.view(), p.noise_var.view()),
        Some(k) => k.with_residuals(xs, residual.view(), p.noise_var.view()),
    }
}

/// One noise model in the running, with the residual process tried on it.
struct NoiseOption {
    /// True for noise that varies with the inputs.
    varying: bool,
    /// Held-out NLPD of its committee alone (target units).
    committee_nlpd: f64,
    /// Share of gross errors beside its committee alone, when asked for.
    committee_gross: Option<GrossErrorModel>,
    /// Held-out NLPD with the process, when it could be fitted.
    kriging_nlpd: Option<f64>,
    /// Share of gross errors beside the committee with its process.
    kriging_gross: Option<GrossErrorModel>,
    /// The process fitted on the training part.
    process: Option<ResidualKriging>,
    /// Why the process could not be fitted.
    failure: Option<String>,
}

/// A varying-noise fit with its held-out NLPD and held-out (mean,
/// variance) in scaled units, or why it failed.
type VaryingOutcome =
    std::result::Result<(VaryingFit, f64, (Array1<f64>, Array1<f64>)), FitFailure>;

/// A candidate refitted with varying noise, scored on the held-out part.
struct VaryingCandidate<'t> {
    trial: &'t Trial,
    fit: VaryingFit,
    /// Held-out NLPD (target units).
    nlpd: f64,
    /// Held-out predictive mean and variance (scaled units).
    heldout: (Array1<f64>, Array1<f64>),
}

/// Candidates given a varying-noise fit: at least this many of the best,
/// or as many as the constant-noise committee has members.
const VARYING_POOL_MIN: usize = 4;

/// Mixed into a candidate's seed for its noise network's first weights.
const NOISE_SEED_SALT: u64 = 0x0A15_E5EE_D000_0001;

fn member_from(rec: &Candidate, net: &FittedNetwork, noise: Option<NoiseModel>) -> Member {
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

/// A member from a varying-noise fit (its held-out NLPD still that of the
/// constant-noise candidate until the caller sets it).
fn provisional_member(trial: &Trial, vf: &VaryingFit) -> Member {
    member_from(&trial.record, &vf.mean, Some(vf.noise.clone()))
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
