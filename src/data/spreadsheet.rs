//! Writing results as an Excel workbook (.xlsx) with `rust_xlsxwriter`,
//! the well-kept pure-Rust writer of the format (Office Open XML,
//! ECMA-376): one sheet per table, the first row a header, numbers stored
//! as numbers (rounded to the output's significant digits, as the CSV
//! writes them). The workbook's creation date is fixed (2000-01-01), so the
//! same cells give the same bytes.

use std::path::Path;

use rust_xlsxwriter::{DocProperties, ExcelDateTime, Workbook, XlsxError};

use crate::data::cells::{sig, Cell};
use crate::error::{Error, Result};

/// A named sheet: rows of cells, the first row the header.
#[derive(Clone, Debug, PartialEq)]
pub struct Sheet {
    /// The sheet's name (at most 31 characters, none of `[]:*?/\`).
    pub name: String,
    /// Its rows.
    pub rows: Vec<Vec<Cell>>,
}

/// True when `path` names an Excel workbook by its extension (.xlsx).
pub fn is_xlsx_path(path: &Path) -> bool {
    path.extension()
        .and_then(|e| e.to_str())
        .is_some_and(|e| e.eq_ignore_ascii_case("xlsx"))
}

/// The workbook holding `sheets`, as the bytes of an .xlsx file; numbers
/// rounded to `digits` significant digits; `name` (the file it is meant
/// for) is used in messages only.
///
/// # Errors
/// [`Error::Write`] naming `name` when a sheet name is invalid or a cell
/// cannot be stored (a sheet beyond 1 048 576 rows or 16 384 columns).
pub fn xlsx_bytes(name: &str, sheets: &[Sheet], digits: usize) -> Result<Vec<u8>> {
    let fail = |e: XlsxError| Error::Write {
        path: name.to_string(),
        source: std::io::Error::other(format!("cannot write the workbook ({e})")),
    };
    let mut book = Workbook::new();
    // a fixed creation date, so that the same cells give the same bytes
    let date = ExcelDateTime::from_ymd(2000, 1, 1).map_err(fail)?;
    book.set_properties(&DocProperties::new().set_creation_datetime(&date));
    for sheet in sheets {
        let ws = book.add_worksheet();
        ws.set_name(&sheet.name).map_err(fail)?;
        for (i, row) in sheet.rows.iter().enumerate() {
            let r = u32::try_from(i).map_err(|_| fail(XlsxError::RowColumnLimitError))?;
            for (j, cell) in row.iter().enumerate() {
                let c = u16::try_from(j).map_err(|_| fail(XlsxError::RowColumnLimitError))?;
                match cell {
                    Cell::Text(s) => ws.write_string(r, c, s).map(|_| ()),
                    Cell::Num(v) if v.is_finite() => {
                        let v: f64 = sig(*v, digits).parse().unwrap_or(*v);
                        ws.write_number(r, c, v).map(|_| ())
                    }
                    Cell::Num(v) => ws.write_string(r, c, v.to_string()).map(|_| ()),
                    Cell::Int(k) => ws.write_number(r, c, *k as f64).map(|_| ()),
                    Cell::Bool(b) => ws.write_boolean(r, c, *b).map(|_| ()),
                    Cell::Empty => Ok(()),
                }
                .map_err(fail)?;
            }
        }
    }
    book.save_to_buffer().map_err(fail)
}

/// Write `sheets` to `path` as an .xlsx workbook, atomically.
///
/// # Errors
/// As [`xlsx_bytes`], and the write itself.
pub fn write_xlsx(path: &Path, sheets: &[Sheet], digits: usize) -> Result<()> {
    let bytes = xlsx_bytes(&path.display().to_string(), sheets, digits)?;
    crate::data::write_atomic(path, &bytes)
}

/// The demo exports as workbooks, as a QA engineer's files arrive: for
/// each of [`crate::demo::EXPORT_FILES`] in `dir` (written by
/// [`crate::demo::write_demo_datasets`]), a workbook of the same name
/// ending in `.xlsx` without `_export` (fellhaven_welds.xlsx): sheet
/// `welds` with the export's cells, then sheet `about` saying the data are
/// invented. Returns the paths written.
///
/// # Errors
/// Reading an export; writing a workbook.
pub fn write_demo_workbooks(dir: &Path) -> Result<Vec<std::path::PathBuf>> {
    const INVENTED: &str = "INVENTED data of the fictional Fellhaven scenario, made by \
`mettle demo-data`: not test results; not to be used to qualify any weld.";
    let mut out = Vec::new();
    for name in crate::demo::EXPORT_FILES {
        let table = crate::data::Table::read(&dir.join(name))?;
        let book = name.replace("_export.csv", ".xlsx");
        let path = dir.join(book);
        let sheets = [
            table.to_sheet("welds"),
            Sheet {
                name: "about".into(),
                rows: vec![vec![Cell::Text(INVENTED.into())]],
            },
        ];
        // 17 significant digits: every number exactly as in the export
        write_xlsx(&path, &sheets, 17)?;
        out.push(path);
    }
    Ok(out)
}
