//! The estimate files of `mettle predict --format csv|json|xlsx`, written by
//! the command line and by the local web server alike, so that both give
//! the same bytes for the same rows.
//!
//! Every format carries the caution once (not on every row), the rows'
//! identifiers when the table has them, the graded domain verdict beside
//! the row, and enough of each target's predictive distribution
//! ([`PredictiveForm`]) to compute the density of a measured value.
//!
//! - CSV: one header row (`row`, the identifier column, `in_domain`,
//!   `domain`, then per target `<target>_mean`, `_median`, `_sd`, `_lo95`,
//!   `_hi95`, `_noise_sd`, `_model_sd`, `_unit`, then `notes`, `caution`),
//!   one line per row, numbers to the layout's significant digits; the
//!   caution in the first row's `caution` cell.
//! - JSON: one object: `caution`, `id_column`, `targets` keyed by target
//!   (unit, interval kind, the distribution's form), and `rows`, each with
//!   `row`, `id`, `in_domain`, `domain`, `notes` and `estimates` keyed by
//!   target whatever their number.
//! - XLSX: a workbook with the CSV's cells on sheet `estimates` and the
//!   targets' distributions on sheet `targets`.
//!
//! Columns a command adds after `caution` (`predict --require`'s
//! probabilities, `--neighbours`' nearest training rows) are the layout's
//! [`EstimateLayout::extra_columns`] and each row's [`ExtraCells`]; in
//! JSON they are keys of the row object.

use std::io::{self, Write};

use serde_json::{json, Map, Value};

use super::{Estimate, FullPrediction, PredictiveForm, RowPrediction, ScalePrediction};
use crate::data::cells::{csv_line, Cell, DEFAULT_DIGITS};
use crate::data::spreadsheet::{xlsx_bytes, Sheet};
use crate::data::{RowLabels, Table};
use crate::error::Result;
use crate::model::{IntervalKind, Model};
use crate::units::Unit;

/// The caution shown wherever an estimate could feed a structural decision.
pub const CAUTION: &str = "Caution: these are model estimates with error bars, not test results. \
Qualification testing per the applicable code decides; local codes and licensed engineers have the final word.";

/// The machine-readable formats of an estimate file.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum EstimateFormat {
    /// Comma-separated values with a header row.
    Csv,
    /// One JSON object (head and rows).
    Json,
    /// An Excel workbook (.xlsx).
    Xlsx,
}

/// One target as written: name, unit, the kind of its interval and the
/// form of its predictive distribution (in the same unit).
#[derive(Clone, Debug, PartialEq)]
pub struct TargetColumn {
    /// Target name.
    pub name: String,
    /// Unit of the estimates, when known.
    pub unit: Option<Unit>,
    /// Symmetric or mapped back from a transformed scale.
    pub kind: IntervalKind,
    /// The predictive distribution's form.
    pub form: PredictiveForm,
}

impl TargetColumn {
    /// The estimate's centre: the mean on the target's own scale, the
    /// median for a transformed target.
    pub fn centre(&self, e: &Estimate) -> f64 {
        if self.kind == IntervalKind::Normal {
            e.mean
        } else {
            e.median
        }
    }

    /// The name of [`Self::centre`].
    pub fn centre_name(&self) -> &'static str {
        if self.kind == IntervalKind::Normal {
            "mean"
        } else {
            "median"
        }
    }
}

impl Model {
    /// The targets as an estimate file names them: in internal units, or
    /// in the units the schema declares when `declared`.
    pub fn target_columns(&self, declared: bool) -> Vec<TargetColumn> {
        self.targets
            .iter()
            .map(|t| {
                let unit = self.target_unit(&t.name, declared);
                let form = PredictiveForm::of(t);
                TargetColumn {
                    name: t.name.clone(),
                    unit,
                    kind: t.transform.interval_kind(),
                    form: match (declared, unit) {
                        (true, Some(u)) => form.in_unit(u),
                        _ => form,
                    },
                }
            })
            .collect()
    }

    /// The layout of an estimate file for this model: its targets (in the
    /// declared units when `declared`), the identifier column chosen on
    /// `first` (the table, or its first batch: `requested`, else the
    /// schema's identifier, else a first column of text that is not an
    /// input), numbers to `digits` significant digits.
    ///
    /// # Errors
    /// A `requested` identifier column `first` lacks.
    pub fn estimate_layout(
        &self,
        first: Option<&Table>,
        requested_id: Option<&str>,
        declared: bool,
        digits: usize,
    ) -> Result<EstimateLayout> {
        let id_column = match first {
            Some(t) => self.row_labels(t, requested_id)?.map(|l| l.column),
            None => None,
        };
        Ok(EstimateLayout {
            cols: self.target_columns(declared),
            id_column,
            digits,
            declared,
            extra_columns: Vec::new(),
        })
    }

