//! Inverse design: search a box of inputs for candidates most likely to
//! meet the requirements at least cost, inside the training domain and the
//! process limits.
//!
//! # Method
//!
//! The score of a point x of the box is
//!
//! ```text
//! score(x) = P_joint(x) − λ · (cost(x) − cost_lo) / (cost_hi − cost_lo)
//! ```
//!
//! with cost_lo, cost_hi the least and greatest alloy cost over the box
//! (cost is linear in the contents, so they sit at corners) and λ the cost
//! weight: λ = 0.1 says the whole cost span of the box is worth 0.1 of
//! probability. Without prices the score is P_joint. A point outside the
//! training domain or breaking a process limit scores below every
//! admissible point: −(1 + λ) − 10·(distance outside the training ranges,
//! in shares of each range, + the amounts by which limits are broken, wt%).
//!
//! Particle-swarm searches (argmin's `ParticleSwarm`) from several seeded
//! starts maximise the score; every point they evaluate is kept. The
//! result is a diverse set: admissible points taken best first, each
//! differing from every one already taken by at least a set share of the
//! box range in some varied input (Chebyshev distance in box units), so it
//! is not ten copies of one optimum. Seeds derive from the master seed, so
//! a run is reproducible.

use std::sync::Mutex;

use argmin::core::{CostFunction, Error as ArgminError, Executor};
use argmin::solver::particleswarm::ParticleSwarm;
use ndarray::Array1;
use rand::SeedableRng;
use rand_xoshiro::Xoshiro256PlusPlus;
use serde::Serialize;

use super::{Candidate, ElementColumns, Screening};
use crate::data::Table;
use crate::error::{Error, Result};
use crate::observer::{DesignEvent, DesignObserver};

/// Score margin by which the best point outside the domain must beat the
/// best admissible one before the outcome says so (below it the domain
/// costs nothing worth reporting). Common practice, no source.
pub const OUTSIDE_MARGIN: f64 = 0.01;

/// The box searched.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct DesignSpace {
    /// Inputs held at one value (name, value): `--fix` and the base row.
    pub fixed: Vec<(String, f64)>,
    /// Inputs varied (name, lowest, highest).
    pub vary: Vec<(String, f64, f64)>,
}

/// Settings of the search.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct DesignOptions {
    /// Candidates to return.
    pub count: usize,
    /// Seeded swarm searches.
    pub starts: usize,
    /// Particles per swarm.
    pub particles: usize,
    /// Iterations per swarm.
    pub iterations: u64,
    /// Master seed.
    pub seed: u64,
    /// λ of the score (probability worth the box's whole cost span).
    pub cost_weight: f64,
    /// Least Chebyshev distance between candidates, share of the box range.
    pub min_separation: f64,
}

impl Default for DesignOptions {
    fn default() -> Self {
        DesignOptions {
            count: 10,
            starts: 6,
            particles: 24,
            iterations: 40,
            seed: 0,
            cost_weight: 0.1,
            min_separation: 0.1,
        }
    }
}

impl DesignOptions {
    /// Check the settings.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] naming the setting and its range.
    pub fn check(&self) -> Result<()> {
        let bad = |name: &'static str, value: String, expected: &str| {
            Err(Error::InvalidParameter {
                name,
                value,
                expected: expected.into(),
            })
        };
        if !(1..=1000).contains(&self.count) {
            return bad("count", self.count.to_string(), "1 to 1000");
        }
        if !(1..=100).contains(&self.starts) {
            return bad("starts", self.starts.to_string(), "1 to 100");
        }
        if !(4..=1000).contains(&self.particles) {
            return bad("particles", self.particles.to_string(), "4 to 1000");
        }
        if !(1..=10_000).contains(&self.iterations) {
            return bad("iterations", self.iterations.to_string(), "1 to 10000");
        }
        if !(self.cost_weight.is_finite() && (0.0..=1.0).contains(&self.cost_weight)) {
            return bad("cost-weight", self.cost_weight.to_string(), "0 to 1");
        }
        if !(self.min_separation.is_finite() && (0.0..1.0).contains(&self.min_separation)) {
            return bad(
                "min-separation",
                self.min_separation.to_string(),
                "0 (inclusive) to 1 (exclusive)",
            );
        }
        Ok(())
    }
}

/// One designed candidate.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Designed {
    /// Values of the varied inputs, in `DesignSpace::vary` order.
    pub values: Vec<f64>,
    /// Its score.
    pub score: f64,
    /// Its estimates, probabilities, cost and domain verdict.
    pub candidate: Candidate,
}

