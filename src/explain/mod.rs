//! What a trained model knows about itself, in a form a person can check:
//! the model card (data fingerprint, inputs, noise level beside the
//! measured replicate scatter, committee members, input relevance), the
//! model's estimates on a table beside the measured values, the
//! calibration curve, and the comparison of two models.
//!
//! Nothing here prints; the CLI formats what these functions return.

mod calibration;
mod compare;
mod fit;
mod neighbours;
mod paired;

pub use crate::committee::{
    member_relevance, relevance, relevance_over, relevance_with_spread, RelevanceRange,
    RELEVANCE_MEANING,
};
pub use crate::model::{
    noise_profile, replicate_scatter, summarise_training, NoiseBin, NoiseProfile, NoiseSpread,
    ReplicateScatter, TrainingSummary, PROFILE_BINS,
};
pub use crate::predict::{estimate_rows, TargetRows};
pub use calibration::{calibration_curve, CalibrationPoint, CALIBRATION_LEVELS};
pub use compare::{compare, Comparison, Disagreement, TargetComparison};
pub use fit::fit_notes;
pub use neighbours::{Neighbour, TrainingEvidence};
pub use paired::{paired, PairedComparison, PairedFigure};

use serde::ser::SerializeMap;
use serde::{Serialize, Serializer};

use crate::committee::{TailShape, ONE_SD_SHARE};
use crate::data::schema::PrepareOptions;
use crate::data::{fingerprint, Table};
use crate::error::{Error, Result};
use crate::features::Transform;
use crate::model::{Model, TargetModel};
use crate::predict::{z975, Estimate};
use crate::units::Unit;

/// One input on the model card.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct InputCard {
    /// Column name.
    pub name: String,
    /// Unit of `min` and `max` (`None`: as in the training file).
    pub unit: Option<String>,
    /// Smallest training value.
    pub min: f64,
    /// Largest training value.
    pub max: f64,
    /// True when the networks see the input through its logarithm.
    pub log_scale: bool,
}

/// One committee member on the model card.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct MemberCard {
    /// Hidden units (0 = linear).
    pub n_hidden: usize,
    /// Restart of that hidden-unit count.
    pub restart: usize,
    /// Log evidence of the refitted network (scaled units).
    pub log_evidence: f64,
    /// Held-out NLPD of the candidate (target units, nats per point).
    pub heldout_nlpd: f64,
    /// Effective number of well-determined parameters γ.
    pub gamma: f64,
    /// Weights in the network.
    pub n_weights: usize,
    /// True when its noise level varies with the inputs.
    pub varying_noise: bool,
    /// Its partition (1-based), only when the model averages several
    /// (`--partitions`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub partition: Option<usize>,
}

/// One partition of a model that averages several whole trainings
/// (`--partitions`), on the model card.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct PartitionCard {
    /// Partition, 1-based (partition p was trained with seed `seed + p − 1`).
    pub partition: usize,
    /// Its committee's members.
    pub n_members: usize,
    /// Held-out NLPD of its chosen committee (its own held-out part).
    pub heldout_nlpd: f64,
    /// Whether its noise varies with the inputs.
    pub noise_varies: bool,
    /// Whether it kriges its residuals.
    pub kriged: bool,
    /// Its share of gross errors, when it has one.
    pub gross_share: Option<f64>,
    /// Degrees of freedom of its Student-t shape (None: Gaussian).
    pub tail_dof: Option<f64>,
}

/// Input relevance: an object input → value in JSON, in input order.
#[derive(Clone, Debug, PartialEq)]
pub struct Relevance(pub Vec<(String, f64)>);

impl Relevance {
    /// Inputs from most to least relevant.
    pub fn ranked(&self) -> Vec<(String, f64)> {
        let mut v = self.0.clone();
        v.sort_by(|a, b| b.1.total_cmp(&a.1));
        v
    }
}

