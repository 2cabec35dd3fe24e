//! What the model card needs to know about the training rows, computed
//! once at training time and stored in the model (the rows themselves are
//! not stored).
//!
//! # What is stored, per target
//!
//! - the committee's noise sd at every training row, in target units,
//!   summarised by its median, smallest and largest value: under constant
//!   noise on an untransformed target all three are equal; under noise that
//!   varies with the inputs, or on a log or bounded scale, they show how far
//!   the noise level moves over the training data;
//! - the measured replicate scatter: rows with identical values of every
//!   input are repeat tests; rows identical in inputs *and* target are
//!   counted once (a row copied twice is not a repeat test, as in
//!   `mettle audit`), and the pooled sd
//!   `s_p = √( Σ_g Σ_i (y_gi − ȳ_g)² / Σ_g (n_g − 1) )`
//!   (see [`crate::data::audit::pooled_sd`]) is stored with its degrees of
//!   freedom. A fitted noise sd well below s_p points to overfitting; well
//!   above, to inputs missing from the table.
//! - the noise profile: how the fitted noise sd moves along the most
//!   relevant input (largest ARD relevance, see [`crate::explain::relevance`];
//!   the first input without ARD). The training rows are sorted by that
//!   input and cut into [`PROFILE_BINS`] bins of about equal count, a value
//!   never split between two bins; each bin keeps its input range, its row
//!   count, the median fitted noise sd and, when the bin holds repeat tests,
//!   their pooled sd `s_p` as above. Within a bin the two can be compared
//!   directly: the replicate scatter is the one measurement of the noise
//!   that no model stands between.

use ndarray::ArrayView2;
use serde::{Deserialize, Serialize};

use crate::committee::Committee;
use crate::data::audit::pooled_sd;
use crate::features::ColumnScaling;
use crate::transform::TargetTransform;

/// Noise sd over the training rows, in target units.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct NoiseSpread {
    /// Median over the training rows.
    pub median: f64,
    /// Smallest value over the training rows.
    pub min: f64,
    /// Largest value over the training rows.
    pub max: f64,
}

/// Pooled scatter of repeat tests.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct ReplicateScatter {
    /// Pooled replicate sd (target units).
    pub pooled_sd: f64,
    /// Its degrees of freedom, Σ (n_g − 1).
    pub dof: usize,
    /// Groups of repeat tests.
    pub n_groups: usize,
}

/// Bins of the noise profile (fewer when the input takes fewer distinct
/// values).
pub const PROFILE_BINS: usize = 5;

/// One bin of the noise profile.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct NoiseBin {
    /// Smallest input value in the bin (raw units).
    pub lo: f64,
    /// Largest input value in the bin (raw units).
    pub hi: f64,
    /// Training rows in the bin.
    pub n_rows: usize,
    /// Median fitted noise sd over those rows (target units).
    pub noise_sd: f64,
    /// Replicate scatter of the repeat tests in the bin, when it holds any.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub replicates: Option<ReplicateScatter>,
}

/// The fitted noise sd along one input, with the replicate scatter beside
/// it.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct NoiseProfile {
    /// Index of the input (model input order).
    pub input: usize,
    /// Bins from the smallest to the largest input value.
    pub bins: Vec<NoiseBin>,
}

/// What a model records about its training rows, per target.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct TrainingSummary {
    /// The committee's noise sd over the training rows.
    pub noise_sd: NoiseSpread,
    /// Replicate scatter, when the rows hold repeat tests.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub replicates: Option<ReplicateScatter>,
    /// The noise sd along the most relevant input (absent in files written
    /// before it existed).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub noise_profile: Option<NoiseProfile>,
    /// RMSE of the committee on its own training rows (target units;
    /// absent in files written before it was recorded).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub training_rmse: Option<f64>,
    /// Gaussian NLPD of the committee on its own training rows, on the
    /// scale the target is learnt on (as the search's held-out NLPD).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub training_nlpd: Option<f64>,
}

/// The summary for one target: `x` the scaled training inputs of the rows
/// used for it, `raw_inputs` their raw values (row-major, one slice per
/// row), `measured` their target values in target units.
pub fn summarise_training(
    committee: &Committee,
    scaling: &ColumnScaling,
    transform: &TargetTransform,
    x: ArrayView2<f64>,
    raw_inputs: &[Vec<f64>],
    measured: &[f64],
) -> TrainingSummary {
    let p = committee.predict_scaled(x);
    summarise_prediction(committee, &p, scaling, transform, raw_inputs, measured)
}

