//! The full predictive distribution of a target, as a user needs it to
//! compute the density of a measured value from `predict`'s output.
//!
//! # Formula
//!
//! On the scale the target is learnt on (`scale`: the target itself, or
//! its log or logit, [`crate::model::TargetTransform`]), a row with mean m
//! and sd s (a test free of gross error) gives a measured value z the
//! density
//!
//! ```text
//! p(z) = (1 − π)·f_ν((z − m)/(a·s))/(a·s) + π·N(z; μ_g, σ_g²),   a = √((ν − 2)/ν)
//! ```
//!
//! f_ν the Student-t density with ν degrees of freedom (a = 1 and f the
//! standard normal for the Gaussian shape), π the share of gross errors
//! and μ_g, σ_g the mean and sd of that part (docs/method.md §6b, §6c;
//! Box & Tiao 1968, Biometrika 55:119; Lange, Little & Taylor 1989, JASA
//! 84:881). `mettle evaluate`'s NLPD is −mean ln p over the rows (plus the
//! log-Jacobian of the transform for a transformed target).

use serde::Serialize;

use crate::committee::{GrossErrors, TailShape};
use crate::model::TargetModel;
use crate::units::Unit;

/// The predictive distribution's form for one target: the same for every
/// row; the mean and sd come per row.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct PredictiveForm {
    /// `gaussian` or `student_t`.
    pub shape: &'static str,
    /// Degrees of freedom ν of the Student-t (`None` for the Gaussian).
    pub dof: Option<f64>,
    /// The scale the density is on: `target` (the target's own values),
    /// `log` (ln of the target) or `logit` (the bounded transform).
    pub scale: &'static str,
    /// Share π of gross errors (0 without that part).
    pub gross_error_share: f64,
    /// Mean of the gross-error part on `scale` (`None` without it).
    pub gross_error_mean: Option<f64>,
    /// Sd of the gross-error part on `scale` (`None` without it).
    pub gross_error_sd: Option<f64>,
}

impl PredictiveForm {
    /// The form of `target`'s predictive distribution, on its learnt scale
    /// in internal units.
    pub fn of(target: &TargetModel) -> PredictiveForm {
        let shape = target.committee.shape();
        let (shape_name, dof) = match shape {
            TailShape::Gaussian(_) => ("gaussian", None),
            TailShape::StudentT(d) => ("student_t", Some(d.freedom())),
        };
        let gross = target
            .committee
            .gross_errors
            .as_ref()
            .map(|g| g.on_scale(|z| target.scaling.unscale_linear(z), target.scaling.width()));
        PredictiveForm {
            shape: shape_name,
            dof,
            scale: match target.transform.name() {
                "log" => "log",
                "bounded" => "logit",
                _ => "target",
            },
            gross_error_share: gross.map_or(0.0, |g| g.share),
            gross_error_mean: gross.map(|g| g.mean),
            gross_error_sd: gross.map(|g| g.sd),
        }
    }

    /// The form in another unit of the same quantity (`self` in the
    /// internal unit): on the target's own scale the mean converts as a
    /// value and the sd as a difference; a log or logit scale is left in
    /// internal units.
    pub fn in_unit(&self, unit: Unit) -> PredictiveForm {
        if self.scale != "target" {
            return self.clone();
        }
        PredictiveForm {
            gross_error_mean: self.gross_error_mean.map(|m| unit.from_internal(m)),
            gross_error_sd: self.gross_error_sd.map(|s| unit.interval_from_internal(s)),
            ..self.clone()
        }
    }

    /// ln p(y) of the formula above for a value `y` on `scale`, given the
    /// row's mean `m` and sd `s` on that scale.
    pub fn ln_density(&self, y: f64, m: f64, s: f64) -> f64 {
        let shape = TailShape::new(self.dof);
        match (self.gross_error_mean, self.gross_error_sd) {
            (Some(mean), Some(sd)) => GrossErrors {
                share: self.gross_error_share,
                mean,
                sd,
                shape,
            }
            .ln_density(y, m, s),
            _ => shape.ln_density(y, m, s),
        }
    }
}
