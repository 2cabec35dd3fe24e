//! `mettle screen` and `mettle design` through the real binary: a fixture
//! model with a known Gaussian estimate, cost arithmetic by hand, and
//! synthetic design problems with a known optimum. All data invented.

use mettle::fixedmath::FixedMath;
mod common;

use std::fmt::Write as _;

use common::{describe, Workdir};
use serde_json::Value;

fn json(args: &[&str], out: &std::process::Output) -> Value {
    serde_json::from_slice(&out.stdout)
        .unwrap_or_else(|e| panic!("stdout is not JSON ({e})\n{}", describe(args, out)))
}

/// A model whose committee gives mean 560 and sd 10 for every row: a
/// linear model trained on a small table, its weights and posterior
/// covariance set to zero (so the model part of the variance is 0 and the
/// mean is the centre of the target scaling), its target scaling set to
/// 550..570 (centre 560, width 20) and β = 4 (noise sd = width/√β = 10).
fn fixture_model(w: &Workdir) {
    let mut s = String::from("x,y\n");
    for i in 0..30 {
        let x = i as f64 / 29.0;
        writeln!(s, "{x},{}", 1.0 + 2.0 * x + 0.1 * (7.0 * x).sin_fixed()).expect("write");
    }
    w.write("lin.csv", s);
    w.ok(&[
        "train",
        "--data",
        "lin.csv",
        "--target",
        "y",
        "--hidden",
        "0",
        "--restarts",
        "1",
        "--noise",
        "constant",
        "--out",
        "lin.json",
    ]);
    let mut m: Value = serde_json::from_slice(&w.read("lin.json")).expect("model JSON");
    let t = &mut m["targets"][0];
    t["scaling"]["lo"] = 550.0.into();
    t["scaling"]["hi"] = 570.0.into();
    for member in t["committee"]["members"].as_array_mut().expect("members") {
        let zeros = |v: &Value| Value::from(vec![0.0; v.as_array().expect("array").len()]);
        member["weights"] = zeros(&member["weights"]);
        member["posterior_cov"] = zeros(&member["posterior_cov"]);
        member["beta"] = 4.0.into();
    }
    w.write("fixture.json", serde_json::to_vec(&m).expect("serialise"));
}

#[test]
fn probability_of_mean_560_sd_10_meeting_550_is_phi_of_1() {
    let w = Workdir::new();
    fixture_model(&w);
    w.write("cand.csv", "x\n0.5\n");
    let args = [
        "screen",
        "--model",
        "fixture.json",
        "--input",
        "cand.csv",
        "--require",
        "y>=550",
        "--require",
        "y<=550",
        "--format",
        "json",
    ];
    let out = w.ok(&args);
    let v = json(&args, &out);
    let c = &v["candidates"][0];
    let est = &c["estimates"]["y"];
    assert!(
        (est["mean"].as_f64().expect("mean") - 560.0).abs() < 1e-9,
        "{est}"
    );
    assert!(
        (est["sd"].as_f64().expect("sd") - 10.0).abs() < 1e-9,
        "{est}"
    );
    // Φ(1) = 0.8413 (standard normal table; any statistics handbook)
    let p = c["requirements"][0]["probability"].as_f64().expect("P");
    assert!((p - 0.8413).abs() < 5e-5, "P = {p}");
    let q = c["requirements"][1]["probability"].as_f64().expect("P");
    assert!((q - 0.1587).abs() < 5e-5, "P = {q}");
    // one target at the same conditions, >= 550 and <= 550: the band
    // between them, of zero width (not the product of the two)
    let j = c["joint_probability"].as_f64().expect("joint");
    assert!(j.abs() < 1e-12, "joint {j}");
    assert_eq!(v["joint_probability_basis"], "single");
    assert!(v["caution"]
        .as_str()
        .is_some_and(|s| s.contains("not test results")));
    // the table prints the same probability
    let t = w.ok(&[
        "screen",
        "--model",
        "fixture.json",
        "--input",
        "cand.csv",
        "--require",
        "y>=550",
    ]);
    let text = String::from_utf8_lossy(&t.stdout);
    assert!(
        text.contains("0.8413") && text.contains("not test results"),
        "{text}"
    );
}

