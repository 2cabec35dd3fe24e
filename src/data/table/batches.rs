//! Reading a large table a batch of rows at a time, so that a file of ten
//! million rows can be estimated in bounded memory.
//!
//! Every batch is a [`Table`] read exactly as [`Table::read`] reads a
//! whole file (the same cell types, names and checks), which knows where it
//! starts in the file ([`Table::first_row`]), so that its messages name rows
//! of the file. A file no longer than one batch is read by [`Table::read`]
//! itself.
//!
//! - **CSV:** the whole file's shape is checked first ([`super::shape`],
//!   one streaming pass), so a ragged or badly quoted row is refused before
//!   any batch is handed out; then records are cut at line ends outside
//!   quotes and each batch (the header row, then its records) is parsed by
//!   polars as a small CSV file.
//! - **Parquet:** the footer is read once; each batch is the slice of rows
//!   it covers, which polars decodes from the row groups that overlap it.

use std::fs::File;
use std::io::{BufRead, BufReader, Cursor};
use std::path::{Path, PathBuf};
use std::sync::Arc;

use polars::prelude::*;

use super::{contain_panic, polars_message, read_error, shape, FileFormat, Table};
use crate::error::{Error, Result};

/// The batches of a table file, in file order: an iterator of
/// [`Table`]s, each with its [`Table::first_row`] set. Stops after the
/// first error.
pub struct TableBatches {
    path: PathBuf,
    rows_per_batch: usize,
    next_row: usize,
    source: Source,
}

enum Source {
    /// A file no longer than one batch, read whole (taken once).
    Whole(Option<Table>),
    /// A CSV file past its header row.
    Csv {
        reader: BufReader<File>,
        header: Vec<u8>,
    },
    /// A Parquet file and its footer.
    Parquet {
        metadata: Arc<FileMetadata>,
        n_rows: usize,
    },
    /// Finished, or stopped by an error.
    Done,
}

fn io_error(path: &Path) -> impl Fn(std::io::Error) -> Error + '_ {
    move |source| Error::Io {
        path: path.display().to_string(),
        source,
    }
}

/// Append the next record (a line, or several while a quoted cell holds a
/// line break) to `out`, always ending in `\n`. Blank lines are skipped.
/// False at the end of the file.
fn read_record(reader: &mut BufReader<File>, out: &mut Vec<u8>) -> std::io::Result<bool> {
    let start = out.len();
    let mut quotes = 0usize;
    loop {
        let from = out.len();
        if reader.read_until(b'\n', out)? == 0 {
            break;
        }
        quotes += out[from..].iter().filter(|&&b| b == b'"').count();
        if out.last() != Some(&b'\n') {
            out.push(b'\n');
        }
        if quotes % 2 == 1 {
            continue; // inside a quoted cell: the record goes on
        }
        if out[start..].iter().all(|b| matches!(b, b'\r' | b'\n')) {
            out.truncate(start);
            continue;
        }
        return Ok(true);
    }
    if out[start..].iter().all(|b| matches!(b, b'\r' | b'\n')) {
        out.truncate(start);
        return Ok(false);
    }
    Ok(true)
}

impl Table {
    /// Read a CSV or Parquet file (recognised as [`Table::read`] does) in
    /// batches of at most `rows_per_batch` rows.
    ///
    /// # Errors
    /// As [`Table::read`] for an empty, header-only, ragged or damaged
    /// file: a CSV file's shape is checked before the first batch; an
    /// error in a later batch's cells is returned by the iterator.
    pub fn read_batches(path: &Path, rows_per_batch: usize) -> Result<TableBatches> {
        Self::read_sheet_batches(path, rows_per_batch, None)
    }

