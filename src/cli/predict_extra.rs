//! `mettle predict --require` and `--neighbours`: the probability that
//! each row meets each requirement and all of them (the computation of
//! `mettle screen`, [`mettle::screen::Screening`]), and the nearest
//! training rows ([`mettle::explain::TrainingEvidence`]). Appended to the
//! estimate file as extra columns, or printed as blocks below the table.

use std::path::Path;

use anyhow::Context;
use mettle::data::cells::Cell;
use mettle::data::Table;
use mettle::explain::{Neighbour, TrainingEvidence};
use mettle::predict::{ExtraCells, FullPrediction};
use mettle::screen::{Candidate, ProcessLimits, Requirement, Screening};
use mettle::units::Unit;
use mettle::Model;
use serde_json::{json, Map, Value};

use super::output::{aligned, num};

/// What `predict` adds to its estimates.
pub struct Extras<'m> {
    model: &'m Model,
    screening: Option<Screening<'m>>,
    evidence: Option<(TrainingEvidence, usize)>,
    /// Unit measured values are shown in, per target (`None`: internal).
    units: Vec<Option<Unit>>,
}

/// The extras of one batch of rows.
pub struct BatchExtras {
    candidates: Vec<Candidate>,
    neighbours: Vec<Vec<Neighbour>>,
}

