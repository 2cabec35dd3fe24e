//! Units of the trade: composition, temperature, impact energy, stress, heat
//! input, travel speed and percentages.
//!
//! Every quantity has one *internal* unit, in which the rest of the crate
//! computes:
//!
//! | quantity | internal unit | other units accepted |
//! |---|---|---|
//! | composition (mass fraction) | wt% | ppm (by mass) |
//! | temperature | °C | °F, K |
//! | impact energy | J | ft·lbf |
//! | stress | MPa | ksi |
//! | heat input (arc energy per length) | kJ/mm | J/mm |
//! | travel speed | mm/s | mm/min |
//! | percent (elongation, reduction of area, shear area ...) | % | fraction (0–1) |
//! | length (plate thickness) | mm | in |
//! | time (cooling time) | s | — |
//! | arc voltage | V | — |
//! | welding current | A | — |
//! | dimensionless | 1 | — |
//!
//! Conversion factors follow NIST Special Publication 811 (Guide for the Use
//! of the International System of Units):
//!
//! - 1 ft·lbf = 0.3048 m × 4.4482216152605 N = 1.355 817 948 331 400 4 J (exact)
//! - 1 ksi = 6.894 757 293 168 361 MPa (1000 lbf/in², from the exact inch and
//!   pound-force)
//! - t/°C = (t/°F − 32)/1.8; t/°C = T/K − 273.15
//! - 1 ppm (by mass) = 0.0001 wt%
//! - 1 J/mm = 0.001 kJ/mm; 1 mm/min = 1/60 mm/s
//! - 1 in = 25.4 mm (exact); a fraction of 1 = 100 %
//!
//! Note that `%` here means a plain percentage (elongation, reduction of area,
//! fracture appearance) and is *not* an alias of `wt%`.
//!
//! Temperature conversions with [`Unit::to_internal`] treat the value as an
//! absolute temperature (the offset is applied). For a temperature
//! *difference* (e.g. the width parameter of a Charpy transition curve) use
//! [`Unit::interval_to_internal`].

use std::fmt;
use std::str::FromStr;

use serde::{Deserialize, Deserializer, Serialize, Serializer};
use thiserror::Error;

/// Exact length of one foot in metres (international foot).
const FOOT_M: f64 = 0.3048;
/// Exact pound-force in newtons (NIST SP 811).
const POUND_FORCE_N: f64 = 4.448_221_615_260_5;
/// 1 ft·lbf in joules: 0.3048 × 4.4482216152605 (NIST SP 811).
pub const J_PER_FT_LBF: f64 = FOOT_M * POUND_FORCE_N;
/// 1 ksi in MPa (NIST SP 811; 6.894757 to the printed precision).
pub const MPA_PER_KSI: f64 = 6.894_757_293_168_361;
/// 1 ppm (by mass) in wt%.
pub const WT_PCT_PER_PPM: f64 = 1.0e-4;
/// Offset between the kelvin and degree-Celsius scales.
pub const KELVIN_OFFSET: f64 = 273.15;
/// 1 in in mm (exact, NIST SP 811).
pub const MM_PER_INCH: f64 = 25.4;
/// A fraction of 1 in percent.
pub const PERCENT_PER_FRACTION: f64 = 100.0;

/// What a number measures.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Quantity {
    /// Mass fraction of an element (internal unit wt%).
    Composition,
    /// Temperature (internal unit °C).
    Temperature,
    /// Absorbed impact energy, e.g. Charpy KV (internal unit J).
    ImpactEnergy,
    /// Stress or strength (internal unit MPa).
    Stress,
    /// Arc energy or heat input per unit weld length (internal unit kJ/mm).
    HeatInput,
    /// Welding travel speed (internal unit mm/s).
    TravelSpeed,
    /// A plain percentage such as elongation or reduction of area (internal unit %).
    Percent,
    /// A length such as plate thickness (internal unit mm).
    Length,
    /// A time such as a cooling time (internal unit s).
    Time,
    /// Arc voltage (internal unit V).
    Voltage,
    /// Welding current (internal unit A).
    Current,
    /// A pure number (internal unit 1).
    Dimensionless,
    /// Vickers hardness (HV). The hardness scales are not converted into
    /// one another: conversion tables (ISO 18265, ASTM E140) hold only for
    /// some steels and conditions, so each scale is its own quantity.
    HardnessVickers,
    /// Brinell hardness (HB, HBW).
    HardnessBrinell,
    /// Rockwell C hardness (HRC).
    HardnessRockwellC,
}

