//! Plausibility of a Parquet file's counts and sizes, checked before polars
//! decodes its pages.
//!
//! polars trusts the counts a Parquet file declares: a data page header
//! whose value count is negative is cast to a size near 2^64, and the
//! decoder then asks for a 2^61-byte validity bitmap; the failed allocation
//! aborts the process, which no `catch_unwind` can stop (found by
//! tests/fuzz.rs, docs/reliability.md). This pass reads the footer with
//! polars' own metadata reader and walks the page headers the way polars'
//! page reader does, and refuses the file as damaged, naming the row group
//! and column, unless
//!
//! - the footer's row count is the sum of its row groups' row counts;
//! - every column chunk lies inside the data part of the file (after the
//!   leading magic bytes, before the footer) and declares sizes and a value
//!   count that are not negative;
//! - a column that is not repeated (a plain table column) declares as many
//!   values as its row group has rows;
//! - every page header reads, declares sizes and counts that are not
//!   negative, and lies inside its column chunk; a dictionary page comes
//!   first and holds at most 8 values per byte (no value takes less than a
//!   bit); a version 2 page has no more nulls than values and no more level
//!   bytes than page bytes;
//! - the data pages hold exactly the values their column chunk declares.
//!
//! Each rule is a requirement of the Apache Parquet format specification
//! (parquet-format, `parquet.thrift`: FileMetaData, RowGroup, ColumnMetaData,
//! PageHeader); a file written by polars or pyarrow meets all of them
//! (tests/data_layer.rs reads files of both).
//!
//! The page headers are Thrift structures in the compact protocol (Apache
//! Thrift, "Thrift Compact protocol encoding"); the reader below decodes
//! the few fields it checks and skips the others, within bounds on nesting
//! and header length.

use std::io::{BufReader, Read, Seek, SeekFrom};
use std::path::Path;

use polars::prelude::*;

use crate::error::{Error, Result};

/// Longest page header read, in bytes. Headers are tens of bytes plus the
/// page's statistics (two values of the column); a header longer than this
/// is taken as damage rather than read on.
const MAX_HEADER_BYTES: u64 = 1 << 24;

/// Deepest nesting of Thrift structures and lists in a page header (the
/// format's own nesting is 3: header, page header, statistics).
const MAX_DEPTH: usize = 16;

/// The numbers of a page header that the check uses.
#[derive(Debug, Default, PartialEq, Eq)]
struct PageHeader {
    /// 0 data page, 1 index page, 2 dictionary page, 3 data page v2.
    page_type: Option<i64>,
    uncompressed_size: Option<i64>,
    compressed_size: Option<i64>,
    /// Values of a data page (v1 or v2) or a dictionary page.
    num_values: Option<i64>,
    /// Version 2 data page only.
    num_nulls: Option<i64>,
    num_rows: Option<i64>,
    level_bytes: [Option<i64>; 2],
}

/// Check the Parquet file at `path` (see the module documentation).
///
/// # Errors
/// [`Error::Io`] when it cannot be read; [`Error::Read`] naming the file
/// (and the row group and column) when its metadata cannot be read or a
/// count or size is implausible.
pub(super) fn check(path: &Path) -> Result<()> {
    let io = |source| Error::Io {
        path: path.display().to_string(),
        source,
    };
    let damaged =
        |what: String| super::read_error(path, format!("the Parquet file is damaged ({what})"));
    let file = std::fs::File::open(path).map_err(io)?;
    let file_len = file.metadata().map_err(io)?.len();
    let reader_file = file.try_clone().map_err(io)?;
    let metadata =
        super::contain_panic(move || ParquetReader::new(reader_file).get_metadata().cloned())
            .map_err(damaged)?
            .map_err(|e| super::read_error(path, super::polars_message(&e)))?;

    // the footer: metadata, its length (4 bytes, little-endian), "PAR1"
    let mut src = BufReader::new(file);
    let mut tail = [0u8; 4];
    src.seek(SeekFrom::End(-8)).map_err(io)?;
    src.read_exact(&mut tail).map_err(io)?;
    let footer_len = u64::from(u32::from_le_bytes(tail));
    let data_end = file_len.checked_sub(8 + footer_len).ok_or_else(|| {
        damaged(format!(
            "a footer of {footer_len} bytes in a file of {file_len}"
        ))
    })?;

    let rows: u128 = metadata
        .row_groups
        .iter()
        .map(|rg| rg.num_rows() as u128)
        .sum();
    if rows != metadata.num_rows as u128 {
        return Err(damaged(format!(
            "the footer declares {} rows, its row groups {rows}",
            metadata.num_rows
        )));
    }
    for (g, rg) in metadata.row_groups.iter().enumerate() {
        for c in rg.parquet_columns() {
            let column: Vec<&str> = c
                .descriptor()
                .path_in_schema
                .iter()
                .map(|s| s.as_str())
                .collect();
            let column = column.join(".");
            let here =
                |what: String| damaged(format!("row group {}, column '{column}': {what}", g + 1));
            let start = c.dictionary_page_offset().unwrap_or(c.data_page_offset());
            let (size, values) = (c.compressed_size(), c.num_values());
            if start < 4 || size < 0 || c.uncompressed_size() < 0 || values < 0 {
                return Err(here(format!(
                    "offset {start}, {size} bytes ({} uncompressed), {values} values",
                    c.uncompressed_size()
                )));
            }
            // both are at most i64::MAX, so the sum fits in a u64
            let end = start as u64 + size as u64;
            if end > data_end {
                return Err(here(format!(
                    "bytes {start} to {end}, but the data ends at byte {data_end}"
                )));
            }
            if c.descriptor().descriptor.max_rep_level == 0
                && values as u128 != rg.num_rows() as u128
            {
                return Err(here(format!(
                    "{values} values for the row group's {} rows",
                    rg.num_rows()
                )));
            }
            check_pages(&mut src, start as u64, end, values).map_err(|e| match e {
                PageError::Io(source) => io(source),
                PageError::Damaged(what) => here(what),
            })?;
        }
    }
    Ok(())
}

