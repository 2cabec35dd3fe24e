//! Paired comparison of two held-out predictions row by row: per-row
//! Gaussian NLPD and the standard error of the mean paired difference, on
//! which the one-standard-error rules of the noise model (choice.rs) and of
//! the model part beside the residual process (residual.rs) decide.

use ndarray::ArrayView1;

use super::split::HeldOut;
use crate::fixedmath::FixedMath;
use crate::prec::VAR_FLOOR;

/// Per-row Gaussian NLPD of a held-out prediction (`mean`, `var` scaled)
/// at targets `t` (scaled units: the target width's log cancels in a
/// paired difference).
pub(super) fn row_nlpd((mean, var): &HeldOut, t: ArrayView1<f64>) -> Vec<f64> {
    let c = (2.0 * std::f64::consts::PI).ln_fixed();
    mean.iter()
        .zip(var)
        .zip(t)
        .map(|((m, v), y)| {
            let v = v.max(VAR_FLOOR);
            0.5 * (c + v.ln_fixed()) + (y - m) * (y - m) / (2.0 * v)
        })
        .collect()
}

/// Standard error of the mean paired difference a − b, sd(d)/√n with the
/// sd on n − 1 (the paired t-test's; Rice, *Mathematical Statistics and
/// Data Analysis*, §11.3); infinite with fewer than two rows, so that
/// nothing counts as shown.
pub(super) fn paired_se(a: &[f64], b: &[f64]) -> f64 {
    let d: Vec<f64> = a.iter().zip(b).map(|(x, y)| x - y).collect();
    se_of_mean(&d)
}

/// Standard error of the mean of `d`, sd(d)/√n with the sd on n − 1;
/// infinite with fewer than two values. Also the SE of `mettle compare`'s
/// paired figures (explain::paired).
pub(crate) fn se_of_mean(d: &[f64]) -> f64 {
    let n = d.len() as f64;
    if d.len() < 2 {
        return f64::INFINITY;
    }
    let m = d.iter().sum::<f64>() / n;
    let var = d.iter().map(|x| (x - m) * (x - m)).sum::<f64>() / (n - 1.0);
    (var / n).sqrt()
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::Array1;

    /// t statistic of `scipy.stats.ttest_rel(nlpd_B, nlpd_A)` on six rows
    /// (model B = model A + a bias of 1, both with sd 1; errors of A
    /// e = (1, −2, 0.5, 3, −1, 0)): SciPy 1.17.1, printed by
    /// tests/reference/paired_t.py (the value src/explain/paired.rs holds).
    const SCIPY_TTEST_REL_T: f64 = 0.3550358012483632;

    /// The paired SE is the paired t-test's: mean difference / t equals it
    /// on SciPy's rows, and by hand sd(d)/√n with d = (1 − 2e)/2, mean
    /// 0.25, sd(d) = √2.975.
    #[test]
    fn paired_se_is_the_paired_t_tests() {
        let ea = [1.0, -2.0, 0.5, 3.0, -1.0, 0.0];
        let m = Array1::from(ea.to_vec());
        let (mb, one) = (m.mapv(|e| e - 1.0), Array1::ones(6));
        let zero = Array1::zeros(6);
        let la = row_nlpd(&(zero.clone() - &m, one.clone()), zero.view());
        let lb = row_nlpd(&(zero.clone() - &mb, one), zero.view());
        let se = paired_se(&lb, &la);
        assert!((se - 0.25 / SCIPY_TTEST_REL_T).abs() < 1e-9, "{se}");
        assert!((se - (2.975_f64 / 6.0).sqrt()).abs() < 1e-14, "{se}");
        assert!(paired_se(&[1.0], &[0.0]).is_infinite());
    }
}