impl Quantity {
    /// All quantities, in declaration order.
    pub const ALL: [Quantity; 15] = [
        Quantity::Composition,
        Quantity::Temperature,
        Quantity::ImpactEnergy,
        Quantity::Stress,
        Quantity::HeatInput,
        Quantity::TravelSpeed,
        Quantity::Percent,
        Quantity::Length,
        Quantity::Time,
        Quantity::Voltage,
        Quantity::Current,
        Quantity::Dimensionless,
        Quantity::HardnessVickers,
        Quantity::HardnessBrinell,
        Quantity::HardnessRockwellC,
    ];

    /// Human-readable name of the quantity.
    pub fn name(self) -> &'static str {
        match self {
            Quantity::Composition => "composition",
            Quantity::Temperature => "temperature",
            Quantity::ImpactEnergy => "impact energy",
            Quantity::Stress => "stress",
            Quantity::HeatInput => "heat input",
            Quantity::TravelSpeed => "travel speed",
            Quantity::Percent => "percent",
            Quantity::Length => "length",
            Quantity::Time => "time",
            Quantity::Voltage => "voltage",
            Quantity::Current => "current",
            Quantity::Dimensionless => "dimensionless",
            Quantity::HardnessVickers => "Vickers hardness",
            Quantity::HardnessBrinell => "Brinell hardness",
            Quantity::HardnessRockwellC => "Rockwell C hardness",
        }
    }
}

impl fmt::Display for Quantity {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

/// A unit of measurement known to mettle.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Unit {
    /// Percent by mass (internal unit of composition).
    WtPercent,
    /// Parts per million by mass; 1 ppm = 0.0001 wt%.
    Ppm,
    /// Degree Celsius (internal unit of temperature).
    Celsius,
    /// Degree Fahrenheit; °C = (°F − 32)/1.8.
    Fahrenheit,
    /// Kelvin; °C = K − 273.15.
    Kelvin,
    /// Joule (internal unit of impact energy).
    Joule,
    /// Foot pound-force; 1 ft·lbf = 1.355818 J.
    FootPoundForce,
    /// Megapascal (internal unit of stress).
    MegaPascal,
    /// Kilopound-force per square inch; 1 ksi = 6.894757 MPa.
    Ksi,
    /// Kilojoule per millimetre (internal unit of heat input).
    KilojoulePerMm,
    /// Joule per millimetre; 1 J/mm = 0.001 kJ/mm.
    JoulePerMm,
    /// Millimetre per second (internal unit of travel speed).
    MmPerSecond,
    /// Millimetre per minute; 1 mm/min = 1/60 mm/s.
    MmPerMinute,
    /// Plain percent (elongation, reduction of area ...); not wt%.
    Percent,
    /// A fraction of 1 (e.g. shear area 0.5); 1 = 100 %.
    Fraction,
    /// Millimetre (internal unit of length).
    Millimetre,
    /// Inch; 1 in = 25.4 mm (exact).
    Inch,
    /// Second (internal unit of time).
    Second,
    /// Volt (internal unit of arc voltage).
    Volt,
    /// Ampere (internal unit of welding current).
    Ampere,
    /// A pure number.
    Dimensionless,
    /// Vickers hardness number.
    Hv,
    /// Brinell hardness number.
    Hb,
    /// Rockwell C hardness number.
    Hrc,
}

