//! Kriging of the committee's residuals: a Gaussian process on what the
//! networks leave unexplained.
//!
//! # Method
//!
//! Regression kriging (Hengl, Heuvelink & Rossiter 2007, "About
//! regression-kriging: from equations to case studies", Computers &
//! Geosciences 33:1301): a trend model (here the committee) plus a Gaussian
//! process on its residuals,
//!
//! ```text
//! r_n = t_n − ȳ(x_n) = g(x_n) + ε_n,   g ~ GP(0, k),   ε_n ~ N(0, s·σ²(x_n))
//! k(x, x') = τ² · exp(−½ Σ_j (x_j − x'_j)² / ℓ_j²)
//! ```
//!
//! with σ²(x) the committee's noise variance (constant, or varying with the
//! inputs), one length scale ℓ_j per input (automatic relevance
//! determination, Rasmussen & Williams 2006, *Gaussian Processes for Machine
//! Learning*, §5.1). The committee's noise variance already holds all the
//! scatter it leaves unexplained, so the process splits it rather than
//! adding to it: a share f is correlated over the inputs, the rest is not,
//!
//! ```text
//! τ² = f·σ̄²,   s = 1 − f,   σ̄² = mean of σ²(x_n) over the rows
//! ```
//!
//! so that far from the rows, where k(x) → 0, the estimate and its variance
//! are the committee's own. Rows whose groups recur in the data (a mix at
//! several ages, a weld at several test temperatures) share a residual that
//! the smooth networks cannot follow; the process picks it up where the
//! data show it.
//!
//! θ = (ln ℓ_1…ln ℓ_d, logit f) maximises the log marginal likelihood
//! (Rasmussen & Williams 2006, eq. 5.8) plus weak Gaussian hyperpriors on
//! each component (type-II maximum a posteriori, ibid. §5.2), with K_y =
//! τ²R + s·diag(σ²(x_n)):
//!
//! ```text
//! ln p(r | θ) = −½ rᵀK_y⁻¹r − ½ ln|K_y| − (N/2) ln 2π
//! ∂/∂φ_i       = ½ tr((ααᵀ − K_y⁻¹) ∂K_y/∂φ_i),   α = K_y⁻¹r     (eq. 5.9)
//! ```
//!
//! for φ = (ln ℓ, ln τ², ln s), and the chain rule to θ.
//!
//! The prediction at x* adds the process's posterior mean and variance
//! (ibid. eqs. 2.25–2.26) to the committee's:
//!
//! ```text
//! mean = ȳ(x*) + k*ᵀα
//! var  = s·σ²(x*) + ρ(x*)·model variance(x*) + τ² − k*ᵀK_y⁻¹k*
//! ρ(x*) = (τ² − k*ᵀK_y⁻¹k*)/τ²   (or 1, as the held-out part chose)
//! ```
//!
//! # The committee's model part beside the process
//!
//! The committee's model variance v_c (the members' gᵀA⁻¹g and their
//! spread) describes its error δ(x) = ȳ(x) − f(x) before any residual is
//! seen. The process's mean corrects that very error from the residuals
//! r_n ≈ −δ(x_n) + ε_n of nearby rows, with the weights w = K_y⁻¹k*: the
//! kriged estimate errs by δ(x*) − Σ_n w_n δ(x_n), not by δ(x*). In
//! regression kriging the trend's share of the prediction variance is
//! accordingly taken at q₀ − qᵀC⁻¹c₀, the predictors at x* less their
//! kriged value from the rows (Hengl, Heuvelink & Rossiter 2007, §2, the
//! regression-kriging variance; Rasmussen & Williams 2006, §2.7, eq. 2.42,
//! R = H* − HK_y⁻¹K*; equation numbers from memory). With δ of variance
//! v_c, locally constant, and the process's correlation R,
//!
//! ```text
//! E[(δ(x*) − wᵀδ)²] = v_c·(1 − 2wᵀr* + wᵀRw) = v_c·(ρ − wᵀSw/τ²) ≤ v_c·ρ
//! ```
//!
//! (τ²wᵀRw + wᵀSw = τ²wᵀr* from (τ²R + S)w = τ²r*, S = s·diag(σ²)). The
//! committee's model part can therefore be taken times ρ, an upper bound
//! of the exact term that costs nothing beyond the process's own variance:
//! next to rows that pin the residual down it mostly goes, far from them
//! (ρ → 1) it is whole. Adding v_c in full counts the error the process
//! corrects twice; on invented near-noiseless data (noise sd 1e-4 of the
//! range, docs/benchmarks.md, "Calibration when the noise is tiny") that
//! put 0.85 of fresh rows within ±1 sd. But the premise, an error that
//! shares the process's correlation, cannot be taken for granted (on
//! yacht ρ taken always narrowed the bands too far), so the held-out part
//! chooses between ρ and the whole part when it has enough rows
//! (committee::residual: the whole bands shown too wide by a χ² test and
//! ρ better by more than one standard error;
//! [`ResidualKriging::shares_model_part`],
//! [`crate::prec::MODEL_PART_MIN_HELDOUT`]). The committee's own model
//! variance is still what the domain guard reads.
//!
//! # Approximations
//!
//! The residuals are those of the committee on the rows it was trained on,
//! so part of the structure has already been fitted: the process sees only
//! what remains. The committee's error is taken to share the process's
//! correlation over the inputs (above). Exact duplicate rows enter once
//! ([`process_rows`]). At most [`KRIGING_MAX_ROWS`] rows (a seeded random
//! sample) enter the process, so that its cost, O(N³) per evaluation,
//! stays bounded on large archives.

use crate::fixedmath::{exp_in_place, FixedMath};
use std::cell::RefCell;
use std::sync::{Arc, OnceLock};

use argmin::core::{
    CostFunction, Error as ArgminError, Executor, Gradient, TerminationReason, TerminationStatus,
};
use argmin::solver::linesearch::MoreThuenteLineSearch;
use argmin::solver::quasinewton::LBFGS;
use ndarray::{Array1, Array2, ArrayView1, ArrayView2, Axis};
use serde::{Deserialize, Serialize};

use crate::evidence::FitFailure;
use crate::linalg::{matmul, mirror_lower, multiply_lower_into, Cholesky};
use crate::prec::{KRIGING_COST_TOL, KRIGING_GRAD_TOL, KRIGING_JITTER, VAR_FLOOR};

/// Largest number of rows the process is fitted on.
pub const KRIGING_MAX_ROWS: usize = 2000;

/// Iterations of the hyperparameter search, over all its restarts.
const KRIGING_ITERS: u64 = 100;

/// Rows per chunk of a prediction (bounds the cross-kernel's memory).
const KRIGING_PREDICT_ROWS: usize = 512;

/// Length scales the search starts from (scaled input units). A start
/// from 1.0 as well was tried on invented heat data and found nothing
/// better; each start costs a full search.
const KRIGING_START_LENGTHS: [f64; 1] = [0.3];

