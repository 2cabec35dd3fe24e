//! Notes on the fit: overfitting and underfitting named in plain words.
//!
//! # What is checked
//!
//! With N training rows and γ well-determined parameters, the evidence
//! framework's noise re-estimate is σ² = Σ e² / (N − γ) (MacKay 1992,
//! *Neural Computation* 4:415, eq. 28; Bishop 1995, §10.4), so at its
//! optimum the training RMSE is σ·√(1 − γ/N): near σ when the rows far
//! outnumber the parameters. Three notes:
//!
//! 1. **Training rows fitted far more closely than the noise** — training
//!    RMSE / fitted noise sd below [`FIT_RMSE_RATIO_MIN`] (0.7, that is
//!    γ/N above ½: the fit spends more than half the rows' worth of
//!    freedom; the estimates follow the rows' scatter, and new rows will
//!    miss by more than the error bars say).
//! 2. **Held-out rows fitted far worse than training rows** — the search's
//!    held-out NLPD of the chosen committee exceeds the training rows'
//!    NLPD (Gaussian, on the scale the target is learnt on) by more than
//!    [`FIT_NLPD_GAP_MAX`] nats per row. For a well-specified model the
//!    expected gap is about γ/N nats (the optimism of a log-likelihood,
//!    Akaike 1974), a few hundredths for a committee of small networks
//!    on hundreds of rows.
//! 3. **Training rows scattered well beyond the repeat tests** — training
//!    RMSE above [`FIT_REPLICATE_RATIO_MAX`] times the pooled sd of the
//!    repeat tests, judged only with at least [`FIT_REPLICATE_DOF_MIN`]
//!    degrees of freedom (with 20 the pooled sd's 95 % chi-square interval
//!    reaches 1.44 × the estimate, χ²₀.₀₂₅,₂₀ = 9.591, value from
//!    memory): structure the inputs or the networks do not capture.
//!
//! The thresholds were checked on invented data with a known noise sd
//! (docs/insight.md, "Notes on the fit"): well-specified committees gave
//! ratios of 0.97 to 1.02 and gaps of 0.02 to 0.22 nats, an interpolating
//! one (40 rows, 8 inputs, no ARD) 0.11 and 7.5 nats; never on the
//! benchmark splits.

use super::TrainingSummary;
use crate::model::TargetModel;
use crate::prec::{
    FIT_NLPD_GAP_MAX, FIT_REPLICATE_DOF_MIN, FIT_REPLICATE_RATIO_MAX, FIT_RMSE_RATIO_MIN,
};

/// The notes on one target's fit (empty when nothing is flagged, or when
/// the model file predates the training figures).
pub fn fit_notes(t: &TargetModel) -> Vec<String> {
    let Some(s) = &t.training_summary else {
        return Vec::new();
    };
    let c = &t.committee.selection;
    let heldout = c.nlpd_by_size.get(c.n_members.wrapping_sub(1)).copied();
    notes(s, heldout)
}

/// Four significant figures, in exponent form when tiny or huge.
fn g(v: f64) -> String {
    let a = v.abs();
    if a != 0.0 && !(1e-3..1e6).contains(&a) {
        format!("{v:.3e}")
    } else {
        format!("{v:.4}")
    }
}

