//! A trained model: the inputs and targets it knows, their scalings and
//! training ranges, one committee per target, and the record of how it was
//! trained.

mod correlation;
mod file;
pub(crate) mod near;
pub(crate) mod reference;
mod summary;
mod train;

pub use crate::transform::{IntervalKind, TargetTransform};
pub use correlation::{scatter_correlations, ScatterCorrelation};
pub use file::{MODEL_FORMAT, MODEL_FORMAT_VERSION};
pub use near::NearMeasure;
pub use reference::{pair_cells, CodeReference, DomainReference, LevelNear, PairGrid};
pub use summary::{
    noise_profile, replicate_scatter, summarise_prediction, summarise_training, NoiseBin,
    NoiseProfile, NoiseSpread, ReplicateScatter, TrainingSummary, PROFILE_BINS,
};
pub use train::{SchemaTrainOptions, SchemaTrainReport, TrainSpec};

use serde::{Deserialize, Serialize};

use crate::committee::{Committee, CommitteeParams};
use crate::data::schema::Schema;
use crate::features::ColumnScaling;

/// An input column as the model knows it.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct InputColumn {
    /// Column name.
    pub name: String,
    /// Smallest training value (raw units).
    pub min: f64,
    /// Largest training value (raw units).
    pub max: f64,
    /// Scaling to the network's space.
    pub scaling: ColumnScaling,
}

/// One level of a declared code (schema `kind = "levels"`) as training
/// saw it.
#[derive(Clone, Debug, PartialEq, Eq, Serialize, Deserialize)]
pub struct CodeLevel {
    /// The integer code.
    pub code: i64,
    /// The level's declared name.
    pub name: String,
    /// The indicator input standing for it ([`crate::data::schema::indicator_name`]).
    pub column: String,
    /// Training rows at this level (0: declared but never seen, refused at
    /// prediction).
    pub training_rows: usize,
}

/// An input declared as a code, with its levels: given to the networks as
/// one indicator input per level (method.md §1b).
#[derive(Clone, Debug, PartialEq, Eq, Serialize, Deserialize)]
pub struct CodeInput {
    /// The column of the table holding the code.
    pub name: String,
    /// Every declared level, in increasing code.
    pub levels: Vec<CodeLevel>,
}

impl CodeInput {
    /// The levels training saw, as text: `0 = none, 2 = argon`.
    pub fn seen_text(&self) -> String {
        self.levels
            .iter()
            .filter(|l| l.training_rows > 0)
            .map(|l| format!("{} = {}", l.code, l.name))
            .collect::<Vec<_>>()
            .join(", ")
    }
}

/// A column offered as an input but set aside, with the reason.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct SetAside {
    /// Column name.
    pub name: String,
    /// Why it is not used.
    pub reason: String,
}

/// One target and its committee.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct TargetModel {
    /// Column name.
    pub name: String,
    /// Smallest training value.
    pub min: f64,
    /// Largest training value.
    pub max: f64,
    /// Scaling to the network's space.
    pub scaling: ColumnScaling,
    /// Rows used for this target.
    pub n_rows: usize,
    /// Rows left out because this target was missing.
    pub n_missing: usize,
    /// The scale the target is learnt on (min, max are on the target's own
    /// scale, `scaling` on the transformed one).
    #[serde(default, skip_serializing_if = "TargetTransform::is_identity")]
    pub transform: TargetTransform,
    /// The committee.
    pub committee: Committee,
    /// Noise level and replicate scatter over the training rows (absent
    /// in files written before mettle recorded them).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub training_summary: Option<TrainingSummary>,
    /// Median over the training rows of the committee's model sd alone
    /// (learnt scale, without noise or residual process): the domain
    /// guard's yardstick for the model uncertainty of a new row (absent in
    /// files before version 7).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub typical_committee_sd: Option<f64>,
    /// The 99th percentile of the same sds over the training rows: above
    /// it a row is thinly supported, above twice it outside (absent in
    /// files before version 7).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub high_committee_sd: Option<f64>,
}

/// How the model was trained.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct TrainingRecord {
    /// File name (no directory) of the training table.
    pub data_file: String,
    /// Rows in the training table.
    pub n_rows: usize,
    /// SHA-256 of the training rows: column names, then every value used
    /// (inputs, then targets) row by row as IEEE-754 little-endian bytes.
    pub data_sha256: String,
    /// Committee settings, including the seed.
    pub settings: CommitteeParams,
    /// Forward/backward passes made by all networks together.
    pub gradient_evaluations: u64,
    /// Wall-clock training time in seconds, recorded only when asked for
    /// (it would make otherwise identical model files differ).
    pub wall_seconds: Option<f64>,
    /// Rows of the table (1-based) left out because an input was missing,
    /// when that was asked for explicitly.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub incomplete_rows_dropped: Vec<usize>,
}