    /// The estimates of one table (or batch of a larger one) as `layout`
    /// writes them: converted to its units, with the rows' identifiers and
    /// the distribution on the learnt scale.
    ///
    /// # Errors
    /// As [`Model::predict`]; the layout's identifier column missing; a
    /// column that looks, in every row, as if it were in another unit than
    /// the model's ([`Model::unit_check`]).
    pub fn estimate_batch(&self, table: &Table, layout: &EstimateLayout) -> Result<EstimateBatch> {
        self.unit_check(table)?;
        let full = self.predict_with_scale(table)?;
        self.batch_from(table, layout, full)
    }

    /// [`Model::estimate_batch`] with a full prediction made elsewhere
    /// (by [`crate::predict::Predictor`]) from `table`.
    pub(crate) fn estimate_batch_from(
        &self,
        table: &Table,
        layout: &EstimateLayout,
        full: FullPrediction,
    ) -> Result<EstimateBatch> {
        self.batch_from(table, layout, full)
    }

    /// As [`Model::estimate_batch`], with the full prediction beside it
    /// (the scaled inputs and the learnt-scale distributions, in internal
    /// units) for what a command adds to the estimates.
    ///
    /// # Errors
    /// As [`Model::estimate_batch`].
    pub fn estimate_batch_full(
        &self,
        table: &Table,
        layout: &EstimateLayout,
    ) -> Result<(EstimateBatch, FullPrediction)> {
        self.unit_check(table)?;
        let full = self.predict_with_scale(table)?;
        let batch = self.batch_from(table, layout, full.clone())?;
        Ok((batch, full))
    }

    fn batch_from(
        &self,
        table: &Table,
        layout: &EstimateLayout,
        full: FullPrediction,
    ) -> Result<EstimateBatch> {
        let mut rows = full.rows;
        if layout.declared {
            to_column_units(&layout.cols, &mut rows);
        }
        let labels = match &layout.id_column {
            Some(c) => Some(RowLabels::read(table, c)?),
            None => None,
        };
        Ok(EstimateBatch {
            first_row: table.first_row(),
            rows,
            learnt: full.learnt,
            labels,
            declarations: full.declarations,
            extra: Vec::new(),
        })
    }
}

/// Estimates converted to the columns' units (for `declared` columns from
/// [`Model::target_columns`]).
pub fn to_column_units(cols: &[TargetColumn], rows: &mut [RowPrediction]) {
    for r in rows {
        for (e, c) in r.estimates.iter_mut().zip(cols) {
            if let Some(u) = c.unit {
                *e = e.in_unit(u);
            }
        }
    }
}

/// What stays the same for every row of an estimate file.
#[derive(Clone, Debug, PartialEq)]
pub struct EstimateLayout {
    /// The targets, in model order.
    pub cols: Vec<TargetColumn>,
    /// The column naming each row, when the table has one.
    pub id_column: Option<String>,
    /// Significant digits of CSV and spreadsheet numbers.
    pub digits: usize,
    /// Estimates in the schema's declared units.
    pub declared: bool,
    /// Names of the columns added after `caution` (CSV and workbook).
    pub extra_columns: Vec<String>,
}

/// What a command adds to one row after its `caution`: cells in the order
/// of [`EstimateLayout::extra_columns`], and JSON keys with values.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct ExtraCells {
    /// Cells, one per extra column.
    pub cells: Vec<Cell>,
    /// Keys and values added to the row's JSON object.
    pub json: Vec<(String, Value)>,
}

impl EstimateLayout {
    /// A layout for `cols` without identifiers, default digits, internal units.
    pub fn plain(cols: Vec<TargetColumn>) -> EstimateLayout {
        EstimateLayout {
            cols,
            id_column: None,
            digits: DEFAULT_DIGITS,
            declared: false,
            extra_columns: Vec::new(),
        }
    }
}

/// The estimates of one batch of input rows.
#[derive(Clone, Debug, PartialEq)]
pub struct EstimateBatch {
    /// Data rows of the file before the batch.
    pub first_row: usize,
    /// Estimates and verdict per row.
    pub rows: Vec<RowPrediction>,
    /// Per target, per row: the distribution on the learnt scale.
    pub learnt: Vec<Vec<ScalePrediction>>,
    /// The rows' identifiers, when the table has an identifier column.
    pub labels: Option<RowLabels>,
    /// Columns the table declared in another unit, converted.
    pub declarations: Vec<super::UnitDeclaration>,
    /// Per row, what the command adds after `caution` (empty: nothing).
    pub extra: Vec<ExtraCells>,
}

impl EstimateBatch {
    /// The identifier of row `i` of the batch (0-based), if any.
    pub fn label(&self, i: usize) -> Option<&str> {
        self.labels.as_ref().map(|l| l.get(i))
    }

