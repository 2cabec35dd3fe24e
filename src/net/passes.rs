//! The hot loops of the network's passes over [`Inputs`]: the hidden layer
//! (sums, tanh, output) fused per block of rows, and back-propagation's
//! δ with its product δᵀX.
//!
//! Each sum runs in the order of the ndarray and `linalg` expressions these
//! loops replaced, and each element goes through the same IEEE operations,
//! so the results are the same bits (unit tests in [`super::mlp`] against
//! those expressions). The loops are compiled twice, for the target's
//! baseline and with AVX enabled (chosen at run time, like
//! [`crate::linalg`]'s product); neither enables fused multiply-add, so both
//! give the same bits.

use std::cell::RefCell;

use ndarray::ArrayView2;

use super::activation::tanh_slice;
use super::inputs::{Inputs, INPUT_PANEL, ROW_BLOCK};

/// Hidden units per register block of the hidden sums (one AVX vector);
/// the last block's missing units have zero weights, and their sums are
/// not stored.
const HIDDEN_UNITS: usize = 4;

/// Doubles of δ buffer a thread keeps between passes (8 MB); a larger one
/// is freed after its pass.
const DELTA_KEEP: usize = 1 << 20;

thread_local! {
    /// δ of the last back-propagation on this thread, row by row (rows
    /// padded to whole panels of units), kept so that the next pass neither
    /// allocates nor zero-fills it.
    static DELTA: RefCell<Vec<f64>> = const { RefCell::new(Vec::new()) };
}

/// The hidden layer's parameters, with Wᵀ laid out for the register blocks.
pub(super) struct HiddenLayer<'w> {
    /// Wᵀ in panels of [`HIDDEN_UNITS`] units: panel g holds W_(gJ+c),i at
    /// g·d·J + i·J + c, zero for units beyond H.
    panels: Vec<f64>,
    /// Wᵀ row-major: W_ji at i·H + j (for the rows after the last block).
    wt: Vec<f64>,
    /// Hidden biases b (H).
    b: &'w [f64],
    /// Output weights v (H).
    v: &'w [f64],
    /// Output bias c.
    c: f64,
}

impl<'w> HiddenLayer<'w> {
    /// The layer of input weights `w_in` (H × d), biases `b`, output
    /// weights `v` and output bias `c`.
    pub(super) fn new(w_in: ArrayView2<f64>, b: &'w [f64], v: &'w [f64], c: f64) -> Self {
        const J: usize = HIDDEN_UNITS;
        let (h, d) = w_in.dim();
        let mut panels = vec![0.0; h.div_ceil(J) * d * J];
        for j in 0..h {
            let (g, c) = (j / J, j % J);
            for i in 0..d {
                panels[g * d * J + i * J + c] = w_in[[j, i]];
            }
        }
        let wt = (0..d).flat_map(|i| w_in.column(i).to_vec()).collect();
        HiddenLayer {
            panels,
            wt,
            b,
            v,
            c,
        }
    }
}

