//! Arc heat input after EN 1011-1 and ISO/TR 17671-1.
//!
//! Q = k·U·I/v·10⁻³ in kJ/mm, with U the arc voltage in V, I the welding
//! current in A, v the travel speed in mm/s and k the thermal efficiency of
//! the process ([`ArcProcess::efficiency`]). U·I/v·10⁻³ alone is the arc
//! energy.

use std::fmt;
use std::str::FromStr;

use serde::{Deserialize, Serialize};

use super::DeriveError;

/// An arc welding process, with its thermal efficiency k.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub enum ArcProcess {
    /// Submerged arc welding, k = 1.0.
    Saw,
    /// Manual metal arc (covered electrode, SMAW), k = 0.8.
    Mma,
    /// Metal inert gas, k = 0.8.
    Mig,
    /// Metal active gas (GMAW), k = 0.8.
    Mag,
    /// Flux-cored arc welding, k = 0.8.
    Fcaw,
    /// Metal-cored arc welding, k = 0.8.
    Mcaw,
    /// Tungsten inert gas (GTAW), k = 0.6.
    Tig,
    /// Plasma arc welding, k = 0.6 (value from memory, provisional).
    Plasma,
}

impl ArcProcess {
    /// All processes, in declaration order.
    pub const ALL: [ArcProcess; 8] = [
        ArcProcess::Saw,
        ArcProcess::Mma,
        ArcProcess::Mig,
        ArcProcess::Mag,
        ArcProcess::Fcaw,
        ArcProcess::Mcaw,
        ArcProcess::Tig,
        ArcProcess::Plasma,
    ];

    /// Thermal efficiency k after EN 1011-1 / ISO/TR 17671-1: SAW 1.0; MMA,
    /// MIG, MAG, FCAW, MCAW 0.8; TIG 0.6. Plasma 0.6 is from memory
    /// ([`ArcProcess::efficiency_from_memory`]).
    pub fn efficiency(self) -> f64 {
        match self {
            ArcProcess::Saw => 1.0,
            ArcProcess::Mma
            | ArcProcess::Mig
            | ArcProcess::Mag
            | ArcProcess::Fcaw
            | ArcProcess::Mcaw => 0.8,
            ArcProcess::Tig | ArcProcess::Plasma => 0.6,
        }
    }

    /// Whether the efficiency is from memory rather than agreed across
    /// sources (true for plasma only).
    pub fn efficiency_from_memory(self) -> bool {
        self == ArcProcess::Plasma
    }

    /// Canonical name, e.g. `"SAW"`.
    pub fn name(self) -> &'static str {
        match self {
            ArcProcess::Saw => "SAW",
            ArcProcess::Mma => "MMA",
            ArcProcess::Mig => "MIG",
            ArcProcess::Mag => "MAG",
            ArcProcess::Fcaw => "FCAW",
            ArcProcess::Mcaw => "MCAW",
            ArcProcess::Tig => "TIG",
            ArcProcess::Plasma => "PAW",
        }
    }

    fn aliases(self) -> &'static [&'static str] {
        match self {
            ArcProcess::Saw => &["saw", "submerged_arc", "submerged-arc"],
            ArcProcess::Mma => &["mma", "smaw", "mmaw", "mmw", "covered_electrode", "stick"],
            ArcProcess::Mig => &["mig"],
            ArcProcess::Mag => &["mag", "gmaw"],
            ArcProcess::Fcaw => &["fcaw", "flux_cored", "flux-cored"],
            ArcProcess::Mcaw => &["mcaw", "metal_cored", "metal-cored"],
            ArcProcess::Tig => &["tig", "gtaw"],
            ArcProcess::Plasma => &["paw", "plasma"],
        }
    }

    /// Parse a process name, case-insensitive: `SAW`; `MMA`/`SMAW`; `MIG`;
    /// `MAG`/`GMAW`; `FCAW`; `MCAW`; `TIG`/`GTAW`; `PAW`/`plasma`.
    pub fn parse(s: &str) -> Result<ArcProcess, DeriveError> {
        let key = s.trim().to_ascii_lowercase();
        ArcProcess::ALL
            .iter()
            .copied()
            .find(|p| p.aliases().contains(&key.as_str()))
            .ok_or_else(|| DeriveError::UnknownProcess {
                given: s.to_string(),
                known: ArcProcess::ALL
                    .iter()
                    .map(|p| p.aliases().join("/"))
                    .collect::<Vec<_>>()
                    .join(", "),
            })
    }
}

