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
    // written beside the target and renamed over it, so a reader never
    // sees a half-written file
    let io_err = |source| DemoError::Io {
        path: path.to_path_buf(),
        source,
    };
    let mut tmp = path.as_os_str().to_owned();
    tmp.push(format!(".tmp-{}", std::process::id()));
    let tmp = std::path::PathBuf::from(tmp);
    std::fs::write(&tmp, text.as_bytes()).map_err(io_err)?;
    std::fs::rename(&tmp, path).map_err(|e| {
        let _ = std::fs::remove_file(&tmp);
        io_err(e)
    })
}
