//! Stage 2b of training (with `hidden_parsimony`): the smallest networks
//! the held-out part cannot tell from the best.
//!
//! The candidate of least held-out NLPD sets the mark. For each hidden-unit
//! count h, smallest first, the best candidate of that size is compared
//! with it row by row on the held-out part: the mean paired difference of
//! the per-row NLPD, m_h, against its standard error s_h. The cap is the
//! smallest h with m_h ≤ c · s_h (c = [`HIDDEN_PARSIMONY_SE`]), and the
//! committee is chosen from the candidates of at most h hidden units — the
//! one-standard-error rule (Breiman, Friedman, Olshen & Stone 1984,
//! *Classification and Regression Trees*, §3.4.3; Hastie, Tibshirani &
//! Friedman 2009, *The Elements of Statistical Learning*, §7.10), which the
//! noise model's choice applies too (choice.rs).
//!
//! Why: a larger network wins the held-out NLPD inside the training rows
//! by margins within its noise, while where the rows are thin it carries
//! trends further (docs/benchmarks.md, "Eighth round").

use super::candidates::Trial;
use super::paired::{paired_se, row_nlpd};
use super::split::HeldOutSplit;
use crate::prec::HIDDEN_PARSIMONY_SE;

/// The ranked candidates (best first) restricted to those of at most the
/// parsimonious hidden-unit count, and that count; `None` (and the list
/// unchanged) when the best candidate has no held-out prediction.
pub(super) fn within_one_se<'t>(
    ranked: Vec<&'t Trial>,
    split: &HeldOutSplit,
) -> (Vec<&'t Trial>, Option<usize>) {
    let Some(best) = ranked.first().and_then(|t| t.heldout.as_ref()) else {
        return (ranked, None);
    };
    let best_nlpd = row_nlpd(best, split.t_ho.view());
    let mut sizes: Vec<usize> = ranked.iter().map(|t| t.record.n_hidden).collect();
    sizes.sort_unstable();
    sizes.dedup();
    let cap = sizes.into_iter().find(|&h| {
        // ranked is best first, so the first of size h is its best
        let Some(heldout) = ranked
            .iter()
            .find(|t| t.record.n_hidden == h)
            .and_then(|t| t.heldout.as_ref())
        else {
            return false;
        };
        let nlpd = row_nlpd(heldout, split.t_ho.view());
        let n = nlpd.len() as f64;
        let m = nlpd.iter().zip(&best_nlpd).map(|(a, b)| a - b).sum::<f64>() / n;
        m <= HIDDEN_PARSIMONY_SE * paired_se(&nlpd, &best_nlpd)
    });
    match cap {
        Some(h) => (
            ranked.into_iter().filter(|t| t.record.n_hidden <= h).collect(),
            Some(h),
        ),
        None => (ranked, None),
    }
}

#[cfg(test)]
mod tests {
    use super::super::candidates::CandidateSearch;
    use super::super::stage_fixture::{params, small_data, Silent};
    use super::*;
    use crate::committee::CommitteeParams;
    use crate::evidence::FitSettings;

    /// The cap is the smallest size whose best candidate is within one
    /// paired SE of the best candidate (checked here from the per-row NLPDs
    /// by hand: mean difference and sd/√n on n − 1, the paired t-test's SE,
    /// Rice §11.3); every smaller size's best is beyond it, and the list
    /// keeps exactly the ranked candidates of at most that size, in order.
    #[test]
    fn the_cap_is_the_smallest_size_within_one_se_of_the_best() {
        let (x, t) = small_data(60);
        let p: crate::committee::CheckedCommitteeParams = CommitteeParams::default()
            .hidden(1, 4)
            .restarts(2)
            .widen(false)
            .seed(5)
            .fit(FitSettings {
                max_cycles: 4,
                first_iters: 60,
                cycle_iters: 30,
                ..FitSettings::default()
            })
            .check()
            .expect("valid");
        let split = HeldOutSplit::new(&p, x.view(), t.view(), 1.0, "small").expect("split");
        let search = CandidateSearch::run(&p, &split, "y", &Silent);
        let ranked = search.ranked().expect("trained");
        let (kept, cap) = within_one_se(ranked.clone(), &split);
        let cap = cap.expect("a cap");
        let per_row = |tr: &Trial| row_nlpd(tr.heldout.as_ref().expect("held out"), split.t_ho.view());
        let best = per_row(ranked[0]);
        let lead = |h: usize| {
            let tr = ranked.iter().find(|tr| tr.record.n_hidden == h).expect("size tried");
            let d: Vec<f64> = per_row(tr).iter().zip(&best).map(|(a, b)| a - b).collect();
            let n = d.len() as f64;
            let m = d.iter().sum::<f64>() / n;
            let sd = (d.iter().map(|v| (v - m) * (v - m)).sum::<f64>() / (n - 1.0)).sqrt();
            (m, sd / n.sqrt())
        };
        let (m, se) = lead(cap);
        assert!(m <= HIDDEN_PARSIMONY_SE * se, "cap {cap}: {m} > {se}");
        for h in 1..cap {
            let (m, se) = lead(h);
            assert!(m > HIDDEN_PARSIMONY_SE * se, "size {h} was within: {m} <= {se}");
        }
        let expected: Vec<(usize, usize)> = ranked
            .iter()
            .filter(|tr| tr.record.n_hidden <= cap)
            .map(|tr| (tr.record.n_hidden, tr.record.restart))
            .collect();
        let got: Vec<(usize, usize)> =
            kept.iter().map(|tr| (tr.record.n_hidden, tr.record.restart)).collect();
        assert_eq!(got, expected);
        // the quick fixture's search gives the same kind of answer
        let q = params();
        let split = HeldOutSplit::new(&q, x.view(), t.view(), 1.0, "small").expect("split");
        let search = CandidateSearch::run(&q, &split, "y", &Silent);
        let (kept, cap) = within_one_se(search.ranked().expect("trained"), &split);
        assert!(kept.iter().all(|tr| tr.record.n_hidden <= cap.expect("a cap")));
    }
}
