//! A fast prediction path for a committee: the members' Laplace variance
//! from the leading eigenvectors of their posterior covariance, the
//! residual process from the training rows near the query, each row with a
//! computed bound on its error, and the exact path for any row whose bound
//! is not small enough.
//!
//! # Members: a low-rank posterior with a certified remainder
//!
//! With Σ = A⁻¹ = Σᵢ λᵢ uᵢuᵢᵀ (λ₁ ≥ … ≥ λ_k, the eigen-decomposition of
//! the symmetric posterior covariance; Golub & Van Loan 2013, *Matrix
//! Computations*, 4th ed., §8.1) and pᵢ = uᵢᵀg for a row's Jacobian g,
//!
//! ```text
//! gᵀΣg = Σ_{i≤r} λᵢ pᵢ² + Σ_{i>r} λᵢ pᵢ²,        t = Σ_{i>r} pᵢ² = ‖g‖² − Σ_{i≤r} pᵢ²
//! λ_k·t ≤ Σ_{i>r} λᵢ pᵢ² ≤ λ_{r+1}·t
//! ```
//!
//! (the eigenvectors are orthonormal, so ‖g‖² = Σᵢ pᵢ²). The estimate takes
//! the remainder at the middle of its interval, (λ_{r+1} + λ_k)/2 · t, and
//! its error is at most (λ_{r+1} − λ_k)/2 · t plus the rounding of t (a
//! difference of sums: 2(k + r)·ε·‖g‖², ε the machine epsilon; Higham
//! 2002, *Accuracy and Stability of Numerical Algorithms*, §3.1). One
//! product J·U_r (rows × k times k × r) replaces the exact path's k²/2
//! multiply-adds per row by k·r.
//!
//! The rank r of each member is chosen when the fast path is built, on
//! calibration rows (the model's own scaled training rows when it stores
//! them): the smallest r at which the bound is at most [`FAST_SD_TOL`] of
//! the committee's model variance on 99 % of those rows.
//!
//! # Residual process: the rows near the query
//!
//! The squared-exponential kernel k(x*, xₙ) = τ²·exp(−½ d²ₙ) (d the
//! distance in length scales) is left out beyond d² > c. With S the rows
//! inside, D those beyond, B = K_y⁻¹ and α = B·r, and the rows of D
//! counted in bands c·m ≤ d² (m = 1, 1.5, 2, 3, 4, 6, 8), each with
//! kₙ ≤ κ_m = τ²·exp(−c·m/2):
//!
//! ```text
//! |mean error|     = |Σ_D kₙαₙ| = |k_DᵀBr|      ≤ min(Σ_m κ_m Σ_{D_m} |αₙ|,  √‖B‖₂ ‖k_D‖ √(rᵀα))
//! |variance error| = |2 k_Sᵀ B k_D + k_Dᵀ B k_D|  ≤ 2 min(√(k_SᵀBk_S ‖B‖₂), ‖B‖₂‖k_S‖) ‖k_D‖ + ‖B‖₂‖k_D‖²
//! ‖k_D‖² ≤ Σ_m κ_m² |D_m|,   ‖B‖₂ = 1/λ_min(K_y) ≤ 1/(min_n s·σ²ₙ + jitter − N·τ²·1e-12)
//! ```
//!
//! (Cauchy–Schwarz, in B's inner product ⟨u, v⟩ = uᵀBv for the terms
//! with √: B is positive definite, and k_SᵀBk_S is the sum the row
//! computes anyway; the kernel matrix is positive semi-definite, so by
//! Weyl's inequality the smallest eigenvalue of K_y is at least the
//! smallest entry of its diagonal noise, less a rounding allowance). The
//! cut c is the shortest of a ladder (4 … 48) at which, on 99 % of the
//! calibration rows, the variance bound is at most half of
//! [`FAST_SD_TOL`] of the row's own variance without the process (the
//! members' noise under the process's factor and their model variance;
//! the smallest noise variance when the committee has none) and the
//! mean's a twentieth of it of that sd. A row whose check (below) fails
//! at c is computed once more at 1.5·c before it goes the exact way. The
//! bounds are far from tight: on the concrete rows of docs/benchmarks.md
//! the variance's true error is about a thousandth of its bound, but
//! the mean's true error alone, measured against the exact process,
//! asks for a cut of 20–26 at a twentieth of the tolerance, so a cut
//! chosen by measured error instead saves little (tried and dropped,
//! docs/benchmarks.md). The rows near a query are found by one
//! product of the scaled queries with the scaled training rows (the
//! screen of [`crate::domain`]), their distances then summed one by one;
//! kᵀBk over S uses B's symmetry.
//!
//! # Each row checked
//!
//! Per row, E is the bound on the committee's variance error (the mean of
//! its members' bounds) and E_p the process's: the row is kept when
//! E ≤ tol·(committee variance − E), E_t ≤ tol·(total variance − E_t)
//! and the mean's bound is at most tol/10 of the sd, with tol =
//! [`FAST_SD_TOL`], and E_t = E without a process, E_t = ρE + (v_c +
//! E)·E_p/τ² + E_p with one (the total s·σ² + ρ·v_c + process variance,
//! ρ = process variance/τ² clamped to [0, 1], so that ρ errs by at most
//! E_p/τ²; module kriging; when the held-out part kept the model part
//! whole, ρ = 1 and E_t = E + E_p). Since |√a/√b − 1| = |a − b|/(√b(√a + √b)) ≤ |a − b|/b,
//! both sds (the total and the committee's own, the domain guard's signal)
//! then lie within tol of the exact ones. Any other row is computed by the
//! exact path, one row at a time, so that no result depends on how rows
//! are grouped into blocks or spread over threads (each row's Jacobian is
//! filled in a fixed order and every product is computed element by
//! element the same way whatever the number of rows).
//!
//! # What it saves, and what not
//!
//! A posterior that the data pin down in most directions (MacKay's γ
//! close to the number of weights k, as on the concrete data) has no low
//! rank within the bound: such a member keeps the exact triangular form
//! ([`PosteriorFactor`]), and the committee's part costs what the exact
//! path's does. Held against the total variance (noise included) instead
//! of the committee's own, the bound would gain little there: the total is
//! 1.0–2.9 times the committee's variance on the concrete rows, while even
//! 100 times the tolerance leaves a rank of k − 4 to k − 7. The measured
//! figures are in docs/benchmarks.md.
//!
//! The residual process's rows are kept in the order of a k-d tree
//! ([`kd_order`]), so that the rows near a query, and their rows of
//! K_y⁻¹, lie close together in memory.

