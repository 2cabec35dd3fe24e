//! What the model file keeps of the training inputs for the domain guard
//! ([`crate::domain`]): the whitened distinct training rows with their
//! leave-one-out nearest-neighbour reference distance, and the pair grids.
//! Built once at training time from the scaled training inputs; the guard
//! measures queries against it. The method and its sources are in
//! [`crate::domain`]'s documentation.

use ndarray::{Array1, Array2, ArrayView2, Axis};
use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use crate::prec::{
    DOMAIN_EIGEN_FLOOR, DOMAIN_FAR_FLOOR, DOMAIN_K, DOMAIN_PAIR_MAX_CELLS, DOMAIN_PAIR_RADIUS,
    DOMAIN_PAIR_ROWS_PER_CELL, DOMAIN_REFERENCE_MAX_ROWS, DOMAIN_REFERENCE_QUANTILE,
    DOMAIN_REFERENCE_SEED, DOMAIN_THIN_QUANTILE, DOMAIN_THIN_SHARE_OF_FAR,
};

use super::near;
pub(crate) use super::near::quantile_sorted;

/// What the model file keeps of the training inputs for the joint-domain
/// check: the scaled training rows and the reference distance.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct DomainReference {
    /// Neighbours counted (k).
    pub k: usize,
    /// Inputs per row.
    pub n_inputs: usize,
    /// Mean of the scaled training rows.
    pub mean: Vec<f64>,
    /// Whitening matrix W (inputs × inputs, row after row): a scaled row s
    /// maps to (s − mean)·W, whose covariance over the training rows is
    /// the identity.
    pub whitening: Vec<f64>,
    /// Whitened distinct training rows, row after row (repeated rows once;
    /// a seeded sample of [`DOMAIN_REFERENCE_MAX_ROWS`] of them when there
    /// are more).
    pub rows: Vec<f64>,
    /// Scaled (not whitened) distinct training rows, row after row, for naming the
    /// inputs that make up a gap.
    pub scaled_rows: Vec<f64>,
    /// D: the [`DOMAIN_REFERENCE_QUANTILE`] quantile of the training rows'
    /// leave-one-out k-NN distances.
    pub reference_distance: f64,
    /// Median of the same distances (for the notes).
    pub median_distance: f64,
    /// Occupancy of every two-input projection of the training rows (the
    /// pair check; absent in files written before it existed: the check is
    /// then skipped).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub pairs: Option<PairGrid>,
    /// Weight of each input in the relevance-weighted distance (the
    /// largest relevance it has for any target; absent without ARD and in
    /// files before version 7: every input weighs 1).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub relevance: Option<Vec<f64>>,
    /// The [`DOMAIN_REFERENCE_QUANTILE`] quantile of the stored rows'
    /// leave-one-out relevance-weighted nearest distances (range-widths;
    /// absent in files before version 7: computed when the guard is built).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub relevant_distance: Option<f64>,
    /// The [`DOMAIN_THIN_QUANTILE`] quantile of the same distances.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub relevant_thin_distance: Option<f64>,
    /// The inputs declared as codes (schema `kind = "levels"`), one entry
    /// per code with its indicator inputs and its within-level reference
    /// distances ([`DomainReference::with_codes`]). Absent for a model
    /// without codes, whose file is unchanged.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub codes: Vec<CodeReference>,
}

/// The guard's reference for one input declared as a code: the nearest
/// training row is sought among the rows at the query's level of the code
/// only, in the relevance-weighted distance over the inputs that are no
/// code's indicators:
///
/// ```text
/// d_c(x) = min { d_R(x, x_n) : training row n at x's level of code c }
/// ```
///
/// with its own leave-one-out reference (each training row against the
/// other rows at its level). A level seen only at low carbon, queried at
/// high carbon, is then far though rows of other levels lie near; and the
/// reference is not inflated by rows whose nearest neighbour differs in
/// another, unrelated code (k-nearest-neighbour novelty detection within
/// groups, common practice, no source; measured in tests/domain_levels.rs,
/// docs/domain.md).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct CodeReference {
    /// The code's indicator inputs (positions in the model's inputs); a
    /// row with none of them at 1 is at the implied level.
    pub columns: Vec<usize>,
    /// The [`DOMAIN_REFERENCE_QUANTILE`] quantile of the stored rows'
    /// leave-one-out within-level distances d_c (range-widths; rows alone
    /// at their level left out). Beyond it (and beyond
    /// [`DOMAIN_FAR_FLOOR`]) a row is outside; there is no thin grade of
    /// its own (the relevance-weighted distance over the quantities grades
    /// thin support, so that the codes add no thin flags to ordinary rows).
    pub far: f64,
}