/// What a design search returns.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct DesignOutcome {
    /// The diverse set, best first.
    pub candidates: Vec<Designed>,
    /// Admissible evaluated points (values, cost per tonne, joint
    /// probability), for the cost-versus-probability chart.
    pub evaluated: Vec<(Vec<f64>, Option<f64>, f64)>,
    /// Points evaluated in all.
    pub n_evaluated: usize,
    /// Least and greatest cost over the box, with prices.
    pub cost_span: Option<(f64, f64)>,
    /// Statements about the result: why the best point is not returned,
    /// fewer candidates than asked for, elements taken as absent.
    pub notes: Vec<String>,
}

struct Point {
    values: Vec<f64>,
    /// Score ignoring the domain and the limits.
    raw_score: f64,
    candidate: Candidate,
}

struct Problem<'s, 'm> {
    screening: &'s Screening<'m>,
    space: &'s DesignSpace,
    cost_span: Option<(f64, f64)>,
    cost_weight: f64,
    pool: Mutex<Vec<Point>>,
    failure: Mutex<Option<Error>>,
}

impl Problem<'_, '_> {
    fn table(&self, points: &[Vec<f64>]) -> Result<Table> {
        let mut cols: Vec<(String, Vec<f64>)> = self
            .space
            .fixed
            .iter()
            .map(|(n, v)| (n.clone(), vec![*v; points.len()]))
            .collect();
        for (j, (n, _, _)) in self.space.vary.iter().enumerate() {
            cols.push((n.clone(), points.iter().map(|p| p[j]).collect()));
        }
        Table::from_columns("(design point)", cols)
    }

    fn raw_score(&self, c: &Candidate) -> f64 {
        let penalty = match (self.cost_span, c.cost_per_tonne) {
            (Some((lo, hi)), Some(cost)) if hi > lo => self.cost_weight * (cost - lo) / (hi - lo),
            _ => 0.0,
        };
        c.joint_probability - penalty
    }

    fn score(&self, c: &Candidate, raw: f64) -> f64 {
        if c.in_domain && c.violations.is_empty() {
            return raw;
        }
        let broken: f64 = c.violations.iter().map(|v| v.amount).sum();
        -(1.0 + self.cost_weight)
            - 10.0 * (c.domain_excess + broken)
            - if c.in_domain {
                0.0
            } else {
                // out of domain by a check the range excess does not see
                0.1
            }
    }

    fn evaluate(&self, points: &[Vec<f64>]) -> Result<Vec<f64>> {
        let table = self.table(points)?;
        let cands = self.screening.evaluate(&table)?;
        let mut pool = self.pool.lock().unwrap_or_else(|e| e.into_inner());
        let mut scores = Vec::with_capacity(points.len());
        for (p, c) in points.iter().zip(cands) {
            let raw = self.raw_score(&c);
            scores.push(self.score(&c, raw));
            pool.push(Point {
                values: p.clone(),
                raw_score: raw,
                candidate: c,
            });
        }
        Ok(scores)
    }
}

impl CostFunction for Problem<'_, '_> {
    type Param = Array1<f64>;
    type Output = f64;

    fn cost(&self, x: &Array1<f64>) -> std::result::Result<f64, ArgminError> {
        Ok(self.bulk_cost(std::slice::from_ref(x))?[0])
    }

    fn bulk_cost<P>(&self, params: &[P]) -> std::result::Result<Vec<f64>, ArgminError>
    where
        P: std::borrow::Borrow<Array1<f64>> + argmin::core::SyncAlias,
        f64: argmin::core::SendAlias,
    {
        let points: Vec<Vec<f64>> = params.iter().map(|p| p.borrow().to_vec()).collect();
        match self.evaluate(&points) {
            Ok(s) => Ok(s.into_iter().map(|v| -v).collect()),
            Err(e) => {
                let msg = e.to_string();
                *self.failure.lock().unwrap_or_else(|e| e.into_inner()) = Some(e);
                Err(ArgminError::msg(msg))
            }
        }
    }
}

