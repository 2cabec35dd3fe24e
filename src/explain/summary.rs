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

use ndarray::ArrayView2;
use serde::{Deserialize, Serialize};

use crate::committee::Committee;
use crate::data::audit::pooled_sd;
use crate::features::ColumnScaling;
use crate::model::TargetTransform;
use crate::predict::z975;

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

/// What a model records about its training rows, per target.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct TrainingSummary {
    /// The committee's noise sd over the training rows.
    pub noise_sd: NoiseSpread,
    /// Replicate scatter, when the rows hold repeat tests.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub replicates: Option<ReplicateScatter>,
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
    let w = scaling.width();
    let z = z975();
    let noise: Vec<f64> = p
        .mean
        .iter()
        .zip(&p.var)
        .zip(&p.noise_var)
        .map(|((m, v), nv)| {
            transform
                .back_transform(scaling.unscale_linear(*m), v.sqrt() * w, nv.sqrt() * w, z)
                .noise_sd
        })
        .collect();
    TrainingSummary {
        noise_sd: spread(&noise),
        replicates: replicate_scatter(raw_inputs, measured),
    }
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
}
