//! Committees of evidence-trained networks.
//!
//! # Method
//!
//! Candidates over a range of hidden-unit counts × random restarts are
//! trained on a training part of the data and ranked on the held-out part
//! by mean negative log predictive density (NLPD). The committee is the
//! best n candidates, with n chosen to minimise the committee's held-out
//! NLPD; the members are then refitted on all the data, warm-started from
//! their weights, α and β (MacKay 1994, ASHRAE Trans. 100(2):1053; Bishop
//! 1995 §9.6 on committees).
//!
//! The committee's predictive distribution is taken as Gaussian with
//!
//! ```text
//! mean     = (1/M) Σ_m y_m
//! variance = (1/M) Σ_m σ_m²  +  (1/M) Σ_m (y_m − mean)²
//! ```
//!
//! the first term the members' own variances (noise + parameter
//! uncertainty), the second their disagreement. A committee may also
//! carry a Gaussian process on its residuals ([`ResidualKriging`]), which
//! adds its posterior mean and variance, takes a share of the noise
//! variance and, when the held-out part shows it, keeps of the committee's
//! model part only the share ρ(x) of its own prior variance left at x,
//! since its mean corrects the committee's error from nearby residuals
//! (docs/method.md §6a; module kriging, "The committee's model part beside
//! the process"), and a share of gross errors estimated on
//! the held-out part ([`GrossErrorModel`]): measured values unrelated to the
//! inputs, beside the Gaussian (docs/method.md §6b). The held-out part may
//! also put a factor c on the committee's model part:
//! variance = noise + c·(parameter variance + spread) + process variance
//! (module gross_errors, "Calibration of the model variance").

mod assemble;
mod by_size;
mod candidates;
mod choice;
mod fast;
mod gross_errors;
mod kriging;
mod noise;
mod noise_models;
pub(crate) mod paired;
mod params;
mod pipeline;
mod refit;
mod relevance;
mod residual;
mod sensitivity;
mod split;
#[cfg(test)]
mod stage_fixture;
mod tails;
mod varying;

pub use fast::{
    truncation_changes, FastCommittee, FastProcessProbe, FastStats, ProcessRow, PROFILE_TOLERANCES,
};
#[cfg(test)]
pub(crate) use gross_errors::scipy_reference as gross_errors_reference;
pub use gross_errors::{GrossErrorModel, GrossErrors};
pub use kriging::{ResidualKriging, KRIGING_MAX_ROWS};
pub use noise::NoiseModel;
pub use params::{
    CheckedCommitteeParams, CommitteeParams, KrigingMode, NoiseMode, PartitionRule,
    PartitionVariance,
};
pub use pipeline::train_committee;
pub use relevance::{
    member_relevance, relevance, relevance_over, relevance_with_spread, RelevanceRange,
    RELEVANCE_MEANING,
};
pub use tails::{TailShape, ONE_SD_SHARE, TWO_SD_SHARE};

use ndarray::{Array1, Array2, ArrayView2};
use serde::{Deserialize, Serialize};

use crate::evidence::{
    predictive, predictive_factored, FitDiagnostics, FitFailure, GroupKind, HessianKind,
    PosteriorFactor,
};
use crate::net::Architecture;

/// One member of a committee, as stored in a model file.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Member {
    /// Hidden units (0 = linear).
    pub n_hidden: usize,
    /// Which restart of that hidden-unit count it was.
    pub restart: usize,
    /// Seed of its initial weights.
    pub seed: u64,
    /// Kind of each weight group, in the order of `alpha`.
    pub groups: Vec<GroupKind>,
    /// α of each group (scaled space).
    pub alpha: Vec<f64>,
    /// Well-determined parameters γ of each group.
    pub gamma: Vec<f64>,
    /// Noise precision β (scaled target units).
    pub beta: f64,
    /// Log evidence of the refitted network (scaled units).
    pub log_evidence: f64,
    /// NLPD of the candidate on the held-out part (target units).
    pub heldout_nlpd: f64,
    /// Which Hessian the posterior uses.
    pub hessian: HessianKind,
    /// Weights (scaled space), in the layout of [`Architecture`].
    pub weights: Vec<f64>,
    /// Posterior covariance A⁻¹, lower triangle packed row by row.
    #[serde(with = "packed_symmetric")]
    pub posterior_cov: Array2<f64>,
    /// Training record of the refit.
    pub diagnostics: FitDiagnostics,
    /// The member's network for ln σ²(x) when its noise varies with the
    /// inputs; absent under constant noise.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub noise: Option<NoiseModel>,
}

