//! K-fold cross-validation of the whole training procedure: how good a
//! model trained this way is on rows it has not seen.
//!
//! # Method
//!
//! The rows are split into K folds ([`folds`]; a heat tested several times
//! stays in one fold when a group column is named). For each fold a model
//! is trained, with exactly the settings `train` would use, on the other
//! K − 1 folds, and estimates the held-out fold's rows; every row is thus
//! estimated once per repeat by a model that never saw it (Stone 1974,
//! J. R. Stat. Soc. B 36:111). The candidate search, committee choice and
//! every other choice happen inside each fold's training rows, so nothing
//! is tuned on the rows being scored. Per target the out-of-fold rows give
//! the pooled RMSE, MAE, R², NLPD and coverages ([`pool`]) with standard
//! errors over folds, the calibration curve, the input relevance of each
//! fold's committee (its spread says how settled the ranking is) and the
//! estimate of every row.

pub mod folds;
pub mod pool;

use serde::{Deserialize, Serialize};

use crate::data::schema::Schema;
use crate::data::Table;
use crate::error::{Error, Result};
use crate::explain::{
    estimate_rows, label, relevance, relevance_over, CalibrationPoint, RelevanceRange, TargetRows,
};
use crate::metrics::Evaluation;
use crate::model::{Model, SchemaTrainOptions, TrainSpec};
use crate::observer::{TrainEvent, TrainObserver};

pub use folds::{assign_folds, group_indices, repeat_seed};
pub use pool::{figure, pool, pool_calibration, Figure};

/// How each fold's model is trained: as `train` would.
#[derive(Clone, Copy, Debug)]
pub enum Recipe<'a> {
    /// Named columns ([`Model::train`]).
    Columns(&'a TrainSpec),
    /// Through a schema ([`Model::train_with_schema`]).
    Schema {
        /// The schema.
        schema: &'a Schema,
        /// Its name in messages.
        name: &'a str,
        /// Training options.
        options: &'a SchemaTrainOptions,
    },
}

impl Recipe<'_> {
    fn train(&self, table: &Table, observer: &dyn TrainObserver) -> Result<Model> {
        match self {
            Recipe::Columns(spec) => Model::train(table, spec, observer),
            Recipe::Schema {
                schema,
                name,
                options,
            } => Model::train_with_schema(table, schema, name, options, observer).map(|(m, _)| m),
        }
    }
}

/// Settings of a cross-validation.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct CvOptions {
    /// Folds K (at least 2).
    pub n_folds: usize,
    /// Repeats with a new partition (at least 1).
    pub n_repeats: usize,
    /// Seed of the partitions.
    pub seed: u64,
    /// Column whose equal values must stay in one fold.
    pub group: Option<String>,
}

impl Default for CvOptions {
    fn default() -> Self {
        CvOptions {
            n_folds: 10,
            n_repeats: 1,
            seed: 0,
            group: None,
        }
    }
}

/// One fold's score.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct FoldScore {
    /// Repeat, 1-based.
    pub repeat: usize,
    /// Fold, 1-based.
    pub fold: usize,
    /// Rows the fold's model was trained on (all targets).
    pub n_train: usize,
    /// The held-out rows' evaluation.
    pub evaluation: Evaluation,
}

/// One row's out-of-fold estimate.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct OutOfFold {
    /// Row of the data file, 1-based (header not counted).
    pub row: usize,
    /// Repeat, 1-based.
    pub repeat: usize,
    /// Fold the row was held out in, 1-based.
    pub fold: usize,
    /// Measured value.
    pub measured: f64,
    /// Estimate by the model that did not see the row.
    pub mean: f64,
    /// Its predictive sd.
    pub sd: f64,
    /// Lower end of the central 95 % interval.
    pub lo95: f64,
    /// Upper end.
    pub hi95: f64,
    /// The domain verdict of that model.
    pub in_domain: bool,
}

/// One target's cross-validated figures.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct TargetValidation {
    /// Target name.
    pub target: String,
    /// Axis label with the unit.
    pub label: String,
    /// Rows with a measured value (each estimated once per repeat).
    pub n: usize,
    /// Pooled out-of-fold figures with standard errors over folds.
    pub rmse: Figure,
    /// Mean absolute error.
    pub mae: Figure,
    /// Coefficient of determination.
    pub r2: Figure,
    /// Mean negative log predictive density (nats per point).
    pub nlpd: Figure,
    /// Share inside the central 68.27 % interval.
    pub coverage_68: Figure,
    /// Share inside the central 95.45 % interval.
    pub coverage_95: Figure,
    /// Every fold's score.
    pub folds: Vec<FoldScore>,
    /// Calibration curve of the out-of-fold rows.
    pub calibration: Vec<CalibrationPoint>,
    /// Input relevance over the folds' committees: median and range;
    /// `None` without ARD.
    pub relevance: Option<Vec<RelevanceRange>>,
    /// Every row's out-of-fold estimate, by repeat then row.
    pub rows: Vec<OutOfFold>,
}

