//! A note when an input's value looks as if it were written in another
//! unit than the model's: outside the training range as read, inside it
//! when read in another unit of the same quantity (a test temperature in
//! °F in a column the model reads in °C, a boron content in wt% in a
//! column read in ppm). A column with values outside the range as read
//! and every value inside it in another unit is refused by
//! [`Model::unit_check`]: estimates are not made on a guessed unit.

use ndarray::ArrayView1;

use super::UnitDeclaration;
use crate::data::Table;
use crate::error::{Error, Result};
use crate::model::Model;
use crate::prec::DOMAIN_RANGE_SLACK;
use crate::units::Unit;

/// One input value that reads inside the training range in another unit.
#[derive(Clone, Debug, PartialEq)]
pub struct UnitHint {
    /// The input (model input order).
    pub input: usize,
    /// The unit the model reads it in.
    pub unit: Unit,
    /// The unit it looks to be in.
    pub looks_like: Unit,
    /// The value as written in the file (in `unit`).
    pub value: f64,
    /// The note for the row.
    pub note: String,
}

impl Model {
    /// The hints for one row (`raw`: model input order, the values the
    /// networks read), skipping the inputs named in `declared` (columns
    /// whose unit the table declared: taken as given).
    pub fn unit_hints(&self, raw: ArrayView1<f64>, declared: &[String]) -> Vec<UnitHint> {
        self.unit_hints_with(&self.unit_readings(), raw, declared)
    }

    /// [`Model::reading`] of every input, for [`Model::unit_hints_with`]:
    /// once per table rather than once per row (the units are parsed from
    /// the column names).
    pub(super) fn unit_readings(&self) -> Vec<Option<Reading>> {
        (0..self.inputs.len()).map(|j| self.reading(j)).collect()
    }

    /// [`Model::unit_hints`] with the inputs' readings given.
    pub(super) fn unit_hints_with(
        &self,
        readings: &[Option<Reading>],
        raw: ArrayView1<f64>,
        declared: &[String],
    ) -> Vec<UnitHint> {
        let mut hints = Vec::new();
        for (j, (inp, &v)) in self.inputs.iter().zip(raw.iter()).enumerate() {
            if declared.contains(&inp.name) {
                continue;
            }
            let Some(r) = readings.get(j).copied().flatten() else {
                continue;
            };
            if r.inside(v) || !v.is_finite() {
                continue;
            }
            let in_file = r.in_file(v);
            let Some(u) = r.others().find(|&u| r.inside(r.reread(u, in_file))) else {
                continue;
            };
            let (lo, hi) = (r.in_file(inp.min), r.in_file(inp.max));
            let unit = r.unit;
            hints.push(UnitHint {
                input: j,
                unit,
                looks_like: u,
                value: in_file,
                note: format!(
                    "{} = {} {unit} lies outside the training range {} to {} {unit}, but read as {u} it \
                     would lie inside: is the column in {u}? Declare its unit in the header \
                     ('{} [{}]') or convert it",
                    inp.name,
                    trim(in_file),
                    trim(lo),
                    trim(hi),
                    inp.name,
                    u.ascii_symbol()
                ),
            });
        }
        hints
    }

    /// How input `j`'s values relate to the numbers in the file, when the
    /// model knows the column's unit (`None` for a derived input or a
    /// column without a known unit, and for an input of no range).
    fn reading(&self, j: usize) -> Option<Reading> {
        let inp = &self.inputs[j];
        let span = (inp.max - inp.min).abs();
        if span <= 0.0 {
            return None;
        }
        let (unit, schema) = match &self.schema {
            // a derived input has no unit in the file
            Some(schema) => (schema.column(&inp.name)?.unit_or_1(), true),
            None => (Unit::from_column_suffix(&inp.name)?, false),
        };
        Some(Reading {
            unit,
            schema,
            lo: inp.min - DOMAIN_RANGE_SLACK * span,
            hi: inp.max + DOMAIN_RANGE_SLACK * span,
        })
    }

