//! Dense matrix products by the `matrixmultiply` crate, for the two places
//! where prediction's time goes (the Laplace variance's triangular panels,
//! [`crate::evidence::PosteriorFactor`], and the domain guard's distances,
//! [`crate::domain::DomainIndex`]).
//!
//! ndarray's own `dot` hands large products to the system BLAS. On a CPU
//! newer than the OpenBLAS of Debian 12 (0.3.21) knows, that falls back to
//! generic SSE3 kernels; `matrixmultiply` picks its kernel (AVX-512, FMA,
//! AVX or SSE2) from the CPU it runs on. Training keeps ndarray's products,
//! so trained models do not depend on this choice.

use ndarray::{ArrayView2, ArrayViewMut2};

/// C ← A·B for views of any layout, by `matrixmultiply::dgemm`.
///
/// # Panics
/// When the shapes do not chain: A is m × n, B n × p, C m × p.
#[allow(unsafe_code)]
pub(crate) fn multiply_into(a: ArrayView2<f64>, b: ArrayView2<f64>, mut c: ArrayViewMut2<f64>) {
    let (m, n) = a.dim();
    let p = b.ncols();
    assert!(
        b.nrows() == n && c.dim() == (m, p),
        "shapes {:?} · {:?} → {:?}",
        a.dim(),
        b.dim(),
        c.dim()
    );
    let (sa, sb, sc) = (a.strides(), b.strides(), c.strides());
    let (rsc, csc) = (sc[0], sc[1]);
    // SAFETY: the three views are valid for the shapes checked above and
    // their own strides, which dgemm takes in elements as ndarray gives
    // them; C is borrowed mutably, so it aliases neither A nor B; with
    // β = 0 dgemm writes C without reading it.
    unsafe {
        matrixmultiply::dgemm(
            m,
            n,
            p,
            1.0,
            a.as_ptr(),
            sa[0],
            sa[1],
            b.as_ptr(),
            sb[0],
            sb[1],
            0.0,
            c.as_mut_ptr(),
            rsc,
            csc,
        );
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::{s, Array2, ShapeBuilder};

    /// Against ndarray's own product, for row-major, column-major,
    /// transposed and sliced views and an empty inner dimension.
    #[test]
    fn products_of_any_layout_match_ndarray() {
        let a = Array2::from_shape_fn((7, 5), |(i, j)| (i * 5 + j) as f64 / 7.0 - 1.0);
        let b = Array2::from_shape_fn((5, 4), |(i, j)| ((i + 2 * j) % 5) as f64 - 2.0);
        let b_f = {
            let mut f = Array2::zeros((5, 4).f());
            f.assign(&b);
            f
        };
        let wide = Array2::from_shape_fn((9, 5), |(i, j)| (i * j) as f64 * 0.25);
        let cases = [
            (a.view(), b.view()),
            (a.view(), b_f.view()),
            (b.t(), a.slice(s![..3, ..]).reversed_axes()),
            (wide.slice(s![2..8;2, ..]), b.view()),
        ];
        for (x, y) in cases {
            let mut c = Array2::from_elem((x.nrows(), y.ncols()), f64::NAN);
            multiply_into(x, y, c.view_mut());
            let expected = x.dot(&y);
            for (u, v) in c.iter().zip(&expected) {
                assert!((u - v).abs() <= 1e-12 * (1.0 + v.abs()), "{u} against {v}");
            }
        }
        let mut c = Array2::from_elem((3, 2), f64::NAN);
        multiply_into(
            Array2::zeros((3, 0)).view(),
            Array2::zeros((0, 2)).view(),
            c.view_mut(),
        );
        assert!(c.iter().all(|&v| v == 0.0), "{c:?}");
    }
}
