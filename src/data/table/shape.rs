//! The shape of a CSV file, checked before its cells are parsed: every row
//! has as many cells as the header, quotes open and close where RFC 4180
//! puts them, no blank line sits between rows, and the header's names are
//! unique and not empty. The CSV reader underneath fills a short row with
//! empty cells and renames a repeated column, which would let a damaged
//! file through as missing values; this pass refuses it instead, naming the
//! row and line.

use std::io::{BufRead, BufReader};
use std::path::Path;

use crate::error::{Error, Result};

/// What the scan found in a well-formed file.
#[derive(Debug, PartialEq, Eq)]
pub(super) struct Shape {
    /// Data rows (the header and trailing blank lines excluded).
    pub n_rows: usize,
}

/// Delimiters other programs write, with the word a message uses.
const OTHER_DELIMITERS: [(char, &str); 3] =
    [(';', "';' (semicolon)"), ('\t', "tab"), ('|', "'|' (bar)")];

struct Scan {
    /// Line of the byte being read, 1-based.
    line: usize,
    /// Line on which the current record began.
    record_line: usize,
    /// Records seen so far, header included (blank lines not counted).
    records: usize,
    /// Commas in the current record outside quotes.
    commas: usize,
    /// The current record holds something other than `\r`.
    content: bool,
    /// Inside a quoted cell.
    in_quotes: bool,
    /// Line on which the open quote was opened.
    quote_line: usize,
    /// Just after the closing quote of a cell.
    after_quote: bool,
    /// Nothing but spaces read in the current cell yet.
    cell_start: bool,
    /// A blank line was seen since the last record, on this line.
    blank_line: Option<usize>,
    /// Header cells as bytes (while the header is read).
    header: Vec<Vec<u8>>,
    /// The last byte of the current record read outside quotes.
    prev: u8,
    /// The last comma of the current record followed a digit.
    comma_after_digit: bool,
    /// Commas of the current record between two digits ("0,12"): numbers
    /// written with a decimal comma, each split into two cells.
    split_numbers: usize,
    n_columns: usize,
}

/// Check the shape of the CSV file at `path`.
///
/// # Errors
/// [`Error::Io`] when unreadable; [`Error::Read`] naming the row and line
/// of the first row of another length, misplaced quote or blank line, or
/// the header's empty or repeated name.
pub(super) fn check(path: &Path) -> Result<Shape> {
    let io = |source| Error::Io {
        path: path.display().to_string(),
        source,
    };
    let bad = |message: String| Error::Read {
        path: path.display().to_string(),
        message,
    };
    let file = std::fs::File::open(path).map_err(io)?;
    let mut reader = BufReader::with_capacity(1 << 16, file);
    let mut s = Scan::new();
    let mut first = true;
    loop {
        let buf = reader.fill_buf().map_err(io)?;
        if buf.is_empty() {
            break;
        }
        let n = buf.len();
        let chunk = if first { strip_bom(buf) } else { buf };
        first = false;
        for &b in chunk {
            s.byte(b).map_err(bad)?;
        }
        reader.consume(n);
    }
    s.finish().map_err(bad)
}

/// Like [`check`], for bytes already in memory; the message alone.
#[cfg(test)]
pub(super) fn check_bytes(bytes: &[u8]) -> std::result::Result<Shape, String> {
    let mut s = Scan::new();
    for &b in strip_bom(bytes) {
        s.byte(b)?;
    }
    s.finish()
}

/// The bytes after a UTF-8 byte-order mark, as spreadsheets write it.
fn strip_bom(bytes: &[u8]) -> &[u8] {
    bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes)
}

impl Scan {
    fn new() -> Scan {
        Scan {
            line: 1,
            record_line: 1,
            records: 0,
            commas: 0,
            content: false,
            in_quotes: false,
            quote_line: 0,
            after_quote: false,
            cell_start: true,
            blank_line: None,
            header: vec![Vec::new()],
            n_columns: 0,
            prev: b'\n',
            comma_after_digit: false,
            split_numbers: 0,
        }
    }

