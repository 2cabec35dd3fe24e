//! Estimates that no real test could give: a negative impact energy or
//! strength, an elongation above 100 %. They are flagged in the notes and
//! left as computed, never clipped: a clipped number would hide that the
//! model is being asked about something it cannot describe.

use crate::model::Model;
use crate::units::Quantity;

/// The physically possible range of a target, in its internal unit.
#[derive(Clone, Debug, PartialEq)]
pub struct PhysicalBound {
    /// Smallest possible value.
    pub lower: f64,
    /// Largest possible value (`INFINITY` when unbounded).
    pub upper: f64,
    /// What the quantity is, for the note ("an impact energy").
    pub what: &'static str,
}

const ENERGY: PhysicalBound = PhysicalBound {
    lower: 0.0,
    upper: f64::INFINITY,
    what: "an impact energy",
};
const STRESS: PhysicalBound = PhysicalBound {
    lower: 0.0,
    upper: f64::INFINITY,
    what: "a strength",
};
const PERCENT: PhysicalBound = PhysicalBound {
    lower: 0.0,
    upper: 100.0,
    what: "a percentage such as elongation",
};

/// The bound of target `name`: from the quantity its schema declares, or,
/// for a model trained without a schema, from the usual column names
/// (kv, charpy, impact, energy, …_j; uts, yield, strength, …_mpa; elong,
/// reduction_of_area, …_pct). `None` when nothing is known (a temperature
/// can be negative).
pub fn physical_bound(model: &Model, name: &str) -> Option<PhysicalBound> {
    if let Some(u) = model.target_unit(name, false) {
        return match u.quantity() {
            Quantity::ImpactEnergy => Some(ENERGY),
            Quantity::Stress => Some(STRESS),
            Quantity::Percent | Quantity::Composition => Some(PERCENT),
            _ => None,
        };
    }
    let n = name.to_ascii_lowercase();
    let has = |words: &[&str]| words.iter().any(|w| n.contains(w));
    if has(&["elong", "reduction_of_area", "_pct", "percent"]) {
        Some(PERCENT)
    } else if has(&["charpy", "impact", "energy", "kv"]) || n.ends_with("_j") {
        Some(ENERGY)
    } else if has(&["strength", "uts", "yield", "_mpa"]) {
        Some(STRESS)
    } else {
        None
    }
}

impl PhysicalBound {
    /// A note when the central estimate `centre` lies outside the bound.
    pub fn note(&self, target: &str, centre: f64) -> Option<String> {
        let side = if centre < self.lower {
            format!("below {}", self.lower)
        } else if centre > self.upper {
            format!("above {}", self.upper)
        } else {
            return None;
        };
        Some(format!(
            "{target} estimate {centre:.3} is physically impossible ({side}, for {}): shown as \
             computed, not clipped; the model is outside what it can describe here",
            self.what
        ))
    }

    /// True when `centre` lies outside the bound.
    pub fn violated_by(&self, centre: f64) -> bool {
        centre < self.lower || centre > self.upper
    }
}