/// Errors raised while parsing or converting units.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum UnitError {
    /// The spelling is not one mettle knows.
    #[error("unknown unit `{given}`; known units: {known}")]
    Unknown {
        /// The spelling that was given.
        given: String,
        /// Every known unit with its accepted spellings.
        known: String,
    },
    /// A conversion between units of different quantities was asked for.
    #[error("cannot convert {from} ({from_quantity}) to {to} ({to_quantity})")]
    QuantityMismatch {
        /// Source unit (canonical spelling).
        from: String,
        /// Quantity of the source unit.
        from_quantity: Quantity,
        /// Target unit (canonical spelling).
        to: String,
        /// Quantity of the target unit.
        to_quantity: Quantity,
    },
}

impl Unit {
    /// All units, in declaration order.
    pub const ALL: [Unit; 24] = [
        Unit::WtPercent,
        Unit::Ppm,
        Unit::Celsius,
        Unit::Fahrenheit,
        Unit::Kelvin,
        Unit::Joule,
        Unit::FootPoundForce,
        Unit::MegaPascal,
        Unit::Ksi,
        Unit::KilojoulePerMm,
        Unit::JoulePerMm,
        Unit::MmPerSecond,
        Unit::MmPerMinute,
        Unit::Percent,
        Unit::Fraction,
        Unit::Millimetre,
        Unit::Inch,
        Unit::Second,
        Unit::Volt,
        Unit::Ampere,
        Unit::Dimensionless,
        Unit::Hv,
        Unit::Hb,
        Unit::Hrc,
    ];

