//! `predict` and `screen`: the library's estimates, domain verdicts and
//! probabilities of meeting requirements, as plain Python values.
//! Float columns travel as little-endian f64 bytes (one copy; the package
//! views them with `numpy.frombuffer`).

use std::path::PathBuf;

use mettle::predict::{to_column_units, RowPrediction};
use mettle::screen::{rank, read_costs, ProcessLimits, Requirement, Screening};
use pyo3::prelude::*;
use pyo3::types::{PyBytes, PyDict, PyList};

use crate::frame::{PyColumn, Source};
use crate::{to_py, RawModel};

fn f64_bytes<'py>(py: Python<'py>, values: impl Iterator<Item = f64>) -> Bound<'py, PyBytes> {
    let mut b = Vec::new();
    for v in values {
        b.extend_from_slice(&v.to_le_bytes());
    }
    PyBytes::new(py, &b)
}

fn requirements(list: &[String]) -> mettle::Result<Vec<Requirement>> {
    list.iter().map(|r| Requirement::parse(r)).collect()
}

/// Everything one prediction call computes.
struct Predicted {
    rows: Vec<RowPrediction>,
    /// Per requirement: its text and the probability of meeting it, per row.
    probabilities: Vec<(String, Vec<f64>)>,
    joint: Vec<f64>,
}

fn run_predict(
    model: &mettle::Model,
    src: Source,
    require: &[String],
    declared: bool,
) -> mettle::Result<Predicted> {
    let table = src.into_table()?;
    let reqs = requirements(require)?;
    let mut rows = model.predict(&table)?;
    if declared {
        to_column_units(&model.target_columns(true), &mut rows);
    }
    let mut probabilities = Vec::new();
    let mut joint = Vec::new();
    if !reqs.is_empty() {
        let models = std::slice::from_ref(model);
        let texts: Vec<String> = reqs.iter().map(|r| r.to_string()).collect();
        let screening = Screening::new(models, reqs, None, ProcessLimits::default())?;
        let cands = screening.evaluate(&table)?;
        for (k, text) in texts.into_iter().enumerate() {
            let p = cands
                .iter()
                .map(|c| c.requirements[k].probability)
                .collect();
            probabilities.push((text, p));
        }
        joint = cands.iter().map(|c| c.joint_probability).collect();
    }
    Ok(Predicted {
        rows,
        probabilities,
        joint,
    })
}

/// Estimates for every row: a dict with `targets` (per target its name,
/// unit, interval kind and the float columns as bytes), `in_domain`
/// (bytes, one 0/1 per row), `domain`, `notes` (per row, joined by `; `
/// as in the CSV estimate file), `requirements` and `joint`.
#[pyfunction]
#[pyo3(signature = (model, *, columns, path, source, require, declared_units))]
pub fn predict<'py>(
    py: Python<'py>,
    model: &Bound<'py, RawModel>,
    columns: Option<Vec<PyColumn>>,
    path: Option<PathBuf>,
    source: String,
    require: Vec<String>,
    declared_units: bool,
) -> PyResult<Bound<'py, PyDict>> {
    let m = &model.get().model;
    let src = Source::new(path, source, columns);
    let p = py
        .detach(|| run_predict(m, src, &require, declared_units))
        .map_err(|e| to_py(py, &e))?;
    let out = PyDict::new(py);
    let targets = PyList::empty(py);
    let kinds = m.target_columns(declared_units);
    for (k, c) in kinds.iter().enumerate() {
        let t = PyDict::new(py);
        t.set_item("name", &c.name)?;
        t.set_item("unit", c.unit.map(|u| u.symbol().to_string()))?;
        let kind = serde_json::to_value(c.kind)
            .ok()
            .and_then(|v| v.as_str().map(str::to_string));
        t.set_item("interval_kind", kind)?;
        let col = |f: fn(&mettle::predict::Estimate) -> f64| {
            f64_bytes(py, p.rows.iter().map(move |r| f(&r.estimates[k])))
        };
        t.set_item("mean", col(|e| e.mean))?;
        t.set_item("median", col(|e| e.median))?;
        t.set_item("sd", col(|e| e.sd))?;
        t.set_item("lo95", col(|e| e.lo95))?;
        t.set_item("hi95", col(|e| e.hi95))?;
        t.set_item("noise_sd", col(|e| e.noise_sd))?;
        t.set_item("model_sd", col(|e| e.model_sd))?;
        targets.append(t)?;
    }
    out.set_item("targets", targets)?;
    let in_domain: Vec<u8> = p.rows.iter().map(|r| u8::from(r.in_domain)).collect();
    out.set_item("in_domain", PyBytes::new(py, &in_domain))?;
    let domain: Vec<&str> = p.rows.iter().map(|r| r.level.name()).collect();
    out.set_item("domain", domain)?;
    let notes: Vec<String> = p.rows.iter().map(|r| r.notes.join("; ")).collect();
    out.set_item("notes", notes)?;
    let reqs = PyList::empty(py);
    for (text, probs) in &p.probabilities {
        reqs.append((text, f64_bytes(py, probs.iter().copied())))?;
    }
    out.set_item("requirements", reqs)?;
    out.set_item("joint", f64_bytes(py, p.joint.iter().copied()))?;
    Ok(out)
}