/// The nearest training row at a query's level of one code.
#[derive(Clone, Debug, PartialEq)]
pub struct LevelNear {
    /// The code ([`DomainReference::codes`] position).
    pub code: usize,
    /// The indicator input at 1 in the query (`None`: the implied level).
    pub level: Option<usize>,
    /// d_c(x) and the row, with each input's share of the gap.
    pub near: near::NearMeasure,
}

/// Which cells of a coarse grid over each pair of inputs hold a training
/// row: the pair check. Each input's scaled training range [−0.5, 0.5] is
/// cut into `cells` equal cells; for every pair (a, b), a < b, taken in
/// input order (a = 0, b = 1, 2, …; then a = 1, …), a bitmap of
/// `cells × cells` bits marks the cells where at least one distinct
/// training row falls (bit `i·cells + j` for cell i of input a and cell j
/// of input b, packed into 64-bit words, lowest bit first).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct PairGrid {
    /// Cells per input.
    pub cells: usize,
    /// A query is out of the joint domain when no training row lies in the
    /// block of cells within `radius` cells of its own, for some pair.
    pub radius: usize,
    /// One bitmap per pair.
    pub occupied: Vec<Vec<u64>>,
}

impl PairGrid {
    /// Words per pair bitmap.
    pub fn words(cells: usize) -> usize {
        (cells * cells).div_ceil(64)
    }

    /// The cell of a scaled value (values beyond the training range fall in
    /// the end cells; the range check judges them).
    fn cell(&self, u: f64) -> usize {
        let c = ((u + 0.5) * self.cells as f64).floor();
        if c.is_nan() || c < 0.0 {
            0
        } else {
            (c as usize).min(self.cells - 1)
        }
    }

    /// Build from distinct scaled rows (rows × inputs) with `cells` cells
    /// per input and the block radius `radius`.
    pub fn build(x: ArrayView2<f64>, cells: usize, radius: usize) -> PairGrid {
        let d = x.ncols();
        let cells = cells.max(1);
        let mut g = PairGrid {
            cells,
            radius,
            occupied: Vec::new(),
        };
        let idx: Vec<Vec<usize>> = x
            .rows()
            .into_iter()
            .map(|r| r.iter().map(|&u| g.cell(u)).collect())
            .collect();
        for a in 0..d {
            for b in a + 1..d {
                let mut bits = vec![0u64; Self::words(cells)];
                for r in &idx {
                    let k = r[a] * cells + r[b];
                    bits[k / 64] |= 1 << (k % 64);
                }
                g.occupied.push(bits);
            }
        }
        g
    }

    /// True when no cell within `rho` cells of (i, j) is occupied in `bits`.
    fn block_empty(&self, bits: &[u64], i: usize, j: usize, rho: usize) -> bool {
        let span = |c: usize| c.saturating_sub(rho)..=(c + rho).min(self.cells - 1);
        !span(i).any(|x| {
            span(j).any(|y| {
                let k = x * self.cells + y;
                bits[k / 64] >> (k % 64) & 1 == 1
            })
        })
    }

