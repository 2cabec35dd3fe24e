//! Cells of an output table (an estimate file, a screening result): text,
//! numbers written to a number of significant digits, counts, flags; the
//! same cells become a CSV line or a spreadsheet row.

use crate::data::csv_field;

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
}
