//! Axis ticks by the nice-numbers method.
//!
//! Linear axes: the step is the "nice" number (1, 2 or 5 times a power of
//! ten) nearest the range over the wanted count, and the ticks run from the
//! multiple of the step at or below the low end to the one at or above the
//! high end, so the ticks always cover the data (Heckbert, "Nice numbers
//! for graph labels", Graphics Gems I, 1990, the loose labelling). Each
//! label shows as many decimals as the step needs and no more, so two
//! ticks never print alike. Log axes: ticks at the powers of ten covering
//! the range (every other or every third power when there are many), with
//! 2 and 5 between them when the range spans fewer than two decades.

use crate::fixedmath::FixedMath;

/// Ticks of one axis.
#[derive(Clone, Debug, PartialEq)]
pub struct Ticks {
    /// Tick values, rising; the first at or below the data's low end, the
    /// last at or above its high end.
    pub values: Vec<f64>,
    /// One label per value, all different.
    pub labels: Vec<String>,
}

impl Ticks {
    /// The axis range the ticks span.
    pub fn span(&self) -> (f64, f64) {
        (self.values[0], self.values[self.values.len() - 1])
    }

    /// The label of the tick nearest `v`.
    pub fn label_at(&self, v: f64) -> String {
        let i = self
            .values
            .iter()
            .enumerate()
            .min_by(|a, b| (a.1 - v).abs().total_cmp(&(b.1 - v).abs()))
            .map_or(0, |p| p.0);
        self.labels.get(i).cloned().unwrap_or_default()
    }
}

/// Heckbert's nice number near `x` > 0: 1, 2, 5 or 10 times a power of
/// ten, rounded to the nearest (`round`) or taken at or above `x`.
fn nice_number(x: f64, round: bool) -> f64 {
    let e = x.log10_fixed().floor();
    let p = 10f64.powf_fixed(e);
    let f = x / p;
    let n = if round {
        if f < 1.5 {
            1.0
        } else if f < 3.0 {
            2.0
        } else if f < 7.0 {
            5.0
        } else {
            10.0
        }
    } else if f <= 1.0 {
        1.0
    } else if f <= 2.0 {
        2.0
    } else if f <= 5.0 {
        5.0
    } else {
        10.0
    };
    n * p
}

/// A label for `v` on an axis whose ticks are `step` apart: the decimals
/// the step needs; powers-of-ten form for very large or very small values.
pub fn label(v: f64, step: f64) -> String {
    let a = v.abs();
    if a == 0.0 {
        return "0".into();
    }
    let big = a >= 1e6 || step >= 1e5;
    let small = step < 1e-4 && a < 1e-3;
    if big || small {
        // mantissa digits: enough to tell ticks `step` apart
        let e = a.log10_fixed().floor();
        let digits = (e - step.log10_fixed().floor()).clamp(0.0, 12.0) as usize;
        return format!("{v:.digits$e}");
    }
    let decimals = (-step.log10_fixed().floor()).max(0.0) as usize;
    let s = format!("{v:.decimals$}");
    if s.starts_with('-') && s.trim_start_matches(['-', '0', '.']).is_empty() {
        "0".into()
    } else {
        s
    }
}

/// About `n` nice ticks covering `lo..hi` (swapped when reversed; a
/// degenerate or non-finite range is widened first).
pub fn linear(lo: f64, hi: f64, n: usize) -> Ticks {
    let (mut lo, mut hi) = if lo <= hi { (lo, hi) } else { (hi, lo) };
    if !(lo.is_finite() && hi.is_finite()) {
        (lo, hi) = (0.0, 1.0);
    }
    if hi - lo <= f64::EPSILON * lo.abs().max(hi.abs()).max(f64::MIN_POSITIVE) * 16.0 {
        let d = if lo == 0.0 { 1.0 } else { 0.1 * lo.abs() };
        (lo, hi) = (lo - d, hi + d);
    }
    let n = n.max(2);
    let step = nice_number((hi - lo) / (n - 1) as f64, true);
    // integer multiples of the step, so no rounding drift accumulates; a
    // quotient within rounding of a whole number counts as that number
    let snap = |r: f64, up: bool| {
        if (r - r.round()).abs() < 1e-9 {
            r.round() as i64
        } else if up {
            r.ceil() as i64
        } else {
            r.floor() as i64
        }
    };
    let (k0, k1) = (snap(lo / step, false), snap(hi / step, true));
    let values: Vec<f64> = (k0..=k1).map(|k| k as f64 * step).collect();
    let labels = values.iter().map(|&v| label(v, step)).collect();
    Ticks { values, labels }
}

