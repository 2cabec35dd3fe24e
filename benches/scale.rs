//! How training time, peak memory and prediction throughput grow with the
//! data (measured, not a timed test): seeded synthetic data
//! (benches/support/synthetic.rs, a known function plus noise of sd 0.1).
//!
//! 1. training time against rows (100 … 100 000) at 8 inputs;
//! 2. training time against inputs (5 … 50) at 1 000 rows;
//! 3. prediction throughput of each trained model on 100 000 in-memory
//!    rows, with the full domain guard;
//! 4. the peak resident memory of each step (`VmHWM` of /proc/self/status,
//!    reset before each step through /proc/self/clear_refs).
//!
//! Every committee is trained with one reduced search, the same at every
//! size so that the curve shows the growth and nothing else: hidden units
//! 1..=4 without widening, 2 restarts, constant noise (`--hidden 1..4
//! --no-widen --restarts 2 --noise constant` on the command line).
//! Steps of at most 3 000 rows are repeated (3 runs by default, seeds
//! 1, 2, 3) and the median reported; larger ones run once.
//!
//! ```text
//! make bench-scale        # or: cargo bench --bench scale -- [--runs 3] [--min-rows 0]
//!                         #     [--max-rows 100000] [--curves both|rows|inputs]
//!                         #     [--markdown FILE] [--svg FILE]
//! ```

#[path = "support/memory.rs"]
mod memory;
#[path = "support/synthetic.rs"]
mod synthetic;

use std::fmt::Write as _;
use std::time::Instant;

use mettle::committee::NoiseMode;
use mettle::data::Table;
use mettle::model::TrainSpec;
use mettle::observer::Silent;
use mettle::Model;

const ROWS: [usize; 7] = [100, 300, 1_000, 3_000, 10_000, 30_000, 100_000];
const INPUTS: [usize; 5] = [5, 10, 20, 30, 50];
/// Inputs of the rows curve.
const ROWS_CURVE_INPUTS: usize = 8;
/// Rows of the inputs curve.
const INPUTS_CURVE_ROWS: usize = 1_000;
/// Steps up to this many rows are repeated.
const REPEAT_UP_TO: usize = 3_000;
/// Rows predicted per throughput measurement.
const PREDICT_ROWS: usize = 100_000;

fn median(v: &mut [f64]) -> f64 {
    v.sort_by(f64::total_cmp);
    let n = v.len();
    if n % 2 == 1 {
        v[n / 2]
    } else {
        0.5 * (v[n / 2 - 1] + v[n / 2])
    }
}

/// One measured step.
struct Step {
    rows: usize,
    inputs: usize,
    runs: usize,
    train_s: f64,
    train_mb: f64,
    noise_sd: f64,
    predict_rows_per_s: f64,
    predict_mb: f64,
    model_kb: f64,
}

fn spec(inputs: usize, seed: u64) -> TrainSpec {
    let mut spec = TrainSpec::new(&["y"]);
    spec.inputs = Some((0..inputs).map(synthetic::input_name).collect());
    spec.auto_log_inputs = false;
    spec.params.hidden_min = 1;
    spec.params.hidden_max = 4;
    spec.params.widen = false;
    spec.params.restarts = 2;
    spec.params.noise = NoiseMode::Constant;
    spec.params.seed = seed;
    spec
}

fn measure(rows: usize, inputs: usize, runs: usize) -> Step {
    let mut times = Vec::new();
    let mut mems = Vec::new();
    let mut noise = Vec::new();
    let mut model = None;
    for run in 0..runs {
        let seed = run as u64 + 1;
        let table = Table::from_columns("synthetic", synthetic::columns(rows, inputs, seed))
            .expect("synthetic table");
        memory::reset_peak();
        let t0 = Instant::now();
        let m = Model::train(&table, &spec(inputs, seed), &Silent).expect("training");
        times.push(t0.elapsed().as_secs_f64());
        mems.push(memory::peak_resident_mb().unwrap_or(f64::NAN));
        let c = &m.targets[0].committee;
        // the members' noise sd in target units, averaged over the committee
        let beta: f64 =
            c.members.iter().map(|m| m.beta).sum::<f64>() / c.members.len().max(1) as f64;
        noise.push(m.targets[0].scaling.width() / beta.sqrt());
        model = Some(m);
    }
    let model = model.expect("at least one run");
    let model_kb = serde_json::to_vec(&model).map_or(f64::NAN, |b| b.len() as f64 / 1024.0);
    let query = Table::from_columns(
        "synthetic query",
        synthetic::columns(PREDICT_ROWS, inputs, 1_000),
    )
    .expect("query table");
    memory::reset_peak();
    let t0 = Instant::now();
    let pred = model.predict(&query).expect("prediction");
    let predict_s = t0.elapsed().as_secs_f64();
    assert_eq!(pred.len(), PREDICT_ROWS);
    Step {
        rows,
        inputs,
        runs,
        train_s: median(&mut times),
        train_mb: median(&mut mems),
        noise_sd: median(&mut noise),
        predict_rows_per_s: PREDICT_ROWS as f64 / predict_s,
        predict_mb: memory::peak_resident_mb().unwrap_or(f64::NAN),
        model_kb,
    }
}

