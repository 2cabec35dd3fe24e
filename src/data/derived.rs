//! Adding derived columns to a table (the library side of `mettle derive`).
//!
//! Each derivation reads columns by their conventional names (element
//! symbols in wt%, `voltage` in V, `current` in A, `travel_speed` in mm/s,
//! `heat_input` in kJ/mm, `preheat` in °C, `thickness` in mm; see
//! [`crate::derive`]). With a schema, columns are found through their
//! `stands_for` and converted from their declared units; without one, a
//! column whose header is the conventional name (letter case aside) is
//! used as it is, taken to be in the internal unit, and an element may
//! also be written with a unit suffix: `mn_wt` (or `mn_wt%`) in wt%,
//! `b_ppm` in ppm by mass.

use crate::data::schema::{conventional_quantity, ColumnSpec, DerivedSpec, Role, Schema};
use crate::data::{ColumnData, Table};
use crate::derive::{Derivation, RowWarning};
use crate::error::{Error, Result};
use crate::units::{Quantity, Unit};

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

/// Header suffixes that say an element column's unit, for a table read
/// without a schema: `mn_wt` is Mn in wt%, `b_ppm` is B in ppm (by mass).
const ELEMENT_SUFFIXES: [(&str, Unit); 3] = [
    ("_wt", Unit::WtPercent),
    ("_wt%", Unit::WtPercent),
    ("_ppm", Unit::Ppm),
];

/// The headers a conventional name is looked for under without a schema,
/// most exact first: the name itself, the name ignoring letter case, and for
/// an element the name with a unit suffix ([`ELEMENT_SUFFIXES`]), each with
/// the unit the column is then taken in.
fn header_patterns(conventional: &str) -> Vec<Vec<(String, Unit)>> {
    let q = conventional_quantity(conventional).unwrap_or(Quantity::Dimensionless);
    let internal = Unit::internal_for(q);
    let mut levels = vec![
        vec![(conventional.to_string(), internal)],
        vec![(conventional.to_ascii_lowercase(), internal)],
    ];
    if q == Quantity::Composition {
        levels.push(
            ELEMENT_SUFFIXES
                .iter()
                .map(|(s, u)| (format!("{}{s}", conventional.to_ascii_lowercase()), *u))
                .collect(),
        );
    }
    levels
}

/// The header standing for `conventional`, with its unit: the first level
/// of [`header_patterns`] that matches; `Ok(None)` when none does.
///
/// # Errors
/// [`Error::Derive`] when several headers match at the same level.
pub(crate) fn find_header(
    table: &Table,
    conventional: &str,
    path: &str,
) -> Result<Option<(usize, Unit)>> {
    for (level, patterns) in header_patterns(conventional).iter().enumerate() {
        let hits: Vec<(usize, Unit)> = (0..table.names().len())
            .filter_map(|i| {
                let h = &table.names()[i];
                patterns
                    .iter()
                    .find(|(p, _)| {
                        if level == 0 {
                            h == p
                        } else {
                            h.eq_ignore_ascii_case(p)
                        }
                    })
                    .map(|(_, u)| (i, *u))
            })
            .collect();
        match hits.as_slice() {
            [] => continue,
            [one] => return Ok(Some(*one)),
            many => {
                let names: Vec<String> = many
                    .iter()
                    .map(|(i, _)| format!("'{}'", table.names()[*i]))
                    .collect();
                return Err(Error::Derive {
                    path: path.to_string(),
                    message: format!(
                        "columns {} could each stand for {conventional}; keep one, or say which in a schema (stands_for = \"{conventional}\", docs/schema.md)",
                        names.join(" and ")
                    ),
                });
            }
        }
    }
    Ok(None)
}

/// How a conventional name is looked for, in words, for messages.
fn looked_for(conventional: &str) -> String {
    let mut v: Vec<String> = header_patterns(conventional)
        .into_iter()
        .flatten()
        .map(|(p, u)| format!("{p} ({})", u.symbol()))
        .collect();
    v.dedup();
    v.join(", ")
}

