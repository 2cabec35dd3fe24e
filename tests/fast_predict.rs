//! The fast prediction path (`Model::predictor`, the default of `mettle
//! predict`) against the exact one, on real rows: UCI concrete compressive
//! strength (Yeh 1998, "Modeling of strength of high-performance concrete
//! using artificial neural networks", Cement and Concrete Research
//! 28:1797; CC BY 4.0), its fixed split 0, read from the shared benchmark
//! data and never copied here. The bound checked is the fast path's own
//! ([`mettle::prec::FAST_SD_TOL`]): every row's sd within it of the exact
//! sd, the committee's own sd too; its mean within a tenth of it in sd.

mod common;

use std::path::{Path, PathBuf};

use common::Workdir;
use mettle::committee::{CommitteeParams, KrigingMode, NoiseMode};
use mettle::data::Table;
use mettle::model::TrainSpec;
use mettle::observer::Silent;
use mettle::prec::FAST_SD_TOL;
use mettle::Model;
use ndarray::{s, Array2};

/// As tests/domain_sweep.rs: `$METTLE_SHARED`, else `../shared` beside the
/// checkout, else `/work/shared`.
fn concrete_dir() -> PathBuf {
    let rel = "datasets/uci/concrete";
    let candidates = [
        std::env::var_os("METTLE_SHARED").map(PathBuf::from),
        Some(Path::new(env!("CARGO_MANIFEST_DIR")).join("../shared")),
        Some(PathBuf::from("/work/shared")),
    ];
    candidates
        .into_iter()
        .flatten()
        .map(|root| root.join(rel))
        .find(|dir| dir.join("data.csv").is_file())
        .unwrap_or_else(|| {
            panic!("the shared UCI concrete data is not found: set METTLE_SHARED to the folder holding datasets/uci/")
        })
}

fn split(name: &str) -> Vec<usize> {
    std::fs::read_to_string(concrete_dir().join("splits").join(name))
        .expect("split file")
        .split_whitespace()
        .map(|s| s.parse().expect("row index"))
        .collect()
}

/// The rows `rows` of the concrete table (every column).
fn rows_of(rows: &[usize]) -> Table {
    let t = Table::read(&concrete_dir().join("data.csv")).expect("concrete data");
    let cols = t
        .names()
        .iter()
        .map(|n| {
            let c = t.numeric(n).expect("numeric");
            (n.clone(), rows.iter().map(|&i| c[i]).collect())
        })
        .collect();
    Table::from_columns("concrete", cols).expect("table")
}

const TARGET: &str = "compressive_strength_mpa";

/// A small committee with the residual process on `n_rows` of split 0's
/// training rows: few rows leave much of the posterior to the prior
/// (where a low rank can serve), many leave little.
fn train(n_rows: usize, hidden: (usize, usize), noise: NoiseMode) -> Model {
    let rows: Vec<usize> = split("train_0.txt").into_iter().take(n_rows).collect();
    let mut spec = TrainSpec::new(&[TARGET]);
    spec.params = CommitteeParams::default()
        .hidden(hidden.0, hidden.1)
        .restarts(1)
        .widen(false)
        .seed(11)
        .noise(noise)
        .kriging(KrigingMode::On);
    Model::train(&rows_of(&rows), &spec, &Silent).expect("training")
}

fn test_rows() -> Table {
    rows_of(&split("test_0.txt"))
}

