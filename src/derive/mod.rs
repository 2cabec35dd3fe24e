//! Derived metallurgical inputs: weldability indices, heat input, cooling
//! time and transformation temperatures, computed from raw table columns.
//!
//! Each formula lives in a submodule as a plain function, with a companion
//! `check_*` function that returns human-readable warnings when the inputs lie
//! outside the formula's published validity range (it warns, it never fails):
//!
//! - [`carbon_equivalent`]: CE (IIW), Pcm, CET, CEN and the EN 1011-2 method B
//!   preheat temperature;
//! - [`heat_input`]: arc heat input Q = k·U·I/v·10⁻³ with [`ArcProcess`];
//! - [`cooling_time`]: t8/5 after EN 1011-2 Annex D (3-D, 2-D, transition
//!   thickness, automatic choice);
//! - [`transformation`]: Ms (Andrews; Steven & Haynes), Ac1 and Ac3 (Andrews),
//!   Koistinen–Marburger martensite fraction;
//! - [`charpy`]: tanh transition curve, its inverse and the EN 10025-2
//!   sub-grade requirements.
//!
//! # The `Derivation` registry
//!
//! [`Derivation`] names each derivation that can add a column to a data
//! table. A derivation is written as `name` or `name:parameters`; names are
//! case-insensitive:
//!
//! | spec | output column | reads (required; *optional*) |
//! |---|---|---|
//! | `ce_iiw` (alias `ce`) | `CE_IIW` | C, Mn; *Cr, Mo, V, Ni, Cu* |
//! | `pcm` | `Pcm` | C, Si, Mn; *Cu, Cr, Ni, Mo, V, B* |
//! | `cet` | `CET` | C, Mn; *Mo, Cr, Cu, Ni; Si, Nb, Ti, V, B (validity check only)* |
//! | `cen` | `CEN` | C, Si, Mn; *Cu, Ni, Cr, Mo, Nb, V, B* |
//! | `heat_input`, `heat_input:PROCESS` | `heat_input` | voltage (V), current (A), travel_speed (mm/s); *arc_efficiency* |
//! | `t85`, `t85:PARAMS` (alias `t8/5`) | `t85` | heat_input (kJ/mm), preheat (°C), thickness (mm) |
//! | `ms_andrews` | `Ms_Andrews` | C, Mn; *Ni, Cr, Mo* |
//! | `ms_steven_haynes` | `Ms_Steven_Haynes` | C, Mn; *Ni, Cr, Mo* |
//! | `ac1_andrews` | `Ac1_Andrews` | Mn, Si; *C (validity check only), Ni, Cr, As, W* |
//! | `ac3_andrews` | `Ac3_Andrews` | C, Si, Mn; *Ni, V, Mo, W* |
//!
//! Column names are the conventional ones shown (element symbols in wt%);
//! mapping a table's own headers onto them is the caller's job.
//!
//! **Optional composition columns.** For the composition formulas, an
//! optional element that is absent from the table counts as 0 wt% for every
//! row (it is listed in [`Derived::assumed_zero`]); a missing value (NaN or
//! infinite) in a present optional column counts as 0 for that row, with a
//! row warning. A required column that is absent is an error
//! ([`DeriveError::MissingColumn`]); a missing value in a required column
//! gives NaN for that row, with a row warning.
//!
//! **Heat input.** The thermal efficiency k comes from a column
//! `arc_efficiency` (a number in (0, 1]) if the table has one; where that
//! column is absent, or its value missing in a row, k is the efficiency of
//! the process given as parameter: `heat_input:SAW`, `heat_input:MMA`,
//! `heat_input:process=TIG` ... (process names as accepted by
//! [`ArcProcess::parse`]). With neither, the derivation fails with
//! [`DeriveError::NoArcEfficiency`]. The process cannot be read per row from a
//! text column, because columns reach this module as numbers only.
//!
//! **Cooling time.** `t85` takes comma-separated parameters: a joint shape
//! (see [`JointShape::parse`]: `bead_on_plate`, `butt_fill`, `corner_fillet`,
//! `t_fillet`) and/or `F2=x`, `F3=x`; later entries override earlier ones, and
//! the default is F2 = F3 = 1. Example: `t85:butt_fill`, `t85:F2=0.9,F3=0.67`.
//! The 2-D or 3-D formula is chosen per row by the transition thickness, and a
//! row warning is raised when the plate thickness is within ±10 % of it.

