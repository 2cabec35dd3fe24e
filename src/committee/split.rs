//! Stage 1 of training: the rows split into a training part and a held-out
//! part, and the held-out score every later stage is judged by.

use crate::fixedmath::FixedMath;
use ndarray::{Array1, Array2, ArrayView1, ArrayView2, Axis};
use rand::seq::SliceRandom;
use rand::SeedableRng;
use rand_xoshiro::Xoshiro256PlusPlus;

use super::CheckedCommitteeParams;
use crate::error::{Error, Result};
use crate::prec::{SEARCH_MAX_ROWS, VAR_FLOOR};

/// Mixed into the master seed for the shuffle that picks the held-out rows.
const SPLIT_SEED_SALT: u64 = 0x005E_ED0F_5B11;

/// Mixed into the master seed for the sample of rows the search runs on
/// when the table has more than [`SEARCH_MAX_ROWS`].
const SEARCH_SAMPLE_SEED_SALT: u64 = 0x005A_3B1E_0F20_0028;

/// A prediction on the held-out part: mean and variance (scaled units).
pub(super) type HeldOut = (Array1<f64>, Array1<f64>);

/// The training part and the held-out part of the scaled rows.
pub(super) struct HeldOutSplit {
    /// Rows of the training part (ascending).
    pub train: Vec<usize>,
    /// Rows of the held-out part (ascending).
    pub held: Vec<usize>,
    /// Scaled inputs of the training part.
    pub x_tr: Array2<f64>,
    /// Scaled target of the training part.
    pub t_tr: Array1<f64>,
    /// Scaled inputs of the held-out part.
    pub x_ho: Array2<f64>,
    /// Scaled target of the held-out part.
    pub t_ho: Array1<f64>,
    /// ln of the target's scaling width: turns a scaled NLPD into target units.
    pub ln_width: f64,
}

impl HeldOutSplit {
    /// Hold out `params.holdout_fraction` of the rows, chosen by a shuffle
    /// seeded from the master seed. On a table of more than
    /// [`SEARCH_MAX_ROWS`] rows both parts come from a seeded sample of that
    /// many rows: the search, the choices and the residual process's
    /// hyperparameters are made on it, and only the refit of the chosen
    /// members sees every row (issue 28 item 2).
    ///
    /// # Errors
    /// [`Error::NotEnoughRows`] when fewer than max(2d + 10, 20) rows, or
    /// fewer than 5 held-out rows, are given (`source` names the data).
    pub fn new(
        params: &CheckedCommitteeParams,
        x: ArrayView2<f64>,
        t: ArrayView1<f64>,
        target_width: f64,
        source: &str,
    ) -> Result<Self> {
        let n = x.nrows();
        let d = x.ncols();
        let n_heldout = ((n as f64) * params.holdout_fraction).round() as usize;
        let needed = (2 * d + 10).max(20);
        if n < needed || n_heldout < 5 {
            return Err(Error::NotEnoughRows {
                path: source.to_string(),
                n_rows: n,
                n_inputs: d,
                needed,
            });
        }
        // on a large table, a seeded sample of the rows (the members are
        // refitted on every row afterwards)
        let mut order: Vec<usize> = if n > SEARCH_MAX_ROWS {
            let mut all: Vec<usize> = (0..n).collect();
            all.shuffle(&mut Xoshiro256PlusPlus::seed_from_u64(
                params.seed ^ SEARCH_SAMPLE_SEED_SALT,
            ));
            all.truncate(SEARCH_MAX_ROWS);
            all.sort_unstable();
            all
        } else {
            (0..n).collect()
        };
        let n_heldout = if n > SEARCH_MAX_ROWS {
            ((order.len() as f64) * params.holdout_fraction).round() as usize
        } else {
            n_heldout
        };
        order.shuffle(&mut Xoshiro256PlusPlus::seed_from_u64(
            params.seed ^ SPLIT_SEED_SALT,
        ));
        let (held, train) = order.split_at(n_heldout);
        let mut train = train.to_vec();
        train.sort_unstable();
        let mut held = held.to_vec();
        held.sort_unstable();
        Ok(HeldOutSplit {
            x_tr: x.select(Axis(0), &train),
            t_tr: t.select(Axis(0), &train),
            x_ho: x.select(Axis(0), &held),
            t_ho: t.select(Axis(0), &held),
            train,
            held,
            ln_width: target_width.ln_fixed(),
        })
    }

    /// Number of inputs.
    pub fn n_inputs(&self) -> usize {
        self.x_tr.ncols()
    }

    /// Mean Gaussian NLPD of a held-out prediction (`mean`, `var` in scaled
    /// units) in target units.
    pub fn nlpd(&self, mean: &Array1<f64>, var: &Array1<f64>) -> f64 {
        nlpd_scaled(mean, var, self.t_ho.view()) + self.ln_width
    }

    /// Held-out NLPD of the committees of the first 1, 2, … of the given
    /// members' held-out means and variances (target units).
    pub fn nlpd_by_size(&self, means: &[Array1<f64>], vars: &[Array1<f64>]) -> Vec<f64> {
        (1..=means.len())
            .map(|size| {
                let (m, v) = super::combine(&means[..size], &vars[..size]);
                self.nlpd(&m, &v)
            })
            .collect()
    }
}