    /// Accepted spellings, compared after trimming, removing inner spaces and
    /// lower-casing. No two known units differ only by letter case, so the
    /// match is case-insensitive throughout.
    fn spellings(self) -> &'static [&'static str] {
        match self {
            Unit::WtPercent => &["wt%", "wt.%", "wt.-%", "wtpct", "mass%"],
            Unit::Ppm => &["ppm", "ppmw", "ppm(mass)"],
            Unit::Celsius => &["°c", "c", "degc", "deg.c", "celsius", "℃"],
            Unit::Fahrenheit => &["°f", "f", "degf", "deg.f", "fahrenheit", "℉"],
            Unit::Kelvin => &["k", "kelvin"],
            Unit::Joule => &["j", "joule", "joules"],
            Unit::FootPoundForce => &["ft·lbf", "ft*lbf", "ft.lbf", "ft-lbf", "ftlbf", "ft⋅lbf"],
            Unit::MegaPascal => &["mpa", "n/mm2", "n/mm²"],
            Unit::Ksi => &["ksi"],
            Unit::KilojoulePerMm => &["kj/mm"],
            Unit::JoulePerMm => &["j/mm"],
            Unit::MmPerSecond => &["mm/s"],
            Unit::MmPerMinute => &["mm/min"],
            Unit::Percent => &["%", "pct", "percent"],
            Unit::Fraction => &["fraction", "frac"],
            Unit::Millimetre => &["mm", "millimetre", "millimeter"],
            Unit::Inch => &["in", "inch", "inches", "\""],
            Unit::Second => &["s", "sec", "second", "seconds"],
            Unit::Volt => &["v", "volt", "volts"],
            Unit::Ampere => &["a", "amp", "ampere", "amperes"],
            Unit::Dimensionless => &["", "1", "-"],
            Unit::Hv => &["hv", "hv10", "hv5", "hv1", "hv30"],
            Unit::Hb => &["hb", "hbw", "hbs"],
            Unit::Hrc => &["hrc"],
        }
    }

    /// Parse a unit spelling such as `"wt%"`, `"degF"`, `"ft·lbf"`, `"ksi"`,
    /// `"J/mm"` or `""` (dimensionless).
    ///
    /// Surrounding and inner whitespace is ignored and letter case does not
    /// matter. An unknown spelling gives [`UnitError::Unknown`], whose message
    /// lists every known unit.
    pub fn parse(s: &str) -> Result<Unit, UnitError> {
        let key: String = s
            .chars()
            .filter(|c| !c.is_whitespace())
            .flat_map(char::to_lowercase)
            .collect();
        Unit::ALL
            .iter()
            .copied()
            .find(|u| u.spellings().contains(&key.as_str()))
            .ok_or_else(|| UnitError::Unknown {
                given: s.to_string(),
                known: Unit::known_list(),
            })
    }

    /// Every known unit with its quantity and accepted spellings, for messages.
    pub fn known_list() -> String {
        Unit::ALL
            .iter()
            .map(|u| {
                let alts: Vec<String> = u
                    .spellings()
                    .iter()
                    .map(|s| {
                        if s.is_empty() {
                            "\"\"".to_string()
                        } else {
                            (*s).to_string()
                        }
                    })
                    .collect();
                format!("{} [{}: {}]", u.symbol(), u.quantity(), alts.join(", "))
            })
            .collect::<Vec<_>>()
            .join("; ")
    }

    /// Canonical spelling, as used by `Display` and serde.
    pub fn symbol(self) -> &'static str {
        match self {
            Unit::WtPercent => "wt%",
            Unit::Ppm => "ppm",
            Unit::Celsius => "°C",
            Unit::Fahrenheit => "°F",
            Unit::Kelvin => "K",
            Unit::Joule => "J",
            Unit::FootPoundForce => "ft·lbf",
            Unit::MegaPascal => "MPa",
            Unit::Ksi => "ksi",
            Unit::KilojoulePerMm => "kJ/mm",
            Unit::JoulePerMm => "J/mm",
            Unit::MmPerSecond => "mm/s",
            Unit::MmPerMinute => "mm/min",
            Unit::Percent => "%",
            Unit::Fraction => "fraction",
            Unit::Millimetre => "mm",
            Unit::Inch => "in",
            Unit::Second => "s",
            Unit::Volt => "V",
            Unit::Ampere => "A",
            Unit::Dimensionless => "1",
            Unit::Hv => "HV",
            Unit::Hb => "HB",
            Unit::Hrc => "HRC",
        }
    }

    /// Plain-ASCII spelling (for CSV headers and terminals); parses back to
    /// the same unit.
    pub fn ascii_symbol(self) -> &'static str {
        match self {
            Unit::Celsius => "degC",
            Unit::Fahrenheit => "degF",
            Unit::FootPoundForce => "ft*lbf",
            other => other.symbol(),
        }
    }

    /// The quantity this unit measures.
    pub fn quantity(self) -> Quantity {
        match self {
            Unit::WtPercent | Unit::Ppm => Quantity::Composition,
            Unit::Celsius | Unit::Fahrenheit | Unit::Kelvin => Quantity::Temperature,
            Unit::Joule | Unit::FootPoundForce => Quantity::ImpactEnergy,
            Unit::MegaPascal | Unit::Ksi => Quantity::Stress,
            Unit::KilojoulePerMm | Unit::JoulePerMm => Quantity::HeatInput,
            Unit::MmPerSecond | Unit::MmPerMinute => Quantity::TravelSpeed,
            Unit::Percent | Unit::Fraction => Quantity::Percent,
            Unit::Millimetre | Unit::Inch => Quantity::Length,
            Unit::Second => Quantity::Time,
            Unit::Volt => Quantity::Voltage,
            Unit::Ampere => Quantity::Current,
            Unit::Dimensionless => Quantity::Dimensionless,
            Unit::Hv => Quantity::HardnessVickers,
            Unit::Hb => Quantity::HardnessBrinell,
            Unit::Hrc => Quantity::HardnessRockwellC,
        }
    }

    /// The internal unit of a quantity: wt%, °C, J, MPa, kJ/mm, mm/s, %, mm,
    /// s, V, A, 1.
    pub fn internal_for(quantity: Quantity) -> Unit {
        match quantity {
            Quantity::Composition => Unit::WtPercent,
            Quantity::Temperature => Unit::Celsius,
            Quantity::ImpactEnergy => Unit::Joule,
            Quantity::Stress => Unit::MegaPascal,
            Quantity::HeatInput => Unit::KilojoulePerMm,
            Quantity::TravelSpeed => Unit::MmPerSecond,
            Quantity::Percent => Unit::Percent,
            Quantity::Length => Unit::Millimetre,
            Quantity::Time => Unit::Second,
            Quantity::Voltage => Unit::Volt,
            Quantity::Current => Unit::Ampere,
            Quantity::Dimensionless => Unit::Dimensionless,
            Quantity::HardnessVickers => Unit::Hv,
            Quantity::HardnessBrinell => Unit::Hb,
            Quantity::HardnessRockwellC => Unit::Hrc,
        }
    }

    /// The unit a column name's suffix spells, for charts of a model trained
    /// without a schema: `ni_wt` → wt%, `uts_mpa` → MPa, `charpy_j` → J,
    /// `test_temp_c` → °C, `heat_input_kj_mm` → kJ/mm, `elong_pct` → %,
    /// `o_ppm` → ppm. Only suffixes after an underscore count, the last two
    /// parts (read as a ratio, `kj_mm`) before the last one; the one-letter
    /// spellings of volts and amperes, and seconds, are not read from a
    /// suffix (too easily a name's own letter). The naming habit is common
    /// practice, no source.
    pub fn from_column_suffix(name: &str) -> Option<Unit> {
        let parts: Vec<&str> = name.split('_').collect();
        if parts.len() < 2 {
            return None;
        }
        let n = parts.len();
        if n >= 3 {
            if let Ok(u) = Unit::parse(&format!("{}/{}", parts[n - 2], parts[n - 1])) {
                return Some(u);
            }
        }
        let last = parts[n - 1].to_ascii_lowercase();
        match last.as_str() {
            "wt" => Some(Unit::WtPercent),
            "" | "1" | "-" | "v" | "a" | "s" | "in" | "f" | "k" => None,
            other => Unit::parse(other).ok(),
        }
    }

    /// Whether this unit is the internal unit of its quantity.
    pub fn is_internal(self) -> bool {
        Unit::internal_for(self.quantity()) == self
    }

    /// Multiplicative factor from this unit to the internal unit (for
    /// temperatures, the factor of a temperature difference).
    fn scale(self) -> f64 {
        match self {
            Unit::Ppm => WT_PCT_PER_PPM,
            Unit::Fahrenheit => 1.0 / 1.8,
            Unit::FootPoundForce => J_PER_FT_LBF,
            Unit::Ksi => MPA_PER_KSI,
            Unit::JoulePerMm => 1.0e-3,
            Unit::MmPerMinute => 1.0 / 60.0,
            Unit::Fraction => PERCENT_PER_FRACTION,
            Unit::Inch => MM_PER_INCH,
            Unit::WtPercent
            | Unit::Celsius
            | Unit::Kelvin
            | Unit::Joule
            | Unit::MegaPascal
            | Unit::KilojoulePerMm
            | Unit::MmPerSecond
            | Unit::Percent
            | Unit::Millimetre
            | Unit::Second
            | Unit::Volt
            | Unit::Ampere
            | Unit::Dimensionless
            | Unit::Hv
            | Unit::Hb
            | Unit::Hrc => 1.0,
        }
    }

    /// Convert a value in this unit to the internal unit of its quantity.
    ///
    /// Temperatures are absolute: °C = (°F − 32)/1.8, °C = K − 273.15.
    pub fn to_internal(self, x: f64) -> f64 {
        match self {
            Unit::Fahrenheit => (x - 32.0) / 1.8,
            Unit::Kelvin => x - KELVIN_OFFSET,
            Unit::Ppm => x * WT_PCT_PER_PPM,
            Unit::FootPoundForce => x * J_PER_FT_LBF,
            Unit::Ksi => x * MPA_PER_KSI,
            Unit::JoulePerMm => x / 1000.0,
            Unit::MmPerMinute => x / 60.0,
            Unit::Fraction => x * PERCENT_PER_FRACTION,
            Unit::Inch => x * MM_PER_INCH,
            _ => x,
        }
    }

    /// Convert a value in the internal unit to this unit (inverse of
    /// [`Unit::to_internal`]).
    pub fn from_internal(self, x: f64) -> f64 {
        match self {
            Unit::Fahrenheit => x * 1.8 + 32.0,
            Unit::Kelvin => x + KELVIN_OFFSET,
            Unit::Ppm => x / WT_PCT_PER_PPM,
            Unit::FootPoundForce => x / J_PER_FT_LBF,
            Unit::Ksi => x / MPA_PER_KSI,
            Unit::JoulePerMm => x * 1000.0,
            Unit::MmPerMinute => x * 60.0,
            Unit::Fraction => x / PERCENT_PER_FRACTION,
            Unit::Inch => x / MM_PER_INCH,
            _ => x,
        }
    }

    /// Convert a *difference* (interval) in this unit to the internal unit:
    /// no offset is applied, so 18 °F of difference is 10 °C of difference and
    /// 1 K of difference is 1 °C.
    pub fn interval_to_internal(self, dx: f64) -> f64 {
        dx * self.scale()
    }

    /// Convert a difference in the internal unit to this unit.
    pub fn interval_from_internal(self, dx: f64) -> f64 {
        dx / self.scale()
    }

    /// Convert `x` from unit `from` to unit `to`; both must measure the same
    /// quantity.
    pub fn convert(x: f64, from: Unit, to: Unit) -> Result<f64, UnitError> {
        if from.quantity() != to.quantity() {
            return Err(UnitError::QuantityMismatch {
                from: from.symbol().to_string(),
                from_quantity: from.quantity(),
                to: to.symbol().to_string(),
                to_quantity: to.quantity(),
            });
        }
        Ok(to.from_internal(from.to_internal(x)))
    }
}

