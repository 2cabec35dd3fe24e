//! A share of gross errors beside the committee's predictive, estimated on
//! the held-out part together with the predictive's shape (Gaussian or
//! Student-t, [`super::TailShape`]): below, N(t; m, v) stands for that
//! shape with mean m and variance v.
//!
//! # Method
//!
//! Test archives hold a few values that no smooth function of the inputs
//! explains — copying slips, a specimen from another heat, a test
//! outside its validity conditions. A Gaussian predictive gives such a value
//! a density of e^(−z²/2): one row 20 sds out costs 200 nats, more than a
//! hundred good rows gain. The contamination model of Box & Tiao (1968),
//! "A Bayesian approach to some outlier problems", Biometrika 55:119–129,
//! takes a measured value as
//!
//! ```text
//! p(t | x) = (1 − π)·N(t; m(x), v(x))  +  π·N(t; t̄, s_t²)
//! ```
//!
//! with m(x), v(x) the committee's mean and variance (its residual process
//! included), π the share of gross errors, and the second part the spread
//! of the target over the training rows (mean t̄, sd s_t): a gross error is
//! a value unrelated to the inputs. π is the posterior mode on the held-out
//! part inside the training data under a Beta(2, 2) prior, found by
//! expectation–maximisation (Dempster, Laird & Rubin 1977, JRSS B 39:1–38,
//! §3 on posterior modes; McLachlan & Peel 2000, *Finite Mixture Models*,
//! §2.8): with r_n the probability that held-out row n is free of gross
//! error,
//!
//! ```text
//! E-step  r_n = (1 − π)·N(t_n; m_n, v_n) / p(t_n | x_n)
//! M-step  π  = (Σ(1 − r_n) + 1) / (N + 2)
//! ```
//!
//! each step raising the log posterior. The M-step is Laplace's rule of
//! succession on the expected counts: a held-out part of N rows without a
//! single gross error still gives π = 1/(N + 2), because N clean rows do
//! not show that the next test cannot be a blunder. The user's evaluation
//! data play no part. The committee's mean and sd are left as they are: they describe a
//! test free of gross error; the log density of a measured value is that of
//! the two-part mixture.
//!
//! # Training with the gross-error part
//!
//! Once π is known, the chosen members are refitted on all the rows under
//! the same contamination model, by EM with π held at its held-out value:
//! the E-step gives each row its responsibility r_n from the member's
//! current estimate and noise variance σ_n² (1/β, or the varying noise at
//! x_n),
//!
//! ```text
//! r_n = (1 − π)·N(t_n; y_n, σ_n²) / [(1 − π)·N(t_n; y_n, σ_n²) + π·N(t_n; t̄, s_t²)]
//! ```
//!
//! and the M-step is the evidence fit with row n's error term weighted by
//! r_n and counted as r_n rows, so that β = (Σ r_n − γ) / Σ r_n ρ_n e_n²
//! (McLachlan & Peel 2000, §2.8, for the weighted M-step; the γ correction
//! is MacKay's). A row far outside the bulk then neither pulls the mean
//! nor widens the noise level that every other estimate's error bar rests
//! on. [`GROSS_ERROR_REFIT_ROUNDS`] rounds are run, each warm-started.
//!
//! # Calibration of the model variance
//!
//! The predictive variance is the noise variance plus the committee's
//! model part — the members' parameter variance gᵀA⁻¹g (Laplace) and
//! their spread about the committee mean — plus, with kriging, the
//! residual process's variance. When the noise is tiny the model part
//! dominates, and it is the least sure of them: the spread counts the
//! members' disagreement in full although their mean errs less than they
//! do (the ambiguity decomposition: the committee's squared error is the
//! members' mean squared error less their spread, Krogh & Vedelsby 1995,
//! "Neural network ensembles, cross validation, and active learning",
//! NIPS 7:231–238), the residual process then corrects the same misfit
//! again with a variance of its own, and the Laplace variance of a network
//! with a very large β rests on a quadratic approximation at its
//! sharpest. On invented near-noiseless data (docs/benchmarks.md,
//! "Calibration when the noise is tiny") the rms of z = (t − m)/√v on
//! fresh rows was 0.57 to 0.80: bands too wide. The held-out part
//! therefore also chooses a factor c on the committee's model part,
//!
//! ```text
//! v_c(x) = v_fixed(x) + c·(v(x) − v_fixed(x)),   c ∈ {2^(k/2): k = −8 … 4}
//! ```
//!
//! with v_fixed the noise variance plus the process's variance, jointly
//! with π and ν (each (c, ν) pair gets its own π by EM), c ≠ 1 only when
//! it gains more than ½·ln n nats in held-out log posterior over the n
//! held-out rows ([`MODEL_VAR_SCALE_PENALTY_PER_LN_ROW`], Schwarz's
//! criterion) — the variance scaling of Levi, Gispan, Giladi & Fetaya
//! (2022), "Evaluating and calibrating uncertainty prediction in
//! regression tasks", Sensors 22:5540, on the model part alone. The factor
//! is learnt on committees trained on the training part and applied to the
//! members refitted on all rows (both model parts shrink with the rows
//! alike, so the ratio is taken to carry over).
//!
//! Off by default ([`super::CommitteeParams::model_var_scale`]): on the
//! first 3 shared UCI splits of concrete, energy and yacht the held-out
//! part chose a factor of 1/16 or 1/8 on 8 of 9 splits and the test LL
//! fell (concrete −2.555 → −2.586, energy −0.350 → −0.404), most likely
//! because the held-out rows that rank the candidates, size the committee
//! and choose the noise model and process are optimistic about the
//! committee that won on them, and the factor reads that optimism as
//! over-wide bands (docs/benchmarks.md, "Calibration when the noise is
//! tiny").
//!
//! # Limits
//!
//! π is one number per target, estimated from the held-out part (20 % of
//! the training rows by default): with a few hundred rows it is known
//! roughly (one gross error more or less in 200 rows moves it by 0.5 %). The
//! gross-error part does not depend on the inputs. The candidates were
//! ranked, and π estimated, with networks trained under a Gaussian
//! likelihood; only the final refit uses the two-part one. The residual
//! process (kriging) takes every row's residual at full weight.

