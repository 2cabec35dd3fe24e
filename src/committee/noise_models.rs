//! The noise models in the running after stages 3 and 4: the
//! constant-noise committee always, the varying-noise one when it was
//! fitted and the setting allows it.

use ndarray::Array1;

use super::by_size::ConstantCommittee;
use super::varying::VaryingCommittee;
use super::{Member, NoiseMode, NoiseSelection};
use crate::error::{Error, Result};

/// The constant-noise committee, the varying-noise one when fitted, and the
/// record of the choice between them.
pub(super) struct NoiseModels<'t> {
    pub constant: ConstantCommittee<'t>,
    pub varying: Option<VaryingCommittee<'t>>,
    /// The choice as recorded in the committee file (its `varying` set
    /// when the noise model is chosen, with the residual process).
    pub selection: NoiseSelection,
}

impl<'t> NoiseModels<'t> {
    /// # Errors
    /// [`Error::AllCandidatesFailed`] when varying noise was required and
    /// no candidate could be fitted with it.
    pub fn new(
        requested: NoiseMode,
        constant: ConstantCommittee<'t>,
        varying: Option<VaryingCommittee<'t>>,
    ) -> Result<Self> {
        let selection = NoiseSelection {
            requested,
            varying: false,
            constant_nlpd: Some(constant.nlpd()),
            varying_nlpd: varying.as_ref().and_then(VaryingCommittee::nlpd),
            varying_failures: varying
                .as_ref()
                .map_or_else(Vec::new, |v| v.failures.clone()),
            varying_margin_se: None,
        };
        if requested == NoiseMode::Varying && selection.varying_nlpd.is_none() {
            return Err(Error::AllCandidatesFailed {
                reasons: format!(
                    "no candidate could be fitted with varying noise: {}",
                    selection.varying_failures.join("; ")
                ),
            });
        }
        Ok(NoiseModels {
            constant,
            varying,
            selection,
        })
    }

    /// The noise models allowed to compete (false = constant, true =
    /// varying), constant first.
    pub fn allowed(&self) -> Vec<bool> {
        let varying_available = self.selection.varying_nlpd.is_some();
        [false, true]
            .into_iter()
            .filter(|&varying| match self.selection.requested {
                NoiseMode::Constant => !varying,
                NoiseMode::Varying => varying,
                NoiseMode::Auto => !varying || varying_available,
            })
            .collect()
    }

    /// The varying-noise committee; only called for an allowed varying model.
    fn varying(&self) -> &VaryingCommittee<'t> {
        self.varying
            .as_ref()
            .expect("varying noise is allowed only when it was fitted")
    }

    /// Held-out NLPD and held-out (mean, variance) of one noise model's
    /// committee.
    pub fn heldout(&self, varying: bool) -> (f64, (Array1<f64>, Array1<f64>)) {
        if varying {
            self.varying().heldout()
        } else {
            (self.constant.nlpd(), self.constant.heldout())
        }
    }

    /// One noise model's members as fitted on the training part.
    pub fn provisional_members(&self, varying: bool) -> Vec<Member> {
        if varying {
            self.varying().provisional_members()
        } else {
            self.constant.provisional_members()
        }
    }

    /// One noise model's chosen size and held-out NLPD by size.
    pub fn by_size(&self, varying: bool) -> (usize, Vec<f64>) {
        if varying {
            let v = self.varying();
            (v.n_members, v.nlpd_by_size.clone())
        } else {
            (self.constant.n_members, self.constant.nlpd_by_size.clone())
        }
    }
}

#[cfg(test)]
mod tests {
    use super::super::candidates::CandidateSearch;
    use super::super::split::HeldOutSplit;
    use super::super::stage_fixture::{params, small_data, Silent};
    use super::*;

    /// Constant noise alone is allowed when asked for or when no varying
    /// fit exists; requiring varying noise with none fitted is an error.
    #[test]
    fn the_allowed_models_follow_the_setting() {
        let (x, t) = small_data(40);
        let p = params();
        let split = HeldOutSplit::new(&p, x.view(), t.view(), 1.0, "small").expect("split");
        let search = CandidateSearch::run(&p, &split, "y", &Silent);
        let constant = || ConstantCommittee::choose(search.ranked().expect("trained"), 3, &split);
        let c = NoiseModels::new(NoiseMode::Constant, constant(), None).expect("constant");
        assert_eq!(c.allowed(), vec![false]);
        assert_eq!(c.selection.constant_nlpd, Some(c.constant.nlpd()));
        let a = NoiseModels::new(NoiseMode::Auto, constant(), None).expect("auto");
        assert_eq!(a.allowed(), vec![false]);
        let none = VaryingCommittee {
            members: Vec::new(),
            nlpd_by_size: Vec::new(),
            n_members: 1,
            failures: vec!["1 hidden, restart 0: stalled: x".into()],
        };
        match NoiseModels::new(NoiseMode::Varying, constant(), Some(none)) {
            Err(Error::AllCandidatesFailed { reasons }) => assert!(reasons.contains("stalled: x")),
            _ => panic!("expected AllCandidatesFailed"),
        }
    }
}
