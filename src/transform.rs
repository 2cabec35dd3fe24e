//! Transforms of a target before it is learnt, and the way estimates are
//! mapped back.
//!
//! # Formula
//!
//! A target y is learnt on a scale z = g(y); the committee gives a Gaussian
//! predictive distribution z ~ N(m, s²) there. Mapped back through the
//! increasing inverse g⁻¹, quantiles stay quantiles, so
//!
//! ```text
//! median = g⁻¹(m)       lo95 = g⁻¹(m − 1.959964·s)       hi95 = g⁻¹(m + 1.959964·s)
//! ```
//!
//! an interval that is asymmetric about the median. The transforms:
//!
//! ```text
//! identity   z = y
//! log        z = ln y                                  (y > 0)
//! bounded    z = ln[(y − a + δ) / (b − y + δ)]         (a − δ < y < b + δ)
//! ```
//!
//! `log` suits quantities whose scatter grows with their level (Charpy
//! impact energy); `bounded` (a logit on the interval [a, b] widened by δ
//! on each side, so that values on the bounds themselves — 0 % or 100 %
//! shear — stay finite) suits quantities confined to an interval. Estimates
//! of a bounded target are clipped to [a, b].
//!
//! For the log transform the mean and sd of y are those of the log-normal
//! distribution, E y = exp(m + s²/2), Var y = (exp(s²) − 1)·exp(2m + s²)
//! (Johnson, Kotz & Balakrishnan 1994, *Continuous Univariate
//! Distributions* 1, ch. 14); for the bounded transform they are computed
//! by the trapezoidal rule on the Gaussian (exponentially accurate for
//! smooth integrands decaying this fast; Trefethen & Weideman 2014, SIAM
//! Review 56:385). The noise and model parts of the sd are mapped by the
//! slope of g⁻¹ at the median (the delta method). The mapping of a whole
//! estimate back to y is `TargetTransform::back_transform`, beside the
//! estimate it makes in [`crate::predict`].

use crate::fixedmath::FixedMath;
use serde::{Deserialize, Serialize};

use crate::prec::{QUADRATURE_HALF_WIDTH, QUADRATURE_STEP};

/// The transform a target is learnt through.
#[derive(Clone, Copy, Debug, Default, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum TargetTransform {
    /// Learnt as it is.
    #[default]
    Identity,
    /// Learnt as ln y; y must be > 0.
    Log,
    /// Learnt as ln[(y − lower + margin)/(upper − y + margin)].
    Bounded {
        /// Lower bound a (internal units).
        lower: f64,
        /// Upper bound b (internal units).
        upper: f64,
        /// Widening δ of the interval on each side (internal units, > 0).
        margin: f64,
    },
}

/// How an estimate's centre and interval were obtained.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum IntervalKind {
    /// On the target's own scale: symmetric, mean ± 1.96 sd for the
    /// Gaussian shape (± the Student-t's quantile for a heavy-tailed one).
    Normal,
    /// Gaussian on the log scale, mapped back: median and an asymmetric interval.
    LogNormal,
    /// Gaussian on the bounded (logit) scale, mapped back: median and an
    /// asymmetric interval inside the bounds.
    LogitNormal,
}

impl IntervalKind {
    /// The words used in output.
    pub fn describe(self) -> &'static str {
        match self {
            IntervalKind::Normal => "central 95 % interval on the target's own scale, symmetric (mean ± 1.96 sd for a Gaussian error shape)",
            IntervalKind::LogNormal => {
                "learnt on the log scale: median and central 95 % interval mapped back (asymmetric)"
            }
            IntervalKind::LogitNormal => {
                "learnt on a bounded (logit) scale: median and central 95 % interval mapped back (asymmetric, inside the bounds)"
            }
        }
    }
}

impl TargetTransform {
    /// True for [`TargetTransform::Identity`].
    pub fn is_identity(&self) -> bool {
        matches!(self, TargetTransform::Identity)
    }