    /// The shape once every byte is read.
    fn finish(mut self) -> std::result::Result<Shape, String> {
        if self.in_quotes {
            return Err(format!(
                "line {}: a quote opened here is never closed",
                self.quote_line
            ));
        }
        if self.content || self.commas > 0 || self.after_quote {
            self.end_record()?;
        }
        if self.records == 0 {
            return Err("the file holds no header row".into());
        }
        Ok(Shape {
            n_rows: self.records - 1,
        })
    }

    fn in_header(&self) -> bool {
        self.records == 0
    }

    fn push_header(&mut self, b: u8) {
        if self.in_header() {
            if let Some(cell) = self.header.last_mut() {
                cell.push(b);
            }
        }
    }

    fn byte(&mut self, b: u8) -> std::result::Result<(), String> {
        if self.in_quotes {
            if b == b'"' {
                self.in_quotes = false;
                self.after_quote = true;
            } else {
                if b == b'\n' {
                    self.line += 1;
                }
                self.push_header(b);
            }
            return Ok(());
        }
        if self.after_quote {
            match b {
                b'"' => {
                    // a doubled quote inside a quoted cell
                    self.in_quotes = true;
                    self.after_quote = false;
                    self.push_header(b);
                }
                b',' | b'\n' | b'\r' => {
                    self.after_quote = false;
                    return self.byte(b);
                }
                b' ' => {}
                _ => {
                    return Err(format!(
                        "{}: text follows the closing quote of a cell (a quote inside a cell must be doubled, and the whole cell quoted)",
                        self.place()
                    ))
                }
            }
            return Ok(());
        }
        let prev = std::mem::replace(&mut self.prev, b);
        if b.is_ascii_digit() && prev == b',' && self.comma_after_digit {
            self.split_numbers += 1;
        }
        match b {
            b',' => {
                self.comma_after_digit = prev.is_ascii_digit();
                self.commas += 1;
                self.cell_start = true;
                if self.in_header() {
                    self.header.push(Vec::new());
                }
            }
            b'\n' => {
                if self.content || self.commas > 0 {
                    self.end_record()?;
                } else if self.records > 0 && self.blank_line.is_none() {
                    self.blank_line = Some(self.line);
                }
                self.reset_record();
                self.line += 1;
                self.record_line = self.line;
            }
            b'\r' => {}
            b'"' if self.cell_start => {
                self.in_quotes = true;
                self.quote_line = self.line;
                self.content = true;
            }
            b'"' => {
                return Err(format!(
                    "{}: a quote inside a cell that does not begin with one (quote the whole cell and double the quote inside)",
                    self.place()
                ))
            }
            b' ' => {
                self.content = true;
                self.push_header(b);
            }
            _ => {
                self.content = true;
                self.cell_start = false;
                self.push_header(b);
            }
        }
        Ok(())
    }

    /// `header row (line 1)` or `row R (line L)` for the current record.
    fn place(&self) -> String {
        if self.in_header() {
            format!("header row (line {})", self.record_line)
        } else {
            format!("row {} (line {})", self.records, self.record_line)
        }
    }

    fn reset_record(&mut self) {
        self.commas = 0;
        self.content = false;
        self.cell_start = true;
        self.after_quote = false;
        self.prev = b'\n';
        self.comma_after_digit = false;
        self.split_numbers = 0;
    }

    fn names(&self) -> Vec<String> {
        self.header
            .iter()
            .map(|c| String::from_utf8_lossy(c).trim().to_string())
            .collect()
    }