use crate::fixedmath::FixedMath;
use ndarray::{Array1, ArrayView1, ArrayView2};
use serde::{Deserialize, Serialize};
use statrs::consts::LN_SQRT_2PI;

use super::tails::{dof_candidates, TailShape};
use crate::evidence::{fit_model, DataModel, FitFailure, FitSettings, FittedNetwork, StartState};
use crate::prec::{
    GROSS_ERROR_EM_ITERS, GROSS_ERROR_EM_TOL, GROSS_ERROR_SHARE_MAX, GROSS_ERROR_SHARE_START,
    MODEL_VAR_SCALE_GRID, MODEL_VAR_SCALE_PENALTY_PER_LN_ROW, RESPONSIBILITY_FLOOR,
    TAIL_SHAPE_PENALTY_NATS, VAR_FLOOR,
};

/// EM rounds of the final refit under the contamination model.
pub const GROSS_ERROR_REFIT_ROUNDS: usize = 3;

/// The share of gross errors of one target, estimated on the held-out part,
/// in the scaled units the committee works in.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct GrossErrorModel {
    /// π: share of measured values that are gross errors.
    pub share: f64,
    /// t̄: mean of the target over the training rows (scaled units).
    pub background_mean: f64,
    /// s_t: sd of the target over the training rows (scaled units).
    pub background_sd: f64,
    /// Held-out rows π was estimated from.
    pub n_heldout: usize,
    /// Held-out NLPD of the committee's Gaussian alone (target units).
    pub heldout_nlpd_gaussian: f64,
    /// Held-out NLPD with the gross-error part (target units).
    pub heldout_nlpd: f64,
    /// Expected number of gross errors among all the training rows in the
    /// final refit (Σ(1 − r_n), mean over the members); `None` when the
    /// members were refitted with a Gaussian likelihood (model files
    /// before format 5).
    #[serde(default)]
    pub refit_gross_rows: Option<f64>,
    /// Members whose refit with the share failed and which were refitted
    /// with the Gaussian likelihood instead, with the reason.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub refit_fallbacks: Vec<String>,
    /// ν of the Student-t shape of a value free of gross error, chosen on
    /// the held-out part with the share ([`TailShape`]); `None`: Gaussian
    /// (and in model files before format 6).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub tail_dof: Option<f64>,
    /// c: the factor on the committee's model part of the predictive
    /// variance (the members' parameter variance and their spread; not the
    /// noise, not the residual process's variance), chosen on the held-out part; `None`: 1 (and
    /// in model files before the factor existed).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub model_var_scale: Option<f64>,
}

/// What the held-out part may choose beside the share of gross errors.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct HeldOutChoices {
    /// Estimate a share of gross errors (else π = 0).
    pub share: bool,
    /// Let a Student-t shape compete with the Gaussian.
    pub heavy_tails: bool,
    /// Let a factor on the model part of the variance compete with 1.
    pub model_var_scale: bool,
}

/// A held-out choice scored: (summed log posterior less the penalties,
/// mean log-likelihood, π, ν).
type Scored = (f64, f64, f64, Option<f64>);

/// ln N(t; m, v).
fn ln_normal(t: f64, m: f64, v: f64) -> f64 {
    -LN_SQRT_2PI - 0.5 * (v.ln_fixed() + (t - m).powi(2) / v)
}

/// ln(e^a + e^b) without overflow.
fn ln_add(a: f64, b: f64) -> f64 {
    let hi = a.max(b);
    if hi == f64::NEG_INFINITY {
        return hi;
    }
    hi + ((a - hi).exp_fixed() + (b - hi).exp_fixed()).ln_fixed()
}

impl GrossErrorModel {
    /// Estimate π, and with `heavy_tails` the shape of a value free of
    /// gross error, from held-out targets `t`, the committee's held-out
    /// means `mean` and variances `var` (scaled units), given the target's
    /// mean and sd over the training rows. Without `share`, π stays 0 and
    /// only the shape is chosen. Each ν of the grid (and the Gaussian) gets
    /// its own π by EM; the pair with the highest log posterior wins, a
    /// Student-t only when it gains more than [`TAIL_SHAPE_PENALTY_NATS`]
    /// over the held-out rows.
    /// `ln_width` turns a scaled NLPD into target units. `None` for no rows
    /// or a degenerate background. The model variance is taken as it is
    /// (see [`Self::fit_calibrated`] for the held-out factor on it).
    pub fn fit(
        mean: ArrayView1<f64>,
        var: ArrayView1<f64>,
        t: ArrayView1<f64>,
        background: (f64, f64),
        share: bool,
        heavy_tails: bool,
        ln_width: f64,
    ) -> Option<Self> {
        let choices = HeldOutChoices {
            share,
            heavy_tails,
            model_var_scale: false,
        };
        Self::fit_calibrated((mean, var, var), t, background, choices, ln_width)
    }

