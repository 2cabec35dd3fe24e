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