/// The size with the least held-out NLPD in `nlpd_by_size` (1-based; the
/// first on ties; 1 when empty).
pub(super) fn best_size(nlpd_by_size: &[f64]) -> usize {
    nlpd_by_size
        .iter()
        .enumerate()
        .min_by(|a, b| a.1.total_cmp(b.1))
        .map_or(1, |(i, _)| i + 1)
}

/// Mean Gaussian NLPD in scaled units:
/// (1/N) Σ ½ ln(2π v_n) + (t_n − m_n)² / (2 v_n).
fn nlpd_scaled(mean: &Array1<f64>, var: &Array1<f64>, t: ArrayView1<f64>) -> f64 {
    let n = t.len() as f64;
    mean.iter()
        .zip(var)
        .zip(t)
        .map(|((m, v), y)| {
            let v = v.max(VAR_FLOOR);
            0.5 * (2.0 * std::f64::consts::PI * v).ln_fixed() + (y - m).powi(2) / (2.0 * v)
        })
        .sum::<f64>()
        / n
}

#[cfg(test)]
mod tests {
    /// A table larger than SEARCH_MAX_ROWS is searched on a seeded sample
    /// of that many distinct rows, split by the holdout fraction; the same
    /// seed gives the same sample (common practice, no source).
    #[test]
    fn a_large_table_is_searched_on_a_sample() {
        use crate::committee::CommitteeParams;
        let n = SEARCH_MAX_ROWS + 500;
        let x = Array2::from_shape_fn((n, 2), |(i, j)| ((i * (j + 3)) % 101) as f64 / 101.0);
        let t = Array1::from_shape_fn(n, |i| (i % 13) as f64);
        let p = CommitteeParams::default().seed(4).check().expect("valid");
        let a = HeldOutSplit::new(&p, x.view(), t.view(), 1.0, "big").expect("split");
        assert_eq!(a.train.len() + a.held.len(), SEARCH_MAX_ROWS);
        let expected_held = (SEARCH_MAX_ROWS as f64 * p.holdout_fraction).round() as usize;
        assert_eq!(a.held.len(), expected_held);
        let mut all: Vec<usize> = a.train.iter().chain(&a.held).copied().collect();
        all.sort_unstable();
        all.dedup();
        assert_eq!(all.len(), SEARCH_MAX_ROWS);
        assert!(all.iter().all(|&r| r < n));
        assert_eq!(a.x_tr.nrows(), a.train.len());
        let b = HeldOutSplit::new(&p, x.view(), t.view(), 1.0, "big").expect("split");
        assert_eq!((a.train, a.held), (b.train, b.held));
    }

    use super::super::stage_fixture::{params, small_data};
    use super::*;

    /// The two parts are disjoint, cover every row, and the held-out part
    /// has round(N·fraction) rows; the same seed gives the same split.
    #[test]
    fn parts_are_disjoint_cover_the_rows_and_follow_the_seed() {
        let (x, t) = small_data(40);
        let p = params();
        let s = HeldOutSplit::new(&p, x.view(), t.view(), 2.0, "small").expect("split");
        assert_eq!(s.held.len(), (40.0 * p.holdout_fraction).round() as usize);
        let mut all: Vec<usize> = s.train.iter().chain(&s.held).copied().collect();
        all.sort_unstable();
        assert_eq!(all, (0..40).collect::<Vec<_>>());
        assert_eq!(s.x_ho.nrows(), s.held.len());
        assert_eq!(s.t_tr.len(), s.train.len());
        let again = HeldOutSplit::new(&p, x.view(), t.view(), 2.0, "small").expect("split");
        assert_eq!(again.held, s.held);
    }

    /// Too few rows for the inputs is refused, naming the data.
    #[test]
    fn too_few_rows_is_refused() {
        let (x, t) = small_data(12);
        let e = HeldOutSplit::new(&params(), x.view(), t.view(), 1.0, "tiny.csv");
        assert!(matches!(e, Err(Error::NotEnoughRows { ref path, .. }) if path == "tiny.csv"));
    }

    /// The NLPD of a standard normal prediction at its mean is ½ ln 2π
    /// (the Gaussian density, any statistics text); ln(width) is added.
    #[test]
    fn nlpd_of_a_perfect_unit_prediction_is_half_ln_two_pi() {
        let (x, t) = small_data(40);
        let s = HeldOutSplit::new(&params(), x.view(), t.view(), 2.0, "small").expect("split");
        let v = Array1::ones(s.t_ho.len());
        let got = s.nlpd(&s.t_ho.clone(), &v);
        let want = 0.5 * (2.0 * std::f64::consts::PI).ln_fixed() + 2.0_f64.ln_fixed();
        assert!((got - want).abs() < 1e-12, "{got} vs {want}");
    }

    /// The best size is the first minimum.
    #[test]
    fn best_size_is_the_first_minimum() {
        assert_eq!(best_size(&[3.0, 1.0, 2.0, 1.0]), 2);
        assert_eq!(best_size(&[]), 1);
    }
}