impl Serialize for Relevance {
    fn serialize<S: Serializer>(&self, s: S) -> std::result::Result<S::Ok, S::Error> {
        let mut map = s.serialize_map(Some(self.0.len()))?;
        for (k, v) in &self.0 {
            map.serialize_entry(k, v)?;
        }
        map.end()
    }
}

/// Relevance per column of the table for a model with declared codes:
/// a quantity's relevance as it is, a code's the sum R_code = Σ_l R_l over
/// its indicator inputs (one figure per declared input, issue 29's fourth
/// round; the sum bounds how much the networks use the code as a whole,
/// on the same most-relevant-input = 1 scale). Codes take the place of
/// their first indicator. `None` for a model without codes.
pub fn relevance_by_column(model: &Model, r: &Relevance) -> Option<Relevance> {
    if model.codes.is_empty() {
        return None;
    }
    let mut out: Vec<(String, f64)> = Vec::new();
    for (name, v) in &r.0 {
        let key = match model.code_of_input(name) {
            Some((code, _)) => code.name.clone(),
            None => name.clone(),
        };
        match out.iter_mut().find(|(k, _)| *k == key) {
            Some(e) => e.1 += v,
            None => out.push((key, *v)),
        }
    }
    Some(Relevance(out))
}

/// The noise profile as shown on the card: the input named.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct NoiseProfileCard {
    /// The input along which the noise sd is shown.
    pub input: String,
    /// Its unit, when known.
    pub input_unit: Option<String>,
    /// Bins from the smallest to the largest input value.
    pub bins: Vec<NoiseBin>,
}

/// One target on the model card.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct TargetCard {
    /// Column name.
    pub name: String,
    /// Unit of every level and spread of this target (`None`: as in the
    /// training file).
    pub unit: Option<String>,
    /// Scale the target is learnt on: none, log or bounded.
    pub scale: String,
    /// Rows used.
    pub n_rows: usize,
    /// Rows left out because this target was missing.
    pub n_missing: usize,
    /// Smallest training value.
    pub min: f64,
    /// Largest training value.
    pub max: f64,
    /// Typical fitted noise sd (target units): the median over the
    /// training rows.
    pub noise_sd: f64,
    /// Smallest and largest noise sd over the training rows; equal under
    /// constant noise on an untransformed target.
    pub noise_sd_range: (f64, f64),
    /// True when the noise level varies with the inputs.
    pub noise_varies: bool,
    /// Where `noise_sd` comes from, in words.
    pub noise_basis: String,
    /// Measured replicate scatter of the training rows (pooled sd of
    /// repeat tests), when there were repeat tests.
    pub replicate_sd: Option<ReplicateScatter>,
    /// The fitted noise sd along the most relevant input, bin by bin, with
    /// the replicate scatter of each bin's repeat tests (absent in model
    /// files written before it was recorded).
    pub noise_profile: Option<NoiseProfileCard>,
    /// Committee members.
    pub members: Vec<MemberCard>,
    /// Input relevance, most relevant = 1; `None` without ARD.
    pub relevance: Option<Relevance>,
    /// Relevance with its smallest and largest value over the committee
    /// members, on the committee's scale; `None` without ARD.
    pub relevance_range: Option<Vec<RelevanceRange>>,
    /// For a model with inputs declared as codes: relevance per column of
    /// the table, each code's indicator relevances summed into one figure
    /// named by the code ([`relevance_by_column`]); absent otherwise.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub relevance_by_column: Option<Relevance>,
    /// What relevance means and what it does not.
    pub relevance_note: String,
    /// Plain notes on likely overfitting or underfitting (empty when
    /// nothing is flagged).
    pub fit_notes: Vec<String>,
    /// Rows in the search's training and held-out parts.
    pub search_rows: (usize, usize),
    /// Hidden-unit range searched.
    pub hidden_searched: (usize, usize),
    /// Candidates tried and candidates discarded (failed to train).
    pub candidates: (usize, usize),
    /// Candidates the search stopped early at a rung (successive halving):
    /// tried, not discarded, but not trained to the end.
    pub stopped_early: usize,
    /// Held-out NLPD of the committee of the best n candidates, n = 1, 2, …
    pub nlpd_by_size: Vec<f64>,
    /// The residual process, when the committee kriges its residuals.
    pub kriging: Option<KrigingCard>,
    /// The share of gross errors, when the model has one.
    pub gross_errors: Option<GrossErrorCard>,
    /// With several partitions (`--partitions`): each one's committee, and
    /// the variance rule (its name; under `correlated` with its ρ,
    /// "correlated, rho 0.5"); the search, process and gross-error figures
    /// above are then partition 1's, the members and relevance all
    /// partitions'.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub partitions: Option<(String, Vec<PartitionCard>)>,
}

