//! Row identifiers: the column (a heat number, a specimen or weld code)
//! whose value is echoed beside every per-row result, so that estimates
//! and findings can be matched to the records they came from.

use crate::data::Table;
use crate::error::Result;

/// The identifier of each row of a table, from one column.
#[derive(Clone, Debug, PartialEq)]
pub struct RowLabels {
    /// The column the identifiers come from.
    pub column: String,
    /// One identifier per row, as written in the file (empty for an empty cell).
    pub labels: Vec<String>,
}

impl RowLabels {
    /// The identifiers of `table`'s rows in `column`.
    ///
    /// # Errors
    /// [`crate::Error::MissingColumn`] when the table has no such column.
    pub fn read(table: &Table, column: &str) -> Result<RowLabels> {
        let i = table
            .index_of(column)
            .ok_or_else(|| table.missing_column(column))?;
        Ok(RowLabels {
            column: column.to_string(),
            labels: (0..table.n_rows())
                .map(|r| table.cell_text(i, r).unwrap_or_default())
                .collect(),
        })
    }

    /// The identifier of row `row` (0-based), empty when out of range.
    pub fn get(&self, row: usize) -> &str {
        self.labels.get(row).map_or("", String::as_str)
    }
}

/// The column that identifies `table`'s rows, in this order of choice:
/// the column `requested` (an error when the table lacks it); the first
/// column a schema declares with role `identifier` (`declared`) that the
/// table holds; else the table's first column when it holds text that is
/// not all numbers and is not one of `inputs` (a heat code such as
/// "FH-1023"). `None` when no column qualifies: rows are then known by
/// their number alone. A first column of plain numbers is never taken by
/// default (it may be a measured value); name it with `requested`.
///
/// # Errors
/// [`crate::Error::MissingColumn`] for a `requested` column the table
/// lacks, with the closest name when one is near.
pub fn identifier_column(
    table: &Table,
    requested: Option<&str>,
    declared: &[String],
    inputs: &[&str],
) -> Result<Option<String>> {
    if let Some(name) = requested {
        return match table.index_of(name) {
            Some(_) => Ok(Some(name.to_string())),
            None => Err(table.missing_column(name)),
        };
    }
    if let Some(d) = declared.iter().find(|d| table.index_of(d).is_some()) {
        return Ok(Some(d.clone()));
    }
    let Some(first) = table.names().first() else {
        return Ok(None);
    };
    let has_text = (0..table.n_rows()).any(|r| table.cell_text(0, r).is_some());
    let qualifies = has_text && !table.is_numeric(first) && !inputs.contains(&first.as_str());
    Ok(qualifies.then(|| first.clone()))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn table(text: &str) -> Table {
        let dir = tempfile::tempdir().expect("tempdir");
        let p = dir.path().join("t.csv");
        std::fs::write(&p, text).expect("write");
        Table::read(&p).expect("read")
    }

    /// Common practice, no source: a text first column names the rows, a
    /// numeric one does not unless asked for, a schema's identifier wins.
    #[test]
    fn the_identifier_is_chosen_in_order() {
        let t = table("heat,c,y\nFH-1,0.1,3\nFH-2,0.2,4\n");
        assert_eq!(
            identifier_column(&t, None, &[], &["c"]).expect("ok"),
            Some("heat".into())
        );
        let labels = RowLabels::read(&t, "heat").expect("labels");
        assert_eq!(labels.labels, ["FH-1", "FH-2"]);
        let n = table("no,c,y\n101,0.1,3\n102,0.2,4\n");
        assert_eq!(identifier_column(&n, None, &[], &["c"]).expect("ok"), None);
        assert_eq!(
            identifier_column(&n, Some("no"), &[], &["c"]).expect("ok"),
            Some("no".into())
        );
        assert_eq!(
            identifier_column(&n, None, &["no".to_string()], &["c"]).expect("ok"),
            Some("no".into())
        );
        let e = identifier_column(&n, Some("No."), &[], &["c"]).expect_err("missing");
        assert!(e.to_string().contains("did you mean 'no'"), "{e}");
    }
}
