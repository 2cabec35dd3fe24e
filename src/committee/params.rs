//! Settings of the committee procedure: params → checked params, as linfa
//! does.
//!
//! | Name | Default | Purpose | Range |
//! |---|---|---|---|
//! | `hidden` | 1..=10 | hidden-unit counts tried (0 = linear model) | 0 ≤ min ≤ max ≤ 100 |
//! | `restarts` | 4 | random starts per hidden-unit count | 1 ..= 100 |
//! | `holdout_fraction` | 0.2 | share of the training rows held out to rank candidates | 0.05 ..= 0.5 |
//! | `ard` | true | one α per input (automatic relevance determination) | — |
//! | `widen` | true | widen the hidden range when the best candidate sits at its top | — |
//! | `hidden_cap` | 20 | largest hidden-unit count widening may reach | ≥ max |
//! | `max_members` | 16 | largest committee considered | 1 ..= 200 |
//! | `seed` | 0 | seed of every random choice | any u64 |
//! | `noise` | auto | constant noise, noise that varies with the inputs, or the better of the two on the held-out part | constant, varying, auto |
//! | `early_stop` | true | stop hopeless candidates early: successive halving on the held-out NLPD at the rungs of `prec::SEARCH_RUNGS` | — |
//! | `partitions` | 1 | whole trainings of the target averaged, partition p with seed `seed + p` (each runs the whole pipeline) | 1 ..= 8 |
//! | `partition_variance` | within | variance of the average of the partitions: `within` (their mean variance) or `mixture` (plus their spread); matters only with `partitions` > 1 | within, mixture |
//! | `model_part_min_heldout` | 500 (`prec::MODEL_PART_MIN_HELDOUT`) | held-out rows needed before the held-out part may take the committee's model part times ρ beside the residual process (committee::kriging) | any |
//! | `model_var_scale` | false | let the held-out part choose a factor on the committee's model variance (experimental; committee::gross_errors) | — |

use serde::{Deserialize, Serialize};

/// Serde default of [`CommitteeParams::model_part_min_heldout`].
fn default_min_heldout() -> usize {
    crate::prec::MODEL_PART_MIN_HELDOUT
}

fn is_default_min_heldout(rows: &usize) -> bool {
    *rows == crate::prec::MODEL_PART_MIN_HELDOUT
}

use crate::error::{Error, Result};
use crate::evidence::FitSettings;

