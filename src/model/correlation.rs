//! The correlation of two targets' scatter about their estimates, from the
//! training rows where both were measured: what couples requirements on
//! several targets (`screen`, `design`, `predict --require`).

use ndarray::{ArrayView2, Axis};
use serde::{Deserialize, Serialize};

use super::{Model, TargetModel};
use crate::prec::JOINT_MIN_ROWS;

/// Pearson's correlation of two targets' standardised residuals
/// r = (z − mean)/sd on their learnt scales, over the training rows where
/// both were measured (the committees' predictions there, noise and model
/// uncertainty together).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct ScatterCorrelation {
    /// First target.
    pub a: String,
    /// Second target.
    pub b: String,
    /// The correlation.
    pub rho: f64,
    /// Rows where both were measured.
    pub n_rows: usize,
}

impl Model {
    /// The scatter correlation of targets `a` and `b` (either order), when
    /// the training data gave one.
    pub fn scatter_correlation(&self, a: &str, b: &str) -> Option<&ScatterCorrelation> {
        self.scatter_correlations
            .iter()
            .find(|c| (c.a == a && c.b == b) || (c.a == b && c.b == a))
    }
}

/// Every pair of targets measured together on at least
/// [`JOINT_MIN_ROWS`] training rows: `x` the scaled inputs of all rows,
/// `values` each target's measured values (raw, `None` where missing).
/// Training stores them in the model; this also gives them for a model
/// file written before they were stored, from its training rows. A
/// single target has no pair, and its committee is not run over the rows
/// (at 100 000 rows that prediction was an eighth of the training's CPU
/// time; docs/benchmarks.md).
pub fn scatter_correlations(
    targets: &[TargetModel],
    x: ArrayView2<f64>,
    values: &[Vec<Option<f64>>],
) -> Vec<ScatterCorrelation> {
    if targets.len() < 2 {
        return Vec::new();
    }
    let residuals: Vec<Vec<Option<f64>>> = targets
        .iter()
        .zip(values)
        .map(|(t, v)| standardised_residuals(t, x, v))
        .collect();
    let mut out = Vec::new();
    for i in 0..targets.len() {
        for j in i + 1..targets.len() {
            let pairs: Vec<(f64, f64)> = residuals[i]
                .iter()
                .zip(&residuals[j])
                .filter_map(|(a, b)| Some(((*a)?, (*b)?)))
                .collect();
            if pairs.len() < JOINT_MIN_ROWS {
                continue;
            }
            let rho = pearson(&pairs);
            if rho.is_finite() {
                out.push(ScatterCorrelation {
                    a: targets[i].name.clone(),
                    b: targets[j].name.clone(),
                    rho,
                    n_rows: pairs.len(),
                });
            }
        }
    }
    out
}

/// (z − mean)/sd of target `t` on its learnt scale at every row where it
/// was measured.
fn standardised_residuals(
    t: &TargetModel,
    x: ArrayView2<f64>,
    values: &[Option<f64>],
) -> Vec<Option<f64>> {
    let rows: Vec<usize> = (0..values.len()).filter(|&i| values[i].is_some()).collect();
    let p = t.committee.predict_scaled(x.select(Axis(0), &rows).view());
    let mut out = vec![None; values.len()];
    for (k, &i) in rows.iter().enumerate() {
        let z = values[i]
            .and_then(|y| t.transform.forward(y))
            .and_then(|z| t.scaling.scale(z));
        out[i] = z.map(|z| (z - p.mean[k]) / p.var[k].sqrt());
    }
    out
}

/// Pearson's correlation coefficient of the pairs.
fn pearson(pairs: &[(f64, f64)]) -> f64 {
    let n = pairs.len() as f64;
    let (ma, mb) = pairs
        .iter()
        .fold((0.0, 0.0), |(a, b), (x, y)| (a + x / n, b + y / n));
    let (mut sab, mut saa, mut sbb) = (0.0, 0.0, 0.0);
    for (x, y) in pairs {
        sab += (x - ma) * (y - mb);
        saa += (x - ma) * (x - ma);
        sbb += (y - mb) * (y - mb);
    }
    sab / (saa * sbb).sqrt()
}

#[cfg(test)]
mod tests {
    use super::pearson;

    /// Pearson's r of a small set by hand: x = 1, 2, 3, 4; y = 2, 4, 5, 4:
    /// Sxy = 3.5, Sxx = 5, Syy = 4.75, r = 3.5/√23.75 (common practice, no
    /// source).
    #[test]
    fn pearson_by_hand() {
        let r = pearson(&[(1.0, 2.0), (2.0, 4.0), (3.0, 5.0), (4.0, 4.0)]);
        assert!((r - 3.5 / 23.75_f64.sqrt()).abs() < 1e-14);
    }
}