/// Least and greatest cost over the box: cost is linear in the contents,
/// so each varied input goes to whichever end is cheaper (or dearer).
fn cost_span(screening: &Screening<'_>, space: &DesignSpace) -> Result<Option<(f64, f64)>> {
    let Some(costs) = screening.costs() else {
        return Ok(None);
    };
    let mut rows: Vec<Vec<f64>> = vec![space.vary.iter().map(|v| v.1).collect()];
    for j in 0..space.vary.len() {
        let mut r = rows[0].clone();
        r[j] = space.vary[j].2;
        rows.push(r);
    }
    let p = Problem {
        screening,
        space,
        cost_span: None,
        cost_weight: 0.0,
        pool: Mutex::new(Vec::new()),
        failure: Mutex::new(None),
    };
    let table = p.table(&rows)?;
    let comps = ElementColumns::find(&table, screening.models())?.compositions(&table)?;
    let c: Vec<f64> = comps.iter().map(|c| costs.cost_per_tonne(c)).collect();
    let (mut lo, mut hi) = (c[0], c[0]);
    for d in c[1..].iter().map(|v| v - c[0]) {
        if d < 0.0 {
            lo += d;
        } else {
            hi += d;
        }
    }
    Ok(Some((lo, hi)))
}

/// Chebyshev distance of `a` and `b` in shares of the box ranges.
fn separation(space: &DesignSpace, a: &[f64], b: &[f64]) -> f64 {
    space
        .vary
        .iter()
        .zip(a.iter().zip(b))
        .map(|((_, lo, hi), (x, y))| (x - y).abs() / (hi - lo))
        .fold(0.0, f64::max)
}

fn describe_point(space: &DesignSpace, values: &[f64]) -> String {
    space
        .vary
        .iter()
        .zip(values)
        .map(|((n, _, _), v)| format!("{n} = {v:.4}"))
        .collect::<Vec<_>>()
        .join(", ")
}

/// Search `space` for the best candidates (module documentation).
///
/// # Errors
/// [`Error::InvalidParameter`] for bad options or an empty or inverted
/// range; whatever evaluating a point reports (a missing input column,
/// most often: every input of the models must be fixed or varied).
pub fn design(
    screening: &Screening<'_>,
    space: &DesignSpace,
    options: &DesignOptions,
    observer: &dyn DesignObserver,
) -> Result<DesignOutcome> {
    options.check()?;
    if space.vary.is_empty() {
        return Err(Error::InvalidParameter {
            name: "vary",
            value: "(none)".into(),
            expected: "at least one input to vary, NAME=LOW:HIGH".into(),
        });
    }
    for (n, lo, hi) in &space.vary {
        // a declared code is held at one level, never moved continuously
        for m in screening.models {
            m.refuse_moving_code(n, "vary")?;
        }
        if !(lo.is_finite() && hi.is_finite() && lo < hi) {
            return Err(Error::InvalidParameter {
                name: "vary",
                value: format!("{n}={lo}:{hi}"),
                expected: "finite LOW below HIGH".into(),
            });
        }
    }
    let span = cost_span(screening, space)?;
    let problem = Problem {
        screening,
        space,
        cost_span: span,
        cost_weight: options.cost_weight,
        pool: Mutex::new(Vec::new()),
        failure: Mutex::new(None),
    };
    // one evaluation up front, so that a missing column is reported plainly
    let centre: Vec<f64> = space.vary.iter().map(|(_, l, h)| 0.5 * (l + h)).collect();
    problem.evaluate(&[centre])?;
    observer.observe(&DesignEvent::Started {
        n_starts: options.starts,
        iterations: options.iterations as usize,
    });
    let lower = Array1::from_iter(space.vary.iter().map(|v| v.1));
    let upper = Array1::from_iter(space.vary.iter().map(|v| v.2));
    let mut best: Option<f64> = None;
    let mut problem = problem;
    for start in 0..options.starts {
        let seed = options
            .seed
            .wrapping_mul(0x9E37_79B9_7F4A_7C15)
            .wrapping_add(start as u64 + 1);
        let solver = ParticleSwarm::new((lower.clone(), upper.clone()), options.particles)
            .with_rng_generator(Xoshiro256PlusPlus::seed_from_u64(seed));
        let run = Executor::new(problem, solver)
            .configure(|s| s.max_iters(options.iterations))
            .run();
        problem = match run {
            Ok(mut res) => {
                let state = res.state();
                let c = -state.get_best_cost();
                if c > -(1.0 + options.cost_weight) {
                    best = Some(best.map_or(c, |b: f64| b.max(c)));
                }
                res.problem
                    .take_problem()
                    .ok_or_else(|| Error::InvalidParameter {
                        name: "design",
                        value: "internal".into(),
                        expected: "the problem back from the solver".into(),
                    })?
            }
            Err(e) => {
                return Err(Error::InvalidParameter {
                    name: "design search",
                    value: e.to_string(),
                    expected: "a search that can evaluate every point".into(),
                })
            }
        };
        if let Some(e) = problem
            .failure
            .lock()
            .unwrap_or_else(|e| e.into_inner())
            .take()
        {
            return Err(e);
        }
        observer.observe(&DesignEvent::StartDone {
            done: start + 1,
            total: options.starts,
            best_score: best,
        });
    }
    let pool = problem.pool.into_inner().unwrap_or_else(|e| e.into_inner());
    observer.observe(&DesignEvent::Choosing {
        n_evaluated: pool.len(),
    });
    choose(space, options, span, pool)
}

