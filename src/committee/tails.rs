//! The shape of a test's scatter about the committee's estimate: Gaussian,
//! or a Student-t with the same variance and heavier tails.
//!
//! # Method
//!
//! The evidence framework gives each estimate a mean m and a variance v
//! (noise plus model) and reads them as a Gaussian. Residuals of real test
//! archives are often more peaked and longer-tailed than that: on the
//! shared concrete benchmark the median |z| of the test rows is about 0.5
//! sd where a Gaussian has 0.67, while the mean square of z is near 1. A
//! Student-t with ν degrees of freedom and the same variance keeps the sd
//! the evidence framework estimated and changes only the shape:
//!
//! ```text
//! p(y) = t_ν((y − m) / (a·√v)) / (a·√v),   a = √((ν − 2)/ν),   ν > 2
//! ```
//!
//! (the Student-t as a scale mixture of Gaussians with a Gamma-distributed
//! precision: Lange, Little & Taylor 1989, "Robust statistical modeling
//! using the t distribution", JASA 84:881–896; Gelman et al. 2013,
//! *Bayesian Data Analysis*, 3rd ed., §17.2). ν is chosen from
//! [`TAIL_DOF_GRID`] (and ν = ∞, the Gaussian) by the held-out part
//! inside the training data, together with the share of gross errors (see
//! [`super::GrossErrorModel`]); the user's evaluation data play no part.
//!
//! The central intervals then follow the t's quantiles: the 68.27 % one
//! is narrower than ±1 sd and the 95.45 % one close to ±2 sd for ν ≥ 4.
//!
//! # Limits
//!
//! One ν per target, the same at every input. The networks are fitted by
//! weighted least squares; the t enters the refit only through the
//! responsibilities of the gross-error part, not through the t's own
//! per-row weights. The t of the noise is convolved with a Gaussian
//! parameter uncertainty in truth; the shape is applied to the sum.

use crate::fixedmath::FixedMath;
use statrs::distribution::{Continuous, ContinuousCDF, Normal, StudentsT};

use crate::prec::TAIL_DOF_GRID;

/// The standardised shape of the scatter: zero mean, unit variance.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum TailShape {
    /// The Gaussian (ν = ∞).
    Gaussian(Normal),
    /// A Student-t with ν degrees of freedom and unit variance.
    StudentT(StudentsT),
}

impl TailShape {
    /// The shape with `dof` degrees of freedom (`None`: the Gaussian).
    /// Values of `dof` at or below 2 (no finite variance) or not finite
    /// give the Gaussian.
    pub fn new(dof: Option<f64>) -> Self {
        match dof {
            Some(nu) if nu > 2.0 && nu.is_finite() => {
                let scale = ((nu - 2.0) / nu).sqrt();
                TailShape::StudentT(StudentsT::new(0.0, scale, nu).expect("valid t"))
            }
            _ => TailShape::Gaussian(Normal::standard()),
        }
    }

    /// ln p(y) for a value `y` with mean `m` and sd `s`.
    pub fn ln_density(&self, y: f64, m: f64, s: f64) -> f64 {
        let z = (y - m) / s;
        let ln_unit = match self {
            TailShape::Gaussian(d) => d.ln_pdf(z),
            TailShape::StudentT(d) => d.ln_pdf(z),
        };
        ln_unit - s.ln_fixed()
    }

    /// P(Y ≤ m + z·sd).
    pub fn cdf(&self, z: f64) -> f64 {
        match self {
            TailShape::Gaussian(d) => d.cdf(z),
            TailShape::StudentT(d) => d.cdf(z),
        }
    }

    /// The z (in sds) below which a share `p` of values lies.
    pub fn quantile(&self, p: f64) -> f64 {
        match self {
            TailShape::Gaussian(d) => d.inverse_cdf(p),
            TailShape::StudentT(d) => d.inverse_cdf(p),
        }
    }

    /// Half-width, in sds, of the central interval holding a share `p`
    /// (1 for p = 0.6827 and 1.96 for p = 0.95 when Gaussian).
    pub fn central_halfwidth(&self, p: f64) -> f64 {
        self.quantile(0.5 + 0.5 * p)
    }
}

/// The degrees of freedom tried on the held-out part, Gaussian first.
pub(crate) fn dof_candidates(heavy_tails: bool) -> Vec<Option<f64>> {
    let mut out = vec![None];
    if heavy_tails {
        out.extend(TAIL_DOF_GRID.iter().map(|&nu| Some(nu)));
    }
    out
}

/// Share of a Gaussian within ±1 sd: erf(1/√2) (Abramowitz & Stegun 1964,
/// Table 26.1).
pub const ONE_SD_SHARE: f64 = 0.682_689_492_137_085_9;

/// Share of a Gaussian within ±2 sd: erf(√2) (Abramowitz & Stegun 1964,
/// Table 26.1).
pub const TWO_SD_SHARE: f64 = 0.954_499_736_103_641_6;

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    /// Two-sided Student-t critical values t_{0.975, ν}: ν = 4 → 2.776,
    /// ν = 10 → 2.228 (NIST/SEMATECH e-Handbook of Statistical Methods,
    /// §1.3.6.7.2, table of upper critical values of the t distribution).
    /// In unit-variance form they are divided by √(ν/(ν − 2)).
    #[test]
    fn quantiles_match_the_t_table() {
        for (nu, t975) in [(4.0, 2.776), (10.0, 2.228)] {
            let shape = TailShape::new(Some(nu));
            let unit = shape.quantile(0.975) * (nu / (nu - 2.0)).sqrt();
            assert_abs_diff_eq!(unit, t975, epsilon = 5e-4);
        }
        let g = TailShape::new(None);
        assert_abs_diff_eq!(g.central_halfwidth(ONE_SD_SHARE), 1.0, epsilon = 1e-9);
        assert_abs_diff_eq!(g.central_halfwidth(TWO_SD_SHARE), 2.0, epsilon = 1e-9);
    }

    /// The unit-variance t integrates to one and has variance one
    /// (trapezoid rule on ±400 sd; the tails beyond hold < 1e-6 for ν = 5).
    #[test]
    fn the_shape_keeps_the_variance() {
        let shape = TailShape::new(Some(5.0));
        let (lo, hi, n) = (-400.0, 400.0, 800_000);
        let h = (hi - lo) / n as f64;
        let (mut mass, mut second) = (0.0, 0.0);
        for i in 0..=n {
            let z: f64 = lo + h * i as f64;
            let w = if i == 0 || i == n { 0.5 } else { 1.0 };
            let p = shape.ln_density(z, 0.0, 1.0).exp_fixed();
            mass += w * h * p;
            second += w * h * p * z * z;
        }
        assert_abs_diff_eq!(mass, 1.0, epsilon = 1e-6);
        assert_abs_diff_eq!(second, 1.0, epsilon = 2e-3);
    }

    /// A heavier tail puts less than 68.27 % within ±1 sd (the peak is
    /// narrower) and a dof at or below 2 falls back to the Gaussian.
    #[test]
    fn heavy_tails_narrow_the_central_interval() {
        let t4 = TailShape::new(Some(4.0));
        assert!(t4.central_halfwidth(ONE_SD_SHARE) < 0.9);
        let g = TailShape::new(Some(2.0));
        assert_abs_diff_eq!(g.cdf(1.0), Normal::standard().cdf(1.0), epsilon = 1e-12);
    }
}
