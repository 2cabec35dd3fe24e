//! Cells of an output table (an estimate file, a screening result): text,
//! numbers written to a number of significant digits, counts, flags; the
//! same cells become a CSV line or a spreadsheet row.

use crate::data::csv_field;
use crate::fixedmath::FixedMath;

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
    use std::fmt::Write;
    let mut s = String::with_capacity(16 * cells.len());
    for (i, c) in cells.iter().enumerate() {
        if i > 0 {
            s.push(',');
        }
        match c {
            Cell::Num(v) => push_sig(&mut s, *v, digits),
            Cell::Int(k) => {
                let _ = write!(s, "{k}");
            }
            Cell::Empty => {}
            _ => s.push_str(&c.csv(digits)),
        }
    }
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
    let mut s = String::with_capacity(24);
    push_sig(&mut s, v, digits);
    s
}

/// A small text buffer on the stack, for one number's formatting.
struct Stack {
    buf: [u8; 64],
    len: usize,
}

impl std::fmt::Write for Stack {
    fn write_str(&mut self, s: &str) -> std::fmt::Result {
        let end = self.len + s.len();
        if end > self.buf.len() {
            return Err(std::fmt::Error);
        }
        self.buf[self.len..end].copy_from_slice(s.as_bytes());
        self.len = end;
        Ok(())
    }
}

/// [`sig`] appended to `out`, without allocating: the number is formatted
/// once in scientific notation (`{:.*e}`, correctly rounded to `digits`
/// significant digits), and its digits are placed around the decimal
/// point. Up to 15 digits that is the text of rounding, parsing and
/// formatting again with the decimals the exponent asks for (a double
/// holds 15 significant decimal digits exactly: IEEE 754-2008, §5.12.2);
/// more digits take that longer way.
pub fn push_sig(out: &mut String, v: f64, digits: usize) {
    use std::fmt::Write;
    let digits = digits.max(1);
    if !v.is_finite() || v == 0.0 || digits > 15 {
        out.push_str(&sig_by_parsing(v, digits));
        return;
    }
    let mut st = Stack {
        buf: [0; 64],
        len: 0,
    };
    if write!(st, "{v:.*e}", digits - 1).is_err() {
        out.push_str(&sig_by_parsing(v, digits));
        return;
    }
    let text = std::str::from_utf8(&st.buf[..st.len]).unwrap_or("");
    let Some((mantissa, exp)) = text.split_once('e') else {
        out.push_str(&sig_by_parsing(v, digits));
        return;
    };
    let Ok(e) = exp.parse::<i32>() else {
        out.push_str(&sig_by_parsing(v, digits));
        return;
    };
    if !(-5..15).contains(&e) {
        out.push_str(text);
        return;
    }
    let (negative, mantissa) = match mantissa.strip_prefix('-') {
        Some(m) => (true, m),
        None => (false, mantissa),
    };
    let mut d = [0u8; 16];
    let mut n = 0;
    for b in mantissa.bytes().filter(u8::is_ascii_digit) {
        d[n] = b;
        n += 1;
    }
    // trailing zeros of the digits are dropped wherever they fall after
    // the point; before it they are the integer's own
    let int_len = usize::try_from(e + 1).unwrap_or(0);
    let mut last = n;
    while last > int_len.max(1) && d[last - 1] == b'0' {
        last -= 1;
    }
    if negative {
        out.push('-');
    }
    if e >= 0 {
        out.extend(d[..n.min(int_len)].iter().map(|&b| b as char));
        out.extend(std::iter::repeat_n('0', int_len.saturating_sub(n)));
        if last > int_len {
            out.push('.');
            out.extend(d[int_len..last].iter().map(|&b| b as char));
        }
    } else {
        out.push_str("0.");
        for _ in 0..(-e - 1) {
            out.push('0');
        }
        out.extend(d[..last].iter().map(|&b| b as char));
    }
}

/// [`sig`] by rounding, parsing and formatting again.
fn sig_by_parsing(v: f64, digits: usize) -> String {
    if !v.is_finite() {
        return v.to_string();
    }
    if v == 0.0 {
        return "0".into();
    }
    let digits = digits.max(1);
    // the exponent after rounding to `digits` (9.9999996 becomes 10.0000)
    let rounded: f64 = format!("{v:.*e}", digits - 1).parse().unwrap_or(v);
    let e = rounded.abs().log10_fixed().floor() as i32;
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

    /// The placed digits give the text of rounding, parsing and
    /// formatting again, over magnitudes from 1e-8 to 1e17, both signs,
    /// 1 to 15 digits, and values that round up to the next power of ten.
    #[test]
    fn placed_digits_match_parsing_and_formatting() {
        use rand::{Rng, SeedableRng};
        let mut rng = rand_xoshiro::Xoshiro256PlusPlus::seed_from_u64(9);
        let mut values: Vec<f64> = (0..20_000)
            .map(|_| {
                let m: f64 = rng.random_range(1.0..10.0);
                let e: i32 = rng.random_range(-8..18);
                let s = if rng.random_bool(0.5) { -1.0 } else { 1.0 };
                s * m * 10f64.powi(e)
            })
            .collect();
        values.extend([
            9.9999996,
            99999.95,
            0.000099999996,
            1e-5,
            9.99999e-6,
            1e15,
            999999999999999.9,
            70.9633,
            0.5,
            1.0,
            100.0,
            123456.0,
            -0.00001234567,
        ]);
        for v in values {
            for digits in 1..=15 {
                assert_eq!(
                    sig(v, digits),
                    sig_by_parsing(v, digits),
                    "{v:e} to {digits} digits"
                );
            }
        }
    }

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
