//! Numerical tolerances and bounds, kept in one place.
//!
//! Every tolerance the engine uses and every bound it puts on a
//! hyperparameter is named here, with the reason for its value, so that a
//! change is made once and reviewed once (the convention of `statrs`'s
//! `prec` module).

/// Smallest weight-decay hyperparameter α a group may take. Below this a
/// group is effectively unregularised and its Occam factor is meaningless.
pub const ALPHA_MIN: f64 = 1e-8;

/// Largest α a group may take. A group driven here carries no weight (its
/// input is judged irrelevant); capping keeps the Hessian well scaled.
pub const ALPHA_MAX: f64 = 1e8;

/// Smallest noise precision β (scaled target units). β below this means a
/// noise sd above 10 target ranges: the fit has failed.
pub const BETA_MIN: f64 = 1e-2;

/// Largest noise precision β (scaled target units): a noise sd of 1e-5 of
/// the target range, far below any laboratory's repeatability.
pub const BETA_MAX: f64 = 1e10;

/// Smallest number of data degrees of freedom N − γ allowed in the β update,
/// as a fraction of N. Stops β from running away when γ approaches N.
pub const MIN_RESIDUAL_DOF_FRACTION: f64 = 0.05;

/// Largest leverage h_n = β·ρ_n·g_nᵀA⁻¹g_n used in the residual
/// correction u_n = r_n²/(1 − h_n) of the noise network, so that a row the
/// mean fits almost exactly does not get an unbounded u_n.
pub const LEVERAGE_CAP: f64 = 0.9;

/// Bound on |ln σ²(x)| (scaled target units, relative to 1/β) when a noise
/// network's output becomes a precision weight: e^30 is far beyond any
/// real spread of scatter and keeps the weights finite.
pub const LOG_VAR_LIMIT: f64 = 30.0;

/// A group whose well-determined parameter count γ_c is below this is not
/// used to judge convergence of α: its α may wander without consequence.
pub const GAMMA_ACTIVE: f64 = 0.05;

/// Relative change in β, in total γ and in α of active groups below which
/// the re-estimation cycles are considered settled.
pub const HYPER_REL_TOL: f64 = 0.01;

/// Gradient-norm tolerance of the inner minimisation, on the per-row
/// objective M(w)/N in scaled units.
pub const GRAD_TOL: f64 = 1e-7;

/// Relative cost change tolerance of the inner minimisation.
pub const COST_TOL: f64 = 1e-12;

/// Relative jitter added to the diagonal before the eigenvalue fallback
/// clamps a Hessian that Cholesky refused.
pub const EIGEN_FLOOR_REL: f64 = 1e-10;

/// Smallest predictive variance (scaled units) ever reported, so that a
/// degenerate member cannot produce an infinite log density.
pub const VAR_FLOOR: f64 = 1e-12;

/// Gradient norm at which the search for the residual process's
/// hyperparameters stops (natural-log parameters).
pub const KRIGING_GRAD_TOL: f64 = 1e-6;

/// Change of the negative log posterior (nats, summed over the rows) below
/// which the residual process's hyperparameter search stops.
pub const KRIGING_COST_TOL: f64 = 1e-4;

/// Added to the diagonal of the residual process's kernel matrix so that
/// its Cholesky factor exists even when rows coincide (scaled units).
pub const KRIGING_JITTER: f64 = 1e-10;

/// Skewness above which a strictly positive input is modelled on a log
/// scale (decided on the training data only).
pub const LOG_SKEW_THRESHOLD: f64 = 2.0;

/// Step of the central finite differences used by the derivative checks in
/// the tests.
pub const FD_STEP: f64 = 1e-6;

/// Half-width, in standard deviations, of the range over which the mean and
/// sd of a back-transformed target are integrated: the Gaussian weight
/// beyond 8 sd is below 1e-15.
pub const QUADRATURE_HALF_WIDTH: f64 = 8.0;

