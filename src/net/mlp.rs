//! Forward pass, data-error gradient, Jacobian and Hessian of a
//! single-hidden-layer tanh network.
//!
//! # Formula
//!
//! With inputs x ∈ ℝᵈ, `H` hidden units and parameters w = (W, b, v, c):
//!
//! ```text
//! y(x; w) = Σ_j v_j · tanh(Σ_i W_ji x_i + b_j) + c          (H ≥ 1)
//! y(x; w) = Σ_i a_i x_i + c                                  (H = 0, linear)
//! E_D(w)  = ½ Σ_n (y(x_n; w) − t_n)²
//! ```
//!
//! The Gauss–Newton approximation of the Hessian of `E_D` is `JᵀJ` with
//! `J_nk = ∂y_n/∂w_k`; the exact Hessian adds `Σ_n r_n ∇²y_n` with residual
//! `r_n = y_n − t_n` (Bishop 1995, *Neural Networks for Pattern Recognition*,
//! §4.8 and §4.10).
//!
//! # Parameter layout
//!
//! A flat vector, in this order: `W` row by row (hidden unit j, then input
//! i: index `j·d + i`), hidden biases `b` (H), output weights `v` (H),
//! output bias `c`. In linear mode: `a` (d), then `c`.

use ndarray::{s, Array1, Array2, ArrayView1, ArrayView2, Axis};

#[cfg(test)]
use super::activation::{exp_mid, tanh, tanh_in_place, tanh_slice};
use super::inputs::Inputs;
use super::passes;
use serde::{Deserialize, Serialize};

/// The shape of a network: how many inputs and hidden units.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
pub struct Architecture {
    /// Number of inputs d.
    pub n_inputs: usize,
    /// Number of tanh hidden units H; 0 means a linear model.
    pub n_hidden: usize,
}

/// Where each kind of parameter sits in the flat parameter vector.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct ParamLayout {
    /// Start of the input-to-hidden weights (or the linear coefficients).
    pub input_weights: usize,
    /// Start of the hidden biases (equal to `output_weights` when linear).
    pub hidden_bias: usize,
    /// Start of the hidden-to-output weights.
    pub output_weights: usize,
    /// Index of the output bias.
    pub output_bias: usize,
}

impl Architecture {
    /// A network with `n_inputs` inputs and `n_hidden` tanh units.
    pub fn new(n_inputs: usize, n_hidden: usize) -> Self {
        Architecture { n_inputs, n_hidden }
    }

    /// True when the model is linear (no hidden layer).
    pub fn is_linear(&self) -> bool {
        self.n_hidden == 0
    }

    /// Number of parameters k: `H·d + 2H + 1`, or `d + 1` when linear.
    pub fn n_params(&self) -> usize {
        let (d, h) = (self.n_inputs, self.n_hidden);
        if h == 0 {
            d + 1
        } else {
            h * d + 2 * h + 1
        }
    }

    /// Offsets of each parameter block in the flat vector.
    pub fn layout(&self) -> ParamLayout {
        let (d, h) = (self.n_inputs, self.n_hidden);
        if h == 0 {
            ParamLayout {
                input_weights: 0,
                hidden_bias: d,
                output_weights: d,
                output_bias: d,
            }
        } else {
            ParamLayout {
                input_weights: 0,
                hidden_bias: h * d,
                output_weights: h * d + h,
                output_bias: h * d + 2 * h,
            }
        }
    }

    /// The input whose weight parameter `k` is, if it is an input weight.
    pub fn input_of_param(&self, k: usize) -> Option<usize> {
        let lay = self.layout();
        // input weights (or linear coefficients) come first, up to the hidden biases
        if k < lay.hidden_bias {
            Some(k % self.n_inputs)
        } else {
            None
        }
    }