/// The result of a cross-validation.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Validation {
    /// Data file.
    pub data_file: String,
    /// Rows of the file.
    pub n_rows: usize,
    /// Folds.
    pub n_folds: usize,
    /// Repeats.
    pub n_repeats: usize,
    /// Seed of the partitions.
    pub seed: u64,
    /// Group column, when rows were grouped.
    pub group: Option<String>,
    /// Groups of rows (= rows without a group column).
    pub n_groups: usize,
    /// Per target.
    pub targets: Vec<TargetValidation>,
}

/// What one target gathers over the folds.
#[derive(Default)]
struct Gathered {
    label: String,
    inputs: Vec<String>,
    folds: Vec<FoldScore>,
    curves: Vec<Vec<CalibrationPoint>>,
    relevance: Vec<Vec<f64>>,
    no_ard: bool,
    rows: Vec<OutOfFold>,
}

/// Group key of every row: the group column's text, or none.
fn group_keys(table: &Table, group: Option<&str>) -> Result<Vec<Option<String>>> {
    let Some(name) = group else {
        return Ok(vec![None; table.n_rows()]);
    };
    let i = table
        .index_of(name)
        .ok_or_else(|| table.missing_column(name))?;
    Ok((0..table.n_rows())
        .map(|r| table.cell_text(i, r).filter(|s| !s.trim().is_empty()))
        .collect())
}

/// Add one fold's estimates to what each target gathered.
fn gather(
    g: &mut [Gathered],
    model: &Model,
    est: &[TargetRows],
    held: &[usize],
    score: (usize, usize, usize),
) {
    let (repeat, fold, n_train) = score;
    for ((acc, t), rows) in g.iter_mut().zip(&model.targets).zip(est) {
        if acc.label.is_empty() {
            acc.label = label(&t.name, model.target_unit(&t.name, false));
            acc.inputs = model.input_names().iter().map(|s| s.to_string()).collect();
        }
        if let Some(evaluation) = rows.evaluation() {
            acc.folds.push(FoldScore {
                repeat,
                fold,
                n_train,
                evaluation,
            });
            acc.curves.push(rows.calibration());
        }
        match relevance(&t.committee) {
            Some(r) => acc.relevance.push(r),
            None => acc.no_ard = true,
        }
        for (k, local) in rows.rows.iter().enumerate() {
            let e = &rows.estimates[k];
            acc.rows.push(OutOfFold {
                row: held[*local] + 1,
                repeat,
                fold,
                measured: rows.measured[k],
                mean: e.mean,
                sd: e.sd,
                lo95: e.lo95,
                hi95: e.hi95,
                in_domain: rows.in_domain[k],
            });
        }
    }
}

/// The figures of one target from what it gathered.
fn summarise(name: &str, mut g: Gathered, n_repeats: usize) -> TargetValidation {
    g.rows.sort_by_key(|r| (r.repeat, r.row));
    let mut pooled: Vec<Evaluation> = Vec::new();
    let mut per_fold: Vec<Vec<Evaluation>> = Vec::new();
    for r in 1..=n_repeats {
        let evals: Vec<Evaluation> = g
            .folds
            .iter()
            .filter(|f| f.repeat == r)
            .map(|f| f.evaluation.clone())
            .collect();
        let measured: Vec<f64> = g
            .rows
            .iter()
            .filter(|x| x.repeat == r)
            .map(|x| x.measured)
            .collect();
        if let Some(p) = pool(&evals, &measured) {
            pooled.push(p);
            per_fold.push(evals);
        }
    }
    let fig = |f: fn(&Evaluation) -> f64| {
        figure(
            &pooled.iter().map(f).collect::<Vec<f64>>(),
            &per_fold
                .iter()
                .map(|v| v.iter().map(f).collect())
                .collect::<Vec<Vec<f64>>>(),
        )
    };
    let relevance = (!g.no_ard && !g.relevance.is_empty()).then(|| {
        relevance_over(&g.relevance)
            .into_iter()
            .zip(&g.inputs)
            .map(|((value, low, high), input)| RelevanceRange {
                input: input.clone(),
                value,
                low,
                high,
            })
            .collect()
    });
    TargetValidation {
        target: name.to_string(),
        label: g.label,
        n: pooled.first().map_or(0, |p| p.n),
        rmse: fig(|e| e.rmse),
        mae: fig(|e| e.mae),
        r2: fig(|e| e.r2),
        nlpd: fig(|e| e.nlpd),
        coverage_68: fig(|e| e.coverage_68),
        coverage_95: fig(|e| e.coverage_95),
        folds: g.folds,
        calibration: pool_calibration(&g.curves),
        relevance,
        rows: g.rows,
    }
}