/// Unchecked committee settings (a consuming builder).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct CommitteeParams {
    /// Smallest hidden-unit count tried.
    pub hidden_min: usize,
    /// Largest hidden-unit count tried (before widening).
    pub hidden_max: usize,
    /// Random starts per hidden-unit count.
    pub restarts: usize,
    /// Share of the training rows held out to rank candidates.
    pub holdout_fraction: f64,
    /// One α per input.
    pub ard: bool,
    /// Widen the hidden range when the best candidate sits at its top.
    pub widen: bool,
    /// Largest hidden-unit count widening may reach.
    pub hidden_cap: usize,
    /// Largest committee considered.
    pub max_members: usize,
    /// Seed of every random choice.
    pub seed: u64,
    /// Settings of each network's training.
    pub fit: FitSettings,
    /// Noise model: constant, varying with the inputs, or chosen.
    #[serde(default)]
    pub noise: NoiseMode,
    /// Kriging of the committee's residuals: on, off, or chosen.
    #[serde(default)]
    pub kriging: KrigingMode,
    /// Estimate a share of gross errors on the held-out part. Files written
    /// before the share existed read as false.
    #[serde(default)]
    pub gross_errors: bool,
    /// Let the held-out part choose a Student-t shape of the scatter
    /// (committee::tails) instead of the Gaussian. Files written before
    /// the shape existed read as false.
    #[serde(default)]
    pub heavy_tails: bool,
    /// Let the held-out part choose a factor on the committee's model part
    /// of the predictive variance (committee::gross_errors, "Calibration of
    /// the model variance"). Off by default: on the shared UCI splits the
    /// held-out part chose the smallest factor and the test LL fell
    /// (docs/benchmarks.md, "Calibration when the noise is tiny"). Files
    /// written before the factor existed read as false.
    #[serde(default)]
    pub model_var_scale: bool,
    /// Held-out rows needed before the held-out part may take the
    /// committee's model part times ρ beside the residual process
    /// (committee::kriging, "The committee's model part beside the
    /// process"; committee::residual); with fewer the part stays whole.
    /// Not written when it is the default, so that a default model file
    /// is what it was before the choice existed; read as the default when
    /// absent.
    #[serde(
        default = "default_min_heldout",
        skip_serializing_if = "is_default_min_heldout"
    )]
    pub model_part_min_heldout: usize,
    /// With varying noise, refit the mean network with each row weighted
    /// by its fitted noise precision (committee::noise); false: the mean
    /// fitted with every row alike is kept. Files written before the
    /// choice existed reweighted and read as true.
    #[serde(default = "reweighted_before")]
    pub reweight_mean: bool,
    /// Stop candidates that rank poorly on the held-out part after the
    /// first cycles (successive halving at the rungs of
    /// [`crate::prec::SEARCH_RUNGS`]); false: every candidate is trained
    /// to the end. Files written before early stopping existed trained
    /// every candidate to the end and read as false.
    #[serde(default)]
    pub early_stop: bool,
    /// Whole trainings of the target whose committees are averaged:
    /// partition p (p = 0 … N−1) runs the whole pipeline
    /// (committee::pipeline) with master seed `seed + p` (wrapping), so
    /// that partition p is exactly the committee a training with seed
    /// `seed + p` gives (bagging over held-out splits, Breiman 1996,
    /// *Machine Learning* 24:123). 1: one training, as before the setting
    /// existed (files written before it read as 1).
    #[serde(default = "one_partition", skip_serializing_if = "is_one")]
    pub partitions: usize,
    /// How the variance of the average of the partitions is formed
    /// ([`PartitionVariance`]); matters only with `partitions` > 1. Not
    /// written when `within`, so that files stay as before; read as
    /// `within` when absent (what every file without it meant).
    #[serde(
        default = "within_before",
        skip_serializing_if = "PartitionVariance::is_within"
    )]
    pub partition_variance: PartitionVariance,
}

/// What model files before `partition_variance` existed meant.
fn within_before() -> PartitionVariance {
    PartitionVariance::Within
}

/// The variance of an equal average of N partitions' predictive
/// distributions (mean μ_p, variance v_p each; the mean is μ = (1/N) Σ μ_p
/// under either rule):
///
/// ```text
/// mixture:  v = (1/N) Σ_p v_p  +  (1/N) Σ_p (μ_p − μ)²
/// within:   v = (1/N) Σ_p v_p
/// ```
///
/// `mixture` is the variance of the equal mixture of the N distributions
/// (Bishop 1995, *Neural Networks for Pattern Recognition*, §9.6 on
/// committees; any text on mixtures); `within` counts the partitions'
/// disagreement only through each partition's own committee spread, as
/// for a bagged estimate whose members estimate the same quantity
/// (Breiman 1996, *Machine Learning* 24:123). The noise variance and the
/// committee's model variance follow the same rule (the spread added to
/// the latter under `mixture`), so the domain guard's yardsticks stay
/// consistent with the total.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum PartitionVariance {
    /// Mean of the partitions' variances plus their spread about the
    /// average (an equal mixture).
    Mixture,
    /// Mean of the partitions' variances alone.
    #[default]
    Within,
}

impl PartitionVariance {
    /// True for [`PartitionVariance::Within`].
    #[allow(clippy::trivially_copy_pass_by_ref)]
    pub fn is_within(&self) -> bool {
        *self == PartitionVariance::Within
    }

    /// Its name on the command line and in model files.
    pub fn name(self) -> &'static str {
        match self {
            PartitionVariance::Mixture => "mixture",
            PartitionVariance::Within => "within",
        }
    }
}

/// What model files before `partitions` existed did.
fn one_partition() -> usize {
    1
}