    fn split<'a>(&self, w: &'a [f64]) -> Parts<'a> {
        let (d, h) = (self.n_inputs, self.n_hidden);
        let lay = self.layout();
        let input_w = ArrayView2::from_shape((h.max(1), d), &w[..lay.hidden_bias])
            .expect("layout matches n_params by construction");
        Parts {
            input_w,
            hidden_b: ArrayView1::from(&w[lay.hidden_bias..lay.output_weights]),
            output_w: ArrayView1::from(&w[lay.output_weights..lay.output_bias]),
            output_b: w[lay.output_bias],
        }
    }

    /// Network outputs for every row of `x` (N × d).
    ///
    /// # Panics
    /// If `w.len() != self.n_params()` or `x` has the wrong number of columns.
    pub fn predict(&self, w: &[f64], x: ArrayView2<f64>) -> Array1<f64> {
        self.forward(w, &Inputs::new(x)).0
    }

    /// Outputs and hidden activations (the activations are empty when
    /// linear); the hidden layer by [`passes::hidden_layer`].
    fn forward(&self, w: &[f64], inp: &Inputs) -> (Array1<f64>, Array2<f64>) {
        assert_eq!(w.len(), self.n_params(), "parameter vector length");
        assert_eq!(inp.ncols(), self.n_inputs, "input columns");
        let p = self.split(w);
        if self.is_linear() {
            let y = inp.view().dot(&p.input_w.row(0)) + p.output_b;
            return (y, Array2::zeros((0, 0)));
        }
        let slice = |v: ArrayView1<'_, f64>| -> Vec<f64> { v.to_vec() };
        let (b, v) = (slice(p.hidden_b), slice(p.output_w));
        let layer = passes::HiddenLayer::new(p.input_w, &b, &v, p.output_b);
        let mut act = Array2::<f64>::zeros((inp.nrows(), self.n_hidden));
        let mut y = Array1::<f64>::zeros(inp.nrows());
        passes::hidden_layer(
            inp,
            &layer,
            act.as_slice_mut()
                .expect("a fresh array is in standard layout"),
            y.as_slice_mut().expect("a fresh vector is contiguous"),
        );
        (y, act)
    }

    /// Data error `E_D = ½ Σ (y − t)²` and its gradient with respect to w,
    /// by back-propagation.
    pub fn data_error_gradient(
        &self,
        w: &[f64],
        inp: &Inputs,
        t: ArrayView1<f64>,
    ) -> (f64, Array1<f64>) {
        let (y, act) = self.forward(w, inp);
        let r = &y - &t;
        let e_d = 0.5 * r.dot(&r);
        (e_d, self.backprop(w, inp, &act, &r))
    }

    /// Outputs and hidden activations, for a caller that forms its own
    /// per-row loss and then calls [`Architecture::gradient_from_output`].
    pub fn outputs_and_activations(&self, w: &[f64], inp: &Inputs) -> (Array1<f64>, Array2<f64>) {
        self.forward(w, inp)
    }

    /// `Σ_n (∂L/∂y_n) ∇_w y_n` for any per-row loss derivative `dl_dy`,
    /// given the activations of the forward pass at `w`.
    pub fn gradient_from_output(
        &self,
        w: &[f64],
        inp: &Inputs,
        act: &Array2<f64>,
        dl_dy: &Array1<f64>,
    ) -> Array1<f64> {
        self.backprop(w, inp, act, dl_dy)
    }

    /// The gradient by [`passes::back_propagate`] (the output bias's
    /// element `r.sum()`, ndarray's sum, as before).
    fn backprop(&self, w: &[f64], inp: &Inputs, act: &Array2<f64>, r: &Array1<f64>) -> Array1<f64> {
        let lay = self.layout();
        let mut g = Array1::zeros(self.n_params());
        if self.is_linear() {
            g.slice_mut(s![..self.n_inputs])
                .assign(&inp.view().t().dot(r));
            g[lay.output_bias] = r.sum();
            return g;
        }
        let p = self.split(w);
        let v = p.output_w.to_vec();
        passes::back_propagate(
            inp,
            act.as_slice()
                .expect("activations of the forward pass are in standard layout"),
            &v,
            r.as_slice().expect("a fresh vector is contiguous"),
            &mut g.as_slice_mut().expect("a fresh vector is contiguous")[..lay.output_bias],
        );
        g[lay.output_bias] = r.sum();
        g
    }

    /// Outputs and the Jacobian `J_nk = ∂y_n/∂w_k` (N × k).
    pub fn jacobian(&self, w: &[f64], x: ArrayView2<f64>) -> (Array1<f64>, Array2<f64>) {
        let (y, _, jac) = self.jacobian_with_activations(w, x);
        (y, jac)
    }

    /// Outputs, hidden activations and the Jacobian from one forward pass.
    fn jacobian_with_activations(
        &self,
        w: &[f64],
        x: ArrayView2<f64>,
    ) -> (Array1<f64>, Array2<f64>, Array2<f64>) {
        let (y, act) = self.forward(w, &Inputs::new(x));
        let n = x.nrows();
        let (d, h) = (self.n_inputs, self.n_hidden);
        let lay = self.layout();
        let mut jac = Array2::zeros((n, self.n_params()));
        if self.is_linear() {
            jac.slice_mut(s![.., ..d]).assign(&x);
            jac.column_mut(lay.output_bias).fill(1.0);
            return (y, act, jac);
        }
        let p = self.split(w);
        // one contiguous row at a time: with D_nj = v_j (1 − a_nj²) = ∂y_n/∂b_j,
        // row n is [D_n1·x_n, …, D_nH·x_n, D_n, a_n, 1]
        for ((mut row, x_n), a_n) in jac.rows_mut().into_iter().zip(x.rows()).zip(act.rows()) {
            let row = row
                .as_slice_mut()
                .expect("rows of a fresh standard-layout array are contiguous");
            for j in 0..h {
                let dj = p.output_w[j] * (1.0 - a_n[j] * a_n[j]);
                for (dst, xi) in row[j * d..(j + 1) * d].iter_mut().zip(x_n.iter()) {
                    *dst = dj * xi;
                }
                row[lay.hidden_bias + j] = dj;
                row[lay.output_weights + j] = a_n[j];
            }
            row[lay.output_bias] = 1.0;
        }
        (y, act, jac)
    }

    /// Exact Hessian of `E_D`: `JᵀJ + Σ_n r_n ∇²y_n` (Bishop 1995, §4.10).
    pub fn data_hessian_exact(
        &self,
        w: &[f64],
        x: ArrayView2<f64>,
        t: ArrayView1<f64>,
    ) -> Array2<f64> {
        let (y, act, jac) = self.jacobian_with_activations(w, x);
        let mut hess = crate::linalg::gram(jac.view());
        if self.is_linear() {
            return hess;
        }
        let r = &y - &t;
        let p = self.split(w);
        let (n, d) = (x.nrows(), self.n_inputs);
        let lay = self.layout();
        // x̃ = [x, 1]: the inputs feeding hidden unit j, with its bias.
        let mut xt = Array2::ones((n, d + 1));
        xt.slice_mut(s![.., ..d]).assign(&x);
        for j in 0..self.n_hidden {
            let a = act.column(j);
            let fp = a.mapv(|a| 1.0 - a * a); // tanh'
            let fpp = a.mapv(|a| -2.0 * a * (1.0 - a * a)); // tanh''
                                                            // second derivatives within unit j's incoming weights and bias
            let c = &r * &fpp * p.output_w[j];
            let weighted = &xt * &c.view().insert_axis(Axis(1));
            let block = crate::linalg::matmul(xt.t(), weighted.view());
            // cross terms of the incoming weights/bias with v_j
            let cross = xt.t().dot(&(&r * &fp));
            let idx: Vec<usize> = (0..d)
                .map(|i| j * d + i)
                .chain(std::iter::once(lay.hidden_bias + j))
                .collect();
            let vj = lay.output_weights + j;
            for (a_i, &ka) in idx.iter().enumerate() {
                for (b_i, &kb) in idx.iter().enumerate() {
                    hess[[ka, kb]] += block[[a_i, b_i]];
                }
                hess[[ka, vj]] += cross[a_i];
                hess[[vj, ka]] += cross[a_i];
            }
        }
        hess
    }
}

