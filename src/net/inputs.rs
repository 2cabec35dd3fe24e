//! The rows of X laid out once for the network's passes.
//!
//! Training evaluates a network hundreds of times on the same rows (every
//! step of the optimiser within a cycle). The hidden sums X·Wᵀ read X in
//! blocks of [`ROW_BLOCK`] rows side by side, and the gradient's product
//! δᵀX reads it in panels of [`INPUT_PANEL`] inputs; both layouts are
//! formed here once per set of rows instead of once per pass (the second
//! only when a gradient asks for it). They are copies: no arithmetic, so no
//! bit of any result depends on them.

use std::sync::OnceLock;

use ndarray::{ArrayView2, CowArray, Ix2};

/// Rows per block of [`Inputs::row_block`] (the register block's rows of
/// the hidden sums).
pub(crate) const ROW_BLOCK: usize = 8;
/// Inputs per panel of [`Inputs::input_panel`] (the register block's
/// columns of δᵀX: two AVX vectors).
pub(crate) const INPUT_PANEL: usize = 8;

/// The network's inputs X (N × d) and the layouts its passes read.
pub struct Inputs<'a> {
    /// X in standard (row-major) layout: borrowed when it already is.
    rows: CowArray<'a, f64, Ix2>,
    /// The ⌊N/R⌋ whole blocks of R = [`ROW_BLOCK`] rows, block k at
    /// k·d·R, x_(kR+r),i at i·R + r within it.
    row_blocks: Vec<f64>,
    /// ⌈d/P⌉ panels of P = [`INPUT_PANEL`] inputs, panel q at q·N·P,
    /// x_n,(qP+c) at n·P + c within it, zero beyond the last input.
    input_panels: OnceLock<Vec<f64>>,
}

impl<'a> Inputs<'a> {
    /// The rows of `x` and their blocks of [`ROW_BLOCK`] rows.
    pub fn new(x: ArrayView2<'a, f64>) -> Self {
        let rows = if x.is_standard_layout() {
            CowArray::from(x)
        } else {
            CowArray::from(x.as_standard_layout().into_owned())
        };
        let (n, d) = rows.dim();
        let xs = rows.as_slice().expect("standard layout");
        let whole = n / ROW_BLOCK;
        let mut row_blocks = vec![0.0; whole * d * ROW_BLOCK];
        if d > 0 {
            for (block, out) in row_blocks.chunks_exact_mut(d * ROW_BLOCK).enumerate() {
                let first = block * ROW_BLOCK * d;
                let these = &xs[first..first + ROW_BLOCK * d];
                for (r, x_r) in these.chunks_exact(d).enumerate() {
                    for (i, v) in x_r.iter().enumerate() {
                        out[i * ROW_BLOCK + r] = *v;
                    }
                }
            }
        }
        Inputs {
            rows,
            row_blocks,
            input_panels: OnceLock::new(),
        }
    }

    /// X itself.
    pub fn view(&self) -> ArrayView2<'_, f64> {
        self.rows.view()
    }

    /// Number of rows N.
    pub fn nrows(&self) -> usize {
        self.rows.nrows()
    }

    /// Number of inputs d.
    pub fn ncols(&self) -> usize {
        self.rows.ncols()
    }

    /// Row n of X.
    pub(crate) fn row(&self, n: usize) -> &[f64] {
        let d = self.ncols();
        &self.rows.as_slice().expect("standard layout")[n * d..(n + 1) * d]
    }

    /// Whole block k of [`ROW_BLOCK`] rows: x_(kR+r),i at i·R + r
    /// (k < ⌊N/R⌋).
    pub(crate) fn row_block(&self, k: usize) -> &[f64] {
        let len = self.ncols() * ROW_BLOCK;
        &self.row_blocks[k * len..(k + 1) * len]
    }

    /// Panel q of [`INPUT_PANEL`] inputs: x_n,(qP+c) at n·P + c, zero
    /// beyond the last input (formed on the first call).
    pub(crate) fn input_panel(&self, q: usize) -> &[f64] {
        let (n, d) = self.rows.dim();
        let panels = self.input_panels.get_or_init(|| {
            let xs = self.rows.as_slice().expect("standard layout");
            let count = d.div_ceil(INPUT_PANEL);
            let mut out = vec![0.0; count * n * INPUT_PANEL];
            for (q, panel) in out.chunks_exact_mut((n * INPUT_PANEL).max(1)).enumerate() {
                let (i0, cols) = (q * INPUT_PANEL, INPUT_PANEL.min(d - q * INPUT_PANEL));
                for (dst, x_n) in panel.chunks_exact_mut(INPUT_PANEL).zip(xs.chunks_exact(d)) {
                    dst[..cols].copy_from_slice(&x_n[i0..i0 + cols]);
                }
            }
            out
        });
        let len = n * INPUT_PANEL;
        &panels[q * len..(q + 1) * len]
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::Array2;

    #[test]
    fn the_layouts_hold_the_elements_of_x() {
        for (n, d) in [(0, 3), (7, 3), (8, 1), (17, 9), (20, 16), (5, 0)] {
            let x = Array2::from_shape_fn((n, d), |(i, j)| (i * 100 + j) as f64 + 0.5);
            // a column-major copy gives the same layouts
            let xf = x.t().as_standard_layout().into_owned();
            for inp in [Inputs::new(x.view()), Inputs::new(xf.t())] {
                assert!(inp
                    .view()
                    .iter()
                    .zip(x.iter())
                    .all(|(a, b)| a.to_bits() == b.to_bits()));
                assert_eq!(inp.view().dim(), x.dim());
                for k in 0..n / ROW_BLOCK {
                    let block = inp.row_block(k);
                    for r in 0..ROW_BLOCK {
                        for i in 0..d {
                            assert_eq!(
                                block[i * ROW_BLOCK + r].to_bits(),
                                x[[k * ROW_BLOCK + r, i]].to_bits()
                            );
                        }
                    }
                }
                for q in 0..d.div_ceil(INPUT_PANEL) {
                    let panel = inp.input_panel(q);
                    for r in 0..n {
                        let bits = |v: &[f64]| v.iter().map(|e| e.to_bits()).collect::<Vec<_>>();
                        assert_eq!(bits(inp.row(r)), bits(&x.row(r).to_vec()));
                        for c in 0..INPUT_PANEL {
                            let i = q * INPUT_PANEL + c;
                            let want = if i < d { x[[r, i]] } else { 0.0 };
                            assert_eq!(
                                panel[r * INPUT_PANEL + c].to_bits(),
                                want.to_bits(),
                                "n {n} d {d}"
                            );
                        }
                    }
                }
            }
        }
    }
}
