//! `mettle derive`

use std::path::PathBuf;

use anyhow::Context;
use clap::Args;
use mettle::data::schema::Schema;
use mettle::data::{derive_columns, Table};
use mettle::derive::Derivation;

use super::output::print_row_warnings;
use super::UsageError;

/// Arguments of `mettle derive`.
#[derive(Args, Debug)]
#[command(
    about = "Add derived metallurgical inputs (carbon equivalents, heat input, t8/5, Ms, Ac1, Ac3) as new columns.",
    long_about = "Add derived metallurgical inputs to a table as new columns.\n\n\
Known derivations (formula, source and validity range of each in docs/derivations.md):\n  \
ce_iiw  carbon equivalent CE(IIW)            pcm     Ito-Bessyo Pcm\n  \
cet     CET (EN 1011-2 method B)             cen     Yurioka CEN\n  \
heat_input[:PROCESS]  arc heat input, kJ/mm (PROCESS = SAW, MMA, MIG, MAG, FCAW, TIG ...)\n  \
t85[:SHAPE|F2=x,F3=x] cooling time t8/5, s (EN 1011-2 Annex D, 2-D or 3-D chosen per row)\n  \
ms_andrews, ms_steven_haynes, ac1_andrews, ac3_andrews  transformation temperatures, °C\n\n\
Columns are read by their conventional names: element symbols (C, Mn, Si ...) in wt%, voltage (V), \
current (A), travel_speed (mm/s), arc_efficiency, heat_input (kJ/mm), preheat (°C), thickness (mm). \
Without --schema a header must be that name (letter case aside) and the column is taken in that \
unit, except that an element may carry a unit suffix: mn_wt or mn_wt% (wt%), b_ppm (ppm by mass); \
a derivation whose columns are not found is an error naming the headers looked for. With --schema columns are found through their stands_for and converted from their declared \
units, and the schema's own [[derived]] inputs are added too. An element absent from the table \
counts as 0 wt% (said in a note). A row outside a formula's validity range gets a warning, not an \
error; a row whose value cannot be computed gets an empty cell and a warning.\n\n\
The new columns follow the table's own, in internal units; the table's own cells are written as \
read. The output is CSV, or Parquet when its name ends in .parquet.\n\n\
Example:\n  mettle derive --data welds.csv --add ce_iiw,pcm,heat_input:SAW,t85:butt_fill --out welds_derived.csv"
)]
pub struct DeriveArgs {
    /// Table to read (CSV with a header row, Parquet, or a spreadsheet workbook .xlsx).
    #[arg(long, visible_alias = "input", value_name = "FILE")]
    data: PathBuf,
    /// Sheet to read when the table is a spreadsheet workbook (.xlsx, .xls) [default: the first].
    #[arg(long, value_name = "NAME")]
    sheet: Option<String>,
    /// Derivations to add, comma-separated (t85 parameters may follow, e.g. t85:F2=0.9,F3=0.9).
    #[arg(long, value_name = "LIST", default_value = "")]
    add: String,
    /// Schema mapping headers to conventional names and units (its [[derived]] inputs are added too).
    #[arg(long, value_name = "SCHEMA.toml")]
    schema: Option<PathBuf>,
    /// Where to write the table with the new columns (atomically).
    #[arg(long, value_name = "FILE")]
    out: PathBuf,
}

pub fn run(a: DeriveArgs) -> anyhow::Result<()> {
    let derivations =
        Derivation::parse_list(&a.add).map_err(|e| UsageError(format!("--add: {e}")))?;
    let schema = match &a.schema {
        Some(p) => Some((Schema::load(p)?, p.display().to_string())),
        None => None,
    };
    if derivations.is_empty() && schema.as_ref().is_none_or(|s| s.0.derived.is_empty()) {
        return Err(UsageError(format!(
            "nothing to derive: give --add (known: {}) or a schema with [[derived]] entries",
            Derivation::known_names()
        ))
        .into());
    }
    let table = Table::read_sheet(&a.data, a.sheet.as_deref())?;
    let outcome = derive_columns(
        &table,
        &derivations,
        schema.as_ref().map(|(s, n)| (s, n.as_str())),
    )?;
    for n in &outcome.notes {
        eprintln!("note: {n}");
    }
    print_row_warnings(&outcome.row_warnings);
    outcome
        .table
        .write(&a.out)
        .with_context(|| format!("writing {}", a.out.display()))?;
    for (name, used) in &outcome.sources {
        let from: Vec<String> = used
            .iter()
            .map(|(conv, col)| {
                if conv == col {
                    col.clone()
                } else {
                    format!("{conv} = {col}")
                }
            })
            .collect();
        eprintln!("added {name} (from {})", from.join(", "));
    }
    eprintln!(
        "{} rows with {} new columns written to {}",
        outcome.table.n_rows(),
        outcome.added.len(),
        a.out.display()
    );
    Ok(())
}
