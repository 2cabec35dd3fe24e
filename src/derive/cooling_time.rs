//! Cooling time t8/5 from 800 °C to 500 °C after EN 1011-2 Annex D.
//!
//! With Q the heat input in kJ/mm, T0 the preheat or interpass temperature
//! in °C and d the plate thickness in mm:
//!
//! - 3-D (thick plate) heat flow:
//!   t8/5 = (6700 − 5·T0)·Q·[1/(500 − T0) − 1/(800 − T0)]·F3
//! - 2-D (thin plate) heat flow:
//!   t8/5 = (4300 − 4.3·T0)·10⁵·(Q²/d²)·[1/(500 − T0)² − 1/(800 − T0)²]·F2
//! - transition thickness, where the two agree for F2 = F3:
//!   d_t = √{[(4300 − 4.3·T0)·10⁵/(6700 − 5·T0)]·Q·[1/(500 − T0) + 1/(800 − T0)]};
//!   d ≥ d_t → 3-D, else 2-D.
//!
//! Results in seconds. The formulas need T0 < 500 °C, Q > 0 and d > 0; no
//! further validity range is documented in the reference. The transition
//! thickness is computed without the shape factors, as printed; when F2 ≠ F3
//! the two formulas actually meet at d_t·√(F2/F3), which this module does not
//! use.

use serde::{Deserialize, Serialize};

use super::DeriveError;

/// Relative band around the transition thickness within which the choice
/// between the 2-D and 3-D formula is reported as marginal (±10 %).
pub const MARGINAL_BAND: f64 = 0.10;

/// Shape factors of EN 1011-2 Annex D: F2 for 2-D, F3 for 3-D heat flow.
/// The default, F2 = F3 = 1, is a bead on plate.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ShapeFactors {
    /// Factor on the 2-D (thin plate) formula.
    pub f2: f64,
    /// Factor on the 3-D (thick plate) formula.
    pub f3: f64,
}

impl Default for ShapeFactors {
    fn default() -> Self {
        ShapeFactors { f2: 1.0, f3: 1.0 }
    }
}

/// Joint shapes with their shape factors (values from memory, provisional).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub enum JointShape {
    /// Bead on plate: F2 = 1, F3 = 1.
    BeadOnPlate,
    /// Fill passes of a butt weld: F2 = 0.9, F3 = 0.9.
    ButtFill,
    /// Single-run fillet weld on a corner joint: F2 = 0.9–0.67, F3 = 0.67.
    CornerFillet,
    /// Single-run fillet weld on a T-joint: F2 = 0.45–0.67, F3 = 0.67.
    TJointFillet,
}

impl JointShape {
    /// All joint shapes, in declaration order.
    pub const ALL: [JointShape; 4] = [
        JointShape::BeadOnPlate,
        JointShape::ButtFill,
        JointShape::CornerFillet,
        JointShape::TJointFillet,
    ];