    /// The pairs (a, b) in whose projection the scaled query has no
    /// training row within `radius` cells of its own cell, the widest empty
    /// neighbourhood first (pairs with equal widths in input order).
    pub fn empty_pairs(&self, scaled: &[f64]) -> Vec<(usize, usize)> {
        let d = scaled.len();
        let idx: Vec<usize> = scaled.iter().map(|&u| self.cell(u)).collect();
        let mut out = Vec::new();
        let mut p = 0;
        for a in 0..d {
            for b in a + 1..d {
                let bits = &self.occupied[p];
                p += 1;
                if self.block_empty(bits, idx[a], idx[b], self.radius) {
                    // only for the flagged pairs: how far the emptiness reaches
                    let depth = (self.radius + 1..self.cells)
                        .take_while(|&rho| self.block_empty(bits, idx[a], idx[b], rho))
                        .count();
                    out.push((depth, a, b));
                }
            }
        }
        out.sort_by_key(|x| std::cmp::Reverse(x.0));
        out.into_iter().map(|(_, a, b)| (a, b)).collect()
    }
}

/// Cells per input of the pair check for `n` distinct training rows: as
/// many that a cell would hold [`DOMAIN_PAIR_ROWS_PER_CELL`] rows on
/// average if the rows spread evenly over a pair's square, n / G² = c, so
/// G = ⌊√(n / c)⌋, between 2r + 1 (r = [`DOMAIN_PAIR_RADIUS`]) and
/// [`DOMAIN_PAIR_MAX_CELLS`]. Real rows cluster, so most cells are empty
/// and the occupied ones hold more.
pub fn pair_cells(n: usize) -> usize {
    let g = (n as f64 / DOMAIN_PAIR_ROWS_PER_CELL).sqrt().floor() as usize;
    g.clamp(2 * DOMAIN_PAIR_RADIUS + 1, DOMAIN_PAIR_MAX_CELLS)
}

/// Euclidean distance between two rows.
pub(crate) fn dist2(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).map(|(x, y)| (x - y) * (x - y)).sum()
}

/// Mean and whitening matrix of scaled rows `x`: W = V·Λ^(−1/2) from the
/// eigen-decomposition C = V·Λ·Vᵀ of their covariance, eigenvalues floored
/// at [`DOMAIN_EIGEN_FLOOR`] times the largest (an input that is an exact
/// combination of others, such as a carbon equivalent beside its elements,
/// leaves a direction without spread; the floor keeps the metric finite
/// there while still making a step off that combination far). Distances
/// after whitening are Mahalanobis distances (Mahalanobis 1936, Proc.
/// Natl. Inst. Sci. India 2:49). `None` when the decomposition fails.
fn whitening(x: ArrayView2<f64>) -> Option<(Array1<f64>, Array2<f64>)> {
    let n = x.nrows() as f64;
    let mean = x.mean_axis(Axis(0))?;
    let c = x.to_owned() - &mean;
    let cov = crate::linalg::gram(c.view()) / (n - 1.0).max(1.0);
    let (eig, v) = crate::linalg::symmetric_eigen(cov.view())?;
    let top = eig.iter().copied().fold(0.0, f64::max);
    if top <= 0.0 {
        return None;
    }
    let scale = eig.mapv(|l| 1.0 / l.max(top * DOMAIN_EIGEN_FLOOR).sqrt());
    Some((mean, v * &scale))
}

/// `m` of the row positions `0..n` (m < n), in increasing order, drawn
/// without replacement by a partial Fisher–Yates shuffle from the fixed
/// seed [`DOMAIN_REFERENCE_SEED`]: the same rows for the same data on any
/// number of threads.
fn reference_sample(n: usize, m: usize) -> Vec<usize> {
    use rand::{Rng, SeedableRng};
    let mut rng = rand_xoshiro::Xoshiro256PlusPlus::seed_from_u64(DOMAIN_REFERENCE_SEED);
    let mut idx: Vec<usize> = (0..n).collect();
    for i in 0..m {
        let j = rng.random_range(i..n);
        idx.swap(i, j);
    }
    idx.truncate(m);
    idx.sort_unstable();
    idx
}

/// The k-th smallest of `d` (1-based k, k ≤ len).
fn kth_smallest(d: &mut [f64], k: usize) -> f64 {
    let (_, v, _) = d.select_nth_unstable_by(k - 1, f64::total_cmp);
    *v
}

impl DomainReference {
    /// Build from the scaled training inputs (rows × inputs). `None` with
    /// fewer than two rows (no neighbourhood to measure) or when the
    /// covariance cannot be decomposed.
    pub fn build(x: ArrayView2<f64>) -> Option<DomainReference> {
        Self::build_with_k(x, DOMAIN_K)
    }