/// A candidate network as tried during the search.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Candidate {
    /// Hidden units.
    pub n_hidden: usize,
    /// Restart index.
    pub restart: usize,
    /// Seed of its initial weights.
    pub seed: u64,
    /// Held-out NLPD (target units), when it trained.
    pub heldout_nlpd: Option<f64>,
    /// Log evidence on the training part (scaled units), when it trained.
    pub log_evidence: Option<f64>,
    /// Total γ, when it trained.
    pub gamma: Option<f64>,
    /// Why it was discarded, when it was.
    pub failure: Option<FitFailure>,
    /// When the search stopped it early (successive halving,
    /// [`crate::prec::SEARCH_RUNGS`]): after how many cycles, and its
    /// held-out NLPD there. Absent for candidates trained to the end (and
    /// in files written before the search stopped any).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub stopped: Option<StoppedEarly>,
}

/// A candidate the search stopped at a rung, for not being among the best
/// there.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct StoppedEarly {
    /// Evidence cycles it had run.
    pub cycles: usize,
    /// Its held-out NLPD after those cycles (target units).
    pub heldout_nlpd: f64,
}

/// How the committee was chosen.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Selection {
    /// Rows in the training part.
    pub n_train_part: usize,
    /// Rows in the held-out part.
    pub n_heldout: usize,
    /// Hidden-unit range finally searched.
    pub hidden_searched: (usize, usize),
    /// Whether the range was widened.
    pub widened: bool,
    /// Held-out NLPD of the committee of the best n candidates, n = 1, 2, …
    pub nlpd_by_size: Vec<f64>,
    /// Chosen size.
    pub n_members: usize,
    /// Members whose refit failed (they were dropped), with the reason.
    pub refit_failures: Vec<String>,
    /// How the noise model was chosen.
    #[serde(default)]
    pub noise: NoiseSelection,
    /// Whether kriging of the residuals was used, and why.
    #[serde(default)]
    pub kriging: KrigingSelection,
    /// Read only from files of session 16's pooling, where further
    /// held-out partitions borrowed the first one's noise model and their
    /// members were added to this committee's (they predict as ordinary
    /// members). Never written now: further partitions are whole
    /// committees ([`Committee::further_partitions`]).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub pooled: Vec<PooledPartition>,
}

/// A further held-out partition of the rows as session 16's pooling
/// recorded it (kept so that such files load): its own search and
/// committee, chosen on its own held-out part with the noise model of the
/// first partition; its members, refitted on all the rows, were pooled
/// with the first partition's.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct PooledPartition {
    /// Master seed of the partition's split and search.
    pub seed: u64,
    /// Rows in its training part.
    pub n_train_part: usize,
    /// Rows in its held-out part.
    pub n_heldout: usize,
    /// Hidden-unit range finally searched.
    pub hidden_searched: (usize, usize),
    /// Held-out NLPD of its committee of the best n candidates, n = 1, 2, …
    pub nlpd_by_size: Vec<f64>,
    /// Members it added to the committee.
    pub n_members: usize,
    /// Whether its members' noise varies with the inputs.
    pub varying: bool,
    /// Members whose refit failed (dropped), with the reason.
    pub refit_failures: Vec<String>,
    /// Every candidate it tried.
    pub candidates: Vec<Candidate>,
}

/// The choice of kriging the committee's residuals, on the held-out part
/// (the NLPDs are those of the noise model that was chosen).
#[derive(Clone, Debug, Default, PartialEq, Serialize, Deserialize)]
pub struct KrigingSelection {
    /// What the user asked for.
    pub requested: KrigingMode,
    /// True when the committee carries a residual process.
    pub used: bool,
    /// Held-out NLPD of the committee alone (target units).
    pub committee_nlpd: Option<f64>,
    /// Held-out NLPD of the committee plus the process fitted on the
    /// training part (target units).
    pub kriging_nlpd: Option<f64>,
    /// Rows the process was fitted on in the end.
    pub n_rows: usize,
    /// Why the process could not be fitted, when it could not.
    pub failure: Option<String>,
    /// The held-out choice of the committee's model part beside the
    /// process (whole or times ρ), when a process was scored.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub model_part: Option<ModelPartChoice>,
}

