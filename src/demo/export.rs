//! The demo tables as a QA engineer's spreadsheet export arrives: each
//! weld's identifier in a first column, the values after it.

use std::path::Path;

use super::{DemoError, DemoTable};

/// Writes `table` as CSV to `path` (atomically) with a first column
/// `id_column` holding each row's label up to its first space (FH-W0012,
/// NEW-01), then the table's own columns, numbers in Rust's shortest
/// round-trip form.
pub fn write_export(table: &DemoTable, id_column: &str, path: &Path) -> Result<(), DemoError> {
    let mut text = format!("{id_column},{}\n", table.columns.join(","));
    for (i, row) in table.rows.iter().enumerate() {
        let label = table.labels.get(i).map_or("", String::as_str);
        text.push_str(label.split(' ').next().unwrap_or_default());
        for v in row {
            text.push(',');
            text.push_str(&v.to_string());
        }
        text.push('\n');
    }
    crate::data::write_atomic(path, text.as_bytes()).map_err(|e| DemoError::Io {
        path: path.to_path_buf(),
        source: std::io::Error::other(e.to_string()),
    })
}
