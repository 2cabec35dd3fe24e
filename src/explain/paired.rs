//! Two models' errors on the same rows, paired: is the difference larger
//! than the table can show?
//!
//! # Formula
//!
//! On the n rows both models estimate, with errors e_i = y_i − μ_i and
//! per-row negative log predictive densities ℓ_i (as in
//! [`crate::metrics`]), the difference new − old of the mean NLPD is the
//! mean of the paired differences d_i = ℓ_new,i − ℓ_old,i, and its standard
//! error is that of a mean, sd(d)/√n (sd with n − 1): the paired t-test
//! (Student 1908; any statistics text, e.g. Rice, *Mathematical Statistics
//! and Data Analysis*, §11.3), t = d̄ / (sd(d)/√n).
//!
//! The RMSE is the square root of a mean, so its difference is not a mean
//! of per-row terms. Its standard error is the first-order (delta-method)
//! one (Casella & Berger, *Statistical Inference*, §5.5.4): with
//! R = RMSE, ∂R/∂(e_i²/n) = 1/(2R), so
//!
//! ```text
//! ΔRMSE = RMSE_new − RMSE_old,   u_i = e_new,i²/(2 RMSE_new) − e_old,i²/(2 RMSE_old)
//! SE(ΔRMSE) = sd(u)/√n
//! ```
//!
//! A difference is called shown when it exceeds twice its standard error
//! (about the 95 % two-sided level of a normal; common practice, no
//! source); otherwise the table cannot tell the models apart.

use serde::{Deserialize, Serialize};

use crate::committee::paired::se_of_mean;
use crate::prec::PAIRED_SHOWN_SE;

/// One measure's paired difference new − old.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct PairedFigure {
    /// Old model's value.
    pub old: f64,
    /// New model's value.
    pub new: f64,
    /// new − old (negative: the new model is better; both measures are
    /// lower-is-better).
    pub difference: f64,
    /// Standard error of the difference.
    pub se: f64,
    /// difference / se (the paired t statistic for NLPD).
    pub t: f64,
}

impl PairedFigure {
    /// The verdict in words, for a lower-is-better measure named `what`
    /// in `unit`.
    pub fn verdict(&self, what: &str, unit: &str) -> String {
        if self.se.is_nan() {
            return format!("{what}: too few rows to judge a difference");
        }
        if self.se <= 0.0 && self.difference.abs() <= 0.0 {
            return format!("{what}: no difference: the same on every row");
        }
        let (d, se) = (self.difference.abs(), self.se);
        if self.difference.abs() <= PAIRED_SHOWN_SE * se {
            format!(
                "{what}: no difference this table can show ({:+.4} ± {se:.4}{unit}, new − old)",
                self.difference
            )
        } else if self.difference < 0.0 {
            format!("{what}: the new model is better by {d:.4} ± {se:.4}{unit}")
        } else {
            format!("{what}: the new model is worse by {d:.4} ± {se:.4}{unit}")
        }
    }
}

/// RMSE and NLPD of two models on the same rows, paired.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct PairedComparison {
    /// Rows both models estimate.
    pub n: usize,
    /// RMSE, old and new, difference and its delta-method SE.
    pub rmse: PairedFigure,
    /// Mean NLPD, old and new, the mean paired difference and its SE.
    pub nlpd: PairedFigure,
}

/// A figure with the SE of the mean of its per-row differences `diffs`
/// (NaN, and with it t, for fewer than two rows).
fn figure(old: f64, new: f64, diffs: &[f64], difference: f64) -> PairedFigure {
    let se = se_of_mean(diffs);
    let se = if se.is_finite() { se } else { f64::NAN };
    PairedFigure {
        old,
        new,
        difference,
        se,
        t: difference / se,
    }
}