    /// [`Self::fit`] on a held-out prediction (mean, total variance, and
    /// the part of it that is not the committee's model part: noise and
    /// process variance), where with `choices.model_var_scale` the held-out part
    /// also chooses a factor c on the model part of the variance from
    /// [`MODEL_VAR_SCALE_GRID`] (module doc, "Calibration of the model
    /// variance"): each (c, ν) pair gets its own π by EM, and a c other
    /// than 1 must gain ½·ln n nats more ([`MODEL_VAR_SCALE_PENALTY_PER_LN_ROW`]).
    pub fn fit_calibrated(
        (mean, var, fixed_var): (ArrayView1<f64>, ArrayView1<f64>, ArrayView1<f64>),
        t: ArrayView1<f64>,
        (background_mean, background_sd): (f64, f64),
        choices: HeldOutChoices,
        ln_width: f64,
    ) -> Option<Self> {
        let n = t.len();
        if n == 0 || !(background_sd > 0.0 && background_sd.is_finite()) {
            return None;
        }
        let ln_bg: Vec<f64> = t
            .iter()
            .map(|&y| ln_normal(y, background_mean, background_sd.powi(2)))
            .collect();
        let nf = n as f64;
        let gauss = TailShape::new(None);
        let gaussian = (0..n)
            .map(|i| gauss.ln_density(t[i], mean[i], var[i].max(VAR_FLOOR).sqrt()))
            .sum::<f64>()
            / nf;
        // None: the variance as it is (c = 1), to the last bit
        let mut scales: Vec<Option<f64>> = vec![None];
        if choices.model_var_scale {
            scales.extend(MODEL_VAR_SCALE_GRID.iter().map(|&c| Some(c)));
        }
        // (score: summed log posterior less the penalties, mean
        // log-likelihood, π, ν), with c
        let mut best: Option<(Scored, Option<f64>)> = None;
        for &c in &scales {
            let v: Vec<f64> = (0..n)
                .map(|i| {
                    let vc = c.map_or(var[i], |c| {
                        let model = (var[i] - fixed_var[i]).max(0.0);
                        var[i] - model + c * model
                    });
                    vc.max(VAR_FLOOR)
                })
                .collect();
            let penalty_c = c.map_or(0.0, |_| MODEL_VAR_SCALE_PENALTY_PER_LN_ROW * nf.ln_fixed());
            for dof in dof_candidates(choices.heavy_tails) {
                let shape = TailShape::new(dof);
                let ln_bulk: Vec<f64> = (0..n)
                    .map(|i| shape.ln_density(t[i], mean[i], v[i].sqrt()))
                    .collect();
                let mean_ln = |share: f64| -> f64 {
                    (0..n)
                        .map(|i| mix(share, ln_bulk[i], ln_bg[i]))
                        .sum::<f64>()
                        / nf
                };
                let (pi, ln_post, ln_lik) = if choices.share {
                    let pi = em_share(&ln_bulk, &ln_bg);
                    // log posterior per row: mean log-likelihood + ln Beta(2, 2) density / N
                    let ln_lik = mean_ln(pi);
                    (
                        pi,
                        ln_lik + (pi.ln_fixed() + (1.0 - pi).ln_fixed()) / nf,
                        ln_lik,
                    )
                } else {
                    let ln_lik = mean_ln(0.0);
                    (0.0, ln_lik, ln_lik)
                };
                if !(pi.is_finite() && ln_post.is_finite()) {
                    continue;
                }
                let score = nf * ln_post - dof.map_or(0.0, |_| TAIL_SHAPE_PENALTY_NATS) - penalty_c;
                if best.is_none_or(|b| score > b.0 .0) {
                    best = Some(((score, ln_lik, pi, dof), c));
                }
            }
        }
        let ((_, ln_lik, share, tail_dof), c) = best?;
        Some(GrossErrorModel {
            share,
            background_mean,
            background_sd,
            n_heldout: n,
            heldout_nlpd_gaussian: -gaussian + ln_width,
            heldout_nlpd: -ln_lik + ln_width,
            refit_gross_rows: None,
            refit_fallbacks: Vec::new(),
            tail_dof,
            model_var_scale: c,
        })
    }

    /// The shape of a value free of gross error.
    pub fn shape(&self) -> TailShape {
        TailShape::new(self.tail_dof)
    }

    /// The factor c on the model part of the variance (1 when none was
    /// chosen).
    pub fn model_var_factor(&self) -> f64 {
        self.model_var_scale.unwrap_or(1.0)
    }

