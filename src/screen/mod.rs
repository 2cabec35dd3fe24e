//! Screening candidates against requirements, cost and process limits
//! (`mettle screen`), and searching a box of compositions for the best
//! ones ([`design`], `mettle design`).
//!
//! For each candidate and requirement the probability of meeting it comes
//! from the committee's predictive distribution ([`requirement`]). The
//! joint probability of meeting every requirement comes from the targets'
//! joint predictive distribution ([`joint`]): the targets' scatter is
//! correlated as the training rows where both were measured show (stored
//! in the model, [`crate::model::ScatterCorrelation`]), and independent
//! only where the data give no correlation (targets of different models,
//! one target at different conditions, too few rows measured together, a
//! model file written before the correlations were stored). [`JointBasis`]
//! says which was used.
//!
//! Estimates are not test results: qualification testing per the
//! applicable code decides, under local codes and licensed engineers.

pub mod cost;
pub mod design;
pub mod joint;
pub mod requirement;

use serde::Serialize;

use crate::data::{ColumnData, Table};
use crate::derive::Composition;
use crate::domain::DomainLevel;
use crate::error::{Error, Result};
use crate::model::Model;
use crate::predict::{Estimate, FullPrediction};
use crate::units::Unit;

pub use cost::{read_costs, CeIndex, CostModel, ProcessLimits, Violation};
pub use design::{design, DesignOptions, DesignOutcome, DesignSpace, Designed};
pub use joint::JointProbability;
pub use requirement::{Relation, Requirement};

/// Probabilities that agree to this many decimals count as tied when
/// candidates are ranked (ties go to the cheaper); the figure printed.
pub const PROBABILITY_DECIMALS: i32 = 4;

/// One target's estimate for a candidate, at the candidate's own inputs.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct TargetEstimate {
    /// Target name.
    pub target: String,
    /// The estimate.
    pub estimate: Estimate,
}

/// One requirement's outcome for a candidate.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct RequirementOutcome {
    /// The requirement, written out.
    pub requirement: String,
    /// The estimate it was judged on (at its conditions, if any).
    pub estimate: Estimate,
    /// Probability of meeting it.
    pub probability: f64,
}

/// A candidate judged against the requirements.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Candidate {
    /// Row of the candidate table, 0-based.
    pub row: usize,
    /// Every target of every model, at the candidate's own inputs.
    pub estimates: Vec<TargetEstimate>,
    /// One per requirement, in the order given.
    pub requirements: Vec<RequirementOutcome>,
    /// Probability of meeting every requirement, from the joint predictive
    /// distribution ([`Screening::joint_basis`] says with which
    /// correlations).
    pub joint_probability: f64,
    /// Standard error of `joint_probability` when it was sampled (more
    /// than two correlated groups), `None` when computed exactly.
    pub joint_mc_error: Option<f64>,
    /// Alloy cost per tonne, with a cost model.
    pub cost_per_tonne: Option<f64>,
    /// The limited carbon equivalent, when a limit is set.
    pub carbon_equivalent: Option<f64>,
    /// Process limits broken.
    pub violations: Vec<Violation>,
    /// False when any model (at any requirement's conditions) finds the
    /// candidate outside its training domain.
    pub in_domain: bool,
    /// The graded verdict: the worst level of any model at any
    /// requirement's conditions.
    pub level: DomainLevel,
    /// How far outside the training ranges, summed over inputs in shares
    /// of each range (0 inside).
    pub domain_excess: f64,
    /// Domain and derivation notes.
    pub notes: Vec<String>,
}

impl Candidate {
    /// True when the candidate may be ranked among the best: in domain
    /// (unless out-of-domain candidates are allowed) and within the limits.
    pub fn eligible(&self, allow_out_of_domain: bool) -> bool {
        (self.in_domain || allow_out_of_domain) && self.violations.is_empty()
    }
}

