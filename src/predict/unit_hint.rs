//! A note when an input's value looks as if it were written in another
//! unit than the model's: outside the training range as read, inside it
//! when read in another unit of the same quantity (a test temperature in
//! °F in a column the model reads in °C, a boron content in wt% in a
//! column read in ppm). A column whose every value looks so is refused by
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
        let mut hints = Vec::new();
        for (j, (inp, &v)) in self.inputs.iter().zip(raw.iter()).enumerate() {
            if declared.contains(&inp.name) {
                continue;
            }
            // the unit of the file's column, and the raw value a number in
            // the file would give read in unit u
            let (unit, in_file, reread): (Unit, f64, Box<dyn Fn(Unit, f64) -> f64>) =
                match &self.schema {
                    Some(schema) => {
                        let Some(col) = schema.column(&inp.name) else {
                            continue; // a derived input: no unit in the file
                        };
                        let d = col.unit_or_1();
                        (d, d.from_internal(v), Box::new(|u: Unit, x| u.to_internal(x)))
                    }
                    None => {
                        let Some(m) = Unit::from_column_suffix(&inp.name) else {
                            continue;
                        };
                        (
                            m,
                            v,
                            Box::new(move |u: Unit, x| m.from_internal(u.to_internal(x))),
                        )
                    }
                };
            let span = (inp.max - inp.min).abs();
            let slack = DOMAIN_RANGE_SLACK * span;
            let inside = |x: f64| x >= inp.min - slack && x <= inp.max + slack;
            if inside(v) || span <= 0.0 || !v.is_finite() {
                continue;
            }
            let other = Unit::ALL.iter().copied().find(|&u| {
                u != unit && u.quantity() == unit.quantity() && inside(reread(u, in_file))
            });
            let Some(u) = other else { continue };
            let (lo, hi) = match &self.schema {
                Some(_) => (unit.from_internal(inp.min), unit.from_internal(inp.max)),
                None => (inp.min, inp.max),
            };
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

    /// The table's declared units applied ([`Model::apply_declared_units`]),
    /// and a refusal when a column the table did not declare looks, in
    /// every row, as if it were in another unit than the model's.
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
        let n = raw.nrows();
        if n == 0 {
            return Ok(decl);
        }
        let mut seen: Vec<Vec<UnitHint>> = vec![Vec::new(); self.inputs.len()];
        for row in raw.rows() {
            for h in self.unit_hints(row, &declared) {
                let j = h.input;
                seen[j].push(h);
            }
        }
        if let Some(hs) = seen.iter().find(|hs| hs.len() == n) {
            let h = &hs[0];
            let name = &self.inputs[h.input].name;
            let same = hs.iter().all(|x| x.looks_like == h.looks_like);
            let values: Vec<String> = hs.iter().take(3).map(|x| trim(x.value)).collect();
            return Err(Error::Read {
                path: table.source().display().to_string(),
                message: format!(
                    "column {name}: every value ({}{}) lies outside the model's training range in \
                     {}, but inside it read as {}{}: the column looks as if it were in another unit. \
                     Declare its unit in the header ('{name} [{}]'), or, if the values really are \
                     in {}, say so ('{name} [{}]'); estimates are not made on a guessed unit",
                    values.join(", "),
                    if hs.len() > 3 { ", ..." } else { "" },
                    h.unit,
                    h.looks_like,
                    if same { "" } else { " (or another unit of its quantity)" },
                    h.looks_like.ascii_symbol(),
                    h.unit,
                    h.unit.ascii_symbol()
                ),
            });
        }
        Ok(decl)
    }
}

/// A value to 4 decimals, trailing zeros dropped, for a note.
fn trim(v: f64) -> String {
    let s = format!("{v:.4}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    s.to_string()
}
