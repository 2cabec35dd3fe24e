//! Charpy V-notch impact energy: the hyperbolic-tangent transition curve and
//! the sub-grade requirements of EN 10025-2.
//!
//! Energies in J, temperatures in °C. The curve is
//!
//! KV(T) = A + B·tanh((T − T0)/C), A = (US + LS)/2, B = (US − LS)/2,
//!
//! with LS and US the lower and upper shelf energies, T0 the mid-transition
//! temperature and C the half-width of the transition (in °C, a temperature
//! *difference*). Its inverse, for LS < E < US, is
//!
//! T_E = T0 + C·atanh((E − A)/B).
//!
//! Source: the form standardised in ASTM E2215; Oldfield (1975), ASTM
//! Standardization News 3(11):24. Energies refer to the standard specimen
//! 10 × 10 × 55 mm with a 2 mm V-notch (ISO 148-1, ASTM E23).

use crate::fixedmath::FixedMath;
use std::fmt;
use std::str::FromStr;

use serde::{Deserialize, Serialize};

use super::DeriveError;

/// KV(T) = A + B·tanh((T − T0)/C) with A = (US + LS)/2, B = (US − LS)/2
/// (ASTM E2215; Oldfield 1975). Temperatures in °C, energies in J.
///
/// Validity: meaningful for US > LS ≥ 0 and C > 0 (see [`TanhCurve::new`]).
pub fn charpy_tanh(temperature: f64, lower_shelf: f64, upper_shelf: f64, t0: f64, c: f64) -> f64 {
    let a = 0.5 * (upper_shelf + lower_shelf);
    let b = 0.5 * (upper_shelf - lower_shelf);
    a + b * ((temperature - t0) / c).tanh_fixed()
}

/// Temperature at which the tanh curve reaches `energy` E:
/// T_E = T0 + C·atanh((E − A)/B) (ASTM E2215; Oldfield 1975).
///
/// Errors: [`DeriveError::EnergyOutsideShelves`] unless LS < E < US
/// strictly; [`DeriveError::InvalidInput`] for a curve that
/// [`TanhCurve::new`] rejects.
pub fn charpy_tanh_temperature(
    energy: f64,
    lower_shelf: f64,
    upper_shelf: f64,
    t0: f64,
    c: f64,
) -> Result<f64, DeriveError> {
    TanhCurve::new(lower_shelf, upper_shelf, t0, c)?.temperature_for(energy)
}

/// A tanh Charpy transition curve with validated parameters.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct TanhCurve {
    lower_shelf: f64,
    upper_shelf: f64,
    t0: f64,
    c: f64,
}

impl TanhCurve {
    /// A curve with lower shelf LS (J), upper shelf US (J), mid-transition
    /// temperature T0 (°C) and half-width C (°C).
    ///
    /// Errors ([`DeriveError::InvalidInput`]) unless all are finite,
    /// LS ≥ 0, US > LS and C > 0.
    pub fn new(lower_shelf: f64, upper_shelf: f64, t0: f64, c: f64) -> Result<Self, DeriveError> {
        let finite = [lower_shelf, upper_shelf, t0, c]
            .iter()
            .all(|x| x.is_finite());
        if !finite {
            return Err(DeriveError::InvalidInput(format!(
                "tanh curve parameters must be finite (LS {lower_shelf}, US {upper_shelf}, \
                 T0 {t0}, C {c})"
            )));
        }
        if lower_shelf < 0.0 {
            return Err(DeriveError::InvalidInput(format!(
                "lower shelf {lower_shelf} J must be ≥ 0"
            )));
        }
        if upper_shelf <= lower_shelf {
            return Err(DeriveError::InvalidInput(format!(
                "upper shelf {upper_shelf} J must exceed lower shelf {lower_shelf} J"
            )));
        }
        if c <= 0.0 {
            return Err(DeriveError::InvalidInput(format!(
                "transition half-width C = {c} °C must be > 0"
            )));
        }
        Ok(TanhCurve {
            lower_shelf,
            upper_shelf,
            t0,
            c,
        })
    }

    /// Lower shelf energy LS, J.
    pub fn lower_shelf(&self) -> f64 {
        self.lower_shelf
    }

    /// Upper shelf energy US, J.
    pub fn upper_shelf(&self) -> f64 {
        self.upper_shelf
    }

    /// Mid-transition temperature T0, °C.
    pub fn t0(&self) -> f64 {
        self.t0
    }

    /// Transition half-width C, °C.
    pub fn c(&self) -> f64 {
        self.c
    }

    /// Impact energy KV(T) in J at `temperature` in °C.
    pub fn energy(&self, temperature: f64) -> f64 {
        charpy_tanh(
            temperature,
            self.lower_shelf,
            self.upper_shelf,
            self.t0,
            self.c,
        )
    }