/// Step, in standard deviations, of that trapezoidal rule; for a smooth
/// integrand its error falls like exp(−2π²/h²), far below 1e-12 here.
pub const QUADRATURE_STEP: f64 = 1.0 / 16.0;

/// Default widening of a bounded target's interval on each side, as a
/// share of the interval: values on the bounds (0 % or 100 % shear) then
/// sit about ln(101) ≈ 4.6 from the centre of the logit scale instead of at
/// infinity. Common practice, no source.
pub const BOUNDED_MARGIN_DEFAULT: f64 = 0.01;

/// Slack allowed when the elements of a row are summed against 100 wt%:
/// rounding of published analyses, not a physical allowance.
pub const COMPOSITION_SUM_SLACK: f64 = 1e-9;

/// Robust z-score above which a value is reported as an outlier
/// (Iglewicz & Hoaglin 1993, *How to Detect and Handle Outliers*, ASQC,
/// with z = 0.6745·(x − median)/MAD).
pub const ROBUST_Z_OUTLIER: f64 = 3.5;

/// |Pearson r| from which two inputs are reported as strongly correlated:
/// their separate effects can then hardly be told apart. Common practice,
/// no source.
pub const STRONG_CORRELATION: f64 = 0.95;

/// An input with fewer distinct values than this is reported: a network
/// learns little about the shape of an effect from so few levels. Common
/// practice, no source.
pub const FEW_DISTINCT_VALUES: usize = 4;

/// An input whose values are all integers with this many distinct values
/// (inclusive range) gets the hint that, if it is a code, it should be
/// declared one (schema `kind = "levels"`): two levels are already an
/// indicator, and more than eight are rarely a code. The rule picks exactly
/// energy's two codes among the four shared UCI sets' inputs (issue 29,
/// docs/benchmarks.md "Fourth round"); otherwise common practice, no source.
pub const CODE_HINT_LEVELS: (usize, usize) = (3, 8);

/// |z| beyond which `evaluate` lists a measured value as out of line with
/// its estimate: outside about 98.8 % of a Gaussian predictive distribution,
/// so about 1 row in 80 of an honest model is listed by chance. Common
/// practice, no source.
pub const OUT_OF_LINE_Z: f64 = 2.5;

/// An input whose correlation with an earlier input is this close to ±1 is
/// a copy or a linear restatement of it (the same quantity in other units,
/// or a sum that repeats a column): it is set aside, as it carries nothing
/// the earlier column does not. Printed decimals of an exact linear map
/// leave |r| within about 1e-15 of 1; a measured quantity stays far from
/// 1e-9 of it.
pub const COLLINEAR_ONE_MINUS_R: f64 = 1e-9;

/// Neighbours counted by the joint-domain check: the distance from a query
/// to its k-th nearest training row (whitened scaled inputs). Measured on
/// the shared concrete data for k = 1, 2, 3, 5, 8 at equal false flags,
/// k = 1 detected the most holes (docs/domain.md); a single stray training
/// row can vouch for its surroundings, which the support count shows.
pub const DOMAIN_K: usize = 1;

/// Quantile of the training rows' own (leave-one-out) k-NN distances that
/// serves as the reference distance D of the joint-domain check.
pub const DOMAIN_REFERENCE_QUANTILE: f64 = 0.99;

/// A query is outside the joint domain when its k-NN distance exceeds
/// this multiple of D: at 1, when it is farther from the training data
/// than 99 % of the training rows are from the rest. Checked on the
/// held-out rows of the shared concrete data (under 1 % flagged,
/// docs/domain.md).
pub const DOMAIN_DISTANCE_FACTOR: f64 = 1.0;