fn choose(
    space: &DesignSpace,
    options: &DesignOptions,
    cost_span: Option<(f64, f64)>,
    pool: Vec<Point>,
) -> Result<DesignOutcome> {
    let n_evaluated = pool.len();
    let admissible = |p: &Point| p.candidate.in_domain && p.candidate.violations.is_empty();
    let mut order: Vec<usize> = (0..pool.len()).filter(|&i| admissible(&pool[i])).collect();
    order.sort_by(|&a, &b| {
        pool[b]
            .raw_score
            .total_cmp(&pool[a].raw_score)
            .then(
                pool[a]
                    .candidate
                    .cost_per_tonne
                    .unwrap_or(0.0)
                    .total_cmp(&pool[b].candidate.cost_per_tonne.unwrap_or(0.0)),
            )
            .then(a.cmp(&b))
    });
    let mut chosen: Vec<usize> = Vec::new();
    for &i in &order {
        if chosen.len() == options.count {
            break;
        }
        if chosen
            .iter()
            .all(|&j| separation(space, &pool[i].values, &pool[j].values) >= options.min_separation)
        {
            chosen.push(i);
        }
    }
    let mut notes = Vec::new();
    if order.is_empty() {
        notes.push(format!(
            "no evaluated point of the box ({n_evaluated} tried) is inside the training domain and within the process limits: widen the box towards the training data or relax the limits"
        ));
    } else if chosen.len() < options.count {
        notes.push(format!(
            "only {} candidates differ from each other by at least {} of the box range in some varied input",
            chosen.len(),
            options.min_separation
        ));
    }
    let best_admissible = order.first().map(|&i| pool[i].raw_score);
    let outside = (0..pool.len())
        .filter(|&i| !pool[i].candidate.in_domain && pool[i].candidate.violations.is_empty())
        .max_by(|&a, &b| {
            pool[a]
                .raw_score
                .total_cmp(&pool[b].raw_score)
                .then(b.cmp(&a))
        });
    if let Some(o) = outside {
        let p = &pool[o];
        if best_admissible.is_none_or(|b| p.raw_score > b + OUTSIDE_MARGIN) {
            notes.push(format!(
                "the best point found scores {:.4} (joint probability {:.4}) at {}, but it lies outside the training domain ({}); the search keeps to the domain, so the best in-domain candidates are returned instead (best score {})",
                p.raw_score,
                p.candidate.joint_probability,
                describe_point(space, &p.values),
                p.candidate.notes.join("; "),
                best_admissible.map_or("none".to_string(), |b| format!("{b:.4}"))
            ));
        }
    }
    let evaluated = order
        .iter()
        .map(|&i| {
            (
                pool[i].values.clone(),
                pool[i].candidate.cost_per_tonne,
                pool[i].candidate.joint_probability,
            )
        })
        .collect();
    let mut pool: Vec<Option<Point>> = pool.into_iter().map(Some).collect();
    let candidates = chosen
        .iter()
        .filter_map(|&i| pool[i].take())
        .map(|p| Designed {
            values: p.values,
            score: p.raw_score,
            candidate: p.candidate,
        })
        .collect();
    Ok(DesignOutcome {
        candidates,
        evaluated,
        n_evaluated,
        cost_span,
        notes,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn separation_is_chebyshev_in_box_units() {
        let s = DesignSpace {
            fixed: Vec::new(),
            vary: vec![("a".into(), 0.0, 10.0), ("b".into(), 0.0, 1.0)],
        };
        // 2/10 in a, 0.05/1 in b: the larger share counts
        let d = separation(&s, &[1.0, 0.5], &[3.0, 0.55]);
        assert!((d - 0.2).abs() < 1e-12, "{d}");
    }

    #[test]
    fn options_are_checked() {
        let o = DesignOptions {
            cost_weight: 2.0,
            ..DesignOptions::default()
        };
        let e = o.check().expect_err("too heavy").to_string();
        assert!(e.contains("cost-weight") && e.contains("0 to 1"), "{e}");
        assert!(DesignOptions::default().check().is_ok());
    }
}