/// The share of gross errors on the model card (docs/method.md §6b).
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct GrossErrorCard {
    /// Share π of measured values taken as gross errors.
    pub share: f64,
    /// Held-out rows π was estimated from.
    pub n_heldout: usize,
    /// Held-out NLPD of the Gaussian alone (target units, or the learnt
    /// scale's).
    pub heldout_nlpd_gaussian: f64,
    /// Held-out NLPD with the gross-error part.
    pub heldout_nlpd: f64,
    /// Rows' worth of weight the final refit gave the gross-error part, of
    /// `n_rows` training rows (None before model format 5).
    pub refit_gross_rows: Option<f64>,
    /// Training rows of the final refit.
    pub n_rows: usize,
    /// Members whose refit with the share failed (they kept the Gaussian
    /// refit), each with the reason: the list the model file holds.
    pub refit_fallbacks: Vec<String>,
    /// ν of the Student-t shape chosen on the held-out part (None:
    /// Gaussian).
    pub tail_dof: Option<f64>,
    /// True when the share of gross errors was estimated (false: only the
    /// shape was chosen, the share held at 0).
    pub share_estimated: bool,
}

impl GrossErrorCard {
    /// One or two sentences on the share and the shape, for text and HTML.
    pub fn sentence(&self) -> String {
        let shape = match self.tail_dof {
            None => " Error shape: Gaussian.".to_string(),
            Some(nu) => {
                let s = TailShape::new(Some(nu));
                format!(
                    " Error shape: the held-out rows favour a Student-t with {nu} degrees of freedom over the Gaussian — tests scatter with a narrower peak and longer tails than a Gaussian of the same sd — so the central 68 % interval is ±{:.2} sd and the central 95 % interval ±{:.2} sd.",
                    s.central_halfwidth(ONE_SD_SHARE),
                    s.quantile(0.975)
                )
            }
        };
        if !self.share_estimated {
            return format!(
                "{} (held-out NLPD {:.3}, {:.3} with the Gaussian).",
                shape.trim_start().trim_end_matches('.'),
                self.heldout_nlpd,
                self.heldout_nlpd_gaussian
            );
        }
        // at the posterior mode π = (k + 1)/(N + 2), k the expected count
        let k = (self.share * (self.n_heldout as f64 + 2.0) - 1.0).max(0.0);
        let refit = self.refit_gross_rows.map_or(String::new(), |rows| {
            format!(
                " The networks were refitted on all {} training rows with this share: {rows:.1} rows' worth of weight went to the gross-error part, so those rows neither pulled the estimates nor widened the noise level.",
                self.n_rows
            )
        }) + &match self.refit_fallbacks.len() {
            0 => String::new(),
            k => format!(" {k} member(s) could not be refitted with the share and kept the refit with the Gaussian likelihood (the model file records why)."),
        };
        format!(
            "Gross errors: about {:.1} % of tests are expected to be values unrelated to the inputs (results keyed to the wrong heat, copying slips, or scatter with heavier tails than a Gaussian): {:.1} of the {} held-out rows look like them, and a share is kept even when none does, since clean rows do not show that the next test cannot be a blunder (held-out NLPD {:.3}, {:.3} with the Gaussian alone).{refit}{shape} Error bars, intervals and probabilities of meeting a requirement describe a test free of gross error.",
            100.0 * self.share,
            k,
            self.n_heldout,
            self.heldout_nlpd,
            self.heldout_nlpd_gaussian
        )
    }
}