/// The relevance-weighted distance from a row to its nearest training row
/// (range-widths of a fully relevant input, `domain::near`) beyond which
/// the row is outside, unless the training rows' own 99th percentile of
/// that distance is larger: a gap of a fifth of carbon's whole range, or
/// the same spread over several relevant inputs. Real archives are
/// clusters of grades with tight replicates, whose own nearest-neighbour
/// spacing is far smaller than a grade's tolerance; this floor keeps a
/// step of a grade tolerance in one or two elements (under a tenth of the
/// range in the generated archives of tests/domain_clustered.rs) from
/// being called an extrapolation, while a point midway between distant
/// grades is one. Set on those generated archives.
pub const DOMAIN_FAR_FLOOR: f64 = 0.2;

/// An input whose effect on some target (the committee's sensitivity to
/// it over the training rows) is at least this share of the strongest
/// input's counts in full in the relevance-weighted distance; weaker ones
/// count in proportion, so an input the networks ignore adds next to
/// nothing. Set on the generated archives of tests/domain_clustered.rs.
pub const DOMAIN_RELEVANT_SHARE: f64 = 0.2;

/// Share of the outside distance ([`DOMAIN_FAR_FLOOR`] or the training
/// rows' own percentile) beyond which a row is thinly supported.
pub const DOMAIN_THIN_SHARE_OF_FAR: f64 = 0.5;

/// A hole in the projection on two inputs puts a row outside only when
/// both inputs have at least this relevance (most relevant = 1); a hole
/// involving an input the networks make little use of marks thin support.
pub const DOMAIN_PAIR_MIN_RELEVANCE: f64 = 0.1;

/// The committee's model sd at a row over its 99th percentile on the
/// training rows above which the row is outside: the networks disagree or
/// are unsure far beyond their usual (above the percentile itself the row
/// is thinly supported).
pub const DOMAIN_SD_OUT: f64 = 2.0;

/// Quantile of the training rows' own leave-one-out relevance-weighted
/// nearest distances above which (and above [`DOMAIN_THIN_SHARE_OF_FAR`] of
/// the outside distance) a row is thinly supported: about one new row in
/// ten drawn like the training rows.
pub const DOMAIN_THIN_QUANTILE: f64 = 0.9;

/// A value beyond its input's training range by no more than this share of
/// the range is noted but does not by itself put the row out of domain
/// (rounding in the records, a test row a hair past the last training row).
pub const DOMAIN_RANGE_SLACK: f64 = 0.02;

/// Floor of the covariance eigenvalues in the joint-domain metric, relative
/// to the largest: keeps the whitening finite for an input that is an exact
/// combination of others.
pub const DOMAIN_EIGEN_FLOOR: f64 = 1e-6;

/// Block radius of the pair check, in cells: a query is judged by the
/// (2r + 1) × (2r + 1) cells around its own in each two-input projection,
/// so that a training row just across a cell edge, or on a discrete level
/// within a cell of the query, still vouches for it. With r = 1 an empty block means
/// no training row within one cell of the query in both inputs of the
/// pair. On the shared concrete data r = 2 with cells half as wide flagged
/// more held-out rows (1.8 % against 1.4 %; docs/domain.md).
pub const DOMAIN_PAIR_RADIUS: usize = 1;

/// Rows a pair-check cell would hold on average if the training rows
/// spread evenly over a pair's square; sets the cells per input from the
/// row count, G = ⌊√(n / c)⌋ (`domain::pair_cells`). On the shared
/// concrete data (about 900 distinct training rows, G = 13) the pair check
/// adds 0.3 % of held-out rows to the false flags; a finer grid, G = 16,
/// passes the 2 % limit (2.2 %; docs/domain.md).
pub const DOMAIN_PAIR_ROWS_PER_CELL: f64 = 5.0;

/// Most cells per input of the pair check: bounds the model file (one bit
/// per cell and pair, so 64 words per pair at most).
pub const DOMAIN_PAIR_MAX_CELLS: usize = 64;