/// Every test row: sd, the committee's sd and the mean of the fast path
/// against the exact path, within the stated bound.
fn check_against_exact(model: &Model, label: &str) {
    let test = test_rows();
    let exact = model.predict_with_scale(&test).expect("exact");
    let predictor = model.predictor(false);
    let fast = predictor.predict_with_scale(&test).expect("fast");
    let mut worst = (0.0f64, 0.0f64, 0.0f64);
    for (i, (e, f)) in exact.learnt[0].iter().zip(&fast.learnt[0]).enumerate() {
        let sd = (f.sd / e.sd - 1.0).abs();
        let csd = if e.committee_sd > 0.0 {
            (f.committee_sd / e.committee_sd - 1.0).abs()
        } else {
            f.committee_sd
        };
        let mean = (f.mean - e.mean).abs() / e.sd;
        assert!(
            sd <= FAST_SD_TOL,
            "{label}, test row {i}: sd {} against {}",
            f.sd,
            e.sd
        );
        assert!(
            csd <= FAST_SD_TOL,
            "{label}, test row {i}: committee sd {} against {}",
            f.committee_sd,
            e.committee_sd
        );
        assert!(
            mean <= 0.1 * FAST_SD_TOL,
            "{label}, test row {i}: mean {} against {}",
            f.mean,
            e.mean
        );
        worst = (worst.0.max(sd), worst.1.max(csd), worst.2.max(mean));
    }
    // the domain verdicts read the committee's sd: the same on these rows
    for (i, (e, f)) in exact.rows.iter().zip(&fast.rows).enumerate() {
        assert_eq!(e.level, f.level, "{label}, test row {i}: domain verdict");
    }
    println!(
        "{label}: largest |sd/exact − 1| {:.2e}, committee sd {:.2e}, |mean − exact|/sd {:.2e}; ranks {:?}; {} rows exact",
        worst.0,
        worst.1,
        worst.2,
        predictor.stats(),
        predictor.exact_rows()
    );
}

#[test]
fn fast_path_is_within_its_bound_on_the_test_rows() {
    // all 927 training rows, the noise varying with the inputs
    let full = train(927, (2, 4), NoiseMode::Varying);
    assert!(
        full.targets[0].committee.members[0].noise.is_some(),
        "varying noise"
    );
    assert!(
        full.targets[0].committee.kriging.is_some(),
        "process fitted"
    );
    check_against_exact(&full, "927 rows");
    // 60 rows and 8 hidden units (81 weights), constant noise
    let few = train(60, (8, 8), NoiseMode::Constant);
    check_against_exact(&few, "60 rows");
}

/// Two partitions (two whole trainings, seeds 11 and 12, each with its
/// own residual process): the fast path averages each partition's fast
/// prediction as the exact path averages the exact ones, within the same
/// bound, and with the mixture rule too (the partitions' spread added).
#[test]
fn fast_path_averages_partitions_as_the_exact_path() {
    use mettle::committee::PartitionVariance;
    let rows: Vec<usize> = split("train_0.txt").into_iter().take(60).collect();
    let mut spec = TrainSpec::new(&[TARGET]);
    spec.params = CommitteeParams::default()
        .hidden(8, 8)
        .restarts(1)
        .widen(false)
        .seed(11)
        .noise(NoiseMode::Constant)
        .kriging(KrigingMode::On)
        .partitions(2);
    let mut model = Model::train(&rows_of(&rows), &spec, &Silent).expect("training");
    let c = &model.targets[0].committee;
    assert_eq!(c.n_partitions(), 2);
    assert!(
        c.further_partitions[0].kriging.is_some(),
        "partition 2's own process"
    );
    check_against_exact(&model, "two partitions, within");
    model.targets[0].committee.partition_variance = Some(PartitionVariance::Mixture);
    check_against_exact(&model, "two partitions, mixture");
    // the exact path's average differs from partition 1 alone: the fast
    // path could not match it by ignoring partition 2
    let (_, scaled) = model.scaled_inputs(&test_rows()).expect("scaled");
    let both = model.targets[0].committee.predict_scaled(scaled.view());
    let first = model.targets[0].committee.clone();
    let mut alone = first;
    alone.further_partitions.clear();
    let one = alone.predict_scaled(scaled.view());
    assert!(both
        .mean
        .iter()
        .zip(&one.mean)
        .any(|(a, b)| (a - b).abs() > 1e-3 * one.var.mapv(f64::sqrt).mean().unwrap_or(1.0)));
}

/// A committee whose model part carries a scale (the gross-error refit's
/// `model_var_scale`, set here by hand so that the case is always there):
/// the fast path scales it as the exact path does.
#[test]
fn fast_path_applies_the_model_variance_scale() {
    let mut model = train(60, (8, 8), NoiseMode::Constant);
    let gross = model.targets[0]
        .committee
        .gross_errors
        .as_mut()
        .expect("the default fits the share of gross errors");
    gross.model_var_scale = Some(1.7);
    check_against_exact(&model, "60 rows, model variance × 1.7");
}

