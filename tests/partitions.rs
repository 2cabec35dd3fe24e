//! `mettle train --partitions N`: N whole trainings of the target, partition
//! p with seed `--seed` + p, averaged (bagging over held-out splits,
//! Breiman 1996, *Machine Learning* 24:123). Checked through the real
//! binary on the invented fixture table of tests/common: the two
//! partitions of `--seed 5 --partitions 2` are, bit for bit, the
//! committees of `--seed 5` and `--seed 6`, and its prediction is the
//! average of theirs by the equations of
//! [`mettle::committee::PartitionVariance`] (mixture variance: Bishop
//! 1995, *Neural Networks for Pattern Recognition*, §9.6; the within rule
//! drops the spread term; the correlated rule takes the partitions' model
//! errors as equicorrelated, the variance of a mean of equicorrelated
//! variables from any statistics text, and adds the spread beyond what
//! that correlation expects, a term of this project's own).

mod common;

use common::{fixture_csv, Workdir};
use mettle::committee::{Committee, PartitionVariance, ScaledPrediction};
use mettle::Model;
use ndarray::Array2;

/// Quick settings (common practice for tests, no source).
const SMALL: [&str; 5] = ["--hidden", "1..2", "--restarts", "2", "--quiet"];

/// `mettle train` on `train.csv` with the small settings, `--seed seed` and
/// `extra`, writing `out`.
fn train_args<'a>(seed: &'a str, extra: &[&'a str], out: &'a str) -> Vec<&'a str> {
    let mut args = vec![
        "train",
        "--data",
        "train.csv",
        "--target",
        "y",
        "--out",
        out,
        "--seed",
        seed,
    ];
    args.extend(SMALL);
    args.extend(extra);
    args
}

fn train(w: &Workdir, seed: &str, extra: &[&str], out: &str) -> String {
    let o = w.ok(&train_args(seed, extra, out));
    String::from_utf8_lossy(&o.stderr).into_owned()
}

fn load(w: &Workdir, name: &str) -> Model {
    Model::load(&w.path(name)).expect("model loads")
}

/// The committee without its further partitions (partition 1 alone).
fn first_alone(c: &Committee) -> Committee {
    let mut c = c.clone();
    c.further_partitions.clear();
    c.partition_variance = None;
    c
}

/// Rows spread over and beyond the fixture's input box, scaled by `m`.
fn probe_rows(m: &Model) -> Array2<f64> {
    let n = 41;
    let raw = Array2::from_shape_fn((n, 2), |(i, j)| {
        let u = i as f64 / (n - 1) as f64;
        if j == 0 {
            -1.3 + 2.6 * u
        } else {
            2.4 - 2.8 * u
        }
    });
    let cols = vec![
        ("x1".to_string(), raw.column(0).to_vec()),
        ("x2".to_string(), raw.column(1).to_vec()),
    ];
    let t = mettle::data::Table::from_columns("probe", cols).expect("table");
    m.scaled_inputs(&t).expect("scaled").1
}

/// The rule of [`by_hand`].
#[derive(Clone, Copy)]
enum Rule {
    Within,
    Mixture,
    Correlated(f64),
}

/// The average of two partitions' predictions written out here, the
/// operations in the library's order: mean (μ₁ + μ₂)/2; variance, noise
/// and committee variance the mean of the two, the spread
/// s² = ((μ₁ − μ)² + (μ₂ − μ)²)/2 added to the variance and the committee
/// variance under `mixture`; under `correlated` with ρ (K = 2), the model
/// part u = var − noise (and the committee variance c alike) becomes
/// u·(1 + ρ)/2 + max(0, s² − u·(1 − ρ)/2).
fn by_hand(a: &ScaledPrediction, b: &ScaledPrediction, rule: Rule) -> ScaledPrediction {
    let mean = (&a.mean + &b.mean) / 2.0;
    let mut var = (&a.var + &b.var) / 2.0;
    let noise_var = (&a.noise_var + &b.noise_var) / 2.0;
    let mut committee_var = (&a.committee_var + &b.committee_var) / 2.0;
    let spread = ((&a.mean - &mean).mapv(|d| d * d) + (&b.mean - &mean).mapv(|d| d * d)) / 2.0;
    match rule {
        Rule::Within => {}
        Rule::Mixture => {
            var += &spread;
            committee_var += &spread;
        }
        Rule::Correlated(rho) => {
            let model = |u: f64, s2: f64| {
                let u = u.max(0.0);
                u * (1.0 + rho) / 2.0 + (s2 - u * (1.0 - rho) / 2.0).max(0.0)
            };
            for i in 0..mean.len() {
                var[i] = noise_var[i] + model(var[i] - noise_var[i], spread[i]);
                committee_var[i] = model(committee_var[i], spread[i]);
            }
        }
    }
    ScaledPrediction {
        mean,
        var,
        noise_var,
        committee_var,
    }
}