    /// As [`Table::read_batches`], and a spreadsheet workbook's sheet
    /// `sheet` (the first when `None`), read whole: a sheet holds at most
    /// 1 048 576 rows.
    ///
    /// # Errors
    /// As [`Table::read_batches`] and [`Table::read_sheet`].
    pub fn read_sheet_batches(
        path: &Path,
        rows_per_batch: usize,
        sheet: Option<&str>,
    ) -> Result<TableBatches> {
        let rows_per_batch = rows_per_batch.max(1);
        let whole = |t: Table| TableBatches {
            path: path.to_path_buf(),
            rows_per_batch,
            next_row: 0,
            source: Source::Whole(Some(t)),
        };
        let meta = std::fs::metadata(path).map_err(io_error(path))?;
        if meta.len() == 0 {
            return Table::read(path).map(whole);
        }
        let source = match FileFormat::sniff(path)? {
            // a workbook's sheet is read whole; a sheet named for another
            // file is refused there
            FileFormat::Spreadsheet => return Table::read_sheet(path, sheet).map(whole),
            _ if sheet.is_some() => return Table::read_sheet(path, sheet).map(whole),
            FileFormat::Csv => {
                if shape::check(path)?.n_rows <= rows_per_batch {
                    return Table::read(path).map(whole);
                }
                let mut reader =
                    BufReader::with_capacity(1 << 20, File::open(path).map_err(io_error(path))?);
                let mut header = Vec::new();
                read_record(&mut reader, &mut header).map_err(io_error(path))?;
                Source::Csv { reader, header }
            }
            FileFormat::Parquet => {
                let f = File::open(path).map_err(io_error(path))?;
                let footer = contain_panic(move || {
                    let mut r = ParquetReader::new(f);
                    r.get_metadata().cloned()
                });
                match footer {
                    Ok(Ok(metadata)) if metadata.num_rows > rows_per_batch => {
                        // the whole-file reader's damaged-file checks, once
                        // for the whole file, before any page is decoded
                        super::parquet_check::check(path)?;
                        Source::Parquet {
                            n_rows: metadata.num_rows,
                            metadata,
                        }
                    }
                    // small, or a footer polars refuses: the whole-file
                    // reader and its checks say what is wrong
                    _ => return Table::read(path).map(whole),
                }
            }
        };
        Ok(TableBatches {
            path: path.to_path_buf(),
            rows_per_batch,
            next_row: 0,
            source,
        })
    }
}

impl TableBatches {
    /// The next batch, `None` at the end.
    fn next_batch(&mut self) -> Result<Option<Table>> {
        let path = self.path.clone();
        let first = self.next_row;
        let polars_error = |e: PolarsError| read_error(&path, polars_message(&e));
        let df = match &mut self.source {
            Source::Done => return Ok(None),
            Source::Whole(t) => return Ok(t.take()),
            Source::Csv { reader, header } => {
                let mut buf = header.clone();
                let mut records = 0;
                while records < self.rows_per_batch
                    && read_record(reader, &mut buf).map_err(io_error(&path))?
                {
                    records += 1;
                }
                if records == 0 {
                    return Ok(None);
                }
                let df = CsvReadOptions::default()
                    .with_has_header(true)
                    .with_infer_schema_length(Some(0))
                    .with_raise_if_empty(true)
                    .into_reader_with_file_handle(Cursor::new(buf))
                    .finish()
                    .map_err(polars_error)?;
                if df.height() > records {
                    df.slice(0, records)
                } else {
                    df
                }
            }
            Source::Parquet { metadata, n_rows } => {
                let len = self.rows_per_batch.min(n_rows.saturating_sub(first));
                if len == 0 {
                    return Ok(None);
                }
                let f = File::open(&path).map_err(io_error(&path))?;
                let metadata = metadata.clone();
                contain_panic(move || {
                    let mut r = ParquetReader::new(f);
                    r.set_metadata(metadata);
                    r.with_slice(Some((first, len))).finish()
                })
                .map_err(|m| read_error(&path, format!("the Parquet file is damaged ({m})")))?
                .map_err(polars_error)?
            }
        };
        let table = Table::from_frame(&path, &df)?.with_first_row(first);
        if table.n_rows() == 0 {
            return Ok(None);
        }
        self.next_row += table.n_rows();
        Ok(Some(table))
    }
}

impl Iterator for TableBatches {
    type Item = Result<Table>;

