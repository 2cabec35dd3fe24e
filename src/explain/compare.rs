//! Two models side by side on one table: for retraining.
//!
//! # What is compared
//!
//! - per target both models know: RMSE, MAE, R², NLPD and coverages on the
//!   same rows (see [`crate::metrics`]);
//! - rows where the two estimates disagree by more than their combined
//!   error bars: with h the half-width of each model's central 95 %
//!   interval ((hi95 − lo95)/2), a row disagrees when
//!   `|mean_new − mean_old| > √(h_old² + h_new²)`, the half-widths added
//!   in quadrature as for independent errors (common practice, no source);
//! - what changed in the training: fingerprint, file, row counts, inputs
//!   added or removed, input and target ranges, settings.
//!
//! Every difference found is counted in [`Comparison::n_differences`]; a
//! model compared with itself has none.

use serde::Serialize;

use super::paired::{paired, PairedComparison};
use super::{estimate_rows, TargetRows};
use crate::data::Table;
use crate::error::Result;
use crate::metrics::Evaluation;
use crate::model::Model;

/// One row where the two models disagree.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Disagreement {
    /// Row of the table, 1-based.
    pub row: usize,
    /// Measured value.
    pub measured: f64,
    /// Old model's estimate.
    pub old_mean: f64,
    /// Old model's 95 % half-width.
    pub old_half_width: f64,
    /// New model's estimate.
    pub new_mean: f64,
    /// New model's 95 % half-width.
    pub new_half_width: f64,
}

/// One target both models estimate.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct TargetComparison {
    /// Target name.
    pub target: String,
    /// Old model on the table.
    pub old: Option<Evaluation>,
    /// New model on the table.
    pub new: Option<Evaluation>,
    /// Metrics whose value differs: name, old, new.
    pub metric_changes: Vec<(String, f64, f64)>,
    /// Rows where the estimates disagree beyond their error bars.
    pub disagreements: Vec<Disagreement>,
    /// RMSE and NLPD differences on the rows both estimate, with their
    /// standard errors (`None` without such rows).
    pub paired: Option<PairedComparison>,
}

/// The comparison of two models.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Comparison {
    /// Rows of the table.
    pub n_rows: usize,
    /// Per target in both models.
    pub targets: Vec<TargetComparison>,
    /// What changed in the training data and settings, in words.
    pub training_changes: Vec<String>,
    /// Every difference: training changes, changed metrics, disagreeing
    /// rows.
    pub n_differences: usize,
}

fn half_width(e: &crate::predict::Estimate) -> f64 {
    0.5 * (e.hi95 - e.lo95)
}

fn metric_changes(old: Option<&Evaluation>, new: Option<&Evaluation>) -> Vec<(String, f64, f64)> {
    let (Some(a), Some(b)) = (old, new) else {
        return Vec::new();
    };
    a.named()
        .into_iter()
        .zip(b.named())
        .map(|((n, x), (_, y))| (n, x, y))
        .filter(|(_, x, y)| x.to_bits() != y.to_bits())
        .map(|(n, x, y)| (n.to_string(), x, y))
        .collect()
}

fn disagreements(old: &TargetRows, new: &TargetRows) -> Vec<Disagreement> {
    old.rows
        .iter()
        .zip(&old.estimates)
        .zip(&old.measured)
        .filter_map(|((row, eo), y)| {
            let k = new.rows.iter().position(|r| r == row)?;
            let en = &new.estimates[k];
            let (ho, hn) = (half_width(eo), half_width(en));
            ((en.mean - eo.mean).abs() > (ho * ho + hn * hn).sqrt()).then(|| Disagreement {
                row: row + 1,
                measured: *y,
                old_mean: eo.mean,
                old_half_width: ho,
                new_mean: en.mean,
                new_half_width: hn,
            })
        })
        .collect()
}

/// The paired comparison on the rows both models estimate.
fn paired_rows(old: &TargetRows, new: &TargetRows) -> Option<PairedComparison> {
    let (lo, ln) = (old.row_nlpd(), new.row_nlpd());
    let mut v: [Vec<f64>; 4] = Default::default();
    for (k, row) in old.rows.iter().enumerate() {
        let Some(j) = new.rows.iter().position(|r| r == row) else {
            continue;
        };
        v[0].push(old.measured[k] - old.estimates[k].mean);
        v[1].push(new.measured[j] - new.estimates[j].mean);
        v[2].push(lo[k]);
        v[3].push(ln[j]);
    }
    paired(&v[0], &v[1], &v[2], &v[3])
}

fn range_change(what: &str, old: (f64, f64), new: (f64, f64)) -> Option<String> {
    (old.0.to_bits() != new.0.to_bits() || old.1.to_bits() != new.1.to_bits()).then(|| {
        format!(
            "{what}: range {} to {} → {} to {}",
            old.0, old.1, new.0, new.1
        )
    })
}