impl KrigingCard {
    /// One sentence on the process, for text and HTML.
    pub fn sentence(&self) -> String {
        let nlpd = match (self.heldout_nlpd_with, self.heldout_nlpd_without) {
            (Some(a), Some(b)) => format!(" Held-out NLPD {a:.3} with it, {b:.3} without."),
            _ => String::new(),
        };
        let mut ls: Vec<&(String, f64)> = self.length_scales.iter().collect();
        ls.sort_by(|a, b| a.1.total_cmp(&b.1));
        let ls: Vec<String> = ls.iter().map(|(n, l)| format!("{n} {l:.2}")).collect();
        format!(
            "Residuals kriged over {} training rows: {:.0} % of the noise variance is shared between rows close in the inputs, the rest is scatter of single tests. Length scales, as shares of each input's training range (short = the shared residual changes quickly along it): {}.{nlpd} Next to training rows the estimate follows their residuals; far from them it is the committee's.",
            self.n_rows,
            100.0 * self.correlated_share,
            ls.join(", ")
        )
    }
}

/// The residual process on the model card.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct KrigingCard {
    /// Training rows the process holds.
    pub n_rows: usize,
    /// Share f of the committee's noise variance that is correlated over
    /// the inputs (the rest stays uncorrelated scatter).
    pub correlated_share: f64,
    /// Length scale of each input as a share of its training range: small
    /// means the shared residuals change quickly along that input.
    pub length_scales: Vec<(String, f64)>,
    /// Held-out NLPD with the process (fitted on the training part).
    pub heldout_nlpd_with: Option<f64>,
    /// Held-out NLPD of the committee alone.
    pub heldout_nlpd_without: Option<f64>,
}

/// The model card.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct ModelCard {
    /// Training file name.
    pub data_file: String,
    /// SHA-256 fingerprint of the training rows.
    pub data_sha256: String,
    /// Rows in the training table.
    pub n_rows: usize,
    /// mettle version that trained the model.
    pub tool_version: String,
    /// Seed of the training.
    pub seed: u64,
    /// Inputs in network order.
    pub inputs: Vec<InputCard>,
    /// Inputs offered but set aside, with the reason.
    pub set_aside: Vec<(String, String)>,
    /// One card per target.
    pub targets: Vec<TargetCard>,
}

/// The unit an input's values are in once read (internal unit of its
/// quantity for a model with a schema; `None` without one).
pub fn input_unit(model: &Model, name: &str) -> Option<Unit> {
    let s = model.schema.as_ref()?;
    s.declared_unit(name)
        .map(|u| Unit::internal_for(u.quantity()))
}

/// The unit of a model's input or target on charts: the schema's (the
/// internal unit of the declared quantity, as predictions are reported),
/// else the one the column name's suffix spells
/// ([`Unit::from_column_suffix`]), else `None`.
pub fn chart_unit(model: &Model, name: &str) -> Option<Unit> {
    input_unit(model, name)
        .or_else(|| model.target_unit(name, false))
        .or_else(|| Unit::from_column_suffix(name))
}

/// An axis label with the unit: `ni_wt (wt%)`; see [`chart_unit`].
pub fn chart_label(model: &Model, name: &str) -> String {
    label(name, chart_unit(model, name))
}

/// How a target is learnt, in words: `as it is`, `on the log scale`.
pub fn scale_words(scale: &str) -> String {
    match scale {
        "none" => "as it is".into(),
        other => format!("on the {other} scale"),
    }
}