    fn next(&mut self) -> Option<Result<Table>> {
        match self.next_batch() {
            Ok(Some(t)) => Some(Ok(t)),
            Ok(None) => {
                self.source = Source::Done;
                None
            }
            Err(e) => {
                self.source = Source::Done;
                Some(Err(e))
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn concat(path: &Path, batch: usize) -> (Vec<usize>, Vec<Option<f64>>, Vec<Option<String>>) {
        let mut firsts = Vec::new();
        let mut x = Vec::new();
        let mut id = Vec::new();
        for t in Table::read_batches(path, batch).expect("batches") {
            let t = t.expect("batch");
            firsts.push(t.first_row());
            x.extend(t.numeric_optional("x").expect("x"));
            id.extend((0..t.n_rows()).map(|r| t.cell_text(0, r)));
        }
        (firsts, x, id)
    }

    /// Reading in batches gives the cells `Table::read` gives, for CSV with
    /// quoted line breaks, a byte-order mark, CRLF and a trailing blank
    /// line, and for the same table as Parquet.
    #[test]
    fn batches_hold_the_rows_read_whole() {
        let dir = tempfile::tempdir().expect("tempdir");
        let mut text = String::from("\u{feff}id,x\r\n");
        for i in 0..23 {
            if i % 5 == 0 {
                text.push_str(&format!("\"W\n{i}, \"\"q\"\"\",{}\r\n", i as f64 / 4.0));
            } else if i % 7 == 0 {
                text.push_str(&format!("W{i},\r\n"));
            } else {
                text.push_str(&format!("W{i},{}\r\n", i as f64 / 4.0));
            }
        }
        text.push_str("\r\n");
        let p = dir.path().join("a.csv");
        std::fs::write(&p, &text).expect("write");
        let whole = Table::read(&p).expect("read");
        let want_x = whole.numeric_optional("x").expect("x");
        let want_id: Vec<_> = (0..whole.n_rows()).map(|r| whole.cell_text(0, r)).collect();
        let q = dir.path().join("a.parquet");
        std::fs::write(&q, whole.to_parquet_bytes().expect("parquet")).expect("write");
        for file in [&p, &q] {
            for batch in [1, 4, 10, 23, 100] {
                let (firsts, x, id) = concat(file, batch);
                assert_eq!(x, want_x, "{} batch {batch}", file.display());
                assert_eq!(id, want_id, "{} batch {batch}", file.display());
                let expect: Vec<usize> = (0..23).step_by(batch).collect();
                assert_eq!(firsts, expect, "{} batch {batch}", file.display());
            }
        }
    }

    /// A bad cell in a later batch is named by its row in the file.
    #[test]
    fn a_bad_cell_is_named_by_its_row_in_the_file() {
        let dir = tempfile::tempdir().expect("tempdir");
        let mut text = String::from("x\n");
        for i in 0..30 {
            text.push_str(if i == 26 { "abc\n" } else { "1.5\n" });
        }
        let p = dir.path().join("b.csv");
        std::fs::write(&p, &text).expect("write");
        let msg = Table::read_batches(&p, 8)
            .expect("batches")
            .map(|t| t.and_then(|t| t.numeric("x")))
            .find_map(std::result::Result::err)
            .expect("the bad cell")
            .to_string();
        assert!(msg.contains("row 27 (line 28)"), "{msg}");
        assert!(msg.contains("'x'") && msg.contains("b.csv"), "{msg}");
        // the whole-file reader names the same row
        let whole = Table::read(&p)
            .expect("read")
            .numeric("x")
            .expect_err("bad");
        assert!(whole.to_string().contains("row 27 (line 28)"), "{whole}");
    }

    /// A ragged row is refused before any batch is handed out.
    #[test]
    fn a_ragged_row_is_refused_up_front() {
        let dir = tempfile::tempdir().expect("tempdir");
        let mut text = String::from("a,b\n");
        for i in 0..20 {
            text.push_str(if i == 17 { "1\n" } else { "1,2\n" });
        }
        let p = dir.path().join("c.csv");
        std::fs::write(&p, &text).expect("write");
        let msg = Table::read_batches(&p, 5)
            .err()
            .expect("ragged")
            .to_string();
        assert!(msg.contains("row 18 (line 19)"), "{msg}");
    }
}