pub mod carbon_equivalent;
pub mod charpy;
pub mod cooling_time;
pub mod heat_input;
pub mod transformation;

use std::fmt;
use std::str::FromStr;

use serde::{Deserialize, Serialize};
use thiserror::Error;

pub use charpy::{SubGrade, TanhCurve};
pub use cooling_time::{CoolingMode, CoolingTime, JointShape, ShapeFactors};
pub use heat_input::ArcProcess;

/// Chemical composition in wt%. Every field defaults to 0.
///
/// Field `as_` is arsenic (`as` is a Rust keyword); it serialises as `"as"`.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
#[serde(default)]
pub struct Composition {
    /// Carbon.
    pub c: f64,
    /// Silicon.
    pub si: f64,
    /// Manganese.
    pub mn: f64,
    /// Nickel.
    pub ni: f64,
    /// Chromium.
    pub cr: f64,
    /// Molybdenum.
    pub mo: f64,
    /// Copper.
    pub cu: f64,
    /// Vanadium.
    pub v: f64,
    /// Niobium.
    pub nb: f64,
    /// Titanium.
    pub ti: f64,
    /// Boron.
    pub b: f64,
    /// Nitrogen.
    pub n: f64,
    /// Aluminium.
    pub al: f64,
    /// Arsenic.
    #[serde(rename = "as")]
    pub as_: f64,
    /// Tungsten.
    pub w: f64,
    /// Phosphorus.
    pub p: f64,
}

impl Composition {
    /// Conventional column names (element symbols) of the fields, in field order.
    pub const ELEMENTS: [&'static str; 16] = [
        "C", "Si", "Mn", "Ni", "Cr", "Mo", "Cu", "V", "Nb", "Ti", "B", "N", "Al", "As", "W", "P",
    ];

    fn slot(&mut self, symbol: &str) -> Option<&mut f64> {
        Some(match symbol {
            "C" => &mut self.c,
            "Si" => &mut self.si,
            "Mn" => &mut self.mn,
            "Ni" => &mut self.ni,
            "Cr" => &mut self.cr,
            "Mo" => &mut self.mo,
            "Cu" => &mut self.cu,
            "V" => &mut self.v,
            "Nb" => &mut self.nb,
            "Ti" => &mut self.ti,
            "B" => &mut self.b,
            "N" => &mut self.n,
            "Al" => &mut self.al,
            "As" => &mut self.as_,
            "W" => &mut self.w,
            "P" => &mut self.p,
            _ => return None,
        })
    }

    /// Content of the element with this symbol (case-sensitive, e.g. `"Mn"`),
    /// or `None` for a symbol that is not a field.
    pub fn element(&self, symbol: &str) -> Option<f64> {
        let mut copy = *self;
        copy.slot(symbol).map(|v| *v)
    }

    /// Set the content of an element; returns `false` for an unknown symbol.
    pub fn set(&mut self, symbol: &str, value: f64) -> bool {
        match self.slot(symbol) {
            Some(slot) => {
                *slot = value;
                true
            }
            None => false,
        }
    }

    /// Warnings for negative contents (any element below 0 wt%).
    pub fn negative_warnings(&self, formula: &str) -> Vec<String> {
        Composition::ELEMENTS
            .iter()
            .filter_map(|sym| {
                let v = self.element(sym)?;
                (v < 0.0).then(|| format!("{formula}: {sym} = {v} wt% is negative"))
            })
            .collect()
    }
}

