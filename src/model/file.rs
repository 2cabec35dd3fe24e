//! The model file: JSON in a versioned format of mettle's own, written
//! atomically and refused with a clear message when corrupt, truncated or
//! from a newer mettle.

use std::path::Path;

use super::Model;
use crate::data::write_atomic;
use crate::error::{Error, Result};

/// Value of the `format` key of every model file.
pub const MODEL_FORMAT: &str = "mettle-model";

/// The newest model format version this build writes and reads.
pub const MODEL_FORMAT_VERSION: u64 = 7;

impl Model {
    /// The model as JSON bytes (compact, with a final newline). Identical
    /// models give identical bytes.
    ///
    /// # Errors
    /// [`Error::ModelFormat`] if a value cannot be represented (never for
    /// a model built by mettle).
    pub fn to_json(&self) -> Result<Vec<u8>> {
        let mut bytes = serde_json::to_vec(self).map_err(|e| Error::ModelFormat {
            path: "<memory>".into(),
            reason: e.to_string(),
        })?;
        bytes.push(b'\n');
        Ok(bytes)
    }

    /// Write the model to `path` atomically: a temporary file in the same
    /// directory, flushed and synced, then renamed over `path`. A failure
    /// leaves any earlier file at `path` untouched.
    ///
    /// # Errors
    /// [`Error::Write`] when the directory is not writable or the disk is full.
    pub fn save(&self, path: &Path) -> Result<()> {
        let bytes = self.to_json()?;
        write_atomic(path, &bytes)
    }

    /// Read a model file.
    ///
    /// # Errors
    /// [`Error::Io`] when unreadable; [`Error::ModelFormat`] when it is not
    /// JSON, truncated, not a mettle model or fails its internal checks;
    /// [`Error::ModelVersion`] when written by a newer mettle.
    pub fn load(path: &Path) -> Result<Model> {
        let bytes = std::fs::read(path).map_err(|source| Error::Io {
            path: path.display().to_string(),
            source,
        })?;
        Self::from_json(&bytes, &path.display().to_string())
    }

    /// Parse model JSON; `name` is used in messages.
    ///
    /// # Errors
    /// As [`Model::load`].
    pub fn from_json(bytes: &[u8], name: &str) -> Result<Model> {
        let bad = |reason: String| Error::ModelFormat {
            path: name.to_string(),
            reason,
        };
        let value: serde_json::Value = serde_json::from_slice(bytes).map_err(|e| {
            if e.is_eof() {
                bad(format!("the file ends early (truncated?): {e}"))
            } else {
                bad(format!("not valid JSON: {e}"))
            }
        })?;
        match value.get("format").and_then(|f| f.as_str()) {
            Some(MODEL_FORMAT) => {}
            Some(other) => {
                return Err(bad(format!(
                    "format is '{other}', expected '{MODEL_FORMAT}'"
                )))
            }
            None => {
                return Err(bad(
                    "no 'format' key: this is not a mettle model file".into()
                ))
            }
        }
        let version = value
            .get("format_version")
            .and_then(|v| v.as_u64())
            .ok_or_else(|| bad("no 'format_version' key".into()))?;
        if version > MODEL_FORMAT_VERSION {
            return Err(Error::ModelVersion {
                path: name.to_string(),
                found: version,
                supported: MODEL_FORMAT_VERSION,
            });
        }
        let model: Model = serde_json::from_value(value).map_err(|e| bad(e.to_string()))?;
        model.validate().map_err(bad)?;
        Ok(model)
    }

