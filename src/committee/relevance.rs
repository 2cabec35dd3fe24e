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
//! input is 1. With several partitions ([`Committee::further_partitions`])
//! the M members are those of every partition, each counting equally:
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

use crate::fixedmath::FixedMath;
use serde::{Deserialize, Serialize};

use super::Committee;
use crate::evidence::GroupKind;

/// The sentence shown beside every relevance table and chart.
pub const RELEVANCE_MEANING: &str = "Relevance is the prior weight size σ_w = α^−½ the evidence allowed each input (most relevant = 1): how much the networks use the input to fit the data, on inputs scaled to their training range. It is not a causal effect, not a slope and not a sign; correlated inputs can share or swap relevance, and a straight-line effect can rank below a smaller curved one.";

/// Relevance of one input with its spread: the committee's value and the
/// smallest and largest over the members (or over cross-validation folds),
/// on the same scale.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct RelevanceRange {
    /// Input name.
    pub input: String,
    /// Relevance (committee, or median over folds).
    pub value: f64,
    /// Smallest over the members (folds).
    pub low: f64,
    /// Largest over the members (folds).
    pub high: f64,
}

/// Per member m the values r_mi = σ_w,i / max_j σ_w,j (model input order),
/// over the members of every partition in order; `None` when the members
/// were trained without ARD (one α for all inputs).
pub fn member_relevance(committee: &Committee) -> Option<Vec<Vec<f64>>> {
    let d = committee.n_inputs;
    let mut out = Vec::new();
    for (_, m) in committee.all_members() {
        let mut sigma = vec![f64::NAN; d];
        for (kind, alpha) in m.groups.iter().zip(&m.alpha) {
            if let GroupKind::Input(i) = kind {
                if let Some(s) = sigma.get_mut(*i) {
                    *s = alpha.powf_fixed(-0.5);
                }
            }
        }
        let top = sigma.iter().copied().fold(f64::NAN, f64::max);
        if sigma.iter().any(|s| !s.is_finite())
            || top.partial_cmp(&0.0) != Some(std::cmp::Ordering::Greater)
        {
            return None;
        }
        out.push(sigma.iter().map(|s| s / top).collect());
    }
    Some(out)
}

/// Relevance R_i of each input (model input order), most relevant = 1;
/// `None` when the members were trained without ARD (one α for all inputs).
pub fn relevance(committee: &Committee) -> Option<Vec<f64>> {
    relevance_with_spread(committee).map(|v| v.into_iter().map(|(r, _, _)| r).collect())
}

/// Per input (R_i, low_i, high_i): the relevance and the smallest and
/// largest member value r_mi / max_j r̄_j, on the committee's scale (so the
/// range holds R_i, the members' mean on that scale). A wide range says the
/// members lean on the input differently: its rank is not settled.
pub fn relevance_with_spread(committee: &Committee) -> Option<Vec<(f64, f64, f64)>> {
    let members = member_relevance(committee)?;
    let d = committee.n_inputs;
    let mut mean = vec![0.0; d];
    for r in &members {
        for (acc, v) in mean.iter_mut().zip(r) {
            *acc += v;
        }
    }
    let top = mean.iter().copied().fold(f64::NAN, f64::max);
    if top.partial_cmp(&0.0) != Some(std::cmp::Ordering::Greater) {
        return None;
    }
    // mean/top = r̄_i / max_j r̄_j: the members' count cancels
    Some(
        (0..d)
            .map(|i| {
                let (lo, hi) = members
                    .iter()
                    .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), r| {
                        (a.min(r[i]), b.max(r[i]))
                    });
                let scale = members.len() as f64 / top;
                (mean[i] / top, lo * scale, hi * scale)
            })
            .collect(),
    )
}