/// The fixture with two targets, y and y2, each estimated with mean 560
/// and sd 10 for every row, and a stored scatter correlation `rho` of
/// the two (none when `rho` is `None`).
fn two_target_fixture(w: &Workdir, rho: Option<f64>) {
    let mut s = String::from("x,y,y2\n");
    for i in 0..30 {
        let x = i as f64 / 29.0;
        let y = 1.0 + 2.0 * x + 0.1 * (7.0 * x).sin_fixed();
        writeln!(s, "{x},{y},{}", y + 0.05 * (3.0 * x).cos_fixed()).expect("write");
    }
    w.write("lin2.csv", s);
    w.ok(&[
        "train",
        "--data",
        "lin2.csv",
        "--target",
        "y",
        "--target",
        "y2",
        "--hidden",
        "0",
        "--restarts",
        "1",
        "--noise",
        "constant",
        "--out",
        "lin2.json",
    ]);
    let mut m: Value = serde_json::from_slice(&w.read("lin2.json")).expect("model JSON");
    for t in m["targets"].as_array_mut().expect("targets") {
        t["scaling"]["lo"] = 550.0.into();
        t["scaling"]["hi"] = 570.0.into();
        for member in t["committee"]["members"].as_array_mut().expect("members") {
            let zeros = |v: &Value| Value::from(vec![0.0; v.as_array().expect("array").len()]);
            member["weights"] = zeros(&member["weights"]);
            member["posterior_cov"] = zeros(&member["posterior_cov"]);
            member["beta"] = 4.0.into();
        }
    }
    // what training stored for the two (invented data: a correlation of
    // their residuals)
    assert!(
        m["scatter_correlations"][0]["rho"].is_f64(),
        "{}",
        m["scatter_correlations"]
    );
    let o = m.as_object_mut().expect("object");
    match rho {
        Some(r) => {
            o.insert(
                "scatter_correlations".into(),
                serde_json::json!([{"a": "y", "b": "y2", "rho": r, "n_rows": 30}]),
            );
        }
        None => {
            o.remove("scatter_correlations");
        }
    }
    w.write("fixture2.json", serde_json::to_vec(&m).expect("serialise"));
}

fn joint_of(w: &Workdir, reqs: &[&str]) -> Value {
    w.write("cand.csv", "x\n0.5\n");
    let mut args = vec![
        "screen",
        "--model",
        "fixture2.json",
        "--input",
        "cand.csv",
        "--format",
        "json",
    ];
    for r in reqs {
        args.extend(["--require", r]);
    }
    let out = w.ok(&args);
    json(&args, &out)
}

/// Two targets, each N(560, 10²), scatter correlation ρ = 0.6:
/// P(y ≥ 550, y2 ≥ 572) = P(X ≥ −1, Y ≥ 1.2) = 0.114188107265 and
/// P(550 ≤ y ≤ 580, y2 ≥ 572) = P(−1 < X < 2, Y > 1.2) = 0.100407391220,
/// from SciPy 1.17.1 `multivariate_normal.cdf` (covariance [[1, 0.6],
/// [0.6, 1]], abseps = releps = 1e-12; the first as CDF(1, −1.2) by
/// symmetry, the second with `lower_limit`), run once with the script
/// tests/reference/bivariate_normal.py's settings. Without a stored
/// correlation (an older file) the joint probability is the product
/// Φ(1)·Φ(−1.2) = 0.096813262473 (same SciPy run, `norm.cdf`), and the
/// output says the targets were taken as independent.
#[test]
fn correlated_targets_give_the_bivariate_normal_probability() {
    let w = Workdir::new();
    two_target_fixture(&w, Some(0.6));
    let v = joint_of(&w, &["y>=550", "y2>=572"]);
    let c = &v["candidates"][0];
    let j = c["joint_probability"].as_f64().expect("joint");
    assert!((j - 0.114_188_107_265).abs() < 1e-9, "joint {j}");
    assert_eq!(v["joint_probability_basis"], "correlated");
    assert!(
        v["joint_probability_assumption"]
            .as_str()
            .is_some_and(|s| s.contains("ρ = 0.60")),
        "{}",
        v["joint_probability_assumption"]
    );
    assert!(
        c.get("joint_probability_se").is_none(),
        "exact, not sampled"
    );
    let v = joint_of(&w, &["y>=550", "y<=580", "y2>=572"]);
    let j = v["candidates"][0]["joint_probability"]
        .as_f64()
        .expect("joint");
    assert!((j - 0.100_407_391_220).abs() < 1e-9, "joint {j}");

    // ρ = 0: the product
    two_target_fixture(&w, Some(0.0));
    let v = joint_of(&w, &["y>=550", "y2>=572"]);
    let j = v["candidates"][0]["joint_probability"]
        .as_f64()
        .expect("joint");
    assert!((j - 0.096_813_262_473).abs() < 1e-9, "joint {j}");
    // no stored correlation: the product, said to be independent
    two_target_fixture(&w, None);
    let v = joint_of(&w, &["y>=550", "y2>=572"]);
    let j = v["candidates"][0]["joint_probability"]
        .as_f64()
        .expect("joint");
    assert!((j - 0.096_813_262_473).abs() < 1e-9, "joint {j}");
    assert_eq!(v["joint_probability_basis"], "independent");
    // the table says it too
    let t = w.ok(&[
        "screen",
        "--model",
        "fixture2.json",
        "--input",
        "cand.csv",
        "--require",
        "y>=550",
        "--require",
        "y2>=572",
    ]);
    let text = String::from_utf8_lossy(&t.stdout);
    assert!(
        text.contains("joint (independent)") && text.contains("0.0968"),
        "{text}"
    );
}