    /// Internal consistency: every array has the length its architecture
    /// demands and every number is finite.
    fn validate(&self) -> std::result::Result<(), String> {
        let d = self.inputs.len();
        if d == 0 {
            return Err("the model has no inputs".into());
        }
        if self.targets.is_empty() {
            return Err("the model has no targets".into());
        }
        for inp in &self.inputs {
            if inp.scaling.hi.partial_cmp(&inp.scaling.lo) != Some(std::cmp::Ordering::Greater)
                || !inp.min.is_finite()
                || !inp.max.is_finite()
            {
                return Err(format!("input '{}' has an invalid scaling", inp.name));
            }
        }
        for t in &self.targets {
            if t.scaling.hi.partial_cmp(&t.scaling.lo) != Some(std::cmp::Ordering::Greater) {
                return Err(format!("target '{}' has an invalid scaling", t.name));
            }
            if t.committee
                .further_partitions
                .iter()
                .any(|f| !f.further_partitions.is_empty())
            {
                return Err(format!(
                    "target '{}': a further partition holds partitions of its own",
                    t.name
                ));
            }
            if let Some(rho) = t.committee.partition_correlation {
                if !(0.0..=1.0).contains(&rho) {
                    return Err(format!(
                        "target '{}': partition correlation {rho} is not between 0 and 1",
                        t.name
                    ));
                }
            }
            for (p, c) in t.committee.partitions().enumerate() {
                let who = if p == 0 {
                    format!("target '{}'", t.name)
                } else {
                    format!("target '{}' partition {}", t.name, p + 1)
                };
                if c.members.is_empty() {
                    return Err(format!("{} has no committee members", who));
                }
                if c.n_inputs != d {
                    return Err(format!(
                        "{} committee takes {} inputs, the model lists {d}",
                        who, c.n_inputs
                    ));
                }
                for (i, m) in c.members.iter().enumerate() {
                    let k = m.arch(d).n_params();
                    if m.weights.len() != k {
                        return Err(format!(
                            "{} member {}: {} weights, expected {k}",
                            who,
                            i + 1,
                            m.weights.len()
                        ));
                    }
                    if m.posterior_cov.nrows() != k {
                        return Err(format!(
                            "{} member {}: covariance of size {}, expected {k}",
                            who,
                            i + 1,
                            m.posterior_cov.nrows()
                        ));
                    }
                    if m.beta.partial_cmp(&0.0) != Some(std::cmp::Ordering::Greater)
                        || m.weights
                            .iter()
                            .chain(m.posterior_cov.iter())
                            .any(|v| !v.is_finite())
                    {
                        return Err(format!(
                            "{} member {}: non-finite or invalid numbers",
                            who,
                            i + 1
                        ));
                    }
                    if let Some(nm) = &m.noise {
                        let k = crate::net::Architecture::new(d, nm.n_hidden).n_params();
                        if nm.weights.len() != k
                            || nm.posterior_cov.nrows() != k
                            || nm
                                .weights
                                .iter()
                                .chain(nm.posterior_cov.iter())
                                .any(|v| !v.is_finite())
                        {
                            return Err(format!(
                                "{} member {}: its noise network has {} weights and a covariance of size {} (expected {k} each, all finite)",
                                who,
                                i + 1,
                                nm.weights.len(),
                                nm.posterior_cov.nrows()
                            ));
                        }
                    }
                }
                if let Some(k) = &c.kriging {
                    let ok = k.x.ncols() == d
                        && k.length_scales.len() == d
                        && k.x
                            .iter()
                            .chain(&k.residual)
                            .chain(&k.noise_var)
                            .chain(&k.length_scales)
                            .all(|v| v.is_finite())
                        && k.signal_var > 0.0
                        && k.noise_factor > 0.0
                        && k.is_usable();
                    if !ok {
                        return Err(format!(
                            "{}: its residual process is damaged ({} rows × {} inputs, {} length scales; expected {d} inputs, finite numbers and a kernel matrix that factorises)",
                            who,
                            k.x.nrows(),
                            k.x.ncols(),
                            k.length_scales.len()
                        ));
                    }
                }
                if let Some(g) = &c.gross_errors {
                    if !g.is_valid() {
                        return Err(format!(
                            "{}: its share of gross errors is damaged (share {}, background mean {}, sd {}; expected a share in [0, 0.25] and a finite mean and positive sd)",
                            who, g.share, g.background_mean, g.background_sd
                        ));
                    }
                }
            }
        }
        if let Some(dom) = &self.domain {
            let consistent = dom.n_inputs == d
                && dom.mean.len() == d
                && d.checked_mul(d) == Some(dom.whitening.len())
                && !dom.rows.is_empty()
                && dom.rows.len() % d == 0
                && dom.scaled_rows.len() == dom.rows.len()
                && dom.k >= 1
                && dom.reference_distance >= 0.0
                && dom.median_distance >= 0.0
                && dom
                    .mean
                    .iter()
                    .chain(&dom.whitening)
                    .chain(&dom.rows)
                    .chain(&dom.scaled_rows)
                    .chain([&dom.reference_distance, &dom.median_distance])
                    .all(|v| v.is_finite())
                && dom.pairs.as_ref().is_none_or(|g| {
                    g.cells >= 1
                        && g.cells <= crate::prec::DOMAIN_PAIR_MAX_CELLS
                        && g.radius < g.cells
                        && g.occupied.len() == d * d.saturating_sub(1) / 2
                        && g.occupied
                            .iter()
                            .all(|b| b.len() == super::PairGrid::words(g.cells))
                });
            if !consistent {
                return Err(format!(
                    "the stored training domain does not fit the model's {d} inputs (it holds {} inputs, {} values per row array, k = {})",
                    dom.n_inputs,
                    dom.rows.len(),
                    dom.k
                ));
            }
        }
        Ok(())
    }
}
