//! The relevance-weighted distance from a query to its nearest training
//! row: the joint-domain check that follows what the networks use.
//!
//! Each input's scaled value (training range mapped to [−0.5, 0.5], so one
//! unit is the input's whole training range) is multiplied by its weight
//! w_i, from how much the committees use it: the largest over the targets
//! of its sensitivity relative to the strongest input's
//! ([`crate::committee::Committee::input_sensitivity`]), capped at 1 from a
//! fifth of the strongest (`model::train`):
//!
//! ```text
//! d_R(x) = min_n √( Σ_i w_i² (x_i − x_ni)² )
//! ```
//!
//! An input the networks ignore (w_i ≈ 0) then adds nothing, so a step in
//! it alone never makes a row look far; a step in carbon counts in full.
//! Unlike the whitened distance of the strict check this metric is not
//! invariant to a rescaling of the inputs, which is the point: what the
//! networks use sets the scale (distance weighting by sensitivity, common
//! practice, no source). The distance is in range-widths of a fully
//! relevant input: 0.2 means the nearest training row differs by a fifth
//! of carbon's whole training range, say, or by the equivalent spread over
//! several inputs.

use ndarray::{Array2, ArrayView2, Axis};
use rayon::prelude::*;

use crate::prec::DOMAIN_SCREEN_SLACK;

/// The nearest training row by the relevance-weighted distance.
#[derive(Clone, Debug, PartialEq)]
pub struct NearMeasure {
    /// d_R(x), in range-widths of a fully relevant input.
    pub distance: f64,
    /// The nearest stored row.
    pub nearest: usize,
    /// Each input's share of the weighted squared gap to that row.
    pub share: Vec<f64>,
}

/// Stored rows prepared for the weighted nearest-row search of a block of
/// queries by one matrix product (as [`super::DomainIndex`] does for the
/// whitened distance).
#[derive(Clone, Debug)]
pub(crate) struct NearIndex {
    weights: Vec<f64>,
    /// Weighted rows, n × d.
    rows: Array2<f64>,
    /// Row i: [−2 wᵢ, ‖wᵢ‖²] for weighted row wᵢ.
    screen: Array2<f64>,
    max_norm: f64,
}

impl NearIndex {
    /// From scaled rows (row after row, `d` per row) and the weights.
    pub(crate) fn new(scaled_rows: &[f64], d: usize, weights: &[f64]) -> NearIndex {
        let n = scaled_rows.len() / d.max(1);
        let rows = Array2::from_shape_fn((n, d), |(i, c)| scaled_rows[i * d + c] * weights[c]);
        let mut screen = Array2::zeros((n, d + 1));
        for (mut out, row) in screen.rows_mut().into_iter().zip(rows.rows()) {
            for (o, v) in out.iter_mut().zip(row) {
                *o = -2.0 * v;
            }
            out[d] = row.iter().map(|v| v * v).sum();
        }
        let max_norm = screen.column(d).iter().copied().fold(0.0, f64::max);
        NearIndex {
            weights: weights.to_vec(),
            rows,
            screen,
            max_norm,
        }
    }

    /// The nearest stored row of every scaled query (rows × inputs). Rows
    /// are screened by the product; those within the rounding margin of the
    /// best (see [`DOMAIN_SCREEN_SLACK`]) get their distance summed input by
    /// input, so the result does not depend on the product's kernel.
    pub(crate) fn measure_block(&self, scaled: ArrayView2<f64>) -> Vec<NearMeasure> {
        let d = self.weights.len();
        let mut q = Array2::ones((scaled.nrows(), d + 1));
        for (mut o, s) in q.rows_mut().into_iter().zip(scaled.rows()) {
            for c in 0..d {
                o[c] = s[c] * self.weights[c];
            }
        }
        let mut h = Array2::zeros((scaled.nrows(), self.rows.nrows()));
        crate::linalg::multiply_into(q.view(), self.screen.t(), h.view_mut());
        q.rows()
            .into_iter()
            .zip(h.rows())
            .map(|(qw, h)| {
                let qw = &qw.as_slice().expect("standard layout")[..d];
                self.nearest(qw, h.as_slice().expect("standard layout"))
            })
            .collect()
    }