impl fmt::Display for Unit {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.symbol())
    }
}

impl FromStr for Unit {
    type Err = UnitError;

    fn from_str(s: &str) -> Result<Self, Self::Err> {
        Unit::parse(s)
    }
}

impl Serialize for Unit {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        serializer.serialize_str(self.symbol())
    }
}

impl<'de> Deserialize<'de> for Unit {
    fn deserialize<D: Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        let s = String::deserialize(deserializer)?;
        Unit::parse(&s).map_err(serde::de::Error::custom)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn units_from_column_suffixes() {
        let u = |n: &str| Unit::from_column_suffix(n).map(Unit::symbol);
        assert_eq!(u("ni_wt"), Some("wt%"));
        assert_eq!(u("uts_mpa"), Some("MPa"));
        assert_eq!(u("charpy_j"), Some("J"));
        assert_eq!(u("test_temp_c"), Some("°C"));
        assert_eq!(u("heat_input_kj_mm"), Some("kJ/mm"));
        assert_eq!(u("o_ppm"), Some("ppm"));
        assert_eq!(u("elong_pct"), Some("%"));
        assert_eq!(u("hardness"), None);
        assert_eq!(u("grade_a"), None);
    }
    use approx::assert_abs_diff_eq;

    #[test]
    fn ft_lbf_to_joule() {
        // 20 ft·lbf = 27.1164 J — NIST SP 811 factor, check value from the
        // trade-formulas reference [S]; printed to 4 decimals.
        assert_abs_diff_eq!(
            Unit::FootPoundForce.to_internal(20.0),
            27.1164,
            epsilon = 5e-5
        );
        // 1 ft·lbf = 1.355818 J — NIST SP 811 [S]; printed to 6 decimals.
        assert_abs_diff_eq!(J_PER_FT_LBF, 1.355818, epsilon = 5e-7);
    }

