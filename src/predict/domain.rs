//! Is a query row inside what the training data cover? The checks live in
//! [`crate::domain`]; this is the model-level entry point.

use ndarray::{Array2, ArrayView1, ArrayView2, Axis};

use crate::domain::{
    self, range_excesses, range_note, DomainIndex, DomainLevel, DomainReference, DomainVerdict,
    UncertaintyRatio,
};
use crate::model::Model;
use crate::prec::{DOMAIN_QUERY_BLOCK, DOMAIN_RANGE_SLACK};
use crate::predict::ScalePrediction;

/// The range-only verdict for one row.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct DomainReport {
    /// False when any input lies beyond its range by more than the slack.
    pub in_domain: bool,
    /// One note per input outside its range, in plain words.
    pub notes: Vec<String>,
}

/// Check each input of `raw` (the row's raw values in model input order)
/// against its training range only (see [`Model::domain_check`] for the
/// full guard).
pub fn range_check(model: &Model, raw: ArrayView1<f64>) -> DomainReport {
    let ex = range_excesses(&model.inputs, raw);
    DomainReport {
        in_domain: ex.iter().all(|e| e.fraction <= DOMAIN_RANGE_SLACK),
        notes: ex.iter().map(range_note).collect(),
    }
}

impl Model {
    /// The unit each input's values are shown in by the domain notes: the
    /// unit the schema declares for the column when it differs from the
    /// internal unit the model works in (ppm for a column read in ppm and
    /// learnt in wt%), else `None` (as they are).
    pub fn input_note_units(&self) -> Vec<Option<crate::units::Unit>> {
        self.inputs
            .iter()
            .map(|inp| {
                let c = self.schema.as_ref()?.column(&inp.name)?;
                let declared = c.unit_or_1();
                (declared != c.internal_unit()).then_some(declared)
            })
            .collect()
    }

    /// The full domain guard for one row (raw values in model input
    /// order): range, joint domain and support. For many rows, use
    /// [`Model::domain_guard`].
    pub fn domain_check(&self, raw: ArrayView1<f64>) -> DomainVerdict {
        self.domain_guard().check(raw)
    }

    /// The full domain guard with the training reference laid out once,
    /// for checking many rows.
    pub fn domain_guard(&self) -> DomainGuard<'_> {
        DomainGuard {
            model: self,
            index: self.domain.as_ref().map(DomainReference::index),
        }
    }
}

/// [`Model::domain_check`] for many rows: the model and its indexed
/// training reference.
pub struct DomainGuard<'a> {
    model: &'a Model,
    index: Option<DomainIndex<'a>>,
}