/// The held-out comparison of the committee's model part taken whole and
/// times ρ beside the residual process (module kriging, "The committee's
/// model part beside the process"): mean Gaussian NLPD per held-out row
/// (scaled target units) of each, and the standard error of their paired
/// difference.
#[derive(Clone, Debug, Default, PartialEq, Serialize, Deserialize)]
pub struct ModelPartChoice {
    /// With the model part whole.
    pub whole_nlpd: f64,
    /// With the model part times ρ.
    pub shared_nlpd: f64,
    /// Standard error of the mean paired difference.
    pub se: f64,
    /// Mean of z² = (t − mean)²/variance over the held-out rows with the
    /// model part whole (1 for honest Gaussian bands).
    #[serde(default)]
    pub whole_mean_z2: f64,
    /// P(χ²_n ≤ Σz²) for those n rows: small when the whole bands are too
    /// wide.
    #[serde(default)]
    pub whole_too_wide_p: f64,
    /// Whether ρ was chosen.
    pub shared: bool,
}

/// The choice between constant and varying noise, on the held-out part.
#[derive(Clone, Debug, Default, PartialEq, Serialize, Deserialize)]
pub struct NoiseSelection {
    /// What the user asked for.
    pub requested: NoiseMode,
    /// True when the members' noise varies with the inputs.
    pub varying: bool,
    /// Held-out NLPD of the best constant-noise committee (target units).
    pub constant_nlpd: Option<f64>,
    /// Held-out NLPD of the best varying-noise committee (target units).
    pub varying_nlpd: Option<f64>,
    /// Candidates whose varying-noise fit failed, with the reason.
    pub varying_failures: Vec<String>,
    /// By how many standard errors of the paired per-row held-out
    /// difference the best varying-noise combination's score lay below the
    /// best constant-noise one's (negative: above it), when both were
    /// judged; varying noise is kept only above
    /// [`crate::prec::NOISE_PARSIMONY_SE`] (the one-standard-error rule).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub varying_margin_se: Option<f64>,
}

/// A trained committee.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Committee {
    /// Number of inputs the members take.
    pub n_inputs: usize,
    /// The members.
    pub members: Vec<Member>,
    /// Every candidate tried.
    pub candidates: Vec<Candidate>,
    /// How the members were chosen.
    pub selection: Selection,
    /// A Gaussian process on the members' residuals, when kriging is used.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub kriging: Option<ResidualKriging>,
    /// Share of gross errors, estimated on the held-out part; absent when
    /// not asked for (and in files before format 4).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub gross_errors: Option<GrossErrorModel>,
    /// The committees of partitions 2 … N, each a whole training of the
    /// same target with seed `seed + p` ([`CommitteeParams::partitions`]),
    /// each with its own noise model, residual process, gross errors and
    /// error shape; this committee is partition 1. Empty with one
    /// partition (and in files written before whole partitions existed);
    /// a further partition holds none itself.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub further_partitions: Vec<Committee>,
    /// How the partitions' variances are combined; present only with
    /// further partitions.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub partition_variance: Option<PartitionVariance>,
    /// The error correlation ρ of the `correlated` rule; present only with
    /// further partitions under that rule.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub partition_correlation: Option<f64>,
}

/// Rows per block in [`Committee::predict_scaled`].
pub const PREDICT_BLOCK_ROWS: usize = 4096;

/// A committee's predictive distribution in scaled target units.
#[derive(Clone, Debug, PartialEq)]
pub struct ScaledPrediction {
    /// Committee mean.
    pub mean: Array1<f64>,
    /// Total variance.
    pub var: Array1<f64>,
    /// Noise part: mean of the members' noise variances (times the
    /// residual process's noise factor when kriging is used).
    pub noise_var: Array1<f64>,
    /// The committee's model variance alone: the members' parameter
    /// variance gᵀA⁻¹g and their spread about the committee mean, without
    /// the noise and without the residual process (what the domain guard
    /// compares with its typical value on the training rows).
    pub committee_var: Array1<f64>,
}

/// Mean and variance of a committee from its members' means and variances.
pub(crate) fn combine(means: &[Array1<f64>], vars: &[Array1<f64>]) -> (Array1<f64>, Array1<f64>) {
    let m = means.len() as f64;
    let n = means.first().map_or(0, |a| a.len());
    let mut mean = Array1::zeros(n);
    for y in means {
        mean += y;
    }
    mean /= m;
    let mut var = Array1::zeros(n);
    for (y, v) in means.iter().zip(vars) {
        var += v;
        var += &(y - &mean).mapv(|d| d * d);
    }
    var /= m;
    (mean, var)
}

