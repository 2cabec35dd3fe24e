//! The registry of derivations: each one's name and parameters as written
//! in a specification, the column it writes and the columns it reads, and
//! its description (the table in the module documentation of
//! [`crate::derive`]).

use std::fmt;
use std::str::FromStr;

use serde::{Deserialize, Serialize};

use super::*;

/// A derivation that adds one column to a table.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Derivation {
    /// CE (IIW), [`carbon_equivalent::ce_iiw`].
    CeIiw,
    /// Pcm (Ito & Bessyo), [`carbon_equivalent::pcm`].
    Pcm,
    /// CET (EN 1011-2 method B), [`carbon_equivalent::cet`].
    Cet,
    /// CEN (Yurioka), [`carbon_equivalent::cen`].
    Cen,
    /// Arc heat input, [`heat_input::arc_heat_input`].
    HeatInput {
        /// Process whose efficiency is used where no `arc_efficiency` column
        /// value is available.
        process: Option<ArcProcess>,
    },
    /// Cooling time t8/5, [`cooling_time::cooling_time`].
    T85 {
        /// Shape factors F2 (2-D) and F3 (3-D).
        factors: ShapeFactors,
    },
    /// Ms after Andrews, [`transformation::ms_andrews`].
    MsAndrews,
    /// Ms after Steven & Haynes, [`transformation::ms_steven_haynes`].
    MsStevenHaynes,
    /// Ac1 after Andrews, [`transformation::ac1_andrews`].
    Ac1Andrews,
    /// Ac3 after Andrews, [`transformation::ac3_andrews`].
    Ac3Andrews,
}

impl Derivation {
    /// Every derivation with default parameters.
    pub const ALL: [Derivation; 10] = [
        Derivation::CeIiw,
        Derivation::Pcm,
        Derivation::Cet,
        Derivation::Cen,
        Derivation::HeatInput { process: None },
        Derivation::T85 {
            factors: ShapeFactors { f2: 1.0, f3: 1.0 },
        },
        Derivation::MsAndrews,
        Derivation::MsStevenHaynes,
        Derivation::Ac1Andrews,
        Derivation::Ac3Andrews,
    ];

    /// Comma-separated list of the known names, for messages.
    pub fn known_names() -> String {
        Derivation::ALL
            .iter()
            .map(|d| d.name())
            .collect::<Vec<_>>()
            .join(", ")
    }

    /// Parse a comma-separated list of specifications, e.g.
    /// `ce_iiw,pcm,t85:corner_fillet,F3=0.8,heat_input:SAW`. A comma also
    /// separates the parameters of `t85`, so an item that does not start
    /// with a derivation name continues the item before it.
    pub fn parse_list(list: &str) -> Result<Vec<Derivation>, DeriveError> {
        let mut items: Vec<String> = Vec::new();
        for piece in list.split(',').map(str::trim).filter(|p| !p.is_empty()) {
            let name = piece.split_once(':').map_or(piece, |(n, _)| n);
            let starts_new = Derivation::parse(name).is_ok();
            match items.last_mut() {
                Some(last) if !starts_new => {
                    last.push(',');
                    last.push_str(piece);
                }
                _ => items.push(piece.to_string()),
            }
        }
        items.iter().map(|i| Derivation::parse(i)).collect()
    }

    /// Parse `name` or `name:parameters` (see the module doc for the syntax).
    pub fn parse(spec: &str) -> Result<Derivation, DeriveError> {
        let spec = spec.trim();
        let (name, params) = match spec.split_once(':') {
            Some((n, p)) => (n.trim(), Some(p.trim())),
            None => (spec, None),
        };
        let lname = name.to_ascii_lowercase();
        let base = match lname.as_str() {
            "ce_iiw" | "ce" | "ceiiw" | "ce(iiw)" => Derivation::CeIiw,
            "pcm" => Derivation::Pcm,
            "cet" => Derivation::Cet,
            "cen" => Derivation::Cen,
            "heat_input" => Derivation::HeatInput { process: None },
            "t85" | "t8/5" | "t8_5" => Derivation::T85 {
                factors: ShapeFactors::default(),
            },
            "ms_andrews" => Derivation::MsAndrews,
            "ms_steven_haynes" => Derivation::MsStevenHaynes,
            "ac1_andrews" => Derivation::Ac1Andrews,
            "ac3_andrews" => Derivation::Ac3Andrews,
            _ => {
                return Err(DeriveError::UnknownDerivation {
                    given: spec.to_string(),
                    known: Derivation::known_names(),
                })
            }
        };
        let Some(params) = params else {
            return Ok(base);
        };
        let bad = |parameter: &str, reason: String| DeriveError::BadParameter {
            derivation: base.name().to_string(),
            parameter: parameter.to_string(),
            reason,
        };
        match base {
            Derivation::HeatInput { .. } => {
                let value = match params.split_once('=') {
                    Some((key, value)) if key.trim().eq_ignore_ascii_case("process") => {
                        value.trim()
                    }
                    Some((key, _)) => {
                        return Err(bad(
                            params,
                            format!("unknown key `{}`; only `process` is accepted", key.trim()),
                        ))
                    }
                    None => params,
                };
                let process = ArcProcess::parse(value)?;
                Ok(Derivation::HeatInput {
                    process: Some(process),
                })
            }
            Derivation::T85 { .. } => {
                let mut factors = ShapeFactors::default();
                for item in params.split(',').map(str::trim) {
                    if let Some((key, value)) = item.split_once('=') {
                        let x: f64 = value.trim().parse().map_err(|_| {
                            bad(item, format!("`{}` is not a number", value.trim()))
                        })?;
                        if !(x.is_finite() && x > 0.0) {
                            return Err(bad(item, "shape factors must be > 0".to_string()));
                        }
                        match key.trim().to_ascii_lowercase().as_str() {
                            "f2" => factors.f2 = x,
                            "f3" => factors.f3 = x,
                            other => {
                                return Err(bad(
                                    item,
                                    format!("unknown key `{other}`; use F2 or F3"),
                                ))
                            }
                        }
                    } else {
                        factors = JointShape::parse(item)
                            .map_err(|e| bad(item, e.to_string()))?
                            .factors();
                    }
                }
                Ok(Derivation::T85 { factors })
            }
            _ if params.is_empty() => Ok(base),
            _ => Err(bad(
                params,
                "this derivation takes no parameters".to_string(),
            )),
        }
    }