/// Runs of L-BFGS at most (a run cut short by a failed line search is
/// restarted from its best point).
const KRIGING_RESTARTS: usize = 4;

/// Weak hyperpriors, centre and sd: on each ln ℓ_j (scaled inputs span
/// [−0.5, 0.5]) and on the logit of the correlated share f.
const PRIOR_LN_LENGTH: (f64, f64) = (-1.2, 2.0);
const PRIOR_SHARE_LOGIT: (f64, f64) = (0.0, 2.0);

/// A Gaussian process fitted to a committee's residuals.
#[derive(Clone, Debug, Serialize, Deserialize)]
pub struct ResidualKriging {
    /// Scaled inputs of the rows the process was fitted on (N × d),
    /// stored as a list of rows.
    #[serde(with = "as_rows")]
    pub x: Array2<f64>,
    /// The committee's residuals at those rows (scaled target units).
    pub residual: Vec<f64>,
    /// The committee's noise variance at those rows (scaled units).
    pub noise_var: Vec<f64>,
    /// Length scale ℓ_j of each input (scaled input units).
    pub length_scales: Vec<f64>,
    /// Signal variance τ² (scaled target units).
    pub signal_var: f64,
    /// Factor s on the committee's noise variance.
    pub noise_factor: f64,
    /// The maximised objective at the chosen θ: log marginal likelihood
    /// of the residuals plus the log hyperprior (up to its constant).
    pub log_marginal_likelihood: f64,
    /// True when the committee's model part is taken times ρ beside the
    /// process (module doc), as the held-out part chose; false (and in
    /// files written before 2026-12-05): taken whole.
    #[serde(default, skip_serializing_if = "std::ops::Not::not")]
    pub shares_model_part: bool,
    /// The factorised kernel matrix, built on first use.
    #[serde(skip)]
    state: OnceLock<Option<Arc<KrigingState>>>,
}

impl PartialEq for ResidualKriging {
    fn eq(&self, other: &Self) -> bool {
        self.x == other.x
            && self.residual == other.residual
            && self.noise_var == other.noise_var
            && self.length_scales == other.length_scales
            && self.signal_var == other.signal_var
            && self.noise_factor == other.noise_factor
            && self.log_marginal_likelihood == other.log_marginal_likelihood
            && self.shares_model_part == other.shares_model_part
    }
}

/// The factorised process, ready to predict.
#[derive(Debug)]
pub(crate) struct KrigingState {
    /// The Cholesky factor of K_y.
    chol: Cholesky,
    alpha: Array1<f64>,
}

/// Squared-exponential kernel matrix τ²·exp(−½ Σ_j (a_j − b_j)²/ℓ_j²).
pub(super) fn kernel(
    a: ArrayView2<f64>,
    b: ArrayView2<f64>,
    length: &[f64],
    signal_var: f64,
) -> Array2<f64> {
    kernel_by(a, b, length, signal_var, matmul)
}

/// [`kernel`] with the cross products a·bᵀ formed by `product` (the
/// bit-for-bit test passes the former product).
fn kernel_by(
    a: ArrayView2<f64>,
    b: ArrayView2<f64>,
    length: &[f64],
    signal_var: f64,
    product: fn(ArrayView2<f64>, ArrayView2<f64>) -> Array2<f64>,
) -> Array2<f64> {
    let inv = Array1::from_iter(length.iter().map(|l| 1.0 / l));
    let a = &a * &inv;
    let b = &b * &inv;
    let na: Array1<f64> = a.map_axis(Axis(1), |r| r.dot(&r));
    let nb: Array1<f64> = b.map_axis(Axis(1), |r| r.dot(&r));
    let mut k = product(a.view(), b.t());
    for ((i, j), v) in k.indexed_iter_mut() {
        let d2 = (na[i] + nb[j] - 2.0 * *v).max(0.0);
        *v = signal_var * (-0.5 * d2).exp_fixed();
    }
    k
}

/// K_y = kernel + s·diag(σ²) (+ jitter): add the noise to the diagonal of
/// a square kernel matrix.
pub(super) fn add_noise(k: &mut Array2<f64>, factor: f64, noise_var: ArrayView1<f64>) {
    for (i, nv) in noise_var.iter().enumerate() {
        k[[i, i]] += factor * nv + KRIGING_JITTER;
    }
}

/// `(value, gradient)` when both are finite.
fn finite(value: f64, grad: Array1<f64>) -> ValueGradient {
    (value.is_finite() && grad.iter().all(|v| v.is_finite())).then_some((value, grad))
}

fn prior(v: f64, (centre, sd): (f64, f64)) -> (f64, f64) {
    let z = (v - centre) / sd;
    (0.5 * z * z, z / sd)
}

/// [`kernel`]`(x, x, length, 1.0)` into `out` (reshaped when it is not
/// N × N), the same bits: only the register blocks of X·Xᵀ that reach the
/// diagonal are formed and only the lower triangle is exponentiated (by
/// [`exp_in_place`], the bits of `libm::exp`), then mirrored. The matrix
/// is symmetric bit for bit: x_ik·x_jk = x_jk·x_ik and both sums run in
/// increasing k, and na_i + na_j = na_j + na_i.
pub(super) fn unit_kernel_into(x: ArrayView2<f64>, length: &[f64], out: &mut Array2<f64>) {
    let n = x.nrows();
    let inv = Array1::from_iter(length.iter().map(|l| 1.0 / l));
    let a = &x * &inv;
    let na: Array1<f64> = a.map_axis(Axis(1), |r| r.dot(&r));
    if out.dim() != (n, n) || !out.is_standard_layout() {
        *out = Array2::zeros((n, n));
    }
    multiply_lower_into(a.view(), a.t(), out.view_mut());
    let signal_var = 1.0;
    for (i, mut row) in out.outer_iter_mut().enumerate() {
        let lower = &mut row
            .as_slice_mut()
            .expect("a standard-layout row is contiguous")[..=i];
        for (j, v) in lower.iter_mut().enumerate() {
            let d2 = (na[i] + na[j] - 2.0 * *v).max(0.0);
            *v = -0.5 * d2;
        }
        // e^(−½d²) as `exp_fixed` gives it, vectorised
        exp_in_place(lower);
        for v in lower.iter_mut() {
            *v *= signal_var;
        }
    }
    mirror_lower(out);
}

/// The N × N matrices of one evaluation of [`neg_log_marginal`], kept
/// between the evaluations of a search so that none is allocated (and its
/// pages faulted in) again.
#[derive(Default)]
pub(crate) struct LikelihoodWork {
    /// R, the kernel matrix with unit signal variance.
    unit: Array2<f64>,
    /// K_y, then its Cholesky factor L, then L⁻¹ (in place).
    ky: Array2<f64>,
    /// K_y⁻¹, then W ∘ R (in place).
    m: Array2<f64>,
}