#[derive(Debug)]
enum PageError {
    Io(std::io::Error),
    Damaged(String),
}

impl From<std::io::Error> for PageError {
    fn from(e: std::io::Error) -> Self {
        match e.kind() {
            std::io::ErrorKind::UnexpectedEof => {
                PageError::Damaged("a page header runs past its column chunk".into())
            }
            _ => PageError::Io(e),
        }
    }
}

/// Walk the pages of the column chunk at bytes `start..end` until they
/// hold `values` values, as polars' page reader does.
fn check_pages<R: Read + Seek>(
    src: &mut R,
    start: u64,
    end: u64,
    values: i64,
) -> std::result::Result<(), PageError> {
    let mut at = start;
    let mut seen: i64 = 0;
    let mut page = 0usize;
    while seen < values {
        page += 1;
        if at >= end {
            return bad(format!(
                "its pages hold {seen} values, the column chunk declares {values}"
            ));
        }
        src.seek(SeekFrom::Start(at))?;
        let mut limited = Counted {
            inner: src.by_ref().take((end - at).min(MAX_HEADER_BYTES)),
            read: 0,
        };
        let h = read_page_header(&mut limited).map_err(|e| match e {
            PageError::Damaged(what) => PageError::Damaged(format!("page {page}: {what}")),
            other => other,
        })?;
        let header_len = limited.read;
        let (Some(kind), Some(raw), Some(packed)) =
            (h.page_type, h.uncompressed_size, h.compressed_size)
        else {
            return bad(format!("page {page}: the header lacks its type or sizes"));
        };
        if raw < 0 || packed < 0 || raw > i64::from(i32::MAX) || packed > i64::from(i32::MAX) {
            return bad(format!("page {page}: {packed} bytes ({raw} uncompressed)"));
        }
        at += header_len + packed as u64;
        if at > end {
            return bad(format!(
                "page {page} ends at byte {at}, past its column chunk's end at {end}"
            ));
        }
        let count = |n: Option<i64>| match n {
            Some(n) if (0..=i64::from(i32::MAX)).contains(&n) => Ok(n),
            Some(n) => bad(format!("page {page}: a count of {n}")),
            None => bad(format!("page {page}: the header lacks its value count")),
        };
        match kind {
            0 => seen += count(h.num_values)?,
            3 => {
                let n = count(h.num_values)?;
                let nulls = count(h.num_nulls)?;
                count(h.num_rows)?;
                let levels = count(h.level_bytes[0])? + count(h.level_bytes[1])?;
                if nulls > n || levels > packed {
                    return bad(format!(
                        "page {page}: {nulls} nulls in {n} values, {levels} level bytes in {packed}"
                    ));
                }
                seen += n;
            }
            2 => {
                let n = count(h.num_values)?;
                if page != 1 || n > raw.saturating_mul(8) {
                    return bad(format!(
                        "page {page}: a dictionary of {n} values in {raw} bytes"
                    ));
                }
            }
            1 => {}
            other => return bad(format!("page {page}: unknown page type {other}")),
        }
    }
    if seen != values {
        return bad(format!(
            "its pages hold {seen} values, the column chunk declares {values}"
        ));
    }
    Ok(())
}

fn bad<T>(what: String) -> std::result::Result<T, PageError> {
    Err(PageError::Damaged(what))
}