/// The average of K partitions' predictions (each a whole committee with
/// its own residual process; [`PartitionVariance`] gives the equations):
/// mean (1/K) Σ μ_p and noise variance (1/K) Σ n_p under every rule; the
/// variance n + the rule's model variance from the partitions' model
/// variances v_p − n_p and the spread s² = (1/K) Σ (μ_p − μ)²; the
/// committee variance by the same rule from the partitions' committee
/// variances. One partition is returned unchanged.
pub fn combine_partitions(parts: &[ScaledPrediction], rule: PartitionRule) -> ScaledPrediction {
    if let [one] = parts {
        return one.clone();
    }
    let k = parts.len() as f64;
    let rows = parts.first().map_or(0, |p| p.mean.len());
    let mut out = ScaledPrediction {
        mean: Array1::zeros(rows),
        var: Array1::zeros(rows),
        noise_var: Array1::zeros(rows),
        committee_var: Array1::zeros(rows),
    };
    for p in parts {
        out.mean += &p.mean;
        out.var += &p.var;
        out.noise_var += &p.noise_var;
        out.committee_var += &p.committee_var;
    }
    out.mean /= k;
    out.var /= k;
    out.noise_var /= k;
    out.committee_var /= k;
    let spread = || {
        let mut s2 = Array1::<f64>::zeros(rows);
        for p in parts {
            s2 += &(&p.mean - &out.mean).mapv(|d| d * d);
        }
        s2 / k
    };
    match rule.variance {
        PartitionVariance::Within => {}
        PartitionVariance::Mixture => {
            let s2 = spread();
            out.var += &s2;
            out.committee_var += &s2;
        }
        PartitionVariance::Correlated => {
            let s2 = spread();
            let rho = rule.correlation;
            for i in 0..rows {
                let u = (out.var[i] - out.noise_var[i]).max(0.0);
                out.var[i] = out.noise_var[i] + correlated_model_var(u, s2[i], parts.len(), rho);
                out.committee_var[i] =
                    correlated_model_var(out.committee_var[i].max(0.0), s2[i], parts.len(), rho);
            }
        }
    }
    out
}

/// The model variance of the mean of `k` partitions under the `correlated`
/// rule ([`PartitionVariance`]): u·(1 + (K−1)ρ)/K + max(0, s² − u·(1−ρ)(K−1)/K)
/// for their mean model variance `u` and the spread `s2` of their means.
fn correlated_model_var(u: f64, s2: f64, k: usize, rho: f64) -> f64 {
    let k = k as f64;
    let kept = u * (1.0 + (k - 1.0) * rho) / k;
    let expected_spread = u * (1.0 - rho) * (k - 1.0) / k;
    kept + (s2 - expected_spread).max(0.0)
}

impl Member {
    /// Architecture of the member.
    pub fn arch(&self, n_inputs: usize) -> Architecture {
        Architecture::new(n_inputs, self.n_hidden)
    }

    /// Noise sd in scaled target units, 1/√β (under varying noise, at
    /// inputs where σ²(x) = 1).
    pub fn noise_sd(&self) -> f64 {
        1.0 / self.beta.sqrt()
    }

    /// Mean, total variance and noise variance for scaled inputs `x`
    /// (scaled target units): the noise variance is 1/β, or σ²(x)/β under
    /// varying noise; the total adds gᵀA⁻¹g.
    pub fn predictive(
        &self,
        n_inputs: usize,
        x: ArrayView2<f64>,
    ) -> (Array1<f64>, Array1<f64>, Array1<f64>) {
        let (y, var) = predictive(
            &self.arch(n_inputs),
            &self.weights,
            &self.posterior_cov,
            self.beta,
            x,
        );
        self.with_noise(n_inputs, x, y, var)
    }

    /// The member's posterior covariance factored for its error bars
    /// ([`PosteriorFactor`]); computed once for a prediction in blocks.
    pub fn posterior_factor(&self) -> PosteriorFactor {
        PosteriorFactor::new(&self.posterior_cov)
    }

    /// [`Member::predictive`] with the factor of [`Member::posterior_factor`].
    pub fn predictive_factored(
        &self,
        factor: &PosteriorFactor,
        n_inputs: usize,
        x: ArrayView2<f64>,
    ) -> (Array1<f64>, Array1<f64>, Array1<f64>) {
        let (y, var) =
            predictive_factored(&self.arch(n_inputs), &self.weights, factor, self.beta, x);
        self.with_noise(n_inputs, x, y, var)
    }