/// The negative log marginal likelihood of the residuals and its gradient
/// in φ = (ln ℓ_1…ln ℓ_d, ln τ², ln s), any τ² and s.
#[cfg(test)]
pub(crate) fn neg_log_marginal(
    theta: &[f64],
    x: ArrayView2<f64>,
    r: ArrayView1<f64>,
    noise_var: ArrayView1<f64>,
) -> ValueGradient {
    neg_log_marginal_in(&mut LikelihoodWork::default(), theta, x, r, noise_var)
}

/// [`neg_log_marginal`] in the matrices of `work`.
///
/// With K_y = τ²R + s·diag(σ²) = L·Lᵀ and α = K_y⁻¹r:
/// −ln p = ½ rᵀα + ½ ln|K_y| + ½ N ln 2π, and with W = ααᵀ − K_y⁻¹,
/// ∂(−ln p)/∂θ_i = −½ tr(W ∂K_y/∂θ_i) (Rasmussen & Williams 2006,
/// eqs. 2.30 and 5.9). Every element is formed as the former code formed
/// it (separate matrices for R, τ²R, ααᵀ, W and W ∘ R), so the bits are
/// the same (unit test).
pub(crate) fn neg_log_marginal_in(
    work: &mut LikelihoodWork,
    theta: &[f64],
    x: ArrayView2<f64>,
    r: ArrayView1<f64>,
    noise_var: ArrayView1<f64>,
) -> ValueGradient {
    let d = x.ncols();
    let n = x.nrows();
    let length: Vec<f64> = theta[..d].iter().map(|v| v.exp_fixed()).collect();
    let signal = theta[d].exp_fixed();
    let factor = theta[d + 1].exp_fixed();
    unit_kernel_into(x, &length, &mut work.unit);
    // K_y's lower triangle (the factorisation reads no other element)
    let mut ky = std::mem::take(&mut work.ky);
    if ky.dim() != (n, n) || !ky.is_standard_layout() {
        ky = Array2::zeros((n, n));
    }
    for (i, (mut k_row, u_row)) in ky.outer_iter_mut().zip(work.unit.outer_iter()).enumerate() {
        for (k, u) in k_row.iter_mut().zip(u_row.iter()).take(i + 1) {
            *k = u * signal;
        }
    }
    add_noise(&mut ky, factor, noise_var);
    let f = Cholesky::from_matrix(ky)?;
    let alpha = f.solve(r);
    let ln_det = f.ln_det();
    work.ky = f.into_inverse(&mut work.m);
    let value = 0.5 * r.dot(&alpha)
        + 0.5 * ln_det
        + 0.5 * n as f64 * (2.0 * std::f64::consts::PI).ln_fixed();
    // W = ααᵀ − K_y⁻¹ (ααᵀ as a product formed it: 0 + α_i·α_j) and
    // M = W ∘ R, over the inverse
    let mut w_diag = Vec::with_capacity(n);
    for (i, (mut m_row, u_row)) in work
        .m
        .outer_iter_mut()
        .zip(work.unit.outer_iter())
        .enumerate()
    {
        let ai = alpha[i];
        for (j, (m, u)) in m_row.iter_mut().zip(u_row.iter()).enumerate() {
            let w = (0.0 + ai * alpha[j]) - *m;
            if j == i {
                w_diag.push(w);
            }
            *m = w * u;
        }
    }
    let m = &work.m;
    let mut grad = Array1::zeros(d + 2);
    // ln τ²: ∂K/∂ln τ² = τ²R
    grad[d] = -0.5 * signal * m.sum();
    // ln s: ∂K/∂ln s = s·diag(σ²)
    grad[d + 1] = -0.5 * factor * (0..n).map(|i| w_diag[i] * noise_var[i]).sum::<f64>();
    // ln ℓ_k: ∂K_ij/∂ln ℓ_k = τ²R_ij (x_ik − x_jk)²/ℓ_k², and
    // Σ_ij M_ij (x_ik − x_jk)² = 2 Σ_i x_ik² (M1)_i − 2 x_kᵀ M x_k
    let row_sums = m.sum_axis(Axis(1));
    let mx = matmul(m.view(), x);
    for k in 0..d {
        let xk = x.column(k);
        let s2: f64 = xk.iter().zip(&row_sums).map(|(v, s)| v * v * s).sum();
        let cross: f64 = xk.iter().zip(mx.column(k)).map(|(a, b)| a * b).sum();
        let total = 2.0 * s2 - 2.0 * cross;
        grad[k] = -0.5 * signal * total / (length[k] * length[k]);
    }
    finite(value, grad)
}

/// The negative log posterior of the partition θ = (ln ℓ_1…ln ℓ_d, u):
/// the committee's noise variance is split into a share f = 1/(1 + e^(−u))
/// correlated over the inputs and the rest uncorrelated,
///
/// ```text
/// τ² = f·σ̄²,   s = 1 − f,   σ̄² = mean of σ²(x_n) over the rows
/// ```
///
/// so that far from the rows (k(x) → 0) the variance is that of the
/// committee alone. Weak Gaussian hyperpriors on each ln ℓ_j and on u;
/// the gradient follows from [`neg_log_marginal`] by the chain rule
/// (∂ln τ²/∂u = 1 − f, ∂ln s/∂u = −f).
pub(crate) fn neg_log_posterior(
    theta: &[f64],
    x: ArrayView2<f64>,
    r: ArrayView1<f64>,
    noise_var: ArrayView1<f64>,
) -> ValueGradient {
    neg_log_posterior_in(&mut LikelihoodWork::default(), theta, x, r, noise_var)
}

/// [`neg_log_posterior`] in the matrices of `work`.
fn neg_log_posterior_in(
    work: &mut LikelihoodWork,
    theta: &[f64],
    x: ArrayView2<f64>,
    r: ArrayView1<f64>,
    noise_var: ArrayView1<f64>,
) -> ValueGradient {
    let d = x.ncols();
    let (signal, factor, f) = partition(theta[d], noise_var);
    let mut phi = theta[..d].to_vec();
    phi.push(signal.ln_fixed());
    phi.push(factor.ln_fixed());
    let (mut value, g) = neg_log_marginal_in(work, &phi, x, r, noise_var)?;
    let mut grad = Array1::zeros(d + 1);
    for k in 0..d {
        let (p, gp) = prior(theta[k], PRIOR_LN_LENGTH);
        value += p;
        grad[k] = g[k] + gp;
    }
    let (p, gp) = prior(theta[d], PRIOR_SHARE_LOGIT);
    value += p;
    grad[d] = g[d] * (1.0 - f) - g[d + 1] * f + gp;
    finite(value, grad)
}

/// τ², s and f of the partition with logit `u` over rows with noise
/// variances `noise_var`.
fn partition(u: f64, noise_var: ArrayView1<f64>) -> (f64, f64, f64) {
    let f = 1.0 / (1.0 + (-u).exp_fixed());
    let mean_var = noise_var.mean().unwrap_or(0.0).max(VAR_FLOOR);
    (f * mean_var, 1.0 - f, f)
}