    #[test]
    fn ksi_to_mpa() {
        // 50 ksi = 344.738 MPa — NIST SP 811, via the reference [S]; 3 decimals.
        assert_abs_diff_eq!(Unit::Ksi.to_internal(50.0), 344.738, epsilon = 5e-4);
        // 1 ksi = 6.894757 MPa — NIST SP 811 [S]; 6 decimals.
        assert_abs_diff_eq!(MPA_PER_KSI, 6.894757, epsilon = 5e-7);
    }

    #[test]
    fn fahrenheit_and_kelvin_to_celsius() {
        // −4 °F = −20 °C — NIST SP 811 (°C = (°F − 32)/1.8), via the reference [S].
        assert_abs_diff_eq!(Unit::Fahrenheit.to_internal(-4.0), -20.0, epsilon = 1e-12);
        // 273.15 K = 0 °C — NIST SP 811 definition of the Celsius scale [S].
        assert_abs_diff_eq!(Unit::Kelvin.to_internal(273.15), 0.0, epsilon = 1e-12);
        // 18 °F of difference = 10 °C of difference — NIST SP 811 (1 °F = 1/1.8 K) [S].
        assert_abs_diff_eq!(
            Unit::Fahrenheit.interval_to_internal(18.0),
            10.0,
            epsilon = 1e-12
        );
    }

