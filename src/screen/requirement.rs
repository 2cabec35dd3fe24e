//! Requirements on a target, in mettle's own small syntax, and the
//! probability that a candidate meets one.
//!
//! # Syntax
//!
//! ```text
//! TARGET OP VALUE [@ INPUT=VALUE[, INPUT=VALUE ...]]
//! OP is >=, <=, >, <, ≥ or ≤
//! ```
//!
//! Examples: `uts_mpa >= 550`, `elongation_pct>=22`,
//! `charpy_j >= 47 @ test_temp_c=-40`. The part after `@` sets inputs for
//! this requirement only (a test temperature, a plate thickness): the
//! candidate is estimated again with those inputs replaced. The value is in
//! the units the model's estimates are given in (`mettle predict`: internal
//! units for a model trained through a schema).
//!
//! # Probability
//!
//! The committee's predictive distribution of a target learnt on the scale
//! z = g(y) is Gaussian there, z ~ N(m, s²) (see
//! [`crate::model::TargetTransform`]). g is increasing, so
//!
//! ```text
//! P(y ≥ t) = Φ((m − g(t)) / s)        P(y ≤ t) = Φ((g(t) − m) / s)
//! ```
//!
//! with Φ the standard normal distribution function. The distribution is
//! continuous, so `>` and `>=` give the same probability. A threshold
//! outside the values the transform accepts (t ≤ 0 for a log target) is met
//! with certainty on one side and never on the other.

use std::fmt;

use serde::Serialize;

use crate::committee::TailShape;
use crate::error::{Error, Result};
use crate::model::TargetTransform;
use crate::predict::ScalePrediction;

/// Which side of the threshold is wanted.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Relation {
    /// The target must reach at least the threshold.
    AtLeast,
    /// The target must stay at or below the threshold.
    AtMost,
}

/// One requirement.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Requirement {
    /// The target column it constrains.
    pub target: String,
    /// Which side of the threshold is wanted.
    pub relation: Relation,
    /// The threshold, in the units of the model's estimates.
    pub threshold: f64,
    /// Inputs set for this requirement only (name, value), e.g. a test
    /// temperature.
    pub conditions: Vec<(String, f64)>,
}

/// Operators in the order they are looked for (two-character ones first).
const OPERATORS: [(&str, Relation); 6] = [
    (">=", Relation::AtLeast),
    ("<=", Relation::AtMost),
    ("≥", Relation::AtLeast),
    ("≤", Relation::AtMost),
    (">", Relation::AtLeast),
    ("<", Relation::AtMost),
];

const FORM: &str = "write TARGET OP VALUE [@ INPUT=VALUE, ...] with OP one of >= <= > < (e.g. uts_mpa>=550 or charpy_j>=47@test_temp_c=-40)";

fn bad(given: &str, problem: impl Into<String>) -> Error {
    Error::Requirement {
        given: given.to_string(),
        problem: problem.into(),
    }
}

fn number(given: &str, what: &str, text: &str) -> Result<f64> {
    let t = text.trim();
    match t.parse::<f64>() {
        Ok(v) if v.is_finite() => Ok(v),
        _ => Err(bad(
            given,
            format!("{what} '{t}' is not a finite number; {FORM}"),
        )),
    }
}

fn name(given: &str, what: &str, text: &str) -> Result<String> {
    let t = text.trim();
    let allowed = |c: char| c.is_alphanumeric() || matches!(c, '_' | '.' | '-' | '%');
    if t.is_empty() || !t.chars().all(allowed) {
        return Err(bad(
            given,
            format!("{what} '{t}' is not a column name (letters, digits, _ . - %); {FORM}"),
        ));
    }
    Ok(t.to_string())
}

impl Requirement {
    /// Parse one requirement (see the module documentation for the syntax).
    ///
    /// # Errors
    /// [`Error::Requirement`] naming the part that is wrong and the accepted
    /// form.
    pub fn parse(text: &str) -> Result<Requirement> {
        let (main, conds) = match text.split_once('@') {
            Some((m, c)) => (m, Some(c)),
            None => (text, None),
        };
        let Some((pos, op, relation)) = OPERATORS
            .iter()
            .find_map(|(op, rel)| main.find(op).map(|p| (p, *op, *rel)))
        else {
            return Err(bad(text, format!("no comparison operator; {FORM}")));
        };
        let target = name(text, "target", &main[..pos])?;
        let threshold = number(text, "threshold", &main[pos + op.len()..])?;
        let mut conditions: Vec<(String, f64)> = Vec::new();
        if let Some(c) = conds {
            for part in c.split(',') {
                let Some((n, v)) = part.split_once('=') else {
                    return Err(bad(
                        text,
                        format!("condition '{}' is not INPUT=VALUE; {FORM}", part.trim()),
                    ));
                };
                let n = name(text, "condition input", n)?;
                if conditions.iter().any(|(m, _)| *m == n) {
                    return Err(bad(text, format!("input '{n}' is set twice after @")));
                }
                conditions.push((n, number(text, "condition value", v)?));
            }
        }
        Ok(Requirement {
            target,
            relation,
            threshold,
            conditions,
        })
    }

