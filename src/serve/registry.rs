//! The models a server offers: read once at start (and again only on an
//! explicit reload that validates every file first), never written.

use std::path::{Path, PathBuf};
use std::sync::Arc;

use anyhow::Context;
use mettle::curves::training_medians;
use mettle::units::{Quantity, Unit};
use mettle::Model;
use serde_json::{json, Value};
use sha2::{Digest, Sha256};

/// One model on offer. The client knows it by `id` only, never by path.
pub struct Entry {
    /// Short name from the file name (unique among the models served).
    pub id: String,
    /// The model.
    pub model: Model,
    /// What `GET /api/models` shows of it.
    pub info: Value,
}

/// Every model on offer, in the order given.
pub struct Registry {
    /// The models.
    pub entries: Vec<Arc<Entry>>,
}

impl Registry {
    /// Read every model named by `sources` (files, or folders whose
    /// `*.json` files are all read). Fails on the first file that is not a
    /// usable model, naming it; nothing is offered half-read.
    pub fn load(sources: &[PathBuf]) -> anyhow::Result<Registry> {
        let mut files = Vec::new();
        for s in sources {
            if s.is_dir() {
                let mut found: Vec<PathBuf> = std::fs::read_dir(s)
                    .with_context(|| format!("reading folder {}", s.display()))?
                    .filter_map(|e| e.ok().map(|e| e.path()))
                    .filter(|p| p.extension().is_some_and(|x| x == "json") && p.is_file())
                    .collect();
                found.sort();
                if found.is_empty() {
                    anyhow::bail!("{}: no model files (*.json) in this folder", s.display());
                }
                files.extend(found);
            } else {
                files.push(s.clone());
            }
        }
        let mut entries: Vec<Arc<Entry>> = Vec::new();
        for f in files {
            let bytes = std::fs::read(&f).with_context(|| format!("reading {}", f.display()))?;
            let model = Model::load(&f)?;
            let mut id = stem(&f);
            let mut k = 2;
            while entries.iter().any(|e| e.id == id) {
                id = format!("{}-{k}", stem(&f));
                k += 1;
            }
            let info = describe(&id, &f, &bytes, &model);
            entries.push(Arc::new(Entry { id, model, info }));
        }
        Ok(Registry { entries })
    }

    /// The model called `id`.
    pub fn get(&self, id: &str) -> Option<Arc<Entry>> {
        self.entries.iter().find(|e| e.id == id).cloned()
    }
}

fn stem(p: &Path) -> String {
    p.file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| "model".into())
}

/// The declared unit of a column read through the model's schema (None
/// without a schema or a unit).
fn declared(model: &Model, name: &str) -> Option<Unit> {
    model.schema.as_ref().and_then(|s| s.declared_unit(name))
}

/// From internal units to the column's declared unit (the unit a table
/// given to the model is in).
fn shown(model: &Model, name: &str, v: f64) -> f64 {
    declared(model, name).map_or(v, |u| u.from_internal(v))
}

/// The model card the page shows: targets, inputs with their declared
/// units, training ranges and the median training heat, the training
/// record, the file's date and fingerprint (SHA-256 of its bytes), and
/// the inputs of a transition chart when the model has an impact-energy
/// target and a test-temperature input.
fn describe(id: &str, path: &Path, bytes: &[u8], model: &Model) -> Value {
    let medians = training_medians(model);
    let inputs: Vec<Value> = model
        .inputs
        .iter()
        .zip(&medians)
        .map(|(i, (_, med))| {
            json!({"name": i.name, "unit": declared(model, &i.name).map(|u| u.symbol()),
                "min": shown(model, &i.name, i.min), "max": shown(model, &i.name, i.max),
                "base": med.map(|m| shown(model, &i.name, m))})
        })
        .collect();
    let targets: Vec<Value> = model
        .target_columns(false)
        .iter()
        .zip(&model.targets)
        .map(|(c, t)| {
            json!({"name": c.name, "unit": c.unit.map(|u| u.symbol()), "min": t.min, "max": t.max,
                "interval_kind": c.kind})
        })
        .collect();
    let written = std::fs::metadata(path)
        .and_then(|m| m.modified())
        .ok()
        .map(httpdate::fmt_http_date);
    json!({
        "id": id,
        "targets": targets,
        "inputs": inputs,
        "training": {"data_file": model.training.data_file, "rows": model.training.n_rows,
            "data_sha256": model.training.data_sha256, "tool_version": model.tool_version},
        "file_written": written,
        "fingerprint": format!("{:x}", Sha256::digest(bytes)),
        "transition": transition_axes(model),
    })
}

/// An impact-energy target and a test-temperature input (a temperature
/// whose name says it is the test's), when the model has both.
fn transition_axes(model: &Model) -> Option<Value> {
    let target = model.targets.iter().find(|t| {
        model
            .target_unit(&t.name, false)
            .is_some_and(|u| u.quantity() == Quantity::ImpactEnergy)
    })?;
    let temp = model.inputs.iter().find(|i| {
        declared(model, &i.name).is_some_and(|u| u.quantity() == Quantity::Temperature)
            && i.name.to_ascii_lowercase().contains("test")
    })?;
    Some(
        json!({"target": target.name, "temperature_input": temp.name,
        "from": temp.min, "to": temp.max}),
    )
}
