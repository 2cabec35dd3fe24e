//! Alloy cost per tonne and process limits, from a small TOML file the
//! user edits (format: docs/screening.md; an example with invented prices
//! is `datasets/fellhaven_costs.toml`).
//!
//! # Cost
//!
//! A tonne of metal holds 10·w kg of an element at w wt% (1 wt% of
//! 1000 kg). Every kilogram not taken by a priced element is charged at
//! the balance price (iron and unpriced elements), so
//!
//! ```text
//! cost per tonne = 1000·p_bal + Σ_e 10·w_e·(p_e − p_bal)
//! ```
//!
//! with p in currency per kg. The cost is linear in the contents.
//!
//! # Limits
//!
//! A maximum carbon equivalent (CE(IIW), Pcm or CET, see
//! [`crate::derive::carbon_equivalent`]), bounds on single elements and
//! bounds on sums of groups of elements, all in wt%.

use std::collections::BTreeMap;
use std::path::Path;

use serde::{Deserialize, Serialize};

use crate::derive::{carbon_equivalent, Composition};
use crate::error::{Error, Result};

/// Kilograms of an element per tonne of metal per wt%.
pub const KG_PER_TONNE_PER_WT_PCT: f64 = 10.0;

/// Which carbon equivalent a limit applies to.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum CeIndex {
    /// CE(IIW).
    Iiw,
    /// Pcm (Ito & Bessyo).
    Pcm,
    /// CET (EN 1011-2 method B).
    Cet,
}

impl CeIndex {
    /// Parse `iiw` (or `ce`), `pcm`, `cet`.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] naming the accepted names.
    pub fn parse(s: &str) -> Result<CeIndex> {
        match s.trim().to_ascii_lowercase().as_str() {
            "iiw" | "ce" | "ce_iiw" => Ok(CeIndex::Iiw),
            "pcm" => Ok(CeIndex::Pcm),
            "cet" => Ok(CeIndex::Cet),
            _ => Err(Error::InvalidParameter {
                name: "carbon-equivalent index",
                value: s.to_string(),
                expected: "iiw, pcm or cet".into(),
            }),
        }
    }

    /// The index's usual name.
    pub fn name(self) -> &'static str {
        match self {
            CeIndex::Iiw => "CE(IIW)",
            CeIndex::Pcm => "Pcm",
            CeIndex::Cet => "CET",
        }
    }

    /// The index of a composition, wt%.
    pub fn value(self, c: &Composition) -> f64 {
        match self {
            CeIndex::Iiw => carbon_equivalent::ce_iiw(c),
            CeIndex::Pcm => carbon_equivalent::pcm(c),
            CeIndex::Cet => carbon_equivalent::cet(c),
        }
    }
}

/// Prices: currency per kg of each element, and of the balance.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct CostModel {
    /// Currency name, as the file gives it.
    pub currency: String,
    /// Price of the balance (iron and unpriced elements), per kg.
    pub balance_price_per_kg: f64,
    /// (element symbol, price per kg).
    pub prices: Vec<(String, f64)>,
    /// What the file says the prices are (e.g. "invented").
    pub note: Option<String>,
}

/// Bounds on a sum of element contents (wt%).
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct GroupLimit {
    /// Element symbols summed.
    pub elements: Vec<String>,
    /// Smallest allowed sum.
    pub min: Option<f64>,
    /// Largest allowed sum.
    pub max: Option<f64>,
}

/// Process limits a candidate must respect.
#[derive(Clone, Debug, Default, PartialEq, Serialize)]
pub struct ProcessLimits {
    /// Maximum carbon equivalent, with the index it applies to.
    pub max_ce: Option<(CeIndex, f64)>,
    /// Bounds on single elements: a group of one.
    pub groups: Vec<GroupLimit>,
}

/// One limit a candidate breaks.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Violation {
    /// In words, with the value and the limit.
    pub text: String,
    /// How far past the limit, wt%.
    pub amount: f64,
}

impl ProcessLimits {
    /// The limits `c` breaks (empty when it respects all of them).
    pub fn violations(&self, c: &Composition) -> Vec<Violation> {
        let mut out = Vec::new();
        if let Some((index, max)) = self.max_ce {
            let v = index.value(c);
            if v > max {
                out.push(Violation {
                    text: format!("{} = {v:.3} above the limit {max}", index.name()),
                    amount: v - max,
                });
            }
        }
        for g in &self.groups {
            let sum: f64 = g.elements.iter().filter_map(|e| c.element(e)).sum();
            let what = g.elements.join("+");
            if let Some(max) = g.max.filter(|m| sum > *m) {
                out.push(Violation {
                    text: format!("{what} = {sum:.4} wt% above the limit {max}"),
                    amount: sum - max,
                });
            }
            if let Some(min) = g.min.filter(|m| sum < *m) {
                out.push(Violation {
                    text: format!("{what} = {sum:.4} wt% below the limit {min}"),
                    amount: min - sum,
                });
            }
        }
        out
    }

