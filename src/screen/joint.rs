//! The probability of meeting every requirement at once, with the
//! correlation of the targets' scatter.
//!
//! Each requirement k has its own probability p_k from its target's
//! predictive distribution (Gaussian or Student-t on the learnt scale,
//! [`super::requirement`]). The requirements are coupled by a Gaussian
//! copula (Nelsen 2006, *An Introduction to Copulas*, 2nd ed., §2.3): each
//! target at one set of conditions is a latent standard normal
//! X_g = Φ⁻¹(F_g(y)), F_g its predictive distribution function, so that
//!
//! ```text
//! y ≥ t  ⇔  X_g > Φ⁻¹(1 − p)        y ≤ t  ⇔  X_g < Φ⁻¹(p)
//! ```
//!
//! and the X_g are jointly normal with the correlation R of the targets'
//! scatter about their estimates (stored in the model,
//! [`crate::model::ScatterCorrelation`]). Several requirements on one
//! target at the same conditions bound one X_g from both sides. Then
//!
//! ```text
//! P(all) = P(lo_g < X_g < hi_g for every g),   X ~ N(0, R)
//! ```
//!
//! For Gaussian predictive distributions this is the multivariate normal
//! probability exactly; each requirement keeps its own probability
//! whatever its shape. With R = I it is the product of the groups'
//! probabilities. Two groups: the bivariate normal probability by Genz's
//! method (Drezner & Wesolowsky 1990, J. Stat. Comput. Simul. 35:101; Genz
//! 2004, Stat. Comput. 14:251) and inclusion–exclusion over the corners of
//! the rectangle. More than two with some correlation: seeded Monte Carlo
//! ([`JOINT_MC_SAMPLES`] draws), with its standard error reported.

use crate::fixedmath::FixedMath;
use ndarray::Array2;
use rand::SeedableRng;
use rand_distr::{Distribution, StandardNormal};
use serde::Serialize;
use statrs::distribution::{ContinuousCDF, Normal};

use crate::prec::{JOINT_MC_SAMPLES, JOINT_MC_SEED};

/// The joint probability and how it was computed.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct JointProbability {
    /// P(every requirement met).
    pub value: f64,
    /// Standard error of a Monte-Carlo value (`None` when computed exactly).
    pub mc_error: Option<f64>,
}

fn phi(x: f64) -> f64 {
    Normal::standard().cdf(x)
}

