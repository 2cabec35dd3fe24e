//! The engine's speed targets of issue 28, measured against a baseline
//! binary in one run (not a timed test; run by hand):
//!
//! ```text
//! make bench-engine
//! # = builds the baseline (main at BASELINE_COMMIT, once, in ~/.cache/mettle/baseline-*),
//! #   then: cargo bench --locked --bench engine_targets -- \
//! #           --baseline BASELINE_BIN --new NEW_BIN [--rows 1000000] [DATA_DIR]
//! ```
//!
//! Both binaries run the same commands on the same files, one after the
//! other for each measurement (the newer first), each as a whole process
//! timed by GNU time (`/usr/bin/time`: wall, user and system CPU, peak
//! resident memory). The ratio is baseline ÷ new for times (above 1: the
//! new one is faster) and new ÷ baseline for rates. The machine is shared,
//! so CPU seconds say more than wall seconds; every figure is one run.
//!
//! 1. Training, issue 28 item 1 (target: ≥ 2× faster at equal quality): a
//!    committee of one held-out partition, as the baseline trains it, on all
//!    1 030 concrete rows (`mettle train --seed 1` against the baseline's
//!    same command). The new binary's default committee is the model of
//!    step 4; if its default ever holds more than one partition, the bench
//!    times `--partitions 1` for this line and reports the default beside it.
//! 2. Large archives, item 2 (target for 100 000 rows × 30 inputs: under
//!    5 minutes; here the 10 000-row step of `make bench-scale`, 8
//!    inputs, its reduced search, so that both binaries finish in minutes).
//! 3. Prediction rate per core, item 3 (target: ≥ 1 000 000 rows/s per core
//!    for a 10-member committee of 10-unit networks with the domain guard):
//!    a committee trained with `--hidden 10 --kriging off` on concrete,
//!    its members repeated to ten, 200 000 rows of CSV predicted on one
//!    thread (`RAYON_NUM_THREADS=1`); rows per CPU second of the whole
//!    process (reading, guard, estimates, writing), and for the new code
//!    also in process (committee and domain guard alone, one thread).
//! 4. End to end, item 3 (target: ≥ 500 000 rows/s on 2 cores): `mettle
//!    predict --format csv` of N concrete-like rows (default 1 000 000: the
//!    data rows' inputs, each moved by up to ±2 %, seeded) with the default
//!    concrete model of step 1 (the new binary's, read by both), CSV in,
//!    CSV out, domain guard and residual process.
//!
//! Beside item 3, the bench times itself running [`peak::run`] (twelve
//! chains of 4-wide fused multiply-adds, as a whole process under GNU
//! time): this core's double-precision multiply-add ceiling, and the rows
//! per second at which the exact variance of the 3a committee alone
//! (51 510 multiply-adds per row) would run at that ceiling.
//!
//! Items 4 (same answer on any CPU) and 5 (calibration) are checked by
//! tests/cross_cpu.rs and the calibration tables of docs/benchmarks.md,
//! not timed here.
//!
//! DATA_DIR defaults to ../shared/datasets/uci (the concrete set's
//! data.csv is read from DATA_DIR/concrete).

#[path = "support/peak.rs"]
mod peak;
#[path = "support/synthetic.rs"]
mod synthetic;

use std::fmt::Write as _;
use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::Instant;

use mettle::data::Table;
use mettle::Model;

/// Rows of the per-core prediction measurement.
const CORE_ROWS: usize = 200_000;

/// One whole-process run, from GNU time.
#[derive(Clone, Copy, Debug)]
struct Run {
    wall: f64,
    cpu: f64,
    peak_mb: f64,
}

/// `bin args…` run under `/usr/bin/time`, with `env` set; panics when it
/// fails (the bench has nothing to report then).
fn timed(bin: &Path, args: &[&str], env: &[(&str, &str)], work: &Path) -> Run {
    let report = work.join("time.txt");
    let mut cmd = Command::new("/usr/bin/time");
    cmd.arg("-f")
        .arg("%e %U %S %M")
        .arg("-o")
        .arg(&report)
        .arg(bin)
        .args(args)
        .env("OPENBLAS_NUM_THREADS", "1");
    for (k, v) in env {
        cmd.env(k, v);
    }
    let out = cmd.output().expect("/usr/bin/time (Debian package `time`)");
    assert!(
        out.status.success(),
        "{} {}: {}",
        bin.display(),
        args.join(" "),
        String::from_utf8_lossy(&out.stderr)
    );
    let text = std::fs::read_to_string(&report).expect("time's report");
    let f: Vec<f64> = text
        .lines()
        .last()
        .expect("a line")
        .split_whitespace()
        .map(|s| s.parse().expect("a number"))
        .collect();
    Run {
        wall: f[0],
        cpu: f[1] + f[2],
        peak_mb: f[3] / 1024.0,
    }
}

