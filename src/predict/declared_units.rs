//! Units declared by a table of new rows, converted to the units the model
//! reads.
//!
//! A table given to `predict` or `screen` may hold a column in another
//! unit than the model's, provided its header says so, in one of two ways:
//!
//! 1. **A unit in square brackets** after the model's column name:
//!    `interpass_temp_c [degF]`, `b_ppm [wt%]`, `heat_input_kj_mm [J/mm]`
//!    (any spelling [`Unit::parse`] knows).
//! 2. **The unit suffix swapped**: the model's name with its unit suffix
//!    replaced by another unit of the same quantity: `interpass_temp_f`
//!    for `interpass_temp_c`, `b_wt` for `b_ppm`, `heat_input_j_mm` for
//!    `heat_input_kj_mm`.
//!
//! The unit the model reads a column in is the one its schema declares
//! (the training file's), or, for a model trained without a schema, the
//! unit its column name spells ([`Unit::from_column_suffix`]: `_c` °C,
//! `_ppm` ppm ...). Values are converted exactly (NIST SP 811 factors, in
//! [`crate::units`]); the header then reads as the model's name, and the
//! domain notes show the column's values in the declared unit.

use crate::data::{ColumnData, Table};
use crate::error::{Error, Result};
use crate::model::Model;
use crate::units::Unit;

/// One column read in a declared unit and converted.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct UnitDeclaration {
    /// The header as written in the table.
    pub header: String,
    /// The model's column it was read as.
    pub column: String,
    /// The unit the table declared.
    pub from: Unit,
    /// The unit the model reads the column in.
    pub to: Unit,
}

impl UnitDeclaration {
    /// A one-line account for messages: "interpass_temp_f read as
    /// interpass_temp_c, converted from °F to °C".
    pub fn describe(&self) -> String {
        format!(
            "'{}' read as {}, converted from {} to {}",
            self.header, self.column, self.from, self.to
        )
    }
}

impl Model {
    /// The columns the model reads from a table (inputs and targets, the
    /// schema's raw columns for a model trained with one) with the unit
    /// it reads each in, when known.
    pub fn file_columns(&self) -> Vec<(String, Option<Unit>)> {
        match &self.schema {
            Some(s) => s
                .columns
                .iter()
                .filter(|c| c.role.is_numeric())
                .map(|c| (c.name.clone(), Some(c.unit_or_1())))
                .collect(),
            None => self
                .inputs
                .iter()
                .map(|i| i.name.as_str())
                .chain(self.targets.iter().map(|t| t.name.as_str()))
                .map(|n| (n.to_string(), Unit::from_column_suffix(n)))
                .collect(),
        }
    }

    /// The unit the model reads file column `name` in, when known.
    pub fn column_unit(&self, name: &str) -> Option<Unit> {
        self.file_columns()
            .into_iter()
            .find(|(n, _)| n == name)
            .and_then(|(_, u)| u)
    }

    /// `table` with every column whose header declares a unit (module
    /// docs) converted to the model's unit and named as the model names
    /// it, and the list of what was converted. A table without such
    /// headers comes back unchanged with an empty list.
    ///
    /// # Errors
    /// [`Error::Read`] naming the file and column for a unit in brackets
    /// that is unknown, of another quantity than the model's column, or
    /// given for a column whose unit the model does not know; a column
    /// declared twice or present under its plain name as well.
    pub fn apply_declared_units(&self, table: &Table) -> Result<(Table, Vec<UnitDeclaration>)> {
        let cols = self.file_columns();
        let bad = |message: String| Error::Read {
            path: table.source().display().to_string(),
            message,
        };
        let mut found: Vec<(usize, UnitDeclaration)> = Vec::new();
        for (i, header) in table.names().iter().enumerate() {
            if cols.iter().any(|(n, _)| n == header) {
                continue;
            }
            let Some((column, from)) = declared(header, &cols).map_err(bad)? else {
                continue;
            };
            let to = cols
                .iter()
                .find(|(n, _)| *n == column)
                .and_then(|(_, u)| *u)
                .ok_or_else(|| {
                    bad(format!(
                        "column '{header}' declares {from}, but the model does not record the unit of \
                         {column}: give its values in the unit of the training data, under the name {column}"
                    ))
                })?;
            if to.quantity() != from.quantity() {
                return Err(bad(format!(
                    "column '{header}' declares {from} ({}), but the model reads {column} in {to} ({})",
                    from.quantity(),
                    to.quantity()
                )));
            }
            if table.index_of(&column).is_some() || found.iter().any(|(_, d)| d.column == column) {
                return Err(bad(format!(
                    "column '{header}' is a second column for {column}: keep one of them"
                )));
            }
            found.push((
                i,
                UnitDeclaration {
                    header: header.clone(),
                    column,
                    from,
                    to,
                },
            ));
        }
        if found.is_empty() {
            return Ok((table.clone(), Vec::new()));
        }
        let mut out = table.clone();
        for (i, d) in &found {
            let values = table.numeric_optional(&d.header)?;
            let converted = values
                .into_iter()
                .map(|v| v.map(|x| d.to.from_internal(d.from.to_internal(x))))
                .collect();
            out.set_column(*i, d.column.clone(), ColumnData::Number(converted))?;
        }
        Ok((out, found.into_iter().map(|(_, d)| d).collect()))
    }
}