    #[test]
    fn ppm_to_wt_percent() {
        // 50 ppm = 0.0050 wt% — NIST SP 811 (1 ppm by mass = 0.0001 wt%), via
        // the reference [S]; 4 decimals.
        assert_abs_diff_eq!(Unit::Ppm.to_internal(50.0), 0.0050, epsilon = 5e-5);
    }

    #[test]
    fn heat_input_and_speed() {
        // 1500 J/mm = 1.5 kJ/mm — SI prefix, NIST SP 811 [S].
        assert_abs_diff_eq!(Unit::JoulePerMm.to_internal(1500.0), 1.5, epsilon = 1e-12);
        // 600 mm/min = 10 mm/s — NIST SP 811 (1 min = 60 s) [S].
        assert_abs_diff_eq!(Unit::MmPerMinute.to_internal(600.0), 10.0, epsilon = 1e-12);
    }

    #[test]
    fn inch_and_fraction() {
        // 1 in = 25.4 mm exactly — NIST SP 811 [S].
        assert_abs_diff_eq!(Unit::Inch.to_internal(2.0), 50.8, epsilon = 1e-12);
        // a shear fraction of 0.5 is 50 % — definition of the percent.
        assert_abs_diff_eq!(Unit::Fraction.to_internal(0.5), 50.0, epsilon = 1e-12);
    }

    #[test]
    fn round_trips() {
        for unit in Unit::ALL {
            for x in [-273.0, -40.0, 0.0, 0.0123, 1.0, 27.0, 344.738, 1.0e4] {
                let back = unit.from_internal(unit.to_internal(x));
                assert_abs_diff_eq!(back, x, epsilon = 1e-9 * x.abs().max(1.0));
                let back = unit.interval_from_internal(unit.interval_to_internal(x));
                assert_abs_diff_eq!(back, x, epsilon = 1e-9 * x.abs().max(1.0));
            }
        }
        // −40 °F = −40 °C — the two scales cross at −40 (NIST SP 811 formula) [S].
        let c = Unit::convert(-40.0, Unit::Fahrenheit, Unit::Celsius).unwrap();
        assert_abs_diff_eq!(c, -40.0, epsilon = 1e-12);
        let f = Unit::convert(100.0, Unit::Celsius, Unit::Fahrenheit).unwrap();
        // 100 °C = 212 °F — NIST SP 811 formula [S].
        assert_abs_diff_eq!(f, 212.0, epsilon = 1e-12);
    }

