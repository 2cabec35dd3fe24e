//! Curves through the model: one input (or two) varied while the others are
//! held at a base heat ([`sweep`]), and Charpy transition curves with the
//! temperatures where they cross given energies ([`transition`]).
//!
//! Every point carries the domain guard's verdict ([`crate::domain`]) and
//! flags for physically impossible estimates, which are shown as computed,
//! never clipped.

use crate::fixedmath::FixedMath;
mod plot;
mod transition;

pub use plot::{effect_chart, sweep_map_svg, sweep_svg, transition_svg};
pub use transition::{crossing, transition, Crossing, Requirement, Transition, TransitionOptions};

use crate::committee::ONE_SD_SHARE;
use crate::data::Table;
use crate::domain::{physical_bound, DomainVerdict};
use crate::error::{Error, Result};
use crate::features::Transform;
use crate::model::Model;

/// One varied input: NAME=FROM:TO[:STEPS].
#[derive(Clone, Debug, PartialEq)]
pub struct Axis {
    /// Input (or raw column read through the model's schema).
    pub name: String,
    /// First value.
    pub from: f64,
    /// Last value.
    pub to: f64,
    /// Number of values, ends included (at least 2).
    pub steps: usize,
}

/// Steps of a 1-D sweep when none are given.
pub const DEFAULT_STEPS_1D: usize = 41;
/// Steps per axis of a 2-D map when none are given.
pub const DEFAULT_STEPS_2D: usize = 21;
/// Largest number of points a sweep evaluates.
pub const MAX_POINTS: usize = 250_000;

fn bad(name: &'static str, value: &str, expected: &str) -> Error {
    Error::InvalidParameter {
        name,
        value: value.to_string(),
        expected: expected.to_string(),
    }
}

impl Axis {
    /// Parse NAME=FROM:TO[:STEPS]; `default_steps` when STEPS is left out.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] naming the text and the expected form.
    pub fn parse(s: &str, default_steps: usize) -> Result<Axis> {
        let form = "NAME=FROM:TO[:STEPS], e.g. mn=0.5:1.8:27 (FROM ≠ TO, 2 ≤ STEPS ≤ 10000)";
        let (name, range) = s.split_once('=').ok_or_else(|| bad("vary", s, form))?;
        let parts: Vec<&str> = range.split(':').collect();
        if name.trim().is_empty() || !(2..=3).contains(&parts.len()) {
            return Err(bad("vary", s, form));
        }
        let num = |t: &str| t.trim().parse::<f64>().ok().filter(|v| v.is_finite());
        let (Some(from), Some(to)) = (num(parts[0]), num(parts[1])) else {
            return Err(bad("vary", s, form));
        };
        let steps = match parts.get(2) {
            None => default_steps,
            Some(t) => t.trim().parse().map_err(|_| bad("vary", s, form))?,
        };
        if !(2..=10_000).contains(&steps) || from.total_cmp(&to).is_eq() {
            return Err(bad("vary", s, form));
        }
        Ok(Axis {
            name: name.trim().to_string(),
            from,
            to,
            steps,
        })
    }

    /// The values, evenly spaced, ends included.
    pub fn values(&self) -> Vec<f64> {
        let n = self.steps - 1;
        (0..=n)
            .map(|i| self.from + (self.to - self.from) * i as f64 / n as f64)
            .collect()
    }
}

/// Parse NAME=VALUE.
///
/// # Errors
/// [`Error::InvalidParameter`] naming the text and the expected form.
pub fn parse_set(s: &str) -> Result<(String, f64)> {
    let form = "NAME=VALUE with a finite number, e.g. c=0.12";
    let (n, v) = s.split_once('=').ok_or_else(|| bad("set", s, form))?;
    let v: f64 = v
        .trim()
        .parse()
        .ok()
        .filter(|v: &f64| v.is_finite())
        .ok_or_else(|| bad("set", s, form))?;
    if n.trim().is_empty() {
        return Err(bad("set", s, form));
    }
    Ok((n.trim().to_string(), v))
}

/// The base heat: the first row of `base` (every numeric column), then the
/// `set` values on top; a model input still missing is held at the median
/// of its training values (for a model trained through a schema, the
/// schema decides what it needs). Returns the columns and one note per
/// input filled from the training median.
///
/// # Errors
/// [`Error::InvalidParameter`] for an empty base table.
pub fn base_row(model: &Model, base: Option<&Table>, set: &[(String, f64)]) -> Result<BaseRow> {
    let mut cols: Vec<(String, f64)> = Vec::new();
    if let Some(t) = base {
        if t.n_rows() == 0 {
            return Err(bad(
                "base",
                &t.label(),
                "a table with at least one row (its first row is the base heat)",
            ));
        }
        for name in t.names() {
            if let Ok(v) = t.numeric_optional(name) {
                if let Some(Some(x)) = v.first() {
                    cols.push((name.clone(), *x));
                }
            }
        }
    }
    for (n, v) in set {
        match cols.iter_mut().find(|c| &c.0 == n) {
            Some(c) => c.1 = *v,
            None => cols.push((n.clone(), *v)),
        }
    }
    let mut notes = Vec::new();
    if model.schema.is_none() {
        for (j, inp) in model.inputs.iter().enumerate() {
            if cols.iter().any(|c| c.0 == inp.name) {
                continue;
            }
            let v = training_median(model, j).unwrap_or(0.5 * (inp.min + inp.max));
            notes.push(format!(
                "{} held at {} (training median; not given in --base or --set)",
                inp.name,
                crate::domain::fmt_num(v)
            ));
            cols.push((inp.name.clone(), v));
        }
    }
    Ok((cols, notes))
}