/// An axis or column label: the name and, when known, its unit.
pub fn label(name: &str, unit: Option<Unit>) -> String {
    match unit {
        Some(u) if !u.symbol().is_empty() => format!("{name} ({})", u.symbol()),
        Some(_) => format!("{name} (dimensionless)"),
        None => format!("{name} (unit of the training file)"),
    }
}

/// The noise sd, its range and where it comes from, in target units.
fn noise_of(t: &TargetModel) -> (f64, (f64, f64), String) {
    let varies = t.committee.selection.noise.varying;
    match &t.training_summary {
        Some(s) => (
            s.noise_sd.median,
            (s.noise_sd.min, s.noise_sd.max),
            if varies {
                "median over the training rows of the noise sd, which varies with the inputs".into()
            } else if t.transform.is_identity() {
                "constant noise sd of the committee".into()
            } else {
                format!(
                    "median over the training rows; constant on the {} scale the target is learnt on",
                    t.transform.name()
                )
            },
        ),
        None => {
            // file written before the training summary existed: the
            // members' mean 1/√β at the middle of the learnt range
            let c = &t.committee;
            let sd = c.members.iter().map(|m| m.noise_sd()).sum::<f64>() / c.members.len() as f64
                * t.scaling.width();
            let e = t
                .transform
                .back_transform(t.scaling.unscale_linear(0.0), sd, sd, z975());
            (
                e.noise_sd,
                (e.noise_sd, e.noise_sd),
                "members' mean noise sd at the middle of the training range (this model file does not record the training rows' noise levels)".into(),
            )
        }
    }
}