    /// Temperature in °C at which KV reaches `energy` J; an error unless
    /// LS < E < US strictly.
    pub fn temperature_for(&self, energy: f64) -> Result<f64, DeriveError> {
        // NaN fails both comparisons and is rejected too.
        if !(energy > self.lower_shelf && energy < self.upper_shelf) {
            return Err(DeriveError::EnergyOutsideShelves {
                energy,
                lower: self.lower_shelf,
                upper: self.upper_shelf,
            });
        }
        let a = 0.5 * (self.upper_shelf + self.lower_shelf);
        let b = 0.5 * (self.upper_shelf - self.lower_shelf);
        Ok(self.t0 + self.c * ((energy - a) / b).atanh())
    }

    /// T27J (ISO 148-1 symbol Tt27): temperature of 27 J.
    pub fn t27j(&self) -> Result<f64, DeriveError> {
        self.temperature_for(27.0)
    }

    /// T40J: temperature of 40 J.
    pub fn t40j(&self) -> Result<f64, DeriveError> {
        self.temperature_for(40.0)
    }

    /// Temperature at which KV is 50 % of the upper shelf (needs LS < US/2).
    pub fn t_half_upper_shelf(&self) -> Result<f64, DeriveError> {
        self.temperature_for(0.5 * self.upper_shelf)
    }
}

/// Sub-grades of EN 10025-2 structural steels: minimum mean Charpy V energy
/// at a test temperature (longitudinal 10 mm × 10 mm specimens).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub enum SubGrade {
    /// 27 J at +20 °C.
    JR,
    /// 27 J at 0 °C.
    J0,
    /// 27 J at −20 °C.
    J2,
    /// 40 J at −20 °C.
    K2,
}

impl SubGrade {
    /// All sub-grades, in declaration order.
    pub const ALL: [SubGrade; 4] = [SubGrade::JR, SubGrade::J0, SubGrade::J2, SubGrade::K2];

    /// Fraction of the required mean that one of the three single values may
    /// fall to (70 %, EN 10025).
    pub const SINGLE_VALUE_FRACTION: f64 = 0.7;

    /// Required minimum mean energy, J.
    pub fn energy(self) -> f64 {
        match self {
            SubGrade::JR | SubGrade::J0 | SubGrade::J2 => 27.0,
            SubGrade::K2 => 40.0,
        }
    }

    /// Test temperature, °C.
    pub fn temperature(self) -> f64 {
        match self {
            SubGrade::JR => 20.0,
            SubGrade::J0 => 0.0,
            SubGrade::J2 | SubGrade::K2 => -20.0,
        }
    }

    /// Lowest single value accepted for one of the three specimens, J
    /// (70 % of the required mean, EN 10025).
    pub fn min_single_value(self) -> f64 {
        Self::SINGLE_VALUE_FRACTION * self.energy()
    }

    /// Canonical name, e.g. `"J2"`.
    pub fn name(self) -> &'static str {
        match self {
            SubGrade::JR => "JR",
            SubGrade::J0 => "J0",
            SubGrade::J2 => "J2",
            SubGrade::K2 => "K2",
        }
    }

    /// Parse a sub-grade name (case-insensitive; `JO` is read as `J0`).
    pub fn parse(s: &str) -> Result<SubGrade, DeriveError> {
        match s.trim().to_ascii_uppercase().as_str() {
            "JR" => Ok(SubGrade::JR),
            "J0" | "JO" => Ok(SubGrade::J0),
            "J2" => Ok(SubGrade::J2),
            "K2" => Ok(SubGrade::K2),
            _ => Err(DeriveError::UnknownSubGrade {
                given: s.to_string(),
            }),
        }
    }

    /// Whether a transition curve meets the required mean energy at the
    /// test temperature.
    pub fn is_met_by(self, curve: &TanhCurve) -> bool {
        curve.energy(self.temperature()) >= self.energy()
    }
}

impl fmt::Display for SubGrade {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

impl FromStr for SubGrade {
    type Err = DeriveError;

