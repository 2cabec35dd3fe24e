//! The bundled invented demo data (datasets/) and model (models/) are what
//! the current code makes and reads: `make models` regenerates both, and
//! these tests fail when someone changes the generator or the model format
//! without doing so.

mod common;

use std::path::PathBuf;

use common::Workdir;
use serde_json::Value;

fn repo(rel: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join(rel)
}

const DATA_FILES: [&str; 4] = [
    "fellhaven_welds.csv",
    "fellhaven_candidates.csv",
    "fellhaven_new_welds.csv",
    "fellhaven_new_welds_truth.csv",
];

#[test]
fn bundled_demo_data_is_what_the_generator_writes() {
    let w = Workdir::new();
    let out = w.path("demo");
    w.ok(&["demo-data", "--out", out.to_str().expect("utf-8 path")]);
    for f in DATA_FILES {
        let fresh = std::fs::read(out.join(f)).expect("generated file");
        let bundled = std::fs::read(repo("datasets").join(f)).expect("bundled file");
        assert!(
            fresh == bundled,
            "datasets/{f} differs from what `mettle demo-data` writes now: run `make models`"
        );
    }
}

#[test]
fn bundled_model_loads_matches_its_data_and_estimates() {
    let model_path = repo("models/fellhaven_welds.json");
    let text = std::fs::read_to_string(&model_path).expect("bundled model");
    let v: Value = serde_json::from_str(&text).expect("model is JSON");
    assert_eq!(
        v["format_version"],
        mettle::model::MODEL_FORMAT_VERSION,
        "models/fellhaven_welds.json is in an older format: run `make models`"
    );
    let model = mettle::Model::load(&model_path).expect("the current code reads the bundled model");
    let targets: Vec<&str> = model.targets.iter().map(|t| t.name.as_str()).collect();
    assert_eq!(
        targets,
        ["yield_mpa", "uts_mpa", "elongation_pct", "charpy_j"]
    );

    // `report --training-data` refuses a table whose fingerprint is not the
    // model's: exit 0 means the bundled model was trained on datasets/ as it is
    let w = Workdir::new();
    let html = w.path("bundled.html");
    w.ok(&[
        "report",
        "--model",
        model_path.to_str().expect("utf-8 path"),
        "--training-data",
        repo("datasets/fellhaven_welds.csv")
            .to_str()
            .expect("utf-8"),
        "--out",
        html.to_str().expect("utf-8"),
    ]);

    // and it estimates the new welds: every target, every row, finite error bars
    let out = w.ok(&[
        "predict",
        "--model",
        model_path.to_str().expect("utf-8 path"),
        "--input",
        repo("datasets/fellhaven_new_welds.csv")
            .to_str()
            .expect("utf-8"),
        "--format",
        "json",
    ]);
    let v: Value = serde_json::from_slice(&out.stdout).expect("JSON estimates");
    let rows = v["rows"].as_array().expect("array of rows");
    assert_eq!(rows.len(), 8);
    for r in rows {
        for t in &targets {
            let sd = r["estimates"][t]["sd"].as_f64().expect("sd");
            assert!(sd.is_finite() && sd > 0.0, "{t}: sd {sd}");
        }
    }
}