/// `predict --require` gives the rows' probabilities of `screen`, each
/// requirement and all of them, as extra CSV columns after `caution`.
#[test]
fn predict_require_adds_the_probabilities() {
    let w = Workdir::new();
    two_target_fixture(&w, Some(0.6));
    w.write("cand.csv", "x\n0.5\n0.2\n");
    let args = [
        "predict",
        "--model",
        "fixture2.json",
        "--input",
        "cand.csv",
        "--require",
        "y>=550",
        "--require",
        "y2>=572",
        "--format",
        "csv",
        // every digit, for the comparison to 1e-9 below
        "--digits",
        "17",
    ];
    let out = w.ok(&args);
    let path = w.write("est.csv", &out.stdout);
    let t = mettle::data::Table::read(&path).expect("the estimate file reads as a table");
    let names = t.names();
    let at = |n: &str| names.iter().position(|h| h == n).unwrap_or(usize::MAX);
    assert!(
        at("caution") < at("P(y >= 550)") && at("P_all") < usize::MAX,
        "{names:?}"
    );
    let col = |n: &str| t.numeric(n).expect(n);
    for ((p1, p2), all) in col("P(y >= 550)")
        .into_iter()
        .zip(col("P(y2 >= 572)"))
        .zip(col("P_all"))
    {
        // Φ(1) = 0.841345, Φ(−1.2) = 0.115070 (standard normal table)
        assert!((p1 - 0.841_345).abs() < 1e-6, "{p1}");
        assert!((p2 - 0.115_070).abs() < 1e-6, "{p2}");
        assert!((all - 0.114_188_107_265).abs() < 1e-9, "{all}");
    }
    assert_eq!(t.n_rows(), 2);
    assert_eq!(t.cell_text(at("joint"), 0).as_deref(), Some("correlated"));
}

#[test]
fn cost_per_tonne_by_hand_on_two_elements_and_ties_go_to_the_cheaper() {
    let w = Workdir::new();
    fixture_model(&w);
    w.write(
        "costs.toml",
        "currency = \"EUR\"\nnote = \"invented\"\nbalance_price_per_kg = 0.4\n[price_per_kg]\nC = 0.5\nMn = 2.0\n",
    );
    // same x, so the same probability: the cheaper ranks first
    w.write("cand.csv", "x,c_wt,mn_wt\n0.5,0.1,1.5\n0.5,0.2,1.0\n");
    let args = [
        "screen",
        "--model",
        "fixture.json",
        "--input",
        "cand.csv",
        "--require",
        "y>=550",
        "--costs",
        "costs.toml",
        "--format",
        "json",
    ];
    let v = json(&args, &w.ok(&args));
    let c = v["candidates"].as_array().expect("candidates");
    // by hand: row 1: 1 kg C · 0.5 + 15 kg Mn · 2.0 + 984 kg · 0.4 = 424.1
    //          row 2: 2 kg C · 0.5 + 10 kg Mn · 2.0 + 988 kg · 0.4 = 416.2
    assert_eq!(c[0]["row"], 2);
    assert!((c[0]["cost_per_tonne"].as_f64().expect("cost") - 416.2).abs() < 1e-9);
    assert_eq!(c[1]["row"], 1);
    assert!((c[1]["cost_per_tonne"].as_f64().expect("cost") - 424.1).abs() < 1e-9);
    assert_eq!(c[0]["rank"], 1);
}

#[test]
fn malformed_requirement_is_refused_with_exit_2_naming_it() {
    let w = Workdir::new();
    fixture_model(&w);
    w.write("cand.csv", "x\n0.5\n");
    for (req, part) in [
        ("y=>550", "target 'y='"),
        ("z>=1", "no model estimates 'z'"),
    ] {
        let args = [
            "screen",
            "--model",
            "fixture.json",
            "--input",
            "cand.csv",
            "--require",
            req,
        ];
        let out = w.fails(&args, 2);
        let err = String::from_utf8_lossy(&out.stderr);
        assert!(err.contains(part), "{}", describe(&args, &out));
    }
}

