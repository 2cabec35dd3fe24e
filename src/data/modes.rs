//! The modes of a column: groups of values at distinct levels (two
//! grades, a family of heats at another Mn level), so that a value is
//! judged against the values of its own group and a group is not taken
//! for a set of bad values.
//!
//! # Method
//!
//! A Gaussian kernel density estimate of the column, bandwidth by
//! Silverman's rule h = 0.9·min(sd, IQR/1.34)·n^(−1/5) (Silverman 1986,
//! *Density Estimation for Statistics and Data Analysis*, eq. 3.31), is
//! evaluated on [`MODE_GRID`] points over the column's range. The column
//! is cut at the lowest point of the density between two neighbouring
//! peaks when that valley is below [`MODE_VALLEY_SHARE`] of the lower peak
//! (a clear dip, the idea of Silverman 1981, *J. R. Stat. Soc. B* 43:97,
//! of reading modes off a kernel estimate). A group with fewer than
//! [`mode_min_rows`] values is no mode: it is merged into its nearer
//! neighbour, so a lone typing slip is still judged against the group it
//! strayed from.

use crate::fixedmath::FixedMath;
use crate::prec::{MODE_GRID, MODE_MIN_ROWS, MODE_MIN_SHARE, MODE_VALLEY_SHARE};

/// One mode: its range of values and the number of values in it.
#[derive(Clone, Copy, Debug, PartialEq, serde::Serialize)]
pub struct Mode {
    /// Smallest value.
    pub lo: f64,
    /// Largest value.
    pub hi: f64,
    /// Values in it.
    pub n: usize,
}

/// Fewest values a group needs to count as a mode among `n`.
pub fn mode_min_rows(n: usize) -> usize {
    MODE_MIN_ROWS.max((MODE_MIN_SHARE * n as f64).ceil() as usize)
}

fn quantile(sorted: &[f64], p: f64) -> f64 {
    let pos = p * (sorted.len() - 1) as f64;
    let (lo, frac) = (pos.floor() as usize, pos - pos.floor());
    sorted[lo] + frac * (sorted[(lo + 1).min(sorted.len() - 1)] - sorted[lo])
}

/// Cut points (values) between the modes of `sorted` (ascending, finite):
/// empty for one mode.
fn cuts(sorted: &[f64]) -> Vec<f64> {
    let n = sorted.len();
    let mean = sorted.iter().sum::<f64>() / n as f64;
    let sd = (sorted.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1) as f64).sqrt();
    let iqr = quantile(sorted, 0.75) - quantile(sorted, 0.25);
    let spread = if iqr > 0.0 { sd.min(iqr / 1.34) } else { sd };
    let h = 0.9 * spread * (n as f64).powf_fixed(-0.2);
    let (lo, hi) = (sorted[0], sorted[n - 1]);
    if h.is_nan() || h <= 0.0 || hi <= lo {
        return Vec::new();
    }
    let step = (hi - lo) / (MODE_GRID - 1) as f64;
    let grid: Vec<f64> = (0..MODE_GRID).map(|k| lo + step * k as f64).collect();
    // only values within 5 h of a grid point matter (e^(−12.5) < 4e−6)
    let density: Vec<f64> = grid
        .iter()
        .map(|g| {
            let a = sorted.partition_point(|x| *x < g - 5.0 * h);
            let b = sorted.partition_point(|x| *x <= g + 5.0 * h);
            sorted[a..b]
                .iter()
                .map(|x| (-0.5 * ((g - x) / h).powi(2)).exp_fixed())
                .sum()
        })
        .collect();
    let peaks: Vec<usize> = (0..MODE_GRID)
        .filter(|&k| {
            (k == 0 || density[k] > density[k - 1])
                && (k + 1 == MODE_GRID || density[k] >= density[k + 1])
        })
        .collect();
    let mut out = Vec::new();
    for w in peaks.windows(2) {
        let (a, b) = (w[0], w[1]);
        let (v, dip) = (a..=b)
            .map(|k| (k, density[k]))
            .min_by(|p, q| p.1.total_cmp(&q.1))
            .unwrap_or((a, density[a])); // a..=b is never empty
        if dip < MODE_VALLEY_SHARE * density[a].min(density[b]) {
            out.push(grid[v]);
        }
    }
    out
}