/// The schema a table without one is read with for `derivations`: each
/// conventional name a derivation reads is looked for among the headers
/// ([`header_patterns`]); a column found is taken in the unit its header
/// says (the internal unit of its quantity unless an element suffix says
/// ppm).
///
/// # Errors
/// [`Error::Derive`] when a derivation's required column is not found,
/// saying which headers were looked for, which columns were found, and how
/// to map the others; or when a name is matched by several headers.
fn implicit_schema(table: &Table, derivations: &[Derivation]) -> Result<Schema> {
    let path = table.label();
    let mut columns: Vec<ColumnSpec> = Vec::new();
    let mut missing: Vec<String> = Vec::new();
    for (k, d) in derivations.iter().enumerate() {
        let uses = d.columns();
        let mut not_found: Vec<&str> = Vec::new();
        for use_ in &uses {
            if columns
                .iter()
                .any(|c| c.stands_for.as_deref() == Some(use_.name))
            {
                continue;
            }
            let Some((i, unit)) = find_header(table, use_.name, &path)? else {
                let from_earlier = derivations[..k]
                    .iter()
                    .any(|e| e.output_column() == use_.name);
                if !use_.optional && !from_earlier {
                    not_found.push(use_.name);
                }
                continue;
            };
            columns.push(ColumnSpec {
                name: table.names()[i].clone(),
                role: Role::Auxiliary,
                unit: Some(unit),
                stands_for: Some(use_.name.to_string()),
                min: None,
                max: None,
                transform: Default::default(),
                margin: None,
                kind: Default::default(),
                levels: Default::default(),
                implied_level: None,
            });
        }
        if not_found.is_empty() {
            continue;
        }
        let found: Vec<String> = uses
            .iter()
            .filter_map(|u| {
                let c = columns
                    .iter()
                    .find(|c| c.stands_for.as_deref() == Some(u.name))?;
                Some(format!(
                    "{} = '{}' ({})",
                    u.name,
                    c.name,
                    c.unit_or_1().symbol()
                ))
            })
            .collect();
        let how: Vec<String> = not_found
            .iter()
            .map(|n| format!("{n} as {}", looked_for(n)))
            .collect();
        missing.push(format!(
            "{} needs {} but no header matches (looked for {}); found {}",
            d.spec(),
            not_found.join(", "),
            how.join("; "),
            if found.is_empty() {
                "none of the columns it reads".to_string()
            } else {
                found.join(", ")
            }
        ));
    }
    if !missing.is_empty() {
        return Err(Error::Derive {
            path,
            message: format!(
                "{}. The table's columns are: {}. Rename a column to the name looked for, or give --schema with a [[column]] for it that has stands_for = \"<name>\" and its unit (docs/schema.md)",
                missing.join("; "),
                table.names().join(", ")
            ),
        });
    }
    Ok(Schema {
        mettle_schema: crate::data::schema::SCHEMA_VERSION,
        columns,
        derived: Vec::new(),
        group: None,
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
    let path = table.label();
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

    #[test]
    fn element_headers_with_unit_suffixes_are_found_and_converted() {
        // Ex2 of the trade-formulas reference [S]: Pcm = 0.269167 with
        // B = 0.0005 wt%, here written as 5 ppm (1 ppm = 0.0001 wt%, NIST SP 811 [S])
        let t = Table::from_columns(
            "ex2.csv",
            vec![
                ("c_wt".into(), vec![0.16]),
                ("Si_WT".into(), vec![0.30]),
                ("mn_wt%".into(), vec![1.40]),
                ("cr_wt".into(), vec![0.10]),
                ("mo_wt".into(), vec![0.05]),
                ("v_wt".into(), vec![0.05]),
                ("ni_wt".into(), vec![0.20]),
                ("cu_wt".into(), vec![0.20]),
                ("b_ppm".into(), vec![5.0]),
            ],
        )
        .expect("table");
        let o = derive_columns(&t, &[Derivation::Pcm], None).expect("derive");
        assert_abs_diff_eq!(
            o.table.numeric("Pcm").expect("pcm")[0],
            0.269167,
            epsilon = 5e-7
        );
        assert!(o.sources[0]
            .1
            .contains(&("B".to_string(), "b_ppm".to_string())));
        assert!(o.notes.is_empty(), "{:?}", o.notes);
    }

    #[test]
    fn unmatched_and_ambiguous_headers_are_explained() {
        let t = Table::from_columns(
            "t.csv",
            vec![("c_wt".into(), vec![0.1]), ("manganese".into(), vec![1.0])],
        )
        .expect("table");
        let e = derive_columns(&t, &[Derivation::CeIiw], None)
            .expect_err("no Mn")
            .to_string();
        for part in [
            "t.csv",
            "ce_iiw needs Mn",
            "mn_wt (wt%)",
            "C = 'c_wt' (wt%)",
            "manganese",
            "stands_for",
        ] {
            assert!(e.contains(part), "{part}: {e}");
        }
        let t = Table::from_columns(
            "t.csv",
            vec![
                ("c_wt".into(), vec![0.1]),
                ("mn_wt".into(), vec![1.0]),
                ("mn_ppm".into(), vec![10000.0]),
            ],
        )
        .expect("table");
        let e = derive_columns(&t, &[Derivation::CeIiw], None)
            .expect_err("two Mn")
            .to_string();
        assert!(e.contains("'mn_wt' and 'mn_ppm'"), "{e}");
    }
}
