//! "Did you mean": the name a user most likely meant when a column name
//! is not found.
//!
//! A name that differs only in letter case is the first suggestion; then
//! the closest name by optimal-string-alignment distance (the
//! Damerau–Levenshtein distance with each substring edited once:
//! insertions, deletions, substitutions and swaps of neighbours count one;
//! Damerau 1964, Comm. ACM 7:171), computed by `strsim`, accepted when it
//! is at most [`crate::prec::SUGGEST_MAX_EDITS`] edits for a name of at
//! least 5 letters and one edit for 3 or 4 letters (a name of 1 or 2
//! letters, an element symbol, only by its case: "Cr" is not "C").

use crate::prec::SUGGEST_MAX_EDITS;

/// The name in `candidates` that `wanted` most likely meant, if any is
/// close enough.
pub fn closest<'a, S: AsRef<str>>(wanted: &str, candidates: &'a [S]) -> Option<&'a str> {
    let lower = wanted.to_lowercase();
    if let Some(c) = candidates
        .iter()
        .find(|c| c.as_ref() != wanted && c.as_ref().to_lowercase() == lower)
    {
        return Some(c.as_ref());
    }
    let limit = match wanted.chars().count() {
        0..=2 => return None,
        3 | 4 => 1,
        _ => SUGGEST_MAX_EDITS,
    };
    candidates
        .iter()
        .map(|c| {
            (
                strsim::osa_distance(&lower, &c.as_ref().to_lowercase()),
                c.as_ref(),
            )
        })
        .filter(|(d, c)| *d <= limit && *c != wanted)
        .min_by_key(|(d, _)| *d)
        .map(|(_, c)| c)
}

/// " (did you mean 'X'?)" or nothing.
pub fn did_you_mean<S: AsRef<str>>(wanted: &str, candidates: &[S]) -> String {
    closest(wanted, candidates).map_or(String::new(), |c| format!(" (did you mean '{c}'?)"))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Common practice, no source: a case slip is named first, a
    /// one-letter slip next, an unrelated name never.
    #[test]
    fn suggests_case_and_small_slips_only() {
        let names = ["heat", "C", "Mn", "uts_mpa", "charpy_j"];
        assert_eq!(closest("UTS_MPA", &names), Some("uts_mpa"));
        assert_eq!(closest("mn", &names), Some("Mn"));
        assert_eq!(closest("uts_mpaa", &names), Some("uts_mpa"));
        assert_eq!(closest("charyp_j", &names), Some("charpy_j"));
        assert_eq!(closest("yield", &names), None);
        assert_eq!(closest("Cr", &names), None);
        assert_eq!(did_you_mean("Heat", &names), " (did you mean 'heat'?)");
        assert_eq!(did_you_mean("heat", &names), "");
    }
}