/// Ticks of a log axis covering `lo..hi` (both above 0): powers of ten,
/// thinned to at most about `n`, with 2 and 5 between them on a range of
/// under two decades. `None` unless 0 < lo ≤ hi, both finite.
pub fn log(lo: f64, hi: f64, n: usize) -> Option<Ticks> {
    if !(lo > 0.0 && hi >= lo && hi.is_finite()) {
        return None;
    }
    let e0 = lo.log10_fixed().floor() as i32;
    let mut e1 = hi.log10_fixed().ceil() as i32;
    if e1 == e0 {
        e1 += 1;
    }
    let decades = (e1 - e0) as usize;
    let mut values = Vec::new();
    if decades <= 2 {
        for e in e0..=e1 {
            for m in [1.0, 2.0, 5.0] {
                let v = m * 10f64.powi(e);
                if e == e1 && m > 1.0 {
                    break;
                }
                values.push(v);
            }
        }
        // keep the covering ends only: drop ticks wholly outside the range
        while values.len() > 2 && values[1] <= lo {
            values.remove(0);
        }
        while values.len() > 2 && values[values.len() - 2] >= hi {
            values.pop();
        }
    } else {
        let every = decades.div_ceil(n.max(2)).max(1) as i32;
        let start = e0.div_euclid(every) * every;
        let mut e = start;
        loop {
            values.push(10f64.powi(e));
            if e >= e1 {
                break;
            }
            e += every;
        }
    }
    let labels = values
        .iter()
        .map(|&v| {
            if (1e-3..1e5).contains(&v) {
                let decimals = (-v.log10_fixed().floor()).max(0.0) as usize;
                format!("{v:.decimals$}")
            } else {
                format!("1e{}", v.log10_fixed().round() as i32)
            }
        })
        .collect();
    Some(Ticks { values, labels })
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::collections::HashSet;

    fn check(t: &Ticks, lo: f64, hi: f64) {
        let set: HashSet<&String> = t.labels.iter().collect();
        assert_eq!(set.len(), t.labels.len(), "repeated labels {:?}", t.labels);
        // covered, to within rounding of the last digit
        let tol = 1e-9 * (t.values[1] - t.values[0]);
        assert!(
            t.values[0] <= lo + tol && t.values[t.values.len() - 1] >= hi - tol,
            "{t:?} for {lo}..{hi}"
        );
        assert!(t.values.windows(2).all(|w| w[0] < w[1]), "{t:?}");
        assert!((3..=12).contains(&t.values.len()), "{t:?}");
    }

    /// The awkward ranges the issue names (4.29–4.31 once printed 4.3
    /// twice; a noise axis 0–0.0069 stopped short of its line; −80–20 °C
    /// is the usual Charpy range). The nice steps expected are those of
    /// the nice number nearest a fifth of the range, worked by hand: range
    /// 0.02 → step 0.005, 0.0069 → 0.001, 100 → 20.
    #[test]
    fn awkward_linear_ranges() {
        for (lo, hi, step) in [
            (4.29, 4.31, 0.005),
            (0.0, 0.0069, 0.001),
            (-80.0, 20.0, 20.0),
            (12.5, 1234.0, 200.0),
            (-1e-7, 3e-7, 1e-7),
            (7e6, 9.1e6, 5e5),
        ] {
            let t = linear(lo, hi, 6);
            check(&t, lo, hi);
            let got = t.values[1] - t.values[0];
            assert!((got - step).abs() < 1e-9 * step, "{lo}..{hi}: step {got}");
        }
        let t = linear(4.29, 4.31, 6);
        assert_eq!(t.labels[0], "4.290");
        assert_eq!(
            linear(-80.0, 20.0, 6).labels,
            ["-80", "-60", "-40", "-20", "0", "20"]
        );
        let t = linear(0.0, 0.0069, 6);
        assert_eq!(t.labels.first().map(String::as_str), Some("0"));
        assert_eq!(t.labels.last().map(String::as_str), Some("0.007"));
    }

    #[test]
    fn degenerate_ranges_still_give_ticks() {
        check(&linear(5.0, 5.0, 6), 5.0, 5.0);
        check(&linear(0.0, 0.0, 6), 0.0, 0.0);
        check(&linear(3.0, -3.0, 6), -3.0, 3.0);
    }

    #[test]
    fn log_ranges() {
        let t = log(1e-4, 1e4, 10).expect("ticks");
        check(&t, 1e-4, 1e4);
        assert_eq!(
            t.labels,
            ["1e-4", "0.001", "0.01", "0.1", "1", "10", "100", "1000", "10000"]
        );
        let t = log(3.0, 70.0, 8).expect("ticks");
        check(&t, 3.0, 70.0);
        assert_eq!(t.labels, ["2", "5", "10", "20", "50", "100"]);
        let t = log(1e-12, 1e12, 8).expect("ticks");
        check(&t, 1e-12, 1e12);
        assert!(log(0.0, 1.0, 5).is_none());
    }
}