/// The paired comparison from each row's errors (measured − mean) and
/// negative log densities under the old and the new model (equal lengths,
/// the same rows in the same order). `None` without rows.
pub fn paired(
    old_err: &[f64],
    new_err: &[f64],
    old_nlpd: &[f64],
    new_nlpd: &[f64],
) -> Option<PairedComparison> {
    let n = old_err.len();
    if n == 0 || new_err.len() != n || old_nlpd.len() != n || new_nlpd.len() != n {
        return None;
    }
    let nf = n as f64;
    let rmse = |e: &[f64]| (e.iter().map(|x| x * x).sum::<f64>() / nf).sqrt();
    let (ro, rn) = (rmse(old_err), rmse(new_err));
    // a model with no error at all has no derivative of √ there: its term is 0
    let half = |e: f64, r: f64| if r > 0.0 { e * e / (2.0 * r) } else { 0.0 };
    let u: Vec<f64> = old_err
        .iter()
        .zip(new_err)
        .map(|(eo, en)| half(*en, rn) - half(*eo, ro))
        .collect();
    let d: Vec<f64> = old_nlpd.iter().zip(new_nlpd).map(|(a, b)| b - a).collect();
    let (lo, ln) = (
        old_nlpd.iter().sum::<f64>() / nf,
        new_nlpd.iter().sum::<f64>() / nf,
    );
    Some(PairedComparison {
        n,
        rmse: figure(ro, rn, &u, rn - ro),
        nlpd: figure(lo, ln, &d, d.iter().sum::<f64>() / nf),
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::fixedmath::FixedMath;
    use approx::assert_abs_diff_eq;

    /// t statistic of `scipy.stats.ttest_rel(nlpd_B, nlpd_A)` on the rows of
    /// [`known_bias_by_hand_and_scipy`]: SciPy 1.17.1, printed by
    /// tests/reference/paired_t.py.
    const SCIPY_TTEST_REL_T: f64 = 0.3550358012483632;

    /// Model B = model A + a bias of 1, both with sd 1: per row
    /// ℓ_B − ℓ_A = ((e − 1)² − e²)/2 = (1 − 2e)/2. Errors of A
    /// e = (1, −2, 0.5, 3, −1, 0): d = (−0.5, 2.5, 0, −2.5, 1.5, 0.5),
    /// mean 0.25, sd(d) = sd(e) = √(14.875/5) = √2.975, SE = √(2.975/6).
    /// Hand arithmetic; the t statistic also against SciPy's
    /// `stats.ttest_rel(nlpd_B, nlpd_A)` (tests/reference/paired_t.py,
    /// SciPy 1.17.1, run once for this project).
    #[test]
    fn known_bias_by_hand_and_scipy() {
        let ea = [1.0, -2.0, 0.5, 3.0, -1.0, 0.0];
        let eb: Vec<f64> = ea.iter().map(|e| e - 1.0).collect();
        let c = 0.5 * (2.0 * std::f64::consts::PI).ln_fixed();
        let la: Vec<f64> = ea.iter().map(|e| c + e * e / 2.0).collect();
        let lb: Vec<f64> = eb.iter().map(|e| c + e * e / 2.0).collect();
        let p = paired(&ea, &eb, &la, &lb).expect("rows");
        assert_eq!(p.n, 6);
        assert_abs_diff_eq!(p.nlpd.difference, 0.25, epsilon = 1e-14);
        assert_abs_diff_eq!(p.nlpd.se, (2.975_f64 / 6.0).sqrt(), epsilon = 1e-14);
        assert_abs_diff_eq!(p.nlpd.t, SCIPY_TTEST_REL_T, epsilon = 1e-9);
        // RMSE: A √(15.25/6), B: e − 1 = (0, −3, −0.5, 2, −2, −1) → √(18.25/6)
        let (ra, rb) = ((15.25_f64 / 6.0).sqrt(), (18.25_f64 / 6.0).sqrt());
        assert_abs_diff_eq!(p.rmse.old, ra, epsilon = 1e-14);
        assert_abs_diff_eq!(p.rmse.difference, rb - ra, epsilon = 1e-14);
        // delta-method SE by hand from u_i = e_B²/(2 rb) − e_A²/(2 ra)
        let u: Vec<f64> = ea
            .iter()
            .zip(&eb)
            .map(|(a, b)| b * b / (2.0 * rb) - a * a / (2.0 * ra))
            .collect();
        let mu = u.iter().sum::<f64>() / 6.0;
        let sd = (u.iter().map(|x| (x - mu).powi(2)).sum::<f64>() / 5.0).sqrt();
        assert_abs_diff_eq!(p.rmse.se, sd / 6.0_f64.sqrt(), epsilon = 1e-14);
        // 0.25 < 2 × 0.70: this table cannot tell them apart
        assert!(p.nlpd.verdict("NLPD", "").contains("no difference"));
    }

    /// A bias far above the scatter is shown, and in the right direction.
    #[test]
    fn a_clear_difference_gets_a_verdict() {
        let ea: Vec<f64> = (0..40).map(|i| 0.1 * ((i % 5) as f64 - 2.0)).collect();
        let eb: Vec<f64> = ea.iter().map(|e| e + 3.0).collect();
        let l = |e: &[f64]| e.iter().map(|x| 0.9189 + x * x / 2.0).collect::<Vec<f64>>();
        let p = paired(&eb, &ea, &l(&eb), &l(&ea)).expect("rows");
        assert!(p
            .nlpd
            .verdict("NLPD", "")
            .contains("the new model is better by"));
        assert!(p.rmse.verdict("RMSE", " MPa").contains("better"));
        let q = paired(&ea, &eb, &l(&ea), &l(&eb)).expect("rows");
        assert!(q.rmse.verdict("RMSE", "").contains("worse"));
        let same = paired(&ea, &ea, &l(&ea), &l(&ea)).expect("rows");
        assert!(same
            .nlpd
            .verdict("NLPD", "")
            .contains("the same on every row"));
        let one = paired(&ea[..1], &eb[..1], &l(&ea[..1]), &l(&eb[..1])).expect("row");
        assert!(one.nlpd.verdict("NLPD", "").contains("too few rows"));
    }
}
