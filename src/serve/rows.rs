//! Rows sent to the server, turned into a table by the same reader as the
//! command line's, so that a bad cell gets the same message (sheet, row,
//! line, column). JSON rows are written out as CSV text first; CSV or
//! tab-separated text (pasted from a spreadsheet) is read as it comes; a
//! workbook's bytes (.xlsx, .xls) are read by the library's workbook reader
//! (`Table::read_sheet`, calamine), as `--input FILE.xlsx` is.

use axum::http::{header, HeaderMap};
use mettle::data::{csv_field, FileFormat, Table};
use serde_json::{Map, Value};

use super::reply::Reply;

/// A table read from a request, with the temporary folder it was read
/// through (kept until the request is answered).
pub struct Rows {
    /// The rows.
    pub table: Table,
    /// What messages call the rows (`request rows`, a file's name).
    pub name: String,
    /// The path the reader saw, replaced by `name` in every message.
    pub hidden: String,
    _dir: tempfile::TempDir,
}

impl Rows {
    /// A library error about these rows as a 400 reply, its message naming
    /// the rows by their name rather than the temporary path.
    pub fn bad(&self, e: &mettle::Error) -> Reply {
        Reply::bad_input(e.to_string().replace(&self.hidden, &self.name))
    }
}

/// A label for rows that is never taken as a path: the last part of what
/// the client sent, without separators or control characters.
pub fn label(given: Option<&str>, default: &str) -> String {
    let s: String = given
        .unwrap_or_default()
        .rsplit(['/', '\\'])
        .next()
        .unwrap_or_default()
        .chars()
        .filter(|c| !c.is_control())
        .take(80)
        .collect();
    let s = s.trim();
    if s.is_empty() || s == "." || s == ".." {
        default.to_string()
    } else {
        s.to_string()
    }
}

/// CSV text from JSON rows: one object per row, the header the union of
/// their keys in order of first appearance; numbers and text as written,
/// null or a missing key an empty cell.
///
/// # Errors
/// A 400 reply naming the row that is not an object, or a cell that is an
/// array or object.
pub fn json_rows_to_csv(rows: &[Value]) -> Result<String, Reply> {
    let mut names: Vec<String> = Vec::new();
    let mut objects: Vec<&Map<String, Value>> = Vec::with_capacity(rows.len());
    for (i, r) in rows.iter().enumerate() {
        let Some(o) = r.as_object() else {
            return Err(Reply::bad_input(format!(
                "request rows: row {} is not an object of column names and values",
                i + 1
            )));
        };
        for k in o.keys() {
            if !names.contains(k) {
                names.push(k.clone());
            }
        }
        objects.push(o);
    }
    let mut out: String = names
        .iter()
        .map(|n| csv_field(n))
        .collect::<Vec<_>>()
        .join(",");
    out.push('\n');
    for (i, o) in objects.iter().enumerate() {
        let mut cells = Vec::with_capacity(names.len());
        for n in &names {
            cells.push(match o.get(n) {
                None | Some(Value::Null) => String::new(),
                Some(Value::Number(x)) => x.to_string(),
                Some(Value::String(s)) => csv_field(s),
                Some(Value::Bool(b)) => b.to_string(),
                Some(_) => {
                    return Err(Reply::bad_input(format!(
                    "request rows: row {}, column '{n}': a list or object where a value belongs",
                    i + 1
                )))
                }
            });
        }
        out.push_str(&cells.join(","));
        out.push('\n');
    }
    Ok(out)
}

/// Text pasted from a spreadsheet: tab-separated when the header line
/// holds a tab and no comma (each cell then quoted as CSV needs), else
/// taken as CSV.
pub fn pasted_to_csv(text: &str) -> String {
    let header = text.lines().next().unwrap_or_default();
    if !header.contains('\t') || header.contains(',') {
        return text.to_string();
    }
    let mut out = String::with_capacity(text.len() + 16);
    for line in text.lines() {
        let line = line.strip_suffix('\r').unwrap_or(line);
        let cells: Vec<String> = line.split('\t').map(csv_field).collect();
        out.push_str(&cells.join(","));
        out.push('\n');
    }
    out
}

/// The media type of an Office Open XML workbook (.xlsx; ECMA-376, and
/// the IANA media-type registry).
pub const XLSX_TYPE: &str = "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet";