/// [`summarise_training`] from the committee's prediction `p` of its
/// training rows, made once by the caller (training also takes the
/// domain guard's yardsticks from it).
pub fn summarise_prediction(
    committee: &Committee,
    p: &crate::committee::ScaledPrediction,
    scaling: &ColumnScaling,
    transform: &TargetTransform,
    raw_inputs: &[Vec<f64>],
    measured: &[f64],
) -> TrainingSummary {
    let w = scaling.width();
    let noise: Vec<f64> = p
        .mean
        .iter()
        .zip(&p.noise_var)
        .map(|(m, nv)| transform.noise_sd_back(scaling.unscale_linear(*m), nv.sqrt() * w))
        .collect();
    let input = crate::committee::relevance(committee)
        .and_then(|r| {
            r.iter()
                .enumerate()
                .max_by(|a, b| a.1.total_cmp(b.1).then(b.0.cmp(&a.0)))
                .map(|(i, _)| i)
        })
        .unwrap_or(0);
    let fit = training_fit(p, scaling, transform, measured);
    TrainingSummary {
        noise_sd: spread(&noise),
        replicates: replicate_scatter(raw_inputs, measured),
        noise_profile: noise_profile(input, raw_inputs, measured, &noise, PROFILE_BINS),
        training_rmse: fit.as_ref().map(|e| e.rmse),
        training_nlpd: fit.map(|e| e.nlpd),
    }
}

/// The committee on its own training rows: RMSE in target units, Gaussian
/// NLPD on the learnt scale (no Jacobian, no gross-error part), as the
/// search scores its held-out rows.
fn training_fit(
    p: &crate::committee::ScaledPrediction,
    scaling: &ColumnScaling,
    transform: &TargetTransform,
    measured: &[f64],
) -> Option<crate::metrics::Evaluation> {
    let w = scaling.width();
    let n = measured.len();
    let (mut point, mut zy, mut zm, mut zs) = (
        Vec::with_capacity(n),
        Vec::with_capacity(n),
        Vec::with_capacity(n),
        Vec::with_capacity(n),
    );
    for (k, y) in measured.iter().enumerate() {
        let m = scaling.unscale_linear(p.mean[k]);
        let sd = p.var[k].sqrt() * w;
        point.push(transform.mean_back(m, sd));
        zy.push(transform.forward(*y)?);
        zm.push(m);
        zs.push(sd);
    }
    crate::metrics::evaluate_on_scale(measured, &point, &zy, &zm, &zs, &vec![0.0; n], None)
}

/// The noise profile along input `input`: rows sorted by its value and cut
/// into at most `n_bins` bins of about equal count (a cut moves forward to
/// the next change of value, so equal values share a bin). `None` without
/// rows or when the input is not in the rows.
pub fn noise_profile(
    input: usize,
    raw_inputs: &[Vec<f64>],
    measured: &[f64],
    noise_sd: &[f64],
    n_bins: usize,
) -> Option<NoiseProfile> {
    let n = raw_inputs.len().min(measured.len()).min(noise_sd.len());
    if n == 0 || n_bins == 0 || raw_inputs.iter().any(|r| r.len() <= input) {
        return None;
    }
    let mut order: Vec<usize> = (0..n).collect();
    order.sort_by(|&a, &b| raw_inputs[a][input].total_cmp(&raw_inputs[b][input]));
    let value = |k: usize| raw_inputs[order[k]][input];
    let mut bins = Vec::new();
    let mut start = 0;
    for b in 1..=n_bins {
        if start >= n {
            break;
        }
        let mut end = if b == n_bins {
            n
        } else {
            (b * n / n_bins).max(start + 1)
        };
        while end < n && value(end).to_bits() == value(end - 1).to_bits() {
            end += 1;
        }
        let rows = &order[start..end];
        let sds: Vec<f64> = rows.iter().map(|&i| noise_sd[i]).collect();
        let xs: Vec<Vec<f64>> = rows.iter().map(|&i| raw_inputs[i].clone()).collect();
        let ys: Vec<f64> = rows.iter().map(|&i| measured[i]).collect();
        bins.push(NoiseBin {
            lo: value(start),
            hi: value(end - 1),
            n_rows: rows.len(),
            noise_sd: crate::data::audit::median(&sds).unwrap_or(f64::NAN),
            replicates: replicate_scatter(&xs, &ys),
        });
        start = end;
    }
    Some(NoiseProfile { input, bins })
}

