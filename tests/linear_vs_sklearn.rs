//! mettle's linear mode (`hidden 0..0`, one α for all input weights) against
//! scikit-learn's `BayesianRidge` on the diabetes data of Efron, Hastie,
//! Johnstone & Tibshirani (2004), "Least Angle Regression", Annals of
//! Statistics 32(2), as shipped in the crate `linfa-datasets` 0.8.1.
//!
//! Reference: `tests/data/bayesian_ridge_diabetes.json`, made once by
//! `tests/reference/bayesian_ridge_diabetes.py` (scikit-learn 1.9.1, numpy
//! 2.4.6, Python 3.11.7; see tests/reference/README.md).
//!
//! # Why the tolerances are what they are
//!
//! Both fit Bayesian linear regression by evidence maximisation on the same
//! [−0.5, 0.5]-scaled data. They differ in the intercept: sklearn centres
//! the data and leaves the intercept unpenalised; mettle keeps the output
//! bias as a parameter with its own prior (its own α, re-estimated by the
//! evidence like every other group). On this data that difference is not
//! small for the means. Worked out with numpy (the same evidence
//! fixed-point iteration on [1, X′], bias in its own group; run while
//! writing this test, the script is in the test report): the bias is
//! poorly determined apart from the weights (its posterior variance
//! 1.32e−3 exceeds its squared estimate 1.22e−3), so the evidence drives
//! α_bias → ∞, the bias → 0, and the weights absorb the constant. Against
//! sklearn such a model has
//!
//! - noise sd larger by 0.024 %,
//! - predictive sds different by at most 0.41 % (rows below),
//! - means different by at most 10.3 % of the noise sd (rows below).
//!
//! mettle stops its re-estimation once β, γ and the α of groups carrying
//! weight change by < 1 % (`prec::HYPER_REL_TOL`); the bias group, its γ
//! below `GAMMA_ACTIVE`, is not waited for, so mettle lands part of the
//! way (α_bias ≈ 1.5e4, bias ≈ −0.002 scaled, against sklearn's −0.036).
//! The tolerances below are those differences plus room for the 1 %
//! convergence rule.
//!
//! mettle's linear "committee" has one candidate: it is fitted on 80 % of
//! the rows (the other 20 % only rank candidates), then refitted on all
//! 442 rows from there. The reference is fitted on all 442 rows.

use mettle::committee::{CommitteeParams, NoiseMode};
use mettle::data::Table;
use mettle::model::TrainSpec;
use mettle::observer::Silent;
use mettle::Model;
use serde_json::Value;

/// The first row of `diabetes_data.csv.gz` / `diabetes_target.csv.gz` in
/// linfa-datasets 0.8.1. `linfa_datasets::diabetes()` reads those
/// header-less files with `has_headers = true`, so it returns 441 rows and
/// drops this one; the reference used all 442. Values are the file's, to
/// the shortest decimal that round-trips (numpy `repr`).
const FIRST_ROW_X: [f64; 10] = [
    0.0380759064334241,
    0.0506801187398187,
    0.0616962065186885,
    0.0218723549949558,
    -0.0442234984244464,
    -0.0348207628376986,
    -0.0434008456520269,
    -0.00259226199818282,
    0.0199084208763183,
    -0.0176461251598052,
];
const FIRST_ROW_Y: f64 = 151.0;

fn reference() -> Value {
    serde_json::from_str(include_str!("data/bayesian_ridge_diabetes.json")).expect("reference JSON")
}

fn floats(v: &Value) -> Vec<f64> {
    v.as_array()
        .expect("array")
        .iter()
        .map(|x| x.as_f64().expect("number"))
        .collect()
}

/// The 442 × 10 diabetes table with target `y`.
fn diabetes_table() -> Table {
    let ds = linfa_datasets::diabetes();
    let (x, y) = (ds.records(), ds.targets());
    // restore the row linfa-datasets 0.8.1 reads as a header (see above);
    // if a later version returns all 442 rows, use them as they are
    let restore = x.nrows() == 441;
    assert!(restore || x.nrows() == 442, "{} rows", x.nrows());
    let mut cols: Vec<(String, Vec<f64>)> = (0..10)
        .map(|j| {
            let mut v = if restore {
                vec![FIRST_ROW_X[j]]
            } else {
                vec![]
            };
            v.extend(x.column(j).iter());
            (format!("x{j}"), v)
        })
        .collect();
    let mut t = if restore { vec![FIRST_ROW_Y] } else { vec![] };
    t.extend(y.iter());
    cols.push(("y".into(), t));
    Table::from_columns("diabetes", cols).expect("table")
}

fn linear_model(table: &Table) -> Model {
    let mut spec = TrainSpec::new(&["y"]);
    spec.auto_log_inputs = false;
    // BayesianRidge has one Gaussian noise level, so the comparison is with
    // constant noise and without the share of gross errors (whose refit
    // weights rows by their responsibilities)
    spec.params = CommitteeParams::default()
        .hidden(0, 0)
        .ard(false)
        .noise(NoiseMode::Constant)
        .gross_errors(false)
        .heavy_tails(false);
    Model::train(table, &spec, &Silent).expect("linear fit")
}