    /// Canonical name, e.g. `"butt_fill"`.
    pub fn name(self) -> &'static str {
        match self {
            JointShape::BeadOnPlate => "bead_on_plate",
            JointShape::ButtFill => "butt_fill",
            JointShape::CornerFillet => "corner_fillet",
            JointShape::TJointFillet => "t_fillet",
        }
    }

    /// Parse a shape name (case-insensitive): `bead_on_plate`, `butt_fill`,
    /// `corner_fillet`, `t_fillet` (also `t_joint_fillet`).
    pub fn parse(s: &str) -> Result<JointShape, DeriveError> {
        let key = s.trim().to_ascii_lowercase().replace(['-', ' '], "_");
        match key.as_str() {
            "bead_on_plate" | "bop" => Ok(JointShape::BeadOnPlate),
            "butt_fill" | "butt" => Ok(JointShape::ButtFill),
            "corner_fillet" | "corner" => Ok(JointShape::CornerFillet),
            "t_fillet" | "t_joint_fillet" | "t_joint" => Ok(JointShape::TJointFillet),
            _ => Err(DeriveError::UnknownJointShape {
                given: s.to_string(),
                known: JointShape::ALL
                    .iter()
                    .map(|j| j.name())
                    .collect::<Vec<_>>()
                    .join(", "),
            }),
        }
    }

    /// Range (min, max) of F2 for this shape (values from memory).
    pub fn f2_range(self) -> (f64, f64) {
        match self {
            JointShape::BeadOnPlate => (1.0, 1.0),
            JointShape::ButtFill => (0.9, 0.9),
            JointShape::CornerFillet => (0.67, 0.9),
            JointShape::TJointFillet => (0.45, 0.67),
        }
    }

    /// F3 for this shape (values from memory).
    pub fn f3(self) -> f64 {
        match self {
            JointShape::BeadOnPlate => 1.0,
            JointShape::ButtFill => 0.9,
            JointShape::CornerFillet | JointShape::TJointFillet => 0.67,
        }
    }

    /// Shape factors, taking F2 at the *lower* end of its range where a range
    /// is given: the shorter t8/5, i.e. the faster cooling and harder heat-
    /// affected zone. Use [`JointShape::factors_with_f2`] to choose otherwise.
    pub fn factors(self) -> ShapeFactors {
        ShapeFactors {
            f2: self.f2_range().0,
            f3: self.f3(),
        }
    }

    /// Shape factors with a chosen F2, which must lie within
    /// [`JointShape::f2_range`].
    pub fn factors_with_f2(self, f2: f64) -> Result<ShapeFactors, DeriveError> {
        let (lo, hi) = self.f2_range();
        if f2 >= lo && f2 <= hi {
            Ok(ShapeFactors { f2, f3: self.f3() })
        } else {
            Err(DeriveError::InvalidInput(format!(
                "F2 = {f2} is outside {lo}–{hi} for {}",
                self.name()
            )))
        }
    }
}

/// Which heat-flow formula applies.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub enum CoolingMode {
    /// Thin plate, two-dimensional heat flow (d < d_t).
    TwoD,
    /// Thick plate, three-dimensional heat flow (d ≥ d_t).
    ThreeD,
}

/// Result of [`cooling_time`].
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct CoolingTime {
    /// t8/5 in s from the governing formula.
    pub t85: f64,
    /// The governing formula.
    pub mode: CoolingMode,
    /// Transition thickness d_t in mm.
    pub transition_thickness: f64,
    /// t8/5 in s from the 3-D formula.
    pub t85_3d: f64,
    /// t8/5 in s from the 2-D formula.
    pub t85_2d: f64,
    /// Whether d lies within ±10 % of d_t (the choice is marginal).
    pub marginal: bool,
}

/// t8/5 in s for 3-D (thick plate) heat flow, EN 1011-2 Annex D:
///
/// t8/5 = (6700 − 5·T0)·Q·[1/(500 − T0) − 1/(800 − T0)]·F3
///
/// `heat_input` Q in kJ/mm, `preheat` T0 in °C (< 500), `f3` shape factor.
pub fn t85_3d(heat_input: f64, preheat: f64, f3: f64) -> f64 {
    let t0 = preheat;
    (6700.0 - 5.0 * t0) * heat_input * (1.0 / (500.0 - t0) - 1.0 / (800.0 - t0)) * f3
}

/// t8/5 in s for 2-D (thin plate) heat flow, EN 1011-2 Annex D:
///
/// t8/5 = (4300 − 4.3·T0)·10⁵·(Q²/d²)·[1/(500 − T0)² − 1/(800 − T0)²]·F2
///
/// `heat_input` Q in kJ/mm, `preheat` T0 in °C (< 500), `thickness` d in mm,
/// `f2` shape factor.
pub fn t85_2d(heat_input: f64, preheat: f64, thickness: f64, f2: f64) -> f64 {
    let t0 = preheat;
    let a = 1.0 / (500.0 - t0);
    let b = 1.0 / (800.0 - t0);
    (4300.0 - 4.3 * t0)
        * 1.0e5
        * (heat_input * heat_input / (thickness * thickness))
        * (a * a - b * b)
        * f2
}

/// Transition thickness d_t in mm where the 2-D and 3-D formulas agree (for
/// F2 = F3), derived by equating them:
///
/// d_t = √{[(4300 − 4.3·T0)·10⁵/(6700 − 5·T0)]·Q·[1/(500 − T0) + 1/(800 − T0)]}
pub fn transition_thickness(heat_input: f64, preheat: f64) -> f64 {
    let t0 = preheat;
    ((4300.0 - 4.3 * t0) * 1.0e5 / (6700.0 - 5.0 * t0)
        * heat_input
        * (1.0 / (500.0 - t0) + 1.0 / (800.0 - t0)))
        .sqrt()
}