/// Median, min and max; NaN for no values.
fn spread(values: &[f64]) -> NoiseSpread {
    NoiseSpread {
        median: crate::data::audit::median(values).unwrap_or(f64::NAN),
        min: values.iter().copied().reduce(f64::min).unwrap_or(f64::NAN),
        max: values.iter().copied().reduce(f64::max).unwrap_or(f64::NAN),
    }
}

/// Pooled scatter of rows with identical inputs (rows identical in inputs
/// and target counted once); `None` without repeat tests.
pub fn replicate_scatter(raw_inputs: &[Vec<f64>], measured: &[f64]) -> Option<ReplicateScatter> {
    let key = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<u64>>();
    // groups in order of first appearance, found through a hash map: a
    // linear search over the groups made this quadratic in the rows (most
    // of the time of a 100 000-row training)
    let mut index: std::collections::HashMap<Vec<u64>, usize> = std::collections::HashMap::new();
    let mut groups: Vec<Vec<f64>> = Vec::new();
    for (row, &y) in raw_inputs.iter().zip(measured) {
        match index.entry(key(row)) {
            std::collections::hash_map::Entry::Occupied(e) => {
                let g = &mut groups[*e.get()];
                if !g.iter().any(|v| v.to_bits() == y.to_bits()) {
                    g.push(y);
                }
            }
            std::collections::hash_map::Entry::Vacant(e) => {
                e.insert(groups.len());
                groups.push(vec![y]);
            }
        }
    }
    let reps: Vec<Vec<f64>> = groups.into_iter().filter(|g| g.len() >= 2).collect();
    let (pooled_sd, dof) = pooled_sd(&reps)?;
    Some(ReplicateScatter {
        pooled_sd,
        dof,
        n_groups: reps.len(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    #[test]
    fn replicates_pool_by_hand_and_copies_count_once() {
        // groups {1, 3} and {10, 11, 12}; the copied row (10 again) is no
        // repeat test. By hand: SS = 2 + 2 = 4 over dof 1 + 2 = 3.
        let x = vec![
            vec![0.0, 1.0],
            vec![0.0, 1.0],
            vec![5.0, 1.0],
            vec![5.0, 1.0],
            vec![5.0, 1.0],
            vec![5.0, 1.0],
            vec![9.0, 9.0],
        ];
        let y = [1.0, 3.0, 10.0, 11.0, 12.0, 10.0, 4.0];
        let r = replicate_scatter(&x, &y).expect("replicates");
        assert_eq!((r.dof, r.n_groups), (3, 2));
        assert_abs_diff_eq!(r.pooled_sd, (4.0_f64 / 3.0).sqrt(), epsilon = 1e-15);
        assert!(replicate_scatter(&x[5..], &y[5..]).is_none());
    }

    #[test]
    fn profile_bins_keep_equal_values_together_and_pool_replicates_per_bin() {
        // input 0 takes 1, 1, 1, 2, 3, 3 (rows 0..6): two bins of three rows
        // each would cut nothing; three bins would cut between the 1s, so
        // the first bin takes all three 1s. Rows 0 and 1 repeat each other
        // (targets 10 and 12: pooled sd √2 by hand); rows 4 and 5 too
        // (targets 5 and 8: sd √4.5).
        let x: Vec<Vec<f64>> = [1.0, 1.0, 1.0, 2.0, 3.0, 3.0]
            .iter()
            .enumerate()
            .map(|(i, &v)| vec![v, if i == 2 { 7.0 } else { 0.0 }])
            .collect();
        let y = [10.0, 12.0, 4.0, 6.0, 5.0, 8.0];
        let sd = [1.0, 2.0, 3.0, 4.0, 5.0, 6.0];
        let p = noise_profile(0, &x, &y, &sd, 3).expect("profile");
        let got: Vec<(f64, f64, usize, f64)> = p
            .bins
            .iter()
            .map(|b| (b.lo, b.hi, b.n_rows, b.noise_sd))
            .collect();
        assert_eq!(
            got,
            vec![(1.0, 1.0, 3, 2.0), (2.0, 2.0, 1, 4.0), (3.0, 3.0, 2, 5.5)]
        );
        let r0 = p.bins[0].replicates.as_ref().expect("repeats in bin 1");
        assert_abs_diff_eq!(r0.pooled_sd, 2.0_f64.sqrt(), epsilon = 1e-15);
        assert!(p.bins[1].replicates.is_none());
        let r2 = p.bins[2].replicates.as_ref().expect("repeats in bin 3");
        assert_abs_diff_eq!(r2.pooled_sd, 4.5_f64.sqrt(), epsilon = 1e-15);
        assert!(noise_profile(5, &x, &y, &sd, 3).is_none(), "no such input");
    }
}
