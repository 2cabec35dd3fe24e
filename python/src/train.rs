//! `mettle._mettle.train`: the command line's `train`, settings for
//! settings (src/cli/train.rs, `TrainSettings::params` and `Plan`).

use std::path::PathBuf;
use std::time::Instant;

use mettle::committee::{CommitteeParams, KrigingMode, NoiseMode, PartitionVariance};
use mettle::data::schema::Schema;
use mettle::model::{SchemaTrainOptions, SchemaTrainReport, TrainSpec};
use mettle::Model;
use pyo3::prelude::*;

use crate::errors::raise;
use crate::frame::{PyColumn, Source};
use crate::progress::PyProgress;
use crate::{to_py, RawModel};

/// An invalid setting, worded as the library words its own.
fn invalid(name: &'static str, value: String, expected: &str) -> mettle::Error {
    mettle::Error::InvalidParameter {
        name,
        value,
        expected: expected.to_string(),
    }
}

/// `MIN..MAX` or `N`, as `--hidden` takes it.
fn hidden_range(s: &str) -> mettle::Result<(usize, usize)> {
    let bad = || {
        invalid(
            "hidden",
            format!("'{s}'"),
            "expected MIN..MAX (e.g. 1..10) or a single count (0 = linear)",
        )
    };
    let parts: Vec<&str> = s.split("..").collect();
    match parts.as_slice() {
        [one] => one.trim().parse().map(|n| (n, n)).map_err(|_| bad()),
        [a, b] => {
            let lo = a.trim().parse().map_err(|_| bad())?;
            let hi = b
                .trim()
                .trim_start_matches('=')
                .parse()
                .map_err(|_| bad())?;
            Ok((lo, hi))
        }
        _ => Err(bad()),
    }
}

fn noise_mode(s: &str) -> mettle::Result<NoiseMode> {
    match s {
        "constant" => Ok(NoiseMode::Constant),
        "varying" => Ok(NoiseMode::Varying),
        "auto" => Ok(NoiseMode::Auto),
        _ => Err(invalid(
            "noise",
            format!("'{s}'"),
            "one of constant, varying, auto",
        )),
    }
}

fn partition_variance(s: &str) -> mettle::Result<PartitionVariance> {
    match s {
        "within" => Ok(PartitionVariance::Within),
        "mixture" => Ok(PartitionVariance::Mixture),
        _ => Err(invalid(
            "partition_variance",
            format!("'{s}'"),
            "one of within, mixture",
        )),
    }
}

fn kriging_mode(s: &str) -> mettle::Result<KrigingMode> {
    match s {
        "on" => Ok(KrigingMode::On),
        "off" => Ok(KrigingMode::Off),
        "auto" => Ok(KrigingMode::Auto),
        _ => Err(invalid("kriging", format!("'{s}'"), "one of on, off, auto")),
    }
}

/// The settings of `train`, with the command line's defaults (given by the package).
#[derive(FromPyObject)]
#[pyo3(from_item_all)]
pub struct Settings {
    hidden: String,
    restarts: usize,
    seed: u64,
    holdout: f64,
    max_members: usize,
    noise: String,
    kriging: String,
    gross_errors: bool,
    heavy_tails: bool,
    reweight_mean: bool,
    widen: bool,
    early_stop: bool,
    partitions: usize,
    partition_variance: String,
    ard: bool,
    log_inputs: bool,
}

impl Settings {
    /// The committee settings, built as `TrainSettings::params` builds them.
    fn params(&self) -> mettle::Result<CommitteeParams> {
        let (lo, hi) = hidden_range(&self.hidden)?;
        Ok(CommitteeParams::default()
            .hidden(lo, hi)
            .restarts(self.restarts)
            .seed(self.seed)
            .holdout_fraction(self.holdout)
            .max_members(self.max_members)
            .widen(self.widen)
            .early_stop(self.early_stop)
            .partitions(self.partitions)
            .partition_variance(partition_variance(&self.partition_variance)?)
            .noise(noise_mode(&self.noise)?)
            .kriging(kriging_mode(&self.kriging)?)
            .gross_errors(self.gross_errors)
            .heavy_tails(self.heavy_tails)
            .reweight_mean(self.reweight_mean)
            .ard(self.ard))
    }
}