/// Rows read, estimated and written at a time when a table is streamed
/// through a model (`mettle predict`). Memory grows with the batch: a CSV
/// batch is held as text cells (about 60 bytes per cell with the
/// allocator's overhead), so 50 000 rows of 20 columns take some 60 MB,
/// plus the estimates and their notes. Throughput hardly changes above a
/// few thousand rows (the committee predicts in blocks of 4096 rows);
/// docs/benchmarks.md measures the whole.
pub const PREDICT_BATCH_ROWS: usize = 50_000;

/// Most distinct training rows the joint-domain check keeps (a seeded
/// random sample stands for more). Its build costs n² distances and every
/// query n, and the model file stores 2 n rows: at 100 000 training rows of
/// 30 inputs that would be 10¹⁰ distances and some 110 MB of JSON. At this
/// cap a 30-input model stores about 6 MB for the check and a query costs
/// 150 000 multiply-adds. Both the query's and the reference distance are
/// measured against the same sample, so the ratio d_k(x)/D keeps its
/// calibration; the pair check still sees every row. Models trained on
/// fewer rows (all the bundled and benchmark ones) are unchanged.
pub const DOMAIN_REFERENCE_MAX_ROWS: usize = 5_000;

/// Seed of the sample of [`DOMAIN_REFERENCE_MAX_ROWS`] rows.
pub const DOMAIN_REFERENCE_SEED: u64 = 0x6d65_7474_6c65;

/// Queries whose distances to the training rows are screened by one matrix
/// product in the joint-domain check (`domain::DomainIndex`): the product
/// holds this many rows times the reference's rows (at most 256 × 5 000
/// values, 10 MB, per thread).
pub const DOMAIN_QUERY_BLOCK: usize = 256;

/// Bound on the rounding error of a squared distance screened as
/// ‖q‖² + (‖r‖² − 2 q·r), relative to ‖q‖² + max ‖r‖² over the training
/// rows. The norms and the inner product over d inputs, and the two sums,
/// are off by at most (2d + 5)·u times that (u = 2⁻⁵³; inner-product bound
/// γ_d = d·u / (1 − d·u), Higham 2002, *Accuracy and Stability of
/// Numerical Algorithms*, 2nd ed., §3.1, with 2|q·r| ≤ ‖q‖² + ‖r‖²), so
/// this bound holds for fewer than 400 000 inputs. It only widens the
/// screen: every distance that decides a verdict is then summed exactly as
/// before.
pub const DOMAIN_SCREEN_SLACK: f64 = 1e-10;

/// Most EM steps of the gross-error share (committee::gross_errors). Each
/// step costs one pass over the held-out rows.
pub const GROSS_ERROR_EM_ITERS: usize = 5000;

/// Change of the held-out mean log-likelihood (nats per row) below which
/// the gross-error share's EM stops.
pub const GROSS_ERROR_EM_TOL: f64 = 1e-13;

/// Largest share of gross errors admitted: data with more
/// than a quarter of their values unrelated to the inputs are not
/// described by a regression at all.
pub const GROSS_ERROR_SHARE_MAX: f64 = 0.25;

/// Share of gross errors the EM starts from.
pub const GROSS_ERROR_SHARE_START: f64 = 0.01;

/// Degrees of freedom of the Student-t shapes tried on the held-out part
/// besides the Gaussian (committee::tails): from heavy (ν = 3, the
/// smallest integer with a finite variance) to nearly Gaussian (ν = 50,
/// whose central 68.27 % interval is ±0.99 sd).
pub const TAIL_DOF_GRID: [f64; 7] = [3.0, 4.0, 5.0, 7.0, 10.0, 20.0, 50.0];

/// What a Student-t shape must gain over the Gaussian in held-out log
/// posterior, in nats summed over the held-out rows, to be chosen: its one
/// parameter more, counted as Akaike's criterion counts it (Akaike 1974,
/// "A new look at the statistical model identification", IEEE Trans.
/// Automatic Control 19:716–723). On Gaussian scatter a t is then chosen
/// by chance in under one case in ten (½·P(χ²₁ > 2) = 0.08).
pub const TAIL_SHAPE_PENALTY_NATS: f64 = 1.0;

