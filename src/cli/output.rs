//! Where command output goes: a file (written atomically) or stdout.

use std::io::Write;
use std::path::Path;

use anyhow::Context;
use clap::ValueEnum;

/// Output formats of commands that print estimates.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum Format {
    /// Aligned columns for reading.
    Table,
    /// Comma-separated values with a header row.
    Csv,
    /// JSON.
    Json,
}

/// Write `text` to `out` atomically, or to stdout when `out` is None.
pub fn emit(text: &str, out: Option<&Path>) -> anyhow::Result<()> {
    match out {
        Some(path) => {
            mettle::data::write_atomic(path, text.as_bytes())
                .with_context(|| format!("writing {}", path.display()))?;
        }
        None => {
            let mut stdout = std::io::stdout().lock();
            stdout.write_all(text.as_bytes())?;
            stdout.flush()?;
        }
    }
    Ok(())
}

/// Render rows as aligned columns (numbers right-aligned, text left).
pub fn aligned(header: &[String], rows: &[Vec<String>]) -> String {
    let mut widths: Vec<usize> = header.iter().map(|h| h.chars().count()).collect();
    for r in rows {
        for (w, c) in widths.iter_mut().zip(r) {
            *w = (*w).max(c.chars().count());
        }
    }
    let last = header.len().saturating_sub(1);
    let line = |cells: &[String]| {
        let mut s = String::new();
        for (i, (c, w)) in cells.iter().zip(&widths).enumerate() {
            if i > 0 {
                s.push_str("  ");
            }
            let numeric = c.parse::<f64>().is_ok();
            if i == last && !numeric {
                s.push_str(c);
            } else if numeric {
                s.push_str(&format!("{c:>w$}"));
            } else {
                s.push_str(&format!("{c:<w$}"));
            }
        }
        s.trim_end().to_string()
    };
    let mut out = line(header);
    out.push('\n');
    for r in rows {
        out.push_str(&line(r));
        out.push('\n');
    }
    out
}

/// Quote a CSV field when it needs it (RFC 4180).
pub fn csv_field(s: &str) -> String {
    if s.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

/// A number for a table: 4 significant figures at least, no exponent for
/// ordinary magnitudes.
pub fn num(v: f64) -> String {
    if !v.is_finite() {
        return v.to_string();
    }
    let a = v.abs();
    if a != 0.0 && !(1e-3..1e7).contains(&a) {
        format!("{v:.4e}")
    } else if a >= 100.0 {
        format!("{v:.1}")
    } else if a >= 1.0 {
        format!("{v:.3}")
    } else {
        format!("{v:.4}")
    }
}

/// One cell of a CSV row.
#[derive(Clone, Debug, PartialEq)]
pub enum Cell {
    /// Text, quoted when it needs it.
    Text(String),
    /// A measured or estimated value, written to the output's significant digits.
    Num(f64),
    /// A count or row number.
    Int(usize),
    /// true / false.
    Bool(bool),
    /// An empty cell.
    Empty,
}

impl Cell {
    /// The cell as CSV text, numbers to `digits` significant digits.
    pub fn csv(&self, digits: usize) -> String {
        match self {
            Cell::Text(s) => csv_field(s),
            Cell::Num(v) => sig(*v, digits),
            Cell::Int(k) => k.to_string(),
            Cell::Bool(b) => b.to_string(),
            Cell::Empty => String::new(),
        }
    }
}

/// A CSV line (with its newline) from cells.
pub fn csv_line(cells: &[Cell], digits: usize) -> String {
    let mut s = cells
        .iter()
        .map(|c| c.csv(digits))
        .collect::<Vec<_>>()
        .join(",");
    s.push('\n');
    s
}

/// Significant digits of CSV numbers unless `--digits` says otherwise:
/// six, about the resolution of a tensile or hardness result and well
/// below any estimate's sd (common practice, no source).
pub const DEFAULT_DIGITS: usize = 6;

/// `v` to `digits` significant digits, trailing zeros dropped, plain
/// decimals for ordinary magnitudes (1e-5 up to 1e15) and an exponent
/// beyond.
pub fn sig(v: f64, digits: usize) -> String {
    if !v.is_finite() {
        return v.to_string();
    }
    if v == 0.0 {
        return "0".into();
    }
    let digits = digits.max(1);
    // the exponent after rounding to `digits` (9.9999996 becomes 10.0000)
    let rounded: f64 = format!("{v:.*e}", digits - 1).parse().unwrap_or(v);
    let e = rounded.abs().log10().floor() as i32;
    if !(-5..15).contains(&e) {
        return format!("{rounded:.*e}", digits - 1);
    }
    let decimals = usize::try_from((digits as i32 - 1 - e).max(0)).unwrap_or(0);
    let mut s = format!("{rounded:.decimals$}");
    if s.contains('.') {
        s = s.trim_end_matches('0').trim_end_matches('.').to_string();
    }
    if s == "-0" {
        s = "0".into();
    }
    s
}

/// Width that prose in terminal output is wrapped to.
pub const TEXT_WIDTH: usize = 96;

/// `text` wrapped at spaces to lines of at most [`TEXT_WIDTH`] characters
/// (a longer word stays whole), the first line starting with `first`, the
/// others indented to `indent` spaces; each line ends with a newline.
pub fn wrap(first: &str, text: &str, indent: usize) -> String {
    let mut out = String::new();
    let mut line = first.to_string();
    let mut fresh = true;
    for word in text.split(' ') {
        let len = line.chars().count();
        if !fresh && len + 1 + word.chars().count() > TEXT_WIDTH {
            out.push_str(line.trim_end());
            out.push('\n');
            line = " ".repeat(indent);
            fresh = true;
        }
        if !fresh {
            line.push(' ');
        }
        line.push_str(word);
        fresh = false;
    }
    out.push_str(line.trim_end());
    out.push('\n');
    out
}

/// Derivation warnings on stderr, one line per kind with the rows it
/// concerns (they are warnings: the values were still computed).
pub fn print_row_warnings(warnings: &[mettle::derive::RowWarning]) {
    const ROWS_SHOWN: usize = 10;
    for g in mettle::derive::group_warnings(warnings) {
        let mut rows: Vec<String> = g
            .rows
            .iter()
            .take(ROWS_SHOWN)
            .map(|r| (r + 1).to_string())
            .collect();
        if g.rows.len() > ROWS_SHOWN {
            rows.push(format!("... ({} rows in all)", g.rows.len()));
        }
        eprintln!("warning: {} — rows {}", g.message, rows.join(", "));
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Rounding to significant digits (common practice, no source).
    #[test]
    fn significant_digits() {
        assert_eq!(sig(551.234_567_89, 6), "551.235");
        assert_eq!(sig(0.000_123_456_78, 3), "0.000123");
        assert_eq!(sig(9.999_999_6, 6), "10");
        assert_eq!(sig(-12.6, 2), "-13");
        assert_eq!(sig(1.0e20, 3), "1.00e20");
        assert_eq!(sig(0.0, 6), "0");
        assert_eq!(sig(30.0, 6), "30");
    }

    #[test]
    fn prose_wraps_to_the_width() {
        let long = "word ".repeat(60);
        let w = wrap("  row 1: ", long.trim(), 4);
        assert!(w.lines().all(|l| l.chars().count() <= TEXT_WIDTH), "{w}");
        assert!(w.lines().skip(1).all(|l| l.starts_with("    w")), "{w}");
        assert_eq!(w.matches("word").count(), 60);
    }
}