impl DomainGuard<'_> {
    /// As [`Model::domain_check`].
    pub fn check(&self, raw: ArrayView1<f64>) -> DomainVerdict {
        self.check_many(raw.insert_axis(Axis(0))).remove(0)
    }

    /// The guard for every row of `raw` (rows × inputs, raw values in
    /// model input order), in order, the committees' model uncertainty
    /// estimated here; see [`DomainGuard::check_many_with`].
    pub fn check_many(&self, raw: ArrayView2<f64>) -> Vec<DomainVerdict> {
        let scaled = Array2::from_shape_fn(raw.dim(), |(i, j)| {
            self.model.inputs[j]
                .scaling
                .scale(raw[[i, j]])
                .unwrap_or(f64::NAN)
        });
        let learnt = self.model.predict_learnt_scale(&scaled);
        self.check_many_with(raw, &learnt)
    }

    /// The guard for every row of `raw` with the model's estimates on the
    /// learnt scale (per target, per row, [`Model::predict_learnt_scale`]):
    /// each row's committee model sd against its typical value on the
    /// training rows is part of the verdict. Blocks of
    /// [`DOMAIN_QUERY_BLOCK`] rows are spread over the cores.
    pub fn check_many_with(
        &self,
        raw: ArrayView2<f64>,
        learnt: &[Vec<ScalePrediction>],
    ) -> Vec<DomainVerdict> {
        self.check_many_shown(raw, learnt, &self.model.input_note_units())
    }

    /// As [`DomainGuard::check_many_with`], the notes showing each input's
    /// values in its entry of `units` (`None`: as they are).
    pub fn check_many_shown(
        &self,
        raw: ArrayView2<f64>,
        learnt: &[Vec<ScalePrediction>],
        units: &[Option<crate::units::Unit>],
    ) -> Vec<DomainVerdict> {
        use rayon::prelude::*;
        let uncertainty: Vec<Option<UncertaintyRatio>> = (0..raw.nrows())
            .map(|i| uncertainty_ratio(self.model, learnt, i))
            .collect();
        let blocks: Vec<Vec<DomainVerdict>> = raw
            .axis_chunks_iter(Axis(0), DOMAIN_QUERY_BLOCK)
            .zip(uncertainty.chunks(DOMAIN_QUERY_BLOCK))
            .collect::<Vec<_>>()
            .into_par_iter()
            .map(|(block, u)| {
                domain::check_many(&self.model.inputs, self.index.as_ref(), block, u, units)
            })
            .collect();
        let mut out: Vec<DomainVerdict> = blocks.into_iter().flatten().collect();
        if !self.model.codes.is_empty() {
            for (v, row) in out.iter_mut().zip(raw.outer_iter()) {
                let notes = level_notes(self.model, row);
                if !notes.is_empty() {
                    v.level = DomainLevel::Outside;
                    v.in_domain = false;
                    v.notes.extend(notes);
                }
            }
        }
        out
    }
}

/// The range check of a declared code: its indicator inputs in `raw`
/// (model input order) must spell one level seen in training (every
/// indicator 0 or 1, at most one at 1; all 0 is the level whose indicator
/// was set aside as implied by the others). A note per code that does
/// not; a code is never interpolated between levels. Rows read through the
/// schema always pass (unseen levels are refused before,
/// [`Model::refuse_unseen_levels`]); rows built by other paths (a sweep, a
/// design) are checked here.
pub fn level_notes(model: &Model, raw: ArrayView1<f64>) -> Vec<String> {
    let of = model.input_codes();
    let mut notes = Vec::new();
    for (k, code) in model.codes.iter().enumerate() {
        let cols: Vec<usize> = (0..of.len()).filter(|&j| of[j] == Some(k)).collect();
        let is = |j: usize, v: f64| raw[j].total_cmp(&v).is_eq();
        let ones = cols.iter().filter(|&&j| is(j, 1.0)).count();
        let all_01 = cols.iter().all(|&j| is(j, 0.0) || is(j, 1.0));
        let implied = code
            .levels
            .iter()
            .any(|l| l.training_rows > 0 && !model.inputs.iter().any(|i| i.name == l.column));
        if all_01 && (ones == 1 || (ones == 0 && implied)) {
            continue;
        }
        let values = cols
            .iter()
            .map(|&j| format!("{} = {}", model.inputs[j].name, domain::fmt_num(raw[j])))
            .collect::<Vec<_>>()
            .join(", ");
        notes.push(format!(
            "'{}' is a code: its indicators ({values}) spell none of the levels seen in training ({}); a code is not interpolated between levels",
            code.name,
            code.seen_text()
        ));
    }
    notes
}

/// Row `i`'s largest ratio, over the targets with a recorded typical value,
/// of the committee's model sd to its median on the training rows.
fn uncertainty_ratio(
    model: &Model,
    learnt: &[Vec<ScalePrediction>],
    i: usize,
) -> Option<UncertaintyRatio> {
    model
        .targets
        .iter()
        .zip(learnt)
        .filter_map(|(t, p)| {
            let typical = t.typical_committee_sd.filter(|v| *v > 0.0)?;
            let high = t.high_committee_sd.filter(|v| *v > 0.0)?;
            let sd = p.get(i)?.committee_sd;
            sd.is_finite().then(|| UncertaintyRatio {
                ratio: sd / typical,
                over_high: sd / high,
                target: t.name.clone(),
            })
        })
        .max_by(|a, b| a.over_high.total_cmp(&b.over_high))
}