/// P(X > h, Y > k) for a standard bivariate normal pair with correlation
/// `r` (Genz 2004, the `bvnu` algorithm: Gauss–Legendre quadrature of
/// Drezner & Wesolowsky's integral over the correlation, with the
/// asymptotic expansion for |r| ≥ 0.925); accurate to about 1e-15.
pub fn bvn_upper(h: f64, k: f64, r: f64) -> f64 {
    if h == f64::INFINITY || k == f64::INFINITY {
        return 0.0;
    }
    if h == f64::NEG_INFINITY {
        return if k == f64::NEG_INFINITY { 1.0 } else { phi(-k) };
    }
    if k == f64::NEG_INFINITY {
        return phi(-h);
    }
    if r == 0.0 {
        return phi(-h) * phi(-k);
    }
    let (w, x): (&[f64], &[f64]) = if r.abs() < 0.3 {
        (
            &[0.1713244923791705, 0.3607615730481384, 0.4679139345726904],
            &[0.9324695142031522, 0.6612093864662647, 0.238619186083197],
        )
    } else if r.abs() < 0.75 {
        (
            &[
                0.04717533638651177,
                0.1069393259953183,
                0.1600783285433464,
                0.2031674267230659,
                0.2334925365383547,
                0.2491470458134029,
            ],
            &[
                0.9815606342467191,
                0.904117256370475,
                0.769902674194305,
                0.5873179542866171,
                0.3678314989981802,
                0.1252334085114692,
            ],
        )
    } else {
        (
            &[
                0.01761400713915212,
                0.04060142980038694,
                0.06267204833410906,
                0.08327674157670475,
                0.1019301198172404,
                0.1181945319615184,
                0.1316886384491766,
                0.1420961093183821,
                0.1491729864726037,
                0.1527533871307259,
            ],
            &[
                0.9931285991850949,
                0.9639719272779138,
                0.912234428251326,
                0.8391169718222188,
                0.7463319064601508,
                0.636053680726515,
                0.5108670019508271,
                0.3737060887154196,
                0.2277858511416451,
                0.07652652113349733,
            ],
        )
    };
    // nodes on [0, 2]: 1 − x and 1 + x, each with weight w
    let nodes: Vec<(f64, f64)> = w
        .iter()
        .zip(x)
        .flat_map(|(&w, &x)| [(w, 1.0 - x), (w, 1.0 + x)])
        .collect();
    let tp = 2.0 * std::f64::consts::PI;
    let mut k = k;
    let mut hk = h * k;
    let mut bvn = 0.0;
    if r.abs() < 0.925 {
        let hs = (h * h + k * k) / 2.0;
        let asr = r.asin_fixed() / 2.0;
        for &(w, x) in &nodes {
            let sn = (asr * x).sin_fixed();
            bvn += w * ((sn * hk - hs) / (1.0 - sn * sn)).exp_fixed();
        }
        return (bvn * asr / tp + phi(-h) * phi(-k)).clamp(0.0, 1.0);
    }
    if r < 0.0 {
        k = -k;
        hk = -hk;
    }
    if r.abs() < 1.0 {
        let as_ = 1.0 - r * r;
        let mut a = as_.sqrt();
        let bs = (h - k) * (h - k);
        let c = (4.0 - hk) / 8.0;
        let d = (12.0 - hk) / 80.0;
        let asr = -(bs / as_ + hk) / 2.0;
        if asr > -100.0 {
            bvn = a
                * asr.exp_fixed()
                * (1.0 - c * (bs - as_) * (1.0 - d * bs) / 3.0 + c * d * as_ * as_);
        }
        if hk > -100.0 {
            let b = bs.sqrt();
            let sp = tp.sqrt() * phi(-b / a);
            bvn -= (-hk / 2.0).exp_fixed() * sp * b * (1.0 - c * bs * (1.0 - d * bs) / 3.0);
        }
        a /= 2.0;
        for &(w, x) in &nodes {
            let xs = (a * x) * (a * x);
            let asr = -(bs / xs + hk) / 2.0;
            if asr > -100.0 {
                let sp = 1.0 + c * xs * (1.0 + 5.0 * d * xs);
                let rs = (1.0 - xs).sqrt();
                let ep = (-hk * xs / (2.0 * (1.0 + rs) * (1.0 + rs))).exp_fixed() / rs;
                bvn += a * w * asr.exp_fixed() * (ep - sp);
            }
        }
        bvn = -bvn / tp;
    }
    if r > 0.0 {
        bvn += phi(-h.max(k));
    } else if h >= k {
        bvn = -bvn;
    } else {
        let l = if h < 0.0 {
            phi(k) - phi(h)
        } else {
            phi(-h) - phi(-k)
        };
        bvn = l - bvn;
    }
    bvn.clamp(0.0, 1.0)
}

/// The requirements on one target at one set of conditions: bounds on its
/// latent normal X_g, lo < X_g < hi, and their probability, kept exactly
/// as the requirements' own probabilities give it (no round trip through
/// Φ⁻¹ and Φ).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct LatentGroup {
    /// Lower bound on X_g.
    pub lo: f64,
    /// Upper bound on X_g.
    pub hi: f64,
    /// Smallest probability of a `>=` requirement (1 without one).
    at_least: f64,
    /// Smallest probability of a `<=` requirement (1 without one).
    at_most: f64,
}

impl Default for LatentGroup {
    fn default() -> Self {
        LatentGroup {
            lo: f64::NEG_INFINITY,
            hi: f64::INFINITY,
            at_least: 1.0,
            at_most: 1.0,
        }
    }
}

impl LatentGroup {
    /// Add a requirement met with probability `p`: `at_least` for `>=`,
    /// else `<=`.
    pub fn require(&mut self, at_least: bool, p: f64) {
        let (lo, hi) = latent_bounds(at_least, p);
        self.lo = self.lo.max(lo);
        self.hi = self.hi.min(hi);
        if at_least {
            self.at_least = self.at_least.min(p);
        } else {
            self.at_most = self.at_most.min(p);
        }
    }