/// The model card of `model`.
pub fn model_card(model: &Model) -> ModelCard {
    let inputs = model
        .inputs
        .iter()
        .map(|i| InputCard {
            name: i.name.clone(),
            unit: input_unit(model, &i.name).map(|u| u.symbol().to_string()),
            min: i.min,
            max: i.max,
            log_scale: i.scaling.transform == Transform::Log,
        })
        .collect();
    let targets = model
        .targets
        .iter()
        .map(|t| {
            let c = &t.committee;
            let (noise_sd, noise_sd_range, noise_basis) = noise_of(t);
            let several = c.n_partitions() > 1;
            let members = c
                .all_members()
                .map(|(p, m)| MemberCard {
                    n_hidden: m.n_hidden,
                    restart: m.restart,
                    log_evidence: m.log_evidence,
                    heldout_nlpd: m.heldout_nlpd,
                    gamma: m.gamma.iter().sum(),
                    n_weights: m.weights.len(),
                    varying_noise: m.noise.is_some(),
                    partition: several.then_some(p + 1),
                })
                .collect();
            let partitions = several.then(|| {
                let cards = c
                    .partitions()
                    .enumerate()
                    .map(|(p, pc)| PartitionCard {
                        partition: p + 1,
                        n_members: pc.members.len(),
                        heldout_nlpd: pc.selection.nlpd_by_size
                            [pc.selection.n_members.saturating_sub(1)],
                        noise_varies: pc.selection.noise.varying,
                        kriged: pc.kriging.is_some(),
                        gross_share: pc.gross_errors.as_ref().map(|g| g.share),
                        tail_dof: pc.gross_errors.as_ref().and_then(|g| g.tail_dof),
                    })
                    .collect();
                (c.partition_rule().label(), cards)
            });
            let relevance = relevance(c).map(|r| {
                Relevance(
                    model
                        .inputs
                        .iter()
                        .zip(r)
                        .map(|(i, v)| (i.name.clone(), v))
                        .collect(),
                )
            });
            TargetCard {
                name: t.name.clone(),
                unit: model
                    .target_unit(&t.name, false)
                    .map(|u| u.symbol().to_string()),
                scale: t.transform.name().to_string(),
                n_rows: t.n_rows,
                n_missing: t.n_missing,
                min: t.min,
                max: t.max,
                noise_sd,
                noise_sd_range,
                noise_varies: c.selection.noise.varying,
                kriging: c.kriging.as_ref().map(|k| KrigingCard {
                    n_rows: k.x.nrows(),
                    correlated_share: 1.0 - k.noise_factor,
                    length_scales: model
                        .inputs
                        .iter()
                        .zip(&k.length_scales)
                        .map(|(i, l)| (i.name.clone(), *l))
                        .collect(),
                    heldout_nlpd_with: c.selection.kriging.kriging_nlpd,
                    heldout_nlpd_without: c.selection.kriging.committee_nlpd,
                }),
                gross_errors: c.gross_errors.as_ref().map(|g| GrossErrorCard {
                    share: g.share,
                    n_heldout: g.n_heldout,
                    heldout_nlpd_gaussian: g.heldout_nlpd_gaussian,
                    heldout_nlpd: g.heldout_nlpd,
                    refit_gross_rows: g.refit_gross_rows,
                    n_rows: t.n_rows,
                    refit_fallbacks: g.refit_fallbacks.clone(),
                    tail_dof: g.tail_dof,
                    // files before format 6 have no heavy_tails setting
                    // (read as false): their part is always the share's
                    share_estimated: model.training.settings.gross_errors
                        || !model.training.settings.heavy_tails,
                }),
                noise_basis,
                replicate_sd: t
                    .training_summary
                    .as_ref()
                    .and_then(|s| s.replicates.clone()),
                noise_profile: t
                    .training_summary
                    .as_ref()
                    .and_then(|s| s.noise_profile.as_ref())
                    .and_then(|p| {
                        let input = model.inputs.get(p.input)?;
                        Some(NoiseProfileCard {
                            input: input.name.clone(),
                            input_unit: input_unit(model, &input.name)
                                .map(|u| u.symbol().to_string()),
                            bins: p.bins.clone(),
                        })
                    }),
                members,
                relevance_note: if relevance.is_some() {
                    RELEVANCE_MEANING.to_string()
                } else {
                    "no relevance: the model was trained with one α for all inputs (--no-ard)"
                        .to_string()
                },
                relevance_by_column: relevance
                    .as_ref()
                    .and_then(|r| relevance_by_column(model, r)),
                relevance,
                relevance_range: relevance_with_spread(c).map(|v| {
                    model
                        .inputs
                        .iter()
                        .zip(v)
                        .map(|(i, (value, low, high))| RelevanceRange {
                            input: i.name.clone(),
                            value,
                            low,
                            high,
                        })
                        .collect()
                }),
                fit_notes: fit_notes(t),
                search_rows: (c.selection.n_train_part, c.selection.n_heldout),
                hidden_searched: c.selection.hidden_searched,
                candidates: (
                    c.candidates.len(),
                    c.candidates.iter().filter(|k| k.failure.is_some()).count(),
                ),
                stopped_early: c.candidates.iter().filter(|k| k.stopped.is_some()).count(),
                nlpd_by_size: c.selection.nlpd_by_size.clone(),
                partitions,
            }
        })
        .collect();
    ModelCard {
        data_file: model.training.data_file.clone(),
        data_sha256: model.training.data_sha256.clone(),
        n_rows: model.training.n_rows,
        tool_version: model.tool_version.clone(),
        seed: model.training.settings.seed,
        inputs,
        set_aside: model
            .set_aside
            .iter()
            .map(|s| (s.name.clone(), s.reason.clone()))
            .collect(),
        targets,
    }
}

/// What the model card and the report read from a target's rows beside
/// its estimates ([`TargetRows`] and [`estimate_rows`] are `predict`'s).
impl TargetRows {
    /// The calibration curve over the rows.
    pub fn calibration(&self) -> Vec<CalibrationPoint> {
        calibration_curve(&self.z_measured, &self.z_mean, &self.z_sd, self.shape())
    }