/// Cross-validate the training procedure `recipe` on `table`. Progress
/// goes to `observer`: [`TrainEvent::FoldStarted`] before each fold, then
/// the fold's training events.
///
/// # Errors
/// [`Error::InvalidParameter`] for fewer than 2 folds, more folds than
/// groups of rows, or no repeat; [`Error::MissingColumn`] for an unknown
/// group column; whatever training or estimation of a fold reports.
pub fn cross_validate(
    table: &Table,
    recipe: Recipe<'_>,
    options: &CvOptions,
    observer: &dyn TrainObserver,
) -> Result<Validation> {
    if options.n_repeats == 0 {
        return Err(Error::InvalidParameter {
            name: "repeats",
            value: "0".into(),
            expected: "at least 1".into(),
        });
    }
    let groups = group_indices(&group_keys(table, options.group.as_deref())?);
    let n_groups = groups.iter().max().map_or(0, |g| g + 1);
    let mut names: Vec<String> = Vec::new();
    let mut gathered: Vec<Gathered> = Vec::new();
    for r in 0..options.n_repeats {
        let fold_of = assign_folds(&groups, options.n_folds, repeat_seed(options.seed, r))?;
        for k in 0..options.n_folds {
            observer.observe(&TrainEvent::FoldStarted {
                repeat: r + 1,
                n_repeats: options.n_repeats,
                fold: k + 1,
                n_folds: options.n_folds,
            });
            let (held, train): (Vec<usize>, Vec<usize>) =
                (0..table.n_rows()).partition(|i| fold_of[*i] == k);
            let model = recipe.train(&table.select_rows(&train), observer)?;
            let est = estimate_rows(&model, &table.select_rows(&held))?;
            if gathered.is_empty() {
                names = model.targets.iter().map(|t| t.name.clone()).collect();
                gathered = names.iter().map(|_| Gathered::default()).collect();
            }
            gather(
                &mut gathered,
                &model,
                &est,
                &held,
                (r + 1, k + 1, train.len()),
            );
        }
    }
    Ok(Validation {
        data_file: table.source().display().to_string(),
        n_rows: table.n_rows(),
        n_folds: options.n_folds,
        n_repeats: options.n_repeats,
        seed: options.seed,
        group: options.group.clone(),
        n_groups,
        targets: names
            .iter()
            .zip(gathered)
            .map(|(name, g)| summarise(name, g, options.n_repeats))
            .collect(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::committee::{CommitteeParams, KrigingMode, NoiseMode};
    use crate::fixedmath::FixedMath;
    use crate::observer::Silent;
    use rand::SeedableRng;
    use rand_distr::{Distribution, Normal};
    use rand_xoshiro::Xoshiro256PlusPlus;

    /// y = sin(3 x₁) + 0.5 x₂ + ε, ε ~ N(0, 0.2²), 90 rows on [−1, 1]².
    fn synthetic(noise_sd: f64) -> Table {
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(31);
        let u = rand_distr::Uniform::new(-1.0, 1.0).expect("range");
        let e = Normal::new(0.0, noise_sd).expect("sd");
        let n = 90;
        let x1: Vec<f64> = (0..n).map(|_| u.sample(&mut rng)).collect();
        let x2: Vec<f64> = (0..n).map(|_| u.sample(&mut rng)).collect();
        let y: Vec<f64> = x1
            .iter()
            .zip(&x2)
            .map(|(a, b)| (3.0 * a).sin_fixed() + 0.5 * b + e.sample(&mut rng))
            .collect();
        Table::from_columns(
            "synthetic.csv",
            vec![("x1".into(), x1), ("x2".into(), x2), ("y".into(), y)],
        )
        .expect("table")
    }

    /// On data with a known noise sd the out-of-fold RMSE estimates it:
    /// a model that has learnt the function leaves only the noise (plus a
    /// small estimation error), so the RMSE must lie within 2 SE of σ
    /// (the definition of the noise; the data are drawn here with σ known).
    #[test]
    fn rmse_recovers_known_noise() {
        let sigma = 0.2;
        let table = synthetic(sigma);
        let mut spec = TrainSpec::new(&["y"]);
        spec.params = CommitteeParams::default()
            .hidden(2, 3)
            .restarts(1)
            .max_members(3)
            .noise(NoiseMode::Constant)
            .kriging(KrigingMode::Off)
            .seed(5);
        let opts = CvOptions {
            n_folds: 5,
            ..CvOptions::default()
        };
        let v = cross_validate(&table, Recipe::Columns(&spec), &opts, &Silent).expect("cv");
        let t = &v.targets[0];
        assert_eq!(t.n, 90);
        assert_eq!(t.folds.len(), 5);
        // every row estimated exactly once
        let mut rows: Vec<usize> = t.rows.iter().map(|r| r.row).collect();
        rows.sort_unstable();
        assert_eq!(rows, (1..=90).collect::<Vec<_>>());
        assert!(
            (t.rmse.value - sigma).abs() <= 2.0 * t.rmse.se,
            "rmse {} ± {} against σ = {sigma}",
            t.rmse.value,
            t.rmse.se
        );
        assert!(t.rmse.se > 0.0);
        let rel = t.relevance.as_ref().expect("ard");
        assert!(rel.iter().all(|r| r.low <= r.value && r.value <= r.high));
    }
}
