//! The fast prediction path's error against the exact path, measured on
//! rows whose exact answer is computed here: for each MODEL.json and
//! INPUT.csv pair, every row's |sd/exact − 1| (the total sd and the
//! committee's own), |mean − exact|/sd, the rows sent to the exact path,
//! and, for the residual process alone, the error and work at each cut of
//! a ladder against the exact process; then, for the members, the error
//! of an uncertified truncation of their posteriors
//! ([`mettle::committee::truncation_changes`]).
//!
//! ```text
//! cargo run --release --locked --example fast_error -- MODEL.json INPUT.csv [MODEL.json INPUT.csv …]
//! ```
//!
//! Used for docs/benchmarks.md ("The fast path's process bound, and what
//! approximations could save"): the default committee of each concrete
//! split (`mettle train --seed 1` on its training rows) on its test rows,
//! the data and splits read from the shared UCI benchmark folder (UCI
//! concrete compressive strength, Yeh 1998, Cement and Concrete Research
//! 28:1797), written per split to a scratch folder, not kept in the
//! repository.

use std::path::Path;
use std::time::Instant;

use mettle::committee::{truncation_changes, FastProcessProbe};
use mettle::data::Table;
use mettle::Model;

/// Cuts of the process's ladder measured one by one.
const SWEEP: [f64; 8] = [6.0, 8.0, 10.0, 12.0, 16.0, 20.0, 26.0, 33.0];