    fn from_str(s: &str) -> Result<Self, Self::Err> {
        SubGrade::parse(s)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    fn reference_curve() -> TanhCurve {
        // LS 3 J, US 200 J, T0 −20 °C, C 25 °C — reference check curve.
        TanhCurve::new(3.0, 200.0, -20.0, 25.0).unwrap()
    }

    #[test]
    fn reference_checks() {
        let k = reference_curve();
        // KV(0) = 166.908 J — reference, tanh curve (ASTM E2215; Oldfield 1975) [S].
        assert_abs_diff_eq!(k.energy(0.0), 166.908, epsilon = 5e-4);
        // KV(−40) = 36.092 J — reference, tanh curve [S].
        assert_abs_diff_eq!(k.energy(-40.0), 36.092, epsilon = 5e-4);
        // T27J = −44.691 °C — reference, inverse tanh curve [S]. The formula
        // as printed gives −44.69047 in double precision, which rounds to
        // −44.690 (the printed value looks double-rounded via −44.6905), so
        // this check is held to 1e-3, not to the printed 3rd decimal
        // (inconsistency reported).
        assert_abs_diff_eq!(k.t27j().unwrap(), -44.691, epsilon = 1e-3);
        // T40J = −38.303 °C — reference, inverse tanh curve [S].
        assert_abs_diff_eq!(k.t40j().unwrap(), -38.303, epsilon = 5e-4);
        // The plain functions give the same values (reference, [S]).
        assert_abs_diff_eq!(
            charpy_tanh(0.0, 3.0, 200.0, -20.0, 25.0),
            166.908,
            epsilon = 5e-4
        );
        assert_abs_diff_eq!(
            charpy_tanh_temperature(27.0, 3.0, 200.0, -20.0, 25.0).unwrap(),
            -44.691,
            epsilon = 1e-3
        );
    }

    #[test]
    fn inverse_round_trips_and_midpoint() {
        let k = reference_curve();
        for t in [-80.0, -45.0, -20.0, 0.0, 30.0] {
            let e = k.energy(t);
            assert_abs_diff_eq!(k.temperature_for(e).unwrap(), t, epsilon = 1e-6);
        }
        // At T0 the energy is A = (US + LS)/2 = 101.5 J — the tanh form
        // (ASTM E2215) with tanh(0) = 0 [S].
        assert_abs_diff_eq!(k.energy(-20.0), 101.5, epsilon = 1e-12);
        // 50 % of the upper shelf = 100 J, reached just below T0.
        assert!(k.t_half_upper_shelf().unwrap() < -20.0);
    }

    #[test]
    fn inverse_outside_shelves_is_an_error() {
        let k = reference_curve();
        for e in [3.0, 2.0, 200.0, 250.0, f64::NAN] {
            assert!(matches!(
                k.temperature_for(e),
                Err(DeriveError::EnergyOutsideShelves { .. })
            ));
        }
        let low = TanhCurve::new(30.0, 150.0, 0.0, 20.0).unwrap();
        assert!(low.t27j().is_err());
        assert!(charpy_tanh_temperature(27.0, 3.0, 200.0, -20.0, 0.0).is_err());
    }

    #[test]
    fn bad_curves_are_errors() {
        assert!(TanhCurve::new(200.0, 3.0, -20.0, 25.0).is_err());
        assert!(TanhCurve::new(3.0, 3.0, -20.0, 25.0).is_err());
        assert!(TanhCurve::new(3.0, 200.0, -20.0, -5.0).is_err());
        assert!(TanhCurve::new(-1.0, 200.0, -20.0, 25.0).is_err());
        assert!(TanhCurve::new(3.0, f64::INFINITY, -20.0, 25.0).is_err());
    }

    #[test]
    fn sub_grades() {
        // EN 10025-2 sub-grades, via the reference [S]: JR 27 J at +20 °C,
        // J0 27 J at 0 °C, J2 27 J at −20 °C, K2 40 J at −20 °C.
        let expect = [
            (SubGrade::JR, 27.0, 20.0),
            (SubGrade::J0, 27.0, 0.0),
            (SubGrade::J2, 27.0, -20.0),
            (SubGrade::K2, 40.0, -20.0),
        ];
        for (g, e, t) in expect {
            assert_abs_diff_eq!(g.energy(), e, epsilon = 1e-12);
            assert_abs_diff_eq!(g.temperature(), t, epsilon = 1e-12);
            assert_eq!(SubGrade::parse(g.name()).unwrap(), g);
        }
        // 70 % single-value rule, EN 10025 via the reference [S]: 0.7 × 27 J.
        assert_abs_diff_eq!(SubGrade::J2.min_single_value(), 18.9, epsilon = 1e-12);
        assert_eq!(SubGrade::parse("jo").unwrap(), SubGrade::J0);
        assert!(matches!(
            SubGrade::parse("K3"),
            Err(DeriveError::UnknownSubGrade { .. })
        ));
        // The reference curve has KV(−20) = 101.5 J ≥ 40 J: all sub-grades met.
        let k = reference_curve();
        assert!(SubGrade::ALL.iter().all(|g| g.is_met_by(&k)));
        // A steep curve centred at 0 °C: KV(−20) = 101.5 − 98.5·tanh(2) ≈ 6.5 J
        // (tanh form, ASTM E2215 [S]) fails J2 and K2, meets J0 and JR.
        let steep = TanhCurve::new(3.0, 200.0, 0.0, 10.0).unwrap();
        assert!(SubGrade::JR.is_met_by(&steep));
        assert!(SubGrade::J0.is_met_by(&steep));
        assert!(!SubGrade::J2.is_met_by(&steep));
        assert!(!SubGrade::K2.is_met_by(&steep));
    }
}