fn table(title: &str, steps: &[Step]) -> String {
    let mut s = format!("### {title}\n\n");
    s.push_str("| rows | inputs | runs | train s (median) | peak MB in training | noise sd found (truth 0.1) | model file kB | predict rows/s | peak MB in prediction |\n");
    s.push_str("|---|---|---|---|---|---|---|---|---|\n");
    for p in steps {
        let _ = writeln!(
            s,
            "| {} | {} | {} | {:.2} | {:.0} | {:.3} | {:.0} | {:.0} | {:.0} |",
            p.rows,
            p.inputs,
            p.runs,
            p.train_s,
            p.train_mb,
            p.noise_sd,
            p.model_kb,
            p.predict_rows_per_s,
            p.predict_mb
        );
    }
    s
}

/// Log-log charts of training time against rows and against inputs, one
/// above the other, as a standalone SVG document.
fn svg(path: &str, by_rows: &[Step], by_inputs: &[Step]) -> Result<(), String> {
    use mettle::chart::{draw_panels, Line, Mark, Points, XyChart, BLUE};
    let mut panels = Vec::new();
    for (steps, label, x_of) in [
        (
            by_rows,
            "rows (8 inputs)",
            (|s: &Step| s.rows as f64) as fn(&Step) -> f64,
        ),
        (
            by_inputs,
            "inputs (1 000 rows)",
            (|s: &Step| s.inputs as f64) as fn(&Step) -> f64,
        ),
    ] {
        if steps.is_empty() {
            continue;
        }
        let pts: Vec<(f64, f64)> = steps.iter().map(|s| (x_of(s), s.train_s)).collect();
        panels.push(XyChart {
            title: format!("Training time against {label}"),
            x_label: format!("{label} (count, log scale)"),
            y_label: "wall time (s, log scale)".into(),
            lines: vec![Line {
                label: None,
                xy: pts.clone(),
                colour: BLUE,
                dashed: false,
            }],
            points: vec![Points {
                label: "measured".into(),
                xy: pts,
                y_err: vec![],
                mark: Mark::Circle,
                colour: BLUE,
            }],
            x_log: true,
            y_log: true,
            ..Default::default()
        });
    }
    let doc = draw_panels(&panels, None, "Training time against rows and inputs")
        .map_err(|e| e.to_string())?;
    std::fs::write(path, doc).map_err(|e| e.to_string())
}

fn arg(args: &[String], name: &str) -> Option<String> {
    args.iter()
        .position(|a| a == name)
        .and_then(|i| args.get(i + 1).cloned())
}

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let runs: usize = arg(&args, "--runs").map_or(3, |s| s.parse().expect("--runs N"));
    let min_rows: usize = arg(&args, "--min-rows").map_or(0, |s| s.parse().expect("--min-rows N"));
    let max_rows: usize =
        arg(&args, "--max-rows").map_or(100_000, |s| s.parse().expect("--max-rows N"));
    let uptime = std::fs::read_to_string("/proc/loadavg").unwrap_or_default();
    println!(
        "load average at start: {}",
        uptime
            .split_whitespace()
            .take(3)
            .collect::<Vec<_>>()
            .join(" ")
    );
    // each step's row is printed as soon as it is measured
    let step = |rows: usize, inputs: usize, runs: usize| {
        let s = measure(rows, inputs, runs);
        let t = table("step", std::slice::from_ref(&s));
        println!("{}", t.lines().last().unwrap_or(""));
        s
    };
    let curves = arg(&args, "--curves").unwrap_or_else(|| "both".into());
    let by_inputs: Vec<Step> = INPUTS
        .iter()
        .filter(|_| curves != "rows")
        .map(|&d| step(INPUTS_CURVE_ROWS, d, runs))
        .collect();
    let by_rows: Vec<Step> = ROWS
        .iter()
        .filter(|&&n| curves != "inputs" && (min_rows..=max_rows).contains(&n))
        .map(|&n| {
            step(
                n,
                ROWS_CURVE_INPUTS,
                if n <= REPEAT_UP_TO { runs } else { 1 },
            )
        })
        .collect();
    let uptime = std::fs::read_to_string("/proc/loadavg").unwrap_or_default();
    let mut md = table("Training time against rows (8 inputs)", &by_rows);
    md.push('\n');
    md.push_str(&table(
        "Training time against inputs (1 000 rows)",
        &by_inputs,
    ));
    let _ = writeln!(
        md,
        "\nload average at the end: {}",
        uptime
            .split_whitespace()
            .take(3)
            .collect::<Vec<_>>()
            .join(" ")
    );
    println!("\n{md}");
    if let Some(path) = arg(&args, "--markdown") {
        std::fs::write(&path, &md).expect("write the markdown table");
    }
    if let Some(path) = arg(&args, "--svg") {
        if let Err(e) = svg(&path, &by_rows, &by_inputs) {
            eprintln!("chart not drawn: {e}");
        }
    }
}