/// θ with the value and gradient of [`neg_log_posterior`] there.
type Evaluation = (Array1<f64>, f64, Array1<f64>);

/// Value and gradient, or None where K_y does not factorise.
type ValueGradient = Option<(f64, Array1<f64>)>;

/// The optimiser's view of [`neg_log_posterior`], caching the last
/// evaluation (argmin asks for cost and gradient separately) and keeping
/// the matrices of an evaluation for the next.
struct Problem<'a> {
    x: ArrayView2<'a, f64>,
    r: ArrayView1<'a, f64>,
    noise_var: ArrayView1<'a, f64>,
    cache: RefCell<Option<Evaluation>>,
    work: RefCell<LikelihoodWork>,
}

impl Problem<'_> {
    fn eval(&self, theta: &Array1<f64>) -> (f64, Array1<f64>) {
        if let Some((t, v, g)) = self.cache.borrow().as_ref() {
            if t == theta {
                return (*v, g.clone());
            }
        }
        let out = neg_log_posterior_in(
            &mut self.work.borrow_mut(),
            theta.as_slice().unwrap_or(&theta.to_vec()),
            self.x,
            self.r,
            self.noise_var,
        )
        .unwrap_or_else(|| (f64::INFINITY, Array1::zeros(theta.len())));
        *self.cache.borrow_mut() = Some((theta.clone(), out.0, out.1.clone()));
        out
    }
}

impl CostFunction for Problem<'_> {
    type Param = Array1<f64>;
    type Output = f64;
    fn cost(&self, theta: &Self::Param) -> Result<f64, ArgminError> {
        Ok(self.eval(theta).0)
    }
}

impl Gradient for Problem<'_> {
    type Param = Array1<f64>;
    type Gradient = Array1<f64>;
    fn gradient(&self, theta: &Self::Param) -> Result<Array1<f64>, ArgminError> {
        Ok(self.eval(theta).1)
    }
}

/// Starting θ: every length scale `length`, half the noise variance
/// correlated (u = 0).
fn default_start(d: usize, length: f64) -> Vec<f64> {
    let mut theta = vec![length.ln_fixed(); d];
    theta.push(0.0);
    theta
}

/// L-BFGS on [`neg_log_posterior`] from `start`, returning the best value
/// and θ. A run that ends in a failed line search (a trial step where K_y
/// does not factorise) is restarted from its best point with a fresh
/// memory.
fn minimise<'a>(
    x: ArrayView2<'a, f64>,
    r: ArrayView1<'a, f64>,
    noise_var: ArrayView1<'a, f64>,
    start: Vec<f64>,
) -> Result<(f64, Vec<f64>), FitFailure> {
    let mut theta = start;
    let mut best = f64::INFINITY;
    let mut iters_left = KRIGING_ITERS;
    for _ in 0..KRIGING_RESTARTS {
        let problem = Problem {
            x,
            r,
            noise_var,
            cache: RefCell::new(None),
            work: RefCell::new(LikelihoodWork::default()),
        };
        let solver = LBFGS::new(MoreThuenteLineSearch::new(), 7)
            .with_tolerance_grad(KRIGING_GRAD_TOL)
            .and_then(|s| s.with_tolerance_cost(KRIGING_COST_TOL))
            .map_err(|e| FitFailure::Stalled(format!("kriging optimiser set-up: {e}")))?;
        let Ok(mut res) = Executor::new(problem, solver)
            .configure(|s| s.param(Array1::from(theta.clone())).max_iters(iters_left))
            .timer(false)
            .run()
        else {
            break;
        };
        let state = &mut res.state;
        iters_left = iters_left.saturating_sub(state.iter);
        let cost = state.best_cost;
        let improved = cost < best - KRIGING_COST_TOL;
        if cost < best {
            if let Some(p) = state.take_best_param() {
                theta = p.to_vec();
                best = cost;
            }
        }
        let line_search_failed = matches!(
            state.termination_status,
            TerminationStatus::Terminated(TerminationReason::SolverExit(_))
        );
        if !line_search_failed || !improved || iters_left == 0 {
            break;
        }
    }
    Ok((best, theta))
}