/// Factors other than 1 on the model part of the predictive variance tried
/// on the held-out part (committee::gross_errors, "Calibration of the
/// model variance"): 2^(k/2) for k = −8 … 4, k ≠ 0, from 1/16 to 4, steps
/// of √2 in variance (19 % in sd).
pub const MODEL_VAR_SCALE_GRID: [f64; 12] = [
    0.0625,
    std::f64::consts::FRAC_1_SQRT_2 / 8.0,
    0.125,
    std::f64::consts::FRAC_1_SQRT_2 / 4.0,
    0.25,
    std::f64::consts::FRAC_1_SQRT_2 / 2.0,
    0.5,
    std::f64::consts::FRAC_1_SQRT_2,
    std::f64::consts::SQRT_2,
    2.0,
    2.0 * std::f64::consts::SQRT_2,
    4.0,
];

/// What a factor on the model variance other than 1 must gain in held-out
/// log posterior, in nats summed over the n held-out rows, per ln n: the
/// penalty ½·ln n of one parameter more in Schwarz's criterion (Schwarz
/// 1978, "Estimating the dimension of a model", Annals of Statistics
/// 6:461–464) — stricter than the 1 nat of the shape, since the factor is
/// picked from a grid of 12 and the held-out parts of small archives
/// (≈ 200 rows) move it by chance; a systematic miscalibration over a few
/// hundred rows gains tens of nats.
pub const MODEL_VAR_SCALE_PENALTY_PER_LN_ROW: f64 = 0.5;

/// Smallest responsibility a row keeps in a refit under the contamination
/// model: a row is never weighted out entirely, so that ln r_n and the
/// weighted Hessian stay finite.
pub const RESPONSIBILITY_FLOOR: f64 = 1e-9;

/// A paired difference between two models (compare) is called shown when
/// it exceeds this many standard errors: about the two-sided 95 % level of
/// a normal (common practice, no source).
pub const PAIRED_SHOWN_SE: f64 = 2.0;

/// Training RMSE / fitted noise sd below which the card notes likely
/// overfitting: at the evidence optimum the ratio is √(1 − γ/N), so 0.7
/// means γ/N above ½ (explain::fit). On invented data with a known noise sd
/// well-specified committees gave ratios of 0.97 to 1.02 (docs/insight.md).
pub const FIT_RMSE_RATIO_MIN: f64 = 0.7;

/// Held-out NLPD minus training NLPD (nats per row) above which the card
/// notes likely overfitting (explain::fit); the expected gap of a
/// well-specified model is about γ/N.
pub const FIT_NLPD_GAP_MAX: f64 = 0.5;

/// Training RMSE / repeat tests' pooled sd above which the card notes
/// likely underfitting (explain::fit).
pub const FIT_REPLICATE_RATIO_MAX: f64 = 1.5;

/// Degrees of freedom the repeat tests need before the underfitting note
/// is judged (explain::fit).
pub const FIT_REPLICATE_DOF_MIN: usize = 20;

/// Points of the grid on which a column's kernel density is read for its
/// modes (data::modes).
pub const MODE_GRID: usize = 512;

/// A dip in a column's kernel density separates two modes when it falls
/// below this share of the lower of the two peaks (data::modes). Two equal
/// normal modes of sd σ dip to 0.5 of a peak when their means lie about
/// 3.3σ apart, σ that of the kernel estimate (the data's widened by the
/// bandwidth): a clear valley, not a shoulder (arithmetic on the normal
/// density: 2φ(1.65)/(φ(0) + φ(3.3)) ≈ 0.5).
pub const MODE_VALLEY_SHARE: f64 = 0.5;

/// Fewest values a group of a column needs to count as a mode
/// (data::modes), or [`MODE_MIN_SHARE`] of the values when that is more:
/// a handful of equal slips must not make a mode of their own.
pub const MODE_MIN_ROWS: usize = 8;

