//! Fold results recombined: the pooled out-of-fold figures and their
//! standard errors over folds.
//!
//! # Formula
//!
//! Fold k holds n_k rows, N = Σ n_k. Every measure but R² is a mean over
//! rows (of a squared error, an absolute error, a −ln density, an
//! indicator), so the pooled value over all out-of-fold rows is the
//! n-weighted mean of the folds' values:
//!
//! ```text
//! RMSE = √(Σ n_k RMSE_k² / N)      MAE, NLPD, coverage = Σ n_k m_k / N
//! R²   = 1 − N·RMSE² / Σ (y − ȳ)²   (ȳ over the N out-of-fold rows)
//! ```
//!
//! The standard error of a measure is that of the mean of the K fold
//! values, sd_k(m_k)/√K, averaged over repeats as a mean of variances
//! (repeating the partition steadies the estimate but adds no new rows,
//! so it does not divide the error further). It is the usual naive
//! estimate: folds share training rows, so it tends to be too small, and
//! no unbiased estimate exists (Bengio & Grandvalet 2004, JMLR 5:1089).

use serde::{Deserialize, Serialize};

use crate::explain::CalibrationPoint;
use crate::metrics::Evaluation;

/// A figure with its standard error over folds.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
pub struct Figure {
    /// Pooled over the out-of-fold rows (mean over repeats).
    pub value: f64,
    /// Standard error over folds.
    pub se: f64,
}

/// The pooled evaluation of the rows of several folds, recombined from the
/// folds' evaluations; `measured` holds every out-of-fold row's measured
/// value (for R²). `None` without rows.
pub fn pool(folds: &[Evaluation], measured: &[f64]) -> Option<Evaluation> {
    let n: usize = folds.iter().map(|e| e.n).sum();
    if n == 0 {
        return None;
    }
    let nf = n as f64;
    let mean =
        |f: fn(&Evaluation) -> f64| folds.iter().map(|e| e.n as f64 * f(e)).sum::<f64>() / nf;
    let mse = mean(|e| e.rmse * e.rmse);
    let ybar = measured.iter().sum::<f64>() / measured.len().max(1) as f64;
    let sst: f64 = measured.iter().map(|y| (y - ybar).powi(2)).sum();
    Some(Evaluation {
        n,
        rmse: mse.sqrt(),
        mae: mean(|e| e.mae),
        r2: if sst > 0.0 {
            1.0 - nf * mse / sst
        } else {
            f64::NAN
        },
        nlpd: mean(|e| e.nlpd),
        coverage_68: mean(|e| e.coverage_68),
        coverage_95: mean(|e| e.coverage_95),
        within_1sd: mean(|e| e.within_1sd),
        within_2sd: mean(|e| e.within_2sd),
    })
}

/// Standard error of the mean of `values` (sd with K − 1 over √K); 0 for
/// fewer than two values.
pub fn se_of_mean(values: &[f64]) -> f64 {
    let k = values.len();
    if k < 2 {
        return 0.0;
    }
    let m = values.iter().sum::<f64>() / k as f64;
    let var = values.iter().map(|v| (v - m).powi(2)).sum::<f64>() / (k - 1) as f64;
    (var / k as f64).sqrt()
}

/// A measure over repeats: `pooled[r]` the pooled value of repeat r,
/// `per_fold[r]` its folds' values. Value: mean over repeats; SE: the root
/// mean square of the repeats' standard errors over folds.
pub fn figure(pooled: &[f64], per_fold: &[Vec<f64>]) -> Figure {
    let r = pooled.len().max(1) as f64;
    let se2 =
        per_fold.iter().map(|v| se_of_mean(v).powi(2)).sum::<f64>() / per_fold.len().max(1) as f64;
    Figure {
        value: pooled.iter().sum::<f64>() / r,
        se: se2.sqrt(),
    }
}