/// Where each element's column is, for cost and limits: (symbol, column
/// index, unit of the column).
#[derive(Clone, Debug, PartialEq)]
pub struct ElementColumns {
    found: Vec<(&'static str, usize, Unit)>,
}

impl ElementColumns {
    /// Find the element columns of `table`: through the schema of the
    /// first model that has one (`stands_for`, declared units), otherwise
    /// by their headers (`Mn`, `mn_wt`, `b_ppm`, see [`crate::data::derive_columns`]).
    ///
    /// # Errors
    /// [`Error::Derive`] when several headers could stand for one element.
    pub fn find(table: &Table, models: &[Model]) -> Result<ElementColumns> {
        let schema = models.iter().find_map(|m| m.schema.as_ref());
        let path = table.label();
        let mut found = Vec::new();
        for sym in Composition::ELEMENTS {
            let from_schema = schema.and_then(|s| {
                let c = s
                    .columns
                    .iter()
                    .find(|c| c.stands_for.as_deref() == Some(sym))?;
                Some((table.index_of(&c.name)?, c.unit_or_1()))
            });
            let hit = match from_schema {
                Some(h) => Some(h),
                None => crate::data::find_header(table, sym, &path)?,
            };
            if let Some((i, unit)) = hit {
                found.push((sym, i, unit));
            }
        }
        Ok(ElementColumns { found })
    }

    /// Element symbols found, with their column names.
    pub fn describe(&self, table: &Table) -> Vec<(String, String)> {
        self.found
            .iter()
            .map(|(s, i, _)| (s.to_string(), table.names()[*i].clone()))
            .collect()
    }

    /// The composition of every row (absent elements are 0 wt%; an empty
    /// cell counts as 0 too).
    ///
    /// # Errors
    /// A text cell in an element column.
    pub fn compositions(&self, table: &Table) -> Result<Vec<Composition>> {
        let mut out = vec![Composition::default(); table.n_rows()];
        for (sym, i, unit) in &self.found {
            let values = table.numeric_optional(&table.names()[*i])?;
            for (c, v) in out.iter_mut().zip(values) {
                // the symbol comes from Composition::ELEMENTS, so set succeeds
                c.set(sym, unit.to_internal(v.unwrap_or(0.0)));
            }
        }
        Ok(out)
    }
}

/// The problem: models, requirements, prices and limits.
#[derive(Clone, Debug)]
pub struct Screening<'a> {
    models: &'a [Model],
    requirements: Vec<Requirement>,
    /// (model, target) serving each requirement.
    serve: Vec<(usize, usize)>,
    /// How the requirements are coupled.
    coupling: Coupling,
    costs: Option<CostModel>,
    limits: ProcessLimits,
}