/// A reader that counts the bytes read through it.
struct Counted<R> {
    inner: R,
    read: u64,
}

impl<R: Read> Read for Counted<R> {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let k = self.inner.read(buf)?;
        self.read += k as u64;
        Ok(k)
    }
}

// ---- Thrift compact protocol: just enough to read a PageHeader

/// Compact-protocol type codes (Apache Thrift compact protocol).
mod ty {
    pub const STOP: u8 = 0;
    pub const TRUE: u8 = 1;
    pub const FALSE: u8 = 2;
    pub const BYTE: u8 = 3;
    pub const I16: u8 = 4;
    pub const I32: u8 = 5;
    pub const I64: u8 = 6;
    pub const DOUBLE: u8 = 7;
    pub const BINARY: u8 = 8;
    pub const LIST: u8 = 9;
    pub const SET: u8 = 10;
    pub const MAP: u8 = 11;
    pub const STRUCT: u8 = 12;
}

fn byte<R: Read>(r: &mut R) -> std::result::Result<u8, PageError> {
    let mut b = [0u8; 1];
    r.read_exact(&mut b)?;
    Ok(b[0])
}

/// An unsigned LEB128 varint of at most 10 bytes.
fn varint<R: Read>(r: &mut R) -> std::result::Result<u64, PageError> {
    let mut v: u64 = 0;
    for i in 0..10 {
        let b = byte(r)?;
        v |= u64::from(b & 0x7f) << (7 * i);
        if b & 0x80 == 0 {
            return Ok(v);
        }
    }
    Err(PageError::Damaged("a number of more than 10 bytes".into()))
}

/// A zigzag-encoded signed integer.
fn int<R: Read>(r: &mut R) -> std::result::Result<i64, PageError> {
    let v = varint(r)?;
    Ok((v >> 1) as i64 ^ -((v & 1) as i64))
}

fn skip_bytes<R: Read>(r: &mut R, n: u64) -> std::result::Result<(), PageError> {
    let copied = std::io::copy(&mut r.by_ref().take(n), &mut std::io::sink())?;
    if copied < n {
        return Err(PageError::Damaged(
            "a page header runs past its column chunk".into(),
        ));
    }
    Ok(())
}

/// Skip one value of compact type `t`.
fn skip<R: Read>(r: &mut R, t: u8, depth: usize) -> std::result::Result<(), PageError> {
    if depth > MAX_DEPTH {
        return Err(PageError::Damaged("a page header nested too deep".into()));
    }
    match t {
        ty::TRUE | ty::FALSE => Ok(()),
        ty::BYTE => byte(r).map(drop),
        ty::I16 | ty::I32 | ty::I64 => varint(r).map(drop),
        ty::DOUBLE => skip_bytes(r, 8),
        ty::BINARY => {
            let n = varint(r)?;
            skip_bytes(r, n)
        }
        ty::LIST | ty::SET => {
            let h = byte(r)?;
            let n = match h >> 4 {
                15 => varint(r)?,
                n => u64::from(n),
            };
            let elem = h & 0x0f;
            for _ in 0..n {
                // a boolean element is one byte in a list
                if elem == ty::TRUE || elem == ty::FALSE {
                    byte(r)?;
                } else {
                    skip(r, elem, depth + 1)?;
                }
            }
            Ok(())
        }
        ty::MAP => {
            let n = varint(r)?;
            if n > 0 {
                let kv = byte(r)?;
                for _ in 0..n {
                    skip(r, kv >> 4, depth + 1)?;
                    skip(r, kv & 0x0f, depth + 1)?;
                }
            }
            Ok(())
        }
        ty::STRUCT => read_struct(r, depth + 1, |r, _, t| skip(r, t, depth + 1)),
        other => Err(PageError::Damaged(format!("unknown Thrift type {other}"))),
    }
}

/// Read a structure's fields up to its stop byte, handing each field's id
/// and type to `field`, which reads or skips the value.
fn read_struct<R: Read>(
    r: &mut R,
    depth: usize,
    mut field: impl FnMut(&mut R, i64, u8) -> std::result::Result<(), PageError>,
) -> std::result::Result<(), PageError> {
    if depth > MAX_DEPTH {
        return Err(PageError::Damaged("a page header nested too deep".into()));
    }
    let mut id: i64 = 0;
    loop {
        let h = byte(r)?;
        let t = h & 0x0f;
        if t == ty::STOP {
            return Ok(());
        }
        id = match h >> 4 {
            0 => int(r)?,
            delta => id + i64::from(delta),
        };
        field(r, id, t)?;
    }
}

/// An integer field's value; any other type is damage.
fn int_field<R: Read>(r: &mut R, t: u8) -> std::result::Result<Option<i64>, PageError> {
    match t {
        ty::I16 | ty::I32 | ty::I64 => int(r).map(Some),
        other => Err(PageError::Damaged(format!(
            "an integer field of Thrift type {other}"
        ))),
    }
}