/// t8/5 with the formula chosen by the transition thickness: 3-D for
/// d ≥ d_t, else 2-D (EN 1011-2 Annex D).
///
/// Errors ([`DeriveError::InvalidInput`]) unless Q > 0, d > 0, T0 < 500 °C,
/// all finite, and F2, F3 > 0.
pub fn cooling_time(
    heat_input: f64,
    preheat: f64,
    thickness: f64,
    factors: ShapeFactors,
) -> Result<CoolingTime, DeriveError> {
    let invalid = |m: String| Err(DeriveError::InvalidInput(m));
    if !(heat_input.is_finite() && heat_input > 0.0) {
        return invalid(format!("heat input {heat_input} kJ/mm must be > 0"));
    }
    if !(preheat.is_finite() && preheat < 500.0) {
        return invalid(format!(
            "preheat/interpass temperature {preheat} °C must be below 500 °C"
        ));
    }
    if !(thickness.is_finite() && thickness > 0.0) {
        return invalid(format!("plate thickness {thickness} mm must be > 0"));
    }
    if !(factors.f2.is_finite() && factors.f2 > 0.0 && factors.f3.is_finite() && factors.f3 > 0.0) {
        return invalid(format!(
            "shape factors F2 = {}, F3 = {} must be > 0",
            factors.f2, factors.f3
        ));
    }
    let d_t = transition_thickness(heat_input, preheat);
    let t3 = t85_3d(heat_input, preheat, factors.f3);
    let t2 = t85_2d(heat_input, preheat, thickness, factors.f2);
    let mode = if thickness >= d_t {
        CoolingMode::ThreeD
    } else {
        CoolingMode::TwoD
    };
    Ok(CoolingTime {
        t85: match mode {
            CoolingMode::ThreeD => t3,
            CoolingMode::TwoD => t2,
        },
        mode,
        transition_thickness: d_t,
        t85_3d: t3,
        t85_2d: t2,
        marginal: (thickness - d_t).abs() <= MARGINAL_BAND * d_t,
    })
}

