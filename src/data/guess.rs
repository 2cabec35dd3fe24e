//! Guesses about a column from its header name: whether it holds a
//! measured property of the tested steel (a result of the test, which a
//! model must not take as an input when it estimates another result).
//!
//! The words are the trade's usual column names (common practice, no
//! source): tensile and yield strength (uts, rm, rp02, ys), elongation and
//! reduction of area, impact energy (charpy, cvn, kv), hardness (hv, hb,
//! hrc), toughness, fatigue, and the units a result is written in (MPa,
//! ksi, J, ft·lbf).

/// A measured property a column name points to, with the words that
/// matched: `None` for a name that does not look like one.
pub fn measured_property(name: &str) -> Option<&'static str> {
    let lower = name.to_lowercase();
    let words: Vec<&str> = lower
        .split(|c: char| !c.is_ascii_alphanumeric())
        .filter(|w| !w.is_empty())
        .collect();
    let has = |w: &str| words.contains(&w);
    const KINDS: [(&[&str], &str); 8] = [
        (
            &["uts", "tensile", "rm", "strength", "ts"],
            "tensile strength",
        ),
        (
            &["yield", "ys", "rp02", "rp0", "reh", "rel"],
            "yield strength",
        ),
        (&["elongation", "elong", "a5", "a50"], "elongation"),
        (&["ra", "roa", "reduction"], "reduction of area"),
        (
            &[
                "charpy",
                "cvn",
                "kv",
                "kv2",
                "impact",
                "toughness",
                "kic",
                "ctod",
            ],
            "impact energy or toughness",
        ),
        (
            &["hardness", "hv", "hb", "hbw", "hrc", "hrb", "hv10"],
            "hardness",
        ),
        (&["fatigue", "endurance"], "fatigue strength"),
        (
            &["mpa", "ksi", "ftlbf", "j"],
            "a result in a unit of stress or energy",
        ),
    ];
    KINDS
        .iter()
        .find(|(keys, _)| keys.iter().any(|k| has(k)))
        .map(|(_, what)| *what)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Common practice, no source: result columns are recognised by their
    /// usual names, composition and process columns are not.
    #[test]
    fn result_columns_are_recognised_by_name() {
        for (name, what) in [
            ("uts_mpa", "tensile strength"),
            ("Rp02", "yield strength"),
            ("hardness_hv", "hardness"),
            ("HV10", "hardness"),
            ("charpy_j", "impact energy or toughness"),
            ("elongation_pct", "elongation"),
        ] {
            assert_eq!(measured_property(name), Some(what), "{name}");
        }
        for name in [
            "c_wt",
            "mn_wt",
            "test_temp_c",
            "heat_input_kj_mm",
            "pwht_temp_c",
            "b_ppm",
        ] {
            assert_eq!(measured_property(name), None, "{name}");
        }
    }
}