use crate::fixedmath::FixedMath;
use ndarray::{s, Array1, Array2, ArrayView2, Axis};

use super::kriging::{add_noise, kernel};
use super::{members_predict, Committee, Member, ResidualKriging, ScaledPrediction};
use crate::evidence::PosteriorFactor;
use crate::linalg::{multiply_into, symmetric_eigen_ql, Cholesky};
use crate::net::{tanh, Architecture};
use crate::prec::{
    FAST_BLOCK_ROWS, FAST_CALIBRATION_SHARE, FAST_SD_TOL, KRIGING_JITTER, LOG_VAR_LIMIT, VAR_FLOOR,
};

/// Cuts on the scaled squared distance d² tried for the residual
/// process, shortest first (exp(−c/2) = 0.018 … 2e-11 of τ²). The work of
/// a row grows as the square of the rows inside, about as c^(d/2) in d
/// inputs, so the steps are small.
const PROCESS_CUTS: [f64; 20] = [
    4.0, 5.0, 6.0, 7.0, 8.0, 10.0, 12.0, 14.0, 16.0, 18.0, 20.0, 22.0, 24.0, 26.0, 28.0, 30.0,
    33.0, 36.0, 40.0, 48.0,
];

/// A row whose bound fails at the cut is tried again at this multiple of
/// it (at most the worst-case cut) before the exact path: the rows it
/// leaves out then weigh at most exp(−c/4) of what they did.
const RETRY_FACTOR: f64 = 1.5;

/// Bands of the dropped rows, as multiples of the cut: a row whose d²
/// is at least m·cut has a kernel value of at most τ²·exp(−m·cut/2).
const DROP_BANDS: [f64; 7] = [1.0, 1.5, 2.0, 3.0, 4.0, 6.0, 8.0];

/// Queries whose screen products with the process's rows are formed at
/// once (32 × 1 000 rows: 256 kB).
const SCREEN_ROWS: usize = 32;

/// Calibration rows drawn in the scaled box when the model stores no
/// training rows.
const BOX_ROWS: usize = 512;

/// A member's posterior covariance as its r leading eigenpairs.
#[derive(Clone, Debug)]
struct LowRank {
    /// U_r (k × r), column i the eigenvector of the i-th largest λ.
    vectors: Array2<f64>,
    /// λ₁ … λ_r.
    values: Vec<f64>,
    /// (λ_{r+1} + λ_k)/2: the remainder's factor.
    tail_mid: f64,
    /// (λ_{r+1} − λ_k)/2: its bound's factor.
    tail_half: f64,
    /// λ_{r+1} (for the rounding allowance).
    tail_top: f64,
}

/// One member ready for the fast path.
#[derive(Clone, Debug)]
struct FastMember {
    arch: Architecture,
    /// The noise network and its factored posterior, under varying noise.
    noise: Option<(Architecture, PosteriorFactor)>,
    low_rank: Option<LowRank>,
    /// Ranks needed at [`PROFILE_TOLERANCES`].
    profile: Vec<usize>,
}

/// The residual process ready for the fast path.
#[derive(Clone, Debug)]
struct FastProcess {
    /// Training rows divided by the length scales (N × d).
    xl: Array2<f64>,
    /// ‖xₙ/ℓ‖².
    xl_norm: Vec<f64>,
    inv_len: Vec<f64>,
    alpha: Vec<f64>,
    /// K_y⁻¹ (N × N).
    kinv: Array2<f64>,
    /// Upper bound on ‖K_y⁻¹‖₂.
    kinv_norm: f64,
    signal_var: f64,
    /// rᵀK_y⁻¹r (the mean's second bound).
    r_alpha: f64,
    /// Rows with d² > cut are left out.
    cut: f64,
    /// The cut a row whose bound fails at `cut` is tried at before the
    /// exact path (`cut` itself when it is the longest).
    retry_cut: f64,
}

/// A committee prepared for fast prediction ([`Committee::fast`]).
#[derive(Debug)]
pub struct FastCommittee<'a> {
    committee: &'a Committee,
    members: Vec<FastMember>,
    /// The exact path's factors, for the rows it computes.
    exact: Vec<PosteriorFactor>,
    process: Option<FastProcess>,
    /// The further partitions' own fast paths (their results averaged with
    /// this one's by [`super::combine_partitions`]).
    further: Vec<FastCommittee<'a>>,
}

/// Ranks chosen and how the rows went, for reports and tests.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct FastStats {
    /// Rank r of each member's posterior (None: always exact).
    pub ranks: Vec<Option<usize>>,
    /// Parameters k of each member.
    pub params: Vec<usize>,
    /// The process's cut on d² (None: no process, or always exact).
    pub process_cut: Option<f64>,
    /// Per member, the rank it would need at each of
    /// [`PROFILE_TOLERANCES`] times the tolerance.
    pub rank_profile: Vec<Vec<usize>>,
}

impl Committee {
    /// This committee prepared for the fast path, its ranks and cut chosen
    /// on `calibration` (scaled rows; the training rows serve best); each
    /// further partition prepared alike on the same rows.
    pub fn fast(&self, calibration: ArrayView2<f64>) -> FastCommittee<'_> {
        let mut f = self.fast_own(calibration);
        f.further = self
            .further_partitions
            .iter()
            .map(|c| c.fast_own(calibration))
            .collect();
        f
    }

    /// This partition alone prepared for the fast path.
    fn fast_own(&self, calibration: ArrayView2<f64>) -> FastCommittee<'_> {
        let d = self.n_inputs;
        let box_rows =
            (calibration.nrows() == 0 || calibration.ncols() != d).then(|| box_sample(d));
        let cal = match &box_rows {
            Some(b) => b.view(),
            None => calibration.reborrow(),
        };
        let mp = members_predict(&self.members, d, cal);
        let cv = mp.committee_var.as_slice().expect("a fresh array");
        // each calibration row's noise under the process's factor and the
        // committee's model part under its scale (the variance with the
        // process adds ρ times the latter and the process's own)
        let model_scale = self.model_var_scale().unwrap_or(1.0);
        let row_var: Option<Vec<(f64, f64)>> = self.kriging.as_ref().map(|k| {
            mp.noise_var
                .iter()
                .zip(cv)
                .map(|(nv, c)| (nv * k.noise_factor, c * model_scale))
                .collect()
        });
        // the members' eigen-decompositions (Householder and implicit QL,
        // k = 131–201) spread over the threads, beside the process's
        // factorisation; each is computed alone, so the threads change no
        // result
        use rayon::prelude::*;
        let build_members = || {
            self.members
                .par_iter()
                .map(|m| {
                    let (low_rank, profile) = low_rank(m, d, cal, cv);
                    FastMember {
                        arch: m.arch(d),
                        noise: m.noise.as_ref().map(|nm| {
                            (
                                Architecture::new(d, nm.n_hidden),
                                PosteriorFactor::new(&nm.posterior_cov),
                            )
                        }),
                        low_rank,
                        profile,
                    }
                })
                .collect()
        };
        let (members, process) = rayon::join(build_members, || {
            self.kriging
                .as_ref()
                .and_then(|k| FastProcess::new(k, cal, row_var.as_deref()))
        });
        FastCommittee {
            committee: self,
            members,
            exact: self.members.iter().map(Member::posterior_factor).collect(),
            process,
            further: Vec::new(),
        }
    }
}