    /// The transform's name as written in a schema.
    pub fn name(&self) -> &'static str {
        match self {
            TargetTransform::Identity => "none",
            TargetTransform::Log => "log",
            TargetTransform::Bounded { .. } => "bounded",
        }
    }

    /// The kind of interval estimates of this target carry.
    pub fn interval_kind(&self) -> IntervalKind {
        match self {
            TargetTransform::Identity => IntervalKind::Normal,
            TargetTransform::Log => IntervalKind::LogNormal,
            TargetTransform::Bounded { .. } => IntervalKind::LogitNormal,
        }
    }

    /// In words, the values the transform accepts.
    pub fn domain_text(&self) -> String {
        match self {
            TargetTransform::Identity => "any finite value".into(),
            TargetTransform::Log => {
                "a value above 0 (the target is learnt on the log scale)".into()
            }
            TargetTransform::Bounded {
                lower,
                upper,
                margin,
            } => format!(
                "a value from {} to {} (bounded target, margin {})",
                lower - margin,
                upper + margin,
                margin
            ),
        }
    }

    /// For a bounded target, the distances u = y − a + δ and v = b − y + δ
    /// of y from the widened bounds, when both are positive.
    fn distances(lower: f64, upper: f64, margin: f64, y: f64) -> Option<(f64, f64)> {
        let u = y - lower + margin;
        let v = upper - y + margin;
        (u > 0.0 && v > 0.0).then_some((u, v))
    }

    /// z = g(y); `None` outside the transform's domain.
    pub fn forward(&self, y: f64) -> Option<f64> {
        match *self {
            TargetTransform::Identity => Some(y),
            TargetTransform::Log => (y > 0.0).then(|| y.ln_fixed()),
            TargetTransform::Bounded {
                lower,
                upper,
                margin,
            } => Self::distances(lower, upper, margin, y).map(|(u, v)| (u / v).ln_fixed()),
        }
    }

    /// y = g⁻¹(z) (for a bounded target, clipped to its bounds).
    pub fn inverse(&self, z: f64) -> f64 {
        match *self {
            TargetTransform::Identity => z,
            TargetTransform::Log => z.exp_fixed(),
            TargetTransform::Bounded {
                lower,
                upper,
                margin,
            } => {
                let w = upper - lower + 2.0 * margin;
                (lower - margin + w * logistic(z)).clamp(lower, upper)
            }
        }
    }

    /// dy/dz at z (unclipped).
    pub(crate) fn inverse_slope(&self, z: f64) -> f64 {
        match *self {
            TargetTransform::Identity => 1.0,
            TargetTransform::Log => z.exp_fixed(),
            TargetTransform::Bounded {
                lower,
                upper,
                margin,
            } => {
                let p = logistic(z);
                (upper - lower + 2.0 * margin) * p * (1.0 - p)
            }
        }
    }

    /// ln |dz/dy| at y, the term that turns a density on the z scale into
    /// one on the y scale; `None` outside the domain.
    pub fn log_jacobian(&self, y: f64) -> Option<f64> {
        match *self {
            TargetTransform::Identity => Some(0.0),
            TargetTransform::Log => (y > 0.0).then(|| -y.ln_fixed()),
            TargetTransform::Bounded {
                lower,
                upper,
                margin,
            } => Self::distances(lower, upper, margin, y)
                .map(|(u, v)| (1.0 / u + 1.0 / v).ln_fixed()),
        }
    }

    /// The mean of y = g⁻¹(z), z ~ N(m, s²): m untransformed, the
    /// log-normal mean exp(m + s²/2) for the log, by quadrature for the
    /// bounded transform (the same arithmetic as the mean of
    /// `back_transform`).
    pub fn mean_back(&self, m: f64, s: f64) -> f64 {
        match self {
            TargetTransform::Identity => m,
            TargetTransform::Log => {
                let v = s * s;
                (m + 0.5 * v).exp_fixed()
            }
            _ => self.moments_by_quadrature(m, s).0,
        }
    }

    /// Mean and sd of g⁻¹(z), z ~ N(m, s²), by the trapezoidal rule in the
    /// standardised variable t = (z − m)/s on [−T, T].
    pub(crate) fn moments_by_quadrature(&self, m: f64, s: f64) -> (f64, f64) {
        let n = (QUADRATURE_HALF_WIDTH / QUADRATURE_STEP).round() as i64;
        let (mut w_sum, mut s1, mut s2) = (0.0, 0.0, 0.0);
        for k in -n..=n {
            let t = k as f64 * QUADRATURE_STEP;
            let w = (-0.5 * t * t).exp_fixed();
            let y = self.inverse(m + s * t);
            w_sum += w;
            s1 += w * y;
            s2 += w * y * y;
        }
        let mean = s1 / w_sum;
        let var = (s2 / w_sum - mean * mean).max(0.0);
        (mean, var.sqrt())
    }

    /// The noise part `noise_sd` of a sd on the z scale mapped back to y by
    /// the slope of g⁻¹ at the median g⁻¹(m) (the delta method); unchanged
    /// for an untransformed target.
    pub fn noise_sd_back(&self, m: f64, noise_sd: f64) -> f64 {
        match self {
            TargetTransform::Identity => noise_sd,
            _ => self.inverse_slope(m) * noise_sd,
        }
    }
}

/// 1/(1 + e^−z), computed without overflow.
fn logistic(z: f64) -> f64 {
    if z >= 0.0 {
        1.0 / (1.0 + (-z).exp_fixed())
    } else {
        let e = z.exp_fixed();
        e / (1.0 + e)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    #[test]
    fn inverse_undoes_forward() {
        let b = TargetTransform::Bounded {
            lower: 0.0,
            upper: 100.0,
            margin: 1.0,
        };
        for t in [TargetTransform::Identity, TargetTransform::Log, b] {
            for y in [0.5, 3.0, 27.0, 99.0, 100.0] {
                let z = t.forward(y).expect("in domain");
                assert_abs_diff_eq!(t.inverse(z), y, epsilon = 1e-10);
            }
        }
        assert!(TargetTransform::Log.forward(0.0).is_none());
        assert!(b.forward(101.5).is_none());
        // clipped to the bounds even far out on the z scale
        assert_abs_diff_eq!(b.inverse(50.0), 100.0, epsilon = 0.0);
    }

    #[test]
    fn log_jacobian_is_the_derivative_of_forward() {
        let b = TargetTransform::Bounded {
            lower: 0.0,
            upper: 100.0,
            margin: 1.0,
        };
        for t in [TargetTransform::Log, b] {
            let y = 37.0;
            let h = 1e-6;
            let d = (t.forward(y + h).expect("ok") - t.forward(y - h).expect("ok")) / (2.0 * h);
            assert_abs_diff_eq!(t.log_jacobian(y).expect("ok"), d.ln_fixed(), epsilon = 1e-7);
        }
    }
}