/// The median training value of every input, in network order and
/// internal units (`None` for an input of an older model file without the
/// stored training reference): the heat a form starts from.
pub fn training_medians(model: &Model) -> Vec<(String, Option<f64>)> {
    model
        .inputs
        .iter()
        .enumerate()
        .map(|(j, i)| (i.name.clone(), training_median(model, j)))
        .collect()
}

/// Median of input `j`'s training values, from the stored training
/// reference (`None` for an older model file without it).
fn training_median(model: &Model, j: usize) -> Option<f64> {
    let r = model.domain.as_ref()?;
    let inp = model.inputs.get(j)?;
    let d = r.n_inputs;
    let mut v: Vec<f64> = r.scaled_rows.iter().skip(j).step_by(d).copied().collect();
    if v.is_empty() {
        return None;
    }
    v.sort_by(f64::total_cmp);
    let s = v[v.len() / 2];
    let z = inp.scaling.unscale_linear(s);
    Some(match inp.scaling.transform {
        Transform::Identity => z,
        Transform::Log => z.exp_fixed(),
    })
}

/// One target's estimate at one point, with 68 % and 95 % bands.
#[derive(Clone, Debug, PartialEq)]
pub struct Band {
    /// Predictive mean.
    pub mean: f64,
    /// Predictive median (the centre for a transformed target).
    pub median: f64,
    /// Predictive sd.
    pub sd: f64,
    /// Central 68 % interval (±1 sd on the learnt scale).
    pub lo68: f64,
    /// Upper end of the 68 % interval.
    pub hi68: f64,
    /// Central 95 % interval.
    pub lo95: f64,
    /// Upper end of the 95 % interval.
    pub hi95: f64,
    /// True when the centre is physically impossible (see notes).
    pub impossible: bool,
}

/// The base heat's columns and the notes on how it was filled in.
pub type BaseRow = (Vec<(String, f64)>, Vec<String>);

/// Per row: the bands, the guard's verdict and the notes.
pub type BandRow = (Vec<Band>, DomainVerdict, Vec<String>);

/// One point of a sweep.
#[derive(Clone, Debug, PartialEq)]
pub struct SweepPoint {
    /// The varied values, one per axis.
    pub at: Vec<f64>,
    /// One band per target, in model order.
    pub bands: Vec<Band>,
    /// The domain guard's verdict.
    pub verdict: DomainVerdict,
    /// Notes: the guard's, physically impossible estimates, derivations.
    pub notes: Vec<String>,
}

/// A sweep: the axes, the base heat and the points (the first axis
/// varying fastest).
#[derive(Clone, Debug, PartialEq)]
pub struct Sweep {
    /// The varied inputs.
    pub axes: Vec<Axis>,
    /// Target names.
    pub targets: Vec<String>,
    /// The base heat as given or filled in.
    pub base: Vec<(String, f64)>,
    /// Notes about the base heat.
    pub base_notes: Vec<String>,
    /// The points.
    pub points: Vec<SweepPoint>,
}

/// Estimates with bands and verdicts for the rows of `table` (read through
/// the model's schema when it has one).
///
/// # Errors
/// As [`Model::predict`].
pub fn band_rows(model: &Model, table: &Table) -> Result<Vec<BandRow>> {
    let (prepared, warnings) = model.read_through_schema(table, false)?;
    let (raw, scaled) = model.scaled_inputs(&prepared)?;
    let learnt = model.predict_learnt_scale(&scaled);
    // per target: the half-widths, in sds, of the central 95 % and 68.27 %
    // intervals of its shape
    let widths: Vec<(f64, f64)> = model
        .targets
        .iter()
        .map(|t| {
            let shape = t.committee.shape();
            (shape.quantile(0.975), shape.central_halfwidth(ONE_SD_SHARE))
        })
        .collect();
    let bounds: Vec<_> = model
        .targets
        .iter()
        .map(|t| physical_bound(model, &t.name))
        .collect();
    let verdicts = model.domain_guard().check_many_with(raw.view(), &learnt);
    let mut out: Vec<_> = (0..raw.nrows())
        .zip(verdicts)
        .map(|(i, verdict)| {
            let mut notes = verdict.notes.clone();
            let bands = model
                .targets
                .iter()
                .zip(&learnt)
                .zip(&bounds)
                .zip(&widths)
                .map(|(((t, p), b), &(q95, q68))| {
                    let p = p[i];
                    let e95 = t.transform.back_transform(p.mean, p.sd, p.noise_sd, q95);
                    let e68 = t.transform.back_transform(p.mean, p.sd, p.noise_sd, q68);
                    let note = b.as_ref().and_then(|b| b.note(&t.name, e95.median));
                    let impossible = note.is_some();
                    notes.extend(note);
                    Band {
                        mean: e95.mean,
                        median: e95.median,
                        sd: e95.sd,
                        lo68: e68.lo95,
                        hi68: e68.hi95,
                        lo95: e95.lo95,
                        hi95: e95.hi95,
                        impossible,
                    }
                })
                .collect();
            (bands, verdict, notes)
        })
        .collect();
    for w in warnings {
        if let Some(r) = out.get_mut(w.row) {
            r.2.push(w.message);
        }
    }
    Ok(out)
}