impl fmt::Display for ArcProcess {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

impl FromStr for ArcProcess {
    type Err = DeriveError;

    fn from_str(s: &str) -> Result<Self, Self::Err> {
        ArcProcess::parse(s)
    }
}

/// Arc heat input, kJ/mm:
///
/// Q = k·U·I/v·10⁻³
///
/// `efficiency` k (0 < k ≤ 1), `voltage` U in V, `current` I in A,
/// `travel_speed` v in mm/s. Source: EN 1011-1; ISO/TR 17671-1.
///
/// Validity: defined for v > 0, U ≥ 0, I ≥ 0, 0 < k ≤ 1 (see
/// [`domain_error`]); the standards set no further range.
pub fn arc_heat_input(efficiency: f64, voltage: f64, current: f64, travel_speed: f64) -> f64 {
    efficiency * voltage * current / travel_speed * 1.0e-3
}

/// Arc heat input for a process: [`arc_heat_input`] with k from
/// [`ArcProcess::efficiency`].
pub fn process_heat_input(
    process: ArcProcess,
    voltage: f64,
    current: f64,
    travel_speed: f64,
) -> f64 {
    arc_heat_input(process.efficiency(), voltage, current, travel_speed)
}

/// Why [`arc_heat_input`] cannot be computed for these inputs, if it cannot.
pub fn domain_error(
    efficiency: f64,
    voltage: f64,
    current: f64,
    travel_speed: f64,
) -> Option<String> {
    if travel_speed.is_nan() || travel_speed <= 0.0 {
        Some(format!("travel speed {travel_speed} mm/s must be > 0"))
    } else if voltage.is_nan() || voltage < 0.0 {
        Some(format!(
            "voltage {voltage} V must be ≥ 0 (give its magnitude)"
        ))
    } else if current.is_nan() || current < 0.0 {
        Some(format!(
            "current {current} A must be ≥ 0 (give its magnitude)"
        ))
    } else if efficiency.is_nan() || efficiency <= 0.0 || efficiency > 1.0 {
        Some(format!(
            "arc efficiency {efficiency} must lie in (0, 1] (a fraction, not a percentage)"
        ))
    } else {
        None
    }
}

/// Checked arc heat input: [`arc_heat_input`], or
/// [`DeriveError::InvalidInput`] outside its domain.
pub fn checked_heat_input(
    efficiency: f64,
    voltage: f64,
    current: f64,
    travel_speed: f64,
) -> Result<f64, DeriveError> {
    match domain_error(efficiency, voltage, current, travel_speed) {
        Some(reason) => Err(DeriveError::InvalidInput(reason)),
        None => Ok(arc_heat_input(efficiency, voltage, current, travel_speed)),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    #[test]
    fn reference_checks() {
        // 1.500 kJ/mm — reference, SAW 30 V, 500 A, 10 mm/s (EN 1011-1) [S].
        assert_abs_diff_eq!(
            process_heat_input(ArcProcess::Saw, 30.0, 500.0, 10.0),
            1.500,
            epsilon = 5e-4
        );
        // 1.152 kJ/mm — reference, MMA 24 V, 150 A, 2.5 mm/s (EN 1011-1) [S].
        assert_abs_diff_eq!(
            process_heat_input(ArcProcess::Mma, 24.0, 150.0, 2.5),
            1.152,
            epsilon = 5e-4
        );
        // 1.120 kJ/mm — reference, MAG 28 V, 250 A, 5 mm/s (EN 1011-1) [S].
        assert_abs_diff_eq!(
            process_heat_input(ArcProcess::Mag, 28.0, 250.0, 5.0),
            1.120,
            epsilon = 5e-4
        );
        // 0.720 kJ/mm — reference, TIG 12 V, 150 A, 1.5 mm/s (EN 1011-1) [S].
        assert_abs_diff_eq!(
            process_heat_input(ArcProcess::Tig, 12.0, 150.0, 1.5),
            0.720,
            epsilon = 5e-4
        );
    }

    #[test]
    fn efficiencies() {
        // k values — reference, EN 1011-1 / ISO/TR 17671-1 [S], plasma [M].
        assert_abs_diff_eq!(ArcProcess::Saw.efficiency(), 1.0, epsilon = 1e-12);
        for p in [
            ArcProcess::Mma,
            ArcProcess::Mig,
            ArcProcess::Mag,
            ArcProcess::Fcaw,
            ArcProcess::Mcaw,
        ] {
            assert_abs_diff_eq!(p.efficiency(), 0.8, epsilon = 1e-12);
        }
        assert_abs_diff_eq!(ArcProcess::Tig.efficiency(), 0.6, epsilon = 1e-12);
        // Plasma 0.6 — reference [M], value from memory.
        assert_abs_diff_eq!(ArcProcess::Plasma.efficiency(), 0.6, epsilon = 1e-12);
        assert!(ArcProcess::Plasma.efficiency_from_memory());
        assert!(!ArcProcess::Tig.efficiency_from_memory());
    }

    #[test]
    fn parse_names() {
        let cases = [
            ("SAW", ArcProcess::Saw),
            ("mma", ArcProcess::Mma),
            ("SMAW", ArcProcess::Mma),
            ("MIG", ArcProcess::Mig),
            ("MAG", ArcProcess::Mag),
            ("gmaw", ArcProcess::Mag),
            ("FCAW", ArcProcess::Fcaw),
            ("MCAW", ArcProcess::Mcaw),
            ("TIG", ArcProcess::Tig),
            ("GTAW", ArcProcess::Tig),
            ("PAW", ArcProcess::Plasma),
            ("plasma", ArcProcess::Plasma),
            (" Saw ", ArcProcess::Saw),
        ];
        for (s, p) in cases {
            assert_eq!(ArcProcess::parse(s).unwrap(), p, "{s}");
        }
        for p in ArcProcess::ALL {
            assert_eq!(p.to_string().parse::<ArcProcess>().unwrap(), p);
        }
        let err = ArcProcess::parse("141").unwrap_err();
        assert!(matches!(err, DeriveError::UnknownProcess { .. }));
        assert!(err.to_string().contains("gtaw"));
        assert!(ArcProcess::parse("laser").is_err());
    }

    #[test]
    fn domain_errors() {
        assert!(checked_heat_input(0.8, 24.0, 150.0, 0.0).is_err());
        assert!(checked_heat_input(0.8, 24.0, 150.0, -2.0).is_err());
        assert!(checked_heat_input(0.8, 24.0, 150.0, f64::NAN).is_err());
        assert!(checked_heat_input(0.8, -24.0, 150.0, 2.5).is_err());
        assert!(checked_heat_input(0.8, 24.0, -150.0, 2.5).is_err());
        let err = checked_heat_input(80.0, 24.0, 150.0, 2.5).unwrap_err();
        assert!(err.to_string().contains("not a percentage"));
        assert!(checked_heat_input(0.0, 24.0, 150.0, 2.5).is_err());
        // 1.152 kJ/mm — reference, MMA check with k = 0.8 [S].
        assert_abs_diff_eq!(
            checked_heat_input(0.8, 24.0, 150.0, 2.5).unwrap(),
            1.152,
            epsilon = 5e-4
        );
    }
}