    /// P(lo < X_g < hi) = P(≥ part) + P(≤ part) − 1 (at least 0).
    pub fn probability(&self) -> f64 {
        (self.at_least + self.at_most - 1.0).clamp(0.0, 1.0)
    }
}

/// The bounds (lo, hi) on a group's latent normal X_g that a requirement
/// with probability `p` of being met sets: `at_least` for `>=`, else `<=`.
pub fn latent_bounds(at_least: bool, p: f64) -> (f64, f64) {
    let q = |v: f64| {
        if v <= 0.0 {
            f64::NEG_INFINITY
        } else if v >= 1.0 {
            f64::INFINITY
        } else {
            Normal::standard().inverse_cdf(v)
        }
    };
    if at_least {
        (q(1.0 - p), f64::INFINITY)
    } else {
        (f64::NEG_INFINITY, q(p))
    }
}

/// P(lo_g < X_g < hi_g for every g) for X ~ N(0, `corr`): the groups and
/// the correlation of their latent normals (1 on the diagonal), by the
/// method of the module documentation. Without correlation it is the
/// product of the groups' own probabilities, exactly.
pub fn joint_probability(groups: &[LatentGroup], corr: &[Vec<f64>]) -> JointProbability {
    let exact = |value: f64| JointProbability {
        value: value.clamp(0.0, 1.0),
        mc_error: None,
    };
    let d = groups.len();
    let bounds: Vec<(f64, f64)> = groups.iter().map(|g| (g.lo, g.hi)).collect();
    let marginal: Vec<f64> = groups.iter().map(LatentGroup::probability).collect();
    let independent = (0..d).all(|i| (0..d).all(|j| i == j || corr[i][j] == 0.0));
    if independent || d < 2 || marginal.iter().any(|&v| v <= 0.0) {
        return exact(marginal.iter().product());
    }
    if d == 2 {
        let r = corr[0][1].clamp(-1.0, 1.0);
        let ((a1, b1), (a2, b2)) = (bounds[0], bounds[1]);
        // P(a1 < X < b1, a2 < Y < b2) from the upper orthants at the corners
        let u = |h: f64, k: f64| bvn_upper(h, k, r);
        return exact(u(a1, a2) - u(b1, a2) - u(a1, b2) + u(b1, b2));
    }
    let l = positive_definite_factor(corr);
    let mut rng = rand_xoshiro::Xoshiro256PlusPlus::seed_from_u64(JOINT_MC_SEED);
    let mut z = vec![0.0; d];
    let mut hits = 0usize;
    for _ in 0..JOINT_MC_SAMPLES {
        for v in z.iter_mut() {
            *v = StandardNormal.sample(&mut rng);
        }
        let all = (0..d).all(|i| {
            let x: f64 = (0..=i).map(|j| l[[i, j]] * z[j]).sum();
            x > bounds[i].0 && x < bounds[i].1
        });
        hits += usize::from(all);
    }
    let n = JOINT_MC_SAMPLES as f64;
    let value = hits as f64 / n;
    JointProbability {
        value,
        mc_error: Some((value * (1.0 - value) / n).sqrt().max(1.0 / n)),
    }
}