/// Read a PageHeader (parquet.thrift): 1 type, 2 uncompressed_page_size,
/// 3 compressed_page_size, 5 data_page_header (1 num_values),
/// 7 dictionary_page_header (1 num_values), 8 data_page_header_v2
/// (1 num_values, 2 num_nulls, 3 num_rows, 5 and 6 level byte lengths).
fn read_page_header<R: Read>(r: &mut R) -> std::result::Result<PageHeader, PageError> {
    let mut h = PageHeader::default();
    read_struct(r, 0, |r, id, t| {
        match (id, t) {
            (1, _) => h.page_type = int_field(r, t)?,
            (2, _) => h.uncompressed_size = int_field(r, t)?,
            (3, _) => h.compressed_size = int_field(r, t)?,
            (5 | 7, ty::STRUCT) => read_struct(r, 1, |r, id, t| {
                match id {
                    1 => h.num_values = int_field(r, t)?,
                    _ => skip(r, t, 2)?,
                }
                Ok(())
            })?,
            (8, ty::STRUCT) => read_struct(r, 1, |r, id, t| {
                match id {
                    1 => h.num_values = int_field(r, t)?,
                    2 => h.num_nulls = int_field(r, t)?,
                    3 => h.num_rows = int_field(r, t)?,
                    5 => h.level_bytes[0] = int_field(r, t)?,
                    6 => h.level_bytes[1] = int_field(r, t)?,
                    _ => skip(r, t, 2)?,
                }
                Ok(())
            })?,
            _ => skip(r, t, 1)?,
        }
        Ok(())
    })?;
    Ok(h)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A compact-protocol PageHeader for a v1 data page, built by hand from
    /// the encoding rules (field header = delta << 4 | type; integers
    /// zigzag varints).
    fn data_page(num_values: i64, raw: i64, packed: i64) -> Vec<u8> {
        let zz = |v: i64| -> Vec<u8> {
            let mut u = ((v << 1) ^ (v >> 63)) as u64;
            let mut out = Vec::new();
            loop {
                let b = (u & 0x7f) as u8;
                u >>= 7;
                if u == 0 {
                    out.push(b);
                    return out;
                }
                out.push(b | 0x80);
            }
        };
        let mut b = vec![0x15];
        b.extend(zz(0));
        b.push(0x15);
        b.extend(zz(raw));
        b.push(0x15);
        b.extend(zz(packed));
        // field 5 (delta 2 from 3): a struct
        b.push(0x2c);
        b.push(0x15);
        b.extend(zz(num_values));
        // encoding, then statistics with one binary (max) and a stop
        b.push(0x15);
        b.extend(zz(0));
        b.push(0x3c);
        b.push(0x18);
        b.push(2);
        b.extend(b"ab");
        b.push(0);
        b.push(0);
        b.push(0);
        b
    }

    #[test]
    fn reads_a_page_header_and_its_negative_count() {
        let h = read_page_header(&mut &data_page(-3, 100, 80)[..]).expect("a header");
        assert_eq!(h.page_type, Some(0));
        assert_eq!(h.uncompressed_size, Some(100));
        assert_eq!(h.compressed_size, Some(80));
        assert_eq!(h.num_values, Some(-3));
    }

    #[test]
    fn walks_pages_and_refuses_negative_or_short_counts() {
        let mut chunk = data_page(5, 4, 4);
        chunk.extend([0u8; 4]);
        let len = chunk.len() as u64;
        let walk =
            |bytes: &[u8], values| check_pages(&mut std::io::Cursor::new(bytes), 0, len, values);
        assert!(walk(&chunk, 5).is_ok());
        let msg = |r: std::result::Result<(), PageError>| match r {
            Err(PageError::Damaged(m)) => m,
            _ => String::from("not refused"),
        };
        assert!(
            msg(walk(&chunk, 7)).contains("hold 5 values"),
            "{}",
            msg(walk(&chunk, 7))
        );
        let mut neg = data_page(-1, 4, 4);
        neg.extend([0u8; 4]);
        let m = msg(check_pages(
            &mut std::io::Cursor::new(&neg),
            0,
            neg.len() as u64,
            5,
        ));
        assert!(m.contains("a count of -1"), "{m}");
        // a page that claims more bytes than its chunk holds
        let mut long = data_page(5, 4, 400);
        long.extend([0u8; 4]);
        let m = msg(check_pages(
            &mut std::io::Cursor::new(&long),
            0,
            long.len() as u64,
            5,
        ));
        assert!(m.contains("past its column chunk"), "{m}");
    }
}
