//! Reading a sheet of an Excel workbook (.xlsx, .xlsm, .xlsb, .xls) with
//! `calamine`, the well-kept pure-Rust reader of spreadsheet files.
//!
//! The sheet's used range is read: its first row is the header, every
//! later row a record. Cells are kept as text (numbers in their shortest
//! exact form), so that a text cell in a numeric column is reported with
//! its file, row and column as a CSV cell would be; rows with no cell
//! filled are skipped, and so are columns with neither a header nor a
//! value (the empty right-hand edge of a sheet).

use std::path::Path;

use calamine::{open_workbook_auto, Data, Reader};

use super::{read_error, ColumnData, Table};
use crate::error::Result;

/// The first bytes of a zip archive, which an .xlsx workbook is (ECMA-376
/// Part 2, Open Packaging Conventions; PKWARE APPNOTE.TXT §4.3.7).
pub(super) const ZIP_MAGIC: &[u8; 4] = b"PK\x03\x04";

/// The first bytes of an OLE2 compound file, which an .xls workbook is
/// (Microsoft [MS-CFB] §2.2).
pub(super) const OLE2_MAGIC: &[u8; 4] = b"\xD0\xCF\x11\xE0";

fn text_of(cell: &Data) -> Option<String> {
    match cell {
        Data::Empty => None,
        Data::String(s) => {
            let t = s.trim();
            (!t.is_empty()).then(|| t.to_string())
        }
        Data::Float(f) => Some(f.to_string()),
        Data::Int(i) => Some(i.to_string()),
        Data::Bool(b) => Some(b.to_string()),
        Data::DateTime(d) => Some(d.as_f64().to_string()),
        Data::DateTimeIso(s) | Data::DurationIso(s) => Some(s.clone()),
        Data::Error(e) => Some(format!("#{e:?}")),
    }
}

/// Read sheet `sheet` (the first when `None`) of the workbook at `path`.
///
/// # Errors
/// [`crate::Error::Read`] when the workbook cannot be opened, the sheet
/// does not exist (the message lists the sheets), or the sheet has no
/// header, an empty or repeated column name, or no data rows.
pub(super) fn read(path: &Path, sheet: Option<&str>) -> Result<Table> {
    let mut book = open_workbook_auto(path)
        .map_err(|e| read_error(path, format!("cannot open the workbook ({e})")))?;
    let names = book.sheet_names();
    let name = match sheet {
        Some(s) => names
            .iter()
            .find(|n| n.as_str() == s)
            .cloned()
            .ok_or_else(|| {
                read_error(
                    path,
                    format!(
                        "no sheet named '{s}'{}; the sheets are: {}",
                        crate::data::suggest::did_you_mean(s, &names),
                        names.join(", ")
                    ),
                )
            })?,
        None => names
            .first()
            .cloned()
            .ok_or_else(|| read_error(path, "the workbook has no sheets"))?,
    };
    let range = book
        .worksheet_range(&name)
        .map_err(|e| read_error(path, format!("cannot read sheet '{name}' ({e})")))?;
    let mut rows = range.rows();
    let header: Vec<Option<String>> = rows
        .next()
        .ok_or_else(|| read_error(path, format!("sheet '{name}' is empty")))?
        .iter()
        .map(text_of)
        .collect();
    let body: Vec<Vec<Option<String>>> = rows
        .map(|r| r.iter().map(text_of).collect::<Vec<_>>())
        .filter(|r| r.iter().any(Option::is_some))
        .collect();
    if body.is_empty() {
        return Err(read_error(
            path,
            format!("sheet '{name}' has a header but no data rows"),
        ));
    }
    let mut table = Table {
        source: path.to_path_buf(),
        names: Vec::new(),
        columns: Vec::new(),
        n_rows: body.len(),
        first_row: 0,
        sheet: Some(name.clone()),
    };
    for (j, h) in header.iter().enumerate() {
        let cells: Vec<Option<String>> = body.iter().map(|r| r.get(j).cloned().flatten()).collect();
        let Some(h) = h else {
            if cells.iter().all(Option::is_none) {
                continue;
            }
            return Err(read_error(
                path,
                format!("sheet '{name}': column {} has values but no name", j + 1),
            ));
        };
        table.push_column(h.clone(), ColumnData::Text(cells))?;
    }
    Ok(table)
}
