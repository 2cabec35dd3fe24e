//! `mettle predict --neighbours K --training-data FILE` through the real
//! binary: the nearest training rows by the model's relevance-weighted
//! distance, checked against a brute-force search written here from the
//! definition (docs/guide-qa.md, src/explain/neighbours.rs), with the
//! schema's identifier column; and the refusals. All data invented.

use mettle::fixedmath::FixedMath;
mod common;

use std::fmt::Write as _;

use common::Workdir;
use serde_json::Value;

const SCHEMA: &str = "mettle_schema = 1\n\
[[column]]\nname = \"heat\"\nrole = \"identifier\"\n\
[[column]]\nname = \"c_wt\"\nrole = \"input\"\nunit = \"wt%\"\n\
[[column]]\nname = \"mn_wt\"\nrole = \"input\"\nunit = \"wt%\"\n\
[[column]]\nname = \"uts_mpa\"\nrole = \"target\"\nunit = \"MPa\"\n";

/// Invented heats on a 6 × 5 grid of C and Mn with a smooth strength.
fn training_csv() -> String {
    let mut s = String::from("heat,c_wt,mn_wt,uts_mpa\n");
    for i in 0..6 {
        for j in 0..5 {
            let (c, mn) = (0.05 + 0.02 * f64::from(i), 0.8 + 0.2 * f64::from(j));
            let uts = 300.0 + 900.0 * c + 90.0 * mn + 3.0 * (f64::from(i * 5 + j)).sin_fixed();
            writeln!(s, "H{:02},{c},{mn},{uts:.1}", i * 5 + j).expect("write");
        }
    }
    s
}

#[test]
fn neighbours_are_the_nearest_training_rows_by_the_weighted_distance() {
    let w = Workdir::new();
    w.write("train.csv", training_csv());
    w.write("schema.toml", SCHEMA);
    w.ok(&[
        "train",
        "--data",
        "train.csv",
        "--schema",
        "schema.toml",
        "--hidden",
        "0",
        "--restarts",
        "1",
        "--noise",
        "constant",
        "--out",
        "m.json",
    ]);
    w.write("new.csv", "heat,c_wt,mn_wt\nN1,0.081,1.13\nN2,0.14,0.85\n");
    let args = [
        "predict",
        "--model",
        "m.json",
        "--input",
        "new.csv",
        "--neighbours",
        "3",
        "--training-data",
        "train.csv",
        "--format",
        "json",
    ];
    let out = w.ok(&args);
    let v: Value = serde_json::from_slice(&out.stdout).expect("JSON");

    // brute force from the definition: scaled = (x − lo)/(hi − lo) − 0.5
    // per input (the model's stored scaling), times the stored relevance
    let m: Value = serde_json::from_slice(&w.read("m.json")).expect("model");
    let inputs = m["inputs"].as_array().expect("inputs");
    let weights: Vec<f64> = match m["domain"]["relevance"].as_array() {
        Some(r) => r.iter().map(|x| x.as_f64().expect("weight")).collect(),
        None => vec![1.0; inputs.len()],
    };
    let scale = |j: usize, x: f64| {
        let s = &inputs[j]["scaling"];
        let (lo, hi) = (s["lo"].as_f64().expect("lo"), s["hi"].as_f64().expect("hi"));
        // an input taken through its logarithm is scaled on that scale
        let x = if s["transform"] == "log" {
            x.ln_fixed()
        } else {
            x
        };
        ((x - lo) / (hi - lo) - 0.5) * weights[j]
    };
    let names: Vec<&str> = inputs
        .iter()
        .map(|i| i["name"].as_str().expect("name"))
        .collect();
    let train: Vec<(String, [f64; 2], f64)> = training_csv()
        .lines()
        .skip(1)
        .map(|l| {
            let f: Vec<&str> = l.split(',').collect();
            let x = |n: &str| {
                f[if n == "c_wt" { 1 } else { 2 }]
                    .parse::<f64>()
                    .expect("x")
            };
            (
                f[0].to_string(),
                [x(names[0]), x(names[1])],
                f[3].parse().expect("uts"),
            )
        })
        .collect();
    for (row, query) in [
        (0usize, [("c_wt", 0.081), ("mn_wt", 1.13)]),
        (1, [("c_wt", 0.14), ("mn_wt", 0.85)]),
    ] {
        let q: Vec<f64> = names
            .iter()
            .enumerate()
            .map(|(j, n)| scale(j, query.iter().find(|(k, _)| k == n).expect("input").1))
            .collect();
        let mut d: Vec<(f64, usize)> = train
            .iter()
            .enumerate()
            .map(|(i, (_, x, _))| {
                let s: f64 = (0..2).map(|j| (scale(j, x[j]) - q[j]).powi(2)).sum();
                (s.sqrt(), i)
            })
            .collect();
        d.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
        let got = v["rows"][row]["neighbours"].as_array().expect("neighbours");
        assert_eq!(got.len(), 3, "{}", v["rows"][row]);
        for (g, (dist, i)) in got.iter().zip(&d) {
            assert_eq!(g["row"], *i + 1, "{g}");
            assert_eq!(g["id"], train[*i].0, "{g}");
            let gd = g["distance"].as_f64().expect("distance");
            assert!((gd - dist).abs() < 1e-9, "{gd} vs {dist}");
            let uts = g["measured"]["uts_mpa"].as_f64().expect("uts");
            assert!((uts - train[*i].2).abs() < 1e-9, "{uts}");
        }
    }
}

#[test]
fn neighbours_need_the_model_s_own_training_table() {
    let w = Workdir::new();
    w.write("train.csv", training_csv());
    w.write("schema.toml", SCHEMA);
    w.ok(&[
        "train",
        "--data",
        "train.csv",
        "--schema",
        "schema.toml",
        "--hidden",
        "0",
        "--restarts",
        "1",
        "--noise",
        "constant",
        "--out",
        "m.json",
    ]);
    w.write("new.csv", "heat,c_wt,mn_wt\nN1,0.081,1.13\n");
    let out = w.run(&[
        "predict",
        "--model",
        "m.json",
        "--input",
        "new.csv",
        "--neighbours",
        "2",
    ]);
    assert!(!out.status.success());
    assert!(
        common::stderr(&out).contains("--training-data"),
        "{}",
        common::stderr(&out)
    );
    // another table (one value changed) is refused by the fingerprint
    w.write(
        "other.csv",
        training_csv().replacen("H00,0.05,0.8,", "H00,0.05,0.9,", 1),
    );
    let out = w.run(&[
        "predict",
        "--model",
        "m.json",
        "--input",
        "new.csv",
        "--neighbours",
        "2",
        "--training-data",
        "other.csv",
    ]);
    assert!(!out.status.success());
    assert!(
        common::stderr(&out).contains("other.csv"),
        "{}",
        common::stderr(&out)
    );
}