    /// True when no limit is set.
    pub fn is_empty(&self) -> bool {
        self.max_ce.is_none() && self.groups.is_empty()
    }
}

impl CostModel {
    /// Alloy cost per tonne of a composition (module formula).
    pub fn cost_per_tonne(&self, c: &Composition) -> f64 {
        let mut cost = 1000.0 * self.balance_price_per_kg;
        for (e, p) in &self.prices {
            let w = c.element(e).unwrap_or(0.0);
            cost += KG_PER_TONNE_PER_WT_PCT * w * (p - self.balance_price_per_kg);
        }
        cost
    }

    /// The price per kg of element `symbol`, if it has one.
    pub fn price(&self, symbol: &str) -> Option<f64> {
        self.prices.iter().find(|(e, _)| e == symbol).map(|p| p.1)
    }
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct FileBounds {
    min: Option<f64>,
    max: Option<f64>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct FileCe {
    index: String,
    max: f64,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct FileGroup {
    elements: Vec<String>,
    min: Option<f64>,
    max: Option<f64>,
}

#[derive(Deserialize, Default)]
#[serde(deny_unknown_fields)]
struct FileLimits {
    carbon_equivalent: Option<FileCe>,
    #[serde(default)]
    element: BTreeMap<String, FileBounds>,
    #[serde(default)]
    group: Vec<FileGroup>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct CostFile {
    currency: String,
    note: Option<String>,
    balance_price_per_kg: f64,
    #[serde(default)]
    price_per_kg: BTreeMap<String, f64>,
    #[serde(default)]
    limits: FileLimits,
}

/// The element symbol `s` names, letter case aside (`mn` → `Mn`).
pub fn element_symbol(s: &str) -> Option<&'static str> {
    Composition::ELEMENTS
        .iter()
        .copied()
        .find(|e| e.eq_ignore_ascii_case(s.trim()))
}

/// Read a cost-and-limits file.
///
/// # Errors
/// [`Error::Io`] when it cannot be read; [`Error::Costs`] when it is not
/// valid TOML of the documented form, names an unknown element, or gives a
/// negative or non-finite price or bound, or a minimum above its maximum.
pub fn read_costs(path: &Path) -> Result<(CostModel, ProcessLimits)> {
    let text = std::fs::read_to_string(path).map_err(|source| Error::Io {
        path: path.display().to_string(),
        source,
    })?;
    parse_costs(&text, &path.display().to_string())
}

/// Parse the text of a cost-and-limits file; `path` names it in errors.
///
/// # Errors
/// As [`read_costs`].
pub fn parse_costs(text: &str, path: &str) -> Result<(CostModel, ProcessLimits)> {
    let err = |message: String| Error::Costs {
        path: path.to_string(),
        message,
    };
    let f: CostFile = toml::from_str(text).map_err(|e| err(e.to_string().trim().to_string()))?;
    let known = Composition::ELEMENTS.join(", ");
    let symbol = |s: &str, where_: &str| {
        element_symbol(s).ok_or_else(|| {
            err(format!(
                "{where_}: '{s}' is not an element mettle knows; known: {known}"
            ))
        })
    };
    let non_negative = |v: f64, what: String| {
        if v.is_finite() && v >= 0.0 {
            Ok(v)
        } else {
            Err(err(format!(
                "{what} = {v}: must be a finite number of at least 0"
            )))
        }
    };
    let balance = non_negative(f.balance_price_per_kg, "balance_price_per_kg".into())?;
    let mut prices = Vec::new();
    for (k, v) in &f.price_per_kg {
        let e = symbol(k, "[price_per_kg]")?;
        prices.push((
            e.to_string(),
            non_negative(*v, format!("price_per_kg.{k}"))?,
        ));
    }
    let mut limits = ProcessLimits::default();
    if let Some(ce) = &f.limits.carbon_equivalent {
        let index = CeIndex::parse(&ce.index).map_err(|_| {
            err(format!(
                "limits.carbon_equivalent.index = '{}': expected iiw, pcm or cet",
                ce.index
            ))
        })?;
        limits.max_ce = Some((
            index,
            non_negative(ce.max, "limits.carbon_equivalent.max".into())?,
        ));
    }
    let mut check_bounds =
        |elements: Vec<String>, min: Option<f64>, max: Option<f64>, what: String| -> Result<()> {
            let min = min
                .map(|v| non_negative(v, format!("{what}.min")))
                .transpose()?;
            let max = max
                .map(|v| non_negative(v, format!("{what}.max")))
                .transpose()?;
            if let (Some(lo), Some(hi)) = (min, max) {
                if lo > hi {
                    return Err(err(format!("{what}: min {lo} is above max {hi}")));
                }
            }
            if min.is_none() && max.is_none() {
                return Err(err(format!("{what}: give min, max or both")));
            }
            limits.groups.push(GroupLimit { elements, min, max });
            Ok(())
        };
    for (k, b) in &f.limits.element {
        let e = symbol(k, "[limits.element]")?.to_string();
        check_bounds(vec![e], b.min, b.max, format!("limits.element.{k}"))?;
    }
    for (i, g) in f.limits.group.iter().enumerate() {
        let what = format!("[[limits.group]] number {}", i + 1);
        if g.elements.is_empty() {
            return Err(err(format!("{what}: elements is empty")));
        }
        let elements = g
            .elements
            .iter()
            .map(|e| symbol(e, &what).map(str::to_string))
            .collect::<Result<Vec<_>>>()?;
        check_bounds(elements, g.min, g.max, what)?;
    }
    Ok((
        CostModel {
            currency: f.currency,
            balance_price_per_kg: balance,
            prices,
            note: f.note,
        },
        limits,
    ))
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    const TWO: &str = r#"
currency = "EUR"
note = "invented prices"
balance_price_per_kg = 0.4
[price_per_kg]
C = 0.5
mn = 2.0
"#;

    #[test]
    fn two_element_cost_by_hand() {
        let (m, l) = parse_costs(TWO, "two.toml").expect("parses");
        assert!(l.is_empty());
        let mut c = Composition {
            c: 0.1,
            mn: 1.5,
            ..Default::default()
        };
        // by hand: 1 kg C at 0.5 = 0.5; 15 kg Mn at 2.0 = 30.0;
        // 984 kg balance at 0.4 = 393.6; total 424.1 per tonne
        assert_abs_diff_eq!(m.cost_per_tonne(&c), 424.1, epsilon = 1e-9);
        // an unpriced element is charged at the balance price
        c.ni = 1.0;
        assert_abs_diff_eq!(m.cost_per_tonne(&c), 424.1, epsilon = 1e-9);
    }

    #[test]
    fn limits_are_read_and_applied() {
        let text = format!(
            "{TWO}\n[limits]\ncarbon_equivalent = {{ index = \"iiw\", max = 0.47 }}\n\
             [limits.element]\nNi = {{ min = 0.5, max = 3.5 }}\n\
             [[limits.group]]\nelements = [\"Cr\", \"Mo\"]\nmax = 0.5\n"
        );
        let (_, l) = parse_costs(&text, "l.toml").expect("parses");
        // CE(IIW) = 0.1 + 1.8/6 + 1.0/15 = 0.4667: limit set at 0.47 below
        let mut c = Composition {
            c: 0.1,
            mn: 1.8,
            ni: 1.0,
            ..Default::default()
        };
        assert!(l.violations(&c).is_empty(), "{:?}", l.violations(&c));
        c.cr = 0.3;
        c.mo = 0.3; // Cr+Mo = 0.6 > 0.5; CE = 0.46667 + 0.6/5 = 0.58667 > 0.47
        let v = l.violations(&c);
        assert_eq!(v.len(), 2, "{v:?}");
        assert_abs_diff_eq!(v[0].amount, 0.586_666_666_666_7 - 0.47, epsilon = 1e-9);
        assert_abs_diff_eq!(v[1].amount, 0.1, epsilon = 1e-12);
        c.ni = 0.2;
        assert_eq!(l.violations(&c).len(), 3);
    }

    #[test]
    fn bad_files_name_the_problem() {
        for (text, part) in [
            ("currency='x'\nbalance_price_per_kg=-1\n", "balance_price_per_kg = -1"),
            ("currency='x'\nbalance_price_per_kg=1\n[price_per_kg]\nXx=1\n", "'Xx' is not an element"),
            ("currency='x'\nbalance_price_per_kg=1\n[limits.element]\nNi={min=2,max=1}\n", "min 2 is above max 1"),
            ("currency='x'\nbalance_price_per_kg=1\n[limits]\ncarbon_equivalent={index='cen',max=1}\n", "expected iiw, pcm or cet"),
            ("currency='x'\nbalance_price=1\n", "unknown field"),
        ] {
            let e = parse_costs(text, "f.toml").expect_err(text).to_string();
            assert!(e.contains(part), "{text}: {e}");
        }
    }
}