    /// The data-row number (1-based, in the whole file) of row `i`.
    pub fn number(&self, i: usize) -> usize {
        self.first_row + i + 1
    }
}

/// An estimate file written as batches of rows come: the same bytes as
/// formatting all rows at once. (A workbook is assembled in memory and
/// written at [`Self::finish`].)
pub struct EstimateWriter<'a> {
    w: &'a mut dyn Write,
    format: EstimateFormat,
    layout: &'a EstimateLayout,
    written: usize,
    sheet: Vec<Vec<Cell>>,
}

impl<'a> EstimateWriter<'a> {
    /// Write the opening (CSV header, the JSON head).
    ///
    /// # Errors
    /// Whatever the writer reports.
    pub fn start(
        w: &'a mut dyn Write,
        format: EstimateFormat,
        layout: &'a EstimateLayout,
    ) -> io::Result<Self> {
        let mut sheet = Vec::new();
        match format {
            EstimateFormat::Csv => {
                w.write_all(csv_line(&header_cells(layout), layout.digits).as_bytes())?;
            }
            EstimateFormat::Json => {
                // the head object, left open for the rows
                let head =
                    serde_json::to_string_pretty(&json_head(layout)).map_err(io::Error::other)?;
                let head = head.strip_suffix("\n}").unwrap_or(&head);
                w.write_all(head.as_bytes())?;
                w.write_all(b",\n  \"rows\": [")?;
            }
            EstimateFormat::Xlsx => sheet.push(header_cells(layout)),
        }
        Ok(EstimateWriter {
            w,
            format,
            layout,
            written: 0,
            sheet,
        })
    }

    /// Write the rows of `b`.
    ///
    /// # Errors
    /// Whatever the writer reports.
    pub fn rows(&mut self, b: &EstimateBatch) -> io::Result<()> {
        for i in 0..b.rows.len() {
            let first = self.written == 0;
            self.written += 1;
            match self.format {
                EstimateFormat::Csv => {
                    let cells = row_cells(self.layout, b, i, first);
                    self.w
                        .write_all(csv_line(&cells, self.layout.digits).as_bytes())?;
                }
                EstimateFormat::Xlsx => self.sheet.push(row_cells(self.layout, b, i, first)),
                EstimateFormat::Json => {
                    // one element of a pretty-printed array: each line indented by four
                    let text = serde_json::to_string_pretty(&json_row(self.layout, b, i))
                        .map_err(io::Error::other)?;
                    self.w.write_all(if first { b"\n" } else { b",\n" })?;
                    for (k, line) in text.lines().enumerate() {
                        if k > 0 {
                            self.w.write_all(b"\n")?;
                        }
                        self.w.write_all(b"    ")?;
                        self.w.write_all(line.as_bytes())?;
                    }
                }
            }
        }
        Ok(())
    }

    /// Write the closing (JSON), or the whole workbook (XLSX).
    ///
    /// # Errors
    /// Whatever the writer reports; a workbook that cannot be assembled.
    pub fn finish(self) -> io::Result<()> {
        match self.format {
            EstimateFormat::Csv => Ok(()),
            EstimateFormat::Json => self.w.write_all(if self.written == 0 {
                b"]\n}\n"
            } else {
                b"\n  ]\n}\n"
            }),
            EstimateFormat::Xlsx => {
                let sheets = [
                    Sheet {
                        name: "estimates".into(),
                        rows: self.sheet,
                    },
                    Sheet {
                        name: "targets".into(),
                        rows: target_sheet(self.layout),
                    },
                ];
                let bytes = xlsx_bytes("the estimate workbook", &sheets, self.layout.digits)
                    .map_err(io::Error::other)?;
                self.w.write_all(&bytes)
            }
        }
    }
}

const FIELDS: [&str; 7] = [
    "mean", "median", "sd", "lo95", "hi95", "noise_sd", "model_sd",
];

fn estimate_values(e: &Estimate) -> [f64; 7] {
    [
        e.mean, e.median, e.sd, e.lo95, e.hi95, e.noise_sd, e.model_sd,
    ]
}

fn kind_name(k: IntervalKind) -> Value {
    serde_json::to_value(k).unwrap_or(Value::Null)
}

/// What stays the same for every row: the caution, the identifier column,
/// and per target its unit, interval kind and distribution's form.
pub fn json_head(layout: &EstimateLayout) -> Value {
    let targets: Map<String, Value> = layout
        .cols
        .iter()
        .map(|c| {
            let mut m = Map::new();
            m.insert("unit".into(), json!(c.unit.map(|u| u.symbol())));
            m.insert("interval_kind".into(), kind_name(c.kind));
            if let Value::Object(f) = json!(c.form) {
                m.extend(f);
            }
            (c.name.clone(), Value::Object(m))
        })
        .collect();
    json!({
        "caution": CAUTION,
        "id_column": layout.id_column,
        "targets": targets,
    })
}

