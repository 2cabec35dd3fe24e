//! Stage 7 of training: the chosen members refitted on all the rows,
//! warm-started from their weights, α and β — under the contamination model
//! when a share of gross errors was estimated.

use ndarray::{ArrayView1, ArrayView2};
use rayon::prelude::*;

use super::candidates::{member_from, Trial};
use super::gross_errors::GrossErrorModel;
use super::noise::fit_varying;
use super::noise_models::NoiseModels;
use super::varying::{provisional_member, VaryingCandidate, NOISE_SEED_SALT};
use super::{CheckedCommitteeParams, Member};
use crate::error::{Error, Result};
use crate::evidence::{fit_network, FitSettings, GaussNewtonSample, StartState};
use crate::observer::{TrainEvent, TrainObserver};
use crate::prec::{
    GAUSS_NEWTON_SAMPLE_ROWS, LARGE_EARLY_ROUND_CYCLES, LARGE_REFIT_MAX_CYCLES, LARGE_TABLE_ROWS,
};

/// Mixed into the master seed for the rows a large table's Gauss–Newton
/// matrices are formed from.
const GAUSS_NEWTON_SEED_SALT: u64 = 0x0064_A055_0028_0002;

/// The fit settings of the refit on `n_rows` rows: `fit` as given, and on a
/// large table (more than [`LARGE_TABLE_ROWS`]) at most
/// [`LARGE_REFIT_MAX_CYCLES`] cycles with the Gauss–Newton matrix from a
/// seeded sample of [`GAUSS_NEWTON_SAMPLE_ROWS`] rows (issue 28 item 2;
/// the costs in accuracy are in docs/benchmarks.md).
pub(super) fn refit_settings(fit: &FitSettings, n_rows: usize, seed: u64) -> FitSettings {
    if n_rows <= LARGE_TABLE_ROWS {
        return fit.clone();
    }
    FitSettings {
        max_cycles: fit.max_cycles.min(LARGE_REFIT_MAX_CYCLES),
        gauss_newton_sample: Some(GaussNewtonSample {
            rows: GAUSS_NEWTON_SAMPLE_ROWS,
            seed: seed ^ GAUSS_NEWTON_SEED_SALT,
        }),
        ..fit.clone()
    }
}

/// The settings of every EM round but the last in the refit on `n_rows`
/// rows under a share of gross errors (and of every noise round but the
/// last under varying noise): those of the refit itself
/// ([`refit_settings`]), and on a large table at most
/// [`LARGE_EARLY_ROUND_CYCLES`] cycles (issue 28 item 2; the costs in
/// accuracy are in docs/benchmarks.md).
pub(super) fn early_round_settings(refit: &FitSettings, n_rows: usize) -> FitSettings {
    if n_rows <= LARGE_TABLE_ROWS {
        return refit.clone();
    }
    FitSettings {
        max_cycles: refit.max_cycles.min(LARGE_EARLY_ROUND_CYCLES),
        ..refit.clone()
    }
}

/// One member's refit: (member, Σ(1 − r_n) when refitted with the share,
/// why the refit with the share failed and the Gaussian one was kept
/// instead), or why the refit failed.
type Refit = std::result::Result<(Member, Option<f64>, Option<String>), String>;

/// The refitted members and what the refit left to record.
pub(super) struct Refitted {
    /// The members whose refit succeeded.
    pub members: Vec<Member>,
    /// Members whose refit failed (dropped), with the reason.
    pub failures: Vec<String>,
    /// Σ(1 − r_n) of each member refitted with the share of gross errors.
    gross_rows: Vec<f64>,
    /// Members refitted without the share because the refit with it failed.
    gross_fallbacks: Vec<String>,
}

impl Refitted {
    /// Refit the chosen members of the chosen noise model (`varying`) on
    /// all the rows `x`, `t`, in parallel; `gross` is the share of gross
    /// errors over all the rows, when estimated.
    ///
    /// # Errors
    /// [`Error::AllCandidatesFailed`] when every refit failed.
    #[allow(clippy::too_many_arguments)]
    pub fn run(
        params: &CheckedCommitteeParams,
        x: ArrayView2<f64>,
        t: ArrayView1<f64>,
        models: &NoiseModels,
        varying: bool,
        gross: Option<&GrossErrorModel>,
        target_name: &str,
        observer: &dyn TrainObserver,
    ) -> Result<Self> {
        observer.observe(&TrainEvent::Refitting {
            target: target_name,
            n_members: models.by_size(varying).0,
        });
        // without a share (only the shape asked for) the refit stays Gaussian
        let gross = gross.filter(|g| g.share > 0.0);
        let refits: Vec<Refit> = match (varying, &models.varying) {
            (true, Some(v)) => v
                .chosen()
                .par_iter()
                .map(|c| refit_varying(params, x, t, c, gross))
                .collect(),
            _ => models
                .constant
                .chosen()
                .par_iter()
                .map(|trial| refit_constant(params, x, t, trial, gross))
                .collect(),
        };
        let mut out = Refitted {
            members: Vec::new(),
            failures: Vec::new(),
            gross_rows: Vec::new(),
            gross_fallbacks: Vec::new(),
        };
        for r in refits {
            match r {
                Ok((m, rows, fallback)) => {
                    if let Some(why) = fallback {
                        out.gross_fallbacks.push(format!(
                            "{} hidden, restart {}: {why}",
                            m.n_hidden, m.restart
                        ));
                    }
                    out.members.push(m);
                    out.gross_rows.extend(rows);
                }
                Err(e) => out.failures.push(e),
            }
        }
        if out.members.is_empty() {
            return Err(Error::AllCandidatesFailed {
                reasons: format!(
                    "every refit on all the data failed: {}",
                    out.failures.join("; ")
                ),
            });
        }
        Ok(out)
    }