#[test]
fn linear_mode_matches_bayesian_ridge_on_diabetes() {
    let r = reference();
    let table = diabetes_table();
    let model = linear_model(&table);

    // the same 442 rows as the reference: its per-column min and max
    // (BayesianRidge script, "scaling") are ours exactly
    let fmin = floats(&r["scaling"]["feature_min"]);
    let fmax = floats(&r["scaling"]["feature_max"]);
    assert_eq!(model.inputs.len(), 10);
    for (j, inp) in model.inputs.iter().enumerate() {
        assert!((inp.min - fmin[j]).abs() <= 1e-15, "x{j} min");
        assert!((inp.max - fmax[j]).abs() <= 1e-15, "x{j} max");
    }
    let t = model.target("y").expect("target");
    assert_eq!(t.n_rows, 442);
    assert!((t.min - r["scaling"]["target_min"].as_f64().expect("min")).abs() < 1e-12);
    assert!((t.max - r["scaling"]["target_max"].as_f64().expect("max")).abs() < 1e-12);
    let members = &t.committee.members;
    assert_eq!(members.len(), 1, "linear mode has one member");
    let m = &members[0];
    assert_eq!(m.n_hidden, 0);

    // noise sd in original units: BayesianRidge 54.1525. Expected
    // difference from the bias treatment +0.024 % (see the module doc);
    // the 1 % rule on β allows up to ~0.5 % in 1/√β. Tolerance 0.5 %.
    let width = t.scaling.width();
    let noise = m.noise_sd() * width;
    let ref_noise = r["noise_sd_original"].as_f64().expect("noise sd");
    let rel = noise / ref_noise - 1.0;
    assert!(
        rel.abs() <= 0.005,
        "noise sd {noise} vs BayesianRidge {ref_noise} ({:+.3} %)",
        100.0 * rel
    );

    // the member was refitted on all 442 rows: MacKay's (1992) β update
    // β = (N − γ)/Σr² holds at the stored β with N = 442, to the 1 %
    // convergence rule (2 % allowed)
    let preds = model.predict(&table).expect("predict");
    let measured = table.numeric("y").expect("y");
    let sse_scaled: f64 = preds
        .iter()
        .zip(&measured)
        .map(|(p, y)| ((y - p.estimates[0].mean) / width).powi(2))
        .sum();
    let gamma: f64 = m.gamma.iter().sum();
    let beta_update = (442.0 - gamma) / sse_scaled;
    assert!(
        (beta_update / m.beta - 1.0).abs() < 0.02,
        "β {} but (N − γ)/SSE = {beta_update} with N = 442",
        m.beta
    );

    // predictions for the reference rows (mean and sd, original units)
    let rows: Vec<usize> = r["predictions"]["rows"]
        .as_array()
        .expect("rows")
        .iter()
        .map(|v| v.as_u64().expect("row") as usize)
        .collect();
    let ref_mean = floats(&r["predictions"]["mean"]);
    let ref_sd = floats(&r["predictions"]["sd"]);
    let (mut worst_mean, mut worst_sd) = (0.0_f64, 0.0_f64);
    for (k, &i) in rows.iter().enumerate() {
        let e = &preds[i].estimates[0];
        let dm = (e.mean - ref_mean[k]).abs() / ref_noise;
        let ds = (e.sd / ref_sd[k] - 1.0).abs();
        worst_mean = worst_mean.max(dm);
        worst_sd = worst_sd.max(ds);
        // sds: bias treatment accounts for up to 0.41 %; tolerance 1 %
        assert!(
            ds <= 0.01,
            "row {i}: sd {} vs BayesianRidge {} ({:.2} %)",
            e.sd,
            ref_sd[k],
            100.0 * ds
        );
        // means: bias treatment accounts for up to 10.3 % of the noise sd;
        // tolerance 12 % of the noise sd
        assert!(
            dm <= 0.12,
            "row {i}: mean {} vs BayesianRidge {} ({:.1} % of the noise sd)",
            e.mean,
            ref_mean[k],
            100.0 * dm
        );
    }
    eprintln!(
        "linear vs BayesianRidge: noise sd {noise:.4} vs {ref_noise:.4} ({:+.3} %), \
         worst mean difference {:.2} % of noise sd, worst sd difference {:.2} %",
        100.0 * rel,
        100.0 * worst_mean,
        100.0 * worst_sd
    );
}

/// Means within 1 % of the noise sd. A model whose output bias stays in
/// the fit, unpenalised as sklearn's is, meets it; mettle's output bias has
/// a near-flat prior for that reason (`flat_output_bias` in
/// src/evidence/fit.rs).
#[test]
fn linear_means_agree_within_one_percent_of_the_noise_sd() {
    let r = reference();
    let table = diabetes_table();
    let model = linear_model(&table);
    let preds = model.predict(&table).expect("predict");
    let ref_noise = r["noise_sd_original"].as_f64().expect("noise sd");
    let ref_mean = floats(&r["predictions"]["mean"]);
    let rows = r["predictions"]["rows"].as_array().expect("rows");
    for (k, row) in rows.iter().enumerate() {
        let i = row.as_u64().expect("row") as usize;
        let dm = (preds[i].estimates[0].mean - ref_mean[k]).abs() / ref_noise;
        assert!(dm <= 0.01, "row {i}: {:.2} % of the noise sd", 100.0 * dm);
    }
}
