//! From raw columns to the network's scaled space: per-column transforms
//! (identity or logarithm) and linear scaling of the training range to
//! [−0.5, 0.5].
//!
//! # Formula
//!
//! ```text
//! z = f(x)                          f = identity or ln
//! s = (z − z_min) / (z_max − z_min) − 0.5
//! ```
//!
//! with z_min, z_max taken over the training rows only. A strictly positive
//! input whose training skewness exceeds [`LOG_SKEW_THRESHOLD`] is modelled
//! through its logarithm (a heavy right tail otherwise crowds most rows into
//! a small part of the scaled range).

use crate::fixedmath::FixedMath;
use serde::{Deserialize, Serialize};

use crate::prec::LOG_SKEW_THRESHOLD;

/// A transform applied to a column before linear scaling.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Transform {
    /// No transform.
    Identity,
    /// Natural logarithm (values must be > 0).
    Log,
}

/// Scaling of one column, fitted on training data.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
pub struct ColumnScaling {
    /// Transform applied before scaling.
    pub transform: Transform,
    /// Smallest transformed training value (maps to −0.5).
    pub lo: f64,
    /// Largest transformed training value (maps to +0.5).
    pub hi: f64,
}

/// Sample skewness `m₃ / m₂^{3/2}`; 0 for fewer than three values or no spread.
pub fn skewness(values: &[f64]) -> f64 {
    let n = values.len() as f64;
    if values.len() < 3 {
        return 0.0;
    }
    let mean = values.iter().sum::<f64>() / n;
    let m2 = values.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / n;
    let m3 = values.iter().map(|v| (v - mean).powi(3)).sum::<f64>() / n;
    if m2 <= 0.0 {
        0.0
    } else {
        m3 / m2.powf_fixed(1.5)
    }
}

impl ColumnScaling {
    /// Fit on training values. With `allow_log`, a strictly positive,
    /// strongly right-skewed column gets the log transform. Returns `None`
    /// for a column with a single value (nothing to scale).
    pub fn fit(values: &[f64], allow_log: bool) -> Option<ColumnScaling> {
        let min = values.iter().cloned().fold(f64::INFINITY, f64::min);
        let max = values.iter().cloned().fold(f64::NEG_INFINITY, f64::max);
        if max.partial_cmp(&min) != Some(std::cmp::Ordering::Greater) {
            return None;
        }
        let transform = if allow_log && min > 0.0 && skewness(values) > LOG_SKEW_THRESHOLD {
            Transform::Log
        } else {
            Transform::Identity
        };
        let (lo, hi) = match transform {
            Transform::Identity => (min, max),
            Transform::Log => (min.ln_fixed(), max.ln_fixed()),
        };
        Some(ColumnScaling { transform, lo, hi })
    }

    /// Raw value → scaled value; `None` when the transform is undefined
    /// there (a log-scaled input at or below zero).
    pub fn scale(&self, x: f64) -> Option<f64> {
        let z = match self.transform {
            Transform::Identity => x,
            Transform::Log if x > 0.0 => x.ln_fixed(),
            Transform::Log => return None,
        };
        Some((z - self.lo) / (self.hi - self.lo) - 0.5)
    }

    /// Scaled value → transformed value (the inverse of the linear step).
    pub fn unscale_linear(&self, s: f64) -> f64 {
        (s + 0.5) * (self.hi - self.lo) + self.lo
    }

    /// Scaled value → raw value (the inverse of [`ColumnScaling::scale`]).
    pub fn unscale(&self, s: f64) -> f64 {
        let z = self.unscale_linear(s);
        match self.transform {
            Transform::Identity => z,
            Transform::Log => z.exp_fixed(),
        }
    }

    /// Width of the transformed range: one scaled unit in transformed units.
    pub fn width(&self) -> f64 {
        self.hi - self.lo
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    #[test]
    fn training_range_maps_to_half_unit_interval() {
        let s = ColumnScaling::fit(&[2.0, 4.0, 10.0], false).expect("spread");
        assert_abs_diff_eq!(s.scale(2.0).expect("ok"), -0.5, epsilon = 1e-15);
        assert_abs_diff_eq!(s.scale(10.0).expect("ok"), 0.5, epsilon = 1e-15);
        assert_abs_diff_eq!(
            s.unscale_linear(s.scale(7.3).expect("ok")),
            7.3,
            epsilon = 1e-12
        );
    }

    #[test]
    fn constant_column_has_no_scaling() {
        assert!(ColumnScaling::fit(&[3.0, 3.0], true).is_none());
    }

    #[test]
    fn skewed_positive_column_is_logged() {
        // concrete-age-like: most at 28 days, a few very long
        let mut v = vec![28.0; 40];
        v.extend([3.0, 7.0, 7.0, 365.0, 360.0, 270.0]);
        let s = ColumnScaling::fit(&v, true).expect("spread");
        assert_eq!(s.transform, Transform::Log);
        assert!(s.scale(0.0).is_none());
        let no = ColumnScaling::fit(&[0.0, 1.0, 2.0, 100.0], true).expect("spread");
        assert_eq!(
            no.transform,
            Transform::Identity,
            "zero present: never logged"
        );
    }

    #[test]
    fn skewness_of_symmetric_data_is_zero() {
        assert_abs_diff_eq!(skewness(&[1.0, 2.0, 3.0, 4.0, 5.0]), 0.0, epsilon = 1e-15);
    }
}