struct Parts<'a> {
    input_w: ArrayView2<'a, f64>,
    hidden_b: ArrayView1<'a, f64>,
    output_w: ArrayView1<'a, f64>,
    output_b: f64,
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::fixedmath::FixedMath;
    use crate::prec::FD_STEP;
    use approx::assert_abs_diff_eq;
    use rand::{Rng, SeedableRng};
    use rand_xoshiro::Xoshiro256PlusPlus;

    fn random_problem(
        d: usize,
        h: usize,
        n: usize,
        seed: u64,
    ) -> (Architecture, Vec<f64>, Array2<f64>, Array1<f64>) {
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
        let arch = Architecture::new(d, h);
        let w: Vec<f64> = (0..arch.n_params())
            .map(|_| rng.random_range(-1.5..1.5))
            .collect();
        let x = Array2::from_shape_fn((n, d), |_| rng.random_range(-0.5..0.5));
        let t = Array1::from_shape_fn(n, |_| rng.random_range(-0.5..0.5));
        (arch, w, x, t)
    }

    fn data_error(arch: &Architecture, w: &[f64], x: ArrayView2<f64>, t: ArrayView1<f64>) -> f64 {
        let r = arch.predict(w, x) - t;
        0.5 * r.dot(&r)
    }

    #[test]
    fn fast_tanh_matches_the_c_library() {
        // reference: the libm crate's tanh (a port of musl's), as fixedmath calls it
        let mut worst = 0.0_f64;
        for i in -400_000..=400_000 {
            let x = f64::from(i) * 5e-5;
            worst = worst.max((tanh(x) - x.tanh_fixed()).abs());
        }
        assert!(worst < 5e-16, "worst absolute error {worst:e}");
        assert!((tanh(800.0) - 1.0).abs() < f64::EPSILON);
        assert!((tanh(-800.0) + 1.0).abs() < f64::EPSILON);
        assert!(tanh(f64::NAN).is_nan());
    }

    /// The formula of [`tanh`] with the `libm` crate's own `exp` (what it
    /// called before [`exp_mid`]).
    fn tanh_by_libm(x: f64) -> f64 {
        let ax = x.abs();
        if ax < 0.02 {
            let x2 = x * x;
            return x * (1.0 + x2 * (-1.0 / 3.0 + x2 * (2.0 / 15.0 - x2 * (17.0 / 315.0))));
        }
        let e = (2.0 * ax).exp_fixed();
        (1.0 - 2.0 / (e + 1.0)).copysign(x)
    }

    /// Arguments for the bit-for-bit checks: a dense grid, every branch
    /// point of the exponential and its neighbours, random bit patterns.
    fn awkward_arguments() -> Vec<f64> {
        let mut xs: Vec<f64> = (-2_000_000..=2_000_000)
            .map(|i| f64::from(i) * 1.3e-5)
            .collect();
        for b in [
            0x3fd6_2e42_ffff_ffff_u64,
            0x3fd6_2e43_0000_0000,
            0x3ff0_a2b2_0000_0000,
            0x3ff0_a2b1_ffff_ffff,
            0.02_f64.to_bits(),
            20.0_f64.to_bits(),
            40.0_f64.to_bits(),
        ] {
            for d in 0..5_u64 {
                for v in [f64::from_bits(b + d), f64::from_bits(b - d)] {
                    xs.extend([v, -v, 0.5 * v, -0.5 * v]);
                }
            }
        }
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(99);
        for _ in 0..200_000 {
            xs.push(f64::from_bits(rng.random::<u64>()));
            xs.push(rng.random_range(-30.0..30.0));
        }
        xs.extend([
            0.0,
            -0.0,
            1e-300,
            -5e-324,
            1e300,
            f64::INFINITY,
            f64::NEG_INFINITY,
        ]);
        xs
    }

    #[test]
    fn exp_mid_is_libm_exp_bit_for_bit() {
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(98);
        let mut xs: Vec<f64> = (0..=4_000_000).map(|i| f64::from(i) * 1e-5).collect();
        xs.extend((0..200_000).map(|_| rng.random_range(0.0..40.0)));
        xs.extend([
            f64::from_bits(0x3fd6_2e42_ffff_ffff),
            f64::from_bits(0x3fd6_2e43_0000_0000),
            f64::from_bits(0x3ff0_a2b1_ffff_ffff),
            f64::from_bits(0x3ff0_a2b2_0000_0000),
        ]);
        for x in xs {
            assert_eq!(exp_mid(x).to_bits(), libm::exp(x).to_bits(), "exp({x:e})");
        }
        assert!(exp_mid(f64::NAN).is_nan());
    }

    #[test]
    fn tanh_is_the_libm_formula_bit_for_bit_in_both_builds() {
        let xs = awkward_arguments();
        let mut portable = xs.clone();
        tanh_slice(&mut portable);
        let mut dispatched = xs.clone();
        tanh_in_place(&mut dispatched);
        for ((x, p), d) in xs.iter().zip(&portable).zip(&dispatched) {
            let want = tanh_by_libm(*x);
            if want.is_nan() {
                assert!(tanh(*x).is_nan() && p.is_nan() && d.is_nan(), "tanh({x:e})");
                continue;
            }
            assert_eq!(tanh(*x).to_bits(), want.to_bits(), "tanh({x:e})");
            assert_eq!(p.to_bits(), want.to_bits(), "portable tanh({x:e})");
            assert_eq!(d.to_bits(), want.to_bits(), "dispatched tanh({x:e})");
        }
    }

    /// The forward pass and back-propagation as ndarray's operations did
    /// them before the fused loops (the reference for bit-for-bit checks):
    /// outputs, activations, E_D and the gradient.
    fn ndarray_forward_backprop(
        arch: &Architecture,
        w: &[f64],
        x: ArrayView2<f64>,
        t: ArrayView1<f64>,
    ) -> (Array1<f64>, Array2<f64>, f64, Array1<f64>) {
        let p = arch.split(w);
        let lay = arch.layout();
        let mut act = crate::linalg::matmul(x, p.input_w.t());
        act += &p.hidden_b;
        act.mapv_inplace(tanh_by_libm);
        let y = act.dot(&p.output_w) + p.output_b;
        let r = &y - &t;
        let e_d = 0.5 * r.dot(&r);
        let mut g = Array1::zeros(arch.n_params());
        let mut delta = act.mapv(|a| 1.0 - a * a);
        delta *= &p.output_w;
        delta *= &r.view().insert_axis(Axis(1));
        let g_w = crate::linalg::matmul(delta.t(), x);
        g.slice_mut(s![..lay.hidden_bias])
            .assign(&Array1::from_iter(g_w.iter().copied()));
        g.slice_mut(s![lay.hidden_bias..lay.output_weights])
            .assign(&delta.sum_axis(Axis(0)));
        g.slice_mut(s![lay.output_weights..lay.output_bias])
            .assign(&act.t().dot(&r));
        g[lay.output_bias] = r.sum();
        (y, act, e_d, g)
    }

    fn assert_same_bits(got: &[f64], want: &[f64], what: &str) {
        assert_eq!(got.len(), want.len(), "{what}: length");
        for (k, (a, b)) in got.iter().zip(want).enumerate() {
            assert_eq!(a.to_bits(), b.to_bits(), "{what}: element {k}");
        }
    }

    /// Both builds of the passes ([`passes::hidden_layer_body`] and
    /// [`passes::back_propagate_body`] as compiled for the baseline, with
    /// several unit panels, and the dispatched ones) against the ndarray
    /// expressions, for every remainder of the row blocks (N mod 8) and the
    /// unit blocks (H mod 4, mod 6), inputs on both sides of the 8-input
    /// panel, a strided X.
    #[test]
    fn fused_passes_give_ndarrays_bits() {
        let mut shapes = vec![
            (8, 1, 37, 21),
            (8, 10, 741, 22),
            (3, 7, 9, 23),
            (30, 20, 200, 24),
            (2, 16, 1, 25),
            (0, 3, 11, 46),
            (9, 13, 53, 26),
            (12, 20, 130, 47),
            (17, 5, 3, 27),
        ];
        for n in 0..=17 {
            for h in 1..=13 {
                shapes.push(([1, 8, 5, 16][n % 4], h, n, (100 + 20 * n + h) as u64));
            }
        }
        for (d, h, n, seed) in shapes {
            let what = format!("d {d} h {h} n {n}");
            let (arch, w, x, t) = random_problem(d, h, n, seed);
            let (y0, act0, e0, g0) = ndarray_forward_backprop(&arch, &w, x.view(), t.view());
            let flat = |a: &Array2<f64>| a.iter().copied().collect::<Vec<f64>>();
            let xf = x.t().as_standard_layout().into_owned();
            for inp in [Inputs::new(x.view()), Inputs::new(xf.t())] {
                let (e1, g1) = arch.data_error_gradient(&w, &inp, t.view());
                assert_eq!(e1.to_bits(), e0.to_bits(), "E_D, {what}");
                assert_same_bits(g1.as_slice().unwrap(), g0.as_slice().unwrap(), &what);
                let (y1, act1) = arch.outputs_and_activations(&w, &inp);
                assert_same_bits(y1.as_slice().unwrap(), y0.as_slice().unwrap(), &what);
                assert_same_bits(&flat(&act1), &flat(&act0), &what);
                // the baseline build, unit panels of 1, 2, 3 and 6
                let p = arch.split(&w);
                let (b, v) = (p.hidden_b.to_vec(), p.output_w.to_vec());
                let layer = passes::HiddenLayer::new(p.input_w, &b, &v, p.output_b);
                let (mut act2, mut y2) = (vec![0.0; n * h], vec![0.0; n]);
                passes::hidden_layer_body(&inp, &layer, &mut act2, &mut y2);
                assert_same_bits(&y2, y0.as_slice().unwrap(), &what);
                assert_same_bits(&act2, &flat(&act0), &what);
                let r = (&y0 - &t).to_vec();
                let k = h * d + 2 * h;
                let mut delta = vec![f64::NAN; 7];
                // the AVX build's kernel on its own, where the CPU has it
                #[cfg(target_arch = "x86_64")]
                if std::arch::is_x86_feature_detected!("avx") {
                    let mut g2 = vec![0.0; k];
                    passes::back_propagate(&inp, &act2, &v, &r, &mut g2);
                    assert_same_bits(
                        &g2,
                        &g0.as_slice().unwrap()[..k],
                        &format!("{what}, dispatched"),
                    );
                }
                for mr in [1, 2, 3, 6] {
                    let mut g2 = vec![0.0; k];
                    match mr {
                        1 => passes::back_propagate_body::<1, _>(
                            &inp,
                            &act2,
                            &v,
                            &r,
                            &mut g2,
                            &mut delta,
                            passes::strided_block::<1, 8>,
                        ),
                        2 => passes::back_propagate_body::<2, _>(
                            &inp,
                            &act2,
                            &v,
                            &r,
                            &mut g2,
                            &mut delta,
                            passes::strided_block::<2, 8>,
                        ),
                        3 => passes::back_propagate_body::<3, _>(
                            &inp,
                            &act2,
                            &v,
                            &r,
                            &mut g2,
                            &mut delta,
                            passes::strided_block::<3, 8>,
                        ),
                        _ => passes::back_propagate_body::<6, _>(
                            &inp,
                            &act2,
                            &v,
                            &r,
                            &mut g2,
                            &mut delta,
                            passes::strided_block::<6, 8>,
                        ),
                    }
                    assert_same_bits(
                        &g2,
                        &g0.as_slice().unwrap()[..k],
                        &format!("{what}, {mr} units"),
                    );
                }
            }
            assert_same_bits(
                arch.predict(&w, x.view()).as_slice().unwrap(),
                y0.as_slice().unwrap(),
                &what,
            );
        }
        let xs: Vec<f64> = (0..29).map(|i| f64::from(i).sin_fixed() * 1e3).collect();
        let ys: Vec<f64> = (0..29).map(|i| f64::from(i).cos_fixed()).collect();
        for len in 0..29 {
            let want = ArrayView1::from(&xs[..len]).dot(&ArrayView1::from(&ys[..len]));
            assert_eq!(
                passes::unrolled_dot(&xs[..len], &ys[..len]).to_bits(),
                want.to_bits()
            );
        }
    }

    #[test]
    fn gradient_matches_central_differences() {
        for (d, h, seed) in [(3, 4, 1), (5, 1, 2), (2, 7, 3), (4, 0, 4)] {
            let (arch, w, x, t) = random_problem(d, h, 25, seed);
            let (_, g) = arch.data_error_gradient(&w, &Inputs::new(x.view()), t.view());
            for k in 0..w.len() {
                let mut wp = w.clone();
                let mut wm = w.clone();
                wp[k] += FD_STEP;
                wm[k] -= FD_STEP;
                let fd = (data_error(&arch, &wp, x.view(), t.view())
                    - data_error(&arch, &wm, x.view(), t.view()))
                    / (2.0 * FD_STEP);
                assert_abs_diff_eq!(g[k], fd, epsilon = 1e-6 * (1.0 + fd.abs()));
            }
        }
    }

    #[test]
    fn jacobian_matches_central_differences() {
        let (arch, w, x, _) = random_problem(3, 3, 10, 7);
        let (_, jac) = arch.jacobian(&w, x.view());
        for k in 0..w.len() {
            let mut wp = w.clone();
            let mut wm = w.clone();
            wp[k] += FD_STEP;
            wm[k] -= FD_STEP;
            let fd = (arch.predict(&wp, x.view()) - arch.predict(&wm, x.view())) / (2.0 * FD_STEP);
            for n in 0..x.nrows() {
                assert_abs_diff_eq!(jac[[n, k]], fd[n], epsilon = 1e-7);
            }
        }
    }

    #[test]
    fn exact_hessian_matches_differences_of_gradient() {
        for (d, h, seed) in [(3, 4, 11), (2, 2, 12), (3, 0, 13)] {
            let (arch, w, x, t) = random_problem(d, h, 30, seed);
            let hess = arch.data_hessian_exact(&w, x.view(), t.view());
            for k in 0..w.len() {
                let mut wp = w.clone();
                let mut wm = w.clone();
                wp[k] += FD_STEP;
                wm[k] -= FD_STEP;
                let gp = arch
                    .data_error_gradient(&wp, &Inputs::new(x.view()), t.view())
                    .1;
                let gm = arch
                    .data_error_gradient(&wm, &Inputs::new(x.view()), t.view())
                    .1;
                let fd = (gp - gm) / (2.0 * FD_STEP);
                for l in 0..w.len() {
                    assert_abs_diff_eq!(hess[[l, k]], fd[l], epsilon = 1e-5 * (1.0 + fd[l].abs()));
                }
            }
            // symmetric by construction
            assert_abs_diff_eq!(hess.clone(), hess.t().to_owned(), epsilon = 1e-12);
        }
    }

    #[test]
    fn linear_mode_is_an_affine_map() {
        let arch = Architecture::new(2, 0);
        let w = [2.0, -3.0, 0.5];
        let x = ndarray::array![[1.0, 1.0], [0.0, 0.5]];
        let y = arch.predict(&w, x.view());
        assert_abs_diff_eq!(y[0], -0.5, epsilon = 1e-15);
        assert_abs_diff_eq!(y[1], -1.0, epsilon = 1e-15);
    }

    #[test]
    fn input_of_param_follows_layout() {
        let arch = Architecture::new(3, 2);
        assert_eq!(arch.input_of_param(0), Some(0));
        assert_eq!(arch.input_of_param(4), Some(1));
        assert_eq!(arch.input_of_param(6), None); // first hidden bias
        let lin = Architecture::new(3, 0);
        assert_eq!(lin.input_of_param(2), Some(2));
        assert_eq!(lin.input_of_param(3), None);
    }
}
