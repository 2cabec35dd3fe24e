//! Stage 6 of training: the error shape and the share of gross errors on
//! the held-out part (when asked for), and with them the choice of noise
//! model and residual process — each combination judged as it will predict.

use ndarray::{Array1, ArrayView1};

use super::gross_errors::{GrossErrorModel, HeldOutChoices};
use super::kriging::ResidualKriging;
use super::paired::{paired_se, row_nlpd};
use super::residual::ProcessTrial;
use super::split::HeldOutSplit;
use super::{CheckedCommitteeParams, KrigingMode, KrigingSelection};
use crate::error::{Error, Result};
use crate::prec::NOISE_PARSIMONY_SE;

/// The chosen noise model and residual process, with the share of gross
/// errors and error shape estimated beside them.
pub(super) struct Choice {
    /// True for noise that varies with the inputs.
    pub varying: bool,
    /// The process fitted on the training part, when one was chosen.
    pub process: Option<ResidualKriging>,
    /// The record of the process's choice (completed by the refit).
    pub kriging: KrigingSelection,
    /// Share of gross errors and error shape on the held-out part, when
    /// asked for.
    pub gross: Option<GrossErrorModel>,
    /// The varying-noise combination's lead over the best constant-noise
    /// one in standard errors, when both were judged
    /// ([`super::NoiseSelection::varying_margin_se`]).
    pub varying_margin_se: Option<f64>,
}

impl Choice {
    /// Estimate the gross errors beside each tried combination and keep the
    /// one with the least held-out NLPD (the two-part NLPD when gross errors
    /// are estimated); with kriging on only kriged combinations compete,
    /// with it off only plain ones.
    ///
    /// # Errors
    /// [`Error::AllCandidatesFailed`] when nothing is left to choose (the
    /// process was required and could not be fitted).
    pub fn make(
        params: &CheckedCommitteeParams,
        split: &HeldOutSplit,
        trials: Vec<ProcessTrial>,
    ) -> Result<Self> {
        let judged: Vec<Judged> = trials
            .into_iter()
            .map(|trial| Judged::new(params, split, trial))
            .collect();
        // (held-out NLPD, varying, kriged) of every allowed combination
        let mut choices: Vec<(f64, bool, bool)> = Vec::new();
        for j in &judged {
            if params.kriging != KrigingMode::On {
                choices.push((j.committee_score(), j.trial.varying, false));
            }
            if let (true, Some(k)) = (params.kriging != KrigingMode::Off, j.kriging_score()) {
                choices.push((k, j.trial.varying, true));
            }
        }
        let Some((&(_, varying, use_kriging), varying_margin_se)) =
            parsimonious(&choices, &judged, split)
        else {
            return Err(Error::AllCandidatesFailed {
                reasons: format!(
                    "the residual process could not be fitted: {}",
                    judged
                        .iter()
                        .filter_map(|j| j.trial.failure.clone())
                        .collect::<Vec<_>>()
                        .join("; ")
                ),
            });
        };
        let chosen = judged
            .into_iter()
            .find(|j| j.trial.varying == varying)
            .expect("the choice is one of the options");
        let kriging = KrigingSelection {
            requested: params.kriging,
            committee_nlpd: Some(chosen.trial.committee_nlpd),
            kriging_nlpd: chosen.trial.kriged.as_ref().map(|k| k.0),
            failure: chosen.trial.failure,
            model_part: chosen.trial.model_part,
            ..KrigingSelection::default()
        };
        Ok(if use_kriging {
            Choice {
                varying,
                process: chosen.trial.process,
                kriging,
                gross: chosen.kriging_gross,
                varying_margin_se,
            }
        } else {
            Choice {
                varying,
                process: None,
                kriging,
                gross: chosen.committee_gross,
                varying_margin_se,
            }
        })
    }

    /// The held-out share of gross errors with their spread taken over all
    /// the training rows `t`, for the refit and the committee file.
    pub fn gross_over_all_rows(&self, t: ArrayView1<f64>) -> Option<GrossErrorModel> {
        self.gross.clone().map(|g| GrossErrorModel {
            background_mean: t.mean().unwrap_or(g.background_mean),
            background_sd: t.std(0.0),
            ..g
        })
    }
}

/// A judged combination: (held-out score, varying noise, kriged).
type Scored = (f64, bool, bool);