/// The Cholesky factor of `corr`, shrunk towards the identity
/// ((1 − λ)R + λI, λ in steps of 0.05) when pairwise correlations
/// estimated on different rows do not form a positive-definite matrix.
fn positive_definite_factor(corr: &[Vec<f64>]) -> Array2<f64> {
    let d = corr.len();
    for step in 0..=20 {
        let lambda = f64::from(step) * 0.05;
        let r = Array2::from_shape_fn((d, d), |(i, j)| {
            if i == j {
                1.0
            } else {
                (1.0 - lambda) * corr[i][j]
            }
        });
        if let Some(l) = crate::linalg::Cholesky::new(r.view()) {
            return l.into_lower();
        }
    }
    Array2::eye(d)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// P(X ≥ a, Y ≥ b) for a standard bivariate normal with correlation ρ,
    /// against SciPy 1.17.1 `multivariate_normal.cdf` (values written by
    /// tests/reference/bivariate_normal.py, run once; by symmetry
    /// P(X ≥ a, Y ≥ b) = CDF(−a, −b) at the same ρ).
    fn at_least(p: f64) -> LatentGroup {
        let mut g = LatentGroup::default();
        g.require(true, p);
        g
    }

    fn bounds(lo: f64, hi: f64) -> LatentGroup {
        let mut g = LatentGroup::default();
        g.require(true, phi(-lo));
        g.require(false, phi(hi));
        g
    }

    #[test]
    fn bivariate_upper_matches_scipy() {
        for &(a, b, rho, want) in reference::BIVARIATE {
            let got = bvn_upper(a, b, rho);
            assert!(
                (got - want).abs() < 1e-9,
                "a {a} b {b} rho {rho}: {got} vs {want}"
            );
            let j = joint_probability(
                &[at_least(phi(-a)), at_least(phi(-b))],
                &[vec![1.0, rho], vec![rho, 1.0]],
            );
            assert!((j.value - want).abs() < 1e-9, "{} vs {want}", j.value);
            assert!(j.mc_error.is_none());
        }
    }

    /// Rectangles (two-sided bounds) against SciPy's
    /// `multivariate_normal.cdf(hi, lower_limit=lo)` (same script).
    #[test]
    fn rectangles_match_scipy() {
        for &(lo1, hi1, lo2, hi2, rho, want) in reference::BOXES {
            let j = joint_probability(
                &[bounds(lo1, hi1), bounds(lo2, hi2)],
                &[vec![1.0, rho], vec![rho, 1.0]],
            );
            assert!((j.value - want).abs() < 1e-9, "{} vs {want}", j.value);
        }
    }

    /// ρ = 0 gives the product of the requirements' probabilities.
    #[test]
    fn zero_correlation_is_the_product() {
        let p = [0.9, 0.7, 0.4];
        let b: Vec<LatentGroup> = p.iter().map(|&v| at_least(v)).collect();
        let id = vec![
            vec![1.0, 0.0, 0.0],
            vec![0.0, 1.0, 0.0],
            vec![0.0, 0.0, 1.0],
        ];
        let j = joint_probability(&b, &id);
        assert!((j.value - 0.9 * 0.7 * 0.4).abs() < 1e-12);
        assert!((bvn_upper(0.3, -0.2, 0.0) - phi(-0.3) * phi(0.2)).abs() < 1e-15);
        // a near-zero correlation through the quadrature, not the shortcut
        let j = joint_probability(&b[..2], &[vec![1.0, 1e-12], vec![1e-12, 1.0]]);
        assert!((j.value - 0.9 * 0.7).abs() < 1e-9);
    }

    /// `>=` and `<=` on one latent variable: the interval's probability.
    #[test]
    fn one_group_two_sided() {
        // P(−1 < X < 1) = 0.682689 (standard normal table)
        let j = joint_probability(&[bounds(-1.0, 1.0)], &[vec![1.0]]);
        assert!((j.value - 0.682_689).abs() < 1e-6, "{}", j.value);
        assert!(joint_probability(&[bounds(0.5, 0.5)], &[vec![1.0]]).value < 1e-12);
    }

    /// Three requirements by Monte Carlo, against SciPy's trivariate
    /// normal CDF (tests/reference/bivariate_normal.py), within four
    /// standard errors of the sampling.
    #[test]
    fn trivariate_by_sampling_matches_scipy_within_its_error() {
        let (h, corr, want) = reference::TRIVARIATE;
        let b: Vec<LatentGroup> = h.iter().map(|&v| at_least(phi(-v))).collect();
        let c: Vec<Vec<f64>> = corr.iter().map(|r| r.to_vec()).collect();
        let j = joint_probability(&b, &c);
        let se = j.mc_error.expect("sampled");
        assert!(se < 0.0035, "se {se}");
        assert!(
            (j.value - want).abs() < 4.0 * se,
            "{} vs {want} (se {se})",
            j.value
        );
    }
}

#[cfg(test)]
mod reference;