impl<'m> Extras<'m> {
    /// From the options; `None` when neither --require nor --neighbours
    /// is given.
    pub fn new(
        model: &'m Model,
        require: &[String],
        neighbours: Option<usize>,
        training_data: Option<&Path>,
        declared: bool,
    ) -> anyhow::Result<Option<Extras<'m>>> {
        let screening = if require.is_empty() {
            None
        } else {
            let reqs = require
                .iter()
                .map(|r| Requirement::parse(r))
                .collect::<mettle::Result<Vec<_>>>()?;
            Some(Screening::new(
                std::slice::from_ref(model),
                reqs,
                None,
                ProcessLimits::default(),
            )?)
        };
        let evidence = match (neighbours, training_data) {
            (None, None) => None,
            (None, Some(_)) => anyhow::bail!(
                "--training-data is read only for --neighbours K (the nearest training rows)"
            ),
            (Some(_), None) => anyhow::bail!(
                "--neighbours needs --training-data FILE, the model's own training table: the \
                 model file keeps no identifiers or measured values of its training rows"
            ),
            (Some(k), Some(path)) => {
                let t = Table::read(path)?;
                let e = TrainingEvidence::new(model, &t)
                    .with_context(|| format!("reading the training rows of {}", path.display()))?;
                Some((e, k))
            }
        };
        if screening.is_none() && evidence.is_none() {
            return Ok(None);
        }
        let units = model
            .targets
            .iter()
            .map(|t| declared.then(|| model.target_unit(&t.name, true)).flatten())
            .collect();
        Ok(Some(Extras {
            model,
            screening,
            evidence,
            units,
        }))
    }

    /// The extras of the rows of `table`, whose predictions are `full`.
    pub fn batch(&self, table: &Table, full: &FullPrediction) -> anyhow::Result<BatchExtras> {
        let candidates = match &self.screening {
            Some(s) => s.evaluate_with(table, std::slice::from_ref(full))?,
            None => Vec::new(),
        };
        let neighbours = match &self.evidence {
            Some((e, k)) => e.nearest(&full.scaled, *k),
            None => Vec::new(),
        };
        Ok(BatchExtras {
            candidates,
            neighbours,
        })
    }

    fn measured(&self, t: usize, v: Option<f64>) -> Option<f64> {
        v.map(|x| self.units[t].map_or(x, |u| u.from_internal(x)))
    }

    /// Names of the extra columns (CSV and workbook).
    pub fn column_names(&self) -> Vec<String> {
        let mut h = Vec::new();
        if let Some(s) = &self.screening {
            h.extend(s.requirements().iter().map(|r| format!("P({r})")));
            h.extend(["P_all", "P_all_se", "joint"].map(String::from));
        }
        if let Some((e, k)) = &self.evidence {
            for n in 1..=(*k).min(e.n_rows()) {
                h.push(format!("nb{n}_row"));
                if e.has_ids() {
                    h.push(format!("nb{n}_id"));
                }
                h.push(format!("nb{n}_distance"));
                for t in &self.model.targets {
                    h.push(format!("nb{n}_{}", t.name));
                }
            }
        }
        h
    }

    /// The extra cells of each row of a batch.
    pub fn cells(&self, b: &BatchExtras) -> Vec<ExtraCells> {
        let n = b.candidates.len().max(b.neighbours.len());
        let opt = |v: Option<f64>| v.map_or(Cell::Empty, Cell::Num);
        (0..n)
            .map(|i| {
                let mut x = ExtraCells::default();
                if let (Some(s), Some(c)) = (&self.screening, b.candidates.get(i)) {
                    x.cells
                        .extend(c.requirements.iter().map(|o| Cell::Num(o.probability)));
                    x.cells.push(Cell::Num(c.joint_probability));
                    x.cells.push(opt(c.joint_mc_error));
                    x.cells.push(Cell::Text(s.joint_basis().name().into()));
                    let reqs: Vec<Value> = c
                        .requirements
                        .iter()
                        .map(
                            |o| json!({"requirement": o.requirement, "probability": o.probability}),
                        )
                        .collect();
                    x.json.push(("requirements".into(), Value::Array(reqs)));
                    x.json.push(("P_all".into(), json!(c.joint_probability)));
                    if let Some(se) = c.joint_mc_error {
                        x.json.push(("P_all_se".into(), json!(se)));
                    }
                    x.json.push(("joint".into(), json!(s.joint_basis().name())));
                }
                if let (Some((e, _)), Some(list)) = (&self.evidence, b.neighbours.get(i)) {
                    let mut arr = Vec::new();
                    for nb in list {
                        x.cells.push(Cell::Int(nb.row));
                        if e.has_ids() {
                            x.cells.push(Cell::Text(nb.id.clone().unwrap_or_default()));
                        }
                        x.cells.push(Cell::Num(nb.distance));
                        let mut m = Map::new();
                        for (t, (target, v)) in
                            self.model.targets.iter().zip(&nb.measured).enumerate()
                        {
                            let v = self.measured(t, *v);
                            x.cells.push(opt(v));
                            m.insert(target.name.clone(), json!(v));
                        }
                        arr.push(json!({"row": nb.row, "id": nb.id, "distance": nb.distance,
                            "measured": m}));
                    }
                    x.json.push(("neighbours".into(), Value::Array(arr)));
                }
                x
            })
            .collect()
    }

    /// The blocks printed below the estimates table, for every row
    /// (`first` is the data row of the file before each batch's first).
    pub fn table_blocks(&self, batches: &[(usize, BatchExtras)]) -> String {
        let mut out = String::new();
        if let Some(s) = &self.screening {
            out.push_str("\nprobability of meeting the requirements (thresholds in the units of the estimates without --units):\n");
            for (k, r) in s.requirements().iter().enumerate() {
                out.push_str(&format!("  P{} = P({r})\n", k + 1));
            }
            out.push_str(&format!(
                "  P_all: every requirement; joint ({}): {}\n",
                s.joint_basis().name(),
                s.joint_statement()
            ));
            let mut h = vec!["row".to_string()];
            h.extend((1..=s.requirements().len()).map(|k| format!("P{k}")));
            h.push("P_all".into());
            let mut body = Vec::new();
            for (first, b) in batches {
                for (i, c) in b.candidates.iter().enumerate() {
                    let mut cells = vec![(first + i + 1).to_string()];
                    cells.extend(
                        c.requirements
                            .iter()
                            .map(|o| format!("{:.4}", o.probability)),
                    );
                    cells.push(match c.joint_mc_error {
                        Some(se) => format!("{:.4} ± {se:.4}", c.joint_probability),
                        None => format!("{:.4}", c.joint_probability),
                    });
                    body.push(cells);
                }
            }
            out.push_str(&aligned(&h, &body));
        }
        if let Some((e, _)) = &self.evidence {
            let unit =
                |t: usize| self.units[t].map_or(String::new(), |u| format!(" [{}]", u.symbol()));
            out.push_str(
                "\nnearest training rows (distance in range-widths of a fully relevant input, weighted by \
                 the inputs' relevance; measured values as in the training file, internal units unless --units declared):\n",
            );
            let mut h = vec!["row".to_string(), "training_row".into()];
            if e.has_ids() {
                h.push("id".into());
            }
            h.push("distance".into());
            h.extend(
                self.model
                    .targets
                    .iter()
                    .enumerate()
                    .map(|(t, x)| format!("{}{}", x.name, unit(t))),
            );
            let mut body = Vec::new();
            for (first, b) in batches {
                for (i, list) in b.neighbours.iter().enumerate() {
                    for nb in list {
                        let mut cells = vec![(first + i + 1).to_string(), nb.row.to_string()];
                        if e.has_ids() {
                            cells.push(nb.id.clone().unwrap_or_else(|| "-".into()));
                        }
                        cells.push(format!("{:.3}", nb.distance));
                        cells.extend(
                            nb.measured
                                .iter()
                                .enumerate()
                                .map(|(t, v)| self.measured(t, *v).map_or("-".into(), num)),
                        );
                        body.push(cells);
                    }
                }
            }
            out.push_str(&aligned(&h, &body));
        }
        out
    }
}
