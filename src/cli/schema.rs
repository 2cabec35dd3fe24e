//! `mettle schema`

use std::path::PathBuf;

use clap::Args;
use mettle::data::draft::draft_schema;
use mettle::data::Table;

use super::output::emit;

/// Arguments of `mettle schema`.
#[derive(Args, Debug)]
#[command(
    about = "Draft a schema for a table: roles and units guessed from its headers and values, each guess commented.",
    long_about = "Draft a schema (TOML, docs/schema.md) for a table of test records, to check and edit \
rather than write from nothing.\n\n\
Each column gets a role, a unit and, where a derivation would read it, the element symbol or \
welding quantity it stands for, guessed from its header and values, with a comment saying why: \
a first column of text is the identifier; an element symbol with a unit suffix (mn_wt, b_ppm) \
is a content; a name ending in _c, _f or _k a temperature; heat_input_kj_mm a heat input; \
a measured property (uts_mpa, yield, charpy_j, elongation_pct, hardness_hv …) a target, with \
its unit (MPa, ksi, J, ft·lbf, %, HV, HB, HRC; hardness scales are never converted into one \
another); any other column of numbers an input of unit \"1\" to be corrected. Read the \
comments, fix what is wrong, then train with it:\n  mettle train --data welds.csv --schema \
welds.toml --out welds.json\nor one target of it with --target.",
    after_long_help = "Example:\n  mettle schema --data welds.csv --out welds.toml"
)]
pub struct SchemaArgs {
    /// Table to describe (CSV with a header row, Parquet, or a spreadsheet workbook .xlsx).
    #[arg(long, value_name = "FILE")]
    data: PathBuf,
    /// Sheet to read when the table is a spreadsheet workbook (.xlsx, .xls) [default: the first].
    #[arg(long, value_name = "NAME")]
    sheet: Option<String>,
    /// Write the draft to this file (atomically) instead of standard output.
    #[arg(long, value_name = "SCHEMA.toml")]
    out: Option<PathBuf>,
}

pub fn run(a: SchemaArgs) -> anyhow::Result<()> {
    let table = Table::read_sheet(&a.data, a.sheet.as_deref())?;
    emit(&draft_schema(&table), a.out.as_deref())
}