    /// Probability that the target meets the requirement, given its
    /// learnt-scale mean and sd `p`, the committee's error `shape` and the
    /// transform it was learnt through.
    pub fn probability(
        &self,
        transform: &TargetTransform,
        shape: TailShape,
        p: &ScalePrediction,
    ) -> f64 {
        let at_least = match transform.forward(self.threshold) {
            Some(g) => {
                let z = (p.mean - g) / p.sd;
                if z.is_nan() {
                    // sd = 0 and the mean on the threshold: met (≥ holds)
                    1.0
                } else {
                    shape.cdf(z)
                }
            }
            None => {
                if below_transform_domain(transform, self.threshold) {
                    1.0
                } else {
                    0.0
                }
            }
        };
        match self.relation {
            Relation::AtLeast => at_least,
            Relation::AtMost => 1.0 - at_least,
        }
    }
}

/// True when `t` lies below every value the transform accepts (so every
/// estimate is above it).
fn below_transform_domain(transform: &TargetTransform, t: f64) -> bool {
    match *transform {
        TargetTransform::Identity => false,
        TargetTransform::Log => t <= 0.0,
        TargetTransform::Bounded { lower, margin, .. } => t <= lower - margin,
    }
}

impl fmt::Display for Requirement {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let op = match self.relation {
            Relation::AtLeast => ">=",
            Relation::AtMost => "<=",
        };
        write!(f, "{} {op} {}", self.target, self.threshold)?;
        if !self.conditions.is_empty() {
            let c: Vec<String> = self
                .conditions
                .iter()
                .map(|(n, v)| format!("{n}={v}"))
                .collect();
            write!(f, " @ {}", c.join(", "))?;
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::fixedmath::FixedMath;
    use approx::assert_abs_diff_eq;

    fn gauss(mean: f64, sd: f64) -> ScalePrediction {
        ScalePrediction {
            mean,
            sd,
            noise_sd: sd,
            committee_sd: 0.0,
        }
    }

    #[test]
    fn parses_every_form() {
        let r = Requirement::parse("uts_mpa>=550").expect("parses");
        assert_eq!(r.target, "uts_mpa");
        assert_eq!(r.relation, Relation::AtLeast);
        assert_abs_diff_eq!(r.threshold, 550.0);
        assert!(r.conditions.is_empty());
        let r =
            Requirement::parse(" charpy_j ≥ 47 @ test_temp_c = -40, thickness_mm=30").expect("ok");
        assert_eq!(r.target, "charpy_j");
        assert_eq!(
            r.conditions,
            vec![
                ("test_temp_c".to_string(), -40.0),
                ("thickness_mm".to_string(), 30.0)
            ]
        );
        let r = Requirement::parse("hardness_hv<=350").expect("ok");
        assert_eq!(r.relation, Relation::AtMost);
        assert_eq!(r.to_string(), "hardness_hv <= 350");
    }

    #[test]
    fn rejects_malformed_requirements_naming_the_part() {
        for (text, part) in [
            ("uts_mpa 550", "no comparison operator"),
            ("uts=>550", "target 'uts='"),
            ("uts_mpa >= lots", "threshold 'lots'"),
            (">= 550", "target ''"),
            ("charpy_j>=47@test_temp_c", "condition 'test_temp_c'"),
            ("charpy_j>=47@t=1,t=2", "set twice"),
            ("uts>=inf", "not a finite number"),
        ] {
            let e = Requirement::parse(text).expect_err(text).to_string();
            assert!(e.contains(part), "{text}: {e}");
        }
    }

    #[test]
    fn probability_is_the_normal_cdf() {
        // Φ(1) = 0.841345 (standard normal table; any statistics handbook)
        let r = Requirement::parse("uts>=550").expect("ok");
        let p = r.probability(
            &TargetTransform::Identity,
            TailShape::new(None),
            &gauss(560.0, 10.0),
        );
        assert_abs_diff_eq!(p, 0.841_345, epsilon = 1e-6);
        let r = Requirement::parse("uts<=550").expect("ok");
        let p = r.probability(
            &TargetTransform::Identity,
            TailShape::new(None),
            &gauss(560.0, 10.0),
        );
        assert_abs_diff_eq!(p, 0.158_655, epsilon = 1e-6);
    }

    #[test]
    fn transformed_targets_use_the_learnt_scale() {
        // learnt as ln y ~ N(ln 60, 0.5²): P(y ≥ 60) = 1/2 exactly, and
        // P(y ≥ 60·e^{0.5}) = 1 − Φ(1) = 0.158655 (standard normal table)
        let r = Requirement::parse("charpy_j>=60").expect("ok");
        let p = r.probability(
            &TargetTransform::Log,
            TailShape::new(None),
            &gauss(60f64.ln_fixed(), 0.5),
        );
        assert_abs_diff_eq!(p, 0.5, epsilon = 1e-12);
        let r2 = Requirement {
            threshold: 60.0 * 0.5f64.exp_fixed(),
            ..r.clone()
        };
        let p = r2.probability(
            &TargetTransform::Log,
            TailShape::new(None),
            &gauss(60f64.ln_fixed(), 0.5),
        );
        assert_abs_diff_eq!(p, 0.158_655, epsilon = 1e-6);
        // a threshold at or below zero is always met by a log target
        let r3 = Requirement {
            threshold: 0.0,
            ..r
        };
        assert_abs_diff_eq!(
            r3.probability(
                &TargetTransform::Log,
                TailShape::new(None),
                &gauss(1.0, 0.5)
            ),
            1.0
        );
    }
}