impl ResidualKriging {
    /// Fit the process to residuals `r` at scaled inputs `x`, with the
    /// committee's noise variance `noise_var` there.
    ///
    /// # Errors
    /// [`FitFailure::Stalled`] when the optimiser fails or the kernel
    /// matrix cannot be factorised at the start.
    pub(crate) fn fit<'a>(
        x: ArrayView2<'a, f64>,
        r: ArrayView1<'a, f64>,
        noise_var: ArrayView1<'a, f64>,
    ) -> Result<ResidualKriging, FitFailure> {
        let d = x.ncols();
        // every start in KRIGING_START_LENGTHS; the best end point is kept
        let mut found: Option<(f64, Vec<f64>)> = None;
        for &length in &KRIGING_START_LENGTHS {
            let start = default_start(d, length);
            if neg_log_posterior(&start, x, r, noise_var).is_none() {
                continue;
            }
            let end = minimise(x, r, noise_var, start)?;
            if found.as_ref().is_none_or(|(best, _)| end.0 < *best) {
                found = Some(end);
            }
        }
        let Some((_, theta)) = found else {
            return Err(FitFailure::Stalled(
                "kriging: the kernel matrix at the start is not positive definite".into(),
            ));
        };
        let (value, _) = neg_log_posterior(&theta, x, r, noise_var).ok_or_else(|| {
            FitFailure::Stalled("kriging: the fitted kernel matrix is not positive definite".into())
        })?;
        let (signal_var, noise_factor, _) = partition(theta[d], noise_var);
        Ok(ResidualKriging {
            x: x.to_owned(),
            residual: r.to_vec(),
            noise_var: noise_var.to_vec(),
            length_scales: theta[..d].iter().map(|v| v.exp_fixed()).collect(),
            signal_var,
            noise_factor,
            log_marginal_likelihood: -value,
            shares_model_part: false,
            state: OnceLock::new(),
        })
    }

    /// The same hyperparameters on other rows: residuals `r` at scaled
    /// inputs `x` with noise variance `noise_var` (the refitted
    /// committee's, over all the training rows).
    ///
    /// # Errors
    /// [`FitFailure::Stalled`] when K_y does not factorise on those rows.
    pub(crate) fn with_residuals(
        &self,
        x: ArrayView2<f64>,
        r: ArrayView1<f64>,
        noise_var: ArrayView1<f64>,
    ) -> Result<ResidualKriging, FitFailure> {
        // the same correlated share f = 1 − s of the (new) noise variance
        let f = (1.0 - self.noise_factor).clamp(1e-12, 1.0 - 1e-12);
        let mut theta: Vec<f64> = self.length_scales.iter().map(|l| l.ln_fixed()).collect();
        theta.push((f / (1.0 - f)).ln_fixed());
        let (value, _) = neg_log_posterior(&theta, x, r, noise_var).ok_or_else(|| {
            FitFailure::Stalled(
                "kriging: the kernel matrix on all the rows is not positive definite".into(),
            )
        })?;
        let (signal_var, noise_factor, _) = partition(theta[x.ncols()], noise_var);
        Ok(ResidualKriging {
            x: x.to_owned(),
            residual: r.to_vec(),
            noise_var: noise_var.to_vec(),
            signal_var,
            noise_factor,
            log_marginal_likelihood: -value,
            shares_model_part: self.shares_model_part,
            state: OnceLock::new(),
            length_scales: self.length_scales.clone(),
        })
    }

    /// The factorised K_y, built once and kept; None when it is not
    /// positive definite (a damaged model file).
    fn state(&self) -> Option<&KrigingState> {
        self.state
            .get_or_init(|| self.factorise().map(Arc::new))
            .as_deref()
    }

    fn factorise(&self) -> Option<KrigingState> {
        let n = self.x.nrows();
        if n == 0 || self.residual.len() != n || self.noise_var.len() != n {
            return None;
        }
        let mut ky = kernel(
            self.x.view(),
            self.x.view(),
            &self.length_scales,
            self.signal_var,
        );
        add_noise(
            &mut ky,
            self.noise_factor,
            ArrayView1::from(&self.noise_var[..]),
        );
        let chol = Cholesky::new(ky.view())?;
        let alpha = chol.solve(ArrayView1::from(&self.residual[..]));
        Some(KrigingState { chol, alpha })
    }

    /// The process's posterior mean and variance at scaled inputs `x`
    /// (Rasmussen & Williams 2006, eqs. 2.25–2.26); None when the stored
    /// process cannot be factorised.
    pub fn predict(&self, x: ArrayView2<f64>) -> Option<(Array1<f64>, Array1<f64>)> {
        let st = self.state()?;
        let mut mean = Vec::with_capacity(x.nrows());
        let mut var = Vec::with_capacity(x.nrows());
        // in chunks, so that the m × N cross-kernel stays small
        for chunk in x.axis_chunks_iter(Axis(0), KRIGING_PREDICT_ROWS) {
            let ks = kernel(chunk, self.x.view(), &self.length_scales, self.signal_var); // m × N
            mean.extend(ks.dot(&st.alpha));
            let v = st.chol.solve_lower(ks.t());
            var.extend(
                v.map_axis(Axis(0), |c| c.dot(&c))
                    .mapv(|e| (self.signal_var - e).max(VAR_FLOOR)),
            );
        }
        Some((Array1::from(mean), Array1::from(var)))
    }

    /// The share ρ(x*) = (τ² − k*ᵀK_y⁻¹k*)/τ² of the process's prior
    /// variance still left at x*, given its posterior variance there
    /// (module doc, "The committee's model part beside the process"):
    /// 1 far from the rows, small next to rows that pin the residual down.
    pub fn remaining_share(&self, process_var: f64) -> f64 {
        (process_var / self.signal_var.max(VAR_FLOOR)).clamp(0.0, 1.0)
    }

    /// The share of the committee's model part kept beside the process at
    /// a row with the process's variance `process_var`:
    /// [`ResidualKriging::remaining_share`] when the held-out part chose
    /// it ([`ResidualKriging::shares_model_part`]), else 1.
    pub fn model_part_share(&self, process_var: f64) -> f64 {
        if self.shares_model_part {
            self.remaining_share(process_var)
        } else {
            1.0
        }
    }

    /// How fast [`ResidualKriging::model_part_share`] can change with the
    /// process's variance: 1/τ² when it is ρ, else 0 (for error bounds).
    pub fn model_part_share_slope(&self) -> f64 {
        if self.shares_model_part {
            1.0 / self.signal_var.max(VAR_FLOOR)
        } else {
            0.0
        }
    }

    /// This process with the committee's model part taken times ρ
    /// (`yes`) or whole.
    pub(crate) fn sharing_model_part(mut self, yes: bool) -> Self {
        self.shares_model_part = yes;
        self
    }

    /// The variance of an estimate with the process (module doc) from the
    /// committee's variance `var` = `noise_var` + `model_var`: the noise
    /// under the factor s, the model part times
    /// [`ResidualKriging::model_part_share`], and the process's posterior
    /// variance `process_var`. With the model part whole it is computed
    /// as before the share existed, var + (s − 1)·noise + process, so that
    /// such a committee's choices and estimates keep their last bits.
    pub fn total_var(&self, var: f64, noise_var: f64, model_var: f64, process_var: f64) -> f64 {
        if self.shares_model_part {
            self.noise_factor * noise_var
                + self.model_part_share(process_var) * model_var
                + process_var
        } else {
            var + noise_var * (self.noise_factor - 1.0) + process_var
        }
    }

    /// Whether the stored process can be used (its kernel matrix factorises).
    pub fn is_usable(&self) -> bool {
        self.state().is_some()
    }
}

/// The rows of scaled `x`, `t` the process is fitted on, in increasing
/// order: exact duplicate rows (every input and the target equal) once
/// each, then a seeded random sample of at most [`KRIGING_MAX_ROWS`].
///
/// A row entered twice says nothing about the scatter of repeat tests;
/// kept twice, its two copies would agree exactly and teach the process
/// that tests at those inputs do not scatter, so that a query at them
/// would get an error bar near zero. Repeat tests whose results differ
/// are kept: they are the evidence for the uncorrelated share.
pub(crate) fn process_rows(x: ArrayView2<f64>, t: ArrayView1<f64>, seed: u64) -> Vec<usize> {
    use rand::seq::index::sample;
    use rand::SeedableRng;
    let mut seen = std::collections::HashSet::new();
    let distinct: Vec<usize> = (0..x.nrows())
        .filter(|&i| {
            let key: Vec<u64> = x
                .row(i)
                .iter()
                .chain(std::iter::once(&t[i]))
                .map(|v| v.to_bits())
                .collect();
            seen.insert(key)
        })
        .collect();
    if distinct.len() <= KRIGING_MAX_ROWS {
        return distinct;
    }
    let mut rng = rand_xoshiro::Xoshiro256PlusPlus::seed_from_u64(seed);
    let mut picked: Vec<usize> = sample(&mut rng, distinct.len(), KRIGING_MAX_ROWS)
        .into_iter()
        .map(|k| distinct[k])
        .collect();
    picked.sort_unstable();
    picked
}

/// Serialise a matrix as a list of its rows.
mod as_rows {
    use ndarray::Array2;
    use serde::{de::Error as _, Deserialize, Deserializer, Serialize, Serializer};

    pub fn serialize<S: Serializer>(m: &Array2<f64>, s: S) -> Result<S::Ok, S::Error> {
        let rows: Vec<Vec<f64>> = m.outer_iter().map(|r| r.to_vec()).collect();
        rows.serialize(s)
    }

