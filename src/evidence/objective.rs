//! The regularised objective M(w) as an argmin problem.
//!
//! # Formula
//!
//! ```text
//! M(w) = β·E_D(w) + Σ_c α_c·E_W,c(w),   E_W,c = ½ Σ_{k∈c} w_k²
//! ```
//!
//! (MacKay 1992, Neural Computation 4(3):448, eq. 2; Bishop 1995 §10.4).
//! The optimiser sees M/N so that its tolerances do not depend on the
//! number of rows.

use std::cell::RefCell;

use argmin::core::{CostFunction, Error as ArgminError, Gradient};
use ndarray::{Array1, ArrayView1, ArrayView2};

use crate::net::Architecture;

/// M(w)/N for fixed hyperparameters, with a one-entry cache so that the
/// line search's cost and gradient calls at the same point share one
/// forward and backward pass.
pub(crate) struct Objective<'a> {
    pub arch: Architecture,
    pub x: ArrayView2<'a, f64>,
    pub t: ArrayView1<'a, f64>,
    pub beta: f64,
    /// α of each parameter's group.
    pub alpha: Vec<f64>,
    cache: RefCell<Option<(Array1<f64>, f64, Array1<f64>)>>,
    evaluations: RefCell<u64>,
}

impl<'a> Objective<'a> {
    pub fn new(
        arch: Architecture,
        x: ArrayView2<'a, f64>,
        t: ArrayView1<'a, f64>,
        beta: f64,
        alpha: Vec<f64>,
    ) -> Self {
        Objective {
            arch,
            x,
            t,
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
        let (e_d, g_d) = self.arch.data_error_gradient(ws, self.x, self.t);
        let mut cost = self.beta * e_d;
        let mut grad = g_d * self.beta;
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
