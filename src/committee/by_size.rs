//! Stage 3 of training: the committee by size — the best n ranked
//! candidates, n chosen by the committee's held-out NLPD (constant noise).

use ndarray::Array1;

use super::candidates::Trial;
use super::split::{best_size, HeldOutSplit};
use super::{combine, Member};

/// The ranked candidates and the constant-noise committee chosen from them.
pub(super) struct ConstantCommittee<'t> {
    /// The candidates that trained, best first.
    pub ranked: Vec<&'t Trial>,
    /// Held-out means of the first `max_size` ranked candidates.
    means: Vec<Array1<f64>>,
    /// Held-out variances of the first `max_size` ranked candidates.
    vars: Vec<Array1<f64>>,
    /// Held-out NLPD of the committee of the best 1, 2, … candidates.
    pub nlpd_by_size: Vec<f64>,
    /// Chosen size.
    pub n_members: usize,
}

impl<'t> ConstantCommittee<'t> {
    /// Score the committees of the best 1 … min(ranked, `max_members`)
    /// candidates on the held-out part and keep the best size.
    pub fn choose(ranked: Vec<&'t Trial>, max_members: usize, split: &HeldOutSplit) -> Self {
        let max_size = ranked.len().min(max_members);
        // every ranked trial trained, so each has held-out predictions
        let (means, vars): (Vec<Array1<f64>>, Vec<Array1<f64>>) = ranked[..max_size]
            .iter()
            .filter_map(|t| t.heldout.clone())
            .unzip();
        let nlpd_by_size = split.nlpd_by_size(&means, &vars);
        let n_members = best_size(&nlpd_by_size);
        ConstantCommittee {
            ranked,
            means,
            vars,
            nlpd_by_size,
            n_members,
        }
    }

    /// Candidates that may be scored for the other stages: the first
    /// `max_size` ranked ones.
    pub fn max_size(&self) -> usize {
        self.means.len()
    }

    /// Held-out NLPD of the chosen committee.
    pub fn nlpd(&self) -> f64 {
        self.nlpd_by_size[self.n_members - 1]
    }

    /// Held-out mean and variance of the chosen committee (scaled units).
    pub fn heldout(&self) -> (Array1<f64>, Array1<f64>) {
        combine(&self.means[..self.n_members], &self.vars[..self.n_members])
    }

    /// The chosen candidates.
    pub fn chosen(&self) -> &[&'t Trial] {
        &self.ranked[..self.n_members]
    }

    /// The chosen candidates as members fitted on the training part.
    pub fn provisional_members(&self) -> Vec<Member> {
        self.chosen().iter().map(|t| t.member()).collect()
    }
}

#[cfg(test)]
mod tests {
    use super::super::candidates::CandidateSearch;
    use super::super::stage_fixture::{params, small_data, Silent};
    use super::*;

    /// The chosen size is the one with the least held-out NLPD, at most
    /// `max_members`, and the chosen committee's NLPD is the committee
    /// density of its members' predictions (Bishop 1995 §9.6: the
    /// committee mean and the mean variance plus the spread).
    #[test]
    fn the_size_minimises_the_heldout_nlpd() {
        let (x, t) = small_data(40);
        let p = params();
        let split = HeldOutSplit::new(&p, x.view(), t.view(), 1.0, "small").expect("split");
        let search = CandidateSearch::run(&p, &split, "y", &Silent);
        let c = ConstantCommittee::choose(search.ranked().expect("trained"), 3, &split);
        assert_eq!(c.nlpd_by_size.len(), c.ranked.len().min(3));
        assert!(c.nlpd_by_size.iter().all(|v| *v >= c.nlpd()));
        let (m, v) = c.heldout();
        assert!((split.nlpd(&m, &v) - c.nlpd()).abs() < 1e-12);
        // a committee of one is the best candidate alone
        let best = c.ranked[0].record.heldout_nlpd.expect("trained");
        assert!((c.nlpd_by_size[0] - best).abs() < 1e-12);
        assert_eq!(c.provisional_members().len(), c.n_members);
    }
}