    /// The E-step for a mean network `net` whose row n has noise precision
    /// β·ρ_n (`rho` None: all ρ_n = 1): each row's responsibility r_n, the
    /// probability that its target in `t` is free of gross error, floored
    /// at [`RESPONSIBILITY_FLOOR`] (scaled units). Only the network's
    /// outputs are evaluated, not its predictive variance.
    pub(crate) fn responsibilities(
        &self,
        net: &FittedNetwork,
        rho: Option<&Array1<f64>>,
        x: ArrayView2<f64>,
        t: ArrayView1<f64>,
    ) -> Array1<f64> {
        let mean = net.arch.predict(&net.weights, x);
        let bg_var = self.background_sd.powi(2);
        let shape = self.shape();
        Array1::from_shape_fn(t.len(), |n| {
            let noise_var = 1.0 / (net.beta * rho.map_or(1.0, |r| r[n]));
            let ln_bulk = (1.0 - self.share).ln_fixed()
                + shape.ln_density(t[n], mean[n], noise_var.max(VAR_FLOOR).sqrt());
            let ln_gross = self.share.ln_fixed() + ln_normal(t[n], self.background_mean, bg_var);
            (ln_bulk - ln_add(ln_bulk, ln_gross))
                .exp_fixed()
                .max(RESPONSIBILITY_FLOOR)
        })
    }

    /// Refit a member with constant noise on all the rows `x`, `t` under
    /// the contamination model: [`GROSS_ERROR_REFIT_ROUNDS`] EM rounds,
    /// warm-started from `net`, every round but the last with `early`'s
    /// settings (the same as `settings` except in a large table's refit,
    /// committee::refit), the last with `settings`. Returns the network and
    /// Σ(1 − r_n) of the last E-step.
    ///
    /// # Errors
    /// The [`FitFailure`] of a refit.
    #[allow(clippy::too_many_arguments)]
    pub(crate) fn refit_constant(
        &self,
        mut net: FittedNetwork,
        ard: bool,
        x: ArrayView2<f64>,
        t: ArrayView1<f64>,
        early: &FitSettings,
        settings: &FitSettings,
    ) -> Result<(FittedNetwork, f64), FitFailure> {
        let mut gross_rows = 0.0;
        for round in 0..GROSS_ERROR_REFIT_ROUNDS {
            let round_settings = if round + 1 < GROSS_ERROR_REFIT_ROUNDS {
                early
            } else {
                settings
            };
            let resp = self.responsibilities(&net, None, x, t);
            gross_rows = resp.iter().map(|r| 1.0 - r).sum();
            let start = StartState {
                weights: net.weights.clone(),
                alpha: net.alpha.clone(),
                beta: net.beta,
            };
            net = fit_model(
                net.arch,
                ard,
                x.view(),
                DataModel::Gaussian {
                    t: t.view(),
                    row_weights: Some(resp.view()),
                    responsibilities: Some(resp.view()),
                },
                start,
                round_settings,
            )?;
        }
        Ok((net, gross_rows))
    }

    /// The gross-error part on another linear scale: `unscale` maps a
    /// scaled target value to that scale and `width` is the scale's units
    /// per scaled unit.
    pub fn on_scale(&self, unscale: impl Fn(f64) -> f64, width: f64) -> GrossErrors {
        GrossErrors {
            share: self.share,
            mean: unscale(self.background_mean),
            sd: self.background_sd * width,
            shape: self.shape(),
        }
    }

    /// True when every number is in its valid range.
    pub fn is_valid(&self) -> bool {
        (0.0..=GROSS_ERROR_SHARE_MAX).contains(&self.share)
            && self.tail_dof.is_none_or(|nu| nu > 2.0 && nu.is_finite())
            && self
                .model_var_scale
                .is_none_or(|c| c > 0.0 && c.is_finite())
            && self.background_mean.is_finite()
            && self.background_sd.is_finite()
            && self.background_sd > 0.0
    }
}

/// The posterior mode of π under a Beta(2, 2) prior by EM, from each
/// row's log density under the bulk and under the background.
fn em_share(ln_bulk: &[f64], ln_bg: &[f64]) -> f64 {
    let nf = ln_bulk.len() as f64;
    let ln_post = |share: f64| -> f64 {
        ln_bulk
            .iter()
            .zip(ln_bg)
            .map(|(&b, &g)| mix(share, b, g))
            .sum::<f64>()
            / nf
            + (share.ln_fixed() + (1.0 - share).ln_fixed()) / nf
    };
    let mut share = GROSS_ERROR_SHARE_START;
    let mut last = ln_post(share);
    for _ in 0..GROSS_ERROR_EM_ITERS {
        let free: f64 = ln_bulk
            .iter()
            .zip(ln_bg)
            .map(|(&b, &g)| ((1.0 - share).ln_fixed() + b - mix(share, b, g)).exp_fixed())
            .sum();
        share = ((nf - free + 1.0) / (nf + 2.0)).min(GROSS_ERROR_SHARE_MAX);
        let now = ln_post(share);
        let done = (now - last).abs() < GROSS_ERROR_EM_TOL;
        last = now;
        if done {
            break;
        }
    }
    share
}

/// ln[(1 − π)·e^ln_bulk + π·e^ln_bg].
fn mix(share: f64, ln_bulk: f64, ln_bg: f64) -> f64 {
    if share <= 0.0 {
        return ln_bulk;
    }
    ln_add((1.0 - share).ln_fixed() + ln_bulk, share.ln_fixed() + ln_bg)
}