/// How a non-JSON body is to be read: `Some(extension)` for a workbook —
/// recognised by its first bytes (a zip archive or an OLE2 compound file,
/// the library's rule, [`FileFormat::workbook_extension`]) or declared by
/// its Content-Type ([`XLSX_TYPE`]) — else `None` (CSV or tab-separated
/// text). The older type `application/vnd.ms-excel` decides nothing: some
/// systems send CSV files under it.
///
/// # Errors
/// 400 when the Content-Type declares a workbook but the bytes do not
/// open as one (they would otherwise be read as text).
pub fn workbook_kind(
    headers: &HeaderMap,
    bytes: &[u8],
    name: &str,
) -> Result<Option<&'static str>, Reply> {
    let declared = headers
        .get(header::CONTENT_TYPE)
        .and_then(|v| v.to_str().ok())
        .map(|v| {
            v.split(';')
                .next()
                .unwrap_or_default()
                .trim()
                .to_ascii_lowercase()
        })
        .filter(|v| v == XLSX_TYPE);
    match (FileFormat::workbook_extension(bytes), declared) {
        (Some(ext), _) => Ok(Some(ext)),
        (None, Some(kind)) => Err(Reply::bad_input(format!(
            "{name}: the body is declared a workbook ({kind}) but is not one: \
             an .xlsx file is a zip archive and begins with the bytes PK\\x03\\x04"
        ))),
        (None, None) => Ok(None),
    }
}

/// Read CSV text as a table (through a private temporary file, so the
/// command line's reader and its messages apply unchanged), refusing more
/// than `max_rows` rows; `sheet`, when given, is refused by the reader as
/// it is for a CSV file on the command line.
///
/// # Errors
/// 400 with the reader's message; 413 over the row limit.
pub fn read(csv: &str, name: &str, sheet: Option<&str>, max_rows: usize) -> Result<Rows, Reply> {
    // a cheap count before the reader: a 20 MB paste of short lines is
    // refused without being parsed
    let lines = csv.lines().filter(|l| !l.trim().is_empty()).count();
    if lines > max_rows.saturating_add(1) {
        return Err(Reply::too_many_rows(lines.saturating_sub(1), max_rows));
    }
    read_file(csv.as_bytes(), "rows.csv", name, sheet, max_rows)
}

/// Read a workbook's bytes (`extension` from [`workbook_kind`]) as a table:
/// sheet `sheet`, or the first, by the library's workbook reader; more
/// than `max_rows` rows refused.
///
/// # Errors
/// 400 with the reader's message (a workbook that does not open, a sheet
/// it lacks — its sheets listed —, a bad cell naming sheet, row and
/// column); 413 over the row limit.
pub fn read_workbook(
    bytes: &[u8],
    extension: &str,
    name: &str,
    sheet: Option<&str>,
    max_rows: usize,
) -> Result<Rows, Reply> {
    read_file(bytes, &format!("rows.{extension}"), name, sheet, max_rows)
}

/// The bytes written to a private temporary file `file` and read there by
/// [`Table::read_sheet`]; every message names the rows `name`.
fn read_file(
    bytes: &[u8],
    file: &str,
    name: &str,
    sheet: Option<&str>,
    max_rows: usize,
) -> Result<Rows, Reply> {
    let dir = tempfile::tempdir().map_err(|e| Reply::internal(format!("temporary folder: {e}")))?;
    let path = dir.path().join(file);
    std::fs::write(&path, bytes).map_err(|e| Reply::internal(format!("temporary file: {e}")))?;
    let hidden = path.display().to_string();
    let fix = |e: mettle::Error| Reply::bad_input(e.to_string().replace(&hidden, name));
    let table = Table::read_sheet(&path, sheet).map_err(fix)?;
    if table.n_rows() > max_rows {
        return Err(Reply::too_many_rows(table.n_rows(), max_rows));
    }
    Ok(Rows {
        table,
        name: name.to_string(),
        hidden,
        _dir: dir,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn labels_never_carry_a_path() {
        assert_eq!(label(Some("../../etc/passwd"), "x"), "passwd");
        assert_eq!(label(Some("C:\\data\\heats.csv"), "x"), "heats.csv");
        assert_eq!(label(Some(".."), "x"), "x");
        assert_eq!(label(None, "request rows"), "request rows");
    }

    #[test]
    fn tabs_become_commas_and_cells_with_commas_are_quoted() {
        assert_eq!(pasted_to_csv("a\tb\n1\t2,5\n"), "a,b\n1,\"2,5\"\n");
        assert_eq!(pasted_to_csv("a,b\n1,2\n"), "a,b\n1,2\n");
    }

    #[test]
    fn json_rows_keep_their_keys_in_order() {
        let rows: Vec<Value> =
            serde_json::from_str(r#"[{"a":1,"b":"x"},{"b":2.5,"c":null}]"#).expect("json");
        assert_eq!(json_rows_to_csv(&rows).expect("ok"), "a,b,c\n1,x,\n,2.5,\n");
        assert!(json_rows_to_csv(&[Value::from(3)]).is_err());
    }
}
