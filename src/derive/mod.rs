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

mod apply;
mod registry;

pub use registry::Derivation;

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
