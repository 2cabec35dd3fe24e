//! A note when an input's value looks as if it were written in another
//! unit than the one declared: outside the training range as declared,
//! inside it when read in another unit of the same quantity (a test
//! temperature in °F in a column declared °C, a boron content in wt% in a
//! column declared ppm).

use ndarray::ArrayView1;

use crate::model::Model;
use crate::prec::DOMAIN_RANGE_SLACK;
use crate::units::Unit;

impl Model {
    /// Notes for the inputs of one row (`raw`, internal units) whose value
    /// lies outside the training range as declared but inside it when the
    /// number in the file is read in another unit of its quantity. Only
    /// for a model trained through a schema (which declares the units).
    pub fn unit_hints(&self, raw: ArrayView1<f64>) -> Vec<String> {
        let Some(schema) = &self.schema else {
            return Vec::new();
        };
        let mut notes = Vec::new();
        for (inp, &v) in self.inputs.iter().zip(raw.iter()) {
            let Some(col) = schema.column(&inp.name) else {
                continue; // a derived input: no unit in the file
            };
            let declared = col.unit_or_1();
            let span = (inp.max - inp.min).abs();
            let slack = DOMAIN_RANGE_SLACK * span;
            let inside = |x: f64| x >= inp.min - slack && x <= inp.max + slack;
            if inside(v) || span <= 0.0 {
                continue;
            }
            let in_file = declared.from_internal(v);
            let other = Unit::ALL.iter().copied().find(|&u| {
                u != declared
                    && u.quantity() == declared.quantity()
                    && inside(u.to_internal(in_file))
            });
            if let Some(u) = other {
                notes.push(format!(
                    "{} = {} {declared} lies outside the training range {} to {} {declared}, but read as {u} it would lie inside: is the column in {u}? Declare its unit (schema: unit = \"{}\") or convert it",
                    inp.name,
                    trim(in_file),
                    trim(declared.from_internal(inp.min)),
                    trim(declared.from_internal(inp.max)),
                    u.ascii_symbol()
                ));
            }
        }
        notes
    }
}

/// A value to 4 decimals, trailing zeros dropped, for a note.
fn trim(v: f64) -> String {
    let s = format!("{v:.4}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    s.to_string()
}