    pub fn deserialize<'de, D: Deserializer<'de>>(d: D) -> Result<Array2<f64>, D::Error> {
        let rows = Vec::<Vec<f64>>::deserialize(d)?;
        let n_cols = rows.first().map_or(0, Vec::len);
        if rows.iter().any(|r| r.len() != n_cols) {
            return Err(D::Error::custom("rows of unequal length"));
        }
        let flat: Vec<f64> = rows.into_iter().flatten().collect();
        let n_rows = flat.len().checked_div(n_cols).unwrap_or(0);
        Array2::from_shape_vec((n_rows, n_cols), flat).map_err(D::Error::custom)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::linalg::former;
    use crate::prec::FD_STEP;
    use rand::{Rng, SeedableRng};
    use rand_xoshiro::Xoshiro256PlusPlus;

    fn check_gradient(f: &dyn Fn(&[f64]) -> ValueGradient, theta: &[f64], what: &str) {
        let (_, g) = f(theta).expect("pd");
        for k in 0..theta.len() {
            let mut tp = theta.to_vec();
            let mut tm = theta.to_vec();
            tp[k] += FD_STEP;
            tm[k] -= FD_STEP;
            let fd = (f(&tp).expect("pd").0 - f(&tm).expect("pd").0) / (2.0 * FD_STEP);
            assert!(
                (fd - g[k]).abs() < 1e-5 * (1.0 + fd.abs()),
                "{what} θ{k}: analytic {} vs FD {fd}",
                g[k]
            );
        }
    }

    /// [`kernel`] with the former product.
    fn former_kernel(
        a: ArrayView2<f64>,
        b: ArrayView2<f64>,
        length: &[f64],
        signal_var: f64,
    ) -> Array2<f64> {
        kernel_by(a, b, length, signal_var, former::matmul)
    }

    /// The likelihood and its gradient as the code of commit c9d78cb formed
    /// them (fresh matrices for R, τ²R, ααᵀ, W and W ∘ R; the former linear
    /// algebra): the oracle of the bit-for-bit test.
    fn former_neg_log_marginal(
        theta: &[f64],
        x: ArrayView2<f64>,
        r: ArrayView1<f64>,
        noise_var: ArrayView1<f64>,
    ) -> ValueGradient {
        let d = x.ncols();
        let n = x.nrows();
        let length: Vec<f64> = theta[..d].iter().map(|v| v.exp_fixed()).collect();
        let signal = theta[d].exp_fixed();
        let factor = theta[d + 1].exp_fixed();
        let unit = former_kernel(x, x, &length, 1.0);
        let mut ky = &unit * signal;
        add_noise(&mut ky, factor, noise_var);
        let f = crate::linalg::former::Cholesky::new(ky.view())?;
        let alpha = f.solve(r);
        let ln_det = f.ln_det();
        let inv = f.inverse();
        let value = 0.5 * r.dot(&alpha)
            + 0.5 * ln_det
            + 0.5 * n as f64 * (2.0 * std::f64::consts::PI).ln_fixed();
        // W = ααᵀ − K_y⁻¹; ∂(−ln p)/∂θ_i = −½ tr(W ∂K_y/∂θ_i)
        let col = alpha.view().insert_axis(Axis(1));
        let w = former::matmul(col, col.t()) - inv;
        let m = &w * &unit; // W ∘ R
        let mut grad = Array1::zeros(d + 2);
        // ln τ²: ∂K/∂ln τ² = τ²R
        grad[d] = -0.5 * signal * m.sum();
        // ln s: ∂K/∂ln s = s·diag(σ²)
        grad[d + 1] = -0.5 * factor * (0..n).map(|i| w[[i, i]] * noise_var[i]).sum::<f64>();
        // ln ℓ_k: ∂K_ij/∂ln ℓ_k = τ²R_ij (x_ik − x_jk)²/ℓ_k², and
        // Σ_ij M_ij (x_ik − x_jk)² = 2 Σ_i x_ik² (M1)_i − 2 x_kᵀ M x_k
        let row_sums = m.sum_axis(Axis(1));
        let mx = former::matmul(m.view(), x);
        for k in 0..d {
            let xk = x.column(k);
            let s2: f64 = xk.iter().zip(&row_sums).map(|(v, s)| v * v * s).sum();
            let cross: f64 = xk.iter().zip(mx.column(k)).map(|(a, b)| a * b).sum();
            let total = 2.0 * s2 - 2.0 * cross;
            grad[k] = -0.5 * signal * total / (length[k] * length[k]);
        }
        finite(value, grad)
    }

    fn same_bits(a: &[f64], b: &[f64]) -> bool {
        a.len() == b.len() && a.iter().zip(b).all(|(x, y)| x.to_bits() == y.to_bits())
    }

    /// Scaled inputs in [−0.5, 0.5], every seventh row a copy of the row
    /// before (repeat tests give equal rows, whose kernel entries are 1).
    fn inputs(n: usize, d: usize, seed: u64) -> Array2<f64> {
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
        let mut x = Array2::from_shape_fn((n, d), |_| rng.random_range(-0.5..0.5));
        for i in (7..n).step_by(7) {
            let prev = x.row(i - 1).to_owned();
            x.row_mut(i).assign(&prev);
        }
        x
    }

    /// The symmetric kernel equals [`kernel`]`(x, x, ℓ, 1)` and the former
    /// product's kernel bit for bit.
    #[test]
    fn unit_kernel_equals_the_full_kernel_bit_for_bit() {
        let mut out = Array2::zeros((0, 0));
        for (n, d) in [(1, 1), (2, 3), (9, 2), (48, 5), (49, 8), (97, 4), (250, 8)] {
            let x = inputs(n, d, n as u64);
            for scale in [0.05, 0.3, 3.0] {
                let length: Vec<f64> = (0..d).map(|k| scale * (1.0 + 0.3 * k as f64)).collect();
                unit_kernel_into(x.view(), &length, &mut out);
                let full = kernel(x.view(), x.view(), &length, 1.0);
                let former = former_kernel(x.view(), x.view(), &length, 1.0);
                let (o, f, g) = (out.as_slice(), full.as_slice(), former.as_slice());
                let (o, f, g) = (
                    o.expect("row-major"),
                    f.expect("row-major"),
                    g.expect("row-major"),
                );
                assert!(
                    same_bits(o, f) && same_bits(f, g),
                    "n {n}, d {d}, scale {scale}"
                );
            }
        }
    }

    /// The likelihood and its gradient in kept matrices (one workspace
    /// through every size, as a search reuses it) equal the former code
    /// bit for bit: sizes across the Cholesky block (48), up to 300 rows,
    /// 1–8 inputs, short and long length scales, a small and a large
    /// noise share, and a θ where K_y does not factorise in either.
    #[test]
    fn likelihood_equals_the_former_code_bit_for_bit() {
        let mut work = LikelihoodWork::default();
        let shapes = [
            (1, 1),
            (2, 3),
            (5, 2),
            (17, 4),
            (47, 8),
            (48, 3),
            (49, 5),
            (97, 8),
            (150, 6),
            (211, 8),
            (300, 4),
            (31, 2),
        ];
        for (case, &(n, d)) in shapes.iter().enumerate() {
            let x = inputs(n, d, 40 + case as u64);
            let mut rng = Xoshiro256PlusPlus::seed_from_u64(70 + case as u64);
            let r = Array1::from_shape_fn(n, |i| {
                0.1 * (4.0 * x[[i, 0]]).sin_fixed() + rng.random_range(-0.03..0.03)
            });
            let nv = Array1::from_shape_fn(n, |_| rng.random_range(0.0005..0.003));
            for (ln_l, ln_tau2, ln_s) in [
                (-1.2, -6.0, -0.7),
                (-2.5, -4.0, -3.0),
                (0.8, -7.0, 0.0),
                (-0.3, -3.0, -12.0),
            ] {
                let mut theta: Vec<f64> = (0..d).map(|k| ln_l + 0.2 * k as f64).collect();
                theta.push(ln_tau2);
                theta.push(ln_s);
                let want = former_neg_log_marginal(&theta, x.view(), r.view(), nv.view());
                let got = neg_log_marginal_in(&mut work, &theta, x.view(), r.view(), nv.view());
                match (want, got) {
                    (None, None) => {}
                    (Some((v0, g0)), Some((v1, g1))) => {
                        assert_eq!(
                            v0.to_bits(),
                            v1.to_bits(),
                            "value, n {n}, d {d}, θ {theta:?}"
                        );
                        assert!(
                            same_bits(g0.as_slice().expect("g"), g1.as_slice().expect("g")),
                            "gradient, n {n}, d {d}, θ {theta:?}: {g0} against {g1}"
                        );
                    }
                    (w, g) => panic!("n {n}: former {:?}, now {:?}", w.is_some(), g.is_some()),
                }
            }
        }
        // a matrix that does not factorise (negative noise) fails in both
        let x = inputs(60, 3, 9);
        let r = Array1::from_elem(60, 0.01);
        let nv = Array1::from_elem(60, -1.0);
        let theta = [-1.0, -1.0, -1.0, -6.0, 0.0];
        assert!(former_neg_log_marginal(&theta, x.view(), r.view(), nv.view()).is_none());
        assert!(neg_log_marginal_in(&mut work, &theta, x.view(), r.view(), nv.view()).is_none());
    }

    #[test]
    fn double_entries_enter_the_process_once() {
        let x = ndarray::array![[0.1, 0.2], [0.1, 0.2], [0.1, 0.2], [0.3, 0.2], [0.1, 0.2]];
        let t = ndarray::array![1.0, 1.0, 1.5, 2.0, 1.0];
        // rows 1 and 4 repeat row 0 exactly; row 2 is a repeat test with
        // another result and stays
        assert_eq!(process_rows(x.view(), t.view(), 0), vec![0, 2, 3]);
    }

    #[test]
    fn gradients_match_finite_differences() {
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(11);
        let (n, d) = (25, 3);
        let x: Array2<f64> = Array2::from_shape_fn((n, d), |_| rng.random_range(-0.5..0.5));
        let r = Array1::from_shape_fn(n, |i| {
            (3.0 * x[[i, 0]]).sin_fixed() * 0.1 + rng.random_range(-0.02..0.02)
        });
        let nv = Array1::from_shape_fn(n, |_| rng.random_range(0.0005..0.002));
        let general = |t: &[f64]| neg_log_marginal(t, x.view(), r.view(), nv.view());
        check_gradient(
            &general,
            &[-1.0, -0.5, 0.3, -5.0, -0.2],
            "marginal likelihood",
        );
        let partitioned = |t: &[f64]| neg_log_posterior(t, x.view(), r.view(), nv.view());
        check_gradient(&partitioned, &[-1.0, -0.5, 0.3, 0.7], "partition posterior");
        check_gradient(
            &partitioned,
            &[-0.2, 0.4, -1.5, -2.0],
            "partition posterior",
        );
    }

    /// Log marginal likelihood, posterior mean and latent variance against
    /// scikit-learn's `GaussianProcessRegressor` with the same fixed
    /// kernel and per-row noise, on the diabetes data (Efron et al. 2004,
    /// from linfa-datasets 0.8.1). Reference values made once by
    /// tests/reference/gp_residual_diabetes.py (scikit-learn 1.9.1).
    #[test]
    fn matches_scikit_learn_gaussian_process() {
        let path = concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/tests/data/gp_residual_diabetes.json"
        );
        let v: serde_json::Value =
            serde_json::from_str(&std::fs::read_to_string(path).expect("reference file"))
                .expect("json");
        let vec = |k: &str| -> Vec<f64> {
            v[k].as_array()
                .expect(k)
                .iter()
                .map(|x| x.as_f64().expect("number"))
                .collect()
        };
        let mat = |k: &str| -> Array2<f64> {
            let rows: Vec<Vec<f64>> = v[k]
                .as_array()
                .expect(k)
                .iter()
                .map(|r| {
                    r.as_array()
                        .expect("row")
                        .iter()
                        .map(|x| x.as_f64().expect("number"))
                        .collect()
                })
                .collect();
            Array2::from_shape_fn((rows.len(), rows[0].len()), |(i, j)| rows[i][j])
        };
        let x = mat("x_train");
        let x_test = mat("x_test");
        let r = Array1::from(vec("residual"));
        let nv = Array1::from(vec("noise_var"));
        let length = vec("length_scales");
        let signal = v["signal_var"].as_f64().expect("signal");
        let factor = v["noise_factor"].as_f64().expect("factor");
        let mut phi: Vec<f64> = length.iter().map(|l| l.ln_fixed()).collect();
        phi.push(signal.ln_fixed());
        phi.push(factor.ln_fixed());
        let (value, _) = neg_log_marginal(&phi, x.view(), r.view(), nv.view()).expect("pd");
        let lml = -value;
        let lml_ref = v["log_marginal_likelihood"].as_f64().expect("lml");
        assert!(
            (lml - lml_ref).abs() < 1e-6 * lml_ref.abs(),
            "log marginal likelihood {lml} vs sklearn {lml_ref}"
        );
        let k = ResidualKriging {
            x,
            residual: r.to_vec(),
            noise_var: nv.to_vec(),
            length_scales: length,
            signal_var: signal,
            noise_factor: factor,
            log_marginal_likelihood: lml,
            shares_model_part: false,
            state: OnceLock::new(),
        };
        // tolerance: one part in a million of the process's sd (our
        // KRIGING_JITTER on the diagonal is the only intended difference)
        let (mean, var) = k.predict(x_test.view()).expect("factorises");
        let tol = 1e-6 * signal.sqrt();
        for (i, (m, m_ref)) in mean.iter().zip(vec("mean")).enumerate() {
            assert!(
                (m - m_ref).abs() < tol,
                "row {i}: mean {m} vs sklearn {m_ref}"
            );
        }
        for (i, (s2, s2_ref)) in var.iter().zip(vec("latent_var")).enumerate() {
            assert!(
                (s2 - s2_ref).abs() < tol * tol + 1e-6 * s2_ref,
                "row {i}: variance {s2} vs sklearn {s2_ref}"
            );
        }
    }