/// Errors raised by the derivations.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum DeriveError {
    /// The derivation name is not known.
    #[error("unknown derivation `{given}`; known derivations: {known}")]
    UnknownDerivation {
        /// The name that was given.
        given: String,
        /// Every known derivation name.
        known: String,
    },
    /// A derivation parameter could not be understood.
    #[error("derivation `{derivation}`: bad parameter `{parameter}`: {reason}")]
    BadParameter {
        /// The derivation name.
        derivation: String,
        /// The parameter text.
        parameter: String,
        /// What is wrong with it.
        reason: String,
    },
    /// The arc process name is not known.
    #[error("unknown arc process `{given}`; known processes: {known}")]
    UnknownProcess {
        /// The name that was given.
        given: String,
        /// Every accepted process name.
        known: String,
    },
    /// The joint shape name is not known.
    #[error("unknown joint shape `{given}`; known shapes: {known}")]
    UnknownJointShape {
        /// The name that was given.
        given: String,
        /// Every accepted shape name.
        known: String,
    },
    /// The EN 10025-2 sub-grade is not known.
    #[error("unknown EN 10025-2 sub-grade `{given}`; known sub-grades: JR, J0, J2, K2")]
    UnknownSubGrade {
        /// The name that was given.
        given: String,
    },
    /// A required column is absent from the table.
    #[error("derivation `{derivation}` needs column `{column}`, which the table does not have")]
    MissingColumn {
        /// The derivation name.
        derivation: String,
        /// The absent column.
        column: String,
    },
    /// A column's length differs from the table's row count.
    #[error("derivation `{derivation}`: column `{column}` has {found} rows, expected {expected}")]
    LengthMismatch {
        /// The derivation name.
        derivation: String,
        /// The column concerned.
        column: String,
        /// The table's row count.
        expected: usize,
        /// The column's length.
        found: usize,
    },
    /// Heat input without an efficiency column or a process parameter.
    #[error(
        "heat_input needs an `arc_efficiency` column or a process parameter, e.g. `heat_input:SAW`"
    )]
    NoArcEfficiency,
    /// Inputs outside the domain where a formula is defined.
    #[error("invalid input: {0}")]
    InvalidInput(String),
    /// An energy not strictly between the shelves of a transition curve.
    #[error(
        "energy {energy} J is not strictly between the lower shelf {lower} J and the upper shelf {upper} J"
    )]
    EnergyOutsideShelves {
        /// The energy asked for.
        energy: f64,
        /// Lower shelf energy.
        lower: f64,
        /// Upper shelf energy.
        upper: f64,
    },
}

/// A warning attached to one row (0-based) of a derived column.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct RowWarning {
    /// Row index, 0-based.
    pub row: usize,
    /// Human-readable message.
    pub message: String,
}

/// Warnings of the same kind gathered: the message with the row's own
/// value left out, and the rows (0-based) it applies to.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct WarningGroup {
    /// The message shared by the rows, e.g. "CE(IIW): C outside C ≥ 0.18 wt% ...".
    pub message: String,
    /// Rows concerned, 0-based, in the order first met.
    pub rows: Vec<usize>,
}

/// Gather row warnings that differ only in the row's value: a validity
/// message `F: X = v unit is outside X range (basis)` is keyed by `F: X`
/// and what follows "is outside"; any other message by itself. Groups keep
/// the order in which they are first met.
pub fn group_warnings(warnings: &[RowWarning]) -> Vec<WarningGroup> {
    let mut groups: Vec<WarningGroup> = Vec::new();
    for w in warnings {
        let key = match (
            w.message.split_once(" = "),
            w.message.split_once(" is outside "),
        ) {
            (Some((head, _)), Some((_, tail))) => format!("{head} outside {tail}"),
            _ => w.message.clone(),
        };
        match groups.iter_mut().find(|g| g.message == key) {
            Some(g) => g.rows.push(w.row),
            None => groups.push(WarningGroup {
                message: key,
                rows: vec![w.row],
            }),
        }
    }
    groups
}

/// A derived column with its warnings.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
pub struct Derived {
    /// One value per row; NaN where the value could not be computed.
    pub values: Vec<f64>,
    /// Per-row warnings (validity ranges, missing values, marginal choices).
    pub warnings: Vec<RowWarning>,
    /// Optional columns absent from the table and taken as 0 for every row.
    pub assumed_zero: Vec<String>,
}

/// One column a derivation reads.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct ColumnUse {
    /// Conventional column name.
    pub name: &'static str,
    /// Whether the column may be absent (see the module doc for what that means).
    pub optional: bool,
    /// Whether the column is read only to judge the formula's validity
    /// range, not used by the formula (always optional).
    pub check_only: bool,
}