/// Each row of `got` within 1e-12 (relative) of `want`: the test's
/// arithmetic may round differently from the library's.
fn close(got: &ScaledPrediction, want: &ScaledPrediction, what: &str) {
    for (g, w) in [
        (&got.mean, &want.mean),
        (&got.var, &want.var),
        (&got.noise_var, &want.noise_var),
        (&got.committee_var, &want.committee_var),
    ] {
        for (i, (g, w)) in g.iter().zip(w).enumerate() {
            assert!(
                (g - w).abs() <= 1e-12 * w.abs().max(1e-300),
                "{what}, row {i}: {g} against {w}"
            );
        }
    }
}

#[test]
fn two_partitions_are_the_trainings_of_two_seeds_averaged() {
    let w = Workdir::new();
    w.write("train.csv", fixture_csv(90, 29));
    train(&w, "5", &[], "s5.json");
    train(&w, "6", &[], "s6.json");
    let log = {
        let mut args = vec![
            "train",
            "--data",
            "train.csv",
            "--target",
            "y",
            "--out",
            "p2.json",
            "--seed",
            "5",
            "--partitions",
            "2",
            "--partition-variance",
            "mixture",
        ];
        args.extend(&SMALL[..4]);
        String::from_utf8_lossy(&w.ok(&args).stderr).into_owned()
    };
    // the summary names each partition with its seed and noise choice
    assert!(log.contains("partition 1 of 2 (seed 5)"), "{log}");
    assert!(log.contains("partition 2 of 2 (seed 6)"), "{log}");
    assert!(log.contains("variance rule 'mixture'"), "{log}");

    let (a, b, p) = (
        load(&w, "s5.json"),
        load(&w, "s6.json"),
        load(&w, "p2.json"),
    );
    let pc = &p.targets[0].committee;
    assert_eq!(pc.n_partitions(), 2);
    assert_eq!(pc.partition_variance, Some(PartitionVariance::Mixture));
    assert_eq!(p.training.settings.partitions, 2);
    assert_eq!(
        p.training.settings.partition_variance,
        PartitionVariance::Mixture
    );
    // bit for bit: partition 1 is seed 5's committee, partition 2 seed 6's
    let (ca, cb) = (&a.targets[0].committee, &b.targets[0].committee);
    assert!(ca.further_partitions.is_empty() && ca.partition_variance.is_none());
    assert_eq!(first_alone(pc), *ca, "partition 1 against --seed 5");
    assert_eq!(
        pc.further_partitions[0], *cb,
        "partition 2 against --seed 6"
    );
    // the two seeds chose differently somewhere (else the test proves little)
    assert_ne!(ca.members, cb.members);

    let x = probe_rows(&p);
    assert_eq!(x, probe_rows(&a), "the same scaling of the inputs");
    let (pa, pb) = (ca.predict_scaled(x.view()), cb.predict_scaled(x.view()));
    assert_eq!(
        pc.predict_scaled(x.view()),
        by_hand(&pa, &pb, Rule::Mixture),
        "mixture"
    );
    let mut within = pc.clone();
    within.partition_variance = Some(PartitionVariance::Within);
    let w_pred = within.predict_scaled(x.view());
    assert_eq!(w_pred, by_hand(&pa, &pb, Rule::Within), "within");
    // the two rules differ by the spread of the partitions' means
    let m = pc.predict_scaled(x.view());
    assert!(m.var.iter().zip(&w_pred.var).all(|(m, w)| m >= w));
    assert!(m.var.iter().zip(&w_pred.var).any(|(m, w)| m > w));

    // correlated, ρ = 0.3: between within (where the partitions agree)
    // and mixture
    let mut corr = pc.clone();
    corr.partition_variance = Some(PartitionVariance::Correlated);
    corr.partition_correlation = Some(0.3);
    let c_pred = corr.predict_scaled(x.view());
    close(
        &c_pred,
        &by_hand(&pa, &pb, Rule::Correlated(0.3)),
        "correlated",
    );
    assert!(c_pred.var.iter().zip(&m.var).all(|(c, m)| c <= m));

    // the same through the fast path (the default of `mettle predict`):
    // each partition's fast prediction averaged, within the fast path's
    // bound of the exact one (tests/fast_predict.rs)
    let (fast, _) = pc.fast(x.view()).predict_scaled(x.view());
    let (c_fast, _) = corr.fast(x.view()).predict_scaled(x.view());
    for i in 0..x.nrows() {
        let tol = mettle::prec::FAST_SD_TOL;
        assert!(
            (c_fast.var[i].sqrt() / c_pred.var[i].sqrt() - 1.0).abs() <= tol,
            "correlated, row {i}"
        );
        assert!(
            (fast.var[i].sqrt() / m.var[i].sqrt() - 1.0).abs() <= tol,
            "row {i}"
        );
        assert!(
            (fast.mean[i] - m.mean[i]).abs() <= 0.1 * tol * m.var[i].sqrt(),
            "row {i}"
        );
    }

    // one partition writes neither field (model files as before)
    let one = String::from_utf8(w.read("s5.json")).expect("utf-8");
    assert!(!one.contains("further_partitions") && !one.contains("partition_variance"));
    let two = String::from_utf8(w.read("p2.json")).expect("utf-8");
    assert!(two.contains("\"further_partitions\"") && two.contains("\"partition_variance\""));
}

