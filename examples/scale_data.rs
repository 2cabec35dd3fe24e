//! Large invented tables for the scale measurements in docs/benchmarks.md
//! (written under /tmp, never committed).
//!
//! ```text
//! # N rows shaped like the INVENTED Fellhaven weld records (the 16 input
//! # columns of datasets/fellhaven_new_welds.csv), as DIR/coils.csv and
//! # DIR/coils.parquet, for `mettle predict --model models/fellhaven_welds.json`
//! cargo run --release --example scale_data -- coils --rows 10000000 --out /tmp/mettle-scale
//!
//! # seeded synthetic regression data (benches/support/synthetic.rs: a known
//! # function of the inputs plus noise of sd 0.1), as one CSV file
//! cargo run --release --example scale_data -- synthetic --rows 100000 --inputs 30 \
//!     --seed 1 --out /tmp/mettle-scale/synth_100k_30.csv
//! ```
//!
//! The coil rows are rows of the invented archive (datasets/fellhaven_welds.csv),
//! drawn at random with a seeded generator and each input moved by up to ±3 %
//! of its value, so most lie inside the model's domain and some outside it.
//! Both files are written a block of rows at a time, in bounded memory.

#[path = "../benches/support/synthetic.rs"]
mod synthetic;

use std::fs::File;
use std::io::{BufWriter, Write};
use std::path::{Path, PathBuf};

use mettle::data::Table;
use polars::prelude::*;
use rand::{Rng, SeedableRng};
use rand_xoshiro::Xoshiro256PlusPlus;

/// Rows generated and written at a time (one Parquet row group each).
const BLOCK: usize = 100_000;

fn arg(args: &[String], name: &str) -> Option<String> {
    args.iter()
        .position(|a| a == name)
        .and_then(|i| args.get(i + 1).cloned())
}

fn main() -> anyhow::Result<()> {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let rows: usize = arg(&args, "--rows").map_or(Ok(1_000_000), |s| s.parse())?;
    let seed: u64 = arg(&args, "--seed").map_or(Ok(1), |s| s.parse())?;
    let out = PathBuf::from(arg(&args, "--out").unwrap_or_else(|| "/tmp/mettle-scale".into()));
    match args.first().map(String::as_str) {
        Some("coils") => coils(rows, seed, &out),
        Some("synthetic") => {
            let inputs: usize = arg(&args, "--inputs").map_or(Ok(30), |s| s.parse())?;
            if let Some(dir) = out.parent() {
                std::fs::create_dir_all(dir)?;
            }
            Table::from_columns("synthetic", synthetic::columns(rows, inputs, seed))?
                .write(&out)?;
            eprintln!("wrote {} ({rows} rows, {inputs} inputs)", out.display());
            Ok(())
        }
        _ => anyhow::bail!(
            "usage: scale_data coils --rows N [--seed S] [--out DIR] | \
             synthetic --rows N --inputs D [--seed S] --out FILE"
        ),
    }
}

/// Decimals to write for a column: as many as its archive values use.
fn decimals(text: &[Option<String>]) -> usize {
    text.iter()
        .flatten()
        .map(|s| s.split_once('.').map_or(0, |(_, f)| f.len()))
        .max()
        .unwrap_or(0)
}

fn coils(rows: usize, seed: u64, dir: &Path) -> anyhow::Result<()> {
    std::fs::create_dir_all(dir)?;
    let names: Vec<String> = Table::read(Path::new("datasets/fellhaven_new_welds.csv"))?
        .names()
        .to_vec();
    let archive = Table::read(Path::new("datasets/fellhaven_welds.csv"))?;
    let mut values: Vec<Vec<f64>> = Vec::new();
    let mut places: Vec<usize> = Vec::new();
    for n in &names {
        values.push(archive.numeric(n)?);
        let i = archive.index_of(n).expect("a column just read");
        let text: Vec<Option<String>> = (0..archive.n_rows())
            .map(|r| archive.cell_text(i, r))
            .collect();
        // one place more than the archive, so the ±3 % moves show
        places.push(decimals(&text) + 1);
    }
    let n_archive = archive.n_rows();
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);

    let csv_path = dir.join("coils.csv");
    let pq_path = dir.join("coils.parquet");
    let mut csv = BufWriter::with_capacity(1 << 20, File::create(&csv_path)?);
    writeln!(csv, "{}", names.join(","))?;
    let mut pq = None;
    let mut done = 0;
    while done < rows {
        let m = BLOCK.min(rows - done);
        let mut cols: Vec<Vec<f64>> = vec![Vec::with_capacity(m); names.len()];
        let mut line = String::new();
        for _ in 0..m {
            let r = rng.random_range(0..n_archive);
            line.clear();
            for (j, col) in cols.iter_mut().enumerate() {
                let v = values[j][r] * (1.0 + 0.03 * (2.0 * rng.random::<f64>() - 1.0));
                let text = format!("{v:.*}", places[j]);
                let v: f64 = text.parse()?;
                col.push(v);
                if j > 0 {
                    line.push(',');
                }
                line.push_str(&text);
            }
            line.push('\n');
            csv.write_all(line.as_bytes())?;
        }
        let frame = DataFrame::new(
            m,
            names
                .iter()
                .zip(cols)
                .map(|(n, c)| Column::new(n.as_str().into(), c))
                .collect(),
        )?;
        if pq.is_none() {
            pq = Some(
                ParquetWriter::new(File::create(&pq_path)?)
                    .with_row_group_size(Some(BLOCK))
                    .batched(frame.schema())?,
            );
        }
        if let Some(w) = pq.as_mut() {
            w.write_batch(&frame)?;
        }
        done += m;
    }
    csv.flush()?;
    if let Some(w) = pq {
        w.finish()?;
    }
    eprintln!(
        "wrote {} and {} ({rows} rows)",
        csv_path.display(),
        pq_path.display()
    );
    Ok(())
}