/// Rows per leaf of [`kd_order`].
const KD_LEAF: usize = 16;

/// The rows of `x` in the order of a k-d tree (Bentley 1975, Commun. ACM
/// 18:509–517): sorted along their widest coordinate, halved, and each half
/// ordered the same way down to [`KD_LEAF`] rows, ties by row number (the
/// order depends on the rows alone).
fn kd_order(x: ArrayView2<f64>) -> Vec<usize> {
    fn sort(x: ArrayView2<f64>, idx: &mut [usize]) {
        if idx.len() <= KD_LEAF {
            return;
        }
        let mut widest = (0, f64::NEG_INFINITY);
        for j in 0..x.ncols() {
            let (lo, hi) = idx
                .iter()
                .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &i| {
                    (lo.min(x[[i, j]]), hi.max(x[[i, j]]))
                });
            if hi - lo > widest.1 {
                widest = (j, hi - lo);
            }
        }
        let j = widest.0;
        idx.sort_by(|&a, &b| x[[a, j]].total_cmp(&x[[b, j]]).then(a.cmp(&b)));
        let (left, right) = idx.split_at_mut(idx.len() / 2);
        sort(x, left);
        sort(x, right);
    }
    let mut idx: Vec<usize> = (0..x.nrows()).collect();
    sort(x, &mut idx);
    idx
}

/// A seeded uniform sample of the scaled box [−0.5, 0.5]^d.
fn box_sample(d: usize) -> Array2<f64> {
    use rand::{Rng, SeedableRng};
    let mut rng = rand_xoshiro::Xoshiro256PlusPlus::seed_from_u64(0x5eed_fa57);
    Array2::from_shape_fn((BOX_ROWS, d), |_| rng.random_range(-0.5..0.5))
}

/// Network outputs and Jacobian rows for `x`, one row at a time in a fixed
/// order (so a row's result does not depend on its block): row n of `jac`
/// is [D_n1·xₙ, …, D_nH·xₙ, D_n, a_n, 1] with D_nj = v_j(1 − a_nj²)
/// (the layout of [`Architecture`]).
fn jacobian_rows(arch: &Architecture, w: &[f64], x: ArrayView2<f64>) -> (Vec<f64>, Array2<f64>) {
    let (d, h) = (arch.n_inputs, arch.n_hidden);
    let k = arch.n_params();
    let lay = arch.layout();
    let mut y = vec![0.0; x.nrows()];
    let mut jac = Array2::zeros((x.nrows(), k));
    let mut a = vec![0.0; h];
    for ((mut row, xn), yn) in jac.rows_mut().into_iter().zip(x.rows()).zip(&mut y) {
        let row = row.as_slice_mut().expect("fresh rows are contiguous");
        if h == 0 {
            let mut s = w[lay.output_bias];
            for i in 0..d {
                s += w[i] * xn[i];
                row[i] = xn[i];
            }
            row[lay.output_bias] = 1.0;
            *yn = s;
            continue;
        }
        let mut out = w[lay.output_bias];
        for j in 0..h {
            let mut s = w[lay.hidden_bias + j];
            for i in 0..d {
                s += w[j * d + i] * xn[i];
            }
            a[j] = tanh(s);
            out += w[lay.output_weights + j] * a[j];
        }
        for j in 0..h {
            let dj = w[lay.output_weights + j] * (1.0 - a[j] * a[j]);
            for i in 0..d {
                row[j * d + i] = dj * xn[i];
            }
            row[lay.hidden_bias + j] = dj;
            row[lay.output_weights + j] = a[j];
        }
        row[lay.output_bias] = 1.0;
        *yn = out;
    }
    (y, jac)
}

/// Tolerances, as multiples of [`FAST_SD_TOL`], at which
/// [`FastStats::rank_profile`] reports the rank each member would need.
pub const PROFILE_TOLERANCES: [f64; 4] = [1.0, 4.0, 20.0, 100.0];

/// The member's posterior as its leading eigenpairs, the rank chosen on
/// the calibration rows (`committee_var`: the committee's exact model
/// variance at each), with the ranks that [`PROFILE_TOLERANCES`] would
/// need; None when the eigen-decomposition fails or no rank below k/2
/// meets the bound (the member then goes the exact way).
fn low_rank(
    m: &Member,
    d: usize,
    calibration: ArrayView2<f64>,
    committee_var: &[f64],
) -> (Option<LowRank>, Vec<usize>) {
    let arch = m.arch(d);
    let (_, jac) = jacobian_rows(&arch, &m.weights, calibration);
    low_rank_of(&m.posterior_cov, jac.view(), committee_var)
}