/// `--partition-variance correlated --partition-correlation 0.3` through the
/// binary: the rule and ρ are stored with the committee and in the
/// settings, the summary names them, and the committee predicts by the
/// rule from its two partitions; a ρ outside [0, 1] is refused with the
/// setting's name and range.
#[test]
fn the_correlated_rule_is_stored_and_applied() {
    let w = Workdir::new();
    w.write("train.csv", fixture_csv(90, 29));
    train(
        &w,
        "5",
        &[
            "--partitions",
            "2",
            "--partition-variance",
            "correlated",
            "--partition-correlation",
            "0.3",
        ],
        "c2.json",
    );
    let p = load(&w, "c2.json");
    let pc = &p.targets[0].committee;
    assert_eq!(pc.partition_variance, Some(PartitionVariance::Correlated));
    assert_eq!(pc.partition_correlation, Some(0.3));
    assert_eq!(pc.partition_rule().label(), "correlated, rho 0.3");
    assert_eq!(
        p.training.settings.partition_variance,
        PartitionVariance::Correlated
    );
    assert_eq!(p.training.settings.partition_correlation, 0.3);
    let x = probe_rows(&p);
    let (pa, pb) = (
        first_alone(pc).predict_scaled(x.view()),
        pc.further_partitions[0].predict_scaled(x.view()),
    );
    close(
        &pc.predict_scaled(x.view()),
        &by_hand(&pa, &pb, Rule::Correlated(0.3)),
        "stored rule",
    );
    for bad in [
        "--partition-correlation=1.5",
        "--partition-correlation=-0.2",
    ] {
        let out = w.run(&train_args(
            "5",
            &[
                "--partitions",
                "2",
                "--partition-variance",
                "correlated",
                bad,
            ],
            "bad.json",
        ));
        let err = common::stderr(&out);
        assert!(!out.status.success(), "{bad} accepted");
        assert!(
            err.contains("partition correlation") && err.contains("between 0 and 1"),
            "{bad}: {err}"
        );
    }
}