    /// The fitted process finds structure the residuals carry and gives
    /// the noise back where they carry none (synthetic: common practice
    /// for checking a Gaussian process, no source).
    /// The committee's model part beside the process (module doc): with
    /// the committee's error δ drawn from GP(0, v·R), R the process's
    /// correlation, the kriged estimate errs by δ(x*) − wᵀδ, w = K_y⁻¹k*,
    /// whose variance is v·(1 − 2wᵀr* + wᵀRw) = v·(ρ − wᵀSw/τ²) ≤ v·ρ
    /// (the regression-kriging trend term, Hengl, Heuvelink & Rossiter
    /// 2007, §2): checked by the algebra, and by 4000 seeded draws of δ
    /// (the squared error's sample mean has a relative SE of √(2/4000) =
    /// 2.2 %; 4 SE allowed).
    #[test]
    fn the_model_part_beside_the_process_is_at_most_rho_of_it() {
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(11);
        let (n, d) = (30, 2);
        let x: Array2<f64> = Array2::from_shape_fn((n, d), |_| rng.random_range(-0.5..0.5));
        let noise_var = vec![0.2; n];
        let k = ResidualKriging {
            x: x.clone(),
            residual: vec![0.0; n],
            noise_var: noise_var.clone(),
            length_scales: vec![0.15, 0.3],
            signal_var: 1.0,
            noise_factor: 1.0,
            log_marginal_likelihood: 0.0,
            shares_model_part: true,
            state: OnceLock::new(),
        };
        let tau2 = k.signal_var;
        let xq = ndarray::array![[0.05, -0.1]];
        let (_, pv) = k.predict(xq.view()).expect("predicts");
        let rho = k.remaining_share(pv[0]);
        assert!(rho > 0.05 && rho < 0.9, "an informative query: ρ = {rho}");
        let r_rows = kernel(x.view(), x.view(), &k.length_scales, 1.0);
        let r_star = kernel(xq.view(), x.view(), &k.length_scales, 1.0)
            .row(0)
            .to_owned();
        let mut ky = &r_rows * tau2;
        add_noise(&mut ky, k.noise_factor, ArrayView1::from(&noise_var[..]));
        let w = Cholesky::new(ky.view())
            .expect("pd")
            .solve((&r_star * tau2).view());
        let exact = 1.0 - 2.0 * w.dot(&r_star) + w.dot(&r_rows.dot(&w));
        let wsw: f64 = (0..n)
            .map(|i| w[i] * w[i] * k.noise_factor * noise_var[i])
            .sum();
        assert!(
            (exact - (rho - wsw / tau2)).abs() < 1e-9,
            "{exact} vs {rho}"
        );
        assert!(exact <= rho && exact > 0.0);
        // draws of δ over the rows and the query from GP(0, v·R)
        let v = 3.0;
        let mut all = x.clone();
        all.push_row(xq.row(0)).expect("same width");
        let mut cov = kernel(all.view(), all.view(), &k.length_scales, v);
        add_noise(&mut cov, 0.0, ArrayView1::from(&vec![0.0; n + 1][..]));
        let l = Cholesky::new(cov.view()).expect("pd").into_lower();
        let draws = 4000;
        let normal = rand_distr::StandardNormal;
        let mut sum = 0.0;
        for _ in 0..draws {
            let z: Array1<f64> = Array1::from_shape_fn(n + 1, |_| {
                rand_distr::Distribution::sample(&normal, &mut rng)
            });
            let delta = l.dot(&z);
            let e = delta[n] - w.dot(&delta.slice(ndarray::s![..n]));
            sum += e * e;
        }
        let mc = sum / draws as f64;
        assert!(
            (mc / (v * exact) - 1.0).abs() < 4.0 * (2.0 / draws as f64).sqrt(),
            "Monte Carlo {mc} vs v·(1 − 2wᵀr + wᵀRw) = {}",
            v * exact
        );
        assert!(mc < v * rho, "{mc} vs v·ρ = {}", v * rho);
    }