/// The scaled test rows, repeated to span several blocks.
fn many_scaled(model: &Model) -> Array2<f64> {
    let (_, scaled) = model.scaled_inputs(&test_rows()).expect("scaled");
    let n = scaled.nrows();
    Array2::from_shape_fn((7 * n, scaled.ncols()), |(i, j)| scaled[[i % n, j]])
}

#[test]
fn fast_results_do_not_depend_on_blocks_or_threads() {
    let model = train(60, (8, 8), NoiseMode::Constant);
    let x = many_scaled(&model);
    let predictor = model.predictor(false);
    let one_thread = rayon::ThreadPoolBuilder::new()
        .num_threads(1)
        .build()
        .expect("pool");
    let two_threads = rayon::ThreadPoolBuilder::new()
        .num_threads(2)
        .build()
        .expect("pool");
    let whole = one_thread.install(|| predictor.learnt_scale(&x));
    let whole2 = two_threads.install(|| predictor.learnt_scale(&x));
    assert_eq!(whole, whole2, "one thread against two");
    for chunk in [1, 7, 300] {
        let mut pieces = Vec::new();
        let mut start = 0;
        while start < x.nrows() {
            let end = (start + chunk).min(x.nrows());
            let part = x.slice(s![start..end, ..]).to_owned();
            pieces.extend(
                two_threads
                    .install(|| predictor.learnt_scale(&part))
                    .remove(0),
            );
            start = end;
        }
        assert_eq!(whole[0], pieces, "rows in pieces of {chunk}");
    }
}

/// Through the binary: the default (fast) and `--exact` estimate files
/// agree within the bound, and the batch size changes no byte.
#[test]
fn predict_command_fast_and_exact() {
    let w = Workdir::new();
    let model = train(60, (8, 8), NoiseMode::Constant);
    model.save(&w.path("model.json")).expect("save");
    let test = rows_of(&split("test_0.txt"));
    let names: Vec<String> = test.names()[..test.names().len() - 1].to_vec();
    let cols: Vec<Vec<f64>> = names
        .iter()
        .map(|n| test.numeric(n).expect("numeric"))
        .collect();
    let mut csv = names.join(",") + "\n";
    for i in 0..test.n_rows() {
        let row: Vec<String> = cols.iter().map(|c| format!("{}", c[i])).collect();
        csv.push_str(&(row.join(",") + "\n"));
    }
    w.write("rows.csv", csv);
    let run = |out: &str, extra: &[&str]| {
        let mut args = vec![
            "predict",
            "--model",
            "model.json",
            "--input",
            "rows.csv",
            "--format",
            "csv",
            "--digits",
            "12",
            "--out",
            out,
        ];
        args.extend_from_slice(extra);
        w.ok(&args);
        String::from_utf8(w.read(out)).expect("utf-8")
    };
    let fast = run("fast.csv", &[]);
    let fast_small = run("fast_small.csv", &["--batch-rows", "7"]);
    let exact = run("exact.csv", &["--exact"]);
    assert_eq!(fast, fast_small, "batch size changed the estimates");
    let column = |text: &str, name: &str| -> Vec<f64> {
        let mut lines = text.lines();
        let head: Vec<&str> = lines.next().expect("header").split(',').collect();
        let j = head.iter().position(|h| *h == name).expect("column");
        lines
            .map(|l| l.split(',').nth(j).expect("cell").parse().expect("number"))
            .collect()
    };
    let sd_fast = column(&fast, &format!("{TARGET}_sd"));
    let sd_exact = column(&exact, &format!("{TARGET}_sd"));
    assert_eq!(sd_fast.len(), test.n_rows());
    for (i, (f, e)) in sd_fast.iter().zip(&sd_exact).enumerate() {
        assert!(
            (f / e - 1.0).abs() <= FAST_SD_TOL,
            "row {}: sd {f} against {e}",
            i + 1
        );
    }
    let domain = |text: &str| -> Vec<String> {
        text.lines()
            .skip(1)
            .map(|l| l.split(',').nth(2).expect("domain").to_string())
            .collect()
    };
    assert_eq!(domain(&fast), domain(&exact), "domain verdicts");
}