/// Warnings for [`cooling_time`]: the choice between 2-D and 3-D is marginal
/// when d is within ±10 % of d_t. No validity range of the formulas is
/// documented in the reference; inputs outside the domain give no warning
/// here (they are errors of [`cooling_time`]).
pub fn check_cooling_time(heat_input: f64, preheat: f64, thickness: f64) -> Vec<String> {
    let d_t = transition_thickness(heat_input, preheat);
    if d_t.is_finite() && (thickness - d_t).abs() <= MARGINAL_BAND * d_t {
        vec![format!(
            "t8/5: plate thickness {thickness} mm is within ±10 % of the transition thickness \
             {d_t:.2} mm; the choice between 2-D and 3-D heat flow is marginal"
        )]
    } else {
        Vec::new()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    const F1: ShapeFactors = ShapeFactors { f2: 1.0, f3: 1.0 };

    #[test]
    fn q1_t20() {
        // 5.2885 s — reference, EN 1011-2 Annex D 3-D, Q 1.0, T0 20, F = 1 [S].
        assert_abs_diff_eq!(t85_3d(1.0, 20.0, 1.0), 5.2885, epsilon = 5e-5);
        // 11.3636 s — reference, 2-D at d 10, Q 1.0, T0 20, F = 1 [S].
        assert_abs_diff_eq!(t85_2d(1.0, 20.0, 10.0, 1.0), 11.3636, epsilon = 5e-5);
        // d_t 14.6586 mm — reference, transition thickness Q 1.0, T0 20 [S].
        assert_abs_diff_eq!(transition_thickness(1.0, 20.0), 14.6586, epsilon = 5e-5);
    }

    #[test]
    fn q15_t20_d25_three_d_governs() {
        let ct = cooling_time(1.5, 20.0, 25.0, F1).unwrap();
        // 3-D 7.9327 s governs, d_t 17.9531 mm — reference, Q 1.5, T0 20, d 25 [S].
        assert_eq!(ct.mode, CoolingMode::ThreeD);
        assert_abs_diff_eq!(ct.t85, 7.9327, epsilon = 5e-5);
        assert_abs_diff_eq!(ct.transition_thickness, 17.9531, epsilon = 5e-5);
        assert!(!ct.marginal);
        assert!(check_cooling_time(1.5, 20.0, 25.0).is_empty());
    }

    #[test]
    fn q15_t100_d15_two_d_governs() {
        let ct = cooling_time(1.5, 100.0, 15.0, F1).unwrap();
        // 2-D 16.2895 s governs, d_t 19.1789 mm — reference, Q 1.5, T0 100, d 15 [S].
        assert_eq!(ct.mode, CoolingMode::TwoD);
        assert_abs_diff_eq!(ct.t85, 16.2895, epsilon = 5e-5);
        assert_abs_diff_eq!(ct.transition_thickness, 19.1789, epsilon = 5e-5);
        assert!(!ct.marginal);
    }

    #[test]
    fn q2_t20_d20_two_d_marginal() {
        let ct = cooling_time(2.0, 20.0, 20.0, F1).unwrap();
        // 2-D 11.3636 s, d_t 20.7304 mm — reference, Q 2.0, T0 20, d 20 [S].
        assert_eq!(ct.mode, CoolingMode::TwoD);
        assert_abs_diff_eq!(ct.t85, 11.3636, epsilon = 5e-5);
        assert_abs_diff_eq!(ct.transition_thickness, 20.7304, epsilon = 5e-5);
        // d = 20 is 3.5 % below d_t: marginal choice.
        assert!(ct.marginal);
        let w = check_cooling_time(2.0, 20.0, 20.0);
        assert_eq!(w.len(), 1);
        assert!(w[0].contains("marginal"));
    }

    #[test]
    fn formulas_agree_at_transition_thickness() {
        for (q, t0) in [(0.8, 20.0), (1.5, 150.0), (3.0, -10.0)] {
            let d_t = transition_thickness(q, t0);
            assert_abs_diff_eq!(t85_2d(q, t0, d_t, 1.0), t85_3d(q, t0, 1.0), epsilon = 1e-9);
        }
    }

    #[test]
    fn shape_factors_scale_results() {
        let base = cooling_time(1.5, 20.0, 25.0, F1).unwrap();
        let butt = cooling_time(1.5, 20.0, 25.0, JointShape::ButtFill.factors()).unwrap();
        // Fill pass of a butt weld F3 = 0.9 — reference shape factors [M],
        // value from memory.
        assert_abs_diff_eq!(butt.t85, 0.9 * base.t85, epsilon = 1e-12);
        // F2/F3 pairs — reference [M], values from memory.
        assert_eq!(JointShape::BeadOnPlate.factors(), F1);
        assert_eq!(JointShape::CornerFillet.f2_range(), (0.67, 0.9));
        assert_eq!(JointShape::TJointFillet.f2_range(), (0.45, 0.67));
        assert_abs_diff_eq!(JointShape::TJointFillet.f3(), 0.67, epsilon = 1e-12);
        assert_abs_diff_eq!(JointShape::TJointFillet.factors().f2, 0.45, epsilon = 1e-12);
        assert!(JointShape::CornerFillet.factors_with_f2(0.8).is_ok());
        assert!(JointShape::CornerFillet.factors_with_f2(0.5).is_err());
        for j in JointShape::ALL {
            assert_eq!(JointShape::parse(j.name()).unwrap(), j);
        }
        assert!(matches!(
            JointShape::parse("lap"),
            Err(DeriveError::UnknownJointShape { .. })
        ));
    }

    #[test]
    fn bad_inputs_are_errors() {
        assert!(cooling_time(0.0, 20.0, 20.0, F1).is_err());
        assert!(cooling_time(-1.0, 20.0, 20.0, F1).is_err());
        assert!(cooling_time(1.0, 500.0, 20.0, F1).is_err());
        assert!(cooling_time(1.0, 20.0, 0.0, F1).is_err());
        assert!(cooling_time(1.0, f64::NAN, 20.0, F1).is_err());
        let bad = ShapeFactors { f2: 0.0, f3: 1.0 };
        assert!(cooling_time(1.0, 20.0, 20.0, bad).is_err());
        let err = cooling_time(1.0, 600.0, 20.0, F1).unwrap_err();
        assert!(err.to_string().contains("below 500"));
    }
}
