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
//! | `partition_variance` | within | variance of the average of the partitions: `within` (their mean variance), `mixture` (plus their spread) or `correlated` (model errors with correlation ρ, plus the spread beyond what ρ expects); matters only with `partitions` > 1 | within, mixture, correlated |
//! | `partition_correlation` | 0.5 (`prec::PARTITION_CORRELATION`) | ρ of the `correlated` rule | 0 ..= 1 |
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
    /// Error correlation ρ between the partitions' model errors under
    /// [`PartitionVariance::Correlated`] (0 ≤ ρ ≤ 1); unused by the other
    /// rules. Not written at its default
    /// ([`crate::prec::PARTITION_CORRELATION`]), so that files stay as
    /// before, and read as it when absent. What a prediction uses is the
    /// value stored with the committee
    /// ([`super::Committee::partition_correlation`]).
    #[serde(
        default = "default_correlation",
        skip_serializing_if = "is_default_correlation"
    )]
    pub partition_correlation: f64,
}

/// What model files before `partition_variance` existed meant.
fn within_before() -> PartitionVariance {
    PartitionVariance::Within
}

/// Serde default of [`CommitteeParams::partition_correlation`].
fn default_correlation() -> f64 {
    crate::prec::PARTITION_CORRELATION
}

#[allow(clippy::trivially_copy_pass_by_ref)]
fn is_default_correlation(rho: &f64) -> bool {
    rho.to_bits() == crate::prec::PARTITION_CORRELATION.to_bits()
}

/// The variance of an equal average of K partitions' predictive
/// distributions (mean μ_p, variance v_p, noise variance n_p each; the
/// mean is μ = (1/K) Σ μ_p under every rule). With n = (1/K) Σ n_p,
/// u = (1/K) Σ (v_p − n_p) the partitions' mean model variance (every part
/// of v_p but the noise: the committee's, and the residual process's when
/// kriged) and s² = (1/K) Σ (μ_p − μ)² the spread of their means:
///
/// ```text
/// mixture:     v = n + u + s²
/// within:      v = n + u
/// correlated:  v = n + u·(1 + (K−1)ρ)/K + max(0, s² − u·(1−ρ)(K−1)/K)
/// ```
///
/// `mixture` is the variance of the equal mixture of the K distributions
/// (Bishop 1995, *Neural Networks for Pattern Recognition*, §9.6 on
/// committees; any text on mixtures); `within` counts the partitions'
/// disagreement only through each partition's own committee spread, as
/// for a bagged estimate whose members estimate the same quantity
/// (Breiman 1996, *Machine Learning* 24:123).
///
/// `correlated` takes the K partitions' model errors as equally
/// correlated, each of variance u with correlation ρ between any two: the
/// variance of their mean is u·(1 + (K−1)ρ)/K (the variance of a mean of
/// equicorrelated variables: any statistics text; Bishop 1995 §9.6 derives
/// the uncorrelated case, a committee's error falling as 1/K), and the
/// expected spread of the K means about their average is then
/// E s² = u·(1 − ρ)(K − 1)/K. Where the partitions disagree by more than
/// that, the excess max(0, s² − E s²) is added: disagreement the
/// correlation does not explain is taken as model uncertainty neither
/// partition saw. That excess term is this project's own (no published
/// source). ρ = 0 gives u/K where the partitions disagree as independent
/// errors would; ρ = 1 gives n + u + s², the `mixture` rule (and `within`
/// where the partitions agree). It is never below n + u·(1 + (K−1)ρ)/K,
/// and where s² exceeds E s² it is the `mixture` variance less 2·E s².
///
/// The committee's model variance (what the domain guard reads) follows
/// the same rule with the partitions' committee variances c_p in place of
/// the model variances (c_p + s² under `mixture`, c_p alone under `within`,
/// c·(1 + (K−1)ρ)/K + max(0, s² − c·(1−ρ)(K−1)/K) under `correlated`, c
/// their mean): without a residual process c_p = v_p − n_p and it is the
/// combined model variance itself, and since the guard's yardsticks are
/// computed on the training rows through the same combination, its ratio
/// stays consistent with the total. The noise variance is always the mean
/// n.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum PartitionVariance {
    /// Mean of the partitions' variances plus their spread about the
    /// average (an equal mixture).
    Mixture,
    /// Mean of the partitions' variances alone.
    #[default]
    Within,
    /// Model errors equally correlated (ρ,
    /// [`CommitteeParams::partition_correlation`]) between the partitions,
    /// plus their spread beyond what that correlation expects.
    Correlated,
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
            PartitionVariance::Correlated => "correlated",
        }
    }
}

/// How a committee's partitions are combined: the variance rule and, under
/// [`PartitionVariance::Correlated`], the error correlation ρ (ignored by
/// the other rules). What [`super::combine_partitions`] takes, so that the
/// exact and the fast path combine alike.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct PartitionRule {
    /// The variance rule.
    pub variance: PartitionVariance,
    /// ρ of the `correlated` rule, 0 ≤ ρ ≤ 1.
    pub correlation: f64,
}

impl PartitionRule {
    /// The rule with ρ at [`crate::prec::PARTITION_CORRELATION`].
    pub fn new(variance: PartitionVariance) -> Self {
        PartitionRule {
            variance,
            correlation: crate::prec::PARTITION_CORRELATION,
        }
    }

    /// The rule with ρ.
    #[must_use]
    pub fn with_correlation(mut self, rho: f64) -> Self {
        self.correlation = rho;
        self
    }

    /// Its name, with ρ under `correlated` ("correlated, rho 0.5").
    pub fn label(&self) -> String {
        match self.variance {
            PartitionVariance::Correlated => format!("correlated, rho {}", self.correlation),
            v => v.name().to_string(),
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
            partition_correlation: crate::prec::PARTITION_CORRELATION,
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

    /// Error correlation ρ of the `correlated` partition-variance rule
    /// (0 ≤ ρ ≤ 1, checked by [`CommitteeParams::check`]).
    #[must_use]
    pub fn partition_correlation(mut self, rho: f64) -> Self {
        self.partition_correlation = rho;
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
        if !(0.0..=1.0).contains(&self.partition_correlation) {
            return bad(
                "partition correlation",
                self.partition_correlation.to_string(),
                "a correlation between 0 and 1 (0: the trainings' model errors independent, 1: one error repeated)",
            );
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
        for rho in [-0.1, 1.5, f64::NAN] {
            let e = CommitteeParams::default()
                .partition_correlation(rho)
                .check()
                .expect_err("correlation out of range");
            assert!(e.to_string().contains("between 0 and 1"), "{e}");
        }
        for rho in [0.0, 1.0] {
            assert!(CommitteeParams::default()
                .partition_correlation(rho)
                .check()
                .is_ok());
        }
    }
}
