//! The regularised objective M(w) as an argmin problem.
//!
//! # Formula
//!
//! ```text
//! M(w) = β·E_D(w) + Σ_c α_c·E_W,c(w),   E_W,c = ½ Σ_{k∈c} w_k²
//! E_D  = ½ Σ_n ρ_n (y_n − t_n)²                       (Gaussian noise)
//! ```
//!
//! (MacKay 1992, Neural Computation 4(3):448, eq. 2; Bishop 1995 §10.4),
//! with per-row precision weights ρ_n (all 1 under constant noise). Under a
//! contamination model (a share of gross errors beside the Gaussian; Box &
//! Tiao 1968, Biometrika 55:119) the EM algorithm (Dempster, Laird & Rubin
//! 1977, JRSS B 39:1) weights each row's term further by its responsibility
//! r_n, the probability that it is free of gross error: E_D = ½ Σ r_n ρ_n
//! (y_n − t_n)². For the
//! network of the log noise variance s(x) = ln σ²(x) the data term is
//! instead the Gaussian negative log likelihood of the residuals r_n of the
//! mean network, up to a constant,
//!
//! ```text
//! E_L = ½ Σ_n w_n (s_n + u_n·e^(−s_n)),   u_n = r_n² / (1 − h_n)
//! ```
//!
//! with h_n the leverage of row n (Bishop & Qazaz 1997, "Regression with
//! input-dependent noise: a Bayesian treatment", NIPS 9; the leverage
//! correction makes E[u_n] = σ²(x_n) for a fitted mean), w_n the rows'
//! responsibilities (all 1 without gross errors).
//! The optimiser sees M/N so that its tolerances do not depend on the
//! number of rows.

use crate::fixedmath::FixedMath;
use std::cell::RefCell;

use argmin::core::{CostFunction, Error as ArgminError, Gradient};
use ndarray::{Array1, ArrayView1, ArrayView2};
use rayon::prelude::*;

use crate::net::{Architecture, Inputs};
use crate::prec::{GRADIENT_BLOCK_ROWS, LARGE_TABLE_ROWS};

/// What the network's output models, and so its data term.
#[derive(Clone, Copy, Debug)]
pub enum DataModel<'a> {
    /// The mean of a Gaussian target `t` with noise precision β·ρ_n.
    Gaussian {
        /// Targets.
        t: ArrayView1<'a, f64>,
        /// Weight of each row's term: its precision weight ρ_n times its
        /// responsibility r_n; `None` means all 1.
        row_weights: Option<ArrayView1<'a, f64>>,
        /// Responsibilities r_n ∈ (0, 1] (already inside `row_weights`):
        /// row n counts as r_n rows in β's re-estimation and the evidence;
        /// `None` means all 1.
        responsibilities: Option<ArrayView1<'a, f64>>,
    },
    /// The log noise variance, from leverage-corrected squared residuals.
    LogVariance {
        /// u_n = r_n²/(1 − h_n).
        u: ArrayView1<'a, f64>,
        /// Responsibilities w_n of the rows; `None` means all 1.
        row_weights: Option<ArrayView1<'a, f64>>,
    },
}

impl<'a> DataModel<'a> {
    /// A Gaussian target with every row at weight 1 and full responsibility.
    pub fn plain(t: ArrayView1<'a, f64>) -> Self {
        DataModel::Gaussian {
            t,
            row_weights: None,
            responsibilities: None,
        }
    }
}

impl<'a> DataModel<'a> {
    /// The data term (β·E_D, or E_L) and its gradient at `w`.
    pub fn value_gradient(
        &self,
        arch: &Architecture,
        w: &[f64],
        x: &Inputs,
        beta: f64,
    ) -> (f64, Array1<f64>) {
        match *self {
            DataModel::Gaussian {
                t,
                row_weights: None,
                ..
            } => {
                let (e_d, g) = arch.data_error_gradient(w, x, t);
                (beta * e_d, g * beta)
            }
            DataModel::Gaussian {
                t,
                row_weights: Some(rho),
                ..
            } => {
                let (y, act) = arch.outputs_and_activations(w, x);
                let r = &y - &t;
                let rho_r = &r * &rho;
                let e_d = 0.5 * rho_r.dot(&r);
                let g = arch.gradient_from_output(w, x, &act, &rho_r);
                (beta * e_d, g * beta)
            }
            DataModel::LogVariance { u, row_weights } => {
                let (s, act) = arch.outputs_and_activations(w, x);
                let scaled = &u * &s.mapv(|v| (-v).exp_fixed());
                let mut terms = &s + &scaled;
                let mut dl_ds = scaled.mapv(|v| 0.5 * (1.0 - v));
                if let Some(wt) = row_weights {
                    terms *= &wt;
                    dl_ds *= &wt;
                }
                (
                    0.5 * terms.sum(),
                    arch.gradient_from_output(w, x, &act, &dl_ds),
                )
            }
        }
    }