    /// As [`DomainReference::build`] with `k` neighbours instead of
    /// [`DOMAIN_K`] (for studies of the setting).
    pub fn build_with_k(x: ArrayView2<f64>, k: usize) -> Option<DomainReference> {
        Self::build_with(x, k, None, DOMAIN_PAIR_RADIUS)
    }

    /// As [`DomainReference::build_with_k`] with the pair check's cells per
    /// input (`None`: [`pair_cells`] of the distinct row count; `Some(0)`:
    /// no pair check) and block radius given (for studies of the setting).
    pub fn build_with(
        x: ArrayView2<f64>,
        k: usize,
        cells: Option<usize>,
        radius: usize,
    ) -> Option<DomainReference> {
        let d = x.ncols();
        let (mean, w) = whitening(x)?;
        // repeated rows (replicate tests at one condition) count once: a
        // row's own replicates are not its neighbours
        let mut distinct: Vec<Vec<f64>> = x.rows().into_iter().map(|r| r.to_vec()).collect();
        distinct.sort_by(|a, b| {
            a.iter()
                .zip(b)
                .map(|(p, q)| p.total_cmp(q))
                .find(|o| o.is_ne())
                .unwrap_or(std::cmp::Ordering::Equal)
        });
        distinct.dedup();
        let n_distinct = distinct.len();
        if n_distinct < 2 {
            return None;
        }
        let all = Array2::from_shape_vec((n_distinct, d), distinct.concat()).ok()?;
        // the pair grid sees every distinct row; the nearest-neighbour
        // reference keeps at most DOMAIN_REFERENCE_MAX_ROWS of them
        let pairs = match cells.unwrap_or_else(|| pair_cells(n_distinct)) {
            0 => None,
            g => Some(PairGrid::build(all.view(), g, radius)),
        };
        let x = if n_distinct > DOMAIN_REFERENCE_MAX_ROWS {
            all.select(
                Axis(0),
                &reference_sample(n_distinct, DOMAIN_REFERENCE_MAX_ROWS),
            )
        } else {
            all
        };
        let n = x.nrows();
        let x = x.view();
        let white = crate::linalg::matmul((&x - &mean).view(), w.view());
        let rows: Vec<f64> = white.iter().copied().collect();
        let k = k.clamp(1, n - 1);
        let mut loo: Vec<f64> = (0..n)
            .into_par_iter()
            .map(|i| {
                let xi = &rows[i * d..(i + 1) * d];
                let mut ds: Vec<f64> = (0..n)
                    .filter(|&j| j != i)
                    .map(|j| dist2(xi, &rows[j * d..(j + 1) * d]))
                    .collect();
                kth_smallest(&mut ds, k).sqrt()
            })
            .collect();
        loo.sort_by(f64::total_cmp);
        let scaled_rows: Vec<f64> = x.iter().copied().collect();
        Some(
            DomainReference {
                k,
                n_inputs: d,
                reference_distance: quantile_sorted(&loo, DOMAIN_REFERENCE_QUANTILE),
                median_distance: quantile_sorted(&loo, 0.5),
                mean: mean.to_vec(),
                whitening: w.iter().copied().collect(),
                rows,
                relevant_distance: None,
                relevant_thin_distance: None,
                scaled_rows,
                pairs,
                relevance: None,
                codes: Vec::new(),
            }
            .with_weights(vec![1.0; d], None),
        )
    }

    /// The reference with the inputs weighed by `relevance` (one weight per
    /// input, the most relevant 1) in the relevance-weighted distance, its
    /// reference distance measured again with them. `None` leaves every
    /// input at weight 1.
    pub fn with_relevance(self, relevance: Option<Vec<f64>>) -> DomainReference {
        match relevance.filter(|w| w.len() == self.n_inputs) {
            Some(w) => self.with_weights(w.clone(), Some(w)),
            None => self,
        }
    }