    /// Base name, without parameters (e.g. `"heat_input"`).
    pub fn name(&self) -> &'static str {
        match self {
            Derivation::CeIiw => "ce_iiw",
            Derivation::Pcm => "pcm",
            Derivation::Cet => "cet",
            Derivation::Cen => "cen",
            Derivation::HeatInput { .. } => "heat_input",
            Derivation::T85 { .. } => "t85",
            Derivation::MsAndrews => "ms_andrews",
            Derivation::MsStevenHaynes => "ms_steven_haynes",
            Derivation::Ac1Andrews => "ac1_andrews",
            Derivation::Ac3Andrews => "ac3_andrews",
        }
    }

    /// Full specification with parameters; [`Derivation::parse`] reads it back.
    pub fn spec(&self) -> String {
        match self {
            Derivation::HeatInput {
                process: Some(process),
            } => format!("heat_input:{}", process.name()),
            Derivation::T85 { factors } if *factors != ShapeFactors::default() => {
                format!("t85:F2={},F3={}", factors.f2, factors.f3)
            }
            other => other.name().to_string(),
        }
    }

    /// Default name of the column this derivation writes.
    pub fn output_column(&self) -> &'static str {
        match self {
            Derivation::CeIiw => "CE_IIW",
            Derivation::Pcm => "Pcm",
            Derivation::Cet => "CET",
            Derivation::Cen => "CEN",
            Derivation::HeatInput { .. } => "heat_input",
            Derivation::T85 { .. } => "t85",
            Derivation::MsAndrews => "Ms_Andrews",
            Derivation::MsStevenHaynes => "Ms_Steven_Haynes",
            Derivation::Ac1Andrews => "Ac1_Andrews",
            Derivation::Ac3Andrews => "Ac3_Andrews",
        }
    }

    /// Unit of the output: wt% for the carbon equivalents, kJ/mm, s or °C.
    pub fn output_unit(&self) -> &'static str {
        match self {
            Derivation::CeIiw | Derivation::Pcm | Derivation::Cet | Derivation::Cen => "wt%",
            Derivation::HeatInput { .. } => "kJ/mm",
            Derivation::T85 { .. } => "s",
            _ => "°C",
        }
    }

    /// Every column this derivation reads, required and optional.
    pub fn columns(&self) -> Vec<ColumnUse> {
        match self {
            Derivation::CeIiw => vec![
                req("C"),
                req("Mn"),
                opt("Cr"),
                opt("Mo"),
                opt("V"),
                opt("Ni"),
                opt("Cu"),
            ],
            Derivation::Pcm => vec![
                req("C"),
                req("Si"),
                req("Mn"),
                opt("Cu"),
                opt("Cr"),
                opt("Ni"),
                opt("Mo"),
                opt("V"),
                opt("B"),
            ],
            Derivation::Cet => vec![
                req("C"),
                req("Mn"),
                opt("Mo"),
                opt("Cr"),
                opt("Cu"),
                opt("Ni"),
                chk("Si"),
                chk("Nb"),
                chk("Ti"),
                chk("V"),
                chk("B"),
            ],
            Derivation::Cen => vec![
                req("C"),
                req("Si"),
                req("Mn"),
                opt("Cu"),
                opt("Ni"),
                opt("Cr"),
                opt("Mo"),
                opt("Nb"),
                opt("V"),
                opt("B"),
            ],
            Derivation::HeatInput { .. } => vec![
                req("voltage"),
                req("current"),
                req("travel_speed"),
                opt("arc_efficiency"),
            ],
            Derivation::T85 { .. } => vec![req("heat_input"), req("preheat"), req("thickness")],
            Derivation::MsAndrews | Derivation::MsStevenHaynes => {
                vec![req("C"), req("Mn"), opt("Ni"), opt("Cr"), opt("Mo")]
            }
            Derivation::Ac1Andrews => vec![
                req("Mn"),
                req("Si"),
                chk("C"),
                opt("Ni"),
                opt("Cr"),
                opt("As"),
                opt("W"),
            ],
            Derivation::Ac3Andrews => vec![
                req("C"),
                req("Si"),
                req("Mn"),
                opt("Ni"),
                opt("V"),
                opt("Mo"),
                opt("W"),
            ],
        }
    }

    /// Names of the columns that must be present.
    pub fn required_columns(&self) -> Vec<&'static str> {
        self.columns()
            .into_iter()
            .filter(|c| !c.optional)
            .map(|c| c.name)
            .collect()
    }

    /// Names of the columns that may be absent (composition elements absent
    /// count as 0; for heat input, `arc_efficiency` falls back to the process).
    pub fn optional_columns(&self) -> Vec<&'static str> {
        self.columns()
            .into_iter()
            .filter(|c| c.optional)
            .map(|c| c.name)
            .collect()
    }

    /// The formula and its published source.
    pub fn description(&self) -> String {
        match self {
            Derivation::CeIiw => "CE(IIW) = C + Mn/6 + (Cr+Mo+V)/5 + (Ni+Cu)/15 [wt%]; Dearden & O'Neill (1940), \
                 Trans. Inst. Welding 3:203; IIW Doc. IX-535-67; EN 1011-2 Annex C method A"
                .to_string(),
            Derivation::Pcm => "Pcm = C + Si/30 + (Mn+Cu+Cr)/20 + Ni/60 + Mo/15 + V/10 + 5B [wt%]; Ito & Bessyo \
                 (1968), IIW Doc. IX-576-68"
                .to_string(),
            Derivation::Cet => "CET = C + (Mn+Mo)/10 + (Cr+Cu)/20 + Ni/40 [wt%]; EN 1011-2 Annex C method B"
                .to_string(),
            Derivation::Cen => "CEN = C + A(C)·[Si/24 + Mn/6 + Cu/15 + Ni/20 + (Cr+Mo+Nb+V)/5 + 5B], \
                 A(C) = 0.75 + 0.25·tanh(20(C − 0.12)) [wt%]; Yurioka et al. (1983), Welding Journal 62(6):147s"
                .to_string(),
            Derivation::HeatInput { process } => {
                let k = match process {
                    Some(p) if p.efficiency_from_memory() => {
                        format!("k = {} ({}, value from memory)", p.efficiency(), p.name())
                    }
                    Some(p) => format!("k = {} ({})", p.efficiency(), p.name()),
                    None => "k from column arc_efficiency".to_string(),
                };
                format!(
                    "Q = k·U·I/v·10⁻³ [kJ/mm], U in V, I in A, v in mm/s, {k}; EN 1011-1, ISO/TR 17671-1"
                )
            }
            Derivation::T85 { factors } => format!(
                "t8/5 [s] after EN 1011-2 Annex D: 3-D (6700 − 5·T0)·Q·[1/(500 − T0) − 1/(800 − T0)]·F3 for \
                 d ≥ d_t, else 2-D (4300 − 4.3·T0)·10⁵·(Q²/d²)·[1/(500 − T0)² − 1/(800 − T0)²]·F2; \
                 F2 = {}, F3 = {}",
                factors.f2, factors.f3
            ),
            Derivation::MsAndrews => "Ms = 539 − 423C − 30.4Mn − 17.7Ni − 12.1Cr − 7.5Mo [°C]; Andrews (1965), \
                 J. Iron Steel Inst. 203:721; low-alloy steels, C < 0.6 wt%"
                .to_string(),
            Derivation::MsStevenHaynes => "Ms = 561 − 474C − 33Mn − 17Ni − 17Cr − 21Mo [°C]; Steven & Haynes \
                 (1956), J. Iron Steel Inst. 183:349"
                .to_string(),
            Derivation::Ac1Andrews => "Ac1 = 723 − 10.7Mn − 16.9Ni + 29.1Si + 16.9Cr + 290As + 6.38W [°C]; \
                 Andrews (1965), J. Iron Steel Inst. 203:721; C < 0.6 wt%"
                .to_string(),
            Derivation::Ac3Andrews => "Ac3 = 910 − 203·√C − 15.2Ni + 44.7Si + 104V + 31.5Mo + 13.1W − 30Mn [°C] \
                 (core terms only); Andrews (1965), J. Iron Steel Inst. 203:721; C < 0.6 wt%"
                .to_string(),
        }
    }
}

impl fmt::Display for Derivation {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.spec())
    }
}

impl FromStr for Derivation {
    type Err = DeriveError;

    fn from_str(s: &str) -> Result<Self, Self::Err> {
        Derivation::parse(s)
    }
}

/// Serialised as its specification string ([`Derivation::spec`]).
impl Serialize for Derivation {
    fn serialize<S: serde::Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        serializer.serialize_str(&self.spec())
    }
}

impl<'de> Deserialize<'de> for Derivation {
    fn deserialize<D: serde::Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        let s = String::deserialize(deserializer)?;
        Derivation::parse(&s).map_err(serde::de::Error::custom)
    }
}