/// A trained model.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Model {
    /// Always [`MODEL_FORMAT`].
    pub format: String,
    /// Format version of the file.
    pub format_version: u64,
    /// Version of mettle that wrote it.
    pub tool_version: String,
    /// Inputs in use, in network order.
    pub inputs: Vec<InputColumn>,
    /// Columns offered as inputs but set aside.
    pub set_aside: Vec<SetAside>,
    /// Targets, each with its committee.
    pub targets: Vec<TargetModel>,
    /// Training record.
    pub training: TrainingRecord,
    /// The schema the model was trained with: units, bounds and derived
    /// inputs, applied again to every table the model reads.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub schema: Option<Schema>,
    /// The scaled training inputs for the joint-domain check (absent in
    /// files written before mettle stored them: only ranges are checked).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub domain: Option<DomainReference>,
    /// The correlation of each pair of targets' scatter, from the training
    /// rows where both were measured (absent before version 7, and for
    /// pairs measured together on too few rows: independence is assumed).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub scatter_correlations: Vec<ScatterCorrelation>,
    /// The inputs the schema declared as codes, with their levels and the
    /// training rows at each (absent for a model without codes).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub codes: Vec<CodeInput>,
}

impl Model {
    /// Names of the inputs in network order.
    pub fn input_names(&self) -> Vec<&str> {
        self.inputs.iter().map(|i| i.name.as_str()).collect()
    }

    /// The columns the model's schema declares as row identifiers (none
    /// for a model trained without a schema).
    pub fn identifier_names(&self) -> Vec<String> {
        self.schema.as_ref().map_or_else(Vec::new, |s| {
            s.with_role(crate::data::schema::Role::Identifier)
                .map(|c| c.name.clone())
                .collect()
        })
    }

    /// The column identifying `table`'s rows for this model: `requested`,
    /// else the schema's identifier, else a text first column that is not
    /// an input ([`crate::data::identifier_column`]).
    ///
    /// # Errors
    /// A `requested` column the table lacks.
    pub fn row_labels(
        &self,
        table: &crate::data::Table,
        requested: Option<&str>,
    ) -> crate::Result<Option<crate::data::RowLabels>> {
        let mut inputs = self.input_names();
        if let Some(s) = &self.schema {
            inputs.extend(
                s.columns
                    .iter()
                    .filter(|c| c.role.is_numeric())
                    .map(|c| c.name.as_str()),
            );
        }
        crate::data::identifier_column(table, requested, &self.identifier_names(), &inputs)?
            .map(|c| crate::data::RowLabels::read(table, &c))
            .transpose()
    }

    /// The declared code whose indicator input is `input`, with the level.
    pub fn code_of_input(&self, input: &str) -> Option<(&CodeInput, &CodeLevel)> {
        self.codes
            .iter()
            .find_map(|c| c.levels.iter().find(|l| l.column == input).map(|l| (c, l)))
    }

    /// Per input (network order): the index in [`Model::codes`] of the code
    /// it is an indicator of, `None` for a quantity.
    pub fn input_codes(&self) -> Vec<Option<usize>> {
        self.inputs
            .iter()
            .map(|i| {
                self.codes
                    .iter()
                    .position(|c| c.levels.iter().any(|l| l.column == i.name))
            })
            .collect()
    }

    /// Refuse to move `name` continuously when it is a declared code or one
    /// of its indicator inputs: a code has levels, not values in between
    /// (method.md §1b). `option` names the setting in the message.
    ///
    /// # Errors
    /// [`crate::Error::InvalidParameter`] naming the code and the levels
    /// seen in training.
    pub fn refuse_moving_code(&self, name: &str, option: &'static str) -> crate::Result<()> {
        let code = self
            .codes
            .iter()
            .find(|c| c.name == name)
            .or_else(|| self.code_of_input(name).map(|(c, _)| c));
        match code {
            None => Ok(()),
            Some(c) => Err(crate::Error::InvalidParameter {
                name: option,
                value: name.to_string(),
                expected: format!(
                    "an input that can be moved continuously; '{}' is a code (levels seen in training: {}), so hold it at one level (a fixed value or the base row) and run once per level",
                    c.name,
                    c.seen_text()
                ),
            }),
        }
    }

    /// The target called `name`.
    pub fn target(&self, name: &str) -> Option<&TargetModel> {
        self.targets.iter().find(|t| t.name == name)
    }
}