    /// Mean, total variance and noise variance from the network's mean `y`
    /// and variance `var` = 1/β + gᵀΣg: under varying noise the constant
    /// 1/β inside `var` is replaced by σ²(x)/β.
    fn with_noise(
        &self,
        n_inputs: usize,
        x: ArrayView2<f64>,
        y: Array1<f64>,
        var: Array1<f64>,
    ) -> (Array1<f64>, Array1<f64>, Array1<f64>) {
        let constant = 1.0 / self.beta;
        match &self.noise {
            None => (y, var, Array1::from_elem(x.nrows(), constant)),
            Some(nm) => {
                let noise_var = nm.precision_weights(n_inputs, x).mapv(|r| constant / r);
                let total = var - constant + &noise_var;
                (y, total, noise_var)
            }
        }
    }
}

impl Committee {
    /// The shape of a test's scatter about an estimate: the Student-t the
    /// held-out part chose, or the Gaussian.
    pub fn shape(&self) -> TailShape {
        self.gross_errors
            .as_ref()
            .map_or(TailShape::new(None), GrossErrorModel::shape)
    }

    /// Every partition's committee: this one, then its further partitions.
    pub fn partitions(&self) -> impl Iterator<Item = &Committee> {
        std::iter::once(self).chain(&self.further_partitions)
    }

    /// Number of partitions (1 without further partitions).
    pub fn n_partitions(&self) -> usize {
        1 + self.further_partitions.len()
    }

    /// The rule combining the partitions' variances, with its ρ (the
    /// stored one; [`crate::prec::PARTITION_CORRELATION`] where none is
    /// stored, which only a rule other than `correlated` leaves out).
    pub fn partition_rule(&self) -> PartitionRule {
        let rule = PartitionRule::new(self.partition_variance.unwrap_or_default());
        match self.partition_correlation {
            Some(rho) => rule.with_correlation(rho),
            None => rule,
        }
    }

    /// Every member of every partition, with the index of its partition.
    pub fn all_members(&self) -> impl Iterator<Item = (usize, &Member)> {
        self.partitions()
            .enumerate()
            .flat_map(|(p, c)| c.members.iter().map(move |m| (p, m)))
    }

    /// Predictive distribution for scaled inputs `x` (N × d): this
    /// partition's committee alone without further partitions, otherwise
    /// the average of every partition's
    /// ([`combine_partitions`], by [`Committee::partition_rule`]).
    pub fn predict_scaled(&self, x: ArrayView2<f64>) -> ScaledPrediction {
        if self.further_partitions.is_empty() {
            return self.predict_own(x);
        }
        let parts: Vec<ScaledPrediction> = self.partitions().map(|c| c.predict_own(x)).collect();
        combine_partitions(&parts, self.partition_rule())
    }

    /// This partition's committee alone (further partitions ignored), in
    /// blocks of [`PREDICT_BLOCK_ROWS`] rows spread over the available
    /// cores, so that memory stays bounded (one block's Jacobian per
    /// thread) whatever N.
    pub(crate) fn predict_own(&self, x: ArrayView2<f64>) -> ScaledPrediction {
        use rayon::prelude::*;
        let factors: Vec<PosteriorFactor> =
            self.members.iter().map(Member::posterior_factor).collect();
        let blocks: Vec<ScaledPrediction> = x
            .axis_chunks_iter(ndarray::Axis(0), PREDICT_BLOCK_ROWS)
            .collect::<Vec<_>>()
            .into_par_iter()
            .map(|block| self.predict_block(&factors, block))
            .collect();
        let cat = |f: fn(&ScaledPrediction) -> &Array1<f64>| {
            Array1::from_iter(blocks.iter().flat_map(|b| f(b).iter().copied()))
        };
        ScaledPrediction {
            mean: cat(|b| &b.mean),
            var: cat(|b| &b.var),
            noise_var: cat(|b| &b.noise_var),
            committee_var: cat(|b| &b.committee_var),
        }
    }

    fn predict_block(&self, factors: &[PosteriorFactor], x: ArrayView2<f64>) -> ScaledPrediction {
        let mut p = members_predict_factored(&self.members, factors, self.n_inputs, x);
        if let Some(c) = self.model_var_scale() {
            // the committee's model part, c·(parameter variance + spread)
            p.committee_var *= c;
            p.var = &p.noise_var + &p.committee_var;
        }
        if let (Some((gp_mean, gp_var, factor)), Some(k)) =
            (self.kriging_correction(x), self.kriging.as_ref())
        {
            // var = s·σ²(x) + ρ(x)·(parameter + committee variance) + GP
            // variance, ρ = 1 unless the held-out part chose otherwise
            // (module kriging, "The committee's model part beside the
            // process"); committee_var stays whole for the domain guard
            p.mean += &gp_mean;
            for i in 0..p.var.len() {
                p.var[i] = k.total_var(p.var[i], p.noise_var[i], p.committee_var[i], gp_var[i]);
            }
            p.noise_var *= factor;
        }
        p
    }