/// Row `i` of batch `b` as a JSON object.
pub fn json_row(layout: &EstimateLayout, b: &EstimateBatch, i: usize) -> Value {
    let r = &b.rows[i];
    let mut obj = Map::new();
    obj.insert("row".into(), json!(b.number(i)));
    if let Some(l) = b.label(i) {
        obj.insert("id".into(), json!(l));
    }
    obj.insert("in_domain".into(), json!(r.in_domain));
    obj.insert("domain".into(), json!(r.level.name()));
    obj.insert("notes".into(), json!(r.notes));
    let est: Map<String, Value> = layout
        .cols
        .iter()
        .enumerate()
        .map(|(k, c)| {
            let e = &r.estimates[k];
            let mut m: Map<String, Value> = FIELDS
                .iter()
                .zip(estimate_values(e))
                .map(|(f, v)| ((*f).to_string(), json!(v)))
                .collect();
            if c.form.scale != "target" {
                if let Some(p) = b.learnt.get(k).and_then(|t| t.get(i)) {
                    m.insert("scale_mean".into(), json!(p.mean));
                    m.insert("scale_sd".into(), json!(p.sd));
                }
            }
            (c.name.clone(), Value::Object(m))
        })
        .collect();
    obj.insert("estimates".into(), Value::Object(est));
    if let Some(x) = b.extra.get(i) {
        obj.extend(x.json.iter().cloned());
    }
    Value::Object(obj)
}

/// The header cells of the CSV file and the workbook's `estimates` sheet.
pub fn header_cells(layout: &EstimateLayout) -> Vec<Cell> {
    let mut h = vec![Cell::Text("row".into())];
    if let Some(c) = &layout.id_column {
        h.push(Cell::Text(c.clone()));
    }
    h.push(Cell::Text("in_domain".into()));
    h.push(Cell::Text("domain".into()));
    for c in &layout.cols {
        for f in FIELDS {
            h.push(Cell::Text(format!("{}_{f}", c.name)));
        }
        h.push(Cell::Text(format!("{}_unit", c.name)));
    }
    h.push(Cell::Text("notes".into()));
    h.push(Cell::Text("caution".into()));
    h.extend(layout.extra_columns.iter().map(|c| Cell::Text(c.clone())));
    h
}

/// The cells of row `i` of batch `b`; the caution in the file's first row.
pub fn row_cells(layout: &EstimateLayout, b: &EstimateBatch, i: usize, first: bool) -> Vec<Cell> {
    let r = &b.rows[i];
    let mut cells = vec![Cell::Int(b.number(i))];
    if layout.id_column.is_some() {
        cells.push(Cell::Text(b.label(i).unwrap_or_default().to_string()));
    }
    cells.push(Cell::Bool(r.in_domain));
    cells.push(Cell::Text(r.level.name().to_string()));
    for (c, e) in layout.cols.iter().zip(&r.estimates) {
        cells.extend(estimate_values(e).map(Cell::Num));
        cells.push(Cell::Text(c.unit.map_or("", |u| u.symbol()).to_string()));
    }
    cells.push(Cell::Text(r.notes.join("; ")));
    cells.push(if first {
        Cell::Text(CAUTION.into())
    } else {
        Cell::Empty
    });
    if let Some(x) = b.extra.get(i) {
        cells.extend(x.cells.iter().cloned());
    }
    cells
}

/// The workbook's `targets` sheet: one row per target with its unit,
/// interval kind and the predictive distribution's form, then the caution.
fn target_sheet(layout: &EstimateLayout) -> Vec<Vec<Cell>> {
    let head = [
        "target",
        "unit",
        "interval_kind",
        "shape",
        "dof",
        "scale",
        "gross_error_share",
        "gross_error_mean",
        "gross_error_sd",
    ];
    let mut rows = vec![head.iter().map(|h| Cell::Text((*h).into())).collect()];
    let opt = |v: Option<f64>| v.map_or(Cell::Empty, Cell::Num);
    for c in &layout.cols {
        rows.push(vec![
            Cell::Text(c.name.clone()),
            Cell::Text(c.unit.map_or("", |u| u.symbol()).to_string()),
            Cell::Text(kind_name(c.kind).as_str().unwrap_or_default().to_string()),
            Cell::Text(c.form.shape.to_string()),
            opt(c.form.dof),
            Cell::Text(c.form.scale.to_string()),
            Cell::Num(c.form.gross_error_share),
            opt(c.form.gross_error_mean),
            opt(c.form.gross_error_sd),
        ]);
    }
    rows.push(Vec::new());
    rows.push(vec![Cell::Text(CAUTION.into())]);
    rows
}
