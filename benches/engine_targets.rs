//! The engine's speed and memory targets, measured (not a timed test):
//!
//! 1. a default committee on concrete — the 927 training rows of split 0 of
//!    the shared UCI set, 8 inputs — trained once, wall time reported
//!    (target: under 20 s on the 2-core build machine);
//! 2. peak resident memory of this process after that training, from
//!    `VmHWM` in /proc/self/status (target: under 200 MB);
//! 3. prediction throughput of a 10-member committee (the trained
//!    committee's members repeated to ten) on 200 000 rows (target: at
//!    least 100 000 rows per second; the median of five runs), without
//!    and, when the trained committee kriges its residuals, with the
//!    residual process (each estimate then costs O(N²) more for the
//!    process's variance).
//!
//! ```text
//! make bench-engine      # or: cargo bench --bench engine_targets -- [DATA_DIR]
//! ```
//!
//! DATA_DIR defaults to ../shared/datasets/uci.

#[path = "support/memory.rs"]
mod memory;

use std::path::PathBuf;
use std::time::Instant;

use mettle::data::Table;
use mettle::model::TrainSpec;
use mettle::observer::Silent;
use mettle::Model;

/// Timed predictions of the committee alone (odd, for a plain median).
const PREDICT_REPEATS: usize = 5;

fn main() {
    let dir = std::env::args()
        .skip(1)
        .find(|a| !a.starts_with("--"))
        .map_or_else(|| PathBuf::from("../shared/datasets/uci"), PathBuf::from)
        .join("concrete");
    let table = Table::read(&dir.join("data.csv")).expect("concrete data.csv");
    let names = table.names().to_vec();
    let cols: Vec<Vec<f64>> = names
        .iter()
        .map(|n| table.numeric(n).expect("numeric"))
        .collect();
    let rows: Vec<usize> = std::fs::read_to_string(dir.join("splits/train_0.txt"))
        .expect("split file")
        .split_whitespace()
        .map(|s| s.parse().expect("row index"))
        .collect();
    let train = Table::from_columns(
        "concrete train_0",
        names
            .iter()
            .zip(&cols)
            .map(|(n, c)| (n.clone(), rows.iter().map(|&i| c[i]).collect()))
            .collect(),
    )
    .expect("table");
    let target = names.last().expect("target").clone();
    let spec = TrainSpec::new(&[target.as_str()]);

    let t0 = Instant::now();
    let mut model = Model::train(&train, &spec, &Silent).expect("training");
    let train_s = t0.elapsed().as_secs_f64();
    let c = &model.targets[0].committee;
    println!(
        "train: {} rows, {} inputs, default committee: {train_s:.1} s wall ({} candidates, {} members, hidden {}..{}, noise {}, {})",
        rows.len(),
        names.len() - 1,
        c.candidates.len(),
        c.members.len(),
        c.selection.hidden_searched.0,
        c.selection.hidden_searched.1,
        if c.selection.noise.varying { "varying" } else { "constant" },
        match &c.kriging {
            Some(k) => format!("residuals kriged over {} rows", k.x.nrows()),
            None => "residuals not kriged".to_string(),
        }
    );
    match memory::peak_resident_mb() {
        Some(mb) => println!("memory: peak resident {mb:.0} MB after training"),
        None => println!("memory: /proc/self/status not readable"),
    }

    // a 10-member committee: the trained members repeated
    let members = model.targets[0].committee.members.clone();
    let ten: Vec<_> = members.iter().cycle().take(10).cloned().collect();
    model.targets[0].committee.members = ten;
    let n_rows = 200_000;
    let big = Table::from_columns(
        "concrete x200k",
        names
            .iter()
            .zip(&cols)
            .map(|(n, c)| (n.clone(), (0..n_rows).map(|i| c[i % c.len()]).collect()))
            .collect(),
    )
    .expect("table");
    let process = model.targets[0].committee.kriging.take();
    // the machine's speed wanders from second to second (a shared virtual
    // machine): the rate is measured PREDICT_REPEATS times and the median
    // reported beside every run
    let mut rates: Vec<f64> = (0..PREDICT_REPEATS)
        .map(|_| {
            let t1 = Instant::now();
            let pred = model.predict(&big).expect("prediction");
            let pred_s = t1.elapsed().as_secs_f64();
            assert_eq!(pred.len(), n_rows);
            n_rows as f64 / pred_s
        })
        .collect();
    let runs: Vec<String> = rates.iter().map(|r| format!("{r:.0}")).collect();
    rates.sort_by(f64::total_cmp);
    println!(
        "predict: {n_rows} rows, 10 members, committee alone: median {:.0} rows/s over {PREDICT_REPEATS} runs ({} rows/s)",
        rates[PREDICT_REPEATS / 2],
        runs.join(", ")
    );
    fast_rates(&model, &big, "committee alone");
    if let Some(k) = process {
        let n_process = k.x.nrows();
        model.targets[0].committee.kriging = Some(k);
        let t2 = Instant::now();
        let pred = model.predict(&big).expect("prediction");
        let pred_s = t2.elapsed().as_secs_f64();
        assert_eq!(pred.len(), n_rows);
        println!(
            "predict: {n_rows} rows, 10 members and the residual process over {n_process} rows: {pred_s:.2} s, {:.0} rows/s",
            n_rows as f64 / pred_s
        );
        fast_rates(&model, &big, "with the residual process");
    }
    if let Some(mb) = memory::peak_resident_mb() {
        println!("memory: peak resident {mb:.0} MB after prediction");
    }
}

/// The fast path (`Model::predictor`, the default of `mettle predict`):
/// its rate, the median of [`PREDICT_REPEATS`] runs, how many rows it
/// handed to the exact path, and its largest departure from the exact sd.
fn fast_rates(model: &Model, big: &Table, label: &str) {
    let t = Instant::now();
    let predictor = model.predictor(false);
    let built = t.elapsed().as_secs_f64();
    let mut rates: Vec<f64> = (0..PREDICT_REPEATS)
        .map(|_| {
            let t1 = Instant::now();
            let pred = predictor.predict_with_scale(big).expect("prediction");
            assert_eq!(pred.rows.len(), big.n_rows());
            big.n_rows() as f64 / t1.elapsed().as_secs_f64()
        })
        .collect();
    rates.sort_by(f64::total_cmp);
    let exact = model.predict_with_scale(big).expect("prediction");
    let fast = predictor.predict_with_scale(big).expect("prediction");
    let worst = exact.learnt[0]
        .iter()
        .zip(&fast.learnt[0])
        .map(|(e, f)| (f.sd / e.sd - 1.0).abs())
        .fold(0.0f64, f64::max);
    println!(
        "predict, fast path, {label}: median {:.0} rows/s over {PREDICT_REPEATS} runs (built in {built:.2} s; {} rows computed exactly; largest |sd/exact - 1| {worst:.1e}; ranks {:?})",
        rates[PREDICT_REPEATS / 2],
        predictor.exact_rows() / (PREDICT_REPEATS + 1),
        predictor.stats().iter().map(|s| s.ranks.clone()).collect::<Vec<_>>()
    );
}