    /// The same data model on rows `start..end`.
    fn rows(&self, start: usize, end: usize) -> DataModel<'a> {
        let cut = |v: ArrayView1<'a, f64>| v.slice_move(ndarray::s![start..end]);
        match *self {
            DataModel::Gaussian {
                t,
                row_weights,
                responsibilities,
            } => DataModel::Gaussian {
                t: cut(t),
                row_weights: row_weights.map(cut),
                responsibilities: responsibilities.map(cut),
            },
            DataModel::LogVariance { u, row_weights } => DataModel::LogVariance {
                u: cut(u),
                row_weights: row_weights.map(cut),
            },
        }
    }

    /// [`DataModel::value_gradient`] over the row blocks `blocks` of
    /// [`row_blocks`]: one block (up to [`LARGE_TABLE_ROWS`] rows) is one
    /// pass, as before; more are formed in parallel and added in row order,
    /// the same numbers whatever the number of threads.
    pub fn value_gradient_by_blocks(
        &self,
        arch: &Architecture,
        w: &[f64],
        blocks: &[RowBlock],
        beta: f64,
    ) -> (f64, Array1<f64>) {
        if let [only] = blocks {
            return self.value_gradient(arch, w, &only.inputs, beta);
        }
        let parts: Vec<(f64, Array1<f64>)> = blocks
            .par_iter()
            .map(|b| {
                self.rows(b.start, b.start + b.inputs.nrows())
                    .value_gradient(arch, w, &b.inputs, beta)
            })
            .collect();
        let mut parts = parts.into_iter();
        let (mut value, mut grad) = parts.next().expect("at least one block");
        for (v, g) in parts {
            value += v;
            grad += &g;
        }
        (value, grad)
    }

    /// The data term alone at `w` (β·E_D with β = `beta`, or E_L).
    pub fn value(&self, arch: &Architecture, w: &[f64], x: ArrayView2<f64>, beta: f64) -> f64 {
        let y = arch.predict(w, x);
        match *self {
            DataModel::Gaussian { t, row_weights, .. } => {
                let r = &y - &t;
                let e_d = match row_weights {
                    None => 0.5 * r.dot(&r),
                    Some(rho) => 0.5 * (&r * &rho).dot(&r),
                };
                beta * e_d
            }
            DataModel::LogVariance { u, row_weights } => {
                0.5 * y
                    .iter()
                    .zip(u)
                    .enumerate()
                    .map(|(n, (s, u))| {
                        row_weights.map_or(1.0, |wt| wt[n]) * (s + u * (-s).exp_fixed())
                    })
                    .sum::<f64>()
            }
        }
    }
}

/// Rows `start..` of X, laid out for the passes.
pub struct RowBlock<'a> {
    pub start: usize,
    pub inputs: Inputs<'a>,
}