/// Smallest share of a column's values that can form a mode.
pub const MODE_MIN_SHARE: f64 = 0.02;
/// Largest edit distance at which a column name of 5 letters or more is
/// offered as "did you mean" for a name not found: two slips (a swapped
/// pair counts one). Common practice, no source.
pub const SUGGEST_MAX_EDITS: usize = 2;

/// Fewest training rows with two targets measured together for their
/// scatter correlation to be estimated and used in a joint probability;
/// with fewer, the requirements are taken as independent and the output
/// says so (the sd of a sample correlation near 0 is about 1/√n: 0.3 at 10
/// rows).
pub const JOINT_MIN_ROWS: usize = 10;

/// Samples of the Monte-Carlo joint probability of more than two
/// correlated requirements (`screen::joint`): a standard error of at most
/// 0.0035.
pub const JOINT_MC_SAMPLES: usize = 20_000;

/// Seed of those samples: the same joint probability on every run.
pub const JOINT_MC_SEED: u64 = 0x006a_6f69_6e74;

/// Largest relative error the fast prediction path allows in a row's sd
/// (the total and the committee's own, the domain guard's signal): every
/// row carries a computed bound on its error, and a row whose bound is
/// above this goes the exact way (committee::fast). The goal was
/// "within 1 % of the exact sd"; half of that leaves room for the domain
/// guard's thresholds, which read the committee's sd.
pub const FAST_SD_TOL: f64 = 0.005;

/// Share of the calibration rows on which a member's low-rank posterior
/// must meet [`FAST_SD_TOL`] for its rank to be chosen; the rest go the
/// exact way when met at prediction time.
pub const FAST_CALIBRATION_SHARE: f64 = 0.99;

/// Rows per block of the fast prediction path, each block one task for a
/// core: the members' Jacobians (rows × k) and the process's distances
/// (rows × N) stay within a core's cache.
pub const FAST_BLOCK_ROWS: usize = 256;

/// The rungs of the candidate search's successive halving (issue 28
/// item 1): after `cycles` evidence cycles every candidate still running
/// is scored on the held-out part (mean NLPD of its network as it stands),
/// and only the best `keep_share` of the batch (at least
/// [`SEARCH_KEEP_MIN`]) are continued to the end; the others are recorded
/// as stopped. Successive halving: Jamieson & Talwalkar (2016), "Non-
/// stochastic best arm identification and hyperparameter optimization",
/// AISTATS, PMLR 51:240–248; Li et al. (2018), "Hyperband", JMLR
/// 18(185):1–52.
///
/// Measured on the training rows of split 0 of concrete and energy (held-
/// out part only, 60 candidates each, docs/benchmarks.md "Training twice as
/// fast"): a network's rank after 8 cycles put the final best four of
/// concrete at ranks 1, 3, 4 and 7; after 3 cycles the rank is noisier,
/// hence the gentle first cut. Under the default 20-cycle cap (which the
/// candidates nearly always reach) a candidate costs about 0.23 of a full
/// fit up to cycle 3 (the first cycle has 300 optimiser iterations, the
/// others 100), 0.23 more up to cycle 8 and 0.55 to the end, so a batch of
/// 40 costs about 9 + 20·0.23 + 10·0.55 ≈ 19 full fits instead of 40.
pub const SEARCH_RUNGS: [(usize, f64); 2] = [(3, 0.5), (8, 0.25)];

/// Fewest candidates of a batch continued past a rung of
/// [`SEARCH_RUNGS`]: enough for the varying-noise pool (4) and the usual
/// committee sizes (1–6 members on the shared UCI sets) with room for a
/// rank that changes late.
pub const SEARCH_KEEP_MIN: usize = 8;

