//! Accuracy and honesty of estimates against measured values.
//!
//! # Formula
//!
//! For measured y_n, predictive mean μ_n and sd σ_n, n = 1..N:
//!
//! ```text
//! RMSE = √(mean (y − μ)²)        MAE = mean |y − μ|
//! R²   = 1 − Σ(y − μ)² / Σ(y − ȳ)²
//! NLPD = mean [ ½ ln(2π σ²) + (y − μ)² / (2σ²) ]      (nats per point)
//! coverage_68 = share with |y − μ| ≤ σ,  coverage_95 = share with |y − μ| ≤ 2σ
//! ```
//!
//! NLPD is the negative of the "test log-likelihood" of the uncertainty
//! benchmark literature (Hernández-Lobato & Adams 2015, ICML), in the
//! target's own units.
//!
//! For a target learnt on a transformed scale z = g(y) with z ~ N(m, s²),
//! [`evaluate_on_scale`] judges the error bars there and turns the density
//! back to the target's own scale by the change-of-variables rule:
//!
//! ```text
//! NLPD = mean [ ½ ln(2π s²) + (g(y) − m)² / (2s²) − ln |g′(y)| ]
//! coverage_68 = share with |g(y) − m| ≤ s,  coverage_95 = share with |g(y) − m| ≤ 2s
//! ```
//!
//! (the coverages then count values inside the back-transformed, asymmetric
//! intervals); RMSE, MAE and R² use the back-transformed mean.
//!
//! For a model with a share π of gross errors
//! ([`crate::committee::GrossErrorModel`]), s is the sd of a value free of
//! gross error and the density in the NLPD is the model's two-part predictive
//! (1 − π)·p_ν(g(y); m, s²) + π·N(g(y); t̄, s_t²) (Box & Tiao 1968), p_ν the
//! shape of a value free of gross error: Gaussian, or a unit-variance
//! Student-t ([`crate::committee::TailShape`]). The coverages count values
//! inside that shape's central 68.27 % and 95.45 % intervals, m ± q₆₈·s and
//! m ± q₉₅·s (q₆₈ = 1, q₉₅ = 2 for the Gaussian); `within_1sd` and
//! `within_2sd` count m ± s and m ± 2s whatever the shape.

use crate::fixedmath::FixedMath;
use serde::{Deserialize, Serialize};

use crate::committee::{GrossErrors, TailShape, ONE_SD_SHARE, TWO_SD_SHARE};

/// Evaluation of estimates against measurements.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Evaluation {
    /// Rows evaluated.
    pub n: usize,
    /// Root-mean-square error.
    pub rmse: f64,
    /// Mean absolute error.
    pub mae: f64,
    /// Coefficient of determination.
    pub r2: f64,
    /// Mean negative log predictive density (nats per point): Gaussian, or
    /// the two-part density of a model with a share of gross errors.
    pub nlpd: f64,
    /// Share of rows inside the central 68.27 % predictive interval (mean
    /// ± 1 sd when Gaussian).
    pub coverage_68: f64,
    /// Share of rows inside the central 95.45 % predictive interval
    /// (mean ± 2 sd when Gaussian).
    pub coverage_95: f64,
    /// Share of rows inside mean ± 1 sd, whatever the shape.
    pub within_1sd: f64,
    /// Share of rows inside mean ± 2 sd, whatever the shape.
    pub within_2sd: f64,
}