impl<'a> Screening<'a> {
    /// Tie the requirements to the models' targets.
    ///
    /// # Errors
    /// [`Error::Requirement`] for a target no model estimates or a
    /// condition on a column the serving model does not read.
    pub fn new(
        models: &'a [Model],
        requirements: Vec<Requirement>,
        costs: Option<CostModel>,
        limits: ProcessLimits,
    ) -> Result<Screening<'a>> {
        let mut serve = Vec::new();
        for r in &requirements {
            let hit = models.iter().enumerate().find_map(|(mi, m)| {
                m.targets
                    .iter()
                    .position(|t| t.name == r.target)
                    .map(|ti| (mi, ti))
            });
            let Some((mi, ti)) = hit else {
                let all: Vec<&str> = models
                    .iter()
                    .flat_map(|m| m.targets.iter().map(|t| t.name.as_str()))
                    .collect();
                return Err(Error::Requirement {
                    given: r.to_string(),
                    problem: format!(
                        "no model estimates '{}'; the models' targets are: {}",
                        r.target,
                        all.join(", ")
                    ),
                });
            };
            let m = &models[mi];
            for (c, _) in &r.conditions {
                let known = m.inputs.iter().any(|i| i.name == *c)
                    || m.schema
                        .as_ref()
                        .is_some_and(|s| s.columns.iter().any(|k| k.name == *c));
                if !known {
                    return Err(Error::Requirement {
                        given: r.to_string(),
                        problem: format!(
                            "the model of '{}' does not read '{c}'; its inputs are: {}",
                            r.target,
                            m.input_names().join(", ")
                        ),
                    });
                }
            }
            serve.push((mi, ti));
        }
        let coupling = Coupling::new(models, &requirements, &serve);
        Ok(Screening {
            models,
            requirements,
            serve,
            coupling,
            costs,
            limits,
        })
    }

    /// The requirements.
    pub fn requirements(&self) -> &[Requirement] {
        &self.requirements
    }

    /// The cost model, if any.
    pub fn costs(&self) -> Option<&CostModel> {
        self.costs.as_ref()
    }

    /// The process limits.
    pub fn limits(&self) -> &ProcessLimits {
        &self.limits
    }

    /// The models.
    pub fn models(&self) -> &[Model] {
        self.models
    }

    /// Whether the joint probability used the targets' scatter correlation.
    pub fn joint_basis(&self) -> JointBasis {
        self.coupling.basis()
    }

    /// The pairs of requirement groups and the correlation used for each.
    pub fn joint_pairs(&self) -> &[PairCorrelation] {
        &self.coupling.pairs
    }

    /// One sentence on how the joint probability was computed, naming the
    /// correlations used and the pairs taken as independent.
    pub fn joint_statement(&self) -> String {
        self.coupling.statement()
    }

    /// Judge every row of `table`.
    ///
    /// # Errors
    /// As [`Model::predict`]; an element column with text.
    pub fn evaluate(&self, table: &Table) -> Result<Vec<Candidate>> {
        let base: Vec<FullPrediction> = self
            .models
            .iter()
            .map(|m| m.predict_with_scale(table))
            .collect::<Result<_>>()?;
        self.evaluate_with(table, &base)
    }

    /// As [`Screening::evaluate`], with each model's predictions for the
    /// rows of `table` already made (`base[m]` from
    /// [`Model::predict_with_scale`] of model m), as `predict --require`
    /// has them.
    ///
    /// # Errors
    /// As [`Screening::evaluate`].
    pub fn evaluate_with(&self, table: &Table, base: &[FullPrediction]) -> Result<Vec<Candidate>> {
        // each requirement with conditions: its model again at those inputs
        let mut at_conditions: Vec<Option<FullPrediction>> = Vec::new();
        for (r, &(mi, _)) in self.requirements.iter().zip(&self.serve) {
            at_conditions.push(if r.conditions.is_empty() {
                None
            } else {
                let t = with_values(table, &r.conditions)?;
                Some(self.models[mi].predict_with_scale(&t)?)
            });
        }
        let needs_composition = self.costs.is_some() || !self.limits.is_empty();
        let comps = if needs_composition {
            Some(ElementColumns::find(table, self.models)?.compositions(table)?)
        } else {
            None
        };
        // the error shape of each requirement's target, once
        let shapes: Vec<_> = self
            .serve
            .iter()
            .map(|&(mi, ti)| self.models[mi].targets[ti].committee.shape())
            .collect();
        let mut out = Vec::with_capacity(table.n_rows());
        for row in 0..table.n_rows() {
            let mut notes: Vec<String> = Vec::new();
            let mut in_domain = true;
            let mut level = DomainLevel::Inside;
            let mut excess = 0.0;
            let mut estimates = Vec::new();
            for (m, p) in self.models.iter().zip(base) {
                let r = &p.rows[row];
                in_domain &= r.in_domain;
                level = level.max(r.level);
                excess += scaled_excess(p, row);
                for n in &r.notes {
                    push_unique(&mut notes, n.clone());
                }
                for (t, e) in m.targets.iter().zip(&r.estimates) {
                    estimates.push(TargetEstimate {
                        target: t.name.clone(),
                        estimate: e.clone(),
                    });
                }
            }
            let mut requirements = Vec::new();
            let mut groups = vec![joint::LatentGroup::default(); self.coupling.n_groups()];
            for (k, (((req, &(mi, ti)), cond), &shape)) in self
                .requirements
                .iter()
                .zip(&self.serve)
                .zip(&at_conditions)
                .zip(&shapes)
                .enumerate()
            {
                let p = cond.as_ref().unwrap_or(&base[mi]);
                if cond.is_some() {
                    in_domain &= p.rows[row].in_domain;
                    level = level.max(p.rows[row].level);
                    excess += scaled_excess(p, row);
                    for n in &p.rows[row].notes {
                        if !notes.contains(n) {
                            push_unique(&mut notes, format!("at the conditions of '{req}': {n}"));
                        }
                    }
                }
                let transform = &self.models[mi].targets[ti].transform;
                let prob = req.probability(transform, shape, &p.learnt[ti][row]);
                groups[self.coupling.group[k]].require(req.relation == Relation::AtLeast, prob);
                requirements.push(RequirementOutcome {
                    requirement: req.to_string(),
                    estimate: p.rows[row].estimates[ti].clone(),
                    probability: prob,
                });
            }
            let comp = comps.as_ref().map(|c| c[row]);
            let joint = joint::joint_probability(&groups, &self.coupling.corr);
            out.push(Candidate {
                row,
                estimates,
                requirements,
                joint_probability: joint.value,
                joint_mc_error: joint.mc_error,
                cost_per_tonne: self
                    .costs
                    .as_ref()
                    .zip(comp)
                    .map(|(m, c)| m.cost_per_tonne(&c)),
                carbon_equivalent: self
                    .limits
                    .max_ce
                    .zip(comp)
                    .map(|((idx, _), c)| idx.value(&c)),
                violations: comp.map_or_else(Vec::new, |c| self.limits.violations(&c)),
                in_domain,
                level,
                domain_excess: excess,
                notes,
            });
        }
        Ok(out)
    }
}