    fn nearest(&self, qw: &[f64], h: &[f64]) -> NearMeasure {
        let q_norm: f64 = qw.iter().map(|v| v * v).sum();
        let slack = DOMAIN_SCREEN_SLACK * (q_norm + self.max_norm);
        let best_h = h.iter().copied().fold(f64::INFINITY, f64::min);
        let pass = |limit: f64| {
            let mut best: Option<(f64, usize)> = None;
            for (i, hi) in h.iter().enumerate() {
                if *hi > limit {
                    continue;
                }
                let d2: f64 = qw
                    .iter()
                    .zip(self.rows.row(i))
                    .map(|(a, b)| (a - b) * (a - b))
                    .sum();
                if best.is_none_or(|(b, _)| d2 < b) {
                    best = Some((d2, i));
                }
            }
            best
        };
        let best = pass(best_h + 2.0 * slack)
            .or_else(|| pass(f64::INFINITY))
            .unwrap_or((f64::NAN, 0));
        let (d2, i) = best;
        let mut share: Vec<f64> = qw
            .iter()
            .zip(self.rows.row(i))
            .map(|(a, b)| (a - b) * (a - b))
            .collect();
        let total: f64 = share.iter().sum();
        if total > 0.0 {
            share.iter_mut().for_each(|s| *s /= total);
        }
        NearMeasure {
            distance: d2.sqrt(),
            nearest: i,
            share,
        }
    }
}

/// The quantiles `qs` of the stored rows' leave-one-out weighted nearest
/// distances (each row against all the others; type 7 quantile). NaN with
/// fewer than two rows.
pub(crate) fn loo_quantiles(
    scaled_rows: &[f64],
    d: usize,
    weights: &[f64],
    qs: &[f64],
) -> Vec<f64> {
    let n = scaled_rows.len() / d.max(1);
    if n < 2 {
        return vec![f64::NAN; qs.len()];
    }
    let w = Array2::from_shape_fn((n, d), |(i, c)| scaled_rows[i * d + c] * weights[c]);
    let mut loo: Vec<f64> = (0..n)
        .into_par_iter()
        .map(|i| {
            let xi = w.row(i);
            (0..n)
                .filter(|&j| j != i)
                .map(|j| {
                    xi.iter()
                        .zip(w.row(j))
                        .map(|(a, b)| (a - b) * (a - b))
                        .sum::<f64>()
                })
                .fold(f64::INFINITY, f64::min)
                .sqrt()
        })
        .collect();
    loo.sort_by(f64::total_cmp);
    qs.iter().map(|&q| quantile_sorted(&loo, q)).collect()
}

/// Scaled queries' nearest rows in blocks (the whole of `scaled`).
pub(crate) fn measure_all(index: &NearIndex, scaled: ArrayView2<f64>) -> Vec<NearMeasure> {
    scaled
        .axis_chunks_iter(Axis(0), crate::prec::DOMAIN_QUERY_BLOCK)
        .flat_map(|b| index.measure_block(b))
        .collect()
}

/// Quantile q of sorted values by linear interpolation between order
/// statistics (the "type 7" rule; common practice, no source).
pub(crate) fn quantile_sorted(sorted: &[f64], q: f64) -> f64 {
    if sorted.is_empty() {
        return f64::NAN;
    }
    let h = q * (sorted.len() - 1) as f64;
    let lo = h.floor() as usize;
    let hi = (lo + 1).min(sorted.len() - 1);
    sorted[lo] + (h - lo as f64) * (sorted[hi] - sorted[lo])
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::{Rng, SeedableRng};

    /// The screened search finds the row a plain pass over every row
    /// finds, with the same distance bit for bit, and an input of weight 0
    /// adds nothing to the distance.
    #[test]
    fn screened_nearest_equals_the_plain_pass() {
        let mut rng = rand_xoshiro::Xoshiro256PlusPlus::seed_from_u64(3);
        let (n, d) = (500, 5);
        let rows: Vec<f64> = (0..n * d).map(|_| rng.random::<f64>() - 0.5).collect();
        let w = [1.0, 0.5, 0.0, 0.2, 1.0];
        let idx = NearIndex::new(&rows, d, &w);
        let q = Array2::from_shape_fn((300, d), |_| 1.4 * (rng.random::<f64>() - 0.5));
        for (qr, m) in q.rows().into_iter().zip(measure_all(&idx, q.view())) {
            let (mut best, mut at) = (f64::INFINITY, 0);
            for i in 0..n {
                let d2: f64 = (0..d)
                    .map(|c| (qr[c] * w[c] - rows[i * d + c] * w[c]).powi(2))
                    .sum();
                if d2 < best {
                    (best, at) = (d2, i);
                }
            }
            assert_eq!(m.nearest, at);
            assert_eq!(m.distance.to_bits(), best.sqrt().to_bits());
            assert!(m.share[2].abs() < 1e-300);
        }
        // a step in the ignored input alone: distance 0 to the row itself
        let mut on = Array2::from_shape_vec((1, d), rows[..d].to_vec()).expect("row");
        on[[0, 2]] += 0.4;
        let m = &measure_all(&idx, on.view())[0];
        assert_eq!((m.nearest, m.distance), (0, 0.0));
    }
}