impl Evaluation {
    /// The measures by name, in the order of the table output.
    pub fn named(&self) -> [(&'static str, f64); 6] {
        [
            ("rmse", self.rmse),
            ("mae", self.mae),
            ("r2", self.r2),
            ("nlpd", self.nlpd),
            ("coverage_68", self.coverage_68),
            ("coverage_95", self.coverage_95),
        ]
    }
}

/// Evaluate means and sds against measurements. Returns `None` for no rows.
pub fn evaluate(measured: &[f64], mean: &[f64], sd: &[f64]) -> Option<Evaluation> {
    let zero = vec![0.0; measured.len()];
    evaluate_on_scale(measured, mean, measured, mean, sd, &zero, None)
}

/// Evaluate estimates of a target learnt on a transformed scale: `measured`
/// and `point` (the back-transformed means) on the target's own scale;
/// `z_measured` = g(y), `z_mean`, `z_sd` on the learnt scale; `log_jacobian`
/// = ln |g′(y)| per row (all zero for an untransformed target, when this is
/// exactly [`evaluate`]); `gross`, the model's gross-error part on the learnt
/// scale, when it has one. Returns `None` for no rows or unequal lengths.
pub fn evaluate_on_scale(
    measured: &[f64],
    point: &[f64],
    z_measured: &[f64],
    z_mean: &[f64],
    z_sd: &[f64],
    log_jacobian: &[f64],
    gross: Option<GrossErrors>,
) -> Option<Evaluation> {
    let n = measured.len();
    if n == 0
        || point.len() != n
        || z_measured.len() != n
        || z_mean.len() != n
        || z_sd.len() != n
        || log_jacobian.len() != n
    {
        return None;
    }
    let nf = n as f64;
    let ybar = measured.iter().sum::<f64>() / nf;
    let mut sse = 0.0;
    let mut sae = 0.0;
    let mut sst = 0.0;
    let mut nlpd = 0.0;
    let mut c1 = 0usize;
    let mut c2 = 0usize;
    let mut w1 = 0usize;
    let mut w2 = 0usize;
    let shape = gross.map_or(TailShape::new(None), |g| g.shape);
    let (q68, q95) = (
        shape.central_halfwidth(ONE_SD_SHARE),
        shape.central_halfwidth(TWO_SD_SHARE),
    );
    for i in 0..n {
        let (y, m) = (measured[i], point[i]);
        let r = y - m;
        sse += r * r;
        sae += r.abs();
        sst += (y - ybar).powi(2);
        let s = z_sd[i];
        let rz = z_measured[i] - z_mean[i];
        let ln_density = match gross {
            Some(g) => g.ln_density(z_measured[i], z_mean[i], s),
            None => {
                let v = s * s;
                -0.5 * (2.0 * std::f64::consts::PI * v).ln_fixed() - rz * rz / (2.0 * v)
            }
        };
        nlpd += -ln_density - log_jacobian[i];
        if rz.abs() <= q68 * s {
            c1 += 1;
        }
        if rz.abs() <= q95 * s {
            c2 += 1;
        }
        if rz.abs() <= s {
            w1 += 1;
        }
        if rz.abs() <= 2.0 * s {
            w2 += 1;
        }
    }
    Some(Evaluation {
        n,
        rmse: (sse / nf).sqrt(),
        mae: sae / nf,
        r2: if sst > 0.0 { 1.0 - sse / sst } else { f64::NAN },
        nlpd: nlpd / nf,
        coverage_68: c1 as f64 / nf,
        coverage_95: c2 as f64 / nf,
        within_1sd: w1 as f64 / nf,
        within_2sd: w2 as f64 / nf,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    #[test]
    fn log_scale_nlpd_is_the_log_normal_density() {
        // log-normal density at y: φ((ln y − m)/s)/(s·y) (Johnson, Kotz &
        // Balakrishnan 1994, ch. 14); y = e, m = 0.5, s = 0.5
        let y = std::f64::consts::E;
        let e = evaluate_on_scale(&[y], &[y], &[1.0], &[0.5], &[0.5], &[-1.0], None).expect("row");
        let density = (-0.5_f64).exp_fixed() / (0.5 * y * (2.0 * std::f64::consts::PI).sqrt());
        assert_abs_diff_eq!(e.nlpd, -density.ln_fixed(), epsilon = 1e-12);
        assert_abs_diff_eq!(e.coverage_68, 1.0, epsilon = 0.0);
    }

    /// With a Student-t shape (ν = 3) the coverages count the t's central
    /// intervals: ±0.691 sd and ±1.909 sd (SciPy 1.17.1, stats.t.ppf with
    /// ν = 3 scaled to unit variance, computed for this project), while
    /// within_1sd and within_2sd still count ±1 and ±2 sd.
    #[test]
    fn coverages_follow_the_shape() {
        let g = GrossErrors {
            share: 0.0,
            mean: 0.0,
            sd: 10.0,
            shape: crate::committee::TailShape::new(Some(3.0)),
        };
        // residuals of 0.5, 0.8, 1.5 and 1.95 sd
        let y = [0.5, 0.8, 1.5, 1.95];
        let zero = [0.0; 4];
        let one = [1.0; 4];
        let e = evaluate_on_scale(&y, &zero, &y, &zero, &one, &zero, Some(g)).expect("rows");
        assert_abs_diff_eq!(e.coverage_68, 0.25, epsilon = 1e-15);
        assert_abs_diff_eq!(e.within_1sd, 0.5, epsilon = 1e-15);
        assert_abs_diff_eq!(e.coverage_95, 0.75, epsilon = 1e-15);
        assert_abs_diff_eq!(e.within_2sd, 1.0, epsilon = 1e-15);
    }

    #[test]
    fn metrics_by_hand() {
        let e = evaluate(&[1.0, 2.0, 3.0], &[1.0, 2.5, 2.0], &[1.0, 1.0, 0.4]).expect("rows");
        assert_eq!(e.n, 3);
        assert_abs_diff_eq!(e.rmse, (1.25_f64 / 3.0).sqrt(), epsilon = 1e-15);
        assert_abs_diff_eq!(e.mae, 0.5, epsilon = 1e-15);
        assert_abs_diff_eq!(e.r2, 1.0 - 1.25 / 2.0, epsilon = 1e-15);
        assert_abs_diff_eq!(e.coverage_68, 2.0 / 3.0, epsilon = 1e-15);
        assert_abs_diff_eq!(e.coverage_95, 2.0 / 3.0, epsilon = 1e-15);
        // standard normal density at 0: ln φ(0) = −½ ln 2π (any statistics handbook)
        let z = evaluate(&[0.0], &[0.0], &[1.0]).expect("row");
        assert_abs_diff_eq!(
            z.nlpd,
            0.5 * (2.0 * std::f64::consts::PI).ln_fixed(),
            epsilon = 1e-15
        );
    }

    /// The two-part density of a model with gross errors against
    /// scipy.stats.norm (tests/reference/gross_error_share.py,
    /// SciPy 1.17.1).
    #[test]
    fn gross_error_density_matches_scipy() {
        let r = crate::committee::gross_errors_reference();
        let singles = r["singles"].as_array().expect("rows");
        let want = r["single_ln_density"].as_array().expect("densities");
        for (row, w) in singles.iter().zip(want) {
            let f: Vec<f64> = row
                .as_array()
                .expect("row")
                .iter()
                .map(|v| v.as_f64().expect("number"))
                .collect();
            let g = GrossErrors {
                share: f[3],
                mean: f[4],
                sd: f[5],
                shape: crate::committee::TailShape::new(None),
            };
            let e = evaluate_on_scale(&[f[0]], &[f[1]], &[f[0]], &[f[1]], &[f[2]], &[0.0], Some(g))
                .expect("row");
            let want = w.as_f64().expect("number");
            assert_abs_diff_eq!(-e.nlpd, want, epsilon = 1e-12);
        }
    }
}