/// [`low_rank`] from the covariance `cov` and the calibration rows'
/// Jacobian `jac`.
fn low_rank_of(
    cov: &Array2<f64>,
    jac: ArrayView2<f64>,
    committee_var: &[f64],
) -> (Option<LowRank>, Vec<usize>) {
    let k = cov.nrows();
    let Some((values, vectors)) = symmetric_eigen_ql(cov.view()) else {
        return (None, Vec::new());
    };
    if values.iter().any(|v| !v.is_finite()) {
        return (None, Vec::new());
    }
    // descending
    let order: Vec<usize> = (0..k).rev().collect();
    let lambda: Vec<f64> = order.iter().map(|&i| values[i]).collect();
    let u = vectors.select(Axis(1), &order);
    let lambda_min = lambda[k - 1].max(0.0);
    let mut p = Array2::zeros((jac.nrows(), k));
    multiply_into(jac, u.view(), p.view_mut());
    // per tolerance and rank: rows where the bound is within tolerance
    let n = p.nrows();
    let mut ok_at = vec![vec![0usize; k + 1]; PROFILE_TOLERANCES.len()];
    let mut tail = vec![0.0; k + 1];
    for (row, cv) in p.rows().into_iter().zip(committee_var) {
        for i in (0..k).rev() {
            tail[i] = tail[i + 1] + row[i] * row[i];
        }
        for r in 0..=k {
            let top = if r < k {
                lambda[r].max(0.0)
            } else {
                lambda_min
            };
            let bound = (top - lambda_min) / 2.0 * tail[r];
            for (t, ok) in PROFILE_TOLERANCES.iter().zip(&mut ok_at) {
                if bound <= t * FAST_SD_TOL * cv {
                    ok[r] += 1;
                }
            }
        }
    }
    let need = (FAST_CALIBRATION_SHARE * n as f64).ceil() as usize;
    let profile: Vec<usize> = ok_at
        .iter()
        .map(|ok| (0..=k).find(|&r| ok[r] >= need).unwrap_or(k))
        .collect();
    let r = profile[0];
    // a rank of k/2 or more saves nothing over the triangular exact form
    if 2 * r >= k {
        return (None, profile);
    }
    let top = lambda[r].max(0.0);
    let lr = LowRank {
        vectors: u.slice(s![.., ..r]).to_owned(),
        values: lambda[..r].to_vec(),
        tail_mid: (top + lambda_min) / 2.0,
        tail_half: (top - lambda_min) / 2.0,
        tail_top: top,
    };
    (Some(lr), profile)
}

impl LowRank {
    /// gᵀΣg estimated for every row g of `jac`, each row's error bound
    /// added to `bound`.
    fn quadratic_forms(&self, jac: ArrayView2<f64>, bound: &mut [f64]) -> Array1<f64> {
        let (b, k) = jac.dim();
        let r = self.values.len();
        let mut p = Array2::zeros((b, r));
        multiply_into(jac, self.vectors.view(), p.view_mut());
        let k = k as f64;
        let mut quad = Array1::zeros(b);
        for (i, (g, pr)) in jac.rows().into_iter().zip(p.rows()).enumerate() {
            let g2: f64 = g.iter().map(|v| v * v).sum();
            let mut s2 = 0.0;
            let mut qr = 0.0;
            for (pi, li) in pr.iter().zip(&self.values) {
                s2 += pi * pi;
                qr += li * pi * pi;
            }
            let t = (g2 - s2).max(0.0);
            quad[i] = qr + self.tail_mid * t;
            bound[i] += self.tail_half * t
                + self.tail_top * 2.0 * (k + r as f64) * f64::EPSILON * g2
                + 4.0 * k * f64::EPSILON * qr;
        }
        quad
    }
}

impl FastProcess {
    /// The fast path of `k`, its cut chosen on the `calibration` rows,
    /// whose noise variance under the process's factor and model variance
    /// are `row_var` (None: the smallest noise variance serves for every
    /// row, with no model part).
    fn new(
        k: &ResidualKriging,
        calibration: ArrayView2<f64>,
        row_var: Option<&[(f64, f64)]>,
    ) -> Option<FastProcess> {
        let n = k.x.nrows();
        if n == 0 || k.residual.len() != n || k.noise_var.len() != n {
            return None;
        }
        let mut ky = kernel(k.x.view(), k.x.view(), &k.length_scales, k.signal_var);
        add_noise(
            &mut ky,
            k.noise_factor,
            ndarray::ArrayView1::from(&k.noise_var[..]),
        );
        let f = Cholesky::new(ky.view())?;
        let alpha = f.solve(ndarray::ArrayView1::from(&k.residual[..]));
        let kinv = f.inverse();
        let floor = k
            .noise_var
            .iter()
            .map(|v| k.noise_factor * v)
            .fold(f64::INFINITY, f64::min)
            + KRIGING_JITTER
            - n as f64 * k.signal_var * 1e-12;
        if floor.is_nan() || floor <= 0.0 || !k.signal_var.is_finite() || k.signal_var <= 0.0 {
            return None;
        }
        let kinv_norm = 1.0 / floor;
        // worst case, every row in D with ‖k_S‖ ≤ √N τ²: the variance
        // error ≤ ‖B‖(2Nτ²κ + Nκ²) ≈ 3Nτ²κ‖B‖, held to a tenth of tol of
        // the smallest noise variance
        let tau2 = k.signal_var;
        let kappa = 0.1 * FAST_SD_TOL * floor / (3.0 * n as f64 * tau2 * kinv_norm);
        let safe_cut = (2.0 * (tau2 / kappa.min(tau2)).ln_fixed()).clamp(8.0, 200.0);
        let inv_len: Vec<f64> = k.length_scales.iter().map(|l| 1.0 / l).collect();
        let mut xl = k.x.to_owned();
        for mut row in xl.rows_mut() {
            for (v, il) in row.iter_mut().zip(&inv_len) {
                *v *= il;
            }
        }
        // the rows in the order of a k-d tree, so that the rows near a
        // query, and their rows and columns of K_y⁻¹, lie close together
        // in memory (the sums over them run in this order)
        let order = kd_order(xl.view());
        let xl = xl.select(Axis(0), &order);
        let kinv = Array2::from_shape_fn((n, n), |(i, j)| kinv[[order[i], order[j]]]);
        let r_alpha = alpha
            .iter()
            .zip(&k.residual)
            .map(|(a, r)| a * r)
            .sum::<f64>()
            .max(0.0)
            * (1.0 + 1e-9);
        let alpha: Vec<f64> = order.iter().map(|&i| alpha[i]).collect();
        let xl_norm = xl.rows().into_iter().map(|r| r.dot(&r)).collect();
        let mut fp = FastProcess {
            xl,
            xl_norm,
            inv_len,
            alpha,
            kinv,
            kinv_norm,
            signal_var: tau2,
            r_alpha,
            cut: safe_cut,
            retry_cut: safe_cut,
        };
        // a shorter cut where the rows' own bounds allow it: the smallest
        // of the ladder whose bounds are within half the tolerance of each
        // calibration row's variance (the row's check below gives the
        // process at most that) on 99 % of the rows
        let need = (FAST_CALIBRATION_SHARE * calibration.nrows() as f64).ceil() as usize;
        // a row's variance without the process's own (non-negative) part,
        // given the process's variance `gv`, and the factor on the
        // process's bound (module doc, "Each row checked"); with the model
        // part whole, the noise and model part as before the share existed
        let var_of = |i: usize, gv: f64| {
            let (noise, model) = row_var.map_or((floor, 0.0), |v| v[i]);
            (
                (noise + k.model_part_share(gv) * model).max(floor),
                1.0 + model * k.model_part_share_slope(),
            )
        };
        for cut in PROCESS_CUTS.iter().copied().filter(|&c| c < safe_cut) {
            fp.cut = cut;
            let ok = calibration
                .axis_chunks_iter(Axis(0), FAST_BLOCK_ROWS)
                .flat_map(|b| fp.predict(b))
                .enumerate()
                .filter(|(i, r)| {
                    let (v, grow) = var_of(*i, r.1);
                    grow * r.3 <= 0.5 * FAST_SD_TOL * v && r.2 <= 0.05 * FAST_SD_TOL * v.sqrt()
                })
                .count();
            if ok >= need && calibration.nrows() > 0 {
                fp.retry_cut = (RETRY_FACTOR * cut).min(safe_cut);
                return Some(fp);
            }
        }
        fp.cut = safe_cut;
        Some(fp)
    }

