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

pub use mettle::data::csv_field;

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

pub use mettle::data::cells::{sig, DEFAULT_DIGITS};

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

    #[test]
    fn prose_wraps_to_the_width() {
        let long = "word ".repeat(60);
        let w = wrap("  row 1: ", long.trim(), 4);
        assert!(w.lines().all(|l| l.chars().count() <= TEXT_WIDTH), "{w}");
        assert!(w.lines().skip(1).all(|l| l.starts_with("    w")), "{w}");
        assert_eq!(w.matches("word").count(), 60);
    }
}