/// `mettle predict` of a two-partition model through the binary: its mean
/// is the average of the two seeds' means on the learnt (here identity)
/// scale, to the printed precision.
#[test]
fn predict_averages_the_partitions() {
    let w = Workdir::new();
    w.write("train.csv", fixture_csv(90, 31));
    train(&w, "2", &[], "s2.json");
    train(&w, "3", &[], "s3.json");
    train(&w, "2", &["--partitions", "2"], "p2.json");
    w.write("new.csv", "x1,x2\n0.3,1.1\n-0.7,0.2\n0.95,1.9\n");
    let mean = |model: &str| -> Vec<f64> {
        let o = w.ok(&[
            "predict", "--model", model, "--input", "new.csv", "--exact", "--format", "json",
        ]);
        common::predict_rows(&o.stdout)
            .iter()
            .map(|r| r["mean"].as_f64().expect("mean"))
            .collect()
    };
    let (a, b, p) = (mean("s2.json"), mean("s3.json"), mean("p2.json"));
    for i in 0..3 {
        let avg = 0.5 * (a[i] + b[i]);
        assert!(
            (p[i] - avg).abs() <= 1e-9 * avg.abs().max(1.0),
            "row {i}: {} against {avg}",
            p[i]
        );
    }
}

/// Transition curves (`mettle transition`) draw their curves from every
/// partition: on the bundled invented model (Fellhaven scenario), a second
/// partition made of the Charpy committee with every member's output bias
/// lowered (its curve shifted down on the learnt scale) puts the drawn
/// median of T40J and the centre curve's crossing strictly between those
/// of either partition alone (an equal mixture of the two, Bishop 1995
/// §9.6); a reader ignoring partition 2 would stay at partition 1's.
#[test]
fn transition_draws_from_every_partition() {
    use mettle::curves::{base_row, transition, TransitionOptions};
    let repo = std::path::PathBuf::from(env!("CARGO_MANIFEST_DIR"));
    let one = Model::load(&repo.join("models/fellhaven_welds.json")).expect("bundled model");
    let k = one
        .targets
        .iter()
        .position(|t| t.name == "charpy_j")
        .expect("charpy_j");
    let table = mettle::data::Table::read(&repo.join("datasets/fellhaven_new_welds.csv"))
        .expect("base table");
    let mut shifted = one.targets[k].committee.clone();
    for m in &mut shifted.members {
        *m.weights.last_mut().expect("output bias") -= 0.15;
    }
    let mut low = one.clone();
    low.targets[k].committee = shifted.clone();
    let mut both = one.clone();
    both.targets[k].committee.further_partitions.push(shifted);
    both.targets[k].committee.partition_variance = Some(PartitionVariance::Within);
    let t40 = |m: &Model| {
        let o = TransitionOptions {
            temperature_input: "test_temp_c".into(),
            target: Some("charpy_j".into()),
            from: -150.0,
            to: 60.0,
            steps: 106,
            energies: vec![40.0],
            requirement: None,
            samples: 1000,
            seed: 3,
        };
        let base = base_row(m, Some(&table), &[]).expect("base row");
        let t = transition(m, base, &o).expect("transition");
        let c = &t.crossings[0];
        (
            c.centre.expect("centre crosses 40 J"),
            c.median.expect("drawn curves cross 40 J"),
        )
    };
    let (a, b, mix) = (t40(&one), t40(&low), t40(&both));
    for (what, a, b, m) in [
        ("centre", a.0, b.0, mix.0),
        ("drawn median", a.1, b.1, mix.1),
    ] {
        let gap = b - a;
        assert!(
            gap.abs() > 5.0,
            "{what}: the shift moves T40J ({a} → {b} °C)"
        );
        let at = (m - a) / gap;
        assert!(
            (0.2..=0.8).contains(&at),
            "{what}: two partitions {m} °C, partition 1 alone {a}, partition 2 alone {b}"
        );
    }
}