/// The grid of a sweep as a table: the base columns, the varied ones
/// overwritten (or added), the first axis varying fastest.
pub(crate) fn grid_table(base: &[(String, f64)], axes: &[Axis]) -> Result<(Table, Vec<Vec<f64>>)> {
    let vals: Vec<Vec<f64>> = axes.iter().map(Axis::values).collect();
    let n: usize = vals.iter().map(Vec::len).product();
    if n > MAX_POINTS {
        return Err(bad(
            "vary",
            &format!("{n} points"),
            &format!("at most {MAX_POINTS} points in all"),
        ));
    }
    let at: Vec<Vec<f64>> = (0..n)
        .map(|i| {
            let mut rest = i;
            vals.iter()
                .map(|v| {
                    let x = v[rest % v.len()];
                    rest /= v.len();
                    x
                })
                .collect()
        })
        .collect();
    let mut cols: Vec<(String, Vec<f64>)> = base
        .iter()
        .filter(|(name, _)| !axes.iter().any(|a| &a.name == name))
        .map(|(name, v)| (name.clone(), vec![*v; n]))
        .collect();
    for (k, a) in axes.iter().enumerate() {
        cols.push((a.name.clone(), at.iter().map(|p| p[k]).collect()));
    }
    Ok((Table::from_columns("sweep grid", cols)?, at))
}

/// Vary the inputs of `axes` (one or two) over their ranges with the other
/// inputs held at `base` (from [`base_row`]).
///
/// # Errors
/// [`Error::InvalidParameter`] for no axis, more than two, the same input
/// twice, or an axis that is neither a model input nor a column the
/// model's schema reads; otherwise as [`Model::predict`].
pub fn sweep(model: &Model, base: BaseRow, axes: &[Axis]) -> Result<Sweep> {
    if axes.is_empty() || axes.len() > 2 {
        return Err(bad(
            "vary",
            &format!("{} axes", axes.len()),
            "one --vary (a curve) or two (a map)",
        ));
    }
    if axes.len() == 2 && axes[0].name == axes[1].name {
        return Err(bad("vary", &axes[1].name, "two different inputs"));
    }
    for a in axes {
        model.refuse_moving_code(&a.name, "vary")?;
        let known = model.inputs.iter().any(|i| i.name == a.name)
            || model
                .schema
                .as_ref()
                .is_some_and(|s| s.column(&a.name).is_some());
        if !known {
            return Err(bad(
                "vary",
                &a.name,
                &format!("an input of the model: {}", model.input_names().join(", ")),
            ));
        }
    }
    let (table, at) = grid_table(&base.0, axes)?;
    let points = band_rows(model, &table)?
        .into_iter()
        .zip(at)
        .map(|((bands, verdict, notes), at)| SweepPoint {
            at,
            bands,
            verdict,
            notes,
        })
        .collect();
    Ok(Sweep {
        axes: axes.to_vec(),
        targets: model.targets.iter().map(|t| t.name.clone()).collect(),
        base: base.0,
        base_notes: base.1,
        points,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn vary_parses_with_and_without_steps() {
        let a = Axis::parse("mn=0.5:1.5:5", 41).expect("ok");
        assert_eq!(a.values(), vec![0.5, 0.75, 1.0, 1.25, 1.5]);
        assert_eq!(Axis::parse("t=-60:20", 41).expect("ok").steps, 41);
        for bad in [
            "mn", "mn=1", "mn=1:1", "mn=a:2", "=1:2", "mn=0:1:1", "mn=0:1:x",
        ] {
            assert!(Axis::parse(bad, 41).is_err(), "{bad}");
        }
        assert_eq!(parse_set("c=0.12").expect("ok"), ("c".to_string(), 0.12));
        assert!(parse_set("c=inf").is_err() && parse_set("c").is_err());
    }
}
