//! Dense linear algebra whose every sum runs in an order fixed by this
//! source, so that training gives the same bits on any CPU.
//!
//! # Why not BLAS and LAPACK
//!
//! An optimised BLAS picks its kernels by the CPU it finds (OpenBLAS at load
//! time, `OPENBLAS_CORETYPE` overriding), and the kernels sum in different
//! orders and fuse multiply-adds or not. The results differ in the last
//! bits, and training makes discrete choices on near-ties (the committee's
//! members and size, the noise model): under two OpenBLAS core types the
//! first shared yacht split trained different committees (one member with
//! varying noise against two with constant noise). The same holds for the
//! `matrixmultiply` crate, which picks an AVX-512, FMA, AVX or SSE2 kernel at
//! run time. The routines here are plain loops compiled for the baseline of
//! the target (no run-time dispatch, no fused multiply-add: Rust never
//! contracts `a * b + c`), so each result depends on the inputs alone.
//!
//! # The routines
//!
//! - Products C = A·B ([`matmul`]) and AᵀA ([`gram`]): each element is
//!   Σ_k a_ik b_kj summed from 0 in increasing k, in register blocks of
//!   4 × 4 or 6 × 8 elements with both operands packed first (the blocked
//!   product of Golub & Van Loan 2013, *Matrix Computations*, 4th ed.,
//!   §1.5; Goto & van de Geijn 2008, ACM TOMS 34(3):12). Blocking changes
//!   only which elements are computed together, not the order of any sum,
//!   so the result equals the plain triple loop bit for bit (unit test).
//! - Cholesky A = L·Lᵀ ([`Cholesky`]), blocked by [`CHOL_BLOCK`] columns
//!   (right-looking: factor a diagonal block, solve the panel below it,
//!   update the trailing matrix by the product above; Golub & Van Loan
//!   2013, Alg. 4.2.3 and §4.2.9), with solves, the log-determinant and the
//!   inverse A⁻¹ = L⁻ᵀ·L⁻¹.
//! - The symmetric eigen-decomposition by cyclic Jacobi rotations
//!   ([`symmetric_eigen`]; Golub & Van Loan 2013, Alg. 8.5.3; Rutishauser
//!   1966 for the rotation formulas), for the small matrices it serves (the
//!   input covariance of the domain guard, and a last-resort inverse).
//! - The same decomposition by Householder tridiagonalisation and the
//!   implicit QL method ([`symmetric_eigen_ql`]; EISPACK's tred2 and tql2,
//!   Golub & Van Loan 2013, Alg. 8.3.1 and §8.3.5), several times faster on
//!   the members' posterior covariances that the fast prediction path
//!   decomposes (k = 100–200). Training keeps the Jacobi routine, so no
//!   trained model changes.

use std::cell::RefCell;

use crate::fixedmath::FixedMath;
use ndarray::{Array1, Array2, ArrayView1, ArrayView2, ArrayViewMut2, Axis};

/// Columns per block of the blocked Cholesky factorisation.
pub const CHOL_BLOCK: usize = 48;
/// Sweeps of the Jacobi eigen-decomposition before it gives up; quadratic
/// convergence needs 6 to 10 on the sizes used here (Golub & Van Loan
/// 2013, §8.5.3).
pub const JACOBI_MAX_SWEEPS: usize = 60;

/// Doubles of packing buffer a thread keeps between products (8 MB each);
/// a larger buffer is freed after its product.
const PACK_KEEP: usize = 1 << 20;

thread_local! {
    /// The packed A and B of the last product on this thread, kept so that
    /// the next one neither allocates nor zero-fills them.
    static PACKS: RefCell<(Vec<f64>, Vec<f64>)> = const { RefCell::new((Vec::new(), Vec::new())) };
}

/// The first `len` doubles of `buf`, grown when short (old contents kept:
/// every element read is written first).
fn sized(buf: &mut Vec<f64>, len: usize) -> &mut [f64] {
    if buf.len() < len {
        buf.resize(len, 0.0);
    }
    &mut buf[..len]
}

/// B packed in panels of `NR` columns: panel p holds b[k, p·NR + c] at
/// k·NR + c, zero beyond the last column.
#[inline(always)]
fn pack_columns<const NR: usize>(b: ArrayView2<f64>, out: &mut [f64]) {
    let (n, p) = b.dim();
    if n == 0 {
        return;
    }
    let by_rows = b.strides()[1].unsigned_abs() <= b.strides()[0].unsigned_abs();
    if by_rows {
        // read B row by row (contiguous when row-major)
        for (k, row) in b.rows().into_iter().enumerate() {
            match row.as_slice() {
                Some(r) => {
                    for (pi, part) in r.chunks(NR).enumerate() {
                        let at = pi * n * NR + k * NR;
                        out[at..at + part.len()].copy_from_slice(part);
                        out[at + part.len()..at + NR].fill(0.0);
                    }
                }
                None => {
                    for (pi, chunk) in out.chunks_exact_mut(n * NR).enumerate() {
                        let j0 = pi * NR;
                        let dst = &mut chunk[k * NR..(k + 1) * NR];
                        for (c, o) in dst.iter_mut().enumerate() {
                            *o = if j0 + c < p { row[j0 + c] } else { 0.0 };
                        }
                    }
                }
            }
        }
    } else {
        for pi in 0..p.div_ceil(NR) {
            pack_panel::<NR>(b, pi * NR, 0, &mut out[pi * n * NR..(pi + 1) * n * NR]);
        }
    }
}

/// Columns j0.. of B as one panel of `NR` columns, rows k0.. only:
/// b[k, j0 + c] at k·NR + c for k ≥ k0 (the rows above are not written),
/// zero beyond the last column.
#[inline(always)]
fn pack_panel<const NR: usize>(b: ArrayView2<f64>, j0: usize, k0: usize, out: &mut [f64]) {
    let (n, p) = b.dim();
    let cols = NR.min(p - j0);
    let by_rows = b.strides()[1].unsigned_abs() <= b.strides()[0].unsigned_abs();
    if by_rows {
        let part = b.slice(ndarray::s![k0.., j0..j0 + cols]);
        for (row, dst) in part
            .rows()
            .into_iter()
            .zip(out[k0 * NR..].chunks_exact_mut(NR))
        {
            match row.as_slice() {
                Some(r) => dst[..cols].copy_from_slice(r),
                None => {
                    for (o, v) in dst.iter_mut().zip(row.iter()) {
                        *o = *v;
                    }
                }
            }
            dst[cols..].fill(0.0);
        }
    } else {
        for c in 0..NR {
            if c < cols {
                let col = b.column(j0 + c);
                for (k, v) in col.slice(ndarray::s![k0..]).iter().enumerate() {
                    out[(k0 + k) * NR + c] = *v;
                }
            } else {
                for k in k0..n {
                    out[k * NR + c] = 0.0;
                }
            }
        }
    }
}

/// Rows i0.. of A packed as one panel: a[i0 + r, k] at k·MR + r.
#[inline(always)]
fn pack_rows<const MR: usize>(a: ArrayView2<f64>, i0: usize, out: &mut [f64]) {
    out.fill(0.0);
    let rows = MR.min(a.nrows() - i0);
    let by_columns = a.strides()[0].unsigned_abs() < a.strides()[1].unsigned_abs();
    if by_columns {
        // read A column by column (contiguous when column-major, as Xᵀ is)
        for (k, col) in a.columns().into_iter().enumerate() {
            for r in 0..rows {
                out[k * MR + r] = col[i0 + r];
            }
        }
    } else {
        for r in 0..rows {
            for (k, v) in a.row(i0 + r).iter().enumerate() {
                out[k * MR + r] = *v;
            }
        }
    }
}

/// The register block: Σ_k a_rk b_kc for one packed row panel and one
/// packed column panel, each sum from 0 in increasing k, every step a
/// product rounded and then a sum rounded (Rust never fuses them).
#[inline(always)]
fn block<const MR: usize, const NR: usize>(pa: &[f64], pb: &[f64]) -> [[f64; NR]; MR] {
    register_block::<MR, NR>(pa, pb)
}

/// [`block`] for the crate's own fused loops: `pa` holds a_rk at k·MR + r,
/// `pb` b_kc at k·NR + c; acc[r][c] = 0 + Σ_k a_rk·b_kc in increasing k
/// (as many k as both slices hold).
#[inline(always)]
pub(crate) fn register_block<const MR: usize, const NR: usize>(
    pa: &[f64],
    pb: &[f64],
) -> [[f64; NR]; MR] {
    let mut acc = [[0.0; NR]; MR];
    for (ak, bk) in pa.chunks_exact(MR).zip(pb.chunks_exact(NR)) {
        let ak: &[f64; MR] = ak.try_into().expect("MR values");
        let bk: &[f64; NR] = bk.try_into().expect("NR values");
        for r in 0..MR {
            for c in 0..NR {
                acc[r][c] += ak[r] * bk[c];
            }
        }
    }
    acc
}

/// Which elements of C a product writes.
#[derive(Clone, Copy, PartialEq, Eq)]
enum Part {
    All,
    /// Only register blocks that reach the diagonal or below it (the
    /// elements on and below the diagonal, and a few above it).
    Lower,
    /// All of C, for a lower-triangular B (b_kc = 0 for k < c): the sums of
    /// a column block starting at column j0 begin at k = j0. The terms left
    /// out are a_ik·0 = ±0 at the head of the sum, and 0 + (±0) = +0, so
    /// every element is the one the full sum gives, bit for bit.
    AllLowerB,
}

