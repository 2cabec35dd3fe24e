//! Plain CSV output of a [`DemoTable`], written atomically.

use std::fs::File;
use std::io::{BufWriter, Write};
use std::path::Path;

use super::{DemoError, DemoTable};

/// Writes `table` as CSV to `path`: the first line is the header (the column names),
/// then one line per row, numbers in Rust's shortest round-trip form. Nothing else —
/// no comment line, no labels. The file is written to a temporary file in the same
/// directory and renamed over `path`, so a reader never sees a half-written file.
pub fn write_csv(table: &DemoTable, path: &Path) -> Result<(), DemoError> {
    let io_err = |source| DemoError::Io {
        path: path.to_path_buf(),
        source,
    };
    let dir = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => Path::new(".").to_path_buf(),
    };
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "table.csv".to_string());
    let tmp = dir.join(format!(".{name}.tmp-{}", std::process::id()));

    let result = (|| -> std::io::Result<()> {
        let file = File::create(&tmp)?;
        let mut w = BufWriter::new(file);
        writeln!(w, "{}", table.columns.join(","))?;
        for row in &table.rows {
            let mut first = true;
            for v in row {
                if !first {
                    w.write_all(b",")?;
                }
                first = false;
                write!(w, "{v}")?;
            }
            w.write_all(b"\n")?;
        }
        let file = w.into_inner().map_err(|e| e.into_error())?;
        file.sync_all()?;
        std::fs::rename(&tmp, path)
    })();
    if let Err(e) = result {
        let _ = std::fs::remove_file(&tmp);
        return Err(io_err(e));
    }
    Ok(())
}
