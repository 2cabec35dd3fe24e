//! `mettle demo-data`

use std::path::PathBuf;

use clap::Args;
use mettle::demo::{write_demo_datasets, DemoParams};

/// Arguments of `mettle demo-data`.
#[derive(Args, Debug)]
#[command(
    about = "Write the invented demo tables (fictional scenario; not test results).",
    long_about = "Write the invented demo tables of the fictional Fellhaven scenario.\n\n\
The records are INVENTED: generated from published relations (Pickering-type strength terms, \
the EN 1011-2 cooling time, the tanh Charpy transition curve) plus invented effects and realistic \
scatter. They are not test results and must not be used to qualify any weld. The same seed gives \
byte-identical files.\n\n\
Files: fellhaven_welds.csv (the archive), fellhaven_candidates.csv, fellhaven_new_welds.csv and \
fellhaven_new_welds_truth.csv; and the archive and the new heats as a spreadsheet export \
arrives (fellhaven_welds_export.csv, fellhaven_new_welds_export.csv), each weld's identifier in a \
first column 'weld'; the same two as spreadsheet workbooks (fellhaven_welds.xlsx, \
fellhaven_new_welds.xlsx: sheet 'welds', and a sheet 'about' saying the data are invented).",
    after_long_help = "Example:\n  mettle demo-data --out out/demo"
)]
pub struct DemoDataArgs {
    /// Folder to write the tables into (created if missing).
    #[arg(long, value_name = "DIR")]
    out: PathBuf,
    /// Seed of the generator.
    #[arg(long, value_name = "N", default_value_t = DemoParams::default().seed)]
    seed: u64,
    /// Number of welds in the training archive.
    #[arg(long, value_name = "N", default_value_t = DemoParams::default().n_welds)]
    n_welds: usize,
}

pub fn run(a: DemoDataArgs) -> anyhow::Result<()> {
    let params = DemoParams {
        seed: a.seed,
        n_welds: a.n_welds,
        ..DemoParams::default()
    };
    let mut paths = write_demo_datasets(&a.out, &params)?;
    paths.extend(mettle::data::spreadsheet::write_demo_workbooks(&a.out)?);
    eprintln!("INVENTED demo data (fictional Fellhaven scenario; not test results) written:");
    for p in paths {
        eprintln!("  {}", p.display());
    }
    Ok(())
}
