//! Input relevance from the ARD hyperparameters.
//!
//! # Formula
//!
//! Under automatic relevance determination every input i has its own
//! weight-decay constant α_i, the prior on the weights leaving it being
//! N(0, 1/α_i) (MacKay 1994, ASHRAE Trans. 100(2):1053; Neal 1996,
//! *Bayesian Learning for Neural Networks*, §1.2.3). Its prior sd
//!
//! ```text
//! σ_w,i = α_i^(−1/2)
//! ```
//!
//! is the typical size of a weight leaving input i, on inputs scaled to
//! [−0.5, 0.5] (so on a common footing: one unit is the training range of
//! every input). Per member m, r_mi = σ_w,i / max_j σ_w,j; over the M
//! members the relevance is the plain mean (each member counts equally, as
//! in the committee's mean) normalised again so that the most relevant
//! input is 1:
//!
//! ```text
//! R_i = r̄_i / max_j r̄_j,     r̄_i = (1/M) Σ_m r_mi
//! ```
//!
//! # What it means and what it does not
//!
//! R_i says how large the evidence let the weights of input i grow, relative
//! to the others: how much the networks *use* the input to fit the data. It
//! is not a causal effect, not the change of the target per unit of the
//! input, and not its sign; two strongly correlated inputs can share or
//! swap relevance, and an input that varies little in the data can look
//! irrelevant though it matters in practice. A straight-line effect can be
//! carried by small input weights feeding the near-linear middle of the
//! tanh units (with large output weights), so a linear input may rank below
//! a curved one whose effect on the target is smaller.

use crate::committee::Committee;
use crate::evidence::GroupKind;

/// The sentence shown beside every relevance table and chart.
pub const RELEVANCE_MEANING: &str = "Relevance is the prior weight size σ_w = α^−½ the evidence allowed each input (most relevant = 1): how much the networks use the input to fit the data, on inputs scaled to their training range. It is not a causal effect, not a slope and not a sign; correlated inputs can share or swap relevance, and a straight-line effect can rank below a smaller curved one.";

/// Relevance R_i of each input (model input order), most relevant = 1;
/// `None` when the members were trained without ARD (one α for all inputs).
pub fn relevance(committee: &Committee) -> Option<Vec<f64>> {
    let d = committee.n_inputs;
    let mut mean = vec![0.0; d];
    for m in &committee.members {
        let mut sigma = vec![f64::NAN; d];
        for (kind, alpha) in m.groups.iter().zip(&m.alpha) {
            if let GroupKind::Input(i) = kind {
                if let Some(s) = sigma.get_mut(*i) {
                    *s = alpha.powf(-0.5);
                }
            }
        }
        let top = sigma.iter().copied().fold(f64::NAN, f64::max);
        if sigma.iter().any(|s| !s.is_finite())
            || top.partial_cmp(&0.0) != Some(std::cmp::Ordering::Greater)
        {
            return None;
        }
        for (acc, s) in mean.iter_mut().zip(&sigma) {
            *acc += s / top;
        }
    }
    let top = mean.iter().copied().fold(f64::NAN, f64::max);
    (top > 0.0).then(|| mean.iter().map(|r| r / top).collect())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn normalised_per_member_then_averaged() {
        // member 1: α = (1, 4, 100) → σ = (1, 0.5, 0.1), r = (1, 0.5, 0.1)
        // member 2: α = (4, 1, 100) → σ = (0.5, 1, 0.1), r = (0.5, 1, 0.1)
        // mean (0.75, 0.75, 0.1) → R = (1, 1, 0.1333…); by hand
        let c =
            crate::explain::tests::committee_with_alphas(&[&[1.0, 4.0, 100.0], &[4.0, 1.0, 100.0]]);
        let r = relevance(&c).expect("ard");
        assert!((r[0] - 1.0).abs() < 1e-12 && (r[1] - 1.0).abs() < 1e-12);
        assert!((r[2] - 0.1 / 0.75).abs() < 1e-12);
    }
}
