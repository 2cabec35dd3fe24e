//! Adding derived columns to a table (the library side of `mettle derive`).
//!
//! Each derivation reads columns by their conventional names (element
//! symbols in wt%, `voltage` in V, `current` in A, `travel_speed` in mm/s,
//! `heat_input` in kJ/mm, `preheat` in °C, `thickness` in mm; see
//! [`crate::derive`]). With a schema, columns are found through their
//! `stands_for` and converted from their declared units; without one, a
//! column whose header is the conventional name (letter case aside) is
//! used as it is, taken to be in the internal unit.

use crate::data::schema::{conventional_quantity, ColumnSpec, DerivedSpec, Role, Schema};
use crate::data::{ColumnData, Table};
use crate::derive::{Derivation, RowWarning};
use crate::error::{Error, Result};
use crate::units::Unit;

/// A table with derived columns added.
#[derive(Clone, Debug, PartialEq)]
pub struct DeriveOutcome {
    /// The table as read, with the new columns after its own.
    pub table: Table,
    /// Names of the new columns.
    pub added: Vec<String>,
    /// For each new column, the columns it read: (conventional name, column).
    pub sources: Vec<(String, Vec<(String, String)>)>,
    /// Row warnings (0-based rows): validity ranges, values not computed.
    pub row_warnings: Vec<RowWarning>,
    /// Warnings about the table as a whole (elements taken as absent).
    pub notes: Vec<String>,
}

/// The schema a table without one is read with for `derivations`: each
/// conventional name a derivation reads is looked for among the headers,
/// exactly, else ignoring letter case; a column found is taken in the
/// internal unit of its quantity.
fn implicit_schema(table: &Table, derivations: &[Derivation]) -> Result<Schema> {
    let mut columns: Vec<ColumnSpec> = Vec::new();
    for d in derivations {
        for use_ in d.columns() {
            if columns
                .iter()
                .any(|c| c.stands_for.as_deref() == Some(use_.name))
            {
                continue;
            }
            let found = table.index_of(use_.name).or_else(|| {
                let hits: Vec<usize> = (0..table.names().len())
                    .filter(|&i| table.names()[i].eq_ignore_ascii_case(use_.name))
                    .collect();
                (hits.len() == 1).then(|| hits[0])
            });
            let Some(i) = found else { continue };
            let q =
                conventional_quantity(use_.name).unwrap_or(crate::units::Quantity::Dimensionless);
            columns.push(ColumnSpec {
                name: table.names()[i].clone(),
                role: Role::Auxiliary,
                unit: Some(Unit::internal_for(q)),
                stands_for: Some(use_.name.to_string()),
                min: None,
                max: None,
                transform: Default::default(),
                margin: None,
            });
        }
    }
    Ok(Schema {
        mettle_schema: crate::data::schema::SCHEMA_VERSION,
        columns,
        derived: Vec::new(),
    })
}

/// Add the derived columns `derivations` (after any the schema itself
/// declares) to `table`. Values are checked as training would check them;
/// a row whose derived value cannot be computed gets an empty cell and a
/// warning, never an invented value.
///
/// # Errors
/// A schema that cannot serve the derivations ([`Error::Schema`]), a
/// required column absent ([`Error::Derive`] naming it and the file), a
/// bad cell ([`Error::Cell`]), a new column whose name the table already
/// has.
pub fn derive_columns(
    table: &Table,
    derivations: &[Derivation],
    schema: Option<(&Schema, &str)>,
) -> Result<DeriveOutcome> {
    let path = table.source().display().to_string();
    let (mut schema, schema_name) = match schema {
        Some((s, name)) => (s.clone(), name.to_string()),
        None => (
            implicit_schema(table, derivations)?,
            "(headers of the table)".to_string(),
        ),
    };
    schema
        .derived
        .extend(derivations.iter().map(|d| DerivedSpec {
            spec: *d,
            name: None,
        }));
    if let Err(e) = schema.validate(&schema_name) {
        return Err(match e {
            Error::Schema { message, .. } => Error::Derive {
                path,
                message: format!(
                    "{message} (columns are found by their conventional names: {}; map other headers with a schema)",
                    crate::data::schema::conventional_names()
                ),
            },
            other => other,
        });
    }
    let checked = schema.check(table, &schema_name, false, 1);
    if let Some(e) = checked.problems.into_iter().next() {
        return Err(e);
    }
    let n = table.n_rows();
    let derived = schema.compute_derived(&checked.values, n, &path)?;
    let mut out = table.clone();
    let mut added = Vec::new();
    let mut sources = Vec::new();
    let mut row_warnings = derived.row_warnings;
    for (k, d) in schema.derived.iter().enumerate() {
        let name = d.column_name();
        if table.index_of(&name).is_some() {
            return Err(Error::Derive {
                path,
                message: format!(
                    "the table already has a column '{name}'; name the derived one otherwise in a schema ([[derived]] name = \"...\")"
                ),
            });
        }
        out.push_column(name.clone(), ColumnData::Number(derived.values[k].clone()))?;
        let used: Vec<(String, String)> = d
            .spec
            .columns()
            .iter()
            .filter_map(|u| {
                let col = match schema.provider(u.name, k)? {
                    crate::data::schema::Provider::Column(i) => schema.columns[i].name.clone(),
                    crate::data::schema::Provider::Derived(j) => schema.derived[j].column_name(),
                };
                Some((u.name.to_string(), col))
            })
            .collect();
        sources.push((name.clone(), used));
        added.push(name);
        for (row, why) in derived.not_computed[k].iter().enumerate() {
            if let Some(message) = why {
                row_warnings.push(RowWarning {
                    row,
                    message: message.clone(),
                });
            }
        }
    }
    row_warnings.sort_by_key(|w| w.row);
    Ok(DeriveOutcome {
        table: out,
        added,
        sources,
        row_warnings,
        notes: derived.notes,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    #[test]
    fn headers_are_matched_by_conventional_name() {
        // Ex2 of the trade-formulas reference [S]: CE(IIW) = 0.460000
        let t = Table::from_columns(
            "ex2.csv",
            vec![
                ("c".into(), vec![0.16]),
                ("Mn".into(), vec![1.40]),
                ("Cr".into(), vec![0.10]),
                ("Mo".into(), vec![0.05]),
                ("V".into(), vec![0.05]),
                ("Ni".into(), vec![0.20]),
                ("Cu".into(), vec![0.20]),
            ],
        )
        .expect("table");
        let o = derive_columns(&t, &[Derivation::CeIiw], None).expect("derive");
        assert_eq!(o.added, vec!["CE_IIW"]);
        assert_abs_diff_eq!(
            o.table.numeric("CE_IIW").expect("ce")[0],
            0.46,
            epsilon = 5e-7
        );
        assert!(o.sources[0].1.contains(&("C".to_string(), "c".to_string())));
        let e = derive_columns(&t, &[Derivation::Pcm], None).expect_err("no Si");
        assert!(
            e.to_string().contains("needs Si") && e.to_string().contains("ex2.csv"),
            "{e}"
        );
    }
}