/// Whether the joint probability used a correlation of the targets'
/// scatter.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum JointBasis {
    /// One requirement group (one target at one set of conditions): its
    /// own probability.
    Single,
    /// At least one pair of groups coupled by the correlation of their
    /// scatter from the training data.
    Correlated,
    /// No pair with a correlation from the data: the product.
    Independent,
}

impl JointBasis {
    /// The name printed in the output's `joint` column or key.
    pub fn name(self) -> &'static str {
        match self {
            JointBasis::Single => "single",
            JointBasis::Correlated => "correlated",
            JointBasis::Independent => "independent",
        }
    }
}

/// The correlation used for one pair of requirement groups.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct PairCorrelation {
    /// First group (target, with its conditions after `@`).
    pub a: String,
    /// Second group.
    pub b: String,
    /// The correlation of their scatter, `None` when taken as independent.
    pub rho: Option<f64>,
    /// Training rows where both were measured (0 when independent).
    pub n_rows: usize,
    /// Why independence was assumed, when it was.
    pub why_independent: Option<String>,
}

/// Requirements grouped by (model, target, conditions), each group one
/// latent normal of [`joint`], and the correlation between groups.
#[derive(Clone, Debug)]
struct Coupling {
    /// Group of each requirement.
    group: Vec<usize>,
    /// Correlation of the groups' latent normals.
    corr: Vec<Vec<f64>>,
    pairs: Vec<PairCorrelation>,
}