    #[test]
    fn fit_recovers_a_smooth_residual_and_pure_noise() {
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(5);
        let (n, d) = (200, 2);
        let x: Array2<f64> = Array2::from_shape_fn((n, d), |_| rng.random_range(-0.5..0.5));
        let noise_sd = 0.02;
        let normal = rand_distr::Normal::new(0.0, noise_sd).expect("sd");
        let eps: Vec<f64> = (0..n)
            .map(|_| rand_distr::Distribution::sample(&normal, &mut rng))
            .collect();
        // the committee's noise variance takes in all it leaves unexplained:
        // structure variance 0.1²/2 plus the noise
        let nv = Array1::from_elem(n, 0.005 + noise_sd * noise_sd);
        // structure along input 0 only
        let r = Array1::from_shape_fn(n, |i| 0.1 * (6.0 * x[[i, 0]]).sin_fixed() + eps[i]);
        let k = ResidualKriging::fit(x.view(), r.view(), nv.view()).expect("fits");
        assert!(
            k.length_scales[0] < 0.5,
            "relevant input: ℓ = {}",
            k.length_scales[0]
        );
        assert!(
            k.length_scales[1] > 2.0 * k.length_scales[0],
            "irrelevant input: ℓ = {:?}",
            k.length_scales
        );
        // uncorrelated share s·σ² should be the true noise variance
        let noise_var_fitted = k.noise_factor * nv[0];
        assert!(
            (0.6..1.6).contains(&(noise_var_fitted / (noise_sd * noise_sd))),
            "uncorrelated variance {noise_var_fitted} vs true {}",
            noise_sd * noise_sd
        );
        let x_new: Array2<f64> = Array2::from_shape_fn((50, d), |_| rng.random_range(-0.4..0.4));
        let (m, _) = k.predict(x_new.view()).expect("predicts");
        let err: f64 = (0..50)
            .map(|i| (m[i] - 0.1 * (6.0 * x_new[[i, 0]]).sin_fixed()).powi(2))
            .sum::<f64>()
            / 50.0;
        assert!(
            err.sqrt() < 0.5 * noise_sd,
            "rms error of the process mean {}",
            err.sqrt()
        );
        // pure noise: the process must not claim structure
        let r0 = Array1::from(eps);
        let nv0 = Array1::from_elem(n, noise_sd * noise_sd);
        let k0 = ResidualKriging::fit(x.view(), r0.view(), nv0.view()).expect("fits");
        let (m0, _) = k0.predict(x_new.view()).expect("predicts");
        let rms0 = (m0.mapv(|v| v * v).sum() / 50.0).sqrt();
        assert!(rms0 < 0.3 * noise_sd, "process mean on pure noise {rms0}");
    }
}
