//! A first draft of a schema for a table, guessed from its header names
//! and values, with a comment on every guess for the user to check: the
//! role of each column (identifier, input, target, ignored), its unit,
//! the element symbol or process quantity a derivation would read it as,
//! and for a target the scale it might be learnt on.
//!
//! The guesses follow the trade's usual column names (common practice, no
//! source): element symbols with a unit suffix (`mn_wt`, `b_ppm`), a
//! temperature ending in `_c`, `_f` or `_k`, heat input in kJ/mm or J/mm,
//! plate thickness in mm or in, and measured properties
//! ([`crate::data::guess::measured_property`]) with their units (MPa, ksi,
//! J, ft·lbf, %, HV, HB, HRC).

use std::fmt::Write as _;

use crate::data::guess::measured_property;
use crate::data::schema::conventional_quantity;
use crate::data::Table;
use crate::derive::Composition;
use crate::units::{Quantity, Unit};

/// One column's guess.
struct Guess {
    role: &'static str,
    unit: Option<Unit>,
    stands_for: Option<&'static str>,
    transform: Option<&'static str>,
    why: String,
}

/// The unit a name's last word spells (`uts_mpa` → MPa, `b_ppm` → ppm).
fn suffix_unit(words: &[&str]) -> Option<Unit> {
    let last = *words.last()?;
    let two = words
        .len()
        .checked_sub(2)
        .map(|k| format!("{}/{}", words[k], last));
    if let Some(u) = two.and_then(|t| Unit::parse(&t).ok()) {
        return Some(u);
    }
    match last {
        "wt" | "pct" if words.len() > 1 => Some(Unit::WtPercent),
        "c" | "degc" => Some(Unit::Celsius),
        "f" | "degf" => Some(Unit::Fahrenheit),
        _ => Unit::parse(last)
            .ok()
            .filter(|u| *u != Unit::Dimensionless && u.quantity() != Quantity::Current),
    }
}

fn guess(table: &Table, k: usize, name: &str) -> Guess {
    let lower = name.to_lowercase();
    let words: Vec<&str> = lower
        .split(|c: char| !c.is_ascii_alphanumeric())
        .filter(|w| !w.is_empty())
        .collect();
    let unit = suffix_unit(&words);
    let numeric = table.has_numbers(name) && table.is_numeric(name);
    let plain = |role, unit, why: String| Guess {
        role,
        unit,
        stands_for: None,
        transform: None,
        why,
    };
    if !numeric {
        return if k == 0 {
            plain(
                "identifier",
                None,
                "text in the first column: names the record (heat, weld, specimen)".into(),
            )
        } else {
            plain(
                "ignored",
                None,
                "text, not numbers: not read (make it the identifier if it names the record)"
                    .into(),
            )
        };
    }
    if let Some(what) = measured_property(name) {
        let (transform, note) = match what {
            "impact energy or toughness" => (
                Some("log"),
                "; learnt on the log scale, as impact energy scatters in proportion to its level",
            ),
            _ => (None, ""),
        };
        // a property's percent is plain percent (elongation), never wt%
        let unit = unit.map(|u| {
            if u == Unit::WtPercent {
                Unit::Percent
            } else {
                u
            }
        });
        return Guess {
            role: "target",
            unit: unit.or(Some(Unit::Dimensionless)),
            stands_for: None,
            transform,
            why: format!(
                "a measured property ({what}): proposed as a target{}{note}",
                unit.map_or(
                    " (unit not recognised from the name: set it)".to_string(),
                    |u| format!(", unit {u} from the name")
                )
            ),
        };
    }
    let first = words.first().copied().unwrap_or_default();
    if let Some(sym) = Composition::ELEMENTS
        .iter()
        .copied()
        .find(|s| s.to_lowercase() == first)
    {
        let u = unit
            .filter(|u| u.quantity() == Quantity::Composition)
            .unwrap_or(Unit::WtPercent);
        return Guess {
            role: "input",
            unit: Some(u),
            stands_for: Some(sym),
            transform: None,
            why: format!(
                "the element symbol {sym}: a content in {u}{}",
                if unit.is_some() {
                    " (from the name)"
                } else {
                    " (assumed: no unit in the name)"
                }
            ),
        };
    }
    let process = [
        ("preheat", "preheat"),
        ("heat_input", "heat_input"),
        ("thickness", "thickness"),
        ("voltage", "voltage"),
        ("current", "current"),
        ("travel_speed", "travel_speed"),
    ];
    if let Some((_, conv)) = process.iter().find(|(key, _)| lower.starts_with(key)) {
        let unit = unit.filter(|u| Some(u.quantity()) == conventional_quantity(conv));
        return Guess {
            role: "input",
            unit: unit.or(Some(Unit::Dimensionless)),
            // a derivation reads it only in a unit of its quantity
            stands_for: unit.map(|_| *conv),
            transform: None,
            why: format!(
                "a welding quantity ({conv}) a derivation can read{}",
                unit.map_or(
                    " (unit not recognised from the name: set it)".to_string(),
                    |u| format!(", unit {u} from the name")
                )
            ),
        };
    }
    plain(
        "input",
        unit.or(Some(Unit::Dimensionless)),
        match unit {
            Some(u) => format!("numbers: an input, unit {u} from the name"),
            None => "numbers: an input; no unit recognised in the name, so \"1\" (a pure number): set the true one".into(),
        },
    )
}

/// The drafted schema as TOML text, a comment above every column.
pub fn draft_schema(table: &Table) -> String {
    let mut s = String::from(
        "# A first draft by `mettle schema`, guessed from the header names and values of\n",
    );
    let _ = writeln!(
        s,
        "# {}: check every guess before training (docs/schema.md).",
        table.source().display()
    );
    s.push_str("mettle_schema = 1\n");
    for (k, name) in table.names().iter().enumerate() {
        let g = guess(table, k, name);
        let _ = write!(
            s,
            "\n# {}\n[[column]]\nname = {}\nrole = \"{}\"\n",
            g.why,
            toml_string(name),
            g.role
        );
        if let Some(u) = g.unit {
            let _ = writeln!(s, "unit = {}", toml_string(u.symbol()));
        }
        if let Some(sym) = g.stands_for {
            let _ = writeln!(s, "stands_for = \"{sym}\"");
        }
        if let Some(t) = g.transform {
            let _ = writeln!(s, "transform = \"{t}\"");
        }
    }
    s
}

/// A TOML basic string.
fn toml_string(s: &str) -> String {
    format!("\"{}\"", s.replace('\\', "\\\\").replace('"', "\\\""))
}
