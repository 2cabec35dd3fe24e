//! The parameter part of the Laplace error bar, gᵀΣg, for many rows at once.
//!
//! # Method
//!
//! Each row's predictive variance carries gₙᵀ Σ gₙ, with gₙ = ∂y/∂w at the
//! row and Σ = A⁻¹ the posterior covariance of the k weights (MacKay 1992,
//! eq. 29; Bishop 1995, eq. 10.34). Formed as the product JΣ of the
//! Jacobian J (N × k) with Σ, it costs k² multiply-adds per row. With the
//! Cholesky factor Σ = L Lᵀ,
//!
//! ```text
//! gᵀ Σ g = ‖Lᵀ g‖²,   Lᵀ g = U⁻¹ g  with  U = L⁻ᵀ  (upper triangular)
//! ```
//!
//! so all rows' Lᵀgₙ come from one triangular solve with N right-hand sides
//! (LAPACK `dtrtrs`, a level-3 `dtrsm` inside): k²/2 multiply-adds per row,
//! half the product's (Golub & Van Loan 2013, *Matrix Computations*, 4th
//! ed., §3.1 and §4.2). U is computed once per network. Where Σ is not
//! numerically positive definite (its Cholesky factorisation fails), the
//! plain product is used.
//!
//! # Where each form is used
//!
//! The two forms agree to within 1e-9 relative (unit test), not bit for
//! bit. Training keeps the product ([`super::predictive`]): the committee
//! procedure's held-out choices compare NLPDs, and a difference in the last
//! digits can turn a near-tie (with the triangular form in the training
//! procedure too, the first shared yacht split trained another committee:
//! test RMSE 0.217 against 0.202), so every trained model stays the one
//! the product gives. Prediction of many rows in blocks, where the cost lies,
//! uses the triangular form ([`super::predictive_factored`]).

use ndarray::{Array1, Array2, ArrayView2, Axis, ShapeBuilder};
use ndarray_linalg::{Cholesky, Diag, SolveTriangular, SolveTriangularInto, UPLO};

/// The posterior covariance of one network in the form its error bars are
/// computed from.
#[derive(Clone, Debug)]
pub struct PosteriorFactor(Form);

#[derive(Clone, Debug)]
enum Form {
    /// U = L⁻ᵀ with Σ = L Lᵀ, column-major as LAPACK takes it.
    Triangular(Array2<f64>),
    /// Σ itself, when it has no Cholesky factor.
    Dense(Array2<f64>),
}

impl PosteriorFactor {
    /// Factor the posterior covariance `cov` (k × k, symmetric).
    pub fn new(cov: &Array2<f64>) -> Self {
        let triangular = cov.cholesky(UPLO::Lower).ok().and_then(|lower| {
            let k = cov.nrows();
            let identity = Array2::<f64>::eye(k);
            // L⁻¹ by a triangular solve against the identity
            let lower_inv = lower
                .solve_triangular(UPLO::Lower, Diag::NonUnit, &identity)
                .ok()?;
            let mut upper = Array2::zeros((k, k).f());
            upper.assign(&lower_inv.t());
            let usable =
                upper.iter().all(|v: &f64| v.is_finite()) && upper.diag().iter().all(|&d| d > 0.0);
            usable.then_some(upper)
        });
        match triangular {
            Some(u) => PosteriorFactor(Form::Triangular(u)),
            None => PosteriorFactor(Form::Dense(cov.clone())),
        }
    }

    /// True when the triangular form is used (Σ had a Cholesky factor).
    pub fn is_triangular(&self) -> bool {
        matches!(self.0, Form::Triangular(_))
    }

    /// gₙᵀ Σ gₙ for every row gₙ of `jac` (N × k, row-major), which is
    /// used up: its transpose, column-major without a copy, is overwritten
    /// by the solve.
    pub fn quadratic_forms(&self, jac: Array2<f64>) -> Array1<f64> {
        match &self.0 {
            Form::Triangular(upper) => {
                let jac_t = if jac.is_standard_layout() {
                    jac.reversed_axes()
                } else {
                    let mut c = Array2::zeros((jac.ncols(), jac.nrows()).f());
                    c.assign(&jac.t());
                    c
                };
                // trtrs fails only on a zero on U's diagonal, and `new`
                // keeps U only when its diagonal, 1/L_ii, is finite
                upper
                    .solve_triangular_into(UPLO::Upper, Diag::NonUnit, jac_t)
                    .expect("U has a finite, non-zero diagonal")
                    .map_axis(Axis(0), |col| col.dot(&col))
            }
            Form::Dense(cov) => quadratic_forms_by_product(cov, jac.view()),
        }
    }
}

/// gₙᵀ Σ gₙ for every row gₙ of `jac` by the product JΣ (k² multiply-adds
/// per row).
pub fn quadratic_forms_by_product(cov: &Array2<f64>, jac: ArrayView2<f64>) -> Array1<f64> {
    let js = jac.dot(cov);
    ndarray::Zip::from(js.rows())
        .and(jac.rows())
        .map_collect(|a, b| a.dot(&b))
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;
    use rand_distr::{Distribution, Normal};
    use rand_xoshiro::Xoshiro256PlusPlus;

    /// A random covariance with eigenvalues spread over `decades` decades,
    /// as the α of pruned and of well-determined weight groups give.
    fn covariance(k: usize, decades: f64, seed: u64) -> Array2<f64> {
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
        let n = Normal::new(0.0, 1.0).expect("unit sd");
        let g = Array2::from_shape_fn((k, k), |_| n.sample(&mut rng));
        let (q, _) = ndarray_linalg::QR::qr(&g).expect("qr");
        let lambda = Array1::from_shape_fn(k, |i| 10f64.powf(-decades * i as f64 / (k - 1) as f64));
        let scaled = &q * &lambda;
        scaled.dot(&q.t())
    }

    #[test]
    fn triangular_solve_matches_the_product() {
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(7);
        let n = Normal::new(0.0, 1.0).expect("unit sd");
        for (k, decades) in [(21, 4.0), (151, 10.0)] {
            let cov = covariance(k, decades, k as u64);
            let jac = Array2::from_shape_fn((300, k), |_| n.sample(&mut rng));
            let f = PosteriorFactor::new(&cov);
            assert!(f.is_triangular(), "k = {k}: Cholesky should succeed");
            let fast = f.quadratic_forms(jac.clone());
            let plain = quadratic_forms_by_product(&cov, jac.view());
            for (a, b) in fast.iter().zip(&plain) {
                assert!((a - b).abs() <= 1e-9 * b.abs(), "k = {k}: {a} against {b}");
            }
        }
    }

    #[test]
    fn semi_definite_covariance_falls_back_to_the_product() {
        // rank one: no Cholesky factor
        let v = Array1::from(vec![1.0, 2.0, 3.0]);
        let cov = v
            .view()
            .insert_axis(Axis(1))
            .dot(&v.view().insert_axis(Axis(0)));
        let f = PosteriorFactor::new(&cov);
        assert!(!f.is_triangular());
        let jac =
            Array2::from_shape_vec((2, 3), vec![1.0, 0.0, 0.0, 1.0, 1.0, 1.0]).expect("shape");
        let q = f.quadratic_forms(jac);
        // (vᵀg)²: 1 and 36
        assert!((q[0] - 1.0).abs() < 1e-12 && (q[1] - 36.0).abs() < 1e-12);
    }
}