    /// The table's declared units applied ([`Model::apply_declared_units`]),
    /// and a refusal when a column the table did not declare looks as if
    /// it were in another unit than the model's: two or more of its values
    /// (or the only one) lie outside the training range as read, every one
    /// inside it read in another unit of its quantity. (A column really in the model's unit
    /// with an odd value is accepted once its header says so.)
    ///
    /// # Errors
    /// As [`Model::apply_declared_units`] and [`Model::scaled_inputs`];
    /// [`Error::Read`] naming the file, the column, the unit it seems to be
    /// in and how to declare it.
    pub fn unit_check(&self, table: &Table) -> Result<Vec<UnitDeclaration>> {
        let (t, decl) = self.apply_declared_units(table)?;
        let (prepared, _) = self.read_through_schema(&t, false)?;
        let (raw, _) = self.scaled_inputs(&prepared)?;
        let declared: Vec<String> = decl.iter().map(|d| d.column.clone()).collect();
        // per input: rows inside the range as read, and per other unit of
        // its quantity the rows inside it read in that unit
        for j in 0..self.inputs.len() {
            if declared.contains(&self.inputs[j].name) {
                continue;
            }
            let Some(r) = self.reading(j) else { continue };
            let col: Vec<f64> = raw
                .column(j)
                .iter()
                .copied()
                .filter(|v| v.is_finite())
                .collect();
            if col.is_empty() {
                continue;
            }
            let as_read = col.iter().filter(|&&v| r.inside(v)).count();
            // one odd row among others gets its note; two or more (or the
            // only row) make a pattern
            let outside = col.len() - as_read;
            if outside == 0 || (outside < 2 && outside < col.len()) {
                continue;
            }
            let other = r
                .others()
                .find(|&u| col.iter().all(|&v| r.inside(r.reread(u, r.in_file(v)))));
            let Some(u) = other else { continue };
            let name = &self.inputs[j].name;
            let values: Vec<String> = col
                .iter()
                .filter(|&&v| !r.inside(v))
                .take(3)
                .map(|&v| trim(r.in_file(v)))
                .collect();
            return Err(Error::Read {
                path: table.source().display().to_string(),
                message: format!(
                    "column {name}: {} of {} values ({}{}) lie outside the model's training range in \
                     {unit}, but every value lies inside it read as {u}: the column looks as if it \
                     were in {u}. Declare its unit in the header ('{name} [{}]'), or, if the values \
                     really are in {unit}, say so ('{name} [{}]'); estimates are not made on a \
                     guessed unit",
                    col.len() - as_read,
                    col.len(),
                    values.join(", "),
                    if col.len() - as_read > 3 { ", ..." } else { "" },
                    u.ascii_symbol(),
                    r.unit.ascii_symbol(),
                    unit = r.unit,
                ),
            });
        }
        Ok(decl)
    }
}

/// How one input's values relate to the file's numbers.
#[derive(Clone, Copy, Debug)]
pub(super) struct Reading {
    /// The unit of the file's column.
    unit: Unit,
    /// Values are internal (a model with a schema) rather than in `unit`.
    schema: bool,
    /// The training range with its slack, as the networks read it.
    lo: f64,
    hi: f64,
}

impl Reading {
    fn inside(&self, x: f64) -> bool {
        x >= self.lo && x <= self.hi
    }

    /// A value as the networks read it, as the number in the file.
    fn in_file(&self, v: f64) -> f64 {
        if self.schema {
            self.unit.from_internal(v)
        } else {
            v
        }
    }

    /// The value the networks would read for number `x` in the file
    /// written in unit `u`.
    fn reread(&self, u: Unit, x: f64) -> f64 {
        if self.schema {
            u.to_internal(x)
        } else {
            self.unit.from_internal(u.to_internal(x))
        }
    }

    /// The other units of the column's quantity.
    fn others(&self) -> impl Iterator<Item = Unit> + '_ {
        Unit::ALL
            .iter()
            .copied()
            .filter(|&u| u != self.unit && u.quantity() == self.unit.quantity())
    }
}

/// A value to 4 decimals, trailing zeros dropped, for a note.
fn trim(v: f64) -> String {
    let s = format!("{v:.4}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    s.to_string()
}