const fn req(name: &'static str) -> ColumnUse {
    ColumnUse {
        name,
        optional: false,
        check_only: false,
    }
}

const fn opt(name: &'static str) -> ColumnUse {
    ColumnUse {
        name,
        optional: true,
        check_only: false,
    }
}

/// An optional column read only for the validity check.
const fn chk(name: &'static str) -> ColumnUse {
    ColumnUse {
        name,
        optional: true,
        check_only: true,
    }
}

/// A published validity limit on one input.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Limit {
    what: &'static str,
    unit: &'static str,
    min: Option<f64>,
    max: Option<f64>,
    max_exclusive: bool,
    from_memory: bool,
}

impl Limit {
    /// `min ≤ x ≤ max`.
    pub(crate) const fn between(
        what: &'static str,
        unit: &'static str,
        min: f64,
        max: f64,
        from_memory: bool,
    ) -> Limit {
        Limit {
            what,
            unit,
            min: Some(min),
            max: Some(max),
            max_exclusive: false,
            from_memory,
        }
    }

    /// `x ≤ max`.
    pub(crate) const fn at_most(
        what: &'static str,
        unit: &'static str,
        max: f64,
        from_memory: bool,
    ) -> Limit {
        Limit {
            what,
            unit,
            min: None,
            max: Some(max),
            max_exclusive: false,
            from_memory,
        }
    }

    /// `x ≥ min`.
    pub(crate) const fn at_least(
        what: &'static str,
        unit: &'static str,
        min: f64,
        from_memory: bool,
    ) -> Limit {
        Limit {
            what,
            unit,
            min: Some(min),
            max: None,
            max_exclusive: false,
            from_memory,
        }
    }

    /// `x < max`.
    pub(crate) const fn below(
        what: &'static str,
        unit: &'static str,
        max: f64,
        from_memory: bool,
    ) -> Limit {
        Limit {
            what,
            unit,
            min: None,
            max: Some(max),
            max_exclusive: true,
            from_memory,
        }
    }

    fn range_text(&self) -> String {
        let u = self.unit;
        match (self.min, self.max) {
            (Some(lo), Some(hi)) => format!("{lo}–{hi} {u}"),
            (None, Some(hi)) if self.max_exclusive => format!("< {hi} {u}"),
            (None, Some(hi)) => format!("≤ {hi} {u}"),
            (Some(lo), None) => format!("≥ {lo} {u}"),
            (None, None) => "any value".to_string(),
        }
    }

    /// A warning if `value` lies outside the limit (a non-finite value is
    /// not judged here).
    pub(crate) fn check(&self, formula: &str, value: f64) -> Option<String> {
        if !value.is_finite() {
            return None;
        }
        let low = self.min.is_some_and(|lo| value < lo);
        let high = self.max.is_some_and(|hi| {
            if self.max_exclusive {
                value >= hi
            } else {
                value > hi
            }
        });
        if !(low || high) {
            return None;
        }
        let basis = if self.from_memory {
            "range from memory, unchecked"
        } else {
            "published range"
        };
        Some(format!(
            "{formula}: {} = {} {} is outside {} {} ({basis})",
            self.what,
            short_number(value),
            self.unit,
            self.what,
            self.range_text()
        ))
    }
}

