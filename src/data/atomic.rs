//! Writing files so that a failure or a kill never leaves a partial file.

use std::io::{BufWriter, Write};
use std::path::{Path, PathBuf};

use tempfile::NamedTempFile;

use crate::error::{Error, Result};

/// Write `bytes` to `path` through a temporary file and a rename.
///
/// # Errors
/// [`Error::Write`] naming `path`.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<()> {
    let mut f = AtomicFile::create(path)?;
    f.write_all(bytes).map_err(|source| Error::Write {
        path: path.display().to_string(),
        source,
    })?;
    f.commit()
}

/// A file written piece by piece that appears under its name only when
/// complete: the pieces go to a temporary file beside it, which
/// [`AtomicFile::commit`] syncs and renames over `path`. Dropped without a
/// commit (an error part-way, a panic), the temporary file is removed and
/// `path` is left as it was. For output too large to hold in memory
/// (estimates for millions of rows); [`write_atomic`] for bytes in hand.
pub struct AtomicFile {
    path: PathBuf,
    tmp: BufWriter<NamedTempFile>,
}

impl AtomicFile {
    /// Start writing `path` (nothing appears under that name yet).
    ///
    /// # Errors
    /// [`Error::Write`] naming `path` when its folder does not take a new
    /// file.
    pub fn create(path: &Path) -> Result<AtomicFile> {
        let dir = match path.parent() {
            Some(p) if !p.as_os_str().is_empty() => p,
            _ => Path::new("."),
        };
        let tmp = tempfile::Builder::new()
            .prefix(".mettle-")
            .suffix(".tmp")
            .tempfile_in(dir)
            .map_err(|source| Error::Write {
                path: path.display().to_string(),
                source,
            })?;
        Ok(AtomicFile {
            path: path.to_path_buf(),
            tmp: BufWriter::with_capacity(1 << 16, tmp),
        })
    }

    /// Flush, sync and rename the temporary file to the final name.
    ///
    /// # Errors
    /// [`Error::Write`] naming the final path.
    pub fn commit(self) -> Result<()> {
        let path = self.path;
        let err = |source: std::io::Error| Error::Write {
            path: path.display().to_string(),
            source,
        };
        let tmp = self.tmp.into_inner().map_err(|e| err(e.into_error()))?;
        tmp.as_file().sync_all().map_err(err)?;
        // a temporary file is private (0600); the result should carry the
        // permissions an ordinary new file gets, or those of the file it replaces
        let mode = std::fs::metadata(&path).map(|m| m.permissions()).ok();
        #[cfg(unix)]
        let mode = mode.or_else(|| {
            use std::os::unix::fs::PermissionsExt;
            Some(std::fs::Permissions::from_mode(0o644))
        });
        if let Some(perm) = mode {
            tmp.as_file().set_permissions(perm).map_err(err)?;
        }
        tmp.persist(&path).map_err(|e| err(e.error))?;
        Ok(())
    }
}

impl Write for AtomicFile {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        self.tmp.write(buf)
    }

    fn flush(&mut self) -> std::io::Result<()> {
        self.tmp.flush()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A file dropped before its commit leaves the old content and no
    /// temporary file; after the commit the new content is in place.
    #[test]
    fn nothing_appears_before_the_commit() {
        let dir = tempfile::tempdir().expect("tempdir");
        let p = dir.path().join("out.csv");
        std::fs::write(&p, "old\n").expect("write");
        {
            let mut f = AtomicFile::create(&p).expect("create");
            f.write_all(b"half").expect("write");
        }
        assert_eq!(std::fs::read_to_string(&p).expect("read"), "old\n");
        assert_eq!(std::fs::read_dir(dir.path()).expect("dir").count(), 1);
        let mut f = AtomicFile::create(&p).expect("create");
        f.write_all(b"new\n").expect("write");
        f.commit().expect("commit");
        assert_eq!(std::fs::read_to_string(&p).expect("read"), "new\n");
        assert_eq!(std::fs::read_dir(dir.path()).expect("dir").count(), 1);
    }
}