/// The notes from a training summary and the held-out NLPD of the chosen
/// committee.
pub fn notes(s: &TrainingSummary, heldout_nlpd: Option<f64>) -> Vec<String> {
    let mut out = Vec::new();
    let noise = s.noise_sd.median;
    if let Some(rmse) = s.training_rmse {
        if noise > 0.0 && rmse < FIT_RMSE_RATIO_MIN * noise {
            out.push(format!(
                "overfitting likely: the training rows are fitted to an RMSE of {}, far below the fitted noise sd of {} (ratio {:.2}; below {FIT_RMSE_RATIO_MIN} the networks follow the rows' own scatter). Expect larger errors on new rows than the error bars say; measure them with `mettle validate`.",
                g(rmse),
                g(noise),
                rmse / noise
            ));
        }
        if let Some(r) = &s.replicates {
            if r.dof >= FIT_REPLICATE_DOF_MIN && rmse > FIT_REPLICATE_RATIO_MAX * r.pooled_sd {
                out.push(format!(
                    "underfitting likely: the training rows scatter about the estimates with an RMSE of {}, well above the {} of the repeat tests ({} degrees of freedom). The inputs or the networks miss structure in the data (a missing input, too small a search), or the repeat tests are closer than ordinary ones.",
                    g(rmse),
                    g(r.pooled_sd),
                    r.dof
                ));
            }
        }
    }
    if let (Some(train), Some(held)) = (s.training_nlpd, heldout_nlpd) {
        if held - train > FIT_NLPD_GAP_MAX {
            out.push(format!(
                "overfitting likely: the held-out NLPD of the committee ({held:.3}) is {:.3} nats per row worse than on its training rows ({train:.3}); above {FIT_NLPD_GAP_MAX} the networks describe their own rows much better than others. Measure with `mettle validate`.",
                held - train
            ));
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{NoiseSpread, ReplicateScatter};

    /// A summary with noise sd 10 (target units) and the given figures.
    fn summary(
        rmse: Option<f64>,
        nlpd: Option<f64>,
        replicates: Option<(f64, usize)>,
    ) -> TrainingSummary {
        TrainingSummary {
            noise_sd: NoiseSpread {
                median: 10.0,
                min: 10.0,
                max: 10.0,
            },
            replicates: replicates.map(|(pooled_sd, dof)| ReplicateScatter {
                pooled_sd,
                dof,
                n_groups: dof,
            }),
            noise_profile: None,
            training_rmse: rmse,
            training_nlpd: nlpd,
        }
    }

    // The expected training RMSE of a well-specified fit is σ·√(1 − γ/N)
    // (MacKay 1992, eq. 28): with γ/N = 0.1 that is 0.949 σ, no note; an
    // interpolating fit with γ/N = 0.75 gives 0.5 σ, below the 0.7 line.
    #[test]
    fn a_well_specified_fit_gets_no_note() {
        let s = summary(Some(10.0 * 0.9_f64.sqrt()), Some(1.0), Some((9.5, 40)));
        assert!(notes(&s, Some(1.05)).is_empty());
    }

    #[test]
    fn an_interpolating_fit_is_named_overfitting() {
        let s = summary(Some(10.0 * 0.25_f64.sqrt()), None, None);
        let n = notes(&s, None);
        assert_eq!(n.len(), 1, "{n:?}");
        assert!(n[0].starts_with("overfitting likely") && n[0].contains("ratio 0.50"));
    }

    #[test]
    fn a_held_out_gap_beyond_the_line_is_named_and_one_within_is_not() {
        let s = summary(Some(9.6), Some(2.0), None);
        assert!(notes(&s, Some(2.0 + FIT_NLPD_GAP_MAX - 0.01)).is_empty());
        let n = notes(&s, Some(2.0 + FIT_NLPD_GAP_MAX + 0.01));
        assert_eq!(n.len(), 1, "{n:?}");
        assert!(n[0].contains("held-out NLPD"));
    }

    #[test]
    fn scatter_well_beyond_the_repeat_tests_is_underfitting_with_enough_dof() {
        // RMSE 9.6 against a pooled replicate sd of 5: ratio 1.92 > 1.5
        let s = summary(Some(9.6), None, Some((5.0, FIT_REPLICATE_DOF_MIN)));
        let n = notes(&s, None);
        assert_eq!(n.len(), 1, "{n:?}");
        assert!(n[0].starts_with("underfitting likely"));
        // too few degrees of freedom to judge
        let s = summary(Some(9.6), None, Some((5.0, FIT_REPLICATE_DOF_MIN - 1)));
        assert!(notes(&s, None).is_empty());
    }
}