    /// The factor c on the committee's model part (parameter variance and
    /// spread) when the gross-error refit chose one.
    pub fn model_var_scale(&self) -> Option<f64> {
        self.gross_errors.as_ref().and_then(|g| g.model_var_scale)
    }

    /// The residual process's mean and variance at scaled inputs `x`, with
    /// its factor on the members' noise variance; None without kriging.
    pub fn kriging_correction(
        &self,
        x: ArrayView2<f64>,
    ) -> Option<(Array1<f64>, Array1<f64>, f64)> {
        let k = self.kriging.as_ref()?;
        let (m, v) = k.predict(x)?;
        Some((m, v, k.noise_factor))
    }
}

/// The committee of `members` alone (no residual process) at scaled
/// inputs `x`, each member's gᵀΣg by the product form the training
/// procedure makes its choices with ([`crate::evidence::predictive`]).
pub(crate) fn members_predict(
    members: &[Member],
    n_inputs: usize,
    x: ArrayView2<f64>,
) -> ScaledPrediction {
    committee_of(members.iter().map(|m| m.predictive(n_inputs, x)), x.nrows())
}

/// [`members_predict`] with each member's [`PosteriorFactor`] given: the
/// triangular form, for prediction in blocks.
fn members_predict_factored(
    members: &[Member],
    factors: &[PosteriorFactor],
    n_inputs: usize,
    x: ArrayView2<f64>,
) -> ScaledPrediction {
    committee_of(
        members
            .iter()
            .zip(factors)
            .map(|(m, f)| m.predictive_factored(f, n_inputs, x)),
        x.nrows(),
    )
}

/// The committee from its members' (mean, total variance, noise variance)
/// over `n_rows` rows.
fn committee_of(
    members: impl ExactSizeIterator<Item = (Array1<f64>, Array1<f64>, Array1<f64>)>,
    n_rows: usize,
) -> ScaledPrediction {
    let n_members = members.len();
    let mut means = Vec::with_capacity(n_members);
    let mut vars = Vec::with_capacity(n_members);
    let mut noise = Array1::zeros(n_rows);
    for (y, v, nv) in members {
        means.push(y);
        vars.push(v);
        noise += &nv;
    }
    let (mean, var) = combine(&means, &vars);
    let noise_var = noise / n_members as f64;
    let committee_var = (&var - &noise_var).mapv(|v| v.max(0.0));
    ScaledPrediction {
        mean,
        var,
        noise_var,
        committee_var,
    }
}

/// Serialise a symmetric matrix as its packed lower triangle.
pub(crate) mod packed_symmetric {
    use ndarray::Array2;
    use serde::{de::Error as _, Deserialize, Deserializer, Serialize, Serializer};

    pub fn serialize<S: Serializer>(m: &Array2<f64>, s: S) -> Result<S::Ok, S::Error> {
        let k = m.nrows();
        let mut packed = Vec::with_capacity(k * (k + 1) / 2);
        for i in 0..k {
            for j in 0..=i {
                packed.push(m[[i, j]]);
            }
        }
        packed.serialize(s)
    }