/// The bundled UTS committee against the generator's own truth on the eight
/// invented new welds (the truth is known because the data is invented; no
/// outside source): its noise sd within 15 % of the generator's on average,
/// the planted no-effect input `co_wt` the least relevant input, and its
/// slope dUTS/dMn within its error bar of the true slope — which carries the
/// Pickering-type Mn coefficient of the generator (27.7 MPa per wt%, from
/// memory; src/demo/relations.rs) plus the invented hardenability effect.
#[test]
fn bundled_model_recovers_the_generators_truth() {
    use mettle::data::Table;
    use mettle::demo::{truth, WeldInputs, INPUT_COLUMNS};

    let model = mettle::Model::load(&repo("models/fellhaven_welds.json")).expect("model");
    let uts = model
        .targets
        .iter()
        .position(|t| t.name == "uts_mpa")
        .expect("uts target");
    let welds = Table::read(&repo("datasets/fellhaven_new_welds_truth.csv")).expect("truth file");
    let cols: Vec<Vec<f64>> = INPUT_COLUMNS
        .iter()
        .map(|c| welds.numeric(c).expect("input column"))
        .collect();
    let n = cols[0].len();
    let row = |i: usize| -> Vec<f64> { cols.iter().map(|c| c[i]).collect() };

    // 1. noise level
    let pred = model.predict(&welds).expect("estimates");
    let true_sd = welds.numeric("uts_sd_mpa").expect("truth sd");
    let mean_ratio = pred
        .iter()
        .zip(&true_sd)
        .map(|(p, s)| p.estimates[uts].noise_sd / s)
        .sum::<f64>()
        / n as f64;
    assert!(
        (mean_ratio - 1.0).abs() <= 0.15,
        "fitted / true noise sd averages {mean_ratio:.3}"
    );

    // 2. relevance: co_wt last for UTS
    let c = &model.targets[uts].committee;
    let co = model
        .input_names()
        .iter()
        .position(|n| *n == "co_wt")
        .expect("co_wt input");
    let mut relevance = vec![0.0; model.inputs.len()];
    for m in &c.members {
        for (g, a) in m.groups.iter().zip(&m.alpha) {
            if let mettle::evidence::GroupKind::Input(i) = g {
                relevance[*i] += 1.0 / a.sqrt();
            }
        }
    }
    let least = relevance
        .iter()
        .enumerate()
        .min_by(|a, b| a.1.total_cmp(b.1))
        .map(|(i, _)| i);
    assert_eq!(least, Some(co), "relevance {relevance:?}");

    // 3. slope in Mn by central differences, model against truth
    let dmn = 0.2;
    let mn = INPUT_COLUMNS
        .iter()
        .position(|c| *c == "mn_wt")
        .expect("mn");
    let mut shifted: Vec<Vec<f64>> = vec![Vec::new(); INPUT_COLUMNS.len()];
    let mut true_slopes = Vec::new();
    for i in 0..n {
        let mut lo = row(i);
        let mut hi = row(i);
        lo[mn] -= dmn;
        hi[mn] += dmn;
        let t_lo = truth(&WeldInputs::from_row(&lo).expect("weld")).uts_mpa;
        let t_hi = truth(&WeldInputs::from_row(&hi).expect("weld")).uts_mpa;
        true_slopes.push((t_hi - t_lo) / (2.0 * dmn));
        for (k, col) in shifted.iter_mut().enumerate() {
            col.push(lo[k]);
            col.push(hi[k]);
        }
    }
    let table = Table::from_columns(
        "mn shifted",
        INPUT_COLUMNS
            .iter()
            .zip(shifted)
            .map(|(c, v)| (c.to_string(), v))
            .collect(),
    )
    .expect("table");
    let p = model.predict(&table).expect("estimates");
    for i in 0..n {
        let (lo, hi) = (&p[2 * i].estimates[uts], &p[2 * i + 1].estimates[uts]);
        let slope = (hi.mean - lo.mean) / (2.0 * dmn);
        // the difference of two estimates is at most as uncertain as the sum
        // of their model sds (fully anti-correlated); 2 such sds ≈ 95 %
        let bar = 2.0 * (hi.model_sd + lo.model_sd) / (2.0 * dmn);
        assert!(
            (slope - true_slopes[i]).abs() <= bar,
            "weld {}: dUTS/dMn {slope:.1} ± {bar:.1}, truth {:.1} MPa per wt%",
            i + 1,
            true_slopes[i]
        );
    }
}

/// The bundled model is what `make models` trains from the bundled data, byte
/// for byte (the fixed-order arithmetic of `src/linalg.rs` makes that hold on
/// any CPU with the same elementary functions: DEVELOPERS.md, "The same model
/// on any CPU"). Fails when training changes without `make models`, or when
/// a result comes to depend on the machine. The arguments are the Makefile's
/// `models` target's.
#[test]
fn bundled_model_is_what_make_models_trains() {
    let w = Workdir::new();
    let fresh = w.path("fellhaven_welds.json");
    let data = repo("datasets/fellhaven_welds.csv");
    let schema = repo("datasets/fellhaven_welds.toml");
    w.ok(&[
        "train",
        "--data",
        data.to_str().expect("utf-8 path"),
        "--schema",
        schema.to_str().expect("utf-8 path"),
        "--seed",
        "1",
        "--quiet",
        "--out",
        fresh.to_str().expect("utf-8 path"),
    ]);
    let makefile = std::fs::read_to_string(repo("Makefile")).expect("Makefile");
    assert!(
        makefile.contains("--seed 1 --quiet --out models/fellhaven_welds.json"),
        "the Makefile's models target changed: update this test's arguments"
    );
    let fresh = std::fs::read(&fresh).expect("trained model");
    let bundled = std::fs::read(repo("models/fellhaven_welds.json")).expect("bundled model");
    assert!(
        fresh == bundled,
        "models/fellhaven_welds.json differs from what training writes now: run `make models`"
    );
}