    /// Mean, variance and the bounds on their errors for each row of `x`,
    /// and the number of training rows inside the cut.
    fn predict(&self, x: ArrayView2<f64>) -> Vec<ProcessRow> {
        self.predict_at(x, self.cut)
    }

    /// As [`FastProcess::predict`] at cut `cut`.
    fn predict_at(&self, x: ArrayView2<f64>, cut: f64) -> Vec<ProcessRow> {
        let (b, d) = x.dim();
        let n = self.xl.nrows();
        let mut q = Array2::zeros((b, d));
        for (mut qr, xr) in q.rows_mut().into_iter().zip(x.rows()) {
            for j in 0..d {
                qr[j] = xr[j] * self.inv_len[j];
            }
        }
        let tau2 = self.signal_var;
        let bands: Vec<(f64, f64)> = DROP_BANDS
            .iter()
            .map(|m| (m * cut, tau2 * (-0.5 * m * cut).exp_fixed()))
            .collect();
        let mut work = RowWork::default();
        let mut out = Vec::with_capacity(b);
        // the screen's products for a few rows at a time, so that they
        // stay in the cache (each product is summed the same way whatever
        // the number of rows)
        let mut g = Array2::zeros((SCREEN_ROWS.min(b), n));
        for q in q.axis_chunks_iter(Axis(0), SCREEN_ROWS) {
            let mut g = g.slice_mut(s![..q.nrows(), ..]);
            multiply_into(q, self.xl.t(), g.view_mut());
            for (qr, gr) in q.rows().into_iter().zip(g.rows()) {
                let qr = qr.as_slice().expect("a fresh array");
                let gr = gr.as_slice().expect("a standard layout");
                out.push(self.row_at(qr, gr, cut, &bands, &mut work));
            }
        }
        out
    }

    /// One scaled query `qr` (its products with the training rows `gr`)
    /// at cut `cut`: mean, variance, their error bounds and the rows
    /// inside.
    fn row_at(
        &self,
        qr: &[f64],
        gr: &[f64],
        cut: f64,
        bands: &[(f64, f64)],
        work: &mut RowWork,
    ) -> ProcessRow {
        let d = qr.len();
        let n = self.xl.nrows();
        let tau2 = self.signal_var;
        let qn: f64 = qr.iter().map(|v| v * v).sum();
        let RowWork {
            active,
            alpha_in,
            count_in,
        } = work;
        active.clear();
        alpha_in.clear();
        alpha_in.resize(bands.len(), 0.0);
        count_in.clear();
        count_in.resize(bands.len(), 0);
        let xl = self.xl.as_slice().expect("a fresh array");
        for (i, (&gv, &xn)) in gr.iter().zip(&self.xl_norm).enumerate() {
            // the product's rounding: well inside this margin
            let margin = 1e-9 * (1.0 + qn + xn);
            let screen = qn + xn - 2.0 * gv;
            if screen <= cut + margin {
                let xr = &xl[i * d..(i + 1) * d];
                let mut d2 = 0.0;
                for (qj, xj) in qr.iter().zip(xr) {
                    let e = qj - xj;
                    d2 += e * e;
                }
                if d2 <= cut {
                    active.push((i, tau2 * (-0.5 * d2).exp_fixed()));
                    continue;
                }
            }
            // dropped: in the farthest band its distance reaches (the
            // bands' lower ends increase: counted without a branch, the
            // same band as the last one at or below)
            let lower = screen - margin;
            let b = bands
                .iter()
                .map(|(c, _)| usize::from(*c <= lower))
                .sum::<usize>()
                .saturating_sub(1);
            alpha_in[b] += self.alpha[i].abs();
            count_in[b] += 1;
        }
        let kinv = self.kinv.as_slice().expect("a fresh array");
        let mut mean = 0.0;
        let mut ks2 = 0.0;
        let mut quad = 0.0;
        // kᵀBk over S: the diagonal and twice the lower triangle, each
        // row's sum in four interleaved parts (c mod 4, then added in a
        // fixed order), so that the additions do not wait on each other
        for (j, &(a, ka)) in active.iter().enumerate() {
            mean += ka * self.alpha[a];
            ks2 += ka * ka;
            let row = &kinv[a * n..(a + 1) * n];
            let mut part = [0.0; 4];
            let mut quads = active[..j].chunks_exact(4);
            for q in &mut quads {
                for (p, &(c, kc)) in part.iter_mut().zip(q) {
                    *p += row[c] * kc;
                }
            }
            for (p, &(c, kc)) in part.iter_mut().zip(quads.remainder()) {
                *p += row[c] * kc;
            }
            let s = (part[0] + part[1]) + (part[2] + part[3]);
            quad += ka * (2.0 * s + row[a] * ka);
        }
        // |Σ_D kₙαₙ| ≤ Σ_bands κ_b Σ|αₙ|, ‖k_D‖² ≤ Σ_bands κ_b² count_b
        let mut mean_err = 0.0;
        let mut kd2 = 0.0;
        for ((&(_, kb), a), &c) in bands.iter().zip(alpha_in.iter()).zip(count_in.iter()) {
            mean_err += kb * a;
            kd2 += kb * kb * c as f64;
        }
        let kd = kd2.sqrt() * (1.0 + 1e-12);
        let rounding = 4.0 * n as f64 * f64::EPSILON * self.kinv_norm * ks2.max(tau2 * tau2);
        // the cross term by Cauchy–Schwarz in B's inner product,
        // |k_SᵀBk_D| ≤ √(k_SᵀBk_S)·√‖B‖·‖k_D‖, never above the plain
        // ‖B‖·‖k_S‖·‖k_D‖ (k_SᵀBk_S ≤ ‖B‖‖k_S‖²); the computed k_SᵀBk_S
        // raised by its rounding allowance
        let cross = (self.kinv_norm * (quad.max(0.0) + rounding)).sqrt() * kd;
        let var_err =
            2.0 * cross.min(self.kinv_norm * ks2.sqrt() * kd) + self.kinv_norm * kd * kd + rounding;
        // the mean's likewise: |k_DᵀBr| ≤ √‖B‖·‖k_D‖·√(rᵀBr)
        let mean_err =
            mean_err.min(self.kinv_norm.sqrt() * kd * self.r_alpha.sqrt()) * (1.0 + 1e-12);
        let var = (tau2 - quad).max(VAR_FLOOR);
        (mean, var, mean_err, var_err, active.len())
    }
}