/// The model column and unit a header declares, `None` for a header that
/// declares nothing (a column the model does not read).
fn declared(
    header: &str,
    cols: &[(String, Option<Unit>)],
) -> std::result::Result<Option<(String, Unit)>, String> {
    // 1. NAME [UNIT]
    if let Some(open) = header.find('[') {
        let Some(inner) = header[open + 1..].strip_suffix(']') else {
            return Ok(None);
        };
        let name = header[..open].trim();
        if !cols.iter().any(|(n, _)| n == name) {
            return Ok(None);
        }
        let unit = Unit::parse(inner).map_err(|e| format!("column '{header}': {e}"))?;
        return Ok(Some((name.to_string(), unit)));
    }
    // 2. the unit suffix swapped: the model's name is the same stem with
    // the suffix of its own unit (the longest stem first)
    let parts: Vec<&str> = header.split('_').collect();
    for cut in (1..parts.len()).rev() {
        let stem = parts[..cut].join("_");
        let Some(unit) = suffix_unit(&parts[cut..].join("_")) else {
            continue;
        };
        let model = cols.iter().find(|(n, u)| {
            let own = n
                .strip_prefix(stem.as_str())
                .and_then(|rest| rest.strip_prefix('_'))
                .and_then(suffix_unit);
            own.is_some()
                && *u == own
                && u.is_some_and(|m| m.quantity() == unit.quantity() && m != unit)
        });
        if let Some((n, _)) = model {
            return Ok(Some((n.clone(), unit)));
        }
    }
    Ok(None)
}

/// The unit a name suffix spells (`c`, `f`, `k`, `wt`, `ppm`, `kj_mm`,
/// `ksi` ...), the parts after the first read as a ratio.
fn suffix_unit(suffix: &str) -> Option<Unit> {
    match suffix.to_ascii_lowercase().as_str() {
        "wt" => Some(Unit::WtPercent),
        s => Unit::parse(&s.replace('_', "/"))
            .ok()
            .filter(|u| *u != Unit::Dimensionless),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn cols() -> Vec<(String, Option<Unit>)> {
        vec![
            ("interpass_temp_c".into(), Some(Unit::Celsius)),
            ("b_ppm".into(), Some(Unit::Ppm)),
            ("heat_input_kj_mm".into(), Some(Unit::KilojoulePerMm)),
            ("c_wt".into(), Some(Unit::WtPercent)),
        ]
    }

    /// Headers that declare a unit, in brackets or by a swapped suffix
    /// (the naming habit is common practice, no source).
    #[test]
    fn headers_declare_units() {
        let c = cols();
        let got = |h: &str| declared(h, &c).expect("parses");
        assert_eq!(
            got("interpass_temp_c [degF]"),
            Some(("interpass_temp_c".into(), Unit::Fahrenheit))
        );
        assert_eq!(
            got("interpass_temp_f"),
            Some(("interpass_temp_c".into(), Unit::Fahrenheit))
        );
        assert_eq!(got("b_wt"), Some(("b_ppm".into(), Unit::WtPercent)));
        assert_eq!(
            got("heat_input_j_mm"),
            Some(("heat_input_kj_mm".into(), Unit::JoulePerMm))
        );
        // a column the model does not read, or one without a unit suffix
        assert_eq!(got("weld"), None);
        assert_eq!(got("operator_f"), None);
        assert_eq!(got("interpass_f"), None);
        assert!(declared("b_ppm [furlongs]", &c).is_err());
    }
}