/// y = 600 − 400·((x1 − p1)² + (x2 − 0.3)²) + N(0, 3²) scatter (seeded),
/// on a grid over x1 ∈ [0, x1_max], x2 ∈ [0, 1]. Invented data.
fn bowl(w: &Workdir, p1: f64, x1_max: f64) {
    use rand::SeedableRng;
    use rand_distr::{Distribution, Normal};
    let mut rng = rand_xoshiro::Xoshiro256PlusPlus::seed_from_u64(17);
    let noise = Normal::new(0.0, 3.0).expect("positive sd");
    let mut s = String::from("x1,x2,y\n");
    for i in 0..15 {
        for j in 0..15 {
            let (x1, x2) = (x1_max * i as f64 / 14.0, j as f64 / 14.0);
            let y =
                600.0 - 400.0 * ((x1 - p1).powi(2) + (x2 - 0.3).powi(2)) + noise.sample(&mut rng);
            writeln!(s, "{x1},{x2},{y}").expect("write");
        }
    }
    w.write("bowl.csv", s);
    w.ok(&[
        "train",
        "--data",
        "bowl.csv",
        "--target",
        "y",
        "--hidden",
        "3..4",
        "--restarts",
        "2",
        "--noise",
        "constant",
        "--seed",
        "3",
        "--out",
        "bowl.json",
    ]);
}

fn design_args(req: &str) -> Vec<&str> {
    vec![
        "design",
        "--model",
        "bowl.json",
        "--require",
        req,
        "--vary",
        "x1=0:1",
        "--vary",
        "x2=0:1",
        "--count",
        "4",
        "--seed",
        "5",
        "--quiet",
        "--format",
        "json",
    ]
}

fn values(c: &Value) -> (f64, f64) {
    (
        c["inputs"]["x1"].as_f64().expect("x1"),
        c["inputs"]["x2"].as_f64().expect("x2"),
    )
}

#[test]
fn design_finds_a_known_optimum_inside_the_domain_and_is_reproducible() {
    let w = Workdir::new();
    bowl(&w, 0.5, 1.0);
    let args = design_args("y>=600");
    let out = w.ok(&args);
    let v = json(&args, &out);
    let c = v["candidates"].as_array().expect("candidates");
    assert_eq!(c.len(), 4, "{v}");
    // the truth peaks at (0.5, 0.3); stated tolerance 0.05 in each input
    // (5 % of the box)
    let (x1, x2) = values(&c[0]);
    assert!(
        (x1 - 0.5).abs() < 0.05 && (x2 - 0.3).abs() < 0.05,
        "best at ({x1}, {x2})"
    );
    assert_eq!(c[0]["in_domain"], true);
    // diverse: every pair differs by at least 0.1 of the box in some input
    for a in 0..c.len() {
        for b in 0..a {
            let (p, q) = (values(&c[a]), values(&c[b]));
            assert!(
                (p.0 - q.0).abs().max((p.1 - q.1).abs()) >= 0.1 - 1e-12,
                "{p:?} {q:?}"
            );
        }
    }
    // seeded: the same run gives the same bytes
    assert_eq!(w.ok(&args).stdout, out.stdout);
}

#[test]
fn design_with_the_optimum_outside_the_domain_returns_the_best_inside_and_says_why() {
    let w = Workdir::new();
    // the truth peaks at x1 = 0.8, but the records stop at x1 = 0.5
    bowl(&w, 0.8, 0.5);
    let args = design_args("y>=563");
    let out = w.ok(&args);
    let v = json(&args, &out);
    let c = v["candidates"].as_array().expect("candidates");
    assert!(!c.is_empty(), "{v}");
    for k in c {
        assert_eq!(k["in_domain"], true, "{k}");
    }
    // best in domain: at the edge of the records, x1 → 0.5, x2 near 0.3;
    // the guard tolerates DOMAIN_RANGE_SLACK (2 % of the 0..0.5 range) beyond it
    let (x1, x2) = values(&c[0]);
    let edge = 0.5 + mettle::prec::DOMAIN_RANGE_SLACK * 0.5;
    assert!(
        x1 > 0.45 && x1 <= edge + 1e-12 && (x2 - 0.3).abs() < 0.1,
        "best at ({x1}, {x2})"
    );
    let notes: Vec<&str> = v["notes"]
        .as_array()
        .expect("notes")
        .iter()
        .filter_map(Value::as_str)
        .collect();
    assert!(
        notes
            .iter()
            .any(|n| n.contains("outside the training domain") && n.contains("x1")),
        "{notes:?}"
    );
}