    /// Measure the relevance-weighted reference distances with `w`; keep
    /// `stored` as the relevance.
    fn with_weights(mut self, w: Vec<f64>, stored: Option<Vec<f64>>) -> DomainReference {
        let q = near::loo_quantiles(
            &self.scaled_rows,
            self.n_inputs,
            &w,
            &[DOMAIN_REFERENCE_QUANTILE, DOMAIN_THIN_QUANTILE],
        );
        self.relevant_distance = Some(q[0]).filter(|v| v.is_finite());
        self.relevant_thin_distance = Some(q[1]).filter(|v| v.is_finite());
        self.relevance = stored;
        self
    }

    /// Each input's relevance weight (the stored relevance, every input 1
    /// without it), a code's indicators included: what the pair check and
    /// the nearest-neighbour listing weigh inputs by.
    pub fn relevance_weights(&self) -> Vec<f64> {
        self.relevance
            .clone()
            .unwrap_or_else(|| vec![1.0; self.n_inputs])
    }

    /// Each input's weight in the relevance-weighted distance: 0 for a
    /// code's indicators (the codes are checked level by level,
    /// [`DomainReference::level_nearest`]).
    pub fn weights(&self) -> Vec<f64> {
        let mut w = self.relevance_weights();
        for j in self.codes.iter().flat_map(|c| &c.columns) {
            if let Some(v) = w.get_mut(*j) {
                *v = 0.0;
            }
        }
        w
    }

    /// The reference with the inputs at `groups` (per code, the positions
    /// of its indicator inputs) checked as codes: their indicators leave the
    /// relevance-weighted distance (its reference distances measured again
    /// without them), and each code gets its within-level reference
    /// ([`CodeReference`]). Empty `groups` leave the reference as it is.
    pub fn with_codes(mut self, groups: Vec<Vec<usize>>) -> DomainReference {
        let d = self.n_inputs;
        let groups: Vec<Vec<usize>> = groups
            .into_iter()
            .filter(|g| !g.is_empty() && g.iter().all(|&j| j < d))
            .collect();
        if groups.is_empty() {
            return self;
        }
        self.codes = groups
            .into_iter()
            .map(|columns| CodeReference {
                columns,
                far: f64::NAN,
            })
            .collect();
        let w = self.weights();
        let stored = self.relevance.clone();
        self = self.with_weights(w.clone(), stored);
        for c in 0..self.codes.len() {
            self.codes[c].far = self.level_loo_quantile(c, &w);
        }
        self
    }

    /// The level of code `c` of a scaled row: the indicator input at 1
    /// (scaled above 0), `None` for none (the implied level).
    pub fn level_of(&self, c: usize, scaled: &[f64]) -> Option<usize> {
        self.codes[c]
            .columns
            .iter()
            .copied()
            .find(|&j| scaled.get(j).is_some_and(|v| *v > 0.0))
    }

    /// Weighted squared gap of a scaled query to stored row `i`, input by
    /// input.
    fn weighted_gaps(&self, w: &[f64], scaled: &[f64], i: usize) -> Vec<f64> {
        let d = self.n_inputs;
        let row = &self.scaled_rows[i * d..(i + 1) * d];
        scaled
            .iter()
            .zip(row)
            .zip(w)
            .map(|((a, b), w)| (w * (a - b)) * (w * (a - b)))
            .collect()
    }

    /// Their sum, summed input by input in the same order.
    fn weighted_dist2(&self, w: &[f64], scaled: &[f64], i: usize) -> f64 {
        let d = self.n_inputs;
        let row = &self.scaled_rows[i * d..(i + 1) * d];
        scaled
            .iter()
            .zip(row)
            .zip(w)
            .map(|((a, b), w)| (w * (a - b)) * (w * (a - b)))
            .sum()
    }

    /// The [`DOMAIN_REFERENCE_QUANTILE`] quantile of the stored rows'
    /// leave-one-out within-level distances for code `c` (NaN when no row
    /// shares its level with another).
    fn level_loo_quantile(&self, c: usize, w: &[f64]) -> f64 {
        let d = self.n_inputs;
        let n = self.n_rows();
        let levels: Vec<Option<usize>> = (0..n)
            .map(|i| self.level_of(c, &self.scaled_rows[i * d..(i + 1) * d]))
            .collect();
        let mut loo: Vec<f64> = (0..n)
            .into_par_iter()
            .map(|i| {
                let xi = &self.scaled_rows[i * d..(i + 1) * d];
                (0..n)
                    .filter(|&j| j != i && levels[j] == levels[i])
                    .map(|j| self.weighted_dist2(w, xi, j))
                    .fold(f64::INFINITY, f64::min)
                    .sqrt()
            })
            .filter(|v| v.is_finite())
            .collect();
        loo.sort_by(f64::total_cmp);
        quantile_sorted(&loo, DOMAIN_REFERENCE_QUANTILE)
    }