/// A row of the process's fast path: mean, variance, the bounds on their
/// errors, and the number of training rows inside the cut.
pub type ProcessRow = (f64, f64, f64, f64, usize);

/// Buffers of [`FastProcess::row_at`], reused from row to row.
#[derive(Default)]
struct RowWork {
    active: Vec<(usize, f64)>,
    alpha_in: Vec<f64>,
    count_in: Vec<usize>,
}

/// The residual process's fast path on its own, for measuring it.
#[derive(Debug)]
pub struct FastProcessProbe(FastProcess);

impl FastProcessProbe {
    /// The fast path of `k`; None when it cannot be built.
    pub fn new(k: &ResidualKriging, calibration: ArrayView2<f64>) -> Option<Self> {
        FastProcess::new(k, calibration, None).map(FastProcessProbe)
    }

    /// The cut chosen.
    pub fn cut(&self) -> f64 {
        self.0.cut
    }

    /// Every row of `x` at cut `cut`: mean, variance, their bounds and the
    /// rows inside.
    pub fn rows_at(&self, cut: f64, x: ArrayView2<f64>) -> Vec<ProcessRow> {
        x.axis_chunks_iter(Axis(0), FAST_BLOCK_ROWS)
            .flat_map(|b| self.0.predict_at(b, cut))
            .collect()
    }

    /// Per row of `x` at cut `cut`: the bounds on the mean's and the
    /// variance's error.
    pub fn bounds_at(&self, cut: f64, x: ArrayView2<f64>) -> Vec<(f64, f64)> {
        self.rows_at(cut, x)
            .into_iter()
            .map(|r| (r.2, r.3))
            .collect()
    }

    /// Per row of `x`: how many training rows lie within the cut (the
    /// process's work is this number squared), after the whole
    /// prediction of the row.
    pub fn active_sizes(&self, x: ArrayView2<f64>) -> Vec<usize> {
        x.axis_chunks_iter(Axis(0), FAST_BLOCK_ROWS)
            .flat_map(|b| self.0.predict(b).into_iter().map(|r| r.4))
            .collect()
    }
}