/// One partition is not written, so that such files stay as before.
#[allow(clippy::trivially_copy_pass_by_ref)]
fn is_one(n: &usize) -> bool {
    *n == 1
}

/// What model files before `reweight_mean` existed did.
fn reweighted_before() -> bool {
    true
}

/// Whether a Gaussian process on the committee's residuals is added.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum KrigingMode {
    /// Always add the process (unless it cannot be fitted).
    On,
    /// Never add it: the committee alone.
    Off,
    /// Add it when it lowers the held-out NLPD inside the training data
    /// (never to the linear model, which stays the plain baseline).
    #[default]
    Auto,
}

/// How the noise level of the target is modelled.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum NoiseMode {
    /// One noise level everywhere (one β per network).
    Constant,
    /// A noise level that varies with the inputs (a second network for
    /// ln σ²(x) per member).
    Varying,
    /// Whichever of the two gives the lower held-out NLPD inside the
    /// training data.
    #[default]
    Auto,
}

impl Default for CommitteeParams {
    fn default() -> Self {
        CommitteeParams {
            hidden_min: 1,
            hidden_max: 10,
            restarts: 4,
            holdout_fraction: 0.2,
            ard: true,
            widen: true,
            hidden_cap: 20,
            max_members: 16,
            seed: 0,
            fit: FitSettings::default(),
            noise: NoiseMode::Auto,
            kriging: KrigingMode::Auto,
            gross_errors: true,
            heavy_tails: true,
            model_var_scale: false,
            model_part_min_heldout: crate::prec::MODEL_PART_MIN_HELDOUT,
            reweight_mean: false,
            early_stop: true,
            partitions: 1,
            partition_variance: PartitionVariance::Within,
        }
    }
}

/// Settings that passed [`CommitteeParams::check`].
#[derive(Clone, Debug, PartialEq)]
pub struct CheckedCommitteeParams(CommitteeParams);

impl std::ops::Deref for CheckedCommitteeParams {
    type Target = CommitteeParams;
    fn deref(&self) -> &CommitteeParams {
        &self.0
    }
}

impl CheckedCommitteeParams {
    /// The same settings with another master seed (a further partition's
    /// whole training, committee::pipeline).
    pub(super) fn with_seed(&self, seed: u64) -> CheckedCommitteeParams {
        CheckedCommitteeParams(CommitteeParams {
            seed,
            ..self.0.clone()
        })
    }
}

impl CommitteeParams {
    /// Hidden-unit range tried (0..=0 is the linear model).
    #[must_use]
    pub fn hidden(mut self, min: usize, max: usize) -> Self {
        self.hidden_min = min;
        self.hidden_max = max;
        self
    }

    /// Random starts per hidden-unit count.
    #[must_use]
    pub fn restarts(mut self, n: usize) -> Self {
        self.restarts = n;
        self
    }

    /// Seed.
    #[must_use]
    pub fn seed(mut self, seed: u64) -> Self {
        self.seed = seed;
        self
    }

    /// Automatic relevance determination on or off.
    #[must_use]
    pub fn ard(mut self, yes: bool) -> Self {
        self.ard = yes;
        self
    }

    /// Widening of the hidden range on or off.
    #[must_use]
    pub fn widen(mut self, yes: bool) -> Self {
        self.widen = yes;
        self
    }

    /// Share of the training rows held out to rank candidates.
    #[must_use]
    pub fn holdout_fraction(mut self, f: f64) -> Self {
        self.holdout_fraction = f;
        self
    }

    /// Largest committee considered.
    #[must_use]
    pub fn max_members(mut self, n: usize) -> Self {
        self.max_members = n;
        self
    }

    /// Settings of each network's training (cycles, optimiser iterations,
    /// Hessian choice).
    #[must_use]
    pub fn fit(mut self, fit: FitSettings) -> Self {
        self.fit = fit;
        self
    }

    /// Kriging of the residuals.
    #[must_use]
    pub fn kriging(mut self, mode: KrigingMode) -> Self {
        self.kriging = mode;
        self
    }

    /// Share of gross errors on or off.
    #[must_use]
    pub fn gross_errors(mut self, yes: bool) -> Self {
        self.gross_errors = yes;
        self
    }