/// Most rows the candidate search works on (issue 28 item 2): on a larger
/// table the training part and the held-out part are drawn from a seeded
/// sample of this many rows, and the chosen members alone are refitted on
/// every row. The search's cost grows with its rows times its 40–60
/// candidates, the refit's with all the rows times the few members; what
/// the sample costs in accuracy is measured in docs/benchmarks.md ("Large
/// archives"). Tables up to this size are searched on every row, as
/// before.
pub const SEARCH_MAX_ROWS: usize = 4_000;

/// Rows per block when a network's Gauss–Newton matrix JᵀJ is summed over
/// more rows than this: the Jacobian (rows × weights) is then formed one
/// block at a time and the blocks' products added in order, so that memory
/// stays bounded (100 000 rows × 641 weights would be 513 MB at once).
/// Up to this many rows the single product of earlier versions is kept, and
/// with it every model trained on them bit for bit.
pub const JACOBIAN_BLOCK_ROWS: usize = 8_192;

/// Tables with more rows than this are "large" (issue 28 item 2): the
/// chosen members' refit on all rows uses a Gauss–Newton matrix from a row
/// sample ([`GAUSS_NEWTON_SAMPLE_ROWS`]) and at most
/// [`LARGE_REFIT_MAX_CYCLES`] evidence cycles. Twice
/// [`JACOBIAN_BLOCK_ROWS`], well above the four shared UCI sets (the
/// largest, red wine, has 1 599 rows) and the bundled model's 840 rows, so every
/// table up to here trains exactly as before, bit for bit.
pub const LARGE_TABLE_ROWS: usize = 16_384;

/// Rows of the seeded sample the Gauss–Newton matrix JᵀJ (and with it A,
/// γ, ln|A| and the Laplace covariance) is formed from when a large table
/// ([`LARGE_TABLE_ROWS`]) is refitted: JᵀJ ≈ (N/m)·Σ_{n∈S} J_nᵀJ_n with
/// m = |S|, an unbiased estimate of the sum over all N rows, while the
/// gradient of M, E_D and β's update still use every row. Curvature from a
/// subsample and gradients from all rows is the subsampled-Hessian scheme
/// of Byrd, Chin, Neveitt & Nocedal (2011), "On the use of stochastic
/// Hessian information in optimization methods for machine learning",
/// SIAM J. Optim. 21(3):977–995, here with one fixed sample for the whole
/// fit so that the hyperparameter iteration has a fixed point. The
/// forming of JᵀJ (k² products a row) was 80 % of a 100 000-row refit; at
/// m = 8 192 (one Jacobian block) it costs what a table of that size
/// costs. The error it brings to the error bars is measured on a synthetic
/// archive in docs/benchmarks.md ("Large archives: the refit's
/// approximations").
pub const GAUSS_NEWTON_SAMPLE_ROWS: usize = JACOBIAN_BLOCK_ROWS;

/// Evidence cycles allowed in the refit of a large table
/// ([`LARGE_TABLE_ROWS`]). The refit is warm-started from the weights, α
/// and β the search's fit on the 4 000-row sample ended with, whose
/// hyperparameters had settled to within a few per cent (β drifts about
/// 1 % a cycle by cycle 20); each cycle passes over every row about a
/// hundred times (the L-BFGS iterations), which is the refit's cost once
/// JᵀJ comes from a sample. A choice, not a published value: its cost in
/// accuracy is measured in docs/benchmarks.md beside the sample's.
pub const LARGE_REFIT_MAX_CYCLES: usize = 6;

/// Evidence cycles allowed in each EM round but the last when a large
/// table ([`LARGE_TABLE_ROWS`]) is refitted under a share of gross errors
/// (and in each noise round but the last under varying noise); the last
/// round gets [`LARGE_REFIT_MAX_CYCLES`]. The early rounds only move the
/// responsibilities r_n, which change little once the weights are near
/// the search's (the share itself was estimated on the held-out part), so
/// 2 + 2 + 6 cycles replace the 6 + 6 + 6 of the rounds and the 6 of the
/// Gaussian refit before them, which a large table skips
/// (committee::refit). A choice, not a published value: its cost in
/// accuracy is measured in docs/benchmarks.md ("Large archives: fewer
/// refit passes, and both cores").
pub const LARGE_EARLY_ROUND_CYCLES: usize = 2;

