//! The calibration curve: observed against nominal coverage of central
//! predictive intervals.
//!
//! # Formula
//!
//! For a nominal level p the central interval of a Gaussian predictive
//! distribution N(m, s²) on the scale the target is learnt on is
//! m ± q_p·s with q_p = Φ⁻¹((1 + p)/2); for a committee with a Student-t
//! shape ([`crate::committee::TailShape`]) q_p is that shape's quantile. The observed coverage is the share
//! of rows whose measured value (on that scale) falls inside. When the
//! error bars are honest and the rows independent, the count inside is
//! Binomial(n, p), so the observed share has sd √(p(1 − p)/n) about p
//! (the binomial variance; any statistics handbook). The curve is drawn
//! for p = 10 %, 20 %, …, 90 %, 95 %, 99 %.

use crate::committee::TailShape;
use serde::{Deserialize, Serialize};

/// The nominal levels of the calibration curve.
pub const CALIBRATION_LEVELS: [f64; 11] = [0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 0.95, 0.99];

/// One point of the calibration curve.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct CalibrationPoint {
    /// Nominal coverage p.
    pub nominal: f64,
    /// Observed share of rows inside the central p interval.
    pub observed: f64,
    /// Rows judged.
    pub n: usize,
    /// Binomial sd of the observed share under honest error bars,
    /// √(p(1 − p)/n).
    pub binomial_sd: f64,
}

/// The calibration curve of measured values `z` against predictive means
/// `m` and sds `s` (all on the learnt scale) with the scatter's `shape`;
/// empty for no rows.
pub fn calibration_curve(
    z: &[f64],
    m: &[f64],
    s: &[f64],
    shape: TailShape,
) -> Vec<CalibrationPoint> {
    let n = z.len().min(m.len()).min(s.len());
    if n == 0 {
        return Vec::new();
    }
    CALIBRATION_LEVELS
        .iter()
        .map(|&p| {
            let q = shape.central_halfwidth(p);
            let inside = (0..n).filter(|&i| (z[i] - m[i]).abs() <= q * s[i]).count();
            CalibrationPoint {
                nominal: p,
                observed: inside as f64 / n as f64,
                n,
                binomial_sd: (p * (1.0 - p) / n as f64).sqrt(),
            }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::fixedmath::FixedMath;
    use rand::SeedableRng;
    use rand_distr::{Distribution, Normal as RNormal};
    use rand_xoshiro::Xoshiro256PlusPlus;

    /// Every level within 3 binomial sds of the diagonal.
    fn assert_on_diagonal(curve: &[CalibrationPoint]) {
        for p in curve {
            assert!(
                (p.observed - p.nominal).abs() <= 3.0 * p.binomial_sd,
                "level {}: observed {}",
                p.nominal,
                p.observed
            );
        }
    }

    /// Draws from each row's own predictive distribution: the curve lies
    /// within 3 binomial sds of the diagonal at every level (each level
    /// fails with probability 0.0027 under the normal approximation, all
    /// 11 together with at most 0.03 by the union bound; the seed is fixed,
    /// so the test is deterministic). With the sds halved the same draws
    /// fall far outside.
    #[test]
    fn draws_from_the_predictive_lie_on_the_diagonal() {
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(11);
        let n = 4000;
        let m: Vec<f64> = (0..n)
            .map(|i| (i as f64 * 0.01).sin_fixed() * 5.0)
            .collect();
        let s: Vec<f64> = (0..n).map(|i| 0.5 + (i % 7) as f64 * 0.3).collect();
        let e = RNormal::new(0.0, 1.0).expect("sd 1");
        let z: Vec<f64> = m
            .iter()
            .zip(&s)
            .map(|(m, s)| m + s * e.sample(&mut rng))
            .collect();
        let curve = calibration_curve(&z, &m, &s, TailShape::new(None));
        assert_eq!(curve.len(), CALIBRATION_LEVELS.len());
        assert_on_diagonal(&curve);
        let narrow: Vec<f64> = s.iter().map(|s| s / 2.0).collect();
        let bad = calibration_curve(&z, &m, &narrow, TailShape::new(None));
        assert!(bad
            .iter()
            .any(|p| (p.observed - p.nominal).abs() > 10.0 * p.binomial_sd));
    }

    /// Draws from a unit-variance Student-t (ν = 4; rand_distr's StudentT
    /// scaled by √((ν − 2)/ν)): the curve with the t's shape lies on the
    /// diagonal within 3 binomial sds, the Gaussian reading of the same sds
    /// over-covers at 50 % and 70 % (the t's peak is narrower).
    #[test]
    fn draws_from_a_t_lie_on_the_diagonal_with_its_shape() {
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(12);
        let n = 4000;
        let nu = 4.0_f64;
        let t = rand_distr::StudentT::new(nu).expect("dof");
        let scale = ((nu - 2.0) / nu).sqrt();
        let m = vec![1.0; n];
        let s = vec![2.0; n];
        let z: Vec<f64> = (0..n)
            .map(|_| 1.0 + 2.0 * scale * t.sample(&mut rng))
            .collect();
        assert_on_diagonal(&calibration_curve(&z, &m, &s, TailShape::new(Some(nu))));
        let gauss = calibration_curve(&z, &m, &s, TailShape::new(None));
        assert!(gauss[4].observed - 0.5 > 5.0 * gauss[4].binomial_sd);
        assert!(gauss[6].observed - 0.7 > 3.0 * gauss[6].binomial_sd);
    }

    #[test]
    fn levels_by_hand() {
        // rows at 0.5 and 2 sds: inside the 50 % interval (q = 0.674) one
        // of two, inside the 99 % interval (q = 2.576) both
        let c = calibration_curve(&[0.5, 2.0], &[0.0, 0.0], &[1.0, 1.0], TailShape::new(None));
        assert!((c[4].observed - 0.5).abs() < 1e-15);
        assert!((c[10].observed - 1.0).abs() < 1e-15);
        assert!((c[0].observed - 0.0).abs() < 1e-15);
    }
}
