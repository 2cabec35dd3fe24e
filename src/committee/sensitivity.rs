//! How much a committee's mean uses each input on given rows: the weights
//! of the domain guard's relevance-weighted distance ([`crate::domain`]).

use super::Committee;

/// Step of the central difference in [`Committee::input_sensitivity`]
/// (scaled units: a hundredth of the input's training range).
const SENSITIVITY_STEP: f64 = 0.01;

impl Committee {
    /// How much the committee's mean uses each input on the rows `x`
    /// (scaled inputs): the root mean square over the rows of ∂μ/∂s_i, the
    /// change of the mean (scaled target units) across the input's whole
    /// training range at the local slope, by central differences of step
    /// 0.01 of the range; with several partitions the mean is their
    /// average (each partition's members' mean, then the mean over the
    /// partitions). An input the networks ignore scores near 0,
    /// whatever its ARD α (a straight-line effect carried by small input
    /// weights and large output weights scores in full). Empty rows give
    /// zeros.
    pub fn input_sensitivity(&self, x: ndarray::ArrayView2<f64>) -> Vec<f64> {
        let d = self.n_inputs;
        let n = x.nrows();
        let own = |c: &Committee, x: ndarray::ArrayView2<f64>| {
            let mut m = ndarray::Array1::<f64>::zeros(x.nrows());
            for member in &c.members {
                m += &member.arch(d).predict(&member.weights, x);
            }
            m / c.members.len().max(1) as f64
        };
        let mean = |x: ndarray::ArrayView2<f64>| {
            if self.further_partitions.is_empty() {
                return own(self, x);
            }
            let mut m = ndarray::Array1::<f64>::zeros(x.nrows());
            for c in self.partitions() {
                m += &own(c, x);
            }
            m / self.n_partitions() as f64
        };
        (0..d)
            .map(|i| {
                if n == 0 {
                    return 0.0;
                }
                let mut up = x.to_owned();
                let mut down = x.to_owned();
                up.column_mut(i).mapv_inplace(|v| v + SENSITIVITY_STEP);
                down.column_mut(i).mapv_inplace(|v| v - SENSITIVITY_STEP);
                let slope = (mean(up.view()) - mean(down.view())) / (2.0 * SENSITIVITY_STEP);
                (slope.mapv(|s| s * s).sum() / n as f64).sqrt()
            })
            .collect()
    }
}

#[cfg(test)]
mod tests {
    use super::super::relevance::tests::committee_with_alphas;
    use ndarray::array;

    /// Linear members (weights w, bias 0) have ∂μ/∂s_i = the mean of
    /// their w_i. Partition 1 holds w = (1, 0), partition 2 two members of
    /// w = (0, 1): the average of the partitions' means has slopes
    /// (1/2, 1/2), where pooling the three members alike would give
    /// (1/3, 2/3) and partition 1 alone (1, 0). Central differences are
    /// exact for a linear mean (common practice, no source).
    #[test]
    fn sensitivity_averages_the_partitions_means() {
        let mut first = committee_with_alphas(&[&[1.0, 1.0]]);
        first.members[0].weights = vec![1.0, 0.0, 0.0];
        let mut second = committee_with_alphas(&[&[1.0, 1.0], &[1.0, 1.0]]);
        for m in &mut second.members {
            m.weights = vec![0.0, 1.0, 0.0];
        }
        first.further_partitions.push(second);
        let x = array![[0.1, -0.2], [0.3, 0.4], [-0.4, 0.0]];
        let s = first.input_sensitivity(x.view());
        assert!((s[0] - 0.5).abs() < 1e-12, "{s:?}");
        assert!((s[1] - 0.5).abs() < 1e-12, "{s:?}");
    }
}