    pub fn deserialize<'de, D: Deserializer<'de>>(d: D) -> Result<Array2<f64>, D::Error> {
        let packed = Vec::<f64>::deserialize(d)?;
        // k(k+1)/2 = len  →  k = (√(8·len + 1) − 1)/2
        let k = (((8 * packed.len() + 1) as f64).sqrt() as usize).saturating_sub(1) / 2;
        if k * (k + 1) / 2 != packed.len() {
            return Err(D::Error::custom(format!(
                "posterior covariance has {} entries, not a packed triangle",
                packed.len()
            )));
        }
        let mut m = Array2::zeros((k, k));
        let mut it = packed.into_iter();
        for i in 0..k {
            for j in 0..=i {
                let v = it.next().unwrap_or(0.0);
                m[[i, j]] = v;
                m[[j, i]] = v;
            }
        }
        Ok(m)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;
    use ndarray::array;

    #[test]
    fn committee_variance_is_mean_variance_plus_spread() {
        let means = vec![array![1.0, 0.0], array![3.0, 0.0]];
        let vars = vec![array![0.5, 1.0], array![1.5, 1.0]];
        let (m, v) = combine(&means, &vars);
        assert_abs_diff_eq!(m[0], 2.0);
        // mean variance 1.0 + spread ((1-2)² + (3-2)²)/2 = 1.0
        assert_abs_diff_eq!(v[0], 2.0);
        assert_abs_diff_eq!(v[1], 1.0);
    }

    #[test]
    fn packed_covariance_round_trips() {
        #[derive(Serialize, Deserialize)]
        struct W(#[serde(with = "packed_symmetric")] Array2<f64>);
        let m = array![[2.0, 0.5, 0.1], [0.5, 3.0, -0.2], [0.1, -0.2, 1.0]];
        let json = serde_json::to_string(&W(m.clone())).expect("ser");
        assert_eq!(json, "[2.0,0.5,3.0,0.1,-0.2,1.0]");
        let back: W = serde_json::from_str(&json).expect("de");
        assert_eq!(back.0, m);
        assert!(serde_json::from_str::<W>("[1.0,2.0]").is_err());
    }

    /// Two partitions by hand: means 1 and 3, variances 0.5 and 1.5 at
    /// the first row. Mixture (Bishop 1995 §9.6): 1.0 + ((1−2)² + (3−2)²)/2
    /// = 2.0; within: 1.0. The noise variance is the mean of the two either
    /// way; the committee variance takes the spread only under mixture.
    #[test]
    fn partitions_combine_by_their_rule() {
        let part = |m: f64, v: f64, n: f64, c: f64| ScaledPrediction {
            mean: array![m, 0.0],
            var: array![v, 1.0],
            noise_var: array![n, 0.5],
            committee_var: array![c, 0.5],
        };
        let parts = [part(1.0, 0.5, 0.2, 0.3), part(3.0, 1.5, 0.4, 1.1)];
        let mix = combine_partitions(&parts, PartitionRule::new(PartitionVariance::Mixture));
        let within = combine_partitions(&parts, PartitionRule::new(PartitionVariance::Within));
        assert_abs_diff_eq!(mix.mean[0], 2.0);
        assert_abs_diff_eq!(mix.var[0], 2.0);
        assert_abs_diff_eq!(within.var[0], 1.0);
        assert_abs_diff_eq!(mix.noise_var[0], 0.3);
        assert_abs_diff_eq!(within.noise_var[0], 0.3);
        assert_abs_diff_eq!(mix.committee_var[0], 0.7 + 1.0);
        assert_abs_diff_eq!(within.committee_var[0], 0.7);
        // equal means: the rules agree
        assert_abs_diff_eq!(mix.var[1], within.var[1]);
        // one partition is returned as it is
        assert_eq!(
            combine_partitions(&parts[..1], PartitionRule::new(PartitionVariance::Mixture)),
            parts[0]
        );
    }

    /// The `correlated` rule by hand ([`PartitionVariance`]): with n the
    /// mean noise variance, u the mean model variance var − noise, s² the
    /// spread of the means, v = n + u·(1 + (K−1)ρ)/K +
    /// max(0, s² − u·(1−ρ)(K−1)/K); the committee variance alike from
    /// the mean committee variance c.
    ///
    /// K = 2, ρ = 0.5 (coefficients 0.75 and 0.25), both partitions with
    /// n = 0.3, u = 0.7, c = 0.7 on average at every row:
    /// - row 0, means 1 and 3: s² = 1 beyond E s² = 0.175, so
    ///   v = 0.3 + 0.525 + 0.825 = 1.65, committee 0.525 + 0.825 = 1.35;
    /// - row 1, means 1.9 and 2.1: s² = 0.01 below E s² = 0.175, so
    ///   v = 0.3 + 0.525 = 0.825, committee 0.525;
    /// - row 2, means equal: the same, 0.825 and 0.525.
    ///
    /// K = 3, ρ = 0.25 (both coefficients 0.5, so v = n + max(u/2, s²)):
    /// variances 0.5, 1.0, 1.5 and noise 0.2, 0.3, 0.4 (n = 0.3, u = 0.7),
    /// committee variances 0.3, 0.5, 0.9 (c = 17/30):
    /// - row 0, means 1, 2, 3: s² = 2/3 > 0.35, v = 0.3 + 2/3, committee
    ///   max(17/60, 2/3) = 2/3;
    /// - row 1, means 1.9, 2, 2.1: s² = 0.02/3 < 0.35, v = 0.65,
    ///   committee 17/60;
    /// - row 2, means equal: v = 0.65, committee 17/60.
    #[test]
    fn correlated_rule_by_hand() {
        let rule =
            |rho: f64| PartitionRule::new(PartitionVariance::Correlated).with_correlation(rho);
        let part = |m: [f64; 3], v: f64, n: f64, c: f64| ScaledPrediction {
            mean: array![m[0], m[1], m[2]],
            var: array![v, v, v],
            noise_var: array![n, n, n],
            committee_var: array![c, c, c],
        };
        let two = [
            part([1.0, 1.9, 2.0], 0.5, 0.2, 0.3),
            part([3.0, 2.1, 2.0], 1.5, 0.4, 1.1),
        ];
        let p = combine_partitions(&two, rule(0.5));
        for (i, (v, c)) in [(1.65, 1.35), (0.825, 0.525), (0.825, 0.525)]
            .into_iter()
            .enumerate()
        {
            assert_abs_diff_eq!(p.var[i], v, epsilon = 1e-12);
            assert_abs_diff_eq!(p.committee_var[i], c, epsilon = 1e-12);
            assert_abs_diff_eq!(p.noise_var[i], 0.3, epsilon = 1e-12);
        }
        assert_abs_diff_eq!(p.mean[0], 2.0);
        assert_abs_diff_eq!(p.mean[1], 2.0);

        let three = [
            part([1.0, 1.9, 2.0], 0.5, 0.2, 0.3),
            part([2.0, 2.0, 2.0], 1.0, 0.3, 0.5),
            part([3.0, 2.1, 2.0], 1.5, 0.4, 0.9),
        ];
        let p = combine_partitions(&three, rule(0.25));
        let (c, s2) = (17.0 / 30.0, 2.0 / 3.0);
        for (i, (v, cv)) in [(0.3 + s2, s2), (0.65, c / 2.0), (0.65, c / 2.0)]
            .into_iter()
            .enumerate()
        {
            assert_abs_diff_eq!(p.var[i], v, epsilon = 1e-12);
            assert_abs_diff_eq!(p.committee_var[i], cv, epsilon = 1e-12);
        }

        // ρ = 1: no disagreement is expected, so all of it is added — the
        // mixture's variance; where the partitions agree, the within's
        for parts in [&two[..], &three[..]] {
            let one = combine_partitions(parts, rule(1.0));
            let mix = combine_partitions(parts, PartitionRule::new(PartitionVariance::Mixture));
            let within = combine_partitions(parts, PartitionRule::new(PartitionVariance::Within));
            for i in 0..3 {
                assert_abs_diff_eq!(one.var[i], mix.var[i], epsilon = 1e-12);
                assert_abs_diff_eq!(one.committee_var[i], mix.committee_var[i], epsilon = 1e-12);
            }
            assert_abs_diff_eq!(one.var[2], within.var[2], epsilon = 1e-12);
            assert_abs_diff_eq!(
                one.committee_var[2],
                within.committee_var[2],
                epsilon = 1e-12
            );
        }
        // ρ = 0, K = 2 where the partitions agree: u/2, an average of two
        // independent errors
        let p = combine_partitions(&two, rule(0.0));
        assert_abs_diff_eq!(p.var[2], 0.3 + 0.35, epsilon = 1e-12);
    }

    /// A file of session 16's pooling (further partitions' members added
    /// to the committee, recorded under `selection.pooled`) still loads and
    /// predicts as its members' committee; it is written back unchanged.
    #[test]
    fn pooled_files_load_and_predict_as_ordinary_committees() {
        let c = super::relevance::tests::committee_with_alphas(&[&[1.0, 4.0], &[2.0, 1.0]]);
        let mut json: serde_json::Value = serde_json::to_value(&c).expect("ser");
        json["selection"]["pooled"] = serde_json::json!([{
            "seed": 12345,
            "n_train_part": 40,
            "n_heldout": 10,
            "hidden_searched": [0, 0],
            "nlpd_by_size": [1.0],
            "n_members": 1,
            "varying": false,
            "refit_failures": [],
            "candidates": []
        }]);
        let old: Committee = serde_json::from_value(json.clone()).expect("loads");
        assert_eq!(old.selection.pooled.len(), 1);
        assert!(old.further_partitions.is_empty());
        let x = array![[0.1, -0.2], [0.4, 0.3]];
        assert_eq!(old.predict_scaled(x.view()), c.predict_scaled(x.view()));
        assert_eq!(serde_json::to_value(&old).expect("ser"), json);
    }
}