impl Coupling {
    fn new(models: &[Model], reqs: &[Requirement], serve: &[(usize, usize)]) -> Coupling {
        // (model, target, conditions, label) of each group
        type Key<'r> = (usize, usize, &'r [(String, f64)], String);
        let mut keys: Vec<Key<'_>> = Vec::new();
        let mut group = Vec::with_capacity(reqs.len());
        for (r, &(mi, ti)) in reqs.iter().zip(serve) {
            let found = keys
                .iter()
                .position(|k| k.0 == mi && k.1 == ti && k.2 == r.conditions.as_slice());
            group.push(found.unwrap_or_else(|| {
                let label = r.to_string();
                // the label without the operator and threshold
                let label = match label.split_once(" @ ") {
                    Some((_, c)) => format!("{} @ {c}", r.target),
                    None => r.target.clone(),
                };
                keys.push((mi, ti, r.conditions.as_slice(), label));
                keys.len() - 1
            }));
        }
        let d = keys.len();
        let mut corr = vec![vec![0.0; d]; d];
        let mut pairs = Vec::new();
        for i in 0..d {
            corr[i][i] = 1.0;
            for j in i + 1..d {
                let (a, b) = (&keys[i], &keys[j]);
                let stored = (a.0 == b.0 && a.1 != b.1)
                    .then(|| {
                        let m = &models[a.0];
                        m.scatter_correlation(&m.targets[a.1].name, &m.targets[b.1].name)
                    })
                    .flatten();
                let why = if a.0 != b.0 {
                    Some("targets of different models".to_string())
                } else if a.1 == b.1 {
                    Some("one target at different conditions".to_string())
                } else if stored.is_none() {
                    Some(if models[a.0].scatter_correlations.is_empty() {
                        "the model file holds no scatter correlations (written before mettle \
                         stored them, or no two targets measured together on enough rows)"
                            .to_string()
                    } else {
                        format!(
                            "measured together on fewer than {} training rows",
                            crate::prec::JOINT_MIN_ROWS
                        )
                    })
                } else {
                    None
                };
                if let Some(c) = stored {
                    corr[i][j] = c.rho;
                    corr[j][i] = c.rho;
                }
                pairs.push(PairCorrelation {
                    a: a.3.clone(),
                    b: b.3.clone(),
                    rho: stored.map(|c| c.rho),
                    n_rows: stored.map_or(0, |c| c.n_rows),
                    why_independent: why,
                });
            }
        }
        Coupling { group, corr, pairs }
    }

    fn n_groups(&self) -> usize {
        self.corr.len()
    }

    fn basis(&self) -> JointBasis {
        if self.n_groups() < 2 {
            JointBasis::Single
        } else if self.pairs.iter().any(|p| p.rho.is_some()) {
            JointBasis::Correlated
        } else {
            JointBasis::Independent
        }
    }

    fn statement(&self) -> String {
        let same_target = self.group.len() > self.n_groups();
        let merged = if same_target {
            " Requirements on one target at the same conditions are judged together \
             (the probability that it falls between them)."
        } else {
            ""
        };
        let used: Vec<String> = self
            .pairs
            .iter()
            .filter_map(|p| {
                p.rho.map(|r| {
                    format!(
                        "{} with {} ρ = {r:.2} ({} training rows with both measured)",
                        p.a, p.b, p.n_rows
                    )
                })
            })
            .collect();
        let indep: Vec<String> = self
            .pairs
            .iter()
            .filter_map(|p| {
                p.why_independent
                    .as_ref()
                    .map(|w| format!("{} and {} ({w})", p.a, p.b))
            })
            .collect();
        match self.basis() {
            JointBasis::Single => format!(
                "Joint probability = the probability of the one target's requirements.{merged}"
            ),
            JointBasis::Independent => format!(
                "Joint probability = product of the targets' probabilities: their scatter is taken \
                 as independent, for want of a correlation from the data: {}.{merged}",
                indep.join("; ")
            ),
            JointBasis::Correlated => {
                let mut s = format!(
                    "Joint probability from the targets' joint predictive distribution, their scatter \
                     correlated as on the training rows: {}.",
                    used.join("; ")
                );
                if !indep.is_empty() {
                    s.push_str(&format!(" Taken as independent: {}.", indep.join("; ")));
                }
                s.push_str(merged);
                s
            }
        }
    }
}

/// Σ over inputs of how far the scaled value lies outside [−0.5, 0.5]:
/// the distance outside the training ranges in shares of each range.
fn scaled_excess(p: &FullPrediction, row: usize) -> f64 {
    p.scaled
        .row(row)
        .iter()
        .map(|s| (s.abs() - 0.5).max(0.0))
        .sum()
}

