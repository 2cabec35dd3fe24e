//! SHA-256 fingerprint of the rows a model was trained on.

use sha2::{Digest, Sha256};

/// SHA-256 (lower-case hex) of column names and values: the names joined
/// by newlines, a NUL byte, then every value row by row as IEEE-754
/// little-endian bytes (a missing value as NaN). Independent of the file
/// format, so a CSV and the same data as Parquet give the same fingerprint.
pub fn fingerprint(names: &[&str], columns: &[&[Option<f64>]]) -> String {
    let mut h = Sha256::new();
    h.update(names.join("\n").as_bytes());
    h.update([0u8]);
    let n_rows = columns.first().map_or(0, |c| c.len());
    for row in 0..n_rows {
        for col in columns {
            h.update(col[row].unwrap_or(f64::NAN).to_le_bytes());
        }
    }
    format!("{:x}", h.finalize())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn empty_input_hashes_like_sha256_of_a_nul_byte() {
        // SHA-256 of the single byte 0x00 (FIPS 180-4 algorithm; value as
        // printed by `printf '\0' | sha256sum`).
        assert_eq!(
            fingerprint(&[], &[]),
            "6e340b9cffb37a989ca544e6bb780a2c78901d3fb33738768511a30617afa01d"
        );
    }

    #[test]
    fn any_change_changes_the_fingerprint() {
        let a = [Some(1.0), Some(2.0)];
        let b = [Some(1.0), Some(2.5)];
        assert_ne!(fingerprint(&["x"], &[&a]), fingerprint(&["x"], &[&b]));
        assert_ne!(fingerprint(&["x"], &[&a]), fingerprint(&["y"], &[&a]));
    }
}