/// X laid out once for an objective: one block up to
/// [`LARGE_TABLE_ROWS`] rows, else blocks of [`GRADIENT_BLOCK_ROWS`] rows
/// whose passes run in parallel (issue 28 item 2).
pub fn row_blocks(x: ArrayView2<'_, f64>) -> Vec<RowBlock<'_>> {
    let n = x.nrows();
    if n <= LARGE_TABLE_ROWS {
        return vec![RowBlock {
            start: 0,
            inputs: Inputs::new(x),
        }];
    }
    (0..n)
        .step_by(GRADIENT_BLOCK_ROWS)
        .map(|start| {
            let end = (start + GRADIENT_BLOCK_ROWS).min(n);
            RowBlock {
                start,
                inputs: Inputs::new(x.slice_move(ndarray::s![start..end, ..])),
            }
        })
        .collect()
}

/// (w, M/N, ∇M/N) of the last point evaluated.
type CachedPoint = (Array1<f64>, f64, Array1<f64>);

/// M(w)/N for fixed hyperparameters, with a one-entry cache so that the
/// line search's cost and gradient calls at the same point share one
/// forward and backward pass.
pub(crate) struct Objective<'a> {
    pub arch: Architecture,
    pub x: ArrayView2<'a, f64>,
    /// The rows of `x` laid out for the passes, once per objective.
    inputs: Vec<RowBlock<'a>>,
    pub data: DataModel<'a>,
    pub beta: f64,
    /// α of each parameter's group.
    pub alpha: Vec<f64>,
    cache: RefCell<Option<CachedPoint>>,
    evaluations: RefCell<u64>,
}

impl<'a> Objective<'a> {
    pub fn new(
        arch: Architecture,
        x: ArrayView2<'a, f64>,
        data: DataModel<'a>,
        beta: f64,
        alpha: Vec<f64>,
    ) -> Self {
        Objective {
            arch,
            x,
            inputs: row_blocks(x),
            data,
            beta,
            alpha,
            cache: RefCell::new(None),
            evaluations: RefCell::new(0),
        }
    }

    /// How many forward/backward passes have been made.
    pub fn evaluations(&self) -> u64 {
        *self.evaluations.borrow()
    }

    /// (M/N, ∇M/N) at `w`.
    pub fn value_gradient(&self, w: &Array1<f64>) -> (f64, Array1<f64>) {
        if let Some((cw, c, g)) = self.cache.borrow().as_ref() {
            if cw == w {
                return (*c, g.clone());
            }
        }
        *self.evaluations.borrow_mut() += 1;
        let n = self.x.nrows() as f64;
        let ws = w.as_slice().expect("owned 1-D arrays are contiguous");
        let (mut cost, mut grad) =
            self.data
                .value_gradient_by_blocks(&self.arch, ws, &self.inputs, self.beta);
        for (k, (&wk, &ak)) in w.iter().zip(&self.alpha).enumerate() {
            cost += 0.5 * ak * wk * wk;
            grad[k] += ak * wk;
        }
        cost /= n;
        grad /= n;
        *self.cache.borrow_mut() = Some((w.clone(), cost, grad.clone()));
        (cost, grad)
    }
}

impl CostFunction for Objective<'_> {
    type Param = Array1<f64>;
    type Output = f64;

    fn cost(&self, w: &Self::Param) -> Result<Self::Output, ArgminError> {
        Ok(self.value_gradient(w).0)
    }
}

