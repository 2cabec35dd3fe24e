//! The nearest evidence (`mettle predict --neighbours K`): for each row
//! estimated, the K training rows nearest to it, with their identifier,
//! their distance and their measured values — what the estimate rests on.
//!
//! The model file keeps the training inputs only as the domain guard
//! needs them (distinct rows, scaled, possibly a sample; no identifiers,
//! no measured values), so the neighbours are read from the model's own
//! training table, given again and checked against the model's
//! fingerprint ([`super::check_training_data`]), as `report` does. Rows
//! are read through the model's stored schema (units converted, derived
//! inputs computed, incomplete rows left out as at training), so the
//! measured values are in internal units and a row is named by its place
//! in the file (1-based data row) and by the schema's `identifier` column
//! when it has one.
//!
//! The distance is the domain guard's relevance-weighted distance
//! ([`crate::model::NearMeasure`]): each input's scaled value (its
//! training range is one unit) weighted by how much the committees use it,
//!
//! ```text
//! d(x, x_n) = √( Σ_i w_i² (x_i − x_ni)² )
//! ```
//!
//! in range-widths of a fully relevant input, so an input the networks
//! ignore does not push a row away (distance weighting by sensitivity,
//! common practice, no source).

use ndarray::Array2;
use rayon::prelude::*;
use serde::Serialize;

use crate::data::schema::{PrepareOptions, Role};
use crate::data::Table;
use crate::error::Result;
use crate::model::Model;

/// One training row near a query.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Neighbour {
    /// Data row of the training file (1-based, header excluded).
    pub row: usize,
    /// The row's identifier, when the schema declares an identifier column.
    pub id: Option<String>,
    /// Relevance-weighted distance, in range-widths of a fully relevant
    /// input.
    pub distance: f64,
    /// Measured value of each target (model order, internal units), `None`
    /// where not measured.
    pub measured: Vec<Option<f64>>,
}

/// The model's training rows, ready for the nearest-row search.
#[derive(Clone, Debug)]
pub struct TrainingEvidence {
    /// Weighted scaled inputs, rows × inputs.
    weighted: Array2<f64>,
    weights: Vec<f64>,
    /// File row (1-based) of each kept row.
    file_rows: Vec<usize>,
    ids: Option<Vec<Option<String>>>,
    /// Per kept row, per target.
    measured: Vec<Vec<Option<f64>>>,
}

impl TrainingEvidence {
    /// Read `table`, the model's training table, for the search.
    ///
    /// # Errors
    /// [`crate::Error::NotTrainingData`] when `table` is not the table the
    /// model was trained on; the schema's errors, naming file, row and
    /// column.
    pub fn new(model: &Model, table: &Table) -> Result<TrainingEvidence> {
        super::check_training_data(model, table)?;
        let (prepared, dropped, id_column) = match &model.schema {
            None => (table.clone(), Vec::new(), None),
            Some(schema) => {
                let p = schema.prepare(
                    table,
                    "stored in the model",
                    PrepareOptions {
                        need_targets: true,
                        drop_incomplete_rows: !model.training.incomplete_rows_dropped.is_empty(),
                    },
                )?;
                let id = schema
                    .columns
                    .iter()
                    .find(|c| c.role == Role::Identifier)
                    .and_then(|c| table.index_of(&c.name));
                (p.table, p.dropped_rows, id)
            }
        };
        let file_rows: Vec<usize> = (1..=table.n_rows())
            .filter(|r| !dropped.contains(r))
            .collect();
        let ids = id_column.map(|i| {
            file_rows
                .iter()
                .map(|&r| table.cell_text(i, r - 1))
                .collect()
        });
        let (_, scaled) = model.scaled_inputs(&prepared)?;
        let weights = model
            .domain
            .as_ref()
            .map_or_else(|| vec![1.0; model.inputs.len()], |d| d.relevance_weights());
        let weighted = Array2::from_shape_fn(scaled.dim(), |(i, j)| scaled[[i, j]] * weights[j]);
        let mut columns = Vec::new();
        for t in &model.targets {
            columns.push(prepared.numeric_optional(&t.name)?);
        }
        let measured = (0..prepared.n_rows())
            .map(|i| columns.iter().map(|c| c[i]).collect())
            .collect();
        Ok(TrainingEvidence {
            weighted,
            weights,
            file_rows,
            ids,
            measured,
        })
    }