/// A number with at most 6 decimals and no trailing zeros, for messages.
pub(crate) fn short_number(x: f64) -> String {
    let s = format!("{x:.6}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" {
        "0".to_string()
    } else {
        s.to_string()
    }
}

/// Warnings for every element limit (the limit's `what` is the element
/// symbol) plus any negative content.
pub(crate) fn check_composition(
    formula: &str,
    comp: &Composition,
    limits: &[Limit],
) -> Vec<String> {
    let mut out = comp.negative_warnings(formula);
    for limit in limits {
        if let Some(value) = comp.element(limit.what) {
            out.extend(limit.check(formula, value));
        }
    }
    out
}

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

/// Composition formula with its validity check.
type CompFormula = (fn(&Composition) -> f64, fn(&Composition) -> Vec<String>);

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

    /// Compute the derived column.
    ///
    /// `get(name)` returns the column with that conventional name, or `None`
    /// if the table has none; every column returned must have `n_rows`
    /// values. See the module doc for how absent and missing values are
    /// treated.
    pub fn apply(
        &self,
        get: &dyn Fn(&str) -> Option<Vec<f64>>,
        n_rows: usize,
    ) -> Result<Derived, DeriveError> {
        use carbon_equivalent as ce;
        use transformation as tr;
        let mut inputs = Inputs {
            get,
            n_rows,
            derivation: self.name(),
            assumed_zero: Vec::new(),
        };
        let comp_cols = self.columns();
        let mut by_comp =
            |formula: CompFormula| apply_composition(&mut inputs, &comp_cols, formula.0, formula.1);
        let mut out = match self {
            Derivation::CeIiw => by_comp((ce::ce_iiw, ce::check_ce_iiw))?,
            Derivation::Pcm => by_comp((ce::pcm, ce::check_pcm))?,
            Derivation::Cet => by_comp((ce::cet, ce::check_cet))?,
            Derivation::Cen => by_comp((ce::cen, ce::check_cen))?,
            Derivation::MsAndrews => by_comp((tr::ms_andrews, tr::check_andrews))?,
            Derivation::MsStevenHaynes => by_comp((tr::ms_steven_haynes, tr::check_steven_haynes))?,
            Derivation::Ac1Andrews => by_comp((tr::ac1_andrews, tr::check_andrews))?,
            Derivation::Ac3Andrews => by_comp((tr::ac3_andrews, tr::check_andrews))?,
            Derivation::HeatInput { process } => apply_heat_input(&mut inputs, *process)?,
            Derivation::T85 { factors } => apply_t85(&mut inputs, *factors)?,
        };
        out.assumed_zero = inputs.assumed_zero;
        Ok(out)
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

/// Column access with length checks.
struct Inputs<'a> {
    get: &'a dyn Fn(&str) -> Option<Vec<f64>>,
    n_rows: usize,
    derivation: &'static str,
    assumed_zero: Vec<String>,
}

impl Inputs<'_> {
    fn fetch(&self, name: &str) -> Result<Option<Vec<f64>>, DeriveError> {
        match (self.get)(name) {
            Some(col) if col.len() != self.n_rows => Err(DeriveError::LengthMismatch {
                derivation: self.derivation.to_string(),
                column: name.to_string(),
                expected: self.n_rows,
                found: col.len(),
            }),
            other => Ok(other),
        }
    }

    fn required(&self, name: &str) -> Result<Vec<f64>, DeriveError> {
        self.fetch(name)?.ok_or_else(|| DeriveError::MissingColumn {
            derivation: self.derivation.to_string(),
            column: name.to_string(),
        })
    }
}

fn missing_required(row: usize, column: &str, derivation: &str) -> RowWarning {
    RowWarning {
        row,
        message: format!("{derivation}: value of {column} is missing; not computed"),
    }
}

fn apply_composition(
    inputs: &mut Inputs<'_>,
    columns: &[ColumnUse],
    formula: fn(&Composition) -> f64,
    check: fn(&Composition) -> Vec<String>,
) -> Result<Derived, DeriveError> {
    let mut cols: Vec<(ColumnUse, Vec<f64>)> = Vec::new();
    for col in columns {
        if col.optional {
            match inputs.fetch(col.name)? {
                Some(v) => cols.push((*col, v)),
                // a column read only for the validity check enters no formula
                None if col.check_only => {}
                None => inputs.assumed_zero.push(col.name.to_string()),
            }
        } else {
            cols.push((*col, inputs.required(col.name)?));
        }
    }
    let mut out = Derived {
        values: Vec::with_capacity(inputs.n_rows),
        ..Derived::default()
    };
    for row in 0..inputs.n_rows {
        let mut comp = Composition::default();
        let mut complete = true;
        for (col, values) in &cols {
            let x = values[row];
            if x.is_finite() {
                comp.set(col.name, x);
            } else if col.optional {
                let what = if col.check_only {
                    "its validity limit is not judged"
                } else {
                    "taken as 0 wt%"
                };
                out.warnings.push(RowWarning {
                    row,
                    message: format!(
                        "{}: value of {} is missing; {what}",
                        inputs.derivation, col.name
                    ),
                });
            } else {
                complete = false;
                out.warnings
                    .push(missing_required(row, col.name, inputs.derivation));
            }
        }
        if complete {
            out.values.push(formula(&comp));
            out.warnings.extend(
                check(&comp)
                    .into_iter()
                    .map(|message| RowWarning { row, message }),
            );
        } else {
            out.values.push(f64::NAN);
        }
    }
    Ok(out)
}