    /// The share of gross errors over all the rows with what the refit
    /// found: the mean Σ(1 − r_n) of the members refitted with it, and the
    /// members that fell back to the Gaussian refit.
    pub fn gross_errors(&self, gross: Option<GrossErrorModel>) -> Option<GrossErrorModel> {
        gross.map(|g| GrossErrorModel {
            refit_gross_rows: (!self.gross_rows.is_empty())
                .then(|| self.gross_rows.iter().sum::<f64>() / self.gross_rows.len() as f64),
            refit_fallbacks: self.gross_fallbacks.clone(),
            ..g
        })
    }
}

/// Refit a varying-noise member, mean and noise networks warm-started;
/// with `gross`, under the contamination model, falling back to the
/// Gaussian refit when that fails.
fn refit_varying(
    params: &CheckedCommitteeParams,
    x: ArrayView2<f64>,
    t: ArrayView1<f64>,
    c: &VaryingCandidate,
    gross: Option<&GrossErrorModel>,
) -> Refit {
    let rec = &c.trial.record;
    let settings = refit_settings(&params.fit, x.nrows(), params.seed);
    let early = early_round_settings(&settings, x.nrows());
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
            &early,
            &settings,
        )
    };
    let (fit, fallback) = match refit(gross) {
        Err(f) if gross.is_some() => (refit(None), Some(f.to_string())),
        other => (other, None),
    };
    fit.map(|refit| {
        let mut m = provisional_member(c.trial, &refit);
        m.heldout_nlpd = c.nlpd;
        (m, refit.gross_rows, fallback)
    })
    .map_err(|f| format!("{} hidden, restart {}: {f}", rec.n_hidden, rec.restart))
}

/// Refit a constant-noise member, warm-started; with `gross`, then under
/// the contamination model, keeping the Gaussian refit when that fails.
/// On a large table (more than [`LARGE_TABLE_ROWS`] rows) with `gross` the
/// Gaussian refit is skipped: the first E-step takes the search's network
/// (whose held-out rows estimated the share) and the EM rounds refit from
/// it, the Gaussian refit made only when they fail (issue 28 item 2).
fn refit_constant(
    params: &CheckedCommitteeParams,
    x: ArrayView2<f64>,
    t: ArrayView1<f64>,
    trial: &Trial,
    gross: Option<&GrossErrorModel>,
) -> Refit {
    // warm-started: the first cycle needs no more iterations than the others
    let fit = refit_settings(&params.fit, x.nrows(), params.seed);
    let settings = FitSettings {
        first_iters: fit.cycle_iters,
        ..fit
    };
    let net = trial.network();
    let start = StartState {
        weights: net.weights.clone(),
        alpha: net.alpha.clone(),
        beta: net.beta,
    };
    let rec = &trial.record;
    let early = early_round_settings(&settings, x.nrows());
    let gaussian = || {
        fit_network(
            net.arch,
            params.ard,
            x.view(),
            t.view(),
            start.clone(),
            &settings,
        )
    };
    let outcome = match gross {
        Some(g) if x.nrows() > LARGE_TABLE_ROWS => {
            match g.refit_constant(net.clone(), params.ard, x, t, &early, &settings) {
                Ok((net, rows)) => Ok((net, Some(rows), None)),
                Err(f) => gaussian().map(|refit| (refit, None, Some(f.to_string()))),
            }
        }
        _ => gaussian().map(|refit| match gross {
            Some(g) => match g.refit_constant(refit.clone(), params.ard, x, t, &early, &settings) {
                Ok((net, rows)) => (net, Some(rows), None),
                Err(f) => (refit, None, Some(f.to_string())),
            },
            None => (refit, None, None),
        }),
    };
    outcome
        .map(|(refit, rows, fallback)| (member_from(rec, &refit, None), rows, fallback))
        .map_err(|f| format!("{} hidden, restart {}: {f}", rec.n_hidden, rec.restart))
}

#[cfg(test)]
mod tests {
    use super::super::by_size::ConstantCommittee;
    use super::super::candidates::CandidateSearch;
    use super::super::split::HeldOutSplit;
    use super::super::stage_fixture::{params, small_data, Silent};
    use super::super::NoiseMode;
    use super::*;

    /// The refit keeps every chosen member (in the committee's order), on
    /// all the rows: each member's training-part fit is the warm start, and
    /// the refit's evidence is that of all N rows, so it differs from the
    /// training part's.
    #[test]
    fn the_chosen_members_are_refitted_on_all_rows() {
        let (x, t) = small_data(40);
        let p = params();
        let split = HeldOutSplit::new(&p, x.view(), t.view(), 1.0, "small").expect("split");
        let search = CandidateSearch::run(&p, &split, "y", &Silent);
        let constant = ConstantCommittee::choose(search.ranked().expect("trained"), 3, &split);
        let models = NoiseModels::new(NoiseMode::Constant, constant, None).expect("models");
        let r = Refitted::run(&p, x.view(), t.view(), &models, false, None, "y", &Silent)
            .expect("refit");
        let chosen = models.constant.chosen();
        assert_eq!(r.members.len() + r.failures.len(), chosen.len());
        for (m, trial) in r.members.iter().zip(chosen) {
            assert_eq!(
                (m.n_hidden, m.restart),
                (trial.record.n_hidden, trial.record.restart)
            );
            assert!(m.noise.is_none());
            let before = trial.network().log_evidence;
            assert!((m.log_evidence - before).abs() > 0.0, "refit on all rows");
        }
        assert!(r.gross_errors(None).is_none());
    }
}