impl FastCommittee<'_> {
    /// Ranks and cut, for reports and tests: the members of every
    /// partition in order, the first partition's process cut.
    pub fn stats(&self) -> FastStats {
        let mut s = self.own_stats();
        for f in &self.further {
            let o = f.own_stats();
            s.ranks.extend(o.ranks);
            s.params.extend(o.params);
            s.rank_profile.extend(o.rank_profile);
        }
        s
    }

    fn own_stats(&self) -> FastStats {
        FastStats {
            ranks: self
                .members
                .iter()
                .map(|m| m.low_rank.as_ref().map(|l| l.values.len()))
                .collect(),
            params: self.members.iter().map(|m| m.arch.n_params()).collect(),
            process_cut: self.process.as_ref().map(|p| p.cut),
            rank_profile: self.members.iter().map(|m| m.profile.clone()).collect(),
        }
    }

    /// As [`Committee::predict_scaled`], by the fast path: blocks of
    /// [`FAST_BLOCK_ROWS`] rows over the available cores, each row's result
    /// independent of its block. Also returns how many rows went the exact
    /// way. With further partitions, each partition's fast prediction
    /// averaged as the exact path does ([`super::combine_partitions`]),
    /// the rows gone the exact way summed over the partitions.
    pub fn predict_scaled(&self, x: ArrayView2<f64>) -> (ScaledPrediction, usize) {
        if self.further.is_empty() {
            return self.predict_own(x);
        }
        let mut parts = Vec::with_capacity(1 + self.further.len());
        let mut n_exact = 0;
        for f in std::iter::once(self).chain(&self.further) {
            let (p, n) = f.predict_own(x);
            parts.push(p);
            n_exact += n;
        }
        (
            super::combine_partitions(&parts, self.committee.partition_rule()),
            n_exact,
        )
    }

    /// This partition alone by the fast path.
    fn predict_own(&self, x: ArrayView2<f64>) -> (ScaledPrediction, usize) {
        use rayon::prelude::*;
        if self.committee.kriging.is_some() && self.process.is_none() {
            // a process the fast path cannot take (no factor, or no
            // positive floor under its noise): the exact path throughout
            return (self.committee.predict_own(x), x.nrows());
        }
        let blocks: Vec<(ScaledPrediction, usize)> = x
            .axis_chunks_iter(Axis(0), FAST_BLOCK_ROWS)
            .collect::<Vec<_>>()
            .into_par_iter()
            .map(|block| self.predict_block(block))
            .collect();
        let cat = |f: fn(&ScaledPrediction) -> &Array1<f64>| {
            Array1::from_iter(blocks.iter().flat_map(|(b, _)| f(b).iter().copied()))
        };
        (
            ScaledPrediction {
                mean: cat(|b| &b.mean),
                var: cat(|b| &b.var),
                noise_var: cat(|b| &b.noise_var),
                committee_var: cat(|b| &b.committee_var),
            },
            blocks.iter().map(|(_, e)| e).sum(),
        )
    }

    /// One block: every member's mean, variance estimate and bound, the
    /// committee and the process; rows failing their check recomputed
    /// exactly one at a time.
    fn predict_block(&self, x: ArrayView2<f64>) -> (ScaledPrediction, usize) {
        let b = x.nrows();
        let c = self.committee;
        let n_members = c.members.len();
        if n_members == 0 {
            return self.exact_rows(x, (0..b).collect());
        }
        let mut parts = Vec::with_capacity(n_members);
        let mut bound = vec![0.0; b];
        for ((m, fm), exact) in c.members.iter().zip(&self.members).zip(&self.exact) {
            let (y, jac) = jacobian_rows(&fm.arch, &m.weights, x);
            let quad = match &fm.low_rank {
                Some(lr) => lr.quadratic_forms(jac.view(), &mut bound),
                // no rank worth taking: the exact form (its panels are
                // computed row by row inside the product)
                None => exact.quadratic_forms(jac.view()),
            };
            // as the exact path: the network's variance 1/β + gᵀΣg, then
            // the member's noise
            let var = quad + 1.0 / m.beta;
            let y = Array1::from(y);
            let constant = 1.0 / m.beta;
            parts.push(match (&m.noise, &fm.noise) {
                (Some(nm), Some((arch, factor))) => {
                    // σ²(x)/β with 1/σ²(x) = exp(−(μ_s + v_s/2)), as
                    // NoiseModel::precision_weights, v_s by the factored
                    // form and the Jacobian row by row
                    let (mu, jac) = jacobian_rows(arch, &nm.weights, x);
                    let v = factor.quadratic_forms(jac.view());
                    let nv: Array1<f64> = mu
                        .iter()
                        .zip(&v)
                        .map(|(m, v)| {
                            constant
                                / (-(m + 0.5 * v).clamp(-LOG_VAR_LIMIT, LOG_VAR_LIMIT)).exp_fixed()
                        })
                        .collect();
                    let total = var - constant + &nv;
                    (y, total, nv)
                }
                _ => (y, var, Array1::from_elem(b, constant)),
            });
        }
        let mut p = super::committee_of(parts.into_iter(), b);
        let scale = c.model_var_scale();
        let e_c: Vec<f64> = bound
            .iter()
            .map(|v| v / n_members as f64 * scale.unwrap_or(1.0))
            .collect();
        if let Some(c) = scale {
            // as the exact path: the model part c·(parameter variance +
            // spread)
            p.committee_var *= c;
            p.var = &p.noise_var + &p.committee_var;
        }
        let mut redo: Vec<usize> = Vec::new();
        match (&c.kriging, &self.process) {
            (Some(k), Some(fp)) => {
                let factor = k.noise_factor;
                let base = p.clone();
                // the row with the process's part: whether its check holds
                // (the variance s·σ² + ρ·v_c + gv with ρ = gv/τ² clamped to
                // [0, 1], or 1: its error is at most ρ·E + (v_c + E)·E_p·ρ' +
                // E_p, ρ' = 1/τ² or 0)
                let slope = k.model_part_share_slope();
                let mut take = |i: usize, (gm, gv, em, ev, _): ProcessRow| {
                    p.mean[i] = base.mean[i] + gm;
                    let cv = base.committee_var[i];
                    p.var[i] = k.total_var(base.var[i], base.noise_var[i], cv, gv);
                    p.noise_var[i] = base.noise_var[i] * factor;
                    let e_total = k.model_part_share(gv) * e_c[i] + (cv + e_c[i]) * ev * slope + ev;
                    self.row_ok(e_c[i], p.committee_var[i], e_total, p.var[i], em)
                };
                let mut retry = Vec::new();
                for (i, row) in fp.predict(x).into_iter().enumerate() {
                    if !take(i, row) {
                        retry.push(i);
                    }
                }
                // a row whose bound failed: once more at the longer cut
                // (each row's sums its own, so that its result does not
                // depend on the block), then the exact path
                if fp.retry_cut > fp.cut && !retry.is_empty() {
                    let rows = x.select(Axis(0), &retry);
                    let again = fp.predict_at(rows.view(), fp.retry_cut);
                    for (&i, row) in retry.iter().zip(again) {
                        if !take(i, row) {
                            redo.push(i);
                        }
                    }
                } else {
                    redo = retry;
                }
            }
            // not reached: predict_scaled takes the exact path then
            (Some(_), None) => redo.extend(0..b),
            (None, _) => {
                for (i, &e) in e_c.iter().enumerate() {
                    if !self.row_ok(e, p.committee_var[i], e, p.var[i], 0.0) {
                        redo.push(i);
                    }
                }
            }
        }
        if redo.is_empty() {
            return (p, 0);
        }
        let (exact, n) = self.exact_rows(x, redo.clone());
        for (j, &i) in redo.iter().enumerate() {
            p.mean[i] = exact.mean[j];
            p.var[i] = exact.var[j];
            p.noise_var[i] = exact.noise_var[j];
            p.committee_var[i] = exact.committee_var[j];
        }
        (p, n)
    }

    /// The check of the module's documentation.
    fn row_ok(&self, e_c: f64, committee_var: f64, e_total: f64, var: f64, e_mean: f64) -> bool {
        let tol = FAST_SD_TOL;
        e_c <= tol * (committee_var - e_c)
            && e_total <= tol * (var - e_total)
            && e_mean <= 0.1 * tol * (var - e_total).max(0.0).sqrt()
    }

    /// Rows `rows` of `x` by the exact path, one at a time, in order.
    fn exact_rows(&self, x: ArrayView2<f64>, rows: Vec<usize>) -> (ScaledPrediction, usize) {
        let c = self.committee;
        let n = rows.len();
        let mut out = ScaledPrediction {
            mean: Array1::zeros(n),
            var: Array1::zeros(n),
            noise_var: Array1::zeros(n),
            committee_var: Array1::zeros(n),
        };
        for (j, &i) in rows.iter().enumerate() {
            let p = c.predict_block(&self.exact, x.slice(s![i..i + 1, ..]));
            out.mean[j] = p.mean[0];
            out.var[j] = p.var[0];
            out.noise_var[j] = p.noise_var[0];
            out.committee_var[j] = p.committee_var[0];
        }
        (out, n)
    }
}