/// The combination (held-out score, varying, kriged) with the least score,
/// unless it has varying noise and the best constant-noise combination's
/// score is within [`NOISE_PARSIMONY_SE`] standard errors of it: then that
/// one (the one-standard-error rule, the simpler noise model kept on a
/// tie). The standard error is that of the mean of the paired per-row
/// differences of Gaussian NLPD of the two held-out predictions,
/// sd(d)/√n ([`paired_se`]); the scores themselves are those judged as the
/// model will predict (two-part NLPD when gross errors are estimated).
/// Beside the choice, the lead m = (score_constant − score_varying)/SE of
/// the best varying-noise combination, when both noise models were judged
/// (varying noise is chosen exactly when m > [`NOISE_PARSIMONY_SE`]).
///
/// Why: the varying-noise committee wins the held-out NLPD on some data
/// by small margins while its mean is less accurate (issue 29's inner
/// cross-validation on the energy data; docs/benchmarks.md).
fn parsimonious<'c>(
    choices: &'c [Scored],
    judged: &[Judged],
    split: &HeldOutSplit,
) -> Option<(&'c Scored, Option<f64>)> {
    let best_of = |varying: bool| {
        choices
            .iter()
            .filter(|c| c.1 == varying)
            .min_by(|a, b| a.0.total_cmp(&b.0))
    };
    let best = choices.iter().min_by(|a, b| a.0.total_cmp(&b.0))?;
    let (Some(varying), Some(constant)) = (best_of(true), best_of(false)) else {
        return Some((best, None));
    };
    let heldout = |&(_, varying, kriged): &Scored| {
        let j = judged.iter().find(|j| j.trial.varying == varying)?;
        if kriged {
            j.trial.kriged.as_ref().map(|k| &k.1)
        } else {
            Some(&j.trial.committee_heldout)
        }
    };
    let (Some(a), Some(b)) = (heldout(varying), heldout(constant)) else {
        return Some((best, None));
    };
    let se = paired_se(
        &row_nlpd(a, split.t_ho.view()),
        &row_nlpd(b, split.t_ho.view()),
    );
    let margin = (constant.0 - varying.0) / se;
    Some((
        if margin > NOISE_PARSIMONY_SE {
            varying
        } else {
            constant
        },
        Some(margin),
    ))
}

/// A tried combination with the gross errors estimated beside it.
struct Judged {
    trial: ProcessTrial,
    committee_gross: Option<GrossErrorModel>,
    kriging_gross: Option<GrossErrorModel>,
}

impl Judged {
    fn new(params: &CheckedCommitteeParams, split: &HeldOutSplit, trial: ProcessTrial) -> Self {
        Judged {
            committee_gross: gross_errors(
                params,
                split,
                &trial.committee_heldout,
                &trial.committee_noise_var,
            ),
            kriging_gross: trial
                .kriged
                .as_ref()
                .and_then(|(_, heldout, noise)| gross_errors(params, split, heldout, noise)),
            trial,
        }
    }

    /// The committee alone, judged as it will predict.
    fn committee_score(&self) -> f64 {
        judged(self.trial.committee_nlpd, &self.committee_gross)
    }

    /// The committee with its process, when it could be scored.
    fn kriging_score(&self) -> Option<f64> {
        self.trial
            .kriged
            .as_ref()
            .map(|(nlpd, _, _)| judged(*nlpd, &self.kriging_gross))
    }
}

/// A held-out NLPD as the model will predict: the two-part NLPD when a
/// share of gross errors is estimated beside it.
fn judged(nlpd: f64, g: &Option<GrossErrorModel>) -> f64 {
    g.as_ref().map_or(nlpd, |g| g.heldout_nlpd)
}

/// The share of gross errors (and error shape, and factor on the model
/// variance) of a held-out prediction (`mean`, `var`, `noise_var` scaled),
/// their values spread as the target over the training part; None unless
/// gross errors, heavy tails or the factor are asked for.
fn gross_errors(
    params: &CheckedCommitteeParams,
    split: &HeldOutSplit,
    (mean, var): &(Array1<f64>, Array1<f64>),
    noise_var: &Array1<f64>,
) -> Option<GrossErrorModel> {
    let background = (split.t_tr.mean().unwrap_or(0.0), split.t_tr.std(0.0));
    let choices = HeldOutChoices {
        share: params.gross_errors,
        heavy_tails: params.heavy_tails,
        model_var_scale: params.model_var_scale,
    };
    (choices.share || choices.heavy_tails || choices.model_var_scale)
        .then(|| {
            GrossErrorModel::fit_calibrated(
                (mean.view(), var.view(), noise_var.view()),
                split.t_ho.view(),
                background,
                choices,
                split.ln_width,
            )
        })
        .flatten()
}

#[cfg(test)]
mod tests {
    use super::super::stage_fixture::{params, small_data};
    use super::super::CommitteeParams;
    use super::*;

