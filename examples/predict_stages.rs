//! Where `predict`'s time goes, stage by stage, for a model and a CSV:
//! reading, the schema and scaling, the committee's members, the residual
//! process, the domain guard, and the estimate file's formatting.
//!
//! ```text
//! cargo run --release --example predict_stages -- MODEL.json INPUT.csv
//! ```
//!
//! Prints seconds per stage (one thread for the stages run here one by one;
//! `predict` itself spreads some of them over the cores).

use std::path::Path;
use std::time::Instant;

use mettle::data::Table;
use mettle::predict::{EstimateFormat, EstimateWriter};
use mettle::Model;
use ndarray::Array2;

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let model = Model::load(Path::new(&args[0])).expect("model");
    let input = Path::new(&args[1]);
    let t = Instant::now();
    let batches: Vec<Table> = Table::read_sheet_batches(input, 50_000, None)
        .expect("input")
        .map(|b| b.expect("batch"))
        .collect();
    let n: usize = batches.iter().map(Table::n_rows).sum();
    println!("rows {n}");
    println!("read csv        {:.3} s", t.elapsed().as_secs_f64());
    let t = Instant::now();
    let scaled: Vec<_> = batches
        .iter()
        .map(|b| {
            let (p, _) = model.read_through_schema(b, false).expect("schema");
            model.scaled_inputs(&p).expect("scaled")
        })
        .collect();
    println!("schema+scale    {:.3} s", t.elapsed().as_secs_f64());
    for target in &model.targets {
        let mut c = target.committee.clone();
        let process = c.kriging.take();
        let t = Instant::now();
        for (_, s) in &scaled {
            std::hint::black_box(c.predict_scaled(s.view()));
        }
        println!(
            "committee       {:.3} s ({} members, hidden {:?}; 2 threads)",
            t.elapsed().as_secs_f64(),
            c.members.len(),
            c.members.iter().map(|m| m.n_hidden).collect::<Vec<_>>()
        );
        if let Some(k) = process {
            let t = Instant::now();
            for (_, s) in &scaled {
                std::hint::black_box(k.predict(s.view()));
            }
            println!(
                "process         {:.3} s ({} rows; 1 thread)",
                t.elapsed().as_secs_f64(),
                k.x.nrows()
            );
        }
    }
    let t = Instant::now();
    let learnt: Vec<_> = scaled
        .iter()
        .map(|(_, s)| model.predict_learnt_scale(s))
        .collect();
    println!(
        "exact learnt    {:.3} s (members and process, 2 threads)",
        t.elapsed().as_secs_f64()
    );
    // the members' eigen-decompositions, by the two symmetric solvers
    // (one thread each, every member in turn)
    for target in &model.targets {
        let members = &target.committee.members;
        let t = Instant::now();
        for m in members {
            std::hint::black_box(mettle::linalg::symmetric_eigen(m.posterior_cov.view()));
        }
        let jacobi = t.elapsed().as_secs_f64();
        let t = Instant::now();
        for m in members {
            std::hint::black_box(mettle::linalg::symmetric_eigen_ql(m.posterior_cov.view()));
        }
        println!(
            "eigen, {} members (k = {:?}): Jacobi {jacobi:.3} s, Householder + QL {:.3} s (1 thread)",
            members.len(),
            members.iter().map(|m| m.posterior_cov.nrows()).collect::<Vec<_>>(),
            t.elapsed().as_secs_f64()
        );
    }
    let t = Instant::now();
    let predictor = model.predictor(false);
    println!(
        "fast path built {:.3} s: {:?}",
        t.elapsed().as_secs_f64(),
        predictor.stats()
    );
    let t = Instant::now();
    let fast: Vec<_> = scaled
        .iter()
        .map(|(_, s)| predictor.learnt_scale(s))
        .collect();
    println!(
        "fast learnt     {:.3} s (2 threads; {} rows went the exact way)",
        t.elapsed().as_secs_f64(),
        predictor.exact_rows()
    );
    for target in &model.targets {
        let mut c = target.committee.clone();
        let process = c.kriging.take();
        let cal = Array2::<f64>::zeros((0, c.n_inputs));
        let f = c.fast(cal.view());
        let t = Instant::now();
        for (_, s) in &scaled {
            std::hint::black_box(f.predict_scaled(s.view()));
        }
        println!(
            "fast committee alone {:.3} s (2 threads)",
            t.elapsed().as_secs_f64()
        );
        if let Some(k) = process {
            let fp = mettle::committee::FastProcessProbe::new(&k, k.x.view()).expect("process");
            for cut in [8.0, 12.0, 16.0, 20.0, 24.0, 30.0] {
                let mut b = fp.bounds_at(cut, k.x.view());
                let mut m: Vec<f64> = b.iter().map(|v| v.0).collect();
                b.sort_by(|x, y| x.1.total_cmp(&y.1));
                m.sort_by(f64::total_cmp);
                let nv = k.noise_var.iter().copied().fold(f64::INFINITY, f64::min) * k.noise_factor;
                println!(
                    "cut {cut}: var bound / min noise var median {:.2e}, 99 % {:.2e}; mean bound / its sd median {:.2e}, 99 % {:.2e}",
                    b[b.len() / 2].1 / nv,
                    b[b.len() * 99 / 100].1 / nv,
                    m[m.len() / 2] / nv.sqrt(),
                    m[m.len() * 99 / 100] / nv.sqrt()
                );
            }
            let t = Instant::now();
            let mut sizes = Vec::new();
            for (_, s) in &scaled {
                sizes.extend(fp.active_sizes(s.view()));
            }
            sizes.sort_unstable();
            println!(
                "fast process alone {:.3} s (1 thread), active rows: median {}, 90 % {}, max {}",
                t.elapsed().as_secs_f64(),
                sizes[sizes.len() / 2],
                sizes[sizes.len() * 9 / 10],
                sizes[sizes.len() - 1]
            );
        }
    }
    let (mut sd, mut csd, mut mean) = (0.0f64, 0.0f64, 0.0f64);
    for (e, f) in learnt.iter().zip(&fast) {
        for (et, ft) in e.iter().zip(f) {
            for (a, b) in et.iter().zip(ft) {
                sd = sd.max((b.sd / a.sd - 1.0).abs());
                if a.committee_sd > 0.0 {
                    csd = csd.max((b.committee_sd / a.committee_sd - 1.0).abs());
                }
                mean = mean.max((b.mean - a.mean).abs() / a.sd);
            }
        }
    }
    println!("fast vs exact: largest |sd/sd_exact - 1| {sd:.3e}, committee sd {csd:.3e}, |mean diff|/sd {mean:.3e}");
    let units = model.input_note_units();
    let t = Instant::now();
    for ((raw, _), l) in scaled.iter().zip(&learnt) {
        std::hint::black_box(model.domain_guard().check_many_shown(raw.view(), l, &units));
    }
    println!(
        "domain guard    {:.3} s (2 threads)",
        t.elapsed().as_secs_f64()
    );
    let layout = model
        .estimate_layout(batches.first(), None, false, 6)
        .expect("layout");
    let t = Instant::now();
    let est: Vec<_> = batches
        .iter()
        .map(|b| model.estimate_batch(b, &layout).expect("estimates"))
        .collect();
    println!(
        "estimate_batch  {:.3} s (all of the above but reading)",
        t.elapsed().as_secs_f64()
    );
    let t = Instant::now();
    for b in &batches {
        std::hint::black_box(predictor.estimate_batch(b, &layout).expect("estimates"));
    }
    println!("fast estimate_batch {:.3} s", t.elapsed().as_secs_f64());
    let t = Instant::now();
    let mut sink = std::io::sink();
    let mut w = EstimateWriter::start(&mut sink, EstimateFormat::Csv, &layout).expect("start");
    for b in &est {
        w.rows(b).expect("rows");
    }
    w.finish().expect("finish");
    println!("format csv      {:.3} s", t.elapsed().as_secs_f64());
}