/// For measuring an uncertified truncation of the members' posteriors
/// (docs/benchmarks.md, not a prediction path): for each share in `shares`,
/// per row of `x`, the change in the committee's model variance when every
/// member's gᵀΣg is taken from its r = ⌈share·k⌉ leading eigenpairs and
/// the rest estimated as the mean of the k − r remaining eigenvalues times
/// the Jacobian's mass outside the leading directions,
///
/// ```text
/// gᵀΣg ≈ Σ_{i≤r} λᵢ pᵢ² + λ̄_tail (‖g‖² − Σ_{i≤r} pᵢ²),   λ̄_tail = Σ_{i>r} λᵢ / (k − r)
/// ```
///
/// (the mean over the members, before any scale on the model part).
pub fn truncation_changes(c: &Committee, x: ArrayView2<f64>, shares: &[f64]) -> Vec<Array1<f64>> {
    let d = c.n_inputs;
    let mut out = vec![Array1::zeros(x.nrows()); shares.len()];
    let n_members = c.members.len().max(1) as f64;
    for m in &c.members {
        let arch = m.arch(d);
        let (_, jac) = jacobian_rows(&arch, &m.weights, x);
        let exact = m.posterior_factor().quadratic_forms(jac.view());
        let k = m.posterior_cov.nrows();
        let Some((values, vectors)) = symmetric_eigen_ql(m.posterior_cov.view()) else {
            continue;
        };
        let order: Vec<usize> = (0..k).rev().collect();
        let lambda: Vec<f64> = order.iter().map(|&i| values[i].max(0.0)).collect();
        let u = vectors.select(Axis(1), &order);
        let mut p = Array2::zeros((x.nrows(), k));
        multiply_into(jac.view(), u.view(), p.view_mut());
        for (share, o) in shares.iter().zip(out.iter_mut()) {
            let r = ((share * k as f64).ceil() as usize).min(k);
            let tail = if r < k {
                lambda[r..].iter().sum::<f64>() / (k - r) as f64
            } else {
                0.0
            };
            for (i, (g, pr)) in jac.rows().into_iter().zip(p.rows()).enumerate() {
                let g2: f64 = g.iter().map(|v| v * v).sum();
                let mut s2 = 0.0;
                let mut q = 0.0;
                for (pi, li) in pr.iter().take(r).zip(&lambda) {
                    s2 += pi * pi;
                    q += li * pi * pi;
                }
                let est = q + tail * (g2 - s2).max(0.0);
                o[i] += (est - exact[i]) / n_members;
            }
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;
    use rand_distr::{Distribution, Normal};
    use rand_xoshiro::Xoshiro256PlusPlus;

    /// The columns of `g` made orthonormal by modified Gram–Schmidt, each
    /// column orthogonalised twice against the ones before it (Golub & Van
    /// Loan 2013, Alg. 5.2.6; the second pass restores orthogonality to
    /// rounding, Giraud et al. 2005, Numer. Math. 101:87–100).
    fn orthonormal(mut g: Array2<f64>) -> Array2<f64> {
        let k = g.ncols();
        for j in 0..k {
            for _ in 0..2 {
                for i in 0..j {
                    let qi = g.column(i).to_owned();
                    let r = qi.dot(&g.column(j));
                    g.column_mut(j).scaled_add(-r, &qi);
                }
            }
            let norm = g.column(j).dot(&g.column(j)).sqrt();
            g.column_mut(j).mapv_inplace(|v| v / norm);
        }
        g
    }

    /// Gram–Schmidt gives QᵀQ = I to rounding.
    #[test]
    fn gram_schmidt_basis_is_orthonormal() {
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(6);
        let n = Normal::new(0.0, 1.0).expect("unit sd");
        let q = orthonormal(Array2::from_shape_fn((30, 30), |_| n.sample(&mut rng)));
        let qtq = q.t().dot(&q);
        for ((i, j), v) in qtq.indexed_iter() {
            let want = if i == j { 1.0 } else { 0.0 };
            assert!((v - want).abs() < 1e-12, "({i}, {j}): {v}");
        }
    }

    /// A covariance with `big` eigenvalues from 1 down to 0.1 and the rest
    /// 1e-7 … 1e-8: the shape a posterior takes where the prior holds a
    /// few directions and the data pin the others down.
    fn covariance(k: usize, big: usize, seed: u64) -> Array2<f64> {
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
        let n = Normal::new(0.0, 1.0).expect("unit sd");
        let q = orthonormal(Array2::from_shape_fn((k, k), |_| n.sample(&mut rng)));
        let lambda = Array1::from_shape_fn(k, |i| {
            if i < big {
                10f64.powf_fixed(-(i as f64) / big as f64)
            } else {
                1e-7 * 10f64.powf_fixed(-((i - big) as f64) / (k - big) as f64)
            }
        });
        (&q * &lambda).dot(&q.t())
    }

    /// On such a covariance the rank is the number of large eigenvalues,
    /// and on new rows every estimate lies within its bound of the exact
    /// gᵀΣg (computed by the full product), the bound within the
    /// tolerance.
    #[test]
    fn low_rank_estimates_lie_within_their_bounds() {
        let (k, big) = (60, 8);
        let cov = covariance(k, big, 3);
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(4);
        let n = Normal::new(0.0, 1.0).expect("unit sd");
        let cal = Array2::from_shape_fn((400, k), |_| n.sample(&mut rng));
        let exact_cal: Vec<f64> = cal
            .rows()
            .into_iter()
            .map(|g| g.dot(&cov.dot(&g)))
            .collect();
        let (lr, profile) = low_rank_of(&cov, cal.view(), &exact_cal);
        let lr = lr.expect("a low rank");
        assert_eq!(lr.values.len(), big, "rank {profile:?}");
        let rows = Array2::from_shape_fn((300, k), |_| n.sample(&mut rng));
        let mut bound = vec![0.0; rows.nrows()];
        let est = lr.quadratic_forms(rows.view(), &mut bound);
        for (i, g) in rows.rows().into_iter().enumerate() {
            let exact = g.dot(&cov.dot(&g));
            assert!(
                (est[i] - exact).abs() <= bound[i],
                "row {i}: {} against {exact}, bound {}",
                est[i],
                bound[i]
            );
            assert!(
                bound[i] <= FAST_SD_TOL * exact,
                "row {i}: bound {} of {exact}",
                bound[i]
            );
        }
    }

    /// A covariance with evenly spread eigenvalues has no useful rank: the
    /// member goes the exact way.
    #[test]
    fn spread_spectrum_takes_no_low_rank() {
        let k = 40;
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(5);
        let n = Normal::new(0.0, 1.0).expect("unit sd");
        let q = orthonormal(Array2::from_shape_fn((k, k), |_| n.sample(&mut rng)));
        let lambda = Array1::from_shape_fn(k, |i| 10f64.powf_fixed(-4.0 * i as f64 / k as f64));
        let cov = (&q * &lambda).dot(&q.t());
        let cal = Array2::from_shape_fn((200, k), |_| n.sample(&mut rng));
        let exact: Vec<f64> = cal
            .rows()
            .into_iter()
            .map(|g| g.dot(&cov.dot(&g)))
            .collect();
        let (lr, profile) = low_rank_of(&cov, cal.view(), &exact);
        assert!(lr.is_none(), "{profile:?}");
    }
}
