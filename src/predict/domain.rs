//! Is a query row inside what the training data cover?
//!
//! The per-input range check: a value outside the training range of its
//! input puts the row out of domain, with a note naming the input, the
//! range and how far outside the value is (in the input's units and as a
//! share of the range).

use ndarray::ArrayView1;

use crate::model::Model;

/// The domain verdict for one row.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct DomainReport {
    /// False when any check failed.
    pub in_domain: bool,
    /// One note per failed check, in plain words.
    pub notes: Vec<String>,
}

/// Check each input of `raw` (the row's raw values in model input order)
/// against its training range.
pub fn range_check(model: &Model, raw: ArrayView1<f64>) -> DomainReport {
    let mut notes = Vec::new();
    for (inp, &v) in model.inputs.iter().zip(raw.iter()) {
        let range = inp.max - inp.min;
        let (side, by) = if v < inp.min {
            ("below", inp.min - v)
        } else if v > inp.max {
            ("above", v - inp.max)
        } else {
            continue;
        };
        notes.push(format!(
            "{} = {} is {side} the training range {} to {} by {} ({:.0} % of the range)",
            inp.name,
            fmt_num(v),
            fmt_num(inp.min),
            fmt_num(inp.max),
            fmt_num(by),
            100.0 * by / range
        ));
    }
    DomainReport {
        in_domain: notes.is_empty(),
        notes,
    }
}

/// A number with up to 4 significant decimals, without trailing zeros.
fn fmt_num(v: f64) -> String {
    let s = if v.abs() >= 1000.0 || v.fract() == 0.0 {
        format!("{v:.0}")
    } else {
        let digits = (4 - v.abs().log10().ceil() as i32).clamp(1, 8) as usize;
        format!("{v:.digits$}")
    };
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

#[cfg(test)]
mod tests {
    use super::fmt_num;

    #[test]
    fn numbers_are_short_and_exact_enough() {
        assert_eq!(fmt_num(0.12), "0.12");
        assert_eq!(fmt_num(28.0), "28");
        assert_eq!(fmt_num(1.23456), "1.235");
        assert_eq!(fmt_num(-40.0), "-40");
        assert_eq!(fmt_num(0.0005), "0.0005");
    }
}