    /// Training rows held.
    pub fn n_rows(&self) -> usize {
        self.weighted.nrows()
    }

    /// Whether the rows carry identifiers.
    pub fn has_ids(&self) -> bool {
        self.ids.is_some()
    }

    /// The `k` nearest training rows of each row of `scaled` (queries'
    /// scaled inputs, rows × inputs, as [`Model::scaled_inputs`] gives
    /// them), nearest first; ties go to the earlier training row.
    pub fn nearest(&self, scaled: &Array2<f64>, k: usize) -> Vec<Vec<Neighbour>> {
        let k = k.min(self.n_rows());
        (0..scaled.nrows())
            .into_par_iter()
            .map(|q| {
                let x: Vec<f64> = scaled
                    .row(q)
                    .iter()
                    .zip(&self.weights)
                    .map(|(v, w)| v * w)
                    .collect();
                let mut d: Vec<(f64, usize)> = self
                    .weighted
                    .rows()
                    .into_iter()
                    .enumerate()
                    .map(|(n, r)| {
                        let s: f64 = r.iter().zip(&x).map(|(a, b)| (a - b) * (a - b)).sum();
                        (s, n)
                    })
                    .collect();
                let by =
                    |a: &(f64, usize), b: &(f64, usize)| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1));
                if k < d.len() && k > 0 {
                    d.select_nth_unstable_by(k - 1, by);
                }
                d.truncate(k);
                d.sort_by(by);
                d.into_iter()
                    .map(|(s, n)| Neighbour {
                        row: self.file_rows[n],
                        id: self.ids.as_ref().and_then(|v| v[n].clone()),
                        distance: s.sqrt(),
                        measured: self.measured[n].clone(),
                    })
                    .collect()
            })
            .collect()
    }

    /// As [`TrainingEvidence::nearest`] for the rows of a table (read
    /// through the model's schema first).
    ///
    /// # Errors
    /// As [`Model::read_through_schema`] and [`Model::scaled_inputs`].
    pub fn nearest_in(
        &self,
        model: &Model,
        table: &Table,
        k: usize,
    ) -> Result<Vec<Vec<Neighbour>>> {
        let (prepared, _) = model.read_through_schema(table, false)?;
        let (_, scaled) = model.scaled_inputs(&prepared)?;
        Ok(self.nearest(&scaled, k))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Two inputs, the second ignored (weight 0): the nearest rows follow
    /// the first input alone, with the distance in its range-widths
    /// (arithmetic by hand).
    #[test]
    fn nearest_follow_the_weighted_distance() {
        let e = TrainingEvidence {
            weighted: Array2::from_shape_vec((4, 2), vec![-0.5, 0.0, 0.0, 0.0, 0.1, 0.0, 0.5, 0.0])
                .expect("shape"),
            weights: vec![1.0, 0.0],
            file_rows: vec![1, 2, 4, 5],
            ids: Some(vec![
                Some("A".into()),
                None,
                Some("C".into()),
                Some("D".into()),
            ]),
            measured: vec![
                vec![Some(1.0)],
                vec![Some(2.0)],
                vec![None],
                vec![Some(4.0)],
            ],
        };
        let q = Array2::from_shape_vec((1, 2), vec![0.08, 0.4]).expect("shape");
        let n = &e.nearest(&q, 2)[0];
        assert_eq!(n.len(), 2);
        assert_eq!((n[0].row, n[0].id.as_deref()), (4, Some("C")));
        assert!((n[0].distance - 0.02).abs() < 1e-12);
        assert_eq!(n[0].measured, vec![None]);
        assert_eq!((n[1].row, n[1].id.as_deref()), (2, None));
        assert!((n[1].distance - 0.08).abs() < 1e-12);
        assert_eq!(e.nearest(&q, 9)[0].len(), 4);
    }
}
