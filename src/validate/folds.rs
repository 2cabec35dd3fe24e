//! Which rows are held out in which fold of a K-fold cross-validation.
//!
//! # Method
//!
//! Rows are gathered into groups (every row its own group unless a group
//! column says otherwise: a heat tested at several temperatures is one
//! group). The groups are shuffled with the repeat's seed, put in order of
//! size (largest first; the shuffle breaks ties), and each is given to the
//! fold that holds the fewest rows so far (the lowest-numbered on a tie).
//! With one row per group this deals the shuffled rows round the folds, so
//! fold sizes differ by at most one; with groups it is the greedy
//! balancing of grouped K-fold (as scikit-learn's `GroupKFold`, shuffled).
//! A group is never split: its rows are held out together (Roberts et al.
//! 2017, *Ecography* 40:913, on cross-validation of structured data).

use rand::seq::SliceRandom;
use rand::SeedableRng;
use rand_xoshiro::Xoshiro256PlusPlus;

use crate::error::{Error, Result};

/// Group index (0-based, dense) of every row from its group key; rows with
/// no key (`None`) are each a group of their own.
pub fn group_indices(keys: &[Option<String>]) -> Vec<usize> {
    let mut seen: std::collections::HashMap<&str, usize> = std::collections::HashMap::new();
    let mut next = 0usize;
    keys.iter()
        .map(|k| {
            let id = match k {
                Some(key) => *seen.entry(key.as_str()).or_insert_with(|| {
                    next += 1;
                    next - 1
                }),
                None => {
                    next += 1;
                    next - 1
                }
            };
            id
        })
        .collect()
}

/// The seed of repeat `repeat` derived from the master seed (SplitMix64's
/// finaliser, Steele et al. 2014, so neighbouring repeats get unrelated
/// streams).
pub fn repeat_seed(master: u64, repeat: usize) -> u64 {
    let mut z = master.wrapping_add(0x9E37_79B9_7F4A_7C15u64.wrapping_mul(repeat as u64 + 1));
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

/// The fold (0..`n_folds`) of every row, given each row's group index
/// (from [`group_indices`]).
///
/// # Errors
/// [`Error::InvalidParameter`] when `n_folds` is below 2 or above the
/// number of groups.
pub fn assign_folds(groups: &[usize], n_folds: usize, seed: u64) -> Result<Vec<usize>> {
    let n_groups = groups.iter().max().map_or(0, |g| g + 1);
    if n_folds < 2 || n_folds > n_groups {
        return Err(Error::InvalidParameter {
            name: "folds",
            value: n_folds.to_string(),
            expected: format!(
                "at least 2 and at most the number of groups of rows ({n_groups}): every fold must hold out at least one group"
            ),
        });
    }
    let mut size = vec![0usize; n_groups];
    for &g in groups {
        size[g] += 1;
    }
    let mut order: Vec<usize> = (0..n_groups).collect();
    order.shuffle(&mut Xoshiro256PlusPlus::seed_from_u64(seed));
    // stable: the shuffle decides between groups of equal size
    order.sort_by(|a, b| size[*b].cmp(&size[*a]));
    let mut fold_of_group = vec![0usize; n_groups];
    let mut fold_rows = vec![0usize; n_folds];
    for g in order {
        let (k, _) = fold_rows
            .iter()
            .enumerate()
            .min_by_key(|(k, n)| (**n, *k))
            .unwrap_or((0, &0)); // n_folds ≥ 2: never empty
        fold_of_group[g] = k;
        fold_rows[k] += size[g];
    }
    Ok(groups.iter().map(|g| fold_of_group[*g]).collect())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_row_out_of_fold_exactly_once_per_repeat() {
        // The definition of K-fold cross-validation (Stone 1974, J. R.
        // Stat. Soc. B 36:111): the folds partition the rows.
        let groups: Vec<usize> = (0..23).collect();
        for repeat in 0..3 {
            let folds = assign_folds(&groups, 5, repeat_seed(7, repeat)).expect("folds");
            assert_eq!(folds.len(), 23);
            let mut count = [0usize; 5];
            for f in &folds {
                count[*f] += 1;
            }
            // each row in exactly one fold; sizes 5,5,5,4,4 (23 = 3·5 + 2·4)
            assert_eq!(count.iter().sum::<usize>(), 23);
            assert!(count.iter().all(|c| *c == 4 || *c == 5), "{count:?}");
        }
        // different repeats give different partitions
        let a = assign_folds(&groups, 5, repeat_seed(7, 0)).expect("folds");
        let b = assign_folds(&groups, 5, repeat_seed(7, 1)).expect("folds");
        assert_ne!(a, b);
    }

    #[test]
    fn groups_stay_whole() {
        // heats tested at several temperatures: 12 heats of 1 to 4 rows
        let keys: Vec<Option<String>> = (0..30)
            .map(|i| Some(format!("heat{}", (i * 7) % 12)))
            .collect();
        let groups = group_indices(&keys);
        let folds = assign_folds(&groups, 4, 3).expect("folds");
        for (i, gi) in groups.iter().enumerate() {
            for (j, gj) in groups.iter().enumerate() {
                if gi == gj {
                    assert_eq!(folds[i], folds[j], "rows {i} and {j} share a heat");
                }
            }
        }
        assert!((0..4).all(|k| folds.contains(&k)), "every fold holds rows");
    }

    #[test]
    fn rows_without_a_key_are_their_own_group() {
        let keys = vec![Some("a".to_string()), None, Some("a".to_string()), None];
        assert_eq!(group_indices(&keys), vec![0, 1, 0, 2]);
    }

    #[test]
    fn too_many_folds_is_an_error() {
        assert!(assign_folds(&[0, 0, 1, 1], 3, 0).is_err());
        assert!(assign_folds(&[0, 1, 2], 1, 0).is_err());
    }
}