/// The forward pass of the hidden layer: `act` (N × H, row-major) gets
/// tanh((0 + Σ_i x_ni W_ji) + b_j), each sum from 0 in increasing i, and
/// `y` (N) gets `unrolled_dot(a_n, v)·1 + c` — the operations of the former
/// `linalg::matmul(x, Wᵀ)`, `+= b`, tanh of each element and ndarray's
/// `act.dot(&v) + c`. Per block of [`ROW_BLOCK`] rows: the sums in register
/// blocks of R rows × [`HIDDEN_UNITS`] units (the vector lanes across
/// units, each sum in its own lane), then their tanh and the outputs while
/// the block is in cache; the rows after the last block one at a time.
pub(super) fn hidden_layer(inp: &Inputs, layer: &HiddenLayer, act: &mut [f64], y: &mut [f64]) {
    #[cfg(target_arch = "x86_64")]
    {
        if std::arch::is_x86_feature_detected!("avx") {
            // SAFETY: the CPU has AVX, the only feature the function enables.
            #[allow(unsafe_code)]
            return unsafe { hidden_layer_avx(inp, layer, act, y) };
        }
    }
    hidden_layer_body(inp, layer, act, y);
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx")]
fn hidden_layer_avx(inp: &Inputs, layer: &HiddenLayer, act: &mut [f64], y: &mut [f64]) {
    hidden_layer_body(inp, layer, act, y);
}

/// [`hidden_layer`]'s loops, inlined into each build.
#[inline(always)]
pub(super) fn hidden_layer_body(inp: &Inputs, layer: &HiddenLayer, act: &mut [f64], y: &mut [f64]) {
    const R: usize = ROW_BLOCK;
    const J: usize = HIDDEN_UNITS;
    let h = layer.b.len();
    if h == 0 {
        return;
    }
    let (n, d) = (inp.nrows(), inp.ncols());
    for k in 0..n / R {
        let n0 = k * R;
        let xt = inp.row_block(k);
        let block = &mut act[n0 * h..(n0 + R) * h];
        for j0 in (0..h).step_by(J) {
            let wp = &layer.panels[j0 * d..(j0 + J) * d];
            // acc[r][c] = 0 + Σ_i x_(n0+r),i · W_(j0+c),i, in increasing i
            let acc = crate::linalg::register_block::<R, J>(xt, wp);
            let bias = &layer.b[j0..(j0 + J).min(h)];
            for (acc_r, row) in acc.iter().zip(block.chunks_exact_mut(h)) {
                store_sums(&mut row[j0..j0 + bias.len()], acc_r, bias);
            }
        }
        finish_rows(block, layer, &mut y[n0..n0 + R]);
    }
    // the last rows one at a time, the sums of all H units side by side
    for n_ in n / R * R..n {
        let row = &mut act[n_ * h..(n_ + 1) * h];
        row.fill(0.0);
        for (xi, wt_i) in inp.row(n_).iter().zip(layer.wt.chunks_exact(h)) {
            for (acc, wji) in row.iter_mut().zip(wt_i) {
                *acc += xi * wji;
            }
        }
        for (acc, bj) in row.iter_mut().zip(layer.b) {
            *acc = (0.0 + *acc) + bj;
        }
        finish_rows(row, layer, &mut y[n_..n_ + 1]);
    }
}

/// One row's sums of a register block: o_c = (0 + acc_c) + b_c (the
/// product's store into C's zero, then `+= b`), a fixed-length loop for
/// a whole block of units so that it vectorises.
#[inline(always)]
fn store_sums<const J: usize>(out: &mut [f64], acc: &[f64; J], bias: &[f64]) {
    if let (Ok(out), Ok(bias)) = (
        <&mut [f64; J]>::try_from(&mut *out),
        <&[f64; J]>::try_from(bias),
    ) {
        for c in 0..J {
            out[c] = (0.0 + acc[c]) + bias[c];
        }
        return;
    }
    for ((o, a), bj) in out.iter_mut().zip(acc).zip(bias) {
        *o = (0.0 + *a) + bj;
    }
}

/// tanh of a block of rows' hidden sums in place, then each row's output
/// `unrolled_dot(a_n, v)·1 + c` (ndarray's matrix-vector product, times 1,
/// plus the bias).
#[inline(always)]
fn finish_rows(block: &mut [f64], layer: &HiddenLayer, y: &mut [f64]) {
    tanh_slice(block);
    for (y_n, a_n) in y.iter_mut().zip(block.chunks_exact(layer.b.len())) {
        *y_n = unrolled_dot(a_n, layer.v) * 1.0 + layer.c;
    }
}

/// Back-propagation through the hidden layer: with δ_nj = ((1 − a_nj²)·v_j)·r_n,
/// `g` (the first H·d + 2H gradient elements, zero on entry) gets
/// ∂/∂W = δᵀX (element (j, i) at j·d + i: 0 + 1·Σ_n δ_nj x_ni summed from
/// 0 in increasing n, as the former `linalg::matmul(δᵀ, x)` gave it),
/// ∂/∂b_j = Σ_n δ_nj and ∂/∂v_j = Σ_n a_nj r_n, both from 0 in increasing
/// n (for H = 1, ∂/∂v by [`unrolled_dot`], as ndarray summed a contiguous
/// column) — the operations and order of the former `act.mapv(…) *= v *= r`,
/// `delta.sum_axis(Axis(0))` and `act.t().dot(r)`. δ is written row by
/// row, and the register blocks of δᵀX read it in place against the
/// inputs' panels ([`Inputs::input_panel`]): no transposed δ, no packing.
pub(super) fn back_propagate(inp: &Inputs, act: &[f64], v: &[f64], r: &[f64], g: &mut [f64]) {
    DELTA.with(|cell| {
        let mut delta = cell.borrow_mut();
        #[cfg(target_arch = "x86_64")]
        {
            if std::arch::is_x86_feature_detected!("avx") {
                // SAFETY: the CPU has AVX, the only feature the function enables.
                #[allow(unsafe_code)]
                unsafe {
                    back_propagate_avx(inp, act, v, r, g, &mut delta)
                };
                if delta.len() > DELTA_KEEP {
                    *delta = Vec::new();
                }
                return;
            }
        }
        back_propagate_body::<2, _>(
            inp,
            act,
            v,
            r,
            g,
            &mut delta,
            strided_block::<2, INPUT_PANEL>,
        );
        if delta.len() > DELTA_KEEP {
            *delta = Vec::new();
        }
    });
}

/// 6 units × 8 inputs per register block: twelve 4-wide accumulators, as
/// [`crate::linalg`]'s AVX product.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx")]
fn back_propagate_avx(
    inp: &Inputs,
    act: &[f64],
    v: &[f64],
    r: &[f64],
    g: &mut [f64],
    delta: &mut Vec<f64>,
) {
    back_propagate_body::<6, _>(inp, act, v, r, g, delta, strided_block_avx_here);
}

/// [`strided_block_avx`] for [`back_propagate_avx`], which runs only where
/// the CPU has AVX.
#[cfg(target_arch = "x86_64")]
fn strided_block_avx_here(a: &[f64], stride: usize, b: &[f64]) -> [[f64; INPUT_PANEL]; 6] {
    // SAFETY: called only from `back_propagate_avx`, which runs only where
    // the CPU has AVX, the only feature the kernel enables.
    #[allow(unsafe_code)]
    unsafe {
        strided_block_avx(a, stride, b)
    }
}

/// [`strided_block`] of 6 units × 8 inputs compiled with AVX as a function
/// of its own: inlined into the loops around it, its twelve accumulators
/// were spilled to memory on every step.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx")]
#[inline(never)]
fn strided_block_avx(a: &[f64], stride: usize, b: &[f64]) -> [[f64; INPUT_PANEL]; 6] {
    strided_block::<6, INPUT_PANEL>(a, stride, b)
}

/// [`back_propagate`]'s loops with δ row by row, each row padded to a
/// whole number of panels of `MR` units (δ_nj at n·H' + j, H' = ⌈H/MR⌉·MR;
/// the slots of units beyond H hold whatever the buffer held, and the sums
/// they meet are not stored), so that the loop forming δ runs along the
/// units with unit stride and vectorises.
#[inline(always)]
pub(super) fn back_propagate_body<const MR: usize, K>(
    inp: &Inputs,
    act: &[f64],
    v: &[f64],
    r: &[f64],
    g: &mut [f64],
    delta: &mut Vec<f64>,
    kernel: K,
) where
    K: Fn(&[f64], usize, &[f64]) -> [[f64; INPUT_PANEL]; MR],
{
    const P: usize = INPUT_PANEL;
    let h = v.len();
    let (n, d) = (inp.nrows(), inp.ncols());
    let wide = h.div_ceil(MR) * MR;
    // one row of slack, so that the rows of units j0.. are n whole strides
    if delta.len() < (n + 1) * wide {
        delta.resize((n + 1) * wide, 0.0);
    }
    let (g_w, rest) = g.split_at_mut(h * d);
    let (g_b, g_v) = rest.split_at_mut(h);
    for ((a_n, &r_n), dst) in act.chunks_exact(h).zip(r).zip(delta.chunks_exact_mut(wide)) {
        let units = dst.iter_mut().zip(a_n).zip(v);
        for (((o, &a), &v_j), (gb, gv)) in units.zip(g_b.iter_mut().zip(g_v.iter_mut())) {
            let d_nj = ((1.0 - a * a) * v_j) * r_n;
            *o = d_nj;
            *gb += d_nj;
            *gv += a * r_n;
        }
    }
    if h == 1 {
        g_v[0] = unrolled_dot(act, r);
    }
    if n == 0 {
        // no terms: δᵀX stays 0 + 1·0 = +0, the zeros `g` holds
        return;
    }
    for j0 in (0..h).step_by(MR) {
        let units = MR.min(h - j0);
        for q in 0..d.div_ceil(P) {
            let cols = P.min(d - q * P);
            let acc = kernel(&delta[j0..j0 + n * wide], wide, inp.input_panel(q));
            for (u, acc_u) in acc.iter().enumerate().take(units) {
                let at = (j0 + u) * d + q * P;
                for (o, s) in g_w[at..at + cols].iter_mut().zip(acc_u) {
                    *o = 0.0 + 1.0 * s;
                }
            }
        }
    }
}

/// The register block of `linalg` with A's rows strided: acc[r][c] =
/// 0 + Σ_k a[k·stride + r]·b[k·NR + c], each sum from 0 in increasing k
/// (as many k as both hold: `a` whole strides, `b` rows of NR).
#[inline(always)]
pub(super) fn strided_block<const MR: usize, const NR: usize>(
    a: &[f64],
    stride: usize,
    b: &[f64],
) -> [[f64; NR]; MR] {
    let mut acc = [[0.0; NR]; MR];
    for (ak, bk) in a.chunks_exact(stride).zip(b.chunks_exact(NR)) {
        let ak: &[f64; MR] = ak.first_chunk::<MR>().expect("MR values");
        let bk: &[f64; NR] = bk.try_into().expect("NR values");
        for r in 0..MR {
            for c in 0..NR {
                acc[r][c] += ak[r] * bk[c];
            }
        }
    }
    acc
}

/// Σ xᵢyᵢ in ndarray's order for contiguous vectors (its
/// `numeric_util::unrolled_dot`, which `ArrayView1::dot` and the product
/// of a matrix and a vector call): eight partial sums over the full blocks
/// of eight, combined as ((0 + (p₀ + p₄)) + (p₁ + p₅)) + …, then the
/// remaining terms one by one. Copied so that fused loops give the bits
/// ndarray's products gave (unit test against `dot`).
#[inline(always)]
pub(super) fn unrolled_dot(xs: &[f64], ys: &[f64]) -> f64 {
    let len = xs.len().min(ys.len());
    let (mut xs, mut ys) = (&xs[..len], &ys[..len]);
    let mut sum = 0.0;
    let mut p = [0.0; 8];
    while xs.len() >= 8 {
        for l in 0..8 {
            p[l] += xs[l] * ys[l];
        }
        xs = &xs[8..];
        ys = &ys[8..];
    }
    sum += p[0] + p[4];
    sum += p[1] + p[5];
    sum += p[2] + p[6];
    sum += p[3] + p[7];
    for (x, y) in xs.iter().zip(ys) {
        sum += x * y;
    }
    sum
}