    fn trial(varying: bool, committee: f64, kriged: Option<f64>) -> ProcessTrial {
        let z = || (Array1::zeros(8), Array1::ones(8));
        ProcessTrial {
            varying,
            committee_nlpd: committee,
            committee_heldout: z(),
            committee_noise_var: Array1::ones(8),
            kriged: kriged.map(|k| (k, z(), Array1::ones(8))),
            process: None,
            model_part: None,
            failure: kriged.is_none().then(|| "singular".to_string()),
        }
    }

    fn split() -> HeldOutSplit {
        let (x, t) = small_data(40);
        HeldOutSplit::new(&params(), x.view(), t.view(), 1.0, "small").expect("split")
    }

    /// The least held-out NLPD wins among the combinations the setting
    /// allows (no gross errors asked for, so each is judged as scored).
    #[test]
    fn the_least_heldout_nlpd_wins_within_the_setting() {
        let s = split();
        let plain = |mode| {
            CommitteeParams::default()
                .kriging(mode)
                .gross_errors(false)
                .heavy_tails(false)
                .model_var_scale(false)
                .check()
                .expect("valid")
        };
        let tried = || vec![trial(false, 1.0, Some(0.5)), trial(true, 0.8, None)];
        let auto = Choice::make(&plain(KrigingMode::Auto), &s, tried()).expect("choice");
        assert!(!auto.varying);
        assert_eq!(auto.kriging.kriging_nlpd, Some(0.5));
        let off = Choice::make(&plain(KrigingMode::Off), &s, tried()).expect("choice");
        assert!(off.varying && off.process.is_none());
        assert_eq!(off.kriging.failure.as_deref(), Some("singular"));
        // kriging required and never scored: an error naming the failure
        let on = Choice::make(&plain(KrigingMode::On), &s, vec![trial(false, 1.0, None)]);
        assert!(
            matches!(on, Err(Error::AllCandidatesFailed { ref reasons }) if reasons.contains("singular"))
        );
    }

    /// Varying noise wins only by more than one SE of the paired per-row
    /// difference; on a tie within it the constant-noise combination is
    /// kept (the one-standard-error rule).
    #[test]
    fn varying_noise_must_win_by_more_than_one_standard_error() {
        let s = split();
        let n = s.t_ho.len();
        let e = [1.0, -2.0, 0.5, 3.0, -1.0, 0.0];
        let heldout = |bias: f64| {
            let m = Array1::from_shape_fn(n, |i| s.t_ho[i] + 0.1 * e[i % 6] + bias);
            (m, Array1::from_elem(n, 0.04))
        };
        let se = paired_se(
            &row_nlpd(&heldout(0.0), s.t_ho.view()),
            &row_nlpd(&heldout(0.05), s.t_ho.view()),
        );
        assert!(se > 0.0 && se.is_finite());
        let params = CommitteeParams::default()
            .kriging(KrigingMode::Off)
            .gross_errors(false)
            .heavy_tails(false)
            .model_var_scale(false)
            .check()
            .expect("valid");
        let tried = |margin: f64| {
            let mut constant = trial(false, 1.0 + margin * se, None);
            constant.committee_heldout = heldout(0.05);
            let mut varying = trial(true, 1.0, None);
            varying.committee_heldout = heldout(0.0);
            vec![constant, varying]
        };
        let tie = Choice::make(&params, &s, tried(0.5)).expect("choice");
        assert!(!tie.varying, "within one SE: constant noise kept");
        let shown = Choice::make(&params, &s, tried(1.5)).expect("choice");
        assert!(shown.varying, "by 1.5 SE: varying noise chosen");
    }

    /// Gross errors are estimated only when asked for, and their spread
    /// over all rows is the target's mean and population sd.
    #[test]
    fn gross_errors_only_when_asked_and_spread_over_all_rows() {
        let s = split();
        let none = CommitteeParams::default()
            .gross_errors(false)
            .heavy_tails(false)
            .model_var_scale(false)
            .check()
            .expect("valid");
        let c = Choice::make(&none, &s, vec![trial(false, 1.0, None)]).expect("choice");
        assert!(c.gross.is_none());
        let t = Array1::from(vec![1.0, 3.0]);
        let c = Choice {
            gross: GrossErrorModel::fit(
                s.t_ho.view(),
                Array1::from_elem(s.t_ho.len(), 0.01).view(),
                s.t_ho.view(),
                (0.0, 1.0),
                true,
                false,
                0.0,
            ),
            ..c
        };
        let g = c.gross_over_all_rows(t.view()).expect("asked for");
        assert!((g.background_mean - 2.0).abs() < 1e-15);
        assert!((g.background_sd - 1.0).abs() < 1e-15);
    }
}