/// The fingerprint covers the values of the inputs and targets a model
/// learns, so two models of different columns differ in it even on the
/// same rows: say so rather than claim the rows differ.
fn fingerprint_change(old: &Model, new: &Model) -> String {
    let names = |m: &Model| {
        let mut v: Vec<String> = m.input_names().iter().map(|s| s.to_string()).collect();
        v.sort();
        let mut t: Vec<String> = m.targets.iter().map(|t| t.name.clone()).collect();
        t.sort();
        (v, t)
    };
    let ((oi, ot), (ni, nt)) = (names(old), names(new));
    let (a, b) = (&old.training, &new.training);
    if oi == ni && ot == nt {
        format!(
            "training rows differ: fingerprint {} → {}",
            a.data_sha256, b.data_sha256
        )
    } else {
        format!(
            "training fingerprints differ ({} → {}), but the models learn different columns (targets {} → {}{}): the fingerprint covers the columns a model learns, so it cannot say whether the rows are the same",
            short(&a.data_sha256),
            short(&b.data_sha256),
            ot.join(", "),
            nt.join(", "),
            if oi == ni { String::new() } else { "; inputs differ too".to_string() }
        )
    }
}

fn short(sha: &str) -> &str {
    sha.get(..12).unwrap_or(sha)
}

/// What changed between the two models' training, in words.
fn training_changes(old: &Model, new: &Model) -> Vec<String> {
    let (a, b) = (&old.training, &new.training);
    let mut out = Vec::new();
    if a.data_sha256 != b.data_sha256 {
        out.push(fingerprint_change(old, new));
    }
    if a.data_file != b.data_file {
        out.push(format!("training file: {} → {}", a.data_file, b.data_file));
    }
    if a.n_rows != b.n_rows {
        out.push(format!("training rows: {} → {}", a.n_rows, b.n_rows));
    }
    for i in &old.inputs {
        match new.inputs.iter().find(|j| j.name == i.name) {
            None => out.push(format!("input {} removed", i.name)),
            Some(j) => out.extend(range_change(
                &format!("input {}", i.name),
                (i.min, i.max),
                (j.min, j.max),
            )),
        }
    }
    for j in new
        .inputs
        .iter()
        .filter(|j| !old.inputs.iter().any(|i| i.name == j.name))
    {
        out.push(format!(
            "input {} added (range {} to {})",
            j.name, j.min, j.max
        ));
    }
    for t in &old.targets {
        match new.target(&t.name) {
            None => out.push(format!("target {} only in the old model", t.name)),
            Some(u) => {
                if t.n_rows != u.n_rows {
                    out.push(format!(
                        "target {}: rows {} → {}",
                        t.name, t.n_rows, u.n_rows
                    ));
                }
                out.extend(range_change(
                    &format!("target {}", t.name),
                    (t.min, t.max),
                    (u.min, u.max),
                ));
            }
        }
    }
    for u in new.targets.iter().filter(|u| old.target(&u.name).is_none()) {
        out.push(format!("target {} only in the new model", u.name));
    }
    // settings, key by key of their JSON form
    if let (Ok(serde_json::Value::Object(x)), Ok(serde_json::Value::Object(y))) = (
        serde_json::to_value(&a.settings),
        serde_json::to_value(&b.settings),
    ) {
        for (k, v) in &x {
            if y.get(k) != Some(v) {
                out.push(format!(
                    "setting {k}: {v} → {}",
                    y.get(k).map_or("absent".to_string(), |w| w.to_string())
                ));
            }
        }
    }
    out
}

/// Compare `old` and `new` on `table`.
///
/// # Errors
/// As [`estimate_rows`] for either model.
pub fn compare(old: &Model, new: &Model, table: &Table) -> Result<Comparison> {
    let ro = estimate_rows(old, table)?;
    let rn = estimate_rows(new, table)?;
    let mut targets = Vec::new();
    for o in &ro {
        let Some(n) = rn.iter().find(|n| n.target == o.target) else {
            continue;
        };
        let (eo, en) = (o.evaluation(), n.evaluation());
        targets.push(TargetComparison {
            target: o.target.clone(),
            metric_changes: metric_changes(eo.as_ref(), en.as_ref()),
            old: eo,
            new: en,
            disagreements: disagreements(o, n),
            paired: paired_rows(o, n),
        });
    }
    let training_changes = training_changes(old, new);
    let n_differences = training_changes.len()
        + targets
            .iter()
            .map(|t| t.metric_changes.len() + t.disagreements.len())
            .sum::<usize>();
    Ok(Comparison {
        n_rows: table.n_rows(),
        targets,
        training_changes,
        n_differences,
    })
}