/// Screen candidates: every row judged against the requirements (and the
/// prices and limits of a cost file), returned in ranking order as dicts.
#[pyfunction]
#[pyo3(signature = (models, *, columns, path, source, require, costs, allow_out_of_domain))]
#[allow(clippy::too_many_arguments)]
pub fn screen<'py>(
    py: Python<'py>,
    models: Vec<Bound<'py, RawModel>>,
    columns: Option<Vec<PyColumn>>,
    path: Option<PathBuf>,
    source: String,
    require: Vec<String>,
    costs: Option<PathBuf>,
    allow_out_of_domain: bool,
) -> PyResult<Bound<'py, PyList>> {
    let models: Vec<mettle::Model> = models.iter().map(|m| m.get().model.clone()).collect();
    let src = Source::new(path, source, columns);
    let judged = py
        .detach(|| -> mettle::Result<_> {
            let table = src.into_table()?;
            let reqs = requirements(&require)?;
            let (cost, limits) = match &costs {
                Some(p) => {
                    let (c, l) = read_costs(p)?;
                    (Some(c), l)
                }
                None => (None, ProcessLimits::default()),
            };
            let currency = cost.as_ref().map(|c| c.currency.clone());
            let screening = Screening::new(&models, reqs, cost, limits)?;
            let cands = screening.evaluate(&table)?;
            let order = rank(&cands, allow_out_of_domain);
            Ok((cands, order, currency))
        })
        .map_err(|e| to_py(py, &e))?;
    let (cands, order, currency) = judged;
    let out = PyList::empty(py);
    for (place, &i) in order.iter().enumerate() {
        let c = &cands[i];
        let d = PyDict::new(py);
        d.set_item("rank", place + 1)?;
        d.set_item("row", c.row)?;
        d.set_item("eligible", c.eligible(allow_out_of_domain))?;
        d.set_item("joint_probability", c.joint_probability)?;
        let probs: Vec<f64> = c.requirements.iter().map(|r| r.probability).collect();
        d.set_item("probabilities", probs)?;
        let est = PyDict::new(py);
        for t in &c.estimates {
            let e = &t.estimate;
            est.set_item(&t.target, (e.mean, e.sd, e.lo95, e.hi95))?;
        }
        d.set_item("estimates", est)?;
        d.set_item("cost_per_tonne", c.cost_per_tonne)?;
        d.set_item("currency", currency.clone())?;
        d.set_item("carbon_equivalent", c.carbon_equivalent)?;
        let v: Vec<&str> = c.violations.iter().map(|v| v.text.as_str()).collect();
        d.set_item("violations", v.join("; "))?;
        d.set_item("in_domain", c.in_domain)?;
        d.set_item("domain", c.level.name())?;
        d.set_item("notes", c.notes.join("; "))?;
        out.append(d)?;
    }
    Ok(out)
}
