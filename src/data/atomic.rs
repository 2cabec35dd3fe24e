//! Writing files so that a failure or a kill never leaves a partial file.

use std::io::Write;
use std::path::Path;

use crate::error::{Error, Result};

/// Write `bytes` to `path` through a temporary file and a rename.
///
/// # Errors
/// [`Error::Write`] naming `path`.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<()> {
    let err = |source: std::io::Error| Error::Write {
        path: path.display().to_string(),
        source,
    };
    let dir = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    };
    let mut tmp = tempfile::Builder::new()
        .prefix(".mettle-")
        .suffix(".tmp")
        .tempfile_in(dir)
        .map_err(err)?;
    tmp.write_all(bytes).map_err(err)?;
    tmp.as_file().sync_all().map_err(err)?;
    // a temporary file is private (0600); the result should carry the
    // permissions an ordinary new file gets, or those of the file it replaces
    let mode = std::fs::metadata(path).map(|m| m.permissions()).ok();
    #[cfg(unix)]
    let mode = mode.or_else(|| {
        use std::os::unix::fs::PermissionsExt;
        Some(std::fs::Permissions::from_mode(0o644))
    });
    if let Some(perm) = mode {
        tmp.as_file().set_permissions(perm).map_err(err)?;
    }
    tmp.persist(path).map_err(|e| err(e.error))?;
    Ok(())
}