    /// For every code, the nearest stored row at the scaled query's level
    /// (`None` for a code when no stored row is at that level: a level
    /// too rare to be in a sampled reference, or one a row read through the
    /// schema would have been refused at).
    pub fn level_nearest(&self, scaled: &[f64]) -> Vec<Option<LevelNear>> {
        let d = self.n_inputs;
        let w = self.weights();
        (0..self.codes.len())
            .map(|c| {
                let level = self.level_of(c, scaled);
                let mut best: Option<(f64, usize)> = None;
                for i in 0..self.n_rows() {
                    if self.level_of(c, &self.scaled_rows[i * d..(i + 1) * d]) != level {
                        continue;
                    }
                    let d2 = self.weighted_dist2(&w, scaled, i);
                    if best.is_none_or(|(b, _)| d2 < b) {
                        best = Some((d2, i));
                    }
                }
                let (d2, i) = best?;
                let mut share = self.weighted_gaps(&w, scaled, i);
                let total: f64 = share.iter().sum();
                if total > 0.0 {
                    share.iter_mut().for_each(|s| *s /= total);
                }
                Some(LevelNear {
                    code: c,
                    level,
                    near: near::NearMeasure {
                        distance: d2.sqrt(),
                        nearest: i,
                        share,
                    },
                })
            })
            .collect()
    }

    /// Code `c`'s within-level distance beyond which a row is outside: the
    /// larger of [`DOMAIN_FAR_FLOOR`] and [`CodeReference::far`].
    pub fn level_far_distance(&self, c: usize) -> f64 {
        let far = self.codes[c].far;
        if far.is_finite() {
            far.max(DOMAIN_FAR_FLOOR)
        } else {
            DOMAIN_FAR_FLOOR
        }
    }

    /// The relevance-weighted distance beyond which a row is outside: the
    /// larger of [`DOMAIN_FAR_FLOOR`] and the training rows' own 99th
    /// percentile (range-widths).
    pub fn far_distance(&self) -> f64 {
        self.distances().0
    }

    /// The relevance-weighted distances beyond which a row is outside
    /// ([`DomainReference::far_distance`]) and thinly supported: the larger
    /// of [`DOMAIN_THIN_SHARE_OF_FAR`] of the floor and the training rows'
    /// own [`DOMAIN_THIN_QUANTILE`] quantile, at most the first. Files
    /// before version 7 have them measured here.
    pub fn distances(&self) -> (f64, f64) {
        let (q_far, q_thin) = match (self.relevant_distance, self.relevant_thin_distance) {
            (Some(a), Some(b)) => (a, b),
            _ => {
                let q = near::loo_quantiles(
                    &self.scaled_rows,
                    self.n_inputs,
                    &self.weights(),
                    &[DOMAIN_REFERENCE_QUANTILE, DOMAIN_THIN_QUANTILE],
                );
                (q[0], q[1])
            }
        };
        let finite_or = |v: f64, or: f64| if v.is_finite() { v.max(or) } else { or };
        let far = finite_or(q_far, DOMAIN_FAR_FLOOR);
        let thin = finite_or(q_thin, DOMAIN_THIN_SHARE_OF_FAR * DOMAIN_FAR_FLOOR).min(far);
        (far, thin)
    }

    /// Training rows stored.
    pub fn n_rows(&self) -> usize {
        self.rows.len() / self.n_inputs.max(1)
    }

    /// Row `i` of the stored whitened inputs.
    pub fn row(&self, i: usize) -> &[f64] {
        &self.rows[i * self.n_inputs..(i + 1) * self.n_inputs]
    }
}