impl Gradient for Objective<'_> {
    type Param = Array1<f64>;
    type Gradient = Array1<f64>;

    fn gradient(&self, w: &Self::Param) -> Result<Self::Gradient, ArgminError> {
        Ok(self.value_gradient(w).1)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::prec::FD_STEP;
    use rand::{Rng, SeedableRng};
    use rand_xoshiro::Xoshiro256PlusPlus;

    /// Gradients of the weighted Gaussian and the log-variance data terms
    /// against central finite differences.
    #[test]
    fn data_term_gradients_match_finite_differences() {
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(5);
        let arch = Architecture::new(3, 4);
        let n = 30;
        let x = ndarray::Array2::from_shape_fn((n, 3), |_| rng.random_range(-0.5..0.5));
        let t = Array1::from_shape_fn(n, |_| rng.random_range(-0.5..0.5));
        let rho = Array1::from_shape_fn(n, |_| rng.random_range(0.2..3.0));
        let u = Array1::from_shape_fn(n, |_| rng.random_range(0.001..0.2));
        let resp = Array1::from_shape_fn(n, |_| rng.random_range(0.01..1.0));
        let w: Vec<f64> = (0..arch.n_params())
            .map(|_| rng.random_range(-1.0..1.0))
            .collect();
        let models = [
            DataModel::Gaussian {
                t: t.view(),
                row_weights: Some(rho.view()),
                responsibilities: None,
            },
            DataModel::LogVariance {
                u: u.view(),
                row_weights: None,
            },
            DataModel::LogVariance {
                u: u.view(),
                row_weights: Some(resp.view()),
            },
        ];
        for model in models {
            let (v, g) = model.value_gradient(&arch, &w, &Inputs::new(x.view()), 7.0);
            assert!((v - model.value(&arch, &w, x.view(), 7.0)).abs() < 1e-9 * v.abs());
            for k in 0..w.len() {
                let mut wp = w.clone();
                let mut wm = w.clone();
                wp[k] += FD_STEP;
                wm[k] -= FD_STEP;
                let fd = (model.value(&arch, &wp, x.view(), 7.0)
                    - model.value(&arch, &wm, x.view(), 7.0))
                    / (2.0 * FD_STEP);
                assert!(
                    (fd - g[k]).abs() < 1e-6 * (1.0 + fd.abs()),
                    "{model:?} param {k}: analytic {} vs FD {fd}",
                    g[k]
                );
            }
        }
    }

    /// Over more than LARGE_TABLE_ROWS rows the data term and its gradient
    /// are summed by blocks: the same numbers as one pass to rounding
    /// (relative 1e-12; the blocks only reorder the sums), and the same bits
    /// with one thread and with two, for every data model; up to
    /// LARGE_TABLE_ROWS rows the single pass itself, bit for bit.
    #[test]
    fn blocked_sums_match_one_pass_and_do_not_depend_on_threads() {
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(9);
        let arch = Architecture::new(3, 4);
        let n = LARGE_TABLE_ROWS + 3 * GRADIENT_BLOCK_ROWS / 2;
        let x = ndarray::Array2::from_shape_fn((n, 3), |_| rng.random_range(-1.0..1.0));
        let t = Array1::from_shape_fn(n, |_| rng.random_range(-1.0..1.0));
        let rho = Array1::from_shape_fn(n, |_| rng.random_range(0.2..1.0));
        let w: Vec<f64> = (0..arch.n_params())
            .map(|_| rng.random_range(-0.5..0.5))
            .collect();
        let models = [
            DataModel::plain(t.view()),
            DataModel::Gaussian {
                t: t.view(),
                row_weights: Some(rho.view()),
                responsibilities: Some(rho.view()),
            },
            DataModel::LogVariance {
                u: rho.view(),
                row_weights: Some(rho.view()),
            },
        ];
        let pool = |k: usize| {
            rayon::ThreadPoolBuilder::new()
                .num_threads(k)
                .build()
                .expect("thread pool")
        };
        for model in models {
            let (v1, g1) = model.value_gradient(&arch, &w, &Inputs::new(x.view()), 3.0);
            let blocks = row_blocks(x.view());
            assert!(blocks.len() > 1);
            let by_threads: Vec<(f64, Array1<f64>)> = [1, 2]
                .iter()
                .map(|&k| {
                    pool(k).install(|| model.value_gradient_by_blocks(&arch, &w, &blocks, 3.0))
                })
                .collect();
            assert_eq!(by_threads[0].0.to_bits(), by_threads[1].0.to_bits());
            assert_eq!(by_threads[0].1, by_threads[1].1);
            let (vb, gb) = &by_threads[0];
            assert!((vb - v1).abs() <= 1e-12 * v1.abs(), "{vb} against {v1}");
            let scale = g1.iter().fold(0.0_f64, |m, v| m.max(v.abs()));
            for (a, b) in gb.iter().zip(&g1) {
                assert!((a - b).abs() <= 1e-12 * scale, "{a} against {b}");
            }
            let small = x.slice(ndarray::s![..LARGE_TABLE_ROWS, ..]);
            let cut = model.rows(0, LARGE_TABLE_ROWS);
            let (vs, gs) = cut.value_gradient(&arch, &w, &Inputs::new(small), 3.0);
            let small_blocks = row_blocks(small);
            assert_eq!(small_blocks.len(), 1);
            let (vsb, gsb) = cut.value_gradient_by_blocks(&arch, &w, &small_blocks, 3.0);
            assert_eq!(vs.to_bits(), vsb.to_bits());
            assert_eq!(gs, gsb);
        }
    }
}