fn apply_heat_input(
    inputs: &mut Inputs<'_>,
    process: Option<ArcProcess>,
) -> Result<Derived, DeriveError> {
    let u = inputs.required("voltage")?;
    let i = inputs.required("current")?;
    let v = inputs.required("travel_speed")?;
    let k_col = inputs.fetch("arc_efficiency")?;
    if k_col.is_none() && process.is_none() {
        return Err(DeriveError::NoArcEfficiency);
    }
    let fallback = process.map(ArcProcess::efficiency);
    let name = inputs.derivation;
    let mut out = Derived::default();
    for row in 0..inputs.n_rows {
        let mut complete = true;
        for (col, values) in [("voltage", &u), ("current", &i), ("travel_speed", &v)] {
            if !values[row].is_finite() {
                complete = false;
                out.warnings.push(missing_required(row, col, name));
            }
        }
        let k = match k_col.as_ref().map(|c| c[row]) {
            Some(k) if k.is_finite() => Some(k),
            Some(_) => {
                match fallback {
                    Some(kf) => out.warnings.push(RowWarning {
                        row,
                        message: format!(
                            "{name}: value of arc_efficiency is missing; k = {kf} of the process used"
                        ),
                    }),
                    None => out.warnings.push(missing_required(row, "arc_efficiency", name)),
                }
                fallback
            }
            None => fallback,
        };
        let Some(k) = k.filter(|_| complete) else {
            out.values.push(f64::NAN);
            continue;
        };
        match heat_input::domain_error(k, u[row], i[row], v[row]) {
            Some(reason) => {
                out.values.push(f64::NAN);
                out.warnings.push(RowWarning {
                    row,
                    message: format!("{name}: {reason}; not computed"),
                });
            }
            None => out
                .values
                .push(heat_input::arc_heat_input(k, u[row], i[row], v[row])),
        }
    }
    Ok(out)
}

fn apply_t85(inputs: &mut Inputs<'_>, factors: ShapeFactors) -> Result<Derived, DeriveError> {
    let q = inputs.required("heat_input")?;
    let t0 = inputs.required("preheat")?;
    let d = inputs.required("thickness")?;
    let name = inputs.derivation;
    let mut out = Derived::default();
    for row in 0..inputs.n_rows {
        let mut complete = true;
        for (col, values) in [("heat_input", &q), ("preheat", &t0), ("thickness", &d)] {
            if !values[row].is_finite() {
                complete = false;
                out.warnings.push(missing_required(row, col, name));
            }
        }
        if !complete {
            out.values.push(f64::NAN);
            continue;
        }
        match cooling_time::cooling_time(q[row], t0[row], d[row], factors) {
            Ok(ct) => {
                out.values.push(ct.t85);
                out.warnings.extend(
                    cooling_time::check_cooling_time(q[row], t0[row], d[row])
                        .into_iter()
                        .map(|message| RowWarning { row, message }),
                );
            }
            Err(e) => {
                out.values.push(f64::NAN);
                out.warnings.push(RowWarning {
                    row,
                    message: format!("{name}: {e}; not computed"),
                });
            }
        }
    }
    Ok(out)
}

#[cfg(test)]
mod tests;

#[cfg(test)]
mod limit_tests {
    use super::*;

    #[test]
    fn messages_use_short_numbers() {
        assert_eq!(short_number(0.1 + 0.2), "0.3");
        assert_eq!(short_number(20.0), "20");
        assert_eq!(short_number(-0.0000001), "0");
        let limit = Limit::between("CET", "wt%", 0.2, 0.5, true);
        let msg = limit.check("CET", 0.1 + 0.2 + 0.3).unwrap();
        assert!(msg.contains("CET = 0.6 wt%"), "{msg}");
        assert!(limit.check("CET", 0.3).is_none());
        assert!(limit.check("CET", f64::NAN).is_none());
    }
}
