//! Spreadsheet workbooks (.xlsx, .xls) given where a table is expected:
//! recognised by their first bytes and refused with a message that says
//! what to do, rather than read as text (binary garbage in the header).

use std::path::Path;

use super::read_error;
use crate::error::Error;

/// The first bytes of a zip archive, which an .xlsx workbook is (ECMA-376
/// Part 2, Open Packaging Conventions; PKWARE APPNOTE.TXT §4.3.7).
pub(super) const ZIP_MAGIC: &[u8; 4] = b"PK\x03\x04";

/// The first bytes of an OLE2 compound file, which an .xls workbook is
/// (Microsoft [MS-CFB] §2.2).
pub(super) const OLE2_MAGIC: &[u8; 4] = b"\xD0\xCF\x11\xE0";

/// The refusal of a workbook at `path`.
pub(super) fn refuse(path: &Path) -> Error {
    read_error(
        path,
        "the file is a spreadsheet workbook (.xlsx or .xls), not a table mettle reads: save the \
sheet as CSV (comma-separated, decimal point) or Parquet and give that file",
    )
}