/// Shares of each member's k eigenpairs kept, measured one by one.
const SHARES: [f64; 7] = [0.05, 0.1, 0.2, 0.3, 0.5, 0.7, 0.9];

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    assert!(
        args.len() >= 2 && args.len() % 2 == 0,
        "MODEL.json INPUT.csv pairs"
    );
    let mut overall = (0.0f64, 0.0f64, 0.0f64, 0usize, 0usize);
    println!("| model | rows | cut | max \\|sd/exact − 1\\| | committee sd | \\|mean − exact\\|/sd | rows exact | fast s | exact s |");
    println!("|---|---|---|---|---|---|---|---|---|");
    let mut sweeps = Vec::new();
    let mut ranks = Vec::new();
    for pair in args.chunks(2) {
        let model = Model::load(Path::new(&pair[0])).expect("model");
        let table = Table::read(Path::new(&pair[1])).expect("input");
        let t = Instant::now();
        let exact = model.predict_with_scale(&table).expect("exact");
        let t_exact = t.elapsed().as_secs_f64();
        {
            let t = Instant::now();
            let predictor = model.predictor(false);
            let fast = predictor.predict_with_scale(&table).expect("fast");
            let t_fast = t.elapsed().as_secs_f64();
            let mut worst = (0.0f64, 0.0f64, 0.0f64);
            for (et, ft) in exact.learnt.iter().zip(&fast.learnt) {
                for (e, f) in et.iter().zip(ft) {
                    let csd = if e.committee_sd > 0.0 {
                        (f.committee_sd / e.committee_sd - 1.0).abs()
                    } else {
                        f.committee_sd
                    };
                    worst = (
                        worst.0.max((f.sd / e.sd - 1.0).abs()),
                        worst.1.max(csd),
                        worst.2.max((f.mean - e.mean).abs() / e.sd),
                    );
                }
            }
            let stats = predictor.stats();
            println!(
                "| {} | {} | {:?} | {:.2e} | {:.2e} | {:.2e} | {} | {:.2} | {:.2} |",
                Path::new(&pair[0])
                    .file_name()
                    .map_or(String::new(), |s| s.to_string_lossy().into_owned()),
                table.n_rows(),
                stats.iter().map(|s| s.process_cut).collect::<Vec<_>>(),
                worst.0,
                worst.1,
                worst.2,
                predictor.exact_rows(),
                t_fast,
                t_exact
            );
            let o = &mut overall;
            *o = (
                o.0.max(worst.0),
                o.1.max(worst.1),
                o.2.max(worst.2),
                o.3 + table.n_rows(),
                o.4 + predictor.exact_rows(),
            );
        }
        // the process alone at each cut: its variance against the exact
        // process's, relative to the row's exact total variance
        for t in &model.targets {
            let Some(k) = &t.committee.kriging else {
                continue;
            };
            let Some(probe) = FastProcessProbe::new(k, exact.scaled.view()) else {
                continue;
            };
            let (pm, pv) = k.predict(exact.scaled.view()).expect("exact process");
            // the exact total variance in scaled target units
            let sp = t.committee.predict_scaled(exact.scaled.view());
            let var = sp.var.to_vec();
            let scale = t.committee.model_var_scale().unwrap_or(1.0);
            let changes = truncation_changes(&t.committee, exact.scaled.view(), &SHARES);
            for (share, ch) in SHARES.iter().zip(&changes) {
                let mut worst = (0.0f64, 0.0f64);
                for ((dv, v), cv) in ch.iter().zip(&var).zip(&sp.committee_var) {
                    let dv = dv * scale;
                    worst.0 = worst.0.max((((v + dv).max(0.0) / v).sqrt() - 1.0).abs());
                    if *cv > 0.0 {
                        worst.1 = worst.1.max((((cv + dv).max(0.0) / cv).sqrt() - 1.0).abs());
                    }
                }
                ranks.push((*share, worst.0, worst.1));
            }
            for &cut in &SWEEP {
                let rows = probe.rows_at(cut, exact.scaled.view());
                let mut max_err = 0.0f64;
                let mut max_mean = 0.0f64;
                let mut max_bound = 0.0f64;
                let mut s2 = 0.0;
                let mut pass = 0usize;
                for (((r, e), v), m) in rows.iter().zip(pv.iter()).zip(&var).zip(pm.iter()) {
                    max_err = max_err.max((r.1 - e).abs() / (2.0 * v));
                    max_mean = max_mean.max((r.0 - m).abs() / v.sqrt());
                    max_bound = max_bound.max(r.3 / (2.0 * v));
                    s2 += (r.4 * r.4) as f64;
                    if r.3 <= 0.5 * mettle::prec::FAST_SD_TOL * v {
                        pass += 1;
                    }
                }
                sweeps.push((
                    cut,
                    max_err,
                    max_bound,
                    s2 / rows.len() as f64,
                    pass,
                    rows.len(),
                    max_mean,
                ));
            }
        }
    }
    let o = overall;
    println!(
        "\nall: {} rows, largest |sd/exact − 1| {:.2e}, committee sd {:.2e}, |mean − exact|/sd {:.2e}, {} rows exact",
        o.3, o.0, o.1, o.2, o.4
    );
    println!("\nprocess alone, by cut (sd error ≈ |Δvar|/2var, over all models):");
    println!("| cut | largest true sd error | largest \\|mean error\\|/sd | largest sd bound | mean rows² inside | rows within half tol |");
    println!("|---|---|---|---|---|---|");
    for &cut in &SWEEP {
        let s: Vec<_> = sweeps.iter().filter(|s| s.0 == cut).collect();
        let err = s.iter().map(|s| s.1).fold(0.0, f64::max);
        let bound = s.iter().map(|s| s.2).fold(0.0, f64::max);
        let work = s.iter().map(|s| s.3 * s.5 as f64).sum::<f64>()
            / s.iter().map(|s| s.5 as f64).sum::<f64>();
        let pass: usize = s.iter().map(|s| s.4).sum();
        let n: usize = s.iter().map(|s| s.5).sum();
        let mean = s.iter().map(|s| s.6).fold(0.0, f64::max);
        println!("| {cut} | {err:.2e} | {mean:.2e} | {bound:.2e} | {work:.0} | {pass} of {n} |");
    }
    println!("\nmembers' posteriors truncated (uncertified estimate), over all models:");
    println!("| share of k kept | largest \\|sd/exact − 1\\| | largest committee sd error |");
    println!("|---|---|---|");
    for &share in &SHARES {
        let s: Vec<_> = ranks.iter().filter(|r| r.0 == share).collect();
        let a = s.iter().map(|r| r.1).fold(0.0, f64::max);
        let b = s.iter().map(|r| r.2).fold(0.0, f64::max);
        println!("| {share} | {a:.2e} | {b:.2e} |");
    }
}
