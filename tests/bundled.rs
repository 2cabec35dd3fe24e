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
    let rows: Value = serde_json::from_slice(&out.stdout).expect("JSON estimates");
    let rows = rows.as_array().expect("array of rows");
    assert_eq!(rows.len(), 8);
    for r in rows {
        for t in &targets {
            let sd = r["estimates"][t]["sd"].as_f64().expect("sd");
            assert!(sd.is_finite() && sd > 0.0, "{t}: sd {sd}");
        }
    }
}