    /// Student-t shape of the scatter, chosen on the held-out part, on or
    /// off (off: Gaussian).
    #[must_use]
    pub fn heavy_tails(mut self, yes: bool) -> Self {
        self.heavy_tails = yes;
        self
    }

    /// Held-out rows needed before the held-out part may take the
    /// committee's model part times ρ beside the residual process (0:
    /// always let it choose; usize::MAX: never).
    #[must_use]
    pub fn model_part_min_heldout(mut self, rows: usize) -> Self {
        self.model_part_min_heldout = rows;
        self
    }

    /// The held-out factor on the model part of the variance on or off.
    #[must_use]
    pub fn model_var_scale(mut self, yes: bool) -> Self {
        self.model_var_scale = yes;
        self
    }

    /// With varying noise, reweight the mean network by the fitted noise
    /// precision (true) or keep the mean fitted with every row alike.
    #[must_use]
    pub fn reweight_mean(mut self, yes: bool) -> Self {
        self.reweight_mean = yes;
        self
    }

    /// Early stopping of hopeless candidates (successive halving) on or
    /// off.
    #[must_use]
    pub fn early_stop(mut self, yes: bool) -> Self {
        self.early_stop = yes;
        self
    }

    /// Whole trainings averaged (partition p with seed `seed + p`).
    #[must_use]
    pub fn partitions(mut self, n: usize) -> Self {
        self.partitions = n;
        self
    }

    /// The variance rule of the average of the partitions.
    #[must_use]
    pub fn partition_variance(mut self, rule: PartitionVariance) -> Self {
        self.partition_variance = rule;
        self
    }

    /// Noise model.
    #[must_use]
    pub fn noise(mut self, mode: NoiseMode) -> Self {
        self.noise = mode;
        self
    }

    /// Validate every setting.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] naming the setting, the value and the range.
    pub fn check(self) -> Result<CheckedCommitteeParams> {
        let bad = |name: &'static str, value: String, expected: &str| {
            Err(Error::InvalidParameter {
                name,
                value,
                expected: expected.to_string(),
            })
        };
        if self.hidden_min > self.hidden_max || self.hidden_max > 100 {
            return bad(
                "hidden",
                format!("{}..{}", self.hidden_min, self.hidden_max),
                "a range MIN..MAX with 0 <= MIN <= MAX <= 100 (0 is the linear model)",
            );
        }
        if self.restarts == 0 || self.restarts > 100 {
            return bad("restarts", self.restarts.to_string(), "between 1 and 100");
        }
        if !(0.05..=0.5).contains(&self.holdout_fraction) {
            return bad(
                "holdout fraction",
                self.holdout_fraction.to_string(),
                "between 0.05 and 0.5",
            );
        }
        if self.max_members == 0 || self.max_members > 200 {
            return bad(
                "max members",
                self.max_members.to_string(),
                "between 1 and 200",
            );
        }
        if self.fit.max_cycles == 0 || self.fit.max_cycles > 1000 {
            return bad(
                "max cycles",
                self.fit.max_cycles.to_string(),
                "between 1 and 1000",
            );
        }
        if self.partitions == 0 || self.partitions > 8 {
            return bad("partitions", self.partitions.to_string(), "between 1 and 8");
        }
        let mut p = self;
        p.hidden_cap = p.hidden_cap.max(p.hidden_max);
        Ok(CheckedCommitteeParams(p))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn defaults_pass_and_bad_values_are_named() {
        assert!(CommitteeParams::default().check().is_ok());
        let e = CommitteeParams::default()
            .hidden(5, 2)
            .check()
            .expect_err("bad range");
        assert!(e.to_string().contains("hidden = 5..2"), "{e}");
        let e = CommitteeParams::default()
            .restarts(0)
            .check()
            .expect_err("no restarts");
        assert!(e.to_string().contains("between 1 and 100"), "{e}");
        let e = CommitteeParams::default()
            .holdout_fraction(0.9)
            .check()
            .expect_err("fraction");
        assert!(e.to_string().contains("0.9"), "{e}");
    }
}