/// Median, smallest and largest of each input's relevance over several
/// committees (the folds of a cross-validation), each normalised to its
/// own most relevant input = 1.
pub fn relevance_over(fits: &[Vec<f64>]) -> Vec<(f64, f64, f64)> {
    let d = fits.first().map_or(0, |f| f.len());
    (0..d)
        .map(|i| {
            let mut v: Vec<f64> = fits.iter().filter_map(|f| f.get(i).copied()).collect();
            v.sort_by(f64::total_cmp);
            let n = v.len();
            let median = if n == 0 {
                f64::NAN
            } else if n % 2 == 1 {
                v[n / 2]
            } else {
                0.5 * (v[n / 2 - 1] + v[n / 2])
            };
            (
                median,
                v.first().copied().unwrap_or(f64::NAN),
                v.last().copied().unwrap_or(f64::NAN),
            )
        })
        .collect()
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;
    use crate::committee::{Member, NoiseSelection, Selection};
    use crate::evidence::{FitDiagnostics, HessianKind};

    /// A linear committee (no hidden units) of members with the given
    /// input α's, for tests of what is read from a committee.
    pub(crate) fn committee_with_alphas(alphas: &[&[f64]]) -> Committee {
        let d = alphas[0].len();
        let members = alphas
            .iter()
            .map(|a| {
                let mut groups: Vec<GroupKind> = (0..d).map(GroupKind::Input).collect();
                groups.push(GroupKind::OutputBias);
                let mut alpha = a.to_vec();
                alpha.push(1e-8);
                Member {
                    n_hidden: 0,
                    restart: 0,
                    seed: 0,
                    gamma: vec![1.0; d + 1],
                    groups,
                    alpha,
                    beta: 100.0,
                    log_evidence: 0.0,
                    heldout_nlpd: 0.0,
                    hessian: HessianKind::Exact,
                    weights: vec![0.0; d + 1],
                    posterior_cov: ndarray::Array2::eye(d + 1),
                    diagnostics: FitDiagnostics::default(),
                    noise: None,
                }
            })
            .collect();
        Committee {
            n_inputs: d,
            members,
            candidates: vec![],
            selection: Selection {
                n_train_part: 0,
                n_heldout: 0,
                hidden_searched: (0, 0),
                widened: false,
                nlpd_by_size: vec![0.0],
                n_members: alphas.len(),
                refit_failures: vec![],
                noise: NoiseSelection::default(),
                kriging: Default::default(),
                pooled: vec![],
            },
            kriging: None,
            gross_errors: None,
            further_partitions: vec![],
            partition_variance: None,
            partition_correlation: None,
        }
    }

    #[test]
    fn normalised_per_member_then_averaged() {
        // member 1: α = (1, 4, 100) → σ = (1, 0.5, 0.1), r = (1, 0.5, 0.1)
        // member 2: α = (4, 1, 100) → σ = (0.5, 1, 0.1), r = (0.5, 1, 0.1)
        // mean (0.75, 0.75, 0.1) → R = (1, 1, 0.1333…); by hand
        let c = committee_with_alphas(&[&[1.0, 4.0, 100.0], &[4.0, 1.0, 100.0]]);
        let r = relevance(&c).expect("ard");
        assert!((r[0] - 1.0).abs() < 1e-12 && (r[1] - 1.0).abs() < 1e-12);
        assert!((r[2] - 0.1 / 0.75).abs() < 1e-12);
        // spread by hand: members' r on the committee scale r/0.75:
        // input 0: 1/0.75 and 0.5/0.75 → (0.6667, 1.3333)
        let s = relevance_with_spread(&c).expect("ard");
        assert!((s[0].1 - 0.5 / 0.75).abs() < 1e-12 && (s[0].2 - 1.0 / 0.75).abs() < 1e-12);
        assert!((s[2].1 - 0.1 / 0.75).abs() < 1e-12 && (s[2].2 - 0.1 / 0.75).abs() < 1e-12);
        // the range holds the committee's value
        assert!(s.iter().all(|(r, lo, hi)| lo <= r && r <= hi));
    }

    #[test]
    fn over_folds_median_and_range() {
        let v = relevance_over(&[vec![1.0, 0.2], vec![0.8, 1.0], vec![1.0, 0.5]]);
        assert_eq!(v[0], (1.0, 0.8, 1.0));
        assert_eq!(v[1], (0.5, 0.2, 1.0));
    }

    /// With further partitions the relevance is the mean over every
    /// partition's members, each counting once (the module's formula with
    /// M the members of all partitions): the same as one committee holding
    /// them all, and not partition 1's alone.
    #[test]
    fn relevance_counts_the_members_of_every_partition() {
        let mut two = committee_with_alphas(&[&[1.0, 4.0], &[1.0, 1.0]]);
        let second = committee_with_alphas(&[&[100.0, 1.0]]);
        two.further_partitions.push(second);
        let all = committee_with_alphas(&[&[1.0, 4.0], &[1.0, 1.0], &[100.0, 1.0]]);
        assert_eq!(relevance_with_spread(&two), relevance_with_spread(&all));
        let mut first = two.clone();
        first.further_partitions.clear();
        assert_ne!(relevance(&two), relevance(&first));
        assert_eq!(member_relevance(&two).map(|m| m.len()), Some(3));
    }
}