/// The error model of a predictive distribution on one scale: a share
/// `share` of values drawn from N(`mean`, `sd`²), whatever the inputs,
/// and the others scattered about the estimate with the shape `shape`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct GrossErrors {
    /// π.
    pub share: f64,
    /// Mean of the target over the training rows.
    pub mean: f64,
    /// Sd of the target over the training rows.
    pub sd: f64,
    /// Shape of a value free of gross error.
    pub shape: TailShape,
}

impl GrossErrors {
    /// ln p(y) of the two-part predictive: (1 − π)·p_ν(y; m, s²) + π·N(y;
    /// mean, sd²), with `s` the sd of a value free of gross error and p_ν
    /// its shape (Gaussian or unit-variance Student-t).
    pub fn ln_density(&self, y: f64, m: f64, s: f64) -> f64 {
        mix(
            self.share,
            self.shape.ln_density(y, m, s),
            ln_normal(y, self.mean, self.sd * self.sd),
        )
    }

    /// Probability that a measured value `y` is a gross error, given the
    /// estimate `m` ± `s` of a value free of one.
    pub fn probability(&self, y: f64, m: f64, s: f64) -> f64 {
        if self.share <= 0.0 {
            return 0.0;
        }
        let ln_gross = self.share.ln_fixed() + ln_normal(y, self.mean, self.sd * self.sd);
        (ln_gross - self.ln_density(y, m, s)).exp_fixed()
    }
}

