//! `mettle train`

use std::path::PathBuf;
use std::time::Instant;

use anyhow::Context;
use clap::Args;
use mettle::committee::CommitteeParams;
use mettle::data::Table;
use mettle::model::TrainSpec;
use mettle::Model;

use super::progress::TrainProgress;
use super::UsageError;

/// Arguments of `mettle train`.
#[derive(Args, Debug)]
#[command(
    long_about = "Train a committee of Bayesian-regularised networks for each target.\n\n\
The table is a CSV with a header row (or a Parquet file). Part of its rows (--holdout) is held \
out inside the training data to rank candidate networks and choose the committee; the chosen \
members are then refitted on all rows. Nothing is tuned on data you later evaluate on: keep your \
test rows in a separate file and use `mettle evaluate`.\n\n\
Example:\n  mettle train --data welds.csv --target uts_mpa --out uts.json --seed 7"
)]
pub struct TrainArgs {
    /// Table of test records (CSV with a header row, or .parquet).
    #[arg(long, value_name = "FILE")]
    data: PathBuf,
    /// Target column(s) to learn; repeat or separate with commas for one committee per target.
    #[arg(long, value_name = "NAME", value_delimiter = ',', required = true)]
    target: Vec<String>,
    /// Input columns, comma-separated [default: every other numeric column].
    #[arg(long, value_name = "A,B,...", value_delimiter = ',')]
    inputs: Option<Vec<String>>,
    /// Where to write the model (JSON). Written atomically: a failed run leaves an older file intact.
    #[arg(long, value_name = "MODEL.json")]
    out: PathBuf,
    /// Hidden units to try: MIN..MAX or N; 0 trains the linear model.
    #[arg(long, value_name = "MIN..MAX", default_value = "1..10")]
    hidden: String,
    /// Random starts per hidden-unit count.
    #[arg(long, value_name = "N", default_value_t = 4)]
    restarts: usize,
    /// Seed of every random choice; the same data, options and seed give a byte-identical model.
    #[arg(long, value_name = "N", default_value_t = 0)]
    seed: u64,
    /// Share of the training rows held out to rank candidates (0.05 to 0.5).
    #[arg(long, value_name = "F", default_value_t = 0.2)]
    holdout: f64,
    /// Largest committee considered.
    #[arg(long, value_name = "N", default_value_t = 16)]
    max_members: usize,
    /// Do not widen the hidden-unit range when the best candidates sit at its top.
    #[arg(long)]
    no_widen: bool,
    /// One regularisation constant for all input weights instead of one per input (no ARD).
    #[arg(long)]
    no_ard: bool,
    /// Never model an input through its logarithm (by default strictly positive, strongly skewed inputs are).
    #[arg(long)]
    no_log_inputs: bool,
    /// Record the wall-clock training time in the model file (the file then differs between runs).
    #[arg(long)]
    record_time: bool,
    /// No progress display.
    #[arg(long, short)]
    quiet: bool,
}

/// Parse `MIN..MAX` or `N`.
pub fn parse_range(s: &str) -> Result<(usize, usize), UsageError> {
    let bad = || {
        UsageError(format!(
            "--hidden '{s}': expected MIN..MAX (e.g. 1..10) or a single count (0 = linear)"
        ))
    };
    let parts: Vec<&str> = s.split("..").collect();
    match parts.as_slice() {
        [one] => one.trim().parse().map(|n| (n, n)).map_err(|_| bad()),
        [a, b] => {
            let lo = a.trim().parse().map_err(|_| bad())?;
            let hi = b
                .trim()
                .trim_start_matches('=')
                .parse()
                .map_err(|_| bad())?;
            Ok((lo, hi))
        }
        _ => Err(bad()),
    }
}

pub fn run(a: TrainArgs) -> anyhow::Result<()> {
    let (lo, hi) = parse_range(&a.hidden)?;
    let table = Table::read(&a.data)?;
    let params = CommitteeParams::default()
        .hidden(lo, hi)
        .restarts(a.restarts)
        .seed(a.seed)
        .holdout_fraction(a.holdout)
        .max_members(a.max_members)
        .widen(!a.no_widen)
        .ard(!a.no_ard);
    let spec = TrainSpec {
        targets: a.target.clone(),
        inputs: a.inputs.clone(),
        auto_log_inputs: !a.no_log_inputs,
        params,
    };
    let progress = TrainProgress::new(a.quiet);
    let started = Instant::now();
    let result = Model::train(&table, &spec, &progress);
    progress.finish();
    let mut model = result?;
    let secs = started.elapsed().as_secs_f64();
    if a.record_time {
        model.training.wall_seconds = Some(secs);
    }
    model
        .save(&a.out)
        .with_context(|| format!("saving the model to {}", a.out.display()))?;
    if !a.quiet {
        for s in &model.set_aside {
            eprintln!("warning: input '{}' set aside: {}", s.name, s.reason);
        }
        for t in &model.targets {
            let c = &t.committee;
            let noise: f64 = c.members.iter().map(|m| m.noise_sd()).sum::<f64>()
                / c.members.len() as f64
                * t.scaling.width();
            let failed = c.candidates.iter().filter(|c| c.failure.is_some()).count();
            eprintln!(
                "{}: {} rows{}, committee of {} (hidden units {}), held-out NLPD {:.3}, noise sd {:.4}; {} of {} candidates discarded",
                t.name,
                t.n_rows,
                if t.n_missing > 0 { format!(" ({} without this target left out)", t.n_missing) } else { String::new() },
                c.members.len(),
                c.members.iter().map(|m| m.n_hidden.to_string()).collect::<Vec<_>>().join(","),
                c.selection.nlpd_by_size[c.selection.n_members - 1],
                noise,
                failed,
                c.candidates.len()
            );
        }
        eprintln!("model written to {} ({secs:.1} s)", a.out.display());
    }
    Ok(())
}