fn push_unique(v: &mut Vec<String>, s: String) {
    if !v.contains(&s) {
        v.push(s);
    }
}

/// `table` with the columns in `values` set to one value in every row
/// (added when absent).
///
/// # Errors
/// Never in practice: the names are unique and the lengths equal.
pub fn with_values(table: &Table, values: &[(String, f64)]) -> Result<Table> {
    let n = table.n_rows();
    let mut out =
        Table::from_optional_columns(table.source(), Vec::new())?.with_sheet(table.sheet());
    for (i, name) in table.names().iter().enumerate() {
        let data = match values.iter().find(|(k, _)| k == name) {
            Some((_, v)) => ColumnData::Number(vec![Some(*v); n]),
            // i < names().len(), so the column exists
            None => table
                .column_at(i)
                .cloned()
                .unwrap_or(ColumnData::Number(vec![None; n])),
        };
        out.push_column(name.clone(), data)?;
    }
    for (k, v) in values {
        if table.index_of(k).is_none() {
            out.push_column(k.clone(), ColumnData::Number(vec![Some(*v); n]))?;
        }
    }
    Ok(out)
}

/// Ranking order of `candidates`: eligible ones first (in domain unless
/// `allow_out_of_domain`, within the limits), then by joint probability
/// (to [`PROBABILITY_DECIMALS`] decimals) highest first, then by cost
/// lowest first, then by row.
pub fn rank(candidates: &[Candidate], allow_out_of_domain: bool) -> Vec<usize> {
    let scale = 10f64.powi(PROBABILITY_DECIMALS);
    let mut order: Vec<usize> = (0..candidates.len()).collect();
    order.sort_by(|&a, &b| {
        let (ca, cb) = (&candidates[a], &candidates[b]);
        let pa = (ca.joint_probability * scale).round() as i64;
        let pb = (cb.joint_probability * scale).round() as i64;
        cb.eligible(allow_out_of_domain)
            .cmp(&ca.eligible(allow_out_of_domain))
            .then(pb.cmp(&pa))
            .then(
                ca.cost_per_tonne
                    .unwrap_or(0.0)
                    .total_cmp(&cb.cost_per_tonne.unwrap_or(0.0)),
            )
            .then(ca.row.cmp(&cb.row))
    });
    order
}

#[cfg(test)]
mod tests {
    use super::*;

    fn cand(row: usize, p: f64, cost: f64, in_domain: bool) -> Candidate {
        Candidate {
            row,
            estimates: Vec::new(),
            requirements: Vec::new(),
            joint_probability: p,
            joint_mc_error: None,
            cost_per_tonne: Some(cost),
            carbon_equivalent: None,
            violations: Vec::new(),
            in_domain,
            level: if in_domain {
                DomainLevel::Inside
            } else {
                DomainLevel::Outside
            },
            domain_excess: if in_domain { 0.0 } else { 0.3 },
            notes: Vec::new(),
        }
    }

    #[test]
    fn out_of_domain_never_outranks_in_domain_unless_allowed() {
        let c = vec![
            cand(0, 0.60, 500.0, true),
            cand(1, 0.99, 400.0, false),
            cand(2, 0.90, 520.0, true),
            cand(3, 0.90, 510.0, true), // tie with row 2: cheaper first
        ];
        assert_eq!(rank(&c, false), vec![3, 2, 0, 1]);
        assert_eq!(rank(&c, true), vec![1, 3, 2, 0]);
    }

    #[test]
    fn conditions_replace_or_add_columns() {
        let t = Table::from_columns("t", vec![("a".into(), vec![1.0, 2.0])]).expect("t");
        let u = with_values(&t, &[("a".into(), 5.0), ("b".into(), -40.0)]).expect("u");
        assert_eq!(u.numeric("a").expect("a"), vec![5.0, 5.0]);
        assert_eq!(u.numeric("b").expect("b"), vec![-40.0, -40.0]);
    }
}