/// The SciPy reference values of tests/reference/gross_error_share.py,
/// shared by the tests of this module and of `metrics`.
#[cfg(test)]
pub(crate) fn scipy_reference() -> serde_json::Value {
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/data/gross_error_share.json"
    ))
    .expect("reference file");
    serde_json::from_str(&text).expect("json")
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::Array1;
    use rand::{Rng, SeedableRng};
    use rand_distr::{Distribution, Normal};
    use rand_xoshiro::Xoshiro256PlusPlus;

    /// A model part stated 4 times too large (truth of the generator; no
    /// outside source): 3000 held-out rows whose errors have variance
    /// fixed + model/4 give the factor 1/4 (its grid neighbours allowed:
    /// a variance estimate from 3000 rows has a relative sd of 2.6 %, the
    /// grid steps are √2); errors of variance fixed + model keep c = 1.
    #[test]
    fn the_factor_on_the_model_part_is_found_and_left_alone_when_right() {
        let n = 3000;
        let unit = Normal::new(0.0, 1.0).expect("unit normal");
        let fixed = Array1::from_elem(n, 0.01_f64.powi(2));
        let model = Array1::from_shape_fn(n, |i| (0.02 + 0.03 * (i % 7) as f64 / 6.0).powi(2));
        let var = &fixed + &model;
        let mean = Array1::zeros(n);
        let choices = HeldOutChoices {
            share: true,
            heavy_tails: true,
            model_var_scale: true,
        };
        for (truth, seed) in [(Some(0.25), 11), (None, 12)] {
            let true_c = truth.unwrap_or(1.0);
            let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
            let t = Array1::from_shape_fn(n, |i| {
                (fixed[i] + true_c * model[i]).sqrt() * unit.sample(&mut rng)
            });
            let g = GrossErrorModel::fit_calibrated(
                (mean.view(), var.view(), fixed.view()),
                t.view(),
                (0.0, 0.5),
                choices,
                0.0,
            )
            .expect("fit");
            let c = g.model_var_factor();
            assert!(
                c >= true_c / 2.0_f64.sqrt() - 1e-12 && c <= true_c * 2.0_f64.sqrt() + 1e-12,
                "c {c} for a true factor {true_c}"
            );
            if truth.is_none() {
                assert_eq!(g.model_var_scale, None, "a right model part is left alone");
            }
        }
    }

    /// Contaminated data with a known share (truth of the generator; no
    /// outside source): EM recovers it within its sampling error
    /// (binomial sd √(0.05·0.95/4000) = 0.0034).
    #[test]
    fn recovers_the_share_of_gross_errors() {
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(5);
        let n = 4000;
        let unit = Normal::new(0.0, 1.0).expect("unit normal");
        let mean = Array1::from_shape_fn(n, |_| rng.random_range(-0.3..0.3));
        let var = Array1::from_shape_fn(n, |_| rng.random_range(0.01_f64..0.04).powi(2));
        // π = 0.05; gross errors from N(0, 0.3²)
        let t = Array1::from_shape_fn(n, |i| {
            if rng.random::<f64>() < 0.05 {
                0.3 * unit.sample(&mut rng)
            } else {
                mean[i] + var[i].sqrt() * unit.sample(&mut rng)
            }
        });
        let g = GrossErrorModel::fit(
            mean.view(),
            var.view(),
            t.view(),
            (0.0, 0.3),
            true,
            false,
            0.0,
        )
        .expect("fit");
        assert!((g.share - 0.05).abs() < 0.012, "π = {}", g.share);
        assert!(g.heldout_nlpd < g.heldout_nlpd_gaussian);
    }

    /// [`GrossErrorModel::fit`] with the background N(0, 0.2²) of these
    /// tests, in scaled units.
    fn fit_on(
        mean: &Array1<f64>,
        var: &Array1<f64>,
        t: &Array1<f64>,
        share: bool,
        heavy_tails: bool,
    ) -> GrossErrorModel {
        GrossErrorModel::fit(
            mean.view(),
            var.view(),
            t.view(),
            (0.0, 0.2),
            share,
            heavy_tails,
            0.0,
        )
        .expect("fit")
    }

    /// Student-t scatter with ν = 4 and unit-variance scale (truth of the
    /// generator; no outside source), 3000 rows: the held-out choice
    /// picks a heavy shape (ν between 3 and 7) with no share of gross
    /// errors to speak of, and lowers the NLPD; Gaussian scatter keeps the
    /// Gaussian or a shape within 1 % of its 68 % interval (ν ≥ 50).
    #[test]
    fn chooses_the_shape_of_the_scatter() {
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(8);
        let n = 3000;
        let nu = 4.0_f64;
        let t4 = rand_distr::StudentT::new(nu).expect("dof");
        let unit = Normal::new(0.0, 1.0).expect("unit normal");
        let scale = ((nu - 2.0) / nu).sqrt();
        let mean = Array1::from_shape_fn(n, |_| rng.random_range(-0.3..0.3));
        let sd = 0.02;
        let var = Array1::from_elem(n, sd * sd);
        let heavy = Array1::from_shape_fn(n, |i| mean[i] + sd * scale * t4.sample(&mut rng));
        let g = fit_on(&mean, &var, &heavy, true, true);
        let dof = g.tail_dof.expect("a Student-t shape");
        assert!((3.0..=7.0).contains(&dof), "ν = {dof}");
        assert!(g.share < 0.005, "π = {}", g.share);
        assert!(g.heldout_nlpd < g.heldout_nlpd_gaussian - 0.05, "{g:?}");

        let plain = Array1::from_shape_fn(n, |i| mean[i] + sd * unit.sample(&mut rng));
        let g = fit_on(&mean, &var, &plain, true, true);
        assert!(g.tail_dof.is_none_or(|nu| nu >= 50.0), "{g:?}");
        // without the share only the shape is chosen
        let g = fit_on(&mean, &var, &heavy, false, true);
        assert!(g.share <= 0.0, "π = {}", g.share);
        assert!(g.tail_dof.is_some());
    }

    /// Gaussian scatter, 100 held-out rows (the size of a 500-row
    /// archive's held-out part), 400 seeds: a Student-t is chosen by
    /// chance in about 8 % of them (½·P(χ²₁ > 2), the boundary
    /// likelihood-ratio law of Self & Liang 1987, JASA 82:605, for one
    /// parameter; the grid's seven shapes add a little; 6 % here). Without
    /// the penalty 40 % would be; 15 % is 3.6 binomial sds above 8 %.
    #[test]
    fn rarely_finds_heavy_tails_in_gaussian_scatter() {
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(9);
        let unit = Normal::new(0.0, 1.0).expect("unit normal");
        let (n, seeds) = (100, 400);
        let var = Array1::from_elem(n, 0.02_f64.powi(2));
        let mut heavy = 0;
        for _ in 0..seeds {
            let mean = Array1::from_shape_fn(n, |_| rng.random_range(-0.3..0.3));
            let t = Array1::from_shape_fn(n, |i| mean[i] + 0.02 * unit.sample(&mut rng));
            let g = fit_on(&mean, &var, &t, true, true);
            heavy += usize::from(g.tail_dof.is_some());
        }
        let share = heavy as f64 / seeds as f64;
        assert!(share < 0.15, "a Student-t chosen for {share} of the seeds");
    }

    /// Gaussian data: π stays at the prior's floor, about 1/(N + 2), and
    /// the NLPD within ln(1 − π) of the Gaussian's.
    #[test]
    fn leaves_a_gaussian_alone() {
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(6);
        let n = 4000;
        let unit = Normal::new(0.0, 1.0).expect("unit normal");
        let mean = Array1::from_shape_fn(n, |_| rng.random_range(-0.3..0.3));
        let var = Array1::from_elem(n, 0.02_f64.powi(2));
        let t = Array1::from_shape_fn(n, |i| mean[i] + 0.02 * unit.sample(&mut rng));
        let g = fit_on(&mean, &var, &t, true, false);
        assert!(g.share < 2.0 / 4002.0, "π = {}", g.share);
        assert!(g.share >= 1.0 / 4002.0, "π = {}", g.share);
        assert!(g.heldout_nlpd - g.heldout_nlpd_gaussian < 1e-3);
    }

    /// The posterior mode of π (Beta(2, 2) prior) against SciPy's bounded
    /// scalar minimiser on the same 300 invented rows
    /// (tests/reference/gross_error_share.py, SciPy 1.17.1).
    #[test]
    fn em_agrees_with_scipy_on_the_mode() {
        let r = scipy_reference();
        let arr = |k: &str| -> Array1<f64> {
            r[k].as_array()
                .expect("array")
                .iter()
                .map(|v| v.as_f64().expect("number"))
                .collect()
        };
        let num = |k: &str| r[k].as_f64().expect("number");
        let (t, m, v) = (arr("t"), arr("m"), arr("v"));
        let g = GrossErrorModel::fit(
            m.view(),
            v.view(),
            t.view(),
            (num("background_mean"), num("background_sd")),
            true,
            false,
            0.0,
        )
        .expect("fit");
        assert!((g.share - num("share")).abs() < 1e-5, "{g:?}");
        assert!((g.heldout_nlpd - num("nlpd_at_mode")).abs() < 1e-9, "{g:?}");
        assert!((g.heldout_nlpd_gaussian - num("nlpd_gaussian")).abs() < 1e-10);
    }

    #[test]
    fn gross_error_probability_is_high_only_far_from_the_estimate() {
        let g = GrossErrors {
            share: 0.02,
            mean: 50.0,
            sd: 15.0,
            shape: TailShape::new(None),
        };
        assert!(g.probability(51.0, 50.0, 2.0) < 0.01);
        assert!(g.probability(30.0, 50.0, 2.0) > 0.99);
        let none = GrossErrors { share: 0.0, ..g };
        assert!(none.probability(30.0, 50.0, 2.0) <= 0.0);
        // without gross errors the density is the Gaussian's
        let ln = none.ln_density(52.0, 50.0, 2.0);
        assert!((ln - ln_normal(52.0, 50.0, 4.0)).abs() < 1e-12);
    }

    /// The generator of the two refit tests below: y = sin(3 x0)/3 +
    /// N(0, 0.05²) on two inputs uniform on [−0.5, 0.5], with 6 % of the
    /// targets replaced by values uniform on [−0.5, 0.5] (which rows: the
    /// third value returned).
    fn contaminated_rows(
        rng: &mut Xoshiro256PlusPlus,
        n: usize,
    ) -> (ndarray::Array2<f64>, Array1<f64>, Vec<bool>) {
        let noise = Normal::new(0.0, 0.05).expect("sd");
        let x = ndarray::Array2::from_shape_fn((n, 2), |_| rng.random_range(-0.5..0.5));
        let mut replaced = vec![false; n];
        let t = Array1::from_shape_fn(n, |i| {
            if rng.random_range(0.0..1.0) < 0.06 {
                replaced[i] = true;
                rng.random_range(-0.5..0.5)
            } else {
                (3.0 * x[[i, 0]]).sin_fixed() / 3.0 + noise.sample(rng)
            }
        });
        (x, t, replaced)
    }

    /// A 2-input, 3-hidden-unit network with ARD and its random start.
    fn small_start(rng: &mut Xoshiro256PlusPlus) -> (crate::net::Architecture, StartState) {
        let arch = crate::net::Architecture::new(2, 3);
        let groups = crate::evidence::Groups::new(&arch, true);
        let start = StartState {
            weights: (0..arch.n_params())
                .map(|_| rng.random_range(-0.5..0.5))
                .collect(),
            alpha: vec![0.1; groups.len()],
            beta: 50.0,
        };
        (arch, start)
    }

    /// A 6 % share of gross errors over the targets `t`'s mean and sd.
    fn share_model(t: ndarray::ArrayView1<f64>) -> GrossErrorModel {
        GrossErrorModel {
            share: 0.06,
            background_mean: t.mean().expect("rows"),
            background_sd: t.std(0.0),
            n_heldout: 0,
            heldout_nlpd_gaussian: 0.0,
            heldout_nlpd: 0.0,
            refit_gross_rows: None,
            refit_fallbacks: Vec::new(),
            tail_dof: None,
            model_var_scale: None,
        }
    }

    /// y = sin(3 x0)/3 + N(0, 0.05²), with 6 % of the targets replaced by
    /// values drawn uniformly over the target's range (truth of the
    /// generator; no outside source). A fit with the Gaussian likelihood
    /// takes the gross errors as noise; the refit under the contamination
    /// model recovers the noise sd within 10 % (the core engine's bar for a
    /// clean archive), and the rows it weights out are the replaced ones.
    #[test]
    fn refit_recovers_the_noise_level_beside_gross_errors() {
        use crate::evidence::fit_network;
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(21);
        let n = 600;
        let (x, t, replaced) = contaminated_rows(&mut rng, n);
        let (arch, start) = small_start(&mut rng);
        let settings = FitSettings::default();
        let plain = fit_network(arch, true, x.view(), t.view(), start, &settings).expect("fit");
        let plain_sd = 1.0 / plain.beta.sqrt();
        assert!(plain_sd > 0.07, "Gaussian fit's noise sd {plain_sd}");

        let model = share_model(t.view());
        let (net, gross_rows) = model
            .refit_constant(plain, true, x.view(), t.view(), &settings, &settings)
            .expect("refit");
        let sd = 1.0 / net.beta.sqrt();
        assert!((sd - 0.05).abs() < 0.005, "noise sd after the refit {sd}");
        let n_replaced = replaced.iter().filter(|&&r| r).count() as f64;
        // a replaced value that lands within a few sds of the curve is not
        // a detectable gross error
        assert!(
            gross_rows > 0.6 * n_replaced && gross_rows < 1.1 * n_replaced,
            "{gross_rows} rows weighted out, {n_replaced} replaced"
        );
        let resp = model.responsibilities(&net, None, x.view(), t.view());
        let flagged: Vec<usize> = (0..n).filter(|&i| resp[i] < 0.5).collect();
        let clean_flagged = flagged.iter().filter(|&&i| !replaced[i]).count();
        // a clean row is flagged beyond about 3 sds here, where
        // (1 − π)·N(e; 0, σ²) = π·N(t; t̄, s_t²): about 1.5 of the 564
        // clean rows are expected there (Gaussian tail 0.0027)
        assert!(
            flagged.len() >= 20 && clean_flagged <= 4,
            "{} rows flagged, {clean_flagged} of them clean",
            flagged.len()
        );
    }

    /// A large table's refit (committee::refit): no Gaussian refit on all
    /// rows first, the EM rounds start from a network fitted on a sample of
    /// 2 000 rows (as the search's), the early rounds with at most
    /// LARGE_EARLY_ROUND_CYCLES cycles and the last with the refit's (the
    /// sampled Gauss–Newton matrix, at most LARGE_REFIT_MAX_CYCLES). On
    /// the generator of the test above with more rows than LARGE_TABLE_ROWS
    /// it recovers the noise sd within 10 % and weights out the replaced
    /// rows as that test asks (truth of the generator; no outside source).
    #[test]
    fn a_large_tables_refit_from_the_search_network_recovers_the_noise_level() {
        use super::super::refit::{early_round_settings, refit_settings};
        use crate::evidence::fit_network;
        use crate::prec::{LARGE_EARLY_ROUND_CYCLES, LARGE_REFIT_MAX_CYCLES, LARGE_TABLE_ROWS};
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(23);
        let n = LARGE_TABLE_ROWS + 2_000;
        let (x, t, replaced) = contaminated_rows(&mut rng, n);
        let (arch, start) = small_start(&mut rng);
        let sample = ndarray::s![..2_000, ..];
        let searched = fit_network(
            arch,
            true,
            x.slice(sample),
            t.slice(ndarray::s![..2_000]),
            start,
            &FitSettings::default(),
        )
        .expect("fit on the sample");
        let settings = refit_settings(&FitSettings::default(), n, 5);
        let early = early_round_settings(&settings, n);
        assert_eq!(early.max_cycles, LARGE_EARLY_ROUND_CYCLES);
        assert_eq!(settings.max_cycles, LARGE_REFIT_MAX_CYCLES);
        let model = share_model(t.view());
        let (net, gross_rows) = model
            .refit_constant(searched, true, x.view(), t.view(), &early, &settings)
            .expect("refit");
        assert!(net.diagnostics.cycles <= LARGE_REFIT_MAX_CYCLES);
        assert!(net.diagnostics.gauss_newton_rows.is_some());
        let sd = 1.0 / net.beta.sqrt();
        assert!((sd - 0.05).abs() < 0.005, "noise sd after the refit {sd}");
        let n_replaced = replaced.iter().filter(|&&r| r).count() as f64;
        assert!(
            gross_rows > 0.6 * n_replaced && gross_rows < 1.1 * n_replaced,
            "{gross_rows} rows weighted out, {n_replaced} replaced"
        );
    }

    /// The M-step counts a row as r_n rows: in linear mode (an exact
    /// Newton step) rows with responsibility at the floor give the same
    /// weights and β as a fit on the other rows alone, β = (N − γ)/(2 E_D)
    /// on them (MacKay 1992, "Bayesian interpolation", Neural Computation
    /// 4:415, §4; no equation number given, as it was not checked).
    #[test]
    fn rows_weighted_out_count_as_dropped() {
        use crate::evidence::{fit_model, fit_network, DataModel, Groups};
        use crate::net::Architecture;
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(4);
        let noise = Normal::new(0.0, 0.03).expect("sd");
        let n = 120;
        let x = ndarray::Array2::from_shape_fn((n, 3), |_| rng.random_range(-0.5..0.5));
        let t = Array1::from_shape_fn(n, |i| {
            0.3 * x[[i, 0]] - 0.2 * x[[i, 2]] + noise.sample(&mut rng)
        });
        let resp = Array1::from_shape_fn(n, |i| {
            if i % 7 == 0 {
                RESPONSIBILITY_FLOOR
            } else {
                1.0
            }
        });
        let kept: Vec<usize> = (0..n).filter(|i| i % 7 != 0).collect();
        let arch = Architecture::new(3, 0);
        let start = || StartState {
            weights: vec![0.0; arch.n_params()],
            alpha: vec![0.1; Groups::new(&arch, true).len()],
            beta: 10.0,
        };
        let settings = FitSettings::default();
        let weighted = fit_model(
            arch,
            true,
            x.view(),
            DataModel::Gaussian {
                t: t.view(),
                row_weights: Some(resp.view()),
                responsibilities: Some(resp.view()),
            },
            start(),
            &settings,
        )
        .expect("weighted fit");
        let (xs, ts) = (
            x.select(ndarray::Axis(0), &kept),
            t.select(ndarray::Axis(0), &kept),
        );
        let subset =
            fit_network(arch, true, xs.view(), ts.view(), start(), &settings).expect("subset fit");
        assert!(
            (weighted.beta - subset.beta).abs() < 1e-5 * subset.beta,
            "β {} vs {}",
            weighted.beta,
            subset.beta
        );
        for (a, b) in weighted.weights.iter().zip(&subset.weights) {
            assert!((a - b).abs() < 1e-6, "weight {a} vs {b}");
        }
        assert!((weighted.log_evidence - subset.log_evidence).abs() < 1e-3);
    }
}
