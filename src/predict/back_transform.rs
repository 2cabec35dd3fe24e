//! A target's Gaussian on its learnt scale mapped back to an [`Estimate`]
//! in the target's units (the formulas are in [`crate::transform`]).

use super::Estimate;
use crate::fixedmath::FixedMath;
use crate::transform::TargetTransform;

impl TargetTransform {
    /// Map a Gaussian N(m, s²) on the z scale back to y; `noise_sd` is the
    /// noise part of s, `z975` the standard-normal 97.5 % quantile. The
    /// noise and model parts of a transformed target's sd are mapped by the
    /// slope of g⁻¹ at the median.
    pub fn back_transform(&self, m: f64, s: f64, noise_sd: f64, z975: f64) -> Estimate {
        let interval_kind = self.interval_kind();
        let model_sd = (s * s - noise_sd * noise_sd).max(0.0).sqrt();
        match *self {
            TargetTransform::Identity => Estimate {
                mean: m,
                median: m,
                sd: s,
                lo95: m - z975 * s,
                hi95: m + z975 * s,
                noise_sd,
                model_sd,
                interval_kind,
            },
            _ => {
                let (mean, sd) = match self {
                    TargetTransform::Log => {
                        let v = s * s;
                        let mean = (m + 0.5 * v).exp_fixed();
                        (mean, (v.exp_m1_fixed()).max(0.0).sqrt() * mean)
                    }
                    _ => self.moments_by_quadrature(m, s),
                };
                let slope = self.inverse_slope(m);
                Estimate {
                    mean,
                    median: self.inverse(m),
                    sd,
                    lo95: self.inverse(m - z975 * s),
                    hi95: self.inverse(m + z975 * s),
                    noise_sd: slope * noise_sd,
                    model_sd: slope * model_sd,
                    interval_kind,
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use crate::fixedmath::FixedMath;
    use approx::assert_abs_diff_eq;

    use crate::transform::TargetTransform;

    const Z: f64 = 1.959_963_984_540_054;

    #[test]
    fn log_normal_moments_match_the_closed_form_and_quadrature() {
        // Log-normal with μ = 3, σ = 0.4: mean e^{3.08} and median e^3
        // (Johnson, Kotz & Balakrishnan 1994, ch. 14).
        let r = TargetTransform::Log.back_transform(3.0, 0.4, 0.3, Z);
        assert_abs_diff_eq!(r.median, 3.0_f64.exp_fixed(), epsilon = 1e-12);
        assert_abs_diff_eq!(r.mean, 3.08_f64.exp_fixed(), epsilon = 1e-12);
        assert_abs_diff_eq!(r.lo95, (3.0 - Z * 0.4).exp_fixed(), epsilon = 1e-12);
        assert!(r.hi95 - r.median > r.median - r.lo95, "asymmetric");
        // the quadrature reproduces the closed form
        let (m, sd) = TargetTransform::Log.moments_by_quadrature(3.0, 0.4);
        assert_abs_diff_eq!(m, r.mean, epsilon = 1e-9 * r.mean);
        assert_abs_diff_eq!(sd, r.sd, epsilon = 1e-8 * r.sd);
    }

    #[test]
    fn identity_back_transform_is_the_gaussian() {
        let r = TargetTransform::Identity.back_transform(500.0, 10.0, 6.0, Z);
        assert_abs_diff_eq!(r.mean, 500.0, epsilon = 0.0);
        assert_abs_diff_eq!(r.hi95, 500.0 + Z * 10.0, epsilon = 1e-12);
        assert_abs_diff_eq!(r.model_sd, 8.0, epsilon = 1e-12);
    }
}
