//! The variance rules of `--partitions` on INVENTED near-noiseless data
//! (benches/support/near_noiseless.rs: a made-up smooth function of 12
//! inputs, noise sd 1e-4 of its range), in the configuration of
//! tests/near_noiseless.rs (training rows seed 7, 2000 fresh rows seed
//! 1007, master seed 7). Trains ONE model of `--max-partitions` whole
//! trainings (partition p is the training with seed 7 + p, so the first K
//! partitions of it are exactly the `--partitions K` model) and scores on
//! the fresh rows every K from 1 up, under `within`, `mixture` and
//! `correlated` at each ρ of `--rhos`: coverage_68, coverage_95, NLPD
//! (nats per row, on the target's own scale), RMSE. Nothing here was
//! chosen on a benchmark's test split.
//!
//! ```text
//! cargo run --release --example near_noiseless_partitions -- \
//!     --rows 1500 --hidden 2..4 --restarts 1 --min-heldout 0 \
//!     --max-partitions 3 --rhos 0,0.25,0.5,0.75,1
//! ```

#[path = "../benches/support/near_noiseless.rs"]
mod near_noiseless;

use mettle::committee::{CommitteeParams, PartitionVariance};
use mettle::data::Table;
use mettle::model::TrainSpec;
use mettle::observer::Silent;
use mettle::Model;

fn arg(args: &[String], name: &str) -> Option<String> {
    args.iter()
        .position(|a| a == name)
        .and_then(|i| args.get(i + 1).cloned())
}

/// `model` cut to its first `k` partitions, combined by `rule` (ρ `rho`).
fn variant(model: &Model, k: usize, rule: PartitionVariance, rho: f64) -> Model {
    let mut m = model.clone();
    for t in &mut m.targets {
        let c = &mut t.committee;
        c.further_partitions.truncate(k - 1);
        c.partition_variance = (k > 1).then_some(rule);
        c.partition_correlation = (k > 1 && rule == PartitionVariance::Correlated).then_some(rho);
    }
    m
}

fn main() -> anyhow::Result<()> {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let rows: usize = arg(&args, "--rows").map_or(Ok(1500), |s| s.parse())?;
    let restarts: usize = arg(&args, "--restarts").map_or(Ok(1), |s| s.parse())?;
    let hidden = arg(&args, "--hidden").unwrap_or_else(|| "2..4".into());
    let (h0, h1) = hidden.split_once("..").expect("--hidden A..B");
    let min_heldout: usize = arg(&args, "--min-heldout")
        .map_or(Ok(mettle::prec::MODEL_PART_MIN_HELDOUT), |s| s.parse())?;
    let max_k: usize = arg(&args, "--max-partitions").map_or(Ok(3), |s| s.parse())?;
    let rhos: Vec<f64> = arg(&args, "--rhos")
        .unwrap_or_else(|| "0,0.25,0.5,0.75,1".into())
        .split(',')
        .map(str::parse)
        .collect::<Result<_, _>>()?;

    let (train, _) = near_noiseless::columns(rows, 7);
    let (fresh, _) = near_noiseless::columns(2000, 1007);
    let train = Table::from_columns("near-noiseless (invented)", train)?;
    let fresh = Table::from_columns("near-noiseless fresh (invented)", fresh)?;
    let mut spec = TrainSpec::new(&["y"]);
    spec.auto_log_inputs = false;
    spec.params = CommitteeParams::default()
        .hidden(h0.parse()?, h1.parse()?)
        .restarts(restarts)
        .seed(7)
        .model_part_min_heldout(min_heldout)
        .partitions(max_k);
    let t0 = std::time::Instant::now();
    let model = Model::train(&train, &spec, &Silent)?;
    println!(
        "rows {rows}, hidden {hidden}, restarts {restarts}, min_heldout {min_heldout}, {max_k} partitions trained in {:.1} s",
        t0.elapsed().as_secs_f64()
    );
    println!("| K | rule | coverage_68 | coverage_95 | NLPD | RMSE |");
    println!("|---|---|---|---|---|---|");
    let mut rules = vec![
        (PartitionVariance::Within, f64::NAN),
        (PartitionVariance::Mixture, f64::NAN),
    ];
    rules.extend(rhos.iter().map(|&r| (PartitionVariance::Correlated, r)));
    for k in 1..=max_k {
        let these: &[(PartitionVariance, f64)] = if k == 1 { &rules[..1] } else { &rules };
        for &(rule, rho) in these {
            let m = variant(&model, k, rule, rho);
            let (_, e) = m.evaluate(&fresh)?.pop().expect("one target");
            let e = e.expect("rows");
            let label = match (k, rule) {
                (1, _) => "one training".to_string(),
                (_, PartitionVariance::Correlated) => format!("correlated, ρ = {rho}"),
                (_, r) => r.name().to_string(),
            };
            println!(
                "| {k} | {label} | {:.3} | {:.3} | {:.3} | {:.4e} |",
                e.coverage_68, e.coverage_95, e.nlpd, e.rmse
            );
        }
    }
    Ok(())
}