    fn end_record(&mut self) -> std::result::Result<(), String> {
        let cells = self.commas + 1;
        if self.in_header() {
            self.check_header()?;
            self.n_columns = cells;
        } else {
            if let Some(line) = self.blank_line {
                return Err(format!(
                    "line {line} is blank, between rows {} and {}; remove blank lines inside the table",
                    self.records - 1,
                    self.records
                ));
            }
            if cells != self.n_columns {
                let names = self.names();
                let detail = if cells > self.n_columns {
                    format!(
                        "cells beyond the last column '{}'",
                        names.last().map_or("", String::as_str)
                    )
                } else {
                    format!(
                        "no cell for column '{}'{}",
                        names[cells],
                        if cells + 1 < self.n_columns {
                            " and after"
                        } else {
                            ""
                        }
                    )
                };
                let hint = if cells > self.n_columns && self.split_numbers > 0 {
                    "; if numbers are written with a decimal comma (0,12), each such comma splits \
a number into two cells: save the file with a decimal point (comma-separated values, point \
as decimal separator)"
                } else {
                    ""
                };
                return Err(format!(
                    "{}: {cells} cells, but the header has {} ({detail}){hint}",
                    self.place(),
                    self.n_columns
                ));
            }
        }
        self.records += 1;
        self.reset_record();
        Ok(())
    }

    fn check_header(&self) -> std::result::Result<(), String> {
        let names = self.names();
        if names.len() == 1 {
            for (d, word) in OTHER_DELIMITERS {
                if names[0].contains(d) {
                    return Err(format!(
                        "the header row (line 1) is one column '{}': the file seems separated by {word}; mettle reads comma-separated files (save or export as CSV with commas)",
                        names[0].escape_debug()
                    ));
                }
            }
        }
        for (i, n) in names.iter().enumerate() {
            if n.is_empty() {
                return Err(format!(
                    "header row (line 1): column {} has an empty name",
                    i + 1
                ));
            }
            if let Some(j) = names[..i].iter().position(|m| m == n) {
                return Err(format!(
                    "header row (line 1): column name '{n}' appears twice (columns {} and {}); columns must be unique",
                    j + 1,
                    i + 1
                ));
            }
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rows_of_the_header_length_pass() {
        let s = check_bytes(b"\xEF\xBB\xBFa, b ,\"c,d\"\r\n1,2,\"x\"\"y\"\r\n3,4,5\r\n\r\n")
            .expect("well formed");
        assert_eq!(s.n_rows, 2);
    }

    #[test]
    fn a_quoted_newline_stays_in_its_cell() {
        let s = check_bytes(b"a,b\n\"one\ntwo\",2\n").expect("well formed");
        assert_eq!(s.n_rows, 1);
    }

    #[test]
    fn ragged_rows_name_their_row_and_line() {
        let e = check_bytes(b"a,b,c\n1,2,3\n1,2\n").expect_err("short");
        assert!(e.contains("row 2 (line 3)") && e.contains("'c'"), "{e}");
        let e = check_bytes(b"a,b,c\n1,2,3,4\n").expect_err("long");
        assert!(e.contains("row 1 (line 2)") && e.contains("4 cells"), "{e}");
        // a decimal comma (common practice in much of Europe, no source)
        let e = check_bytes(b"heat,c,mn\nFH-1,0,12,1,45\n").expect_err("split");
        assert!(e.contains("decimal comma"), "{e}");
        let e = check_bytes(b"heat,c,mn\nFH-1,a,b,c\n").expect_err("long");
        assert!(!e.contains("decimal comma"), "{e}");
    }

    #[test]
    fn misplaced_quotes_blank_lines_and_bad_headers_are_refused() {
        for (text, word) in [
            (&b"a,b\n1,2\"3\n"[..], "a quote inside"),
            (b"a,b\n\"1\"x,2\n", "follows the closing quote"),
            (b"a,b\n\"1,2\n", "never closed"),
            (b"a,b\n1,2\n\n3,4\n", "blank"),
            (b"a,a\n1,2\n", "twice"),
            (b"a,,b\n1,2,3\n", "empty name"),
            (b"a;b\n1;2\n", "semicolon"),
            (b"", "no header row"),
        ] {
            let e = check_bytes(text).expect_err("refused");
            assert!(e.contains(word), "{e}");
        }
    }
}