/// Calibration curves of several folds (same levels) recombined: at each
/// level the share inside is the n-weighted mean, n the sum.
pub fn pool_calibration(curves: &[Vec<CalibrationPoint>]) -> Vec<CalibrationPoint> {
    let Some(first) = curves.iter().find(|c| !c.is_empty()) else {
        return Vec::new();
    };
    first
        .iter()
        .enumerate()
        .map(|(j, p)| {
            let (mut n, mut inside) = (0usize, 0.0);
            for c in curves {
                if let Some(q) = c.get(j) {
                    n += q.n;
                    inside += q.observed * q.n as f64;
                }
            }
            let nf = n.max(1) as f64;
            CalibrationPoint {
                nominal: p.nominal,
                observed: inside / nf,
                n,
                binomial_sd: (p.nominal * (1.0 - p.nominal) / nf).sqrt(),
            }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::metrics::evaluate;
    use approx::assert_abs_diff_eq;

    /// Fold metrics recombine to the metrics of the pooled rows; the
    /// expected values are hand arithmetic on six rows in two folds.
    #[test]
    fn folds_recombine_to_pooled() {
        // fold A: y = (1, 2, 3), μ = (1, 2.5, 2), σ = (1, 1, 0.4)
        //   errors 0, −0.5, 1 → SSE 1.25, SAE 1.5; |e| ≤ σ: rows 1, 2
        // fold B: y = (4, 6, 8), μ = (5, 6, 6), σ = (2, 1, 1)
        //   errors −1, 0, 2 → SSE 5, SAE 3; |e| ≤ σ: rows 1, 2; ≤ 2σ: all
        let (ya, ma, sa) = ([1.0, 2.0, 3.0], [1.0, 2.5, 2.0], [1.0, 1.0, 0.4]);
        let (yb, mb, sb) = ([4.0, 6.0, 8.0], [5.0, 6.0, 6.0], [2.0, 1.0, 1.0]);
        let a = evaluate(&ya, &ma, &sa).expect("a");
        let b = evaluate(&yb, &mb, &sb).expect("b");
        let y: Vec<f64> = ya.iter().chain(&yb).copied().collect();
        let p = pool(&[a.clone(), b.clone()], &y).expect("pooled");
        // by hand: SSE 6.25 over 6 rows; SAE 4.5; ȳ = 4, SST = 9+4+1+0+4+16 = 34
        assert_eq!(p.n, 6);
        assert_abs_diff_eq!(p.rmse, (6.25_f64 / 6.0).sqrt(), epsilon = 1e-15);
        assert_abs_diff_eq!(p.mae, 0.75, epsilon = 1e-15);
        assert_abs_diff_eq!(p.r2, 1.0 - 6.25 / 34.0, epsilon = 1e-15);
        assert_abs_diff_eq!(p.coverage_68, 4.0 / 6.0, epsilon = 1e-15);
        assert_abs_diff_eq!(p.coverage_95, 5.0 / 6.0, epsilon = 1e-15);
        // and equal to evaluating the six rows at once
        let m: Vec<f64> = ma.iter().chain(&mb).copied().collect();
        let s: Vec<f64> = sa.iter().chain(&sb).copied().collect();
        let all = evaluate(&y, &m, &s).expect("all");
        assert_abs_diff_eq!(p.nlpd, all.nlpd, epsilon = 1e-14);
        assert_abs_diff_eq!(p.rmse, all.rmse, epsilon = 1e-15);
        assert_abs_diff_eq!(p.r2, all.r2, epsilon = 1e-15);
        // SE of the fold RMSEs by hand: √(1.25/3) and √(5/3); two values
        // x1, x2 have sd |x1 − x2|/√2, so SE = |x1 − x2|/2
        let f = figure(&[p.rmse], &[vec![a.rmse, b.rmse]]);
        assert_abs_diff_eq!(
            f.se,
            ((5.0_f64 / 3.0).sqrt() - (1.25_f64 / 3.0).sqrt()) / 2.0,
            epsilon = 1e-15
        );
    }

    #[test]
    fn calibration_pools_by_count() {
        let pt = |observed, n| CalibrationPoint {
            nominal: 0.5,
            observed,
            n,
            binomial_sd: 0.0,
        };
        // 1 of 4 and 3 of 4 inside → 4 of 8
        let c = pool_calibration(&[vec![pt(0.25, 4)], vec![pt(0.75, 4)]]);
        assert_eq!(c[0].n, 8);
        assert_abs_diff_eq!(c[0].observed, 0.5, epsilon = 1e-15);
        assert_abs_diff_eq!(c[0].binomial_sd, (0.25_f64 / 8.0).sqrt(), epsilon = 1e-15);
    }
}