/// Where a product writes: the rows of C as slices when each row is
/// contiguous (found once, not per block), else the view itself.
enum Target<'a> {
    Rows(Vec<&'a mut [f64]>),
    View(ArrayViewMut2<'a, f64>),
}

impl<'a> Target<'a> {
    fn new(c: ArrayViewMut2<'a, f64>) -> Self {
        if c.ncols() <= 1 || c.strides()[1] == 1 {
            let mut rows = Vec::with_capacity(c.nrows());
            let mut rest = c;
            while rest.nrows() > 0 {
                let (row, tail) = rest.split_at(Axis(0), 1);
                rows.push(row.into_slice().expect("a contiguous row"));
                rest = tail;
            }
            Target::Rows(rows)
        } else {
            Target::View(c)
        }
    }

    /// c[i0 + r, j0 + cc] += s·acc[r][cc] for r < rows, cc < cols.
    #[inline(always)]
    fn add<const MR: usize, const NR: usize>(
        &mut self,
        (i0, rows): (usize, usize),
        (j0, cols): (usize, usize),
        s: f64,
        acc: &[[f64; NR]; MR],
    ) {
        match self {
            Target::Rows(out) => {
                for (row, acc_r) in out[i0..i0 + rows].iter_mut().zip(acc) {
                    for (o, v) in row[j0..j0 + cols].iter_mut().zip(acc_r) {
                        *o += s * v;
                    }
                }
            }
            Target::View(c) => {
                for (r, acc_r) in acc.iter().enumerate().take(rows) {
                    for (cc, v) in acc_r.iter().enumerate().take(cols) {
                        c[[i0 + r, j0 + cc]] += s * v;
                    }
                }
            }
        }
    }
}

/// C ← C + s·(A·B) in register blocks of MR × NR, each element's sum formed
/// first (from 0, increasing k) and then added once. The block shape and
/// the order in which blocks are visited only group elements; no sum
/// depends on them. When A has fewer rows than B has columns, A is packed
/// whole and B one panel at a time (the panel stays in cache while every
/// row panel of A passes it), else B whole and A one panel at a time; the
/// packing buffers are the thread's, kept between calls.
#[inline(always)]
fn product_body<const MR: usize, const NR: usize>(
    a: ArrayView2<f64>,
    b: ArrayView2<f64>,
    s: f64,
    c: ArrayViewMut2<f64>,
    part: Part,
) {
    let (m, n) = a.dim();
    let p = b.ncols();
    let (mut buf_a, mut buf_b) = PACKS.with(|packs| std::mem::take(&mut *packs.borrow_mut()));
    let mut target = Target::new(c);
    let k_start = |j0: usize| {
        if part == Part::AllLowerB {
            j0.min(n)
        } else {
            0
        }
    };
    let row_panels = m.div_ceil(MR);
    let col_panels = p.div_ceil(NR);
    if m < p {
        let packed_a = sized(&mut buf_a, row_panels * n * MR);
        if n > 0 {
            for (ip, panel) in packed_a.chunks_exact_mut(n * MR).enumerate() {
                pack_rows::<MR>(a, ip * MR, panel);
            }
        }
        let packed_b = sized(&mut buf_b, n * NR);
        for pi in 0..col_panels {
            let j0 = pi * NR;
            let k0 = k_start(j0);
            pack_panel::<NR>(b, j0, k0, packed_b);
            for ip in 0..row_panels {
                let i0 = ip * MR;
                let rows = MR.min(m - i0);
                if part == Part::Lower && j0 >= i0 + rows {
                    continue;
                }
                let acc = if n == k0 {
                    [[0.0; NR]; MR]
                } else {
                    block::<MR, NR>(
                        &packed_a[ip * n * MR + k0 * MR..(ip + 1) * n * MR],
                        &packed_b[k0 * NR..],
                    )
                };
                target.add::<MR, NR>((i0, rows), (j0, NR.min(p - j0)), s, &acc);
            }
        }
    } else {
        let packed_b = sized(&mut buf_b, col_panels * n * NR);
        pack_columns::<NR>(b, packed_b);
        let packed_a = sized(&mut buf_a, n * MR);
        for i0 in (0..m).step_by(MR) {
            pack_rows::<MR>(a, i0, packed_a);
            let rows = MR.min(m - i0);
            for pi in 0..col_panels {
                let j0 = pi * NR;
                if part == Part::Lower && j0 >= i0 + rows {
                    break;
                }
                let k0 = k_start(j0);
                let acc = if n == k0 {
                    [[0.0; NR]; MR]
                } else {
                    block::<MR, NR>(
                        &packed_a[k0 * MR..],
                        &packed_b[pi * n * NR + k0 * NR..(pi + 1) * n * NR],
                    )
                };
                target.add::<MR, NR>((i0, rows), (j0, NR.min(p - j0)), s, &acc);
            }
        }
    }
    for buf in [&mut buf_a, &mut buf_b] {
        if buf.len() > PACK_KEEP {
            *buf = Vec::new();
        }
    }
    PACKS.with(|packs| *packs.borrow_mut() = (buf_a, buf_b));
}

/// [`product_body`] compiled for the target's baseline (SSE2 on x86-64):
/// 4 × 4 blocks, eight 2-wide accumulators.
fn product_portable(
    a: ArrayView2<f64>,
    b: ArrayView2<f64>,
    s: f64,
    c: ArrayViewMut2<f64>,
    part: Part,
) {
    product_body::<4, 4>(a, b, s, c, part);
}

/// [`product_body`] compiled with AVX enabled: 6 × 8 blocks in twelve
/// 4-wide accumulators (of the sixteen registers; on the build machine's
/// AMD EPYC about 1.5 times the multiply-adds per second of 4 × 8 blocks,
/// whose eight chains of additions left the adders idle). The same
/// operations on each element in the same order (no fused multiply-add:
/// that feature is not enabled, and Rust never contracts a product and a
/// sum anyway), so the same bits as [`product_portable`] (unit test); only
/// faster.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx")]
fn product_avx(a: ArrayView2<f64>, b: ArrayView2<f64>, s: f64, c: ArrayViewMut2<f64>, part: Part) {
    product_body::<6, 8>(a, b, s, c, part);
}

/// C ← C + s·(A·B), by the AVX build where the CPU has AVX, else the
/// portable one; both give the same bits.
fn product_add(a: ArrayView2<f64>, b: ArrayView2<f64>, s: f64, c: ArrayViewMut2<f64>, part: Part) {
    let (m, n) = a.dim();
    let p = b.ncols();
    assert!(
        b.nrows() == n && c.dim() == (m, p),
        "shapes {:?} · {:?} → {:?}",
        a.dim(),
        b.dim(),
        c.dim()
    );
    if m == 0 || p == 0 {
        return;
    }
    #[cfg(target_arch = "x86_64")]
    {
        if std::arch::is_x86_feature_detected!("avx") {
            // SAFETY: the CPU has AVX, the only feature the function enables.
            #[allow(unsafe_code)]
            return unsafe { product_avx(a, b, s, c, part) };
        }
    }
    product_portable(a, b, s, c, part);
}

/// A·B for views of any layout; element (i, j) is Σ_k a_ik b_kj summed in
/// increasing k.
///
/// # Panics
/// When the shapes do not chain.
pub fn matmul(a: ArrayView2<f64>, b: ArrayView2<f64>) -> Array2<f64> {
    let mut c = Array2::zeros((a.nrows(), b.ncols()));
    product_add(a, b, 1.0, c.view_mut(), Part::All);
    c
}

/// C ← A·B for views of any layout, C overwritten (its old values are not
/// read); each element as by [`matmul`].
///
/// # Panics
/// When the shapes do not chain: A is m × n, B n × p, C m × p.
pub fn multiply_into(a: ArrayView2<f64>, b: ArrayView2<f64>, mut c: ArrayViewMut2<f64>) {
    c.fill(0.0);
    product_add(a, b, 1.0, c, Part::All);
}

/// C ← A·B on and below the diagonal (C square), each element as by
/// [`matmul`]; the elements above the diagonal are left zero or hold
/// products of the register blocks that reach the diagonal.
///
/// # Panics
/// When the shapes do not chain: A is m × n, B n × m, C m × m.
pub fn multiply_lower_into(a: ArrayView2<f64>, b: ArrayView2<f64>, mut c: ArrayViewMut2<f64>) {
    c.fill(0.0);
    product_add(a, b, 1.0, c, Part::Lower);
}

/// AᵀA (k × k for A of N × k): the lower triangle computed as by
/// [`matmul`]`(Aᵀ, A)` and mirrored (products commute exactly, so the
/// mirrored elements equal the computed ones bit for bit).
pub fn gram(a: ArrayView2<f64>) -> Array2<f64> {
    let k = a.ncols();
    let mut c = Array2::zeros((k, k));
    product_add(a.t(), a, 1.0, c.view_mut(), Part::Lower);
    mirror_lower(&mut c);
    c
}

/// Copy the strict lower triangle onto the upper one, in square tiles so
/// that the column-wise writes stay in cache.
pub(crate) fn mirror_lower(c: &mut Array2<f64>) {
    const TILE: usize = 32;
    let n = c.nrows();
    for i0 in (0..n).step_by(TILE) {
        for j0 in (0..=i0).step_by(TILE) {
            for i in i0..(i0 + TILE).min(n) {
                for j in j0..(j0 + TILE).min(i) {
                    c[[j, i]] = c[[i, j]];
                }
            }
        }
    }
}

/// Σ a_i b_i over two slices, in eight interleaved partial sums combined in
/// a fixed order (the order does not depend on the CPU).
pub fn dot(a: &[f64], b: &[f64]) -> f64 {
    let n = a.len().min(b.len());
    let mut acc = [0.0; 8];
    let (ca, cb) = (a[..n].chunks_exact(8), b[..n].chunks_exact(8));
    let (ra, rb) = (ca.remainder(), cb.remainder());
    for (x, y) in ca.zip(cb) {
        for l in 0..8 {
            acc[l] += x[l] * y[l];
        }
    }
    let mut sum = ((acc[0] + acc[4]) + (acc[1] + acc[5])) + ((acc[2] + acc[6]) + (acc[3] + acc[7]));
    for (x, y) in ra.iter().zip(rb) {
        sum += x * y;
    }
    sum
}

/// The Cholesky factor L of a symmetric positive-definite matrix
/// (A = L·Lᵀ), lower triangular and row-major, its upper triangle zero.
#[derive(Clone, Debug)]
pub struct Cholesky {
    lower: Array2<f64>,
}

impl Cholesky {
    /// Factor `a` (its lower triangle is read). `None` when a pivot is not
    /// positive and finite: A is not numerically positive definite.
    pub fn new(a: ArrayView2<f64>) -> Option<Self> {
        let n = a.nrows();
        assert_eq!(a.ncols(), n, "a square matrix");
        let mut l = Array2::zeros((n, n));
        for i in 0..n {
            for j in 0..=i {
                l[[i, j]] = a[[i, j]];
            }
        }
        Self::in_place(l)
    }

    /// Factor `a` in its own storage (its lower triangle is read), as
    /// [`Cholesky::new`] does on a copy, with the same bits.
    pub fn from_matrix(a: Array2<f64>) -> Option<Self> {
        assert_eq!(a.ncols(), a.nrows(), "a square matrix");
        if a.is_standard_layout() {
            Self::in_place(a)
        } else {
            Self::new(a.view())
        }
    }

    /// The blocked factorisation of the row-major `l` in place.
    fn in_place(mut l: Array2<f64>) -> Option<Self> {
        let n = l.nrows();
        for k0 in (0..n).step_by(CHOL_BLOCK) {
            let k1 = (k0 + CHOL_BLOCK).min(n);
            factor_diagonal_block(&mut l, k0, k1)?;
            if k1 < n {
                solve_panel(&mut l, k0, k1);
                // A22 ← A22 − L21·L21ᵀ, lower part only
                let (panel, update) =
                    l.multi_slice_mut((ndarray::s![k1.., k0..k1], ndarray::s![k1.., k1..]));
                let panel = panel.view();
                product_add(panel, panel.t(), -1.0, update, Part::Lower);
            }
        }
        for i in 0..n {
            l.row_mut(i).slice_mut(ndarray::s![i + 1..]).fill(0.0);
        }
        Some(Cholesky { lower: l })
    }

    /// L (lower triangular, row-major).
    pub fn lower(&self) -> &Array2<f64> {
        &self.lower
    }

    /// L, consumed.
    pub fn into_lower(self) -> Array2<f64> {
        self.lower
    }

    /// ln |A| = 2 Σ ln l_ii.
    pub fn ln_det(&self) -> f64 {
        2.0 * self.lower.diag().iter().map(|v| v.ln_fixed()).sum::<f64>()
    }

    /// L⁻¹·B by forward substitution (row-major result).
    pub fn solve_lower(&self, b: ArrayView2<f64>) -> Array2<f64> {
        assert_eq!(b.nrows(), self.lower.nrows(), "right-hand side rows");
        let mut x = Array2::zeros(b.dim());
        x.assign(&b);
        self.solve_lower_in_place(&mut x, false);
        x
    }

    /// X ← L⁻¹·X, blocked by [`CHOL_BLOCK`] rows: the rows of block I first
    /// lose L[I, ..i0]·X[..i0] (one product, each sum in increasing j),
    /// then X_i = (X_i − Σ_{i0≤j<i} l_ij X_j) / l_ii within the block.
    /// With `unit_lower` X starts as the identity, so that every X_j is zero
    /// beyond column j; the terms skipped then are l_ij·0, which change no
    /// element.
    fn solve_lower_in_place(&self, x: &mut Array2<f64>, unit_lower: bool) {
        let n = self.lower.nrows();
        let m = x.ncols();
        for i0 in (0..n).step_by(CHOL_BLOCK) {
            let i1 = (i0 + CHOL_BLOCK).min(n);
            if i0 > 0 {
                let cols = if unit_lower { i0 } else { m };
                let (done, mut rest) = x.view_mut().split_at(Axis(0), i0);
                product_add(
                    self.lower.slice(ndarray::s![i0..i1, ..i0]),
                    done.slice(ndarray::s![.., ..cols]),
                    -1.0,
                    rest.slice_mut(ndarray::s![..i1 - i0, ..cols]),
                    if unit_lower {
                        Part::AllLowerB
                    } else {
                        Part::All
                    },
                );
            }
            for i in i0..i1 {
                let cols = if unit_lower { i + 1 } else { m };
                let (done, mut rest) = x.view_mut().split_at(Axis(0), i);
                let mut xi = rest.row_mut(0);
                let mut xi = xi.slice_mut(ndarray::s![..cols]);
                for j in i0..i {
                    let lij = self.lower[[i, j]];
                    xi.zip_mut_with(&done.row(j).slice(ndarray::s![..cols]), |v, d| {
                        *v -= lij * d
                    });
                }
                let d = self.lower[[i, i]];
                xi.mapv_inplace(|v| v / d);
            }
        }
    }

    /// A⁻¹·b: L·y = b, then Lᵀ·x = y.
    pub fn solve(&self, b: ArrayView1<f64>) -> Array1<f64> {
        let n = self.lower.nrows();
        let mut y = b.to_owned();
        for i in 0..n {
            let row = self.lower.row(i);
            let s = dot(
                &row.as_slice().expect("row-major")[..i],
                &y.as_slice().expect("contiguous")[..i],
            );
            y[i] = (y[i] - s) / self.lower[[i, i]];
        }
        for i in (0..n).rev() {
            let mut s = y[i];
            for j in i + 1..n {
                s -= self.lower[[j, i]] * y[j];
            }
            y[i] = s / self.lower[[i, i]];
        }
        y
    }

    /// A⁻¹ = L⁻ᵀ·L⁻¹, symmetric (lower triangle computed, then mirrored).
    pub fn inverse(&self) -> Array2<f64> {
        let mut out = Array2::zeros((0, 0));
        self.clone().into_inverse(&mut out);
        out
    }

    /// A⁻¹ into `out` (reshaped when it is not n × n), the same bits as
    /// [`Cholesky::inverse`], with L⁻¹ formed in L's own storage; returns
    /// that storage, now L⁻¹ (lower triangular), for reuse.
    ///
    /// (A⁻¹)_ij = Σ_k x_ki x_kj over k ≥ max(i, j) (L⁻¹ = X is lower
    /// triangular): rows [i0, i1) of the lower triangle from rows i0.. of
    /// X, one product per block of rows.
    pub fn into_inverse(self, out: &mut Array2<f64>) -> Array2<f64> {
        let n = self.lower.nrows();
        let mut x = self.lower;
        invert_lower_in_place(&mut x);
        if out.dim() == (n, n) && out.is_standard_layout() {
            out.fill(0.0);
        } else {
            *out = Array2::zeros((n, n));
        }
        for i0 in (0..n).step_by(CHOL_BLOCK) {
            let i1 = (i0 + CHOL_BLOCK).min(n);
            let below = x.slice(ndarray::s![i0.., ..]);
            product_add(
                below.slice(ndarray::s![.., i0..i1]).t(),
                below.slice(ndarray::s![.., ..i1]),
                1.0,
                out.slice_mut(ndarray::s![i0..i1, ..i1]),
                Part::All,
            );
        }
        mirror_lower(out);
        x
    }
}

/// X ← L⁻¹ in L's own storage (row-major, upper triangle zero), blocked by
/// [`CHOL_BLOCK`] rows: block I starts as the identity's rows I, loses
/// L[I, ..i0]·X[..i0] (one product, each sum in increasing j; X[..i0] is
/// lower triangular, so the sums of a column block start at its first
/// column, skipping terms l_ij·0 that change no element), then
/// X_i = (X_i − Σ_{i0≤j<i} l_ij X_j) / l_ii within the block, X_i up to
/// column i (zero beyond). The block is formed aside and written over L's
/// rows I once they are no longer read.
fn invert_lower_in_place(x: &mut Array2<f64>) {
    let n = x.nrows();
    let mut rows = Array2::<f64>::zeros((CHOL_BLOCK.min(n), n));
    for i0 in (0..n).step_by(CHOL_BLOCK) {
        let i1 = (i0 + CHOL_BLOCK).min(n);
        let mut blk = rows.slice_mut(ndarray::s![..i1 - i0, ..i1]);
        blk.fill(0.0);
        for r in 0..i1 - i0 {
            blk[[r, i0 + r]] = 1.0;
        }
        if i0 > 0 {
            product_add(
                x.slice(ndarray::s![i0..i1, ..i0]),
                x.slice(ndarray::s![..i0, ..i0]),
                -1.0,
                blk.slice_mut(ndarray::s![.., ..i0]),
                Part::AllLowerB,
            );
        }
        for i in i0..i1 {
            let cols = i + 1;
            let (done, mut rest) = blk.view_mut().split_at(Axis(0), i - i0);
            let mut xi = rest.row_mut(0);
            let mut xi = xi.slice_mut(ndarray::s![..cols]);
            for j in i0..i {
                let lij = x[[i, j]];
                xi.zip_mut_with(&done.row(j - i0).slice(ndarray::s![..cols]), |v, d| {
                    *v -= lij * d
                });
            }
            let d = x[[i, i]];
            xi.mapv_inplace(|v| v / d);
        }
        x.slice_mut(ndarray::s![i0..i1, ..i1]).assign(&blk);
    }
}

/// Σ_{t in k0..j} l_it l_jt for rows i and j of the row-major `l`, by
/// [`dot`].
fn row_dot(l: &Array2<f64>, i: usize, j: usize, k0: usize) -> f64 {
    let n = l.ncols();
    let s = l.as_slice().expect("row-major");
    dot(&s[i * n + k0..i * n + j], &s[j * n + k0..j * n + j])
}

/// Unblocked Cholesky of the diagonal block [k0, k1) of `l` (row-major),
/// whose entries already hold A minus the updates of the earlier blocks.
fn factor_diagonal_block(l: &mut Array2<f64>, k0: usize, k1: usize) -> Option<()> {
    for j in k0..k1 {
        let d = l[[j, j]] - row_dot(l, j, j, k0);
        if !(d > 0.0 && d.is_finite()) {
            return None;
        }
        let d = d.sqrt();
        l[[j, j]] = d;
        for i in j + 1..k1 {
            let v = l[[i, j]] - row_dot(l, i, j, k0);
            l[[i, j]] = v / d;
        }
    }
    Some(())
}

/// Rows solved side by side in [`solve_panel`].
const PANEL_ROWS: usize = 4;

/// L21 ← A21·L11⁻ᵀ for the rows below the diagonal block [k0, k1):
/// l_ij = (a_ij − Σ_{k0≤t<j} l_it l_jt) / l_jj, each sum as [`dot`] forms
/// it (eight interleaved partial sums, combined in a fixed order, then the
/// rest of the terms one by one). [`PANEL_ROWS`] rows at a time, their
/// entries side by side, so that the vector lanes run across rows (across
/// independent sums) while each sum keeps its own order; by the AVX build
/// where the CPU has AVX, else the portable one, the same bits either way.
fn solve_panel(l: &mut Array2<f64>, k0: usize, k1: usize) {
    #[cfg(target_arch = "x86_64")]
    {
        if std::arch::is_x86_feature_detected!("avx") {
            // SAFETY: the CPU has AVX, the only feature the function enables.
            #[allow(unsafe_code)]
            return unsafe { solve_panel_avx(l, k0, k1) };
        }
    }
    solve_panel_body::<PANEL_ROWS>(l, k0, k1);
}

/// [`solve_panel_body`] compiled with AVX enabled (4-wide lanes).
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx")]
fn solve_panel_avx(l: &mut Array2<f64>, k0: usize, k1: usize) {
    solve_panel_body::<PANEL_ROWS>(l, k0, k1);
}

#[inline(always)]
fn solve_panel_body<const R: usize>(l: &mut Array2<f64>, k0: usize, k1: usize) {
    let n = l.nrows();
    let w = k1 - k0;
    // rows[t][r] = l[i + r, k0 + t], the panel's rows side by side
    let mut rows = vec![[0.0; R]; w];
    for i in (k1..n).step_by(R) {
        let count = R.min(n - i);
        {
            let s = l.as_slice().expect("row-major");
            for (t, lane) in rows.iter_mut().enumerate() {
                for (r, v) in lane.iter_mut().enumerate() {
                    *v = if r < count {
                        s[(i + r) * n + k0 + t]
                    } else {
                        0.0
                    };
                }
            }
            for j in k0..k1 {
                let len = j - k0;
                let lj = &s[j * n + k0..j * n + j];
                let mut acc = [[0.0; R]; 8];
                let whole = len / 8 * 8;
                for (ys, xs) in lj[..whole]
                    .chunks_exact(8)
                    .zip(rows[..whole].chunks_exact(8))
                {
                    for q in 0..8 {
                        for r in 0..R {
                            acc[q][r] += xs[q][r] * ys[q];
                        }
                    }
                }
                let mut sum = [0.0; R];
                for (r, v) in sum.iter_mut().enumerate() {
                    *v = ((acc[0][r] + acc[4][r]) + (acc[1][r] + acc[5][r]))
                        + ((acc[2][r] + acc[6][r]) + (acc[3][r] + acc[7][r]));
                }
                for (y, xs) in lj[whole..].iter().zip(&rows[whole..len]) {
                    for r in 0..R {
                        sum[r] += xs[r] * y;
                    }
                }
                let d = s[j * n + j];
                for r in 0..R {
                    rows[len][r] = (rows[len][r] - sum[r]) / d;
                }
            }
        }
        let s = l.as_slice_mut().expect("row-major");
        for (t, lane) in rows.iter().enumerate() {
            for (r, v) in lane.iter().enumerate().take(count) {
                s[(i + r) * n + k0 + t] = *v;
            }
        }
    }
}

/// Eigenvalues (ascending) and eigenvectors (columns, in the same order) of
/// a symmetric matrix by cyclic Jacobi rotations, the rows of each sweep in
/// a fixed order. `None` when the matrix holds a non-finite value or the
/// off-diagonal part does not vanish within [`JACOBI_MAX_SWEEPS`] sweeps.
pub fn symmetric_eigen(a: ArrayView2<f64>) -> Option<(Array1<f64>, Array2<f64>)> {
    let n = a.nrows();
    assert_eq!(a.ncols(), n, "a square matrix");
    if a.iter().any(|v| !v.is_finite()) {
        return None;
    }
    // the lower triangle, symmetrised
    let mut m = Array2::from_shape_fn((n, n), |(i, j)| if i >= j { a[[i, j]] } else { a[[j, i]] });
    let mut v = Array2::<f64>::eye(n);
    let mut converged = n < 2;
    for _ in 0..JACOBI_MAX_SWEEPS {
        let off: f64 = (0..n)
            .flat_map(|i| (0..i).map(move |j| (i, j)))
            .map(|(i, j)| m[[i, j]] * m[[i, j]])
            .sum();
        let scale: f64 = m.iter().map(|x| x * x).sum();
        if off <= f64::EPSILON * f64::EPSILON * scale || off == 0.0 {
            converged = true;
            break;
        }
        for p in 0..n {
            for q in p + 1..n {
                rotate(&mut m, &mut v, p, q);
            }
        }
    }
    if !converged {
        return None;
    }
    let mut order: Vec<usize> = (0..n).collect();
    order.sort_by(|&i, &j| m[[i, i]].total_cmp(&m[[j, j]]));
    let vals = Array1::from_iter(order.iter().map(|&i| m[[i, i]]));
    let vecs = Array2::from_shape_fn((n, n), |(r, c)| v[[r, order[c]]]);
    Some((vals, vecs))
}

/// One Jacobi rotation zeroing m[p, q] (m symmetric, both triangles kept).
fn rotate(m: &mut Array2<f64>, v: &mut Array2<f64>, p: usize, q: usize) {
    let apq = m[[p, q]];
    if apq == 0.0 {
        return;
    }
    let (app, aqq) = (m[[p, p]], m[[q, q]]);
    let theta = (aqq - app) / (2.0 * apq);
    let t = theta.signum() / (theta.abs() + (theta * theta + 1.0).sqrt());
    let t = if theta == 0.0 { 1.0 } else { t };
    let c = 1.0 / (t * t + 1.0).sqrt();
    let s = t * c;
    let n = m.nrows();
    for k in 0..n {
        let (mkp, mkq) = (m[[k, p]], m[[k, q]]);
        m[[k, p]] = c * mkp - s * mkq;
        m[[k, q]] = s * mkp + c * mkq;
    }
    for k in 0..n {
        let (mpk, mqk) = (m[[p, k]], m[[q, k]]);
        m[[p, k]] = c * mpk - s * mqk;
        m[[q, k]] = s * mpk + c * mqk;
    }
    m[[p, q]] = 0.0;
    m[[q, p]] = 0.0;
    for k in 0..n {
        let (vkp, vkq) = (v[[k, p]], v[[k, q]]);
        v[[k, p]] = c * vkp - s * vkq;
        v[[k, q]] = s * vkp + c * vkq;
    }
}

/// Iterations of the implicit QL step per eigenvalue before
/// [`symmetric_eigen_ql`] gives up (EISPACK's tql2 allows 30; Wilkinson's
/// shift converges cubically, about two on average).
pub const QL_MAX_ITERATIONS: usize = 60;

/// √(a² + b²) without overflow or harmful underflow, by plain arithmetic
/// (the C library's `hypot` may differ between builds; this does not):
/// m·√(1 + (s/m)²) with m = max(|a|, |b|), s = min(|a|, |b|).
fn pythag(a: f64, b: f64) -> f64 {
    let (a, b) = (a.abs(), b.abs());
    let (m, s) = if a >= b { (a, b) } else { (b, a) };
    if m == 0.0 {
        return 0.0;
    }
    let r = s / m;
    m * (1.0 + r * r).sqrt()
}

/// The symmetric eigen-decomposition A = V·diag(λ)·Vᵀ by Householder
/// reduction to tridiagonal form and the implicit QL method with
/// Wilkinson shifts: EISPACK's tred2 and tql2 (Martin, Reinsch &
/// Wilkinson 1968, Numer. Math. 11:181–195; Bowdler, Martin, Reinsch &
/// Wilkinson 1968, Numer. Math. 11:293–306; Golub & Van Loan 2013,
/// *Matrix Computations*, 4th ed., Alg. 8.3.1 and §8.3.5), in the form of
/// the public-domain JAMA library (Hicklin et al. 2000). About 9n³
/// operations against the Jacobi method's 15–30n³ ([`symmetric_eigen`]),
/// and each rotation touches two contiguous rows of the transposed
/// vectors.
///
/// Returns the eigenvalues in ascending order and the unit eigenvectors as
/// the columns of V, as [`symmetric_eigen`] does; the lower triangle of `a`
/// is read. Every operation is plain scalar arithmetic in an order fixed
/// by this source (no fused multiply-add, no run-time dispatch), so the
/// result depends on the input alone. `None` for non-finite entries or
/// when an eigenvalue does not converge in [`QL_MAX_ITERATIONS`].
///
/// # Panics
/// When `a` is not square.
pub fn symmetric_eigen_ql(a: ArrayView2<f64>) -> Option<(Array1<f64>, Array2<f64>)> {
    let n = a.nrows();
    assert_eq!(a.ncols(), n, "a square matrix");
    if a.iter().any(|v| !v.is_finite()) {
        return None;
    }
    if n == 0 {
        return Some((Array1::zeros(0), Array2::zeros((0, 0))));
    }
    // v[i*n + j]: the lower triangle, symmetrised, row-major
    let mut v: Vec<f64> = (0..n * n)
        .map(|ij| {
            let (i, j) = (ij / n, ij % n);
            if i >= j {
                a[[i, j]]
            } else {
                a[[j, i]]
            }
        })
        .collect();
    let mut d = vec![0.0; n];
    let mut e = vec![0.0; n];
    tridiagonalise(n, &mut v, &mut d, &mut e);
    // the vectors transposed: row i of z is column i of V, so that each
    // QL rotation works on two contiguous rows
    let mut z = vec![0.0; n * n];
    for i in 0..n {
        for j in 0..n {
            z[j * n + i] = v[i * n + j];
        }
    }
    if !implicit_ql(n, &mut d, &mut e, &mut z) {
        return None;
    }
    let mut order: Vec<usize> = (0..n).collect();
    order.sort_by(|&i, &j| d[i].total_cmp(&d[j]));
    let vals = Array1::from_iter(order.iter().map(|&i| d[i]));
    let vecs = Array2::from_shape_fn((n, n), |(r, c)| z[order[c] * n + r]);
    Some((vals, vecs))
}

/// Householder reduction of the symmetric `v` (n × n, row-major) to the
/// tridiagonal form with diagonal `d` and sub-diagonal `e` (e[0] = 0,
/// e[i] beside d[i]), `v` overwritten by the orthogonal transformation
/// (EISPACK tred2; Golub & Van Loan 2013, Alg. 8.3.1).
fn tridiagonalise(n: usize, v: &mut [f64], d: &mut [f64], e: &mut [f64]) {
    let at = |i: usize, j: usize| i * n + j;
    for j in 0..n {
        d[j] = v[at(n - 1, j)];
    }
    for i in (1..n).rev() {
        let mut scale = 0.0;
        let mut h = 0.0;
        for dk in &d[..i] {
            scale += dk.abs();
        }
        if scale == 0.0 {
            e[i] = d[i - 1];
            for j in 0..i {
                d[j] = v[at(i - 1, j)];
                v[at(i, j)] = 0.0;
                v[at(j, i)] = 0.0;
            }
        } else {
            for dk in &mut d[..i] {
                *dk /= scale;
                h += *dk * *dk;
            }
            let mut f = d[i - 1];
            let mut g = h.sqrt();
            if f > 0.0 {
                g = -g;
            }
            e[i] = scale * g;
            h -= f * g;
            d[i - 1] = f - g;
            for ej in &mut e[..i] {
                *ej = 0.0;
            }
            for j in 0..i {
                f = d[j];
                v[at(j, i)] = f;
                g = e[j] + v[at(j, j)] * f;
                for k in j + 1..i {
                    g += v[at(k, j)] * d[k];
                    e[k] += v[at(k, j)] * f;
                }
                e[j] = g;
            }
            f = 0.0;
            for j in 0..i {
                e[j] /= h;
                f += e[j] * d[j];
            }
            let hh = f / (h + h);
            for j in 0..i {
                e[j] -= hh * d[j];
            }
            for j in 0..i {
                f = d[j];
                g = e[j];
                for k in j..i {
                    v[at(k, j)] -= f * e[k] + g * d[k];
                }
                d[j] = v[at(i - 1, j)];
                v[at(i, j)] = 0.0;
            }
        }
        d[i] = h;
    }
    // accumulate the transformations
    for i in 0..n - 1 {
        v[at(n - 1, i)] = v[at(i, i)];
        v[at(i, i)] = 1.0;
        let h = d[i + 1];
        if h != 0.0 {
            for k in 0..=i {
                d[k] = v[at(k, i + 1)] / h;
            }
            for j in 0..=i {
                let mut g = 0.0;
                for k in 0..=i {
                    g += v[at(k, i + 1)] * v[at(k, j)];
                }
                for k in 0..=i {
                    v[at(k, j)] -= g * d[k];
                }
            }
        }
        for k in 0..=i {
            v[at(k, i + 1)] = 0.0;
        }
    }
    for j in 0..n {
        d[j] = v[at(n - 1, j)];
        v[at(n - 1, j)] = 0.0;
    }
    v[at(n - 1, n - 1)] = 1.0;
    e[0] = 0.0;
}

/// The implicit QL method with Wilkinson shifts on the tridiagonal
/// (`d`, `e` as [`tridiagonalise`] leaves them), the rotations applied to
/// the rows of `z` (Vᵀ); `d` becomes the eigenvalues (EISPACK tql2;
/// Golub & Van Loan 2013, §8.3.5). False when an eigenvalue does not
/// converge.
fn implicit_ql(n: usize, d: &mut [f64], e: &mut [f64], z: &mut [f64]) -> bool {
    for i in 1..n {
        e[i - 1] = e[i];
    }
    e[n - 1] = 0.0;
    let mut f = 0.0;
    let mut tst1 = 0.0_f64;
    let eps = f64::EPSILON;
    for l in 0..n {
        tst1 = tst1.max(d[l].abs() + e[l].abs());
        let mut m = l;
        while m < n - 1 && e[m].abs() > eps * tst1 {
            m += 1;
        }
        if m > l {
            let mut iterations = 0;
            loop {
                iterations += 1;
                if iterations > QL_MAX_ITERATIONS {
                    return false;
                }
                // the shift
                let mut g = d[l];
                let mut p = (d[l + 1] - g) / (2.0 * e[l]);
                let mut r = pythag(p, 1.0);
                if p < 0.0 {
                    r = -r;
                }
                d[l] = e[l] / (p + r);
                d[l + 1] = e[l] * (p + r);
                let dl1 = d[l + 1];
                let mut h = g - d[l];
                for di in &mut d[l + 2..] {
                    *di -= h;
                }
                f += h;
                // the implicit QL step
                p = d[m];
                let (mut c, mut c2, mut c3) = (1.0, 1.0, 1.0);
                let el1 = e[l + 1];
                let (mut s, mut s2) = (0.0, 0.0);
                for i in (l..m).rev() {
                    c3 = c2;
                    c2 = c;
                    s2 = s;
                    g = c * e[i];
                    h = c * p;
                    r = pythag(p, e[i]);
                    e[i + 1] = s * r;
                    s = e[i] / r;
                    c = p / r;
                    p = c * d[i] - s * g;
                    d[i + 1] = h + s * (c * g + s * d[i]);
                    let (lo, hi) = z.split_at_mut((i + 1) * n);
                    let zi = &mut lo[i * n..];
                    let zi1 = &mut hi[..n];
                    for (a, b) in zi.iter_mut().zip(zi1.iter_mut()) {
                        let hk = *b;
                        *b = s * *a + c * hk;
                        *a = c * *a - s * hk;
                    }
                }
                p = -s * s2 * c3 * el1 * e[l] / dl1;
                e[l] = s * p;
                d[l] = c * p;
                if e[l].abs() <= eps * tst1 {
                    break;
                }
            }
        }
        d[l] += f;
        e[l] = 0.0;
    }
    true
}

/// The routines as they were before the buffers were kept, the panels
/// solved four rows at a time and the inverse formed in place (commit
/// c9d78cb): the oracle of the bit-for-bit tests.
#[cfg(test)]
pub(crate) mod former {
    use super::{block, factor_diagonal_block, pack_rows, row_dot, Part, CHOL_BLOCK};
    use crate::fixedmath::FixedMath;
    use ndarray::{Array2, ArrayView2, ArrayViewMut2, Axis};

    /// B packed in panels of `NR` columns: panel p holds b[k, p·NR + c] at
    /// k·NR + c, zero beyond the last column.
    #[inline(always)]
    fn pack_columns<const NR: usize>(b: ArrayView2<f64>) -> Vec<f64> {
        let (n, p) = b.dim();
        let panels = p.div_ceil(NR);
        let mut out = vec![0.0; panels * n * NR];
        if n == 0 {
            return out;
        }
        let by_rows = b.strides()[1].unsigned_abs() <= b.strides()[0].unsigned_abs();
        if by_rows {
            // read B row by row (contiguous when row-major)
            for (k, row) in b.rows().into_iter().enumerate() {
                match row.as_slice() {
                    Some(r) => {
                        for (pi, part) in r.chunks(NR).enumerate() {
                            let at = pi * n * NR + k * NR;
                            out[at..at + part.len()].copy_from_slice(part);
                        }
                    }
                    None => {
                        for (j, v) in row.iter().enumerate() {
                            out[(j / NR) * n * NR + k * NR + j % NR] = *v;
                        }
                    }
                }
            }
        } else {
            for (pi, chunk) in out.chunks_exact_mut(n * NR).enumerate() {
                let j0 = pi * NR;
                for c in 0..NR.min(p - j0) {
                    for (k, v) in b.column(j0 + c).iter().enumerate() {
                        chunk[k * NR + c] = *v;
                    }
                }
            }
        }
        out
    }

    /// C ← C + s·(A·B) in register blocks of MR × NR, each element's sum formed
    /// first (from 0, increasing k) and then added once. The block shape only
    /// groups elements; no sum depends on it.
    #[inline(always)]
    fn product_body<const MR: usize, const NR: usize>(
        a: ArrayView2<f64>,
        b: ArrayView2<f64>,
        s: f64,
        mut c: ArrayViewMut2<f64>,
        part: Part,
    ) {
        let (m, n) = a.dim();
        let p = b.ncols();
        let packed_b = pack_columns::<NR>(b);
        let mut packed_a = vec![0.0; n * MR];
        for i0 in (0..m).step_by(MR) {
            pack_rows::<MR>(a, i0, &mut packed_a);
            let rows = MR.min(m - i0);
            for pi in 0..p.div_ceil(NR) {
                let j0 = pi * NR;
                if part == Part::Lower && j0 >= i0 + rows {
                    break;
                }
                let k0 = if part == Part::AllLowerB {
                    j0.min(n)
                } else {
                    0
                };
                let acc = if n == k0 {
                    [[0.0; NR]; MR]
                } else {
                    block::<MR, NR>(
                        &packed_a[k0 * MR..],
                        &packed_b[pi * n * NR + k0 * NR..(pi + 1) * n * NR],
                    )
                };
                let cols = NR.min(p - j0);
                for (r, acc_r) in acc.iter().enumerate().take(rows) {
                    let mut row = c.row_mut(i0 + r);
                    match row.as_slice_mut() {
                        Some(out) => {
                            for (o, v) in out[j0..j0 + cols].iter_mut().zip(acc_r) {
                                *o += s * v;
                            }
                        }
                        None => {
                            for (cc, v) in acc_r.iter().enumerate().take(cols) {
                                row[j0 + cc] += s * v;
                            }
                        }
                    }
                }
            }
        }
    }

    /// C ← C + s·(A·B) by the former body (the AVX build where the CPU has it).
    pub(super) fn product_add(
        a: ArrayView2<f64>,
        b: ArrayView2<f64>,
        s: f64,
        c: ArrayViewMut2<f64>,
        part: Part,
    ) {
        #[cfg(target_arch = "x86_64")]
        {
            if std::arch::is_x86_feature_detected!("avx") {
                // SAFETY: the CPU has AVX, the only feature the function enables.
                #[allow(unsafe_code)]
                return unsafe { product_avx(a, b, s, c, part) };
            }
        }
        product_body::<4, 4>(a, b, s, c, part);
    }

    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx")]
    fn product_avx(
        a: ArrayView2<f64>,
        b: ArrayView2<f64>,
        s: f64,
        c: ArrayViewMut2<f64>,
        part: Part,
    ) {
        product_body::<4, 8>(a, b, s, c, part);
    }

    /// A·B by the former product.
    pub(crate) fn matmul(a: ArrayView2<f64>, b: ArrayView2<f64>) -> Array2<f64> {
        let mut c = Array2::zeros((a.nrows(), b.ncols()));
        product_add(a, b, 1.0, c.view_mut(), Part::All);
        c
    }

    /// Copy the strict lower triangle onto the upper one.
    fn mirror_lower(c: &mut Array2<f64>) {
        for i in 0..c.nrows() {
            for j in 0..i {
                c[[j, i]] = c[[i, j]];
            }
        }
    }

    /// L21 ← A21·L11⁻ᵀ for the rows below the diagonal block [k0, k1).
    pub(crate) fn solve_panel(l: &mut Array2<f64>, k0: usize, k1: usize) {
        let n = l.nrows();
        for i in k1..n {
            for j in k0..k1 {
                let v = l[[i, j]] - row_dot(l, i, j, k0);
                l[[i, j]] = v / l[[j, j]];
            }
        }
    }

    /// The former factor L.
    pub(crate) struct Cholesky {
        pub(crate) lower: Array2<f64>,
    }

    impl Cholesky {
        /// ln |A| and A⁻¹·b as the current (unchanged) code forms them.
        pub(crate) fn ln_det(&self) -> f64 {
            2.0 * self.lower.diag().iter().map(|v| v.ln_fixed()).sum::<f64>()
        }

        pub(crate) fn solve(&self, b: ndarray::ArrayView1<f64>) -> ndarray::Array1<f64> {
            super::Cholesky {
                lower: self.lower.clone(),
            }
            .solve(b)
        }

        /// Factor `a` (its lower triangle is read). `None` when a pivot is not
        /// positive and finite: A is not numerically positive definite.
        pub fn new(a: ArrayView2<f64>) -> Option<Self> {
            let n = a.nrows();
            assert_eq!(a.ncols(), n, "a square matrix");
            let mut l = Array2::zeros((n, n));
            for i in 0..n {
                for j in 0..=i {
                    l[[i, j]] = a[[i, j]];
                }
            }
            for k0 in (0..n).step_by(CHOL_BLOCK) {
                let k1 = (k0 + CHOL_BLOCK).min(n);
                factor_diagonal_block(&mut l, k0, k1)?;
                if k1 < n {
                    solve_panel(&mut l, k0, k1);
                    // A22 ← A22 − L21·L21ᵀ, lower part only
                    let panel = l.slice(ndarray::s![k1.., k0..k1]).to_owned();
                    let update = l.slice_mut(ndarray::s![k1.., k1..]);
                    product_add(panel.view(), panel.t(), -1.0, update, Part::Lower);
                }
            }
            for i in 0..n {
                for j in i + 1..n {
                    l[[i, j]] = 0.0;
                }
            }
            Some(Cholesky { lower: l })
        }

        /// X ← L⁻¹·X, blocked by [`CHOL_BLOCK`] rows: the rows of block I first
        /// lose L[I, ..i0]·X[..i0] (one product, each sum in increasing j),
        /// then X_i = (X_i − Σ_{i0≤j<i} l_ij X_j) / l_ii within the block.
        /// With `unit_lower` X starts as the identity, so that every X_j is zero
        /// beyond column j; the terms skipped then are l_ij·0, which change no
        /// element.
        pub(crate) fn solve_lower_in_place(&self, x: &mut Array2<f64>, unit_lower: bool) {
            let n = self.lower.nrows();
            let m = x.ncols();
            for i0 in (0..n).step_by(CHOL_BLOCK) {
                let i1 = (i0 + CHOL_BLOCK).min(n);
                if i0 > 0 {
                    let cols = if unit_lower { i0 } else { m };
                    let (done, mut rest) = x.view_mut().split_at(Axis(0), i0);
                    product_add(
                        self.lower.slice(ndarray::s![i0..i1, ..i0]),
                        done.slice(ndarray::s![.., ..cols]),
                        -1.0,
                        rest.slice_mut(ndarray::s![..i1 - i0, ..cols]),
                        if unit_lower {
                            Part::AllLowerB
                        } else {
                            Part::All
                        },
                    );
                }
                for i in i0..i1 {
                    let cols = if unit_lower { i + 1 } else { m };
                    let (done, mut rest) = x.view_mut().split_at(Axis(0), i);
                    let mut xi = rest.row_mut(0);
                    let mut xi = xi.slice_mut(ndarray::s![..cols]);
                    for j in i0..i {
                        let lij = self.lower[[i, j]];
                        xi.zip_mut_with(&done.row(j).slice(ndarray::s![..cols]), |v, d| {
                            *v -= lij * d
                        });
                    }
                    let d = self.lower[[i, i]];
                    xi.mapv_inplace(|v| v / d);
                }
            }
        }

        /// A⁻¹ = L⁻ᵀ·L⁻¹, symmetric (lower triangle computed, then mirrored).
        pub fn inverse(&self) -> Array2<f64> {
            let n = self.lower.nrows();
            let mut l_inv = Array2::<f64>::eye(n);
            self.solve_lower_in_place(&mut l_inv, true);
            // (A⁻¹)_ij = Σ_k x_ki x_kj over k ≥ max(i, j) (L⁻¹ = X is lower
            // triangular): rows [i0, i1) of the lower triangle from rows i0..
            // of X, one product per block of rows
            let mut c = Array2::zeros((n, n));
            for i0 in (0..n).step_by(CHOL_BLOCK) {
                let i1 = (i0 + CHOL_BLOCK).min(n);
                let below = l_inv.slice(ndarray::s![i0.., ..]);
                product_add(
                    below.slice(ndarray::s![.., i0..i1]).t(),
                    below.slice(ndarray::s![.., ..i1]),
                    1.0,
                    c.slice_mut(ndarray::s![i0..i1, ..i1]),
                    Part::All,
                );
            }
            mirror_lower(&mut c);
            c
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::{s, ShapeBuilder};
    use rand::{Rng, SeedableRng};
    use rand_xoshiro::Xoshiro256PlusPlus;

    fn random(m: usize, n: usize, seed: u64) -> Array2<f64> {
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
        Array2::from_shape_fn((m, n), |_| rng.random_range(-1.0..1.0))
    }

    /// The plain triple loop, each sum from 0 in increasing k.
    fn naive(a: ArrayView2<f64>, b: ArrayView2<f64>) -> Array2<f64> {
        Array2::from_shape_fn((a.nrows(), b.ncols()), |(i, j)| {
            let mut s = 0.0;
            for k in 0..a.ncols() {
                s += a[[i, k]] * b[[k, j]];
            }
            s
        })
    }

    /// Blocking and packing change no sum: bit for bit the triple loop,
    /// for every remainder of the register block and any layout.
    #[test]
    fn products_equal_the_triple_loop_bit_for_bit() {
        for (m, n, p) in [(1, 1, 1), (3, 5, 2), (9, 7, 13), (17, 40, 6), (4, 0, 3)] {
            let a = random(m, n, 1);
            let b = random(n, p, 2);
            let mut b_f = Array2::zeros((n, p).f());
            b_f.assign(&b);
            let want = naive(a.view(), b.view());
            assert_eq!(matmul(a.view(), b.view()), want, "{m}×{n}×{p}");
            assert_eq!(matmul(a.view(), b_f.view()), want, "column-major B");
            let at = a.t().to_owned();
            assert_eq!(matmul(at.t(), b.view()), want, "transposed view");
        }
        // the baseline build, whatever this CPU has (matmul above took the
        // AVX build where the CPU has AVX)
        for (m, n, p) in [(9, 7, 13), (17, 40, 6)] {
            let (a, b) = (random(m, n, 11), random(n, p, 12));
            let mut c = Array2::zeros((m, p));
            product_portable(a.view(), b.view(), 1.0, c.view_mut(), Part::All);
            assert_eq!(c, naive(a.view(), b.view()), "portable {m}×{n}×{p}");
        }
        // a lower-triangular B: the shortened sums give the same bits
        let (a, mut b) = (random(13, 21, 13), random(21, 17, 14));
        for k in 0..21 {
            for c in k + 1..17 {
                b[[k, c]] = 0.0;
            }
        }
        let mut short = Array2::zeros((13, 17));
        product_add(a.view(), b.view(), 1.0, short.view_mut(), Part::AllLowerB);
        assert_eq!(short, naive(a.view(), b.view()), "lower-triangular B");
        let j = random(23, 11, 3);
        assert_eq!(gram(j.view()), naive(j.t(), j.view()));
        let sl = j.slice(s![1..20;2, 2..9]);
        assert_eq!(gram(sl), naive(sl.t(), sl));
    }

    /// Random views of four layouts of an m × n matrix: row-major,
    /// column-major, a transposed view and a strided slice.
    fn layouts(m: usize, n: usize, seed: u64) -> Vec<Array2<f64>> {
        let a = random(m, n, seed);
        let mut f = Array2::zeros((m, n).f());
        f.assign(&a);
        vec![a, f]
    }

    /// Every element bit for bit, or with `Part::Lower` those on and below
    /// the diagonal (the register blocks that reach it also write a few
    /// elements above it, which no caller reads: which ones depends on
    /// the block's shape).
    fn agree(new: &Array2<f64>, old: &Array2<f64>, part: Part) -> bool {
        new.dim() == old.dim()
            && new.indexed_iter().all(|((i, j), v)| {
                (part == Part::Lower && j > i) || v.to_bits() == old[[i, j]].to_bits()
            })
    }

    /// The kept buffers, the two visiting orders, the panel packing that
    /// skips a triangular B's zero head and the row-slice write-back change
    /// no bit: every product against the former code, for each part, many
    /// shapes (remainders of both register blocks, m < p and m ≥ p), layouts
    /// and a C that already holds values.
    #[test]
    fn products_equal_the_former_code_bit_for_bit() {
        let sizes = [1, 2, 3, 4, 5, 7, 8, 9, 13, 16, 17, 31, 48, 49, 64, 97];
        let mut case = 0u64;
        for &m in &sizes {
            for &n in &[0, 1, 3, 8, 11, 48, 50] {
                for &p in &sizes {
                    case += 1;
                    for (la, a) in layouts(m, n, case).iter().enumerate() {
                        for (lb, b0) in layouts(n, p, case + 1000).iter().enumerate() {
                            let mut b = b0.clone();
                            for part in [Part::All, Part::Lower, Part::AllLowerB] {
                                if part == Part::AllLowerB {
                                    for k in 0..n {
                                        for c in k + 1..p {
                                            b[[k, c]] = 0.0;
                                        }
                                    }
                                }
                                let c0 = random(m, p, case + 2000);
                                let (mut new, mut old) = (c0.clone(), c0.clone());
                                product_add(a.view(), b.view(), -1.0, new.view_mut(), part);
                                former::product_add(a.view(), b.view(), -1.0, old.view_mut(), part);
                                assert!(agree(&new, &old, part), "{m}×{n}×{p}, layouts {la}/{lb}");
                                // a column-major C (written element by element)
                                let mut cf = Array2::zeros((m, p).f());
                                cf.assign(&c0);
                                product_add(a.view(), b.view(), -1.0, cf.view_mut(), part);
                                assert!(agree(&cf, &old, part), "column-major C, {m}×{n}×{p}");
                            }
                        }
                    }
                }
            }
        }
        // transposed and strided views, as the factorisation and the
        // inverse pass them
        let big = random(120, 90, 77);
        let a = big.slice(s![3..60;2, 5..80]);
        let b = big.slice(s![10..85, 1..90;3]);
        for part in [Part::All, Part::Lower] {
            let (mut new, mut old) = (Array2::zeros((29, 30)), Array2::zeros((29, 30)));
            product_add(a, b, 1.0, new.view_mut(), part);
            former::product_add(a, b, 1.0, old.view_mut(), part);
            assert!(agree(&new, &old, part));
            let (mut new, mut old) = (Array2::zeros((75, 75)), Array2::zeros((75, 75)));
            product_add(b, b.t(), 1.0, new.view_mut(), part);
            former::product_add(b, b.t(), 1.0, old.view_mut(), part);
            assert!(agree(&new, &old, part));
            // the baseline build, whatever this CPU has
            let mut portable = Array2::zeros((75, 75));
            product_portable(b, b.t(), 1.0, portable.view_mut(), part);
            assert!(agree(&portable, &old, part));
        }
    }

    /// The panel solved four rows at a time, in the baseline build as in
    /// the dispatched one, equals the former row-by-row solve bit for bit.
    #[test]
    fn panel_solve_equals_the_former_code_in_both_builds() {
        for n in [49, 50, 53, 96, 130] {
            let a = spd(n, 40 + n as u64);
            let mut l = Array2::zeros((n, n));
            for i in 0..n {
                for j in 0..=i {
                    l[[i, j]] = a[[i, j]];
                }
            }
            factor_diagonal_block(&mut l, 0, CHOL_BLOCK).expect("positive definite");
            let mut old = l.clone();
            former::solve_panel(&mut old, 0, CHOL_BLOCK);
            let mut portable = l.clone();
            solve_panel_body::<PANEL_ROWS>(&mut portable, 0, CHOL_BLOCK);
            solve_panel(&mut l, 0, CHOL_BLOCK);
            assert!(bits_equal(&portable, &old) && bits_equal(&l, &old), "n {n}");
        }
    }

    /// A squared-exponential kernel matrix plus a small diagonal, the shape
    /// of the residual process's K_y (ill-conditioned for long scales).
    fn kernel_like(n: usize, seed: u64, length: f64, nugget: f64) -> Array2<f64> {
        let x = random(n, 3, seed);
        Array2::from_shape_fn((n, n), |(i, j)| {
            let d2: f64 = (0..3).map(|k| (x[[i, k]] - x[[j, k]]).powi(2)).sum();
            (-0.5 * d2 / (length * length)).exp_fixed() + if i == j { nugget } else { 0.0 }
        })
    }

    fn bits_equal(a: &Array2<f64>, b: &Array2<f64>) -> bool {
        a.dim() == b.dim() && a.iter().zip(b).all(|(x, y)| x.to_bits() == y.to_bits())
    }

    /// The factor, L⁻¹ and A⁻¹ against the former code bit for bit: every
    /// n from 1 to 110 and a spread up to 300 (n a multiple of the block,
    /// one more and one less, odd sizes), random and kernel-like SPD
    /// matrices; a matrix that is not positive definite fails in both.
    #[test]
    fn cholesky_and_inverse_equal_the_former_code_bit_for_bit() {
        let mut sizes: Vec<usize> = (1..=110).collect();
        sizes.extend([
            143, 144, 145, 167, 191, 192, 193, 211, 239, 240, 241, 263, 288, 299, 300,
        ]);
        let mut work = Array2::zeros((0, 0));
        for &n in &sizes {
            let cases = [
                spd(n, 500 + n as u64),
                kernel_like(n, 900 + n as u64, 0.4, 1e-3),
                kernel_like(n, 1300 + n as u64, 2.0, 1e-6),
            ];
            for (ci, a) in cases.iter().enumerate() {
                let old = former::Cholesky::new(a.view());
                // the upper triangle is never read
                let mut messy = a.clone();
                for i in 0..n {
                    for j in i + 1..n {
                        messy[[i, j]] = f64::NAN;
                    }
                }
                let new = Cholesky::new(a.view());
                let owned = Cholesky::from_matrix(messy);
                let (Some(old), Some(new), Some(owned)) = (old, new, owned) else {
                    panic!("n {n} case {ci}: a factor failed");
                };
                assert!(bits_equal(new.lower(), &old.lower), "L, n {n} case {ci}");
                assert!(
                    bits_equal(owned.lower(), &old.lower),
                    "L in place, n {n} case {ci}"
                );
                let want = old.inverse();
                assert!(bits_equal(&new.inverse(), &want), "A⁻¹, n {n} case {ci}");
                let mut want_x = Array2::<f64>::eye(n);
                old.solve_lower_in_place(&mut want_x, true);
                let x = owned.into_inverse(&mut work);
                assert!(bits_equal(&work, &want), "A⁻¹ in place, n {n} case {ci}");
                assert!(bits_equal(&x, &want_x), "L⁻¹ in place, n {n} case {ci}");
            }
        }
        let mut bad = spd(60, 3);
        bad[[50, 50]] = -1.0;
        assert!(Cholesky::new(bad.view()).is_none() && former::Cholesky::new(bad.view()).is_none());
        assert!(Cholesky::from_matrix(bad).is_none());
    }

    /// ndarray's own product (another summation order) agrees to rounding.
    #[test]
    fn products_agree_with_ndarray() {
        let (a, b) = (random(30, 70, 4), random(70, 9, 5));
        let ours = matmul(a.view(), b.view());
        let theirs = a.dot(&b);
        for (u, v) in ours.iter().zip(&theirs) {
            assert!((u - v).abs() <= 1e-13 * (1.0 + v.abs()), "{u} vs {v}");
        }
    }

    fn spd(n: usize, seed: u64) -> Array2<f64> {
        let g = random(n + 3, n, seed);
        let mut a = gram(g.view());
        for i in 0..n {
            a[[i, i]] += 0.1;
        }
        a
    }

    /// L·Lᵀ = A, A·A⁻¹ = I, A·solve(b) = b and ln|A| against the product of
    /// the Jacobi eigenvalues, across block boundaries (n = 1 … 2·block + 5).
    #[test]
    fn cholesky_reproduces_the_matrix_and_its_inverse() {
        for n in [1, 2, 7, CHOL_BLOCK, CHOL_BLOCK + 1, 2 * CHOL_BLOCK + 5] {
            let a = spd(n, n as u64);
            let f = Cholesky::new(a.view()).expect("positive definite");
            let l = f.lower();
            let llt = naive(l.view(), l.t());
            for (u, v) in llt.iter().zip(&a) {
                assert!((u - v).abs() < 1e-10 * (1.0 + v.abs()), "n {n}: {u} vs {v}");
            }
            let inv = f.inverse();
            let eye = naive(a.view(), inv.view());
            for ((i, j), v) in eye.indexed_iter() {
                let want = if i == j { 1.0 } else { 0.0 };
                assert!((v - want).abs() < 1e-8, "n {n}: A·A⁻¹[{i},{j}] = {v}");
            }
            let rhs = random(n, 5, 7);
            let lx = naive(l.view(), f.solve_lower(rhs.view()).view());
            for (u, v) in lx.iter().zip(&rhs) {
                assert!((u - v).abs() < 1e-9, "n {n}: L·L⁻¹B {u} vs {v}");
            }
            let b = Array1::from_shape_fn(n, |i| (i as f64 * 0.7).sin_fixed());
            let x = f.solve(b.view());
            let back = a.dot(&x);
            for (u, v) in back.iter().zip(&b) {
                assert!((u - v).abs() < 1e-9, "n {n}: {u} vs {v}");
            }
            if n <= CHOL_BLOCK + 1 {
                let (vals, _) = symmetric_eigen(a.view()).expect("eigen");
                let ln_det: f64 = vals.iter().map(|v| v.ln_fixed()).sum();
                assert!((ln_det - f.ln_det()).abs() < 1e-9 * (1.0 + ln_det.abs()));
            }
        }
    }

    #[test]
    fn cholesky_refuses_an_indefinite_matrix() {
        let a = ndarray::arr2(&[[1.0, 2.0], [2.0, 1.0]]);
        assert!(Cholesky::new(a.view()).is_none());
        let nan = ndarray::arr2(&[[f64::NAN]]);
        assert!(Cholesky::new(nan.view()).is_none());
    }

    /// V·diag(λ)·Vᵀ = A, VᵀV = I, ascending λ; a worked example: the 2 × 2
    /// matrix [[2, 1], [1, 2]] has eigenvalues 1 and 3 (by hand).
    #[test]
    fn jacobi_eigen_decomposes() {
        let (vals, _) =
            symmetric_eigen(ndarray::arr2(&[[2.0, 1.0], [1.0, 2.0]]).view()).expect("eigen");
        assert!((vals[0] - 1.0).abs() < 1e-15 && (vals[1] - 3.0).abs() < 1e-15);
        for n in [1, 3, 12, 40] {
            let a = spd(n, 100 + n as u64) - 0.5;
            let (vals, vecs) = symmetric_eigen(a.view()).expect("eigen");
            assert!(vals.windows(2).into_iter().all(|w| w[0] <= w[1]));
            let back = naive((&vecs * &vals).view(), vecs.t());
            for (u, v) in back.iter().zip(&a) {
                assert!((u - v).abs() < 1e-11 * (1.0 + v.abs()), "n {n}: {u} vs {v}");
            }
            let vtv = naive(vecs.t(), vecs.view());
            for ((i, j), v) in vtv.indexed_iter() {
                let want = if i == j { 1.0 } else { 0.0 };
                assert!((v - want).abs() < 1e-12, "n {n}");
            }
        }
    }

    #[test]
    fn dot_sums_every_pair() {
        let a: Vec<f64> = (0..21).map(f64::from).collect();
        let b = vec![2.0; 21];
        // exact: integers well inside f64's 53 bits
        assert_eq!(dot(&a, &b).to_bits(), 420f64.to_bits());
        assert_eq!(dot(&[], &[]).to_bits(), 0f64.to_bits());
    }

    /// ‖AV − VΛ‖ and ‖VᵀV − I‖, elementwise maxima.
    fn eigen_residuals(a: &Array2<f64>, vals: &Array1<f64>, vecs: &Array2<f64>) -> (f64, f64) {
        let av = naive(a.view(), vecs.view());
        let res = (&av - &(vecs * vals))
            .iter()
            .fold(0.0_f64, |m, v| m.max(v.abs()));
        let vtv = naive(vecs.t(), vecs.view());
        let orth = (&vtv - &Array2::<f64>::eye(a.nrows()))
            .iter()
            .fold(0.0_f64, |m, v| m.max(v.abs()));
        (res, orth)
    }

    /// SciPy 1.17's `scipy.linalg.eigh` (LAPACK dsyevr) on three matrices
    /// defined by formulas, run once by tests/reference/eigh_reference.py:
    /// the order-6 Hilbert and Pascal matrices (Higham 2002, *Accuracy and
    /// Stability of Numerical Algorithms*, §28.1 and §28.4) and a dense
    /// order-8 matrix. Eigenvalues agree to 1e-13 of the largest (the
    /// backward error of either method, times a few), eigenvectors satisfy
    /// AV = VΛ and VᵀV = I to rounding.
    #[test]
    fn ql_eigenvalues_match_scipy_eigh() {
        let comb =
            |n: usize, k: usize| (0..k).fold(1.0, |c, i| c * (n - i) as f64 / (i + 1) as f64);
        let cases: [(&str, Array2<f64>, Vec<f64>); 3] = [
            (
                "hilbert6",
                Array2::from_shape_fn((6, 6), |(i, j)| 1.0 / (i + j + 1) as f64),
                vec![
                    1.0827994844532908e-07,
                    1.257075712262841e-05,
                    0.000615748354182639,
                    0.016321521319875815,
                    0.24236087057520933,
                    1.618899858924339,
                ],
            ),
            (
                "pascal6",
                Array2::from_shape_fn((6, 6), |(i, j)| comb(i + j, i).round()),
                vec![
                    0.003004389574729899,
                    0.06429432078602594,
                    0.48933882874363777,
                    2.0435737800890736,
                    15.553473273751539,
                    332.846315407055,
                ],
            ),
            (
                "dense8",
                Array2::from_shape_fn((8, 8), |(i, j)| {
                    (i.min(j) + 1) as f64 + 0.1 * ((i * j) as f64).cos_fixed()
                }),
                vec![
                    0.05778442326254333,
                    0.23337486228405832,
                    0.3350804497922255,
                    0.4346160319021615,
                    0.8500951742148198,
                    1.45769671869489,
                    3.266395172720557,
                    29.38312722800636,
                ],
            ),
        ];
        for (name, a, want) in cases {
            let (vals, vecs) = symmetric_eigen_ql(a.view()).expect("converges");
            let top = want[want.len() - 1];
            for (got, w) in vals.iter().zip(&want) {
                assert!((got - w).abs() <= 1e-13 * top, "{name}: {got} against {w}");
            }
            let (res, orth) = eigen_residuals(&a, &vals, &vecs);
            assert!(
                res <= 1e-13 * top && orth <= 1e-13,
                "{name}: {res:e} {orth:e}"
            );
        }
    }

    /// The second-difference matrix tridiag(−1, 2, −1) of order n has the
    /// eigenvalues 2 − 2·cos(jπ/(n + 1)), j = 1 … n (Strang 2007,
    /// *Computational Science and Engineering*, §1.5; from memory). Made
    /// dense by a Householder reflection H = I − 2wwᵀ/wᵀw (H·T·H has T's
    /// eigenvalues), so that the reduction has work to do.
    #[test]
    fn ql_eigenvalues_of_the_second_difference_matrix() {
        let n = 40;
        let t = Array2::from_shape_fn((n, n), |(i, j)| match i.abs_diff(j) {
            0 => 2.0,
            1 => -1.0,
            _ => 0.0,
        });
        let w = Array1::from_shape_fn(n, |i| 1.0 + (i as f64 * 0.7).sin_fixed());
        let h = Array2::<f64>::eye(n)
            - &(w
                .view()
                .insert_axis(Axis(1))
                .dot(&w.view().insert_axis(Axis(0)))
                * (2.0 / w.dot(&w)));
        let a = naive(naive(h.view(), t.view()).view(), h.view());
        let (vals, vecs) = symmetric_eigen_ql(a.view()).expect("converges");
        for (j, v) in vals.iter().enumerate() {
            let want =
                2.0 - 2.0 * ((j + 1) as f64 * std::f64::consts::PI / (n + 1) as f64).cos_fixed();
            assert!((v - want).abs() < 1e-13, "λ_{j}: {v} against {want}");
        }
        let (res, orth) = eigen_residuals(&a, &vals, &vecs);
        assert!(res < 1e-13 && orth < 1e-13, "{res:e} {orth:e}");
    }

    /// On random covariances of the fast path's sizes, with a spread
    /// spectrum and a zero block, the QL and Jacobi routines agree in
    /// every eigenvalue to 1e-12 of the largest.
    #[test]
    fn ql_agrees_with_jacobi() {
        for (n, seed) in [(1, 7), (2, 8), (17, 9), (131, 10)] {
            let g = random(n, n.max(2) / 2, seed);
            let mut a = naive(g.view(), g.t());
            for i in 0..n {
                a[[i, i]] += 1e-8 * (i + 1) as f64;
            }
            let (ql, vecs) = symmetric_eigen_ql(a.view()).expect("ql");
            let (jac, _) = symmetric_eigen(a.view()).expect("jacobi");
            let top = jac[n - 1].abs().max(1e-300);
            for (q, j) in ql.iter().zip(&jac) {
                assert!((q - j).abs() <= 1e-12 * top, "n = {n}: {q} against {j}");
            }
            let (res, orth) = eigen_residuals(&a, &ql, &vecs);
            assert!(
                res <= 1e-12 * top && orth <= 1e-12,
                "n = {n}: {res:e} {orth:e}"
            );
        }
        assert!(
            symmetric_eigen_ql(ArrayView2::from_shape((1, 1), &[f64::NAN]).expect("1×1")).is_none()
        );
    }
}