/// The mode of every value (index into the returned modes, ascending) of
/// `values` (finite), after small groups are merged into their nearer
/// neighbour.
pub fn modes(values: &[f64]) -> (Vec<Mode>, Vec<usize>) {
    let mut sorted: Vec<f64> = values.to_vec();
    sorted.sort_by(f64::total_cmp);
    if sorted.len() < 2 * MODE_MIN_ROWS {
        let whole = Mode {
            lo: sorted.first().copied().unwrap_or(f64::NAN),
            hi: sorted.last().copied().unwrap_or(f64::NAN),
            n: sorted.len(),
        };
        return (vec![whole], vec![0; values.len()]);
    }
    // groups of the sorted values between cuts
    let mut bounds: Vec<f64> = cuts(&sorted);
    let min_rows = mode_min_rows(sorted.len());
    while !bounds.is_empty() {
        // segment g holds sorted[start[g]..start[g + 1]]
        let mut start: Vec<usize> = vec![0];
        start.extend(bounds.iter().map(|c| sorted.partition_point(|x| *x <= *c)));
        start.push(sorted.len());
        let count = |g: usize| start[g + 1] - start[g];
        let Some(small) = (0..=bounds.len())
            .filter(|&g| count(g) < min_rows)
            .min_by_key(|&g| (count(g), g))
        else {
            break;
        };
        // merge it into the neighbour across the smaller gap: drop the cut
        // on that side (an empty segment joins its upper neighbour)
        let below = (small > 0 && count(small) > 0)
            .then(|| sorted[start[small]] - sorted[start[small] - 1]);
        let above = (small < bounds.len() && count(small) > 0)
            .then(|| sorted[start[small + 1]] - sorted[start[small + 1] - 1]);
        let drop = match (below, above) {
            (Some(b), Some(a)) if b <= a => small - 1,
            (Some(_), None) => small - 1,
            _ if small < bounds.len() => small,
            _ => small - 1,
        };
        bounds.remove(drop);
    }
    let which = |x: f64| bounds.partition_point(|b| *b < x);
    let mut found = vec![
        Mode {
            lo: f64::INFINITY,
            hi: f64::NEG_INFINITY,
            n: 0
        };
        bounds.len() + 1
    ];
    let idx: Vec<usize> = values
        .iter()
        .map(|&x| {
            let g = which(x);
            found[g].lo = found[g].lo.min(x);
            found[g].hi = found[g].hi.max(x);
            found[g].n += 1;
            g
        })
        .collect();
    (found, idx)
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;
    use rand_distr::{Distribution, Normal};
    use rand_xoshiro::Xoshiro256PlusPlus;

    fn two_grades() -> Vec<f64> {
        // two grades: Mn 0.8 ± 0.05 wt% (120 heats) and 1.5 ± 0.05 (57)
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(4);
        let a = Normal::new(0.8, 0.05).expect("sd");
        let b = Normal::new(1.5, 0.05).expect("sd");
        let mut v: Vec<f64> = (0..120).map(|_| a.sample(&mut rng)).collect();
        v.extend((0..57).map(|_| b.sample(&mut rng)));
        v
    }

    #[test]
    fn two_grades_are_two_modes() {
        let v = two_grades();
        let (m, idx) = modes(&v);
        assert_eq!(m.len(), 2, "{m:?}");
        assert_eq!((m[0].n, m[1].n), (120, 57));
        assert!(idx[..120].iter().all(|g| *g == 0) && idx[120..].iter().all(|g| *g == 1));
    }

    #[test]
    fn a_lone_slip_joins_the_nearer_mode() {
        let mut v = two_grades();
        v.push(8.0); // 0.80 typed as 8.0
        let (m, idx) = modes(&v);
        assert_eq!(m.len(), 2, "{m:?}");
        assert_eq!(idx[v.len() - 1], 1);
    }

    #[test]
    fn one_normal_column_is_one_mode() {
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(9);
        let d = Normal::new(10.0, 2.0).expect("sd");
        let v: Vec<f64> = (0..500).map(|_| d.sample(&mut rng)).collect();
        assert_eq!(modes(&v).0.len(), 1);
    }
}