/// Rows per block when the gradient of M over more than
/// [`LARGE_TABLE_ROWS`] rows is summed: the blocks' values and gradients
/// are formed in parallel and added in row order, so that one network's
/// fit uses every core and its result does not depend on the number of
/// threads. Up to [`LARGE_TABLE_ROWS`] rows the single pass of earlier
/// versions is kept, bit for bit.
pub const GRADIENT_BLOCK_ROWS: usize = JACOBIAN_BLOCK_ROWS;

/// The varying-noise combination is chosen over the best constant-noise one
/// only when its held-out score is lower by more than this many standard
/// errors of the paired per-row difference: the one-standard-error rule
/// (Breiman, Friedman, Olshen & Stone 1984, *Classification and Regression
/// Trees*, §3.4.3; Hastie, Tibshirani & Friedman 2009, *The Elements of
/// Statistical Learning*, §7.10), the simpler noise model kept on a tie.
pub const NOISE_PARSIMONY_SE: f64 = 1.0;

/// The committee's model part is taken times ρ beside the residual process
/// (committee::kriging, "The committee's model part beside the process")
/// only when that lowers the held-out Gaussian NLPD by more than this many
/// standard errors of the paired per-row difference; else it is kept
/// whole: the one-standard-error rule as for [`NOISE_PARSIMONY_SE`]
/// (Breiman et al. 1984, §3.4.3; Hastie et al. 2009, §7.10).
pub const MODEL_PART_PARSIMONY_SE: f64 = 1.0;

/// The held-out part shows the committee's bands too wide (the first
/// condition for taking its model part times ρ beside the process;
/// committee::residual) when, under honest Gaussian bands, a sum of
/// squared standardised errors as small as the one seen has less than this
/// probability: the lower 2.5 % tail of χ²_n, one side of the usual
/// two-sided 5 % test of a variance (Rice 2007, §6.3, from memory).
pub const MODEL_PART_TOO_WIDE_P: f64 = 0.025;

/// Held-out rows needed before the held-out part may take the committee's
/// model part times ρ beside the residual process (committee::residual).
/// The same held-out rows rank the candidates and size the committee, so
/// they are optimistic about its error; the best of C candidates' mean
/// score on n rows is too good by about sd·√(2 ln C / n) (the expected
/// maximum of C standard normals, √(2 ln C); Cramér 1946, §28.6, from
/// memory), which with C = 40 is 0.37 sd on yacht's ~55 held-out rows
/// but 0.12 sd on 500. On yacht's inner cross-validation the held-out
/// part took ρ on most folds and the bands came out too narrow
/// (coverage_95 0.90 against 0.93; docs/benchmarks.md, "Calibration when
/// the noise is tiny"); none of the four shared UCI sets reaches 500
/// held-out rows (red wine: 288), a 12 000-row archive does (800).
pub const MODEL_PART_MIN_HELDOUT: usize = 500;

/// Default error correlation ρ between the model errors of the whole
/// trainings a committee averages under the `correlated` partition-variance
/// rule (`--partitions` K > 1, `--partition-correlation`;
/// committee::params::PartitionVariance). ρ = 0 takes the trainings'
/// model errors as independent (the average's model variance u/K), ρ = 1 as
/// one error repeated (the `mixture` rule; `within` where the trainings
/// agree).
/// The midpoint of the range, not a calibrated value: measured in session
/// 19 (docs/benchmarks.md, "Seventh round"), the trainings' errors correlate
/// at 0.1–0.9 inside the training rows of the four shared sets, and no
/// constant ρ kept the near-noiseless bands calibrated on every layout
/// tried, so the rule is an option and the default stays one partition.
/// Never chosen on the reported test splits.
pub const PARTITION_CORRELATION: f64 = 0.5;