    #[test]
    fn parse_spellings() {
        let cases: &[(&str, Unit)] = &[
            ("wt%", Unit::WtPercent),
            ("wt.%", Unit::WtPercent),
            ("WT %", Unit::WtPercent),
            ("ppm", Unit::Ppm),
            ("PPM", Unit::Ppm),
            ("C", Unit::Celsius),
            ("degC", Unit::Celsius),
            ("°C", Unit::Celsius),
            ("F", Unit::Fahrenheit),
            ("degF", Unit::Fahrenheit),
            ("°F", Unit::Fahrenheit),
            ("K", Unit::Kelvin),
            ("J", Unit::Joule),
            ("ft*lbf", Unit::FootPoundForce),
            ("ft.lbf", Unit::FootPoundForce),
            ("ft-lbf", Unit::FootPoundForce),
            ("ft·lbf", Unit::FootPoundForce),
            ("ftlbf", Unit::FootPoundForce),
            ("ft lbf", Unit::FootPoundForce),
            ("MPa", Unit::MegaPascal),
            ("mpa", Unit::MegaPascal),
            ("ksi", Unit::Ksi),
            ("KSI", Unit::Ksi),
            ("kJ/mm", Unit::KilojoulePerMm),
            ("J/mm", Unit::JoulePerMm),
            ("mm/s", Unit::MmPerSecond),
            ("mm/min", Unit::MmPerMinute),
            ("%", Unit::Percent),
            ("fraction", Unit::Fraction),
            ("mm", Unit::Millimetre),
            ("in", Unit::Inch),
            ("s", Unit::Second),
            ("V", Unit::Volt),
            ("A", Unit::Ampere),
            ("", Unit::Dimensionless),
            ("1", Unit::Dimensionless),
            ("-", Unit::Dimensionless),
            ("  ", Unit::Dimensionless),
        ];
        for (s, u) in cases {
            assert_eq!(Unit::parse(s).unwrap(), *u, "spelling {s:?}");
        }
    }

    #[test]
    fn display_round_trips_through_parse() {
        for unit in Unit::ALL {
            assert_eq!(Unit::parse(&unit.to_string()).unwrap(), unit);
            assert_eq!(Unit::parse(unit.ascii_symbol()).unwrap(), unit);
            assert!(unit.ascii_symbol().is_ascii());
        }
        assert_eq!(Unit::Celsius.to_string(), "°C");
        assert_eq!(Unit::FootPoundForce.to_string(), "ft·lbf");
    }

    #[test]
    fn unknown_unit_lists_known_units() {
        let err = Unit::parse("furlong/fortnight").unwrap_err();
        let msg = err.to_string();
        assert!(msg.contains("furlong/fortnight"));
        for unit in Unit::ALL {
            assert!(msg.contains(unit.symbol()), "message lacks {unit}: {msg}");
        }
        assert!(Unit::parse("kpsi").is_err());
        assert!(Unit::parse("wt").is_err());
        assert!("GPa".parse::<Unit>().is_err());
    }

    #[test]
    fn quantities_and_internal_units() {
        for q in Quantity::ALL {
            let internal = Unit::internal_for(q);
            assert_eq!(internal.quantity(), q);
            assert!(internal.is_internal());
            assert_abs_diff_eq!(internal.to_internal(12.5), 12.5, epsilon = 0.0);
        }
        assert_eq!(Unit::Ksi.quantity(), Quantity::Stress);
        assert_eq!(Unit::Ppm.quantity(), Quantity::Composition);
        assert!(!Unit::Kelvin.is_internal());
        assert_eq!(
            Unit::internal_for(Quantity::HeatInput),
            Unit::KilojoulePerMm
        );
    }

    #[test]
    fn convert_rejects_mismatched_quantities() {
        let err = Unit::convert(1.0, Unit::Ksi, Unit::Joule).unwrap_err();
        assert!(matches!(err, UnitError::QuantityMismatch { .. }));
        assert!(err.to_string().contains("stress"));
    }

    #[test]
    fn serde_uses_canonical_string() {
        let json = serde_json::to_string(&Unit::FootPoundForce).unwrap();
        assert_eq!(json, "\"ft·lbf\"");
        let u: Unit = serde_json::from_str("\"degF\"").unwrap();
        assert_eq!(u, Unit::Fahrenheit);
        let all: Vec<Unit> = Unit::ALL.to_vec();
        let back: Vec<Unit> = serde_json::from_str(&serde_json::to_string(&all).unwrap()).unwrap();
        assert_eq!(back, all);
        assert!(serde_json::from_str::<Unit>("\"parsec\"").is_err());
        let q = serde_json::to_string(&Quantity::ImpactEnergy).unwrap();
        assert_eq!(q, "\"impact_energy\"");
    }
}
