//! A target learnt on the log scale: on data whose scatter is multiplicative
//! (lognormal), the back-transformed 95 % interval must cover about 95 % of
//! fresh observations. Impact energy scatters this way — its spread grows
//! with its level (common practice, no source) — which is why the schema
//! offers `transform = "log"`.
//!
//! The data are invented: ln KV = ln 60 + 0.6·x1 + 0.4·sin(2·x2) + ε,
//! ε ~ N(0, 0.25²), so KV = exp(f)·exp(ε) with a lognormal factor.

use mettle::fixedmath::FixedMath;
mod common;

use std::fmt::Write as _;

use common::Workdir;
use rand::{Rng, SeedableRng};
use rand_distr::{Distribution, Normal};
use rand_xoshiro::Xoshiro256PlusPlus;
use serde_json::Value;

/// Sd of the noise on the log scale (the generator's setting).
const LOG_NOISE_SD: f64 = 0.25;

/// `n` rows `x1,x2,kv` with lognormal scatter, as CSV text.
fn lognormal_csv(n: usize, seed: u64) -> String {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    let noise = Normal::new(0.0, LOG_NOISE_SD).expect("positive sd");
    let mut s = String::from("x1,x2,kv\n");
    for _ in 0..n {
        let x1: f64 = rng.random_range(-1.0..1.0);
        let x2: f64 = rng.random_range(0.0..2.0);
        let log_kv =
            60.0_f64.ln_fixed() + 0.6 * x1 + 0.4 * (2.0 * x2).sin_fixed() + noise.sample(&mut rng);
        writeln!(s, "{x1},{x2},{}", log_kv.exp_fixed()).expect("write to string");
    }
    s
}

const SCHEMA: &str = r#"mettle_schema = 1

[[column]]
name = "x1"
role = "input"
unit = "1"

[[column]]
name = "x2"
role = "input"
unit = "1"

[[column]]
name = "kv"
role = "target"
unit = "J"
transform = "log"
"#;

#[test]
fn log_target_interval_covers_95_percent_of_fresh_lognormal_data() {
    let w = Workdir::new();
    w.write("train.csv", lognormal_csv(300, 41));
    w.write("kv.toml", SCHEMA);
    let fresh = lognormal_csv(2000, 42);
    w.write("fresh.csv", &fresh);
    w.ok(&[
        "train",
        "--data",
        "train.csv",
        "--schema",
        "kv.toml",
        "--out",
        "kv.json",
        "--hidden",
        "2..3",
        "--restarts",
        "1",
        "--seed",
        "5",
        "--quiet",
    ]);
    let args = [
        "predict",
        "--model",
        "kv.json",
        "--input",
        "fresh.csv",
        "--format",
        "json",
    ];
    let out = w.ok(&args);
    let rows: Vec<Value> = common::predict_rows(&out.stdout);
    let observed: Vec<f64> = fresh
        .lines()
        .skip(1)
        .map(|l| {
            l.rsplit(',')
                .next()
                .and_then(|c| c.parse().ok())
                .expect("kv")
        })
        .collect();
    assert_eq!(rows.len(), observed.len());
    // (median, covered) per row
    let mut judged: Vec<(f64, bool)> = Vec::with_capacity(rows.len());
    for (r, y) in rows.iter().zip(&observed) {
        let num = |k: &str| r[k].as_f64().unwrap_or_else(|| panic!("{k} in {r}"));
        let (lo, median, hi) = (num("lo95"), num("median"), num("hi95"));
        assert_eq!(r["interval_kind"], "log_normal", "{r}");
        // mapped back from the log scale the interval is asymmetric: longer
        // above the median than below it
        assert!(lo > 0.0 && hi - median > median - lo, "{r}");
        judged.push((median, (lo..=hi).contains(y)));
    }
    let share = |v: &[(f64, bool)]| v.iter().filter(|j| j.1).count() as f64 / v.len() as f64;
    let coverage = share(&judged);
    // the issue's acceptance band for a 95 % interval on 2000 fresh rows
    // (binomial sd of the share about 0.005)
    assert!(
        (0.92..=0.98).contains(&coverage),
        "coverage {coverage} of the back-transformed 95 % interval"
    );
    // and at every level: an interval of one width for all rows (no
    // transform) would cover nearly all the low energies and too few of the
    // high ones; thirds of about 667 rows, binomial sd of a share about 0.008
    judged.sort_by(|a, b| a.0.total_cmp(&b.0));
    let third = judged.len() / 3;
    for (name, part) in [
        ("lowest", &judged[..third]),
        ("highest", &judged[judged.len() - third..]),
    ] {
        let c = share(part);
        assert!(
            (0.90..=0.98).contains(&c),
            "coverage {c} in the third of rows with the {name} estimates (overall {coverage})"
        );
    }
}