/// What to train on and how.
enum Plan {
    Schema(Schema, String, SchemaTrainOptions),
    Columns(TrainSpec),
}

/// Train a model. Returns it with the notes and warnings the command line
/// prints on stderr (`note: ...`, `warning: ...`).
#[pyfunction]
#[pyo3(signature = (*, columns, path, source, targets, inputs, schema, settings,
                    drop_incomplete_rows, record_time, progress))]
#[allow(clippy::too_many_arguments)]
pub fn train(
    py: Python<'_>,
    columns: Option<Vec<PyColumn>>,
    path: Option<PathBuf>,
    source: String,
    targets: Option<Vec<String>>,
    inputs: Option<Vec<String>>,
    schema: Option<PathBuf>,
    settings: Settings,
    drop_incomplete_rows: bool,
    record_time: bool,
    progress: Option<Py<PyAny>>,
) -> PyResult<(RawModel, Vec<String>)> {
    // what clap checks on the command line
    match (&schema, &targets, &inputs) {
        (Some(_), Some(_), _) | (Some(_), _, Some(_)) => return Err(raise(
            py,
            "SettingsError",
            "schema cannot be given with targets or inputs: the schema names every column's role",
        )),
        (None, None, _) => {
            return Err(raise(
                py,
                "SettingsError",
                "targets (a column name or a list of them) or schema is required",
            ))
        }
        _ => {}
    }
    if drop_incomplete_rows && schema.is_none() {
        return Err(raise(
            py,
            "SettingsError",
            "drop_incomplete_rows needs a schema",
        ));
    }
    let data_name = path
        .as_ref()
        .map_or_else(|| source.clone(), |p| p.display().to_string());
    let src = Source::new(path, source, columns);
    let observer = PyProgress::new(progress);
    let outcome = py.detach(|| -> mettle::Result<(Model, Vec<String>)> {
        let table = src.into_table()?;
        let params = settings.params()?;
        let plan = match schema {
            Some(p) => Plan::Schema(
                Schema::load(&p)?,
                p.display().to_string(),
                SchemaTrainOptions {
                    params,
                    auto_log_inputs: settings.log_inputs,
                    drop_incomplete_rows,
                },
            ),
            None => Plan::Columns(TrainSpec {
                targets: targets.unwrap_or_default(),
                inputs,
                auto_log_inputs: settings.log_inputs,
                params,
            }),
        };
        let started = Instant::now();
        let (mut model, report) = match &plan {
            Plan::Schema(schema, name, opts) => {
                let (m, r) = Model::train_with_schema(&table, schema, name, opts, &observer)?;
                (m, Some(r))
            }
            Plan::Columns(spec) => (Model::train(&table, spec, &observer)?, None),
        };
        if record_time {
            model.training.wall_seconds = Some(started.elapsed().as_secs_f64());
        }
        let mut notes = report.map_or_else(Vec::new, |r| schema_notes(&r, &data_name));
        for s in &model.set_aside {
            notes.push(format!(
                "warning: input '{}' set aside: {}",
                s.name, s.reason
            ));
        }
        for t in &model.targets {
            for n in mettle::explain::fit_notes(t) {
                notes.push(format!("note: {}: {n}", t.name));
            }
        }
        Ok((model, notes))
    });
    let (model, notes) = outcome.map_err(|e| to_py(py, &e))?;
    Ok((RawModel { model }, notes))
}

/// The lines the command line prints after training through a schema.
fn schema_notes(r: &SchemaTrainReport, data: &str) -> Vec<String> {
    let mut out = r.lines(data, "drop_incomplete_rows");
    for w in r.row_warnings.iter().take(20) {
        out.push(format!("warning: row {}: {}", w.row + 1, w.message));
    }
    if r.row_warnings.len() > 20 {
        out.push(format!(
            "warning: ... {} more derivation warnings",
            r.row_warnings.len() - 20
        ));
    }
    out
}