    /// The shape of the scatter the model gives a test free of gross error.
    pub fn shape(&self) -> TailShape {
        self.gross.map_or(TailShape::new(None), |g| g.shape)
    }

    /// Share of tests free of gross error expected more than `limit` sds
    /// from their estimate by chance: 2·(1 − F(limit)), F the shape's
    /// distribution function (0.0124 for the Gaussian at 2.5 sd).
    pub fn expected_share_beyond(&self, limit: f64) -> f64 {
        2.0 * (1.0 - self.shape().cdf(limit))
    }

    /// Rows whose measured value lies more than `limit` predictive sds from
    /// the estimate, on the scale the target is learnt on, largest first:
    /// heats that look out of line with the rest of the data.
    pub fn out_of_line(&self, limit: f64) -> Vec<OutOfLine> {
        let mut found: Vec<OutOfLine> = (0..self.rows.len())
            .filter_map(|k| {
                let z = (self.z_measured[k] - self.z_mean[k]) / self.z_sd[k];
                (z.abs() > limit).then(|| OutOfLine {
                    row: self.rows[k] + 1,
                    measured: self.measured[k],
                    estimate: self.estimates[k].clone(),
                    z,
                    in_domain: self.in_domain[k],
                    gross_error_probability: self
                        .gross
                        .map(|g| g.probability(self.z_measured[k], self.z_mean[k], self.z_sd[k])),
                })
            })
            .collect();
        found.sort_by(|a, b| b.z.abs().total_cmp(&a.z.abs()).then(a.row.cmp(&b.row)));
        found
    }
}

/// A measured value far from its estimate.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct OutOfLine {
    /// Row of the table (1-based, header not counted).
    pub row: usize,
    /// Measured value (target units).
    pub measured: f64,
    /// The estimate (target units).
    pub estimate: Estimate,
    /// Standardised residual (measured − mean)/sd on the learnt scale.
    pub z: f64,
    /// Whether the row lies in the training domain.
    pub in_domain: bool,
    /// Probability that the measured value is a gross error (a value
    /// unrelated to the inputs), for a model with a share of them.
    pub gross_error_probability: Option<f64>,
}

/// The training-data fingerprint of `table` as the model's training
/// computed it (inputs then targets, values as read through the model's
/// schema, rows left out at training left out again). Equal to
/// `model.training.data_sha256` exactly when `table` holds the training
/// rows.
///
/// # Errors
/// As [`Model::evaluate`] reading the table.
pub fn data_fingerprint(model: &Model, table: &Table) -> Result<String> {
    let prepared = match &model.schema {
        None => table.clone(),
        Some(schema) => {
            schema
                .prepare(
                    table,
                    "stored in the model",
                    PrepareOptions {
                        need_targets: true,
                        drop_incomplete_rows: !model.training.incomplete_rows_dropped.is_empty(),
                    },
                )?
                .table
        }
    };
    let mut names: Vec<&str> = model.input_names();
    names.extend(model.targets.iter().map(|t| t.name.as_str()));
    let mut cols: Vec<Vec<Option<f64>>> = Vec::new();
    for name in &names {
        cols.push(prepared.numeric_optional(name)?);
    }
    let slices: Vec<&[Option<f64>]> = cols.iter().map(|c| c.as_slice()).collect();
    Ok(fingerprint(&names, &slices))
}

/// Check that `table` holds the model's training rows.
///
/// # Errors
/// [`Error::NotTrainingData`] when its fingerprint differs; as
/// [`data_fingerprint`].
pub fn check_training_data(model: &Model, table: &Table) -> Result<()> {
    let found = data_fingerprint(model, table)?;
    if found != model.training.data_sha256 {
        return Err(Error::NotTrainingData {
            path: table.source().display().to_string(),
            found,
            expected: model.training.data_sha256.clone(),
            data_file: model.training.data_file.clone(),
        });
    }
    Ok(())
}
