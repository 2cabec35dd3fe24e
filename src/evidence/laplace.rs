//! The parameter part of the Laplace error bar, gᵀΣg, for many rows at once.
//!
//! # Method
//!
//! Each row's predictive variance carries gₙᵀ Σ gₙ, with gₙ = ∂y/∂w at the
//! row and Σ = A⁻¹ the posterior covariance of the k weights (MacKay 1992,
//! eq. 29; Bishop 1995, eq. 10.34). Formed as the product JΣ of the
//! Jacobian J (N × k) with Σ, it costs k² multiply-adds per row. With the
//! Cholesky factor Σ = L Lᵀ (L lower triangular),
//!
//! ```text
//! gᵀ Σ g = ‖Lᵀ g‖²,   the rows of Z = J L  are the (Lᵀ gₙ)ᵀ
//! ```
//!
//! and, L being lower triangular, a block of Z's columns [a, b) needs only
//! J's columns from a on: Z[:, a..b] = J[:, a..] · L[a.., a..b]. In panels
//! of [`PANEL_COLUMNS`] columns that is k²/2 + k·p/2 multiply-adds per row,
//! about half the product's (the blocked triangular multiply of Golub &
//! Van Loan 2013, *Matrix Computations*, 4th ed., §1.3 and §3.1). L is
//! computed once per network; where Σ is not numerically positive definite
//! (its Cholesky factorisation fails), the plain product is used.
//!
//! The panels are multiplied by [`crate::linalg::multiply_into`], whose
//! sums run in a fixed order, so the variances do not depend on the CPU
//! (with the `matrixmultiply` crate, which picks its kernel from the CPU,
//! they did in the last bits). On k = 101 and 4096 rows one 48-column panel
//! takes about 2–3 ms on the 2-core build machine.
//!
//! # Where each form is used
//!
//! The two forms agree to within 1e-9 relative (unit test), not bit for
//! bit. Training keeps the product ([`super::predictive`]): the committee
//! procedure's held-out choices compare NLPDs, and a difference in the last
//! digits can turn a near-tie (with another form of gᵀΣg in the training
//! procedure, the first shared yacht split trained another committee:
//! test RMSE 0.217 against 0.202), so every trained model stays the one
//! the product gives. Prediction of many rows in blocks, where the cost lies,
//! uses the triangular form ([`super::predictive_factored`]).

use ndarray::{Array1, Array2, ArrayView2, Axis};

/// Columns of Z = J L computed per matrix product in
/// [`PosteriorFactor::quadratic_forms`]: narrower panels skip more of L's
/// zero upper triangle, wider ones make longer products. For 4096 rows and
/// k = 81 … 131, panels of 32 or 64 columns took 1.3–2.7 ms, of 16 columns
/// 1.7–3.5 ms and one full product 1.5–3.1 ms (2026-12-03, build machine);
/// 48 lies between the two best. In the whole prediction bench, widths 16
/// to 128 differed by less than the machine's scatter from run to run.
pub const PANEL_COLUMNS: usize = 48;

/// The posterior covariance of one network in the form its error bars are
/// computed from.
#[derive(Clone, Debug)]
pub struct PosteriorFactor(Form);

#[derive(Clone, Debug)]
enum Form {
    /// L with Σ = L Lᵀ, lower triangular, row-major.
    Triangular(Array2<f64>),
    /// Σ itself, when it has no Cholesky factor.
    Dense(Array2<f64>),
}

impl PosteriorFactor {
    /// Factor the posterior covariance `cov` (k × k, symmetric).
    pub fn new(cov: &Array2<f64>) -> Self {
        let triangular = crate::linalg::Cholesky::new(cov.view())
            .map(crate::linalg::Cholesky::into_lower)
            .filter(|lower| lower.iter().all(|v| v.is_finite()));
        match triangular {
            Some(l) => PosteriorFactor(Form::Triangular(l)),
            None => PosteriorFactor(Form::Dense(cov.clone())),
        }
    }

    /// True when the triangular form is used (Σ had a Cholesky factor).
    pub fn is_triangular(&self) -> bool {
        matches!(self.0, Form::Triangular(_))
    }

    /// gₙᵀ Σ gₙ for every row gₙ of `jac` (N × k).
    pub fn quadratic_forms(&self, jac: ArrayView2<f64>) -> Array1<f64> {
        match &self.0 {
            Form::Triangular(lower) => {
                let k = lower.nrows();
                let mut z = Array2::<f64>::zeros((jac.nrows(), k));
                for a in (0..k).step_by(PANEL_COLUMNS) {
                    let b = (a + PANEL_COLUMNS).min(k);
                    crate::linalg::multiply_into(
                        jac.slice(ndarray::s![.., a..]),
                        lower.slice(ndarray::s![a.., a..b]),
                        z.slice_mut(ndarray::s![.., a..b]),
                    );
                }
                z.map_axis(Axis(1), |row| row.dot(&row))
            }
            Form::Dense(cov) => quadratic_forms_by_product(cov, jac),
        }
    }
}

/// gₙᵀ Σ gₙ for every row gₙ of `jac` by the product JΣ (k² multiply-adds
/// per row).
pub fn quadratic_forms_by_product(cov: &Array2<f64>, jac: ArrayView2<f64>) -> Array1<f64> {
    let js = crate::linalg::matmul(jac, cov.view());
    ndarray::Zip::from(js.rows())
        .and(jac.rows())
        .map_collect(|a, b| a.dot(&b))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::fixedmath::FixedMath;
    use rand::SeedableRng;
    use rand_distr::{Distribution, Normal};
    use rand_xoshiro::Xoshiro256PlusPlus;

    /// A random covariance with eigenvalues spread over `decades` decades,
    /// as the α of pruned and of well-determined weight groups give.
    fn covariance(k: usize, decades: f64, seed: u64) -> Array2<f64> {
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
        let n = Normal::new(0.0, 1.0).expect("unit sd");
        let g = Array2::from_shape_fn((k, k), |_| n.sample(&mut rng));
        // an orthogonal Q: the eigenvectors of the symmetric g + gᵀ
        let (_, q) = crate::linalg::symmetric_eigen((&g + &g.t()).view()).expect("eigen");
        let lambda = Array1::from_shape_fn(k, |i| {
            10f64.powf_fixed(-decades * i as f64 / (k - 1) as f64)
        });
        let scaled = &q * &lambda;
        scaled.dot(&q.t())
    }

    #[test]
    fn triangular_factor_matches_the_product() {
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(7);
        let n = Normal::new(0.0, 1.0).expect("unit sd");
        for (k, decades) in [(21, 4.0), (151, 10.0)] {
            let cov = covariance(k, decades, k as u64);
            let jac = Array2::from_shape_fn((300, k), |_| n.sample(&mut rng));
            let f = PosteriorFactor::new(&cov);
            assert!(f.is_triangular(), "k = {k}: Cholesky should succeed");
            let fast = f.quadratic_forms(jac.view());
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
        let q = f.quadratic_forms(jac.view());
        // (vᵀg)²: 1 and 36
        assert!((q[0] - 1.0).abs() < 1e-12 && (q[1] - 36.0).abs() < 1e-12);
    }
}