/// One line of the final table.
struct Line {
    target: String,
    what: String,
    new: String,
    base: String,
    ratio: f64,
    met: Option<bool>,
}

fn arg(args: &[String], name: &str) -> Option<String> {
    args.iter()
        .position(|a| a == name)
        .and_then(|i| args.get(i + 1).cloned())
}

/// The columns of `table` as CSV text, `digits` significant digits.
fn write_csv(path: &Path, names: &[String], cols: &[Vec<f64>]) {
    let n = cols.first().map_or(0, Vec::len);
    let mut s = String::with_capacity(n * names.len() * 10);
    s.push_str(&names.join(","));
    s.push('\n');
    for i in 0..n {
        for (j, c) in cols.iter().enumerate() {
            if j > 0 {
                s.push(',');
            }
            write!(s, "{}", (c[i] * 1e4).round() / 1e4).expect("to a string");
        }
        s.push('\n');
    }
    std::fs::write(path, s).expect("writing a CSV");
}

/// Fused multiply-add rounds of the ceiling measurement (2.4·10¹⁰
/// multiply-adds: about a second at this machine's rate).
const PEAK_ITERS: u64 = 500_000_000;

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    if let Some(iters) = arg(&args, "--fma-peak") {
        let iters: u64 = iters.parse().expect("--fma-peak ITERS");
        let v = peak::run(iters).expect("a CPU with AVX2 and FMA");
        // the value depends on every multiply-add; printing it keeps them
        println!("{v}");
        return;
    }
    let base_bin = PathBuf::from(arg(&args, "--baseline").expect("--baseline BIN"));
    let new_bin = PathBuf::from(arg(&args, "--new").expect("--new BIN"));
    let big_rows: usize = arg(&args, "--rows").map_or(1_000_000, |s| s.parse().expect("--rows N"));
    let flag_values = ["--baseline", "--new", "--rows"];
    let dir = args
        .iter()
        .enumerate()
        .filter(|(i, a)| {
            !a.starts_with("--") && (*i == 0 || !flag_values.contains(&args[i - 1].as_str()))
        })
        .map(|(_, a)| PathBuf::from(a))
        .next()
        .unwrap_or_else(|| PathBuf::from("../shared/datasets/uci"))
        .join("concrete");
    let work = std::env::temp_dir().join(format!("mettle-bench-engine-{}", std::process::id()));
    std::fs::create_dir_all(&work).expect("a work directory");
    let w = |name: &str| work.join(name).display().to_string();
    let data = dir.join("data.csv");
    let table = Table::read(&data).expect("concrete data.csv");
    let names = table.names().to_vec();
    let target = names.last().expect("a target").clone();
    let input_names = names[..names.len() - 1].to_vec();
    let inputs: Vec<Vec<f64>> = input_names
        .iter()
        .map(|n| table.numeric(n).expect("numeric"))
        .collect();
    let data_s = data.display().to_string();
    println!(
        "baseline {}\nnew      {}\nwork     {}",
        base_bin.display(),
        new_bin.display(),
        work.display()
    );
    let mut lines = Vec::new();
    let both = |label: &str, args: &[&str], env: &[(&str, &str)]| {
        let n = timed(&new_bin, args, env, &work);
        let b = timed(&base_bin, args, env, &work);
        println!(
            "{label}: new {:.1} s wall, {:.1} s CPU, {:.0} MB; baseline {:.1} s wall, {:.1} s CPU, {:.0} MB",
            n.wall, n.cpu, n.peak_mb, b.wall, b.cpu, b.peak_mb
        );
        (n, b)
    };

    // 1. training, concrete: the new binary's default committee (the model
    //    of step 4); when that is more than one held-out partition, the
    //    baseline's only kind (`--partitions 1`) is timed as well, for the
    //    comparison at equal quality
    let concrete_model = w("concrete_new.json");
    let base_model = w("concrete_base.json");
    let train = [
        "train", "--data", &data_s, "--target", &target, "--seed", "1", "--quiet",
    ];
    let d = timed(
        &new_bin,
        &[&train[..], &["--out", &concrete_model]].concat(),
        &[],
        &work,
    );
    let default_partitions = Model::load(Path::new(&concrete_model))
        .expect("the default concrete model")
        .targets[0]
        .committee
        .n_partitions();
    let n = if default_partitions == 1 {
        d
    } else {
        let one_partition = w("concrete_new_p1.json");
        timed(
            &new_bin,
            &[&train[..], &["--partitions", "1", "--out", &one_partition]].concat(),
            &[],
            &work,
        )
    };
    let b = timed(
        &base_bin,
        &[&train[..], &["--out", &base_model]].concat(),
        &[],
        &work,
    );
    println!(
        "train concrete: new {:.1} s wall, {:.1} s CPU (one partition); baseline {:.1} s wall, {:.1} s CPU",
        n.wall, n.cpu, b.wall, b.cpu
    );
    lines.push(Line {
        target: "1. training ≥ 2× faster".into(),
        what: "one partition (`--partitions 1`), 1 030 concrete rows (CPU s)".into(),
        new: format!("{:.1}", n.cpu),
        base: format!("{:.1}", b.cpu),
        ratio: b.cpu / n.cpu,
        met: Some(b.cpu / n.cpu >= 2.0),
    });
    if default_partitions > 1 {
        println!(
            "train concrete, new binary's defaults ({default_partitions} partitions): {:.1} s wall, {:.1} s CPU",
            d.wall, d.cpu
        );
        lines.push(Line {
            target: "1. (the default, new only)".into(),
            what: format!(
                "the new binary's default committee, {default_partitions} partitions, the same rows (CPU s)"
            ),
            new: format!("{:.1}", d.cpu),
            base: format!("{:.1}", b.cpu),
            ratio: b.cpu / d.cpu,
            met: None,
        });
    }

    // 2. 10 000 rows × 8 inputs, the reduced search of bench-scale
    let syn = synthetic::columns(10_000, 8, 1);
    let syn_names: Vec<String> = syn.iter().map(|(n, _)| n.clone()).collect();
    let syn_cols: Vec<Vec<f64>> = syn.into_iter().map(|(_, c)| c).collect();
    write_csv(&work.join("syn10k.csv"), &syn_names, &syn_cols);
    let syn_s = w("syn10k.csv");
    let syn_out = w("syn10k.json");
    let (n, b) = both(
        "train 10 000 rows",
        &[
            "train",
            "--data",
            &syn_s,
            "--target",
            "y",
            "--hidden",
            "1..4",
            "--no-widen",
            "--restarts",
            "2",
            "--noise",
            "constant",
            "--no-log-inputs",
            "--seed",
            "1",
            "--quiet",
            "--out",
            &syn_out,
        ],
        &[],
    );
    lines.push(Line {
        target: "2. large archives (100 000 × 30 < 5 min)".into(),
        what: "10 000 rows × 8 inputs, reduced search (CPU s)".into(),
        new: format!("{:.1}", n.cpu),
        base: format!("{:.1}", b.cpu),
        ratio: b.cpu / n.cpu,
        met: None,
    });

    // 3. ten members of 10 hidden units, one thread
    let m10 = w("hidden10.json");
    timed(
        &new_bin,
        &[
            "train",
            "--data",
            &data_s,
            "--target",
            &target,
            "--hidden",
            "10",
            "--no-widen",
            "--restarts",
            "2",
            "--kriging",
            "off",
            "--seed",
            "1",
            "--quiet",
            "--out",
            &m10,
        ],
        &[],
        &work,
    );
    let mut model = Model::load(Path::new(&m10)).expect("the 10-unit model");
    let members = model.targets[0].committee.members.clone();
    model.targets[0].committee.members = members.iter().cycle().take(10).cloned().collect();
    model.save(Path::new(&m10)).expect("writing the model");
    let jitter = |rows: usize, seed: u64| -> Vec<Vec<f64>> {
        use rand::{Rng, SeedableRng};
        let mut rng = rand_xoshiro::Xoshiro256PlusPlus::seed_from_u64(seed);
        let n0 = inputs[0].len();
        let mut cols = vec![Vec::with_capacity(rows); inputs.len()];
        for i in 0..rows {
            for (c, src) in cols.iter_mut().zip(&inputs) {
                c.push(src[i % n0] * (1.0 + rng.random_range(-0.02..0.02)));
            }
        }
        cols
    };
    let core_cols = jitter(CORE_ROWS, 11);
    write_csv(&work.join("rows200k.csv"), &input_names, &core_cols);
    let rows200k = w("rows200k.csv");
    let out = w("out.csv");
    let predict = |model: &str, input: &str| {
        vec![
            "predict".to_string(),
            "--model".into(),
            model.into(),
            "--input".into(),
            input.into(),
            "--format".into(),
            "csv".into(),
            "--out".into(),
            out.clone(),
        ]
    };
    let p = predict(&m10, &rows200k);
    let p: Vec<&str> = p.iter().map(String::as_str).collect();
    let (n, b) = both(
        "predict 200 000 rows, 10 × 10-unit members, 1 thread",
        &p,
        &[("RAYON_NUM_THREADS", "1")],
    );
    let (rn, rb) = (CORE_ROWS as f64 / n.cpu, CORE_ROWS as f64 / b.cpu);
    lines.push(Line {
        target: "3a. ≥ 1 000 000 rows/s per core, 10 × 10-unit, guard".into(),
        what: "200 000 rows CSV to CSV, 1 thread (rows per CPU s)".into(),
        new: format!("{rn:.0}"),
        base: format!("{rb:.0}"),
        ratio: rn / rb,
        met: Some(rn >= 1e6),
    });
    // the same committee in process: estimates and domain guard alone
    let core_table = Table::from_columns(
        "rows200k",
        input_names.iter().cloned().zip(core_cols).collect(),
    )
    .expect("table");
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(1)
        .build()
        .expect("one thread");
    let in_process = pool.install(|| {
        let t = Instant::now();
        let predictor = model.predictor(false);
        let full = predictor
            .predict_with_scale(&core_table)
            .expect("prediction");
        assert_eq!(full.rows.len(), CORE_ROWS);
        (t.elapsed().as_secs_f64(), predictor.stats())
    });
    println!(
        "in process (this tree's library, 1 thread, fast path built and run): {:.2} s = {:.0} rows/s; ranks {:?}",
        in_process.0,
        CORE_ROWS as f64 / in_process.0,
        in_process.1.iter().map(|s| s.ranks.clone()).collect::<Vec<_>>()
    );
    lines.push(Line {
        target: "3a. (in process, new only)".into(),
        what: "committee + domain guard, 1 thread (rows/s, wall)".into(),
        new: format!("{:.0}", CORE_ROWS as f64 / in_process.0),
        base: "—".into(),
        ratio: f64::NAN,
        met: Some(CORE_ROWS as f64 / in_process.0 >= 1e6),
    });

    // the ceiling: this core's multiply-add rate, one thread
    let me = std::env::current_exe().expect("the bench's own path");
    let iters = PEAK_ITERS.to_string();
    let run = timed(&me, &["--fma-peak", &iters], &[], &work);
    let madds_per_s = (PEAK_ITERS * peak::MADDS_PER_ITER) as f64 / run.cpu;
    let per_row = peak::exact_variance_madds(10, 101);
    println!(
        "multiply-add ceiling: {:.2e} per CPU s ({:.1} s CPU); exact variance of 10 members of 101 weights: {per_row} per row",
        madds_per_s, run.cpu
    );
    lines.push(Line {
        target: "3a. (ceiling, this core)".into(),
        what: format!(
            "fused multiply-adds per CPU s ({:.2e}) ÷ {per_row} per row: rows/s of the exact variance alone",
            madds_per_s
        ),
        new: format!("{:.0}", madds_per_s / per_row as f64),
        base: "—".into(),
        ratio: f64::NAN,
        met: Some(madds_per_s / per_row as f64 >= 1e6),
    });

    // 4. end to end, default concrete model, 2 cores
    let big = jitter(big_rows, 12);
    write_csv(&work.join("rows_big.csv"), &input_names, &big);
    drop(big);
    let p = predict(&concrete_model, &w("rows_big.csv"));
    let p: Vec<&str> = p.iter().map(String::as_str).collect();
    let (n, b) = both(
        &format!("predict {big_rows} rows, default concrete model, 2 threads"),
        &p,
        &[],
    );
    let (rn, rb) = (big_rows as f64 / n.wall, big_rows as f64 / b.wall);
    lines.push(Line {
        target: "3b. ≥ 500 000 rows/s end to end, 2 cores".into(),
        what: format!("{big_rows} rows CSV to CSV, default concrete model (rows/s, wall)"),
        new: format!("{rn:.0}"),
        base: format!("{rb:.0}"),
        ratio: rn / rb,
        met: Some(rn >= 5e5),
    });
    lines.push(Line {
        target: "3b. (CPU)".into(),
        what: "the same run, rows per CPU second".into(),
        new: format!("{:.0}", big_rows as f64 / n.cpu),
        base: format!("{:.0}", big_rows as f64 / b.cpu),
        ratio: b.cpu / n.cpu,
        met: None,
    });
    lines.push(Line {
        target: "3b. (memory)".into(),
        what: "the same run, peak resident MB".into(),
        new: format!("{:.0}", n.peak_mb),
        base: format!("{:.0}", b.peak_mb),
        ratio: n.peak_mb / b.peak_mb,
        met: None,
    });

    println!("\n| target | measured | new | baseline | ratio | met |\n|---|---|---|---|---|---|");
    for l in &lines {
        println!(
            "| {} | {} | {} | {} | {} | {} |",
            l.target,
            l.what,
            l.new,
            l.base,
            if l.ratio.is_finite() {
                format!("{:.2}", l.ratio)
            } else {
                "—".into()
            },
            match l.met {
                Some(true) => "yes",
                Some(false) => "no",
                None => "—",
            }
        );
    }
    println!("(ratio: baseline ÷ new for CPU seconds, new ÷ baseline for rates; one run each)");
    let _ = std::fs::remove_dir_all(&work);
}
