//! A table of test records read from CSV or Parquet.
//!
//! CSV cells are read as text by polars and parsed here, so that every bad
//! cell is reported with its file, row and column rather than as a parser
//! message about an inferred type.

mod batches;
mod parquet_check;
mod shape;
mod xlsx;

pub use batches::TableBatches;

use std::path::{Path, PathBuf};

use polars::prelude::*;

use crate::error::{Error, Result};

/// One column's cells as read.
#[derive(Clone, Debug, PartialEq)]
pub enum ColumnData {
    /// Cells read as text (CSV), parsed on demand.
    Text(Vec<Option<String>>),
    /// Cells read as numbers (numeric Parquet columns).
    Number(Vec<Option<f64>>),
}

/// A table: named columns of equal length, with the file it came from.
#[derive(Clone, Debug, PartialEq)]
pub struct Table {
    source: PathBuf,
    names: Vec<String>,
    columns: Vec<ColumnData>,
    n_rows: usize,
    /// Data rows of the file before this table's first row (0 unless the
    /// table is one batch of a larger file, [`Table::read_batches`]):
    /// messages name rows of the file, not of the batch.
    first_row: usize,
    /// The workbook sheet the rows came from, named in messages beside the
    /// file ([`Table::label`]); `None` for CSV and Parquet.
    sheet: Option<String>,
}

/// The file formats mettle reads.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum FileFormat {
    /// Comma-separated text with a header row.
    Csv,
    /// Apache Parquet.
    Parquet,
    /// A spreadsheet workbook (.xlsx, .xls), read with calamine: the
    /// first sheet, or the one named ([`Table::read_sheet`]).
    Spreadsheet,
}

/// The four bytes that open (and close) every Parquet file (Apache Parquet
/// file format specification).
const PARQUET_MAGIC: &[u8; 4] = b"PAR1";

impl FileFormat {
    /// The format of an existing file, recognised by its content: a file
    /// that opens with the Parquet magic bytes `PAR1` is Parquet, one that
    /// opens as a zip archive (.xlsx) or an OLE2 compound file (.xls) is a
    /// spreadsheet workbook, any other is read as CSV. The name does not matter, so a table renamed keeps
    /// being read correctly.
    ///
    /// # Errors
    /// [`Error::Io`] when the file cannot be opened.
    pub fn sniff(path: &Path) -> Result<FileFormat> {
        use std::io::Read;
        let mut head = [0u8; 4];
        let mut f = std::fs::File::open(path).map_err(|source| Error::Io {
            path: path.display().to_string(),
            source,
        })?;
        let mut got = 0;
        while got < head.len() {
            match f.read(&mut head[got..]) {
                Ok(0) => break,
                Ok(k) => got += k,
                Err(source) => {
                    return Err(Error::Io {
                        path: path.display().to_string(),
                        source,
                    })
                }
            }
        }
        Ok(FileFormat::of_bytes(&head[..got]))
    }

    /// The format of a file whose first bytes are `head` (at least four
    /// for a format other than CSV), by the rule of [`FileFormat::sniff`]:
    /// `PAR1` Parquet, a zip archive (.xlsx; ECMA-376 Part 2) or an OLE2
    /// compound file (.xls; [MS-CFB] §2.2) a spreadsheet workbook, else CSV.
    pub fn of_bytes(head: &[u8]) -> FileFormat {
        let Some(head) = head.first_chunk::<4>() else {
            return FileFormat::Csv;
        };
        if head == PARQUET_MAGIC {
            FileFormat::Parquet
        } else if head == xlsx::ZIP_MAGIC || head == xlsx::OLE2_MAGIC {
            FileFormat::Spreadsheet
        } else {
            FileFormat::Csv
        }
    }

    /// The file-name extension a workbook whose first bytes are `head` is
    /// read under: `xlsx` for a zip archive (Office Open XML), `xls` for an
    /// OLE2 compound file; `None` when `head` opens neither.
    pub fn workbook_extension(head: &[u8]) -> Option<&'static str> {
        if head.starts_with(xlsx::ZIP_MAGIC) {
            Some("xlsx")
        } else if head.starts_with(xlsx::OLE2_MAGIC) {
            Some("xls")
        } else {
            None
        }
    }

    /// The format a path's extension names (`.parquet`/`.pq` → Parquet,
    /// `.xlsx` → a workbook, anything else → CSV).
    pub fn from_path(path: &Path) -> FileFormat {
        match path
            .extension()
            .and_then(|e| e.to_str())
            .map(|e| e.to_ascii_lowercase())
            .as_deref()
        {
            Some("parquet") | Some("pq") => FileFormat::Parquet,
            Some("xlsx") => FileFormat::Spreadsheet,
            _ => FileFormat::Csv,
        }
    }
}

fn read_error(path: &Path, message: impl Into<String>) -> Error {
    Error::Read {
        path: path.display().to_string(),
        message: message.into(),
    }
}

impl Table {
    /// Build a table from numeric columns (used by generators and tests).
    ///
    /// # Errors
    /// [`Error::Read`] when the columns differ in length or a name repeats.
    pub fn from_columns(source: &str, columns: Vec<(String, Vec<f64>)>) -> Result<Table> {
        let path = PathBuf::from(source);
        let n_rows = columns.first().map_or(0, |c| c.1.len());
        let mut names = Vec::with_capacity(columns.len());
        let mut data = Vec::with_capacity(columns.len());
        for (name, values) in columns {
            if values.len() != n_rows {
                return Err(read_error(
                    &path,
                    format!(
                        "column '{name}' has {} rows, expected {n_rows}",
                        values.len()
                    ),
                ));
            }
            if names.contains(&name) {
                return Err(read_error(
                    &path,
                    format!("column name '{name}' appears twice"),
                ));
            }
            names.push(name);
            data.push(ColumnData::Number(values.into_iter().map(Some).collect()));
        }
        Ok(Table {
            source: path,
            names,
            columns: data,
            n_rows,
            first_row: 0,
            sheet: None,
        })
    }

    /// Build a table from numeric columns with missing cells (`None`),
    /// keeping `source` as the file every message names.
    ///
    /// # Errors
    /// [`Error::Read`] when the columns differ in length or a name repeats.
    pub fn from_optional_columns(
        source: &Path,
        columns: Vec<(String, Vec<Option<f64>>)>,
    ) -> Result<Table> {
        let n_rows = columns.first().map_or(0, |c| c.1.len());
        let mut t = Table {
            source: source.to_path_buf(),
            names: Vec::with_capacity(columns.len()),
            columns: Vec::with_capacity(columns.len()),
            n_rows,
            first_row: 0,
            sheet: None,
        };
        for (name, values) in columns {
            t.push_column(name, ColumnData::Number(values))?;
        }
        Ok(t)
    }

    /// Append a column.
    ///
    /// # Errors
    /// [`Error::Read`] when its length differs from the table's or its name
    /// is already taken.
    pub fn push_column(&mut self, name: String, data: ColumnData) -> Result<()> {
        let len = match &data {
            ColumnData::Text(v) => v.len(),
            ColumnData::Number(v) => v.len(),
        };
        if self.names.is_empty() && self.columns.is_empty() {
            self.n_rows = len;
        }
        if len != self.n_rows {
            return Err(read_error(
                &self.source,
                format!("column '{name}' has {len} rows, expected {}", self.n_rows),
            ));
        }
        if self.names.contains(&name) {
            return Err(read_error(
                &self.source,
                format!("column name '{name}' appears twice (columns must be unique)"),
            ));
        }
        self.names.push(name);
        self.columns.push(data);
        Ok(())
    }

    /// Replace column `i` by `data` under the name `name`.
    ///
    /// # Errors
    /// [`Error::Read`] when the length differs from the table's, `name` is
    /// taken by another column, or there is no column `i`.
    pub fn set_column(&mut self, i: usize, name: String, data: ColumnData) -> Result<()> {
        let len = match &data {
            ColumnData::Text(v) => v.len(),
            ColumnData::Number(v) => v.len(),
        };
        if i >= self.columns.len() || len != self.n_rows {
            return Err(read_error(
                &self.source,
                format!("column '{name}' does not fit the table"),
            ));
        }
        if self
            .names
            .iter()
            .enumerate()
            .any(|(k, n)| k != i && *n == name)
        {
            return Err(read_error(
                &self.source,
                format!("column name '{name}' appears twice (columns must be unique)"),
            ));
        }
        self.names[i] = name;
        self.columns[i] = data;
        Ok(())
    }

    /// The table restricted to `rows` (0-based, in the order given).
    pub fn select_rows(&self, rows: &[usize]) -> Table {
        let pick = |data: &ColumnData| match data {
            ColumnData::Text(v) => ColumnData::Text(rows.iter().map(|&r| v[r].clone()).collect()),
            ColumnData::Number(v) => ColumnData::Number(rows.iter().map(|&r| v[r]).collect()),
        };
        Table {
            source: self.source.clone(),
            names: self.names.clone(),
            columns: self.columns.iter().map(pick).collect(),
            n_rows: rows.len(),
            first_row: 0,
            sheet: self.sheet.clone(),
        }
    }

    /// Read a CSV (header row required) or Parquet file, recognised by its
    /// content ([`FileFormat::sniff`]).
    ///
    /// # Errors
    /// [`Error::Io`] when the file cannot be opened; [`Error::Read`] when it
    /// is not a well-formed table (empty, no header, ragged rows, duplicated
    /// or empty column names).
    pub fn read(path: &Path) -> Result<Table> {
        Self::read_sheet(path, None)
    }

    /// As [`Table::read`], and a spreadsheet workbook too (.xlsx, .xls):
    /// its sheet `sheet`, or the first sheet when `None`.
    ///
    /// # Errors
    /// As [`Table::read`]; a `sheet` for a file that is not a workbook, or
    /// a sheet the workbook lacks (the message lists its sheets).
    pub fn read_sheet(path: &Path, sheet: Option<&str>) -> Result<Table> {
        let meta = std::fs::metadata(path).map_err(|source| Error::Io {
            path: path.display().to_string(),
            source,
        })?;
        if meta.len() == 0 {
            return Err(read_error(path, "the file is empty"));
        }
        let format = FileFormat::sniff(path)?;
        if format == FileFormat::Spreadsheet {
            return xlsx::read(path, sheet);
        }
        if let Some(s) = sheet {
            return Err(read_error(
                path,
                format!("a sheet ('{s}') was named, but the file is not a spreadsheet workbook"),
            ));
        }
        // rows the shape check counted: the reader underneath may add a
        // row of empty cells for a trailing blank line
        let csv_rows = match format {
            FileFormat::Csv => Some(shape::check(path)?.n_rows),
            _ => {
                // counts polars would trust are checked first: a damaged
                // one can make it abort on a huge allocation
                parquet_check::check(path)?;
                None
            }
        };
        let polars_error = |e: PolarsError| read_error(path, polars_message(&e));
        let df = match format {
            FileFormat::Csv => CsvReadOptions::default()
                .with_has_header(true)
                .with_infer_schema_length(Some(0))
                .with_raise_if_empty(true)
                .try_into_reader_with_file_path(Some(path.to_path_buf()))
                .and_then(|r| r.finish())
                .map_err(polars_error)?,
            _ => {
                let f = std::fs::File::open(path).map_err(|source| Error::Io {
                    path: path.display().to_string(),
                    source,
                })?;
                contain_panic(move || ParquetReader::new(f).finish())
                    .map_err(|m| read_error(path, format!("the Parquet file is damaged ({m})")))?
                    .map_err(polars_error)?
            }
        };
        let df = match csv_rows {
            Some(n) if df.height() > n => df.slice(0, n),
            _ => df,
        };
        let table = Self::from_frame(path, &df)?;
        table.check_has_rows()?;
        Ok(table)
    }

    /// What [`Table::read`] reports for a file without data: a table with
    /// no column is an empty file, one with columns but no row a header
    /// alone. Callers that build a table in memory (the Python interface)
    /// check it the same way.
    ///
    /// # Errors
    /// [`Error::Read`] naming the source.
    pub fn check_has_rows(&self) -> Result<()> {
        if self.names.is_empty() {
            return Err(read_error(&self.source, "the file is empty"));
        }
        if self.n_rows == 0 {
            return Err(read_error(
                &self.source,
                format!(
                    "the table has a header ({}) but no data rows",
                    self.names.join(", ")
                ),
            ));
        }
        Ok(())
    }

    fn from_frame(path: &Path, df: &DataFrame) -> Result<Table> {
        let mut names = Vec::with_capacity(df.width());
        let mut columns = Vec::with_capacity(df.width());
        for (i, col) in df.columns().iter().enumerate() {
            let mut name = col.name().to_string();
            if i == 0 {
                // a UTF-8 byte-order mark, as spreadsheets write it
                name = name.trim_start_matches('\u{feff}').to_string();
            }
            let name = name.trim().to_string();
            if name.is_empty() {
                return Err(read_error(
                    path,
                    format!("column {} has an empty name", i + 1),
                ));
            }
            if names.contains(&name) {
                return Err(read_error(
                    path,
                    format!("column name '{name}' appears twice (columns must be unique)"),
                ));
            }
            let series = col.as_materialized_series();
            let data = match series.dtype() {
                DataType::String => {
                    let ca = series
                        .str()
                        .map_err(|e| read_error(path, polars_message(&e)))?;
                    ColumnData::Text(ca.iter().map(|v| v.map(str::to_string)).collect())
                }
                dt if dt.is_primitive_numeric() || dt.is_bool() => {
                    let cast = series
                        .cast(&DataType::Float64)
                        .map_err(|e| read_error(path, polars_message(&e)))?;
                    let ca = cast
                        .f64()
                        .map_err(|e| read_error(path, polars_message(&e)))?;
                    ColumnData::Number(ca.iter().collect())
                }
                other => {
                    let cast = series.cast(&DataType::String).map_err(|_| {
                        read_error(
                            path,
                            format!("column '{name}' has type {other}, which mettle cannot read"),
                        )
                    })?;
                    let ca = cast
                        .str()
                        .map_err(|e| read_error(path, polars_message(&e)))?;
                    ColumnData::Text(ca.iter().map(|v| v.map(str::to_string)).collect())
                }
            };
            let len = match &data {
                ColumnData::Text(v) => v.len(),
                ColumnData::Number(v) => v.len(),
            };
            if len != df.height() {
                // a damaged Parquet file can decode to columns of unequal
                // length (found by tests/fuzz.rs)
                return Err(read_error(
                    path,
                    format!(
                        "the file is damaged: column '{name}' has {len} values, the table {} rows",
                        df.height()
                    ),
                ));
            }
            names.push(name);
            columns.push(data);
        }
        Ok(Table {
            source: path.to_path_buf(),
            names,
            columns,
            n_rows: df.height(),
            first_row: 0,
            sheet: None,
        })
    }

    /// Data rows of the file before this table's first row: 0 for a whole
    /// file, the batch's start for a batch of [`Table::read_batches`].
    pub fn first_row(&self) -> usize {
        self.first_row
    }

    /// The same table, its rows counted from data row `first_row + 1` of
    /// its file in every message.
    pub fn with_first_row(mut self, first_row: usize) -> Table {
        self.first_row = first_row;
        self
    }

    /// The file the table came from.
    pub fn source(&self) -> &Path {
        &self.source
    }

    /// The workbook sheet the table came from (`None` for CSV, Parquet or
    /// a table built in memory).
    pub fn sheet(&self) -> Option<&str> {
        self.sheet.as_deref()
    }

    /// The same table, said in messages to come from sheet `sheet` of its
    /// file.
    pub fn with_sheet(mut self, sheet: Option<&str>) -> Table {
        self.sheet = sheet.map(str::to_string);
        self
    }

    /// How messages name the table's rows: the file, and for a workbook
    /// its sheet (`new_heats.xlsx, sheet 'welds'`).
    pub fn label(&self) -> String {
        match &self.sheet {
            Some(s) => format!("{}, sheet '{s}'", self.source.display()),
            None => self.source.display().to_string(),
        }
    }

    /// Column names in file order.
    pub fn names(&self) -> &[String] {
        &self.names
    }

    /// Number of data rows (header excluded).
    pub fn n_rows(&self) -> usize {
        self.n_rows
    }

    /// The cells of column `i` (file order) as read.
    pub fn column_at(&self, i: usize) -> Option<&ColumnData> {
        self.columns.get(i)
    }

    /// The cell at `row` (0-based) of column `i` as text: the text read
    /// from a CSV file (trimmed), a number in its shortest exact form, or
    /// `None` for an empty cell.
    pub fn cell_text(&self, i: usize, row: usize) -> Option<String> {
        match self.columns.get(i)? {
            ColumnData::Text(v) => v[row]
                .as_deref()
                .map(str::trim)
                .filter(|s| !s.is_empty())
                .map(str::to_string),
            ColumnData::Number(v) => v[row].map(|x| x.to_string()),
        }
    }

    /// The table as CSV bytes: a header row, then one line per row. Text
    /// cells are written as read, numbers in their shortest exact decimal
    /// form, missing cells (and NaN) empty; fields are quoted when they
    /// need it (RFC 4180).
    pub fn to_csv_bytes(&self) -> Vec<u8> {
        let mut out = String::new();
        let header: Vec<String> = self.names.iter().map(|n| csv_field(n)).collect();
        out.push_str(&header.join(","));
        out.push('\n');
        for row in 0..self.n_rows {
            let cells: Vec<String> = self
                .columns
                .iter()
                .map(|c| match c {
                    ColumnData::Text(v) => v[row].as_deref().map(csv_field).unwrap_or_default(),
                    ColumnData::Number(v) => match v[row] {
                        Some(x) if !x.is_nan() => x.to_string(),
                        _ => String::new(),
                    },
                })
                .collect();
            out.push_str(&cells.join(","));
            out.push('\n');
        }
        out.into_bytes()
    }

    /// The table as Parquet bytes (text columns as strings, numeric
    /// columns as 64-bit floats; NaN written as a missing value).
    ///
    /// # Errors
    /// [`Error::Read`] if polars refuses the frame (never for a table built
    /// by mettle).
    pub fn to_parquet_bytes(&self) -> Result<Vec<u8>> {
        let cols: Vec<Column> = self
            .names
            .iter()
            .zip(&self.columns)
            .map(|(name, data)| match data {
                ColumnData::Text(v) => Column::new(name.as_str().into(), v.clone()),
                ColumnData::Number(v) => Column::new(
                    name.as_str().into(),
                    v.iter()
                        .map(|x| x.filter(|x| !x.is_nan()))
                        .collect::<Vec<_>>(),
                ),
            })
            .collect();
        let mut df = DataFrame::new(self.n_rows, cols)
            .map_err(|e| read_error(&self.source, polars_message(&e)))?;
        let mut buf = std::io::Cursor::new(Vec::new());
        ParquetWriter::new(&mut buf)
            .finish(&mut df)
            .map_err(|e| read_error(&self.source, polars_message(&e)))?;
        Ok(buf.into_inner())
    }

    /// Write the table to `path` atomically, as Parquet when the name ends
    /// in `.parquet` or `.pq`, as a workbook for `.xlsx`, else as CSV.
    ///
    /// # Errors
    /// [`Error::Write`] naming `path`.
    pub fn write(&self, path: &Path) -> Result<()> {
        let bytes = match FileFormat::from_path(path) {
            FileFormat::Csv => self.to_csv_bytes(),
            FileFormat::Parquet => self.to_parquet_bytes()?,
            FileFormat::Spreadsheet => self.to_xlsx_bytes(path)?,
        };
        crate::data::write_atomic(path, &bytes)
    }

    /// The table as the bytes of an .xlsx workbook of one sheet (`data`):
    /// numbers stored as numbers (at full precision), text as text,
    /// missing cells empty.
    ///
    /// # Errors
    /// As [`crate::data::spreadsheet::xlsx_bytes`].
    pub fn to_xlsx_bytes(&self, path: &Path) -> Result<Vec<u8>> {
        // 17 significant digits: every f64 exactly
        let sheet = self.to_sheet("data");
        crate::data::spreadsheet::xlsx_bytes(&path.display().to_string(), &[sheet], 17)
    }

    /// The table as a workbook sheet named `name`: the header, then numbers
    /// as numbers, text as text, missing cells empty.
    pub fn to_sheet(&self, name: &str) -> crate::data::spreadsheet::Sheet {
        use crate::data::cells::Cell;
        let mut rows = vec![self.names.iter().map(|n| Cell::Text(n.clone())).collect()];
        for row in 0..self.n_rows {
            rows.push(
                self.columns
                    .iter()
                    .map(|c| match c {
                        ColumnData::Number(v) => v[row].map_or(Cell::Empty, Cell::Num),
                        ColumnData::Text(v) => match v[row].as_deref().map(str::trim) {
                            None | Some("") => Cell::Empty,
                            Some(s) => parse_number(s)
                                .filter(|x| x.is_finite())
                                .map_or_else(|| Cell::Text(s.to_string()), Cell::Num),
                        },
                    })
                    .collect(),
            );
        }
        crate::data::spreadsheet::Sheet {
            name: name.to_string(),
            rows,
        }
    }

    /// Position of a column.
    pub fn index_of(&self, name: &str) -> Option<usize> {
        self.names.iter().position(|n| n == name)
    }

    fn column_data(&self, name: &str) -> Result<&ColumnData> {
        self.index_of(name)
            .map(|i| &self.columns[i])
            .ok_or_else(|| self.missing_column(name))
    }

    /// The error for a column `name` the table lacks, naming the closest
    /// column when one is near ("did you mean").
    pub fn missing_column(&self, name: &str) -> Error {
        Error::MissingColumn {
            path: self.label(),
            name: name.to_string(),
            available: self.names.join(", "),
            suggestion: crate::data::suggest::did_you_mean(name, &self.names),
        }
    }

    /// True when at least one cell of the column reads as a number: such a
    /// column is meant to be numeric, and a text cell in it is an error to
    /// report, not a reason to drop the column.
    pub fn has_numbers(&self, name: &str) -> bool {
        match self.column_data(name) {
            Ok(ColumnData::Number(v)) => v.iter().any(Option::is_some),
            Ok(ColumnData::Text(v)) => v.iter().flatten().any(|s| parse_number(s).is_some()),
            Err(_) => false,
        }
    }

    /// True when every non-empty cell of the column reads as a number.
    pub fn is_numeric(&self, name: &str) -> bool {
        match self.column_data(name) {
            Ok(ColumnData::Number(_)) => true,
            Ok(ColumnData::Text(v)) => v.iter().flatten().all(|s| parse_number(s).is_some()),
            Err(_) => false,
        }
    }

    /// The column as numbers, reading past bad cells: every cell that is
    /// not a finite number becomes `None` and an [`Error::Cell`] in the
    /// second list (empty cells are `None` without an error).
    ///
    /// # Errors
    /// [`Error::MissingColumn`].
    pub fn numeric_lenient(&self, name: &str) -> Result<(Vec<Option<f64>>, Vec<Error>)> {
        self.column_data(name)?;
        let mut values = Vec::with_capacity(self.n_rows);
        let mut problems = Vec::new();
        for row in 0..self.n_rows {
            match self.numeric_cell(name, row) {
                Ok(v) => values.push(v),
                Err(e) => {
                    values.push(None);
                    problems.push(e);
                }
            }
        }
        Ok((values, problems))
    }

    /// One cell (0-based row) as a number; `None` when empty.
    fn numeric_cell(&self, name: &str, row: usize) -> Result<Option<f64>> {
        let cell_error = |problem: String| Error::Cell {
            path: self.label(),
            row: self.first_row + row + 1,
            line: self.first_row + row + 2,
            column: name.to_string(),
            problem,
        };
        match self.column_data(name)? {
            ColumnData::Number(v) => match v[row] {
                Some(x) if !x.is_finite() => Err(cell_error(format!("{x} is not a finite number"))),
                other => Ok(other),
            },
            ColumnData::Text(v) => match v[row].as_deref().map(str::trim) {
                None | Some("") => Ok(None),
                Some(s) => match parse_number(s) {
                    Some(x) if x.is_finite() => Ok(Some(x)),
                    Some(_) => Err(cell_error(format!("'{s}' is not a finite number"))),
                    None => Err(cell_error(format!("'{s}' is not a number"))),
                },
            },
        }
    }

    /// The column as numbers, with missing cells as `None`.
    ///
    /// # Errors
    /// [`Error::MissingColumn`]; [`Error::Cell`] for text that is not a
    /// number, NaN or infinity — naming file, row and column.
    pub fn numeric_optional(&self, name: &str) -> Result<Vec<Option<f64>>> {
        self.column_data(name)?;
        (0..self.n_rows)
            .map(|row| self.numeric_cell(name, row))
            .collect()
    }

    /// The column as numbers; a missing cell is an error.
    ///
    /// # Errors
    /// As [`Table::numeric_optional`], plus [`Error::Cell`] for an empty cell.
    pub fn numeric(&self, name: &str) -> Result<Vec<f64>> {
        let values = self.numeric_optional(name)?;
        values
            .into_iter()
            .enumerate()
            .map(|(row, v)| {
                v.ok_or_else(|| Error::Cell {
                    path: self.label(),
                    row: self.first_row + row + 1,
                    line: self.first_row + row + 2,
                    column: name.to_string(),
                    problem: "the cell is empty".into(),
                })
            })
            .collect()
    }
}

/// Quote a CSV field when it needs it (RFC 4180).
pub fn csv_field(s: &str) -> String {
    if s.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

/// Parse a decimal number as written in a spreadsheet export.
fn parse_number(s: &str) -> Option<f64> {
    let s = s.trim();
    if s.is_empty() {
        return None;
    }
    s.parse::<f64>().ok()
}

/// A polars error as one line.
/// Run a decoder that panics on some damaged files instead of returning an
/// error (the Parquet metadata reader of polars does, found by
/// tests/fuzz.rs), turning the panic into its message. While it runs the
/// panic hook is silenced, so that the library prints nothing; a lock
/// keeps two such calls from restoring each other's hook.
fn contain_panic<T>(f: impl FnOnce() -> T) -> std::result::Result<T, String> {
    static HOOK: std::sync::Mutex<()> = std::sync::Mutex::new(());
    let guard = HOOK
        .lock()
        .unwrap_or_else(std::sync::PoisonError::into_inner);
    let previous = std::panic::take_hook();
    std::panic::set_hook(Box::new(|_| {}));
    let result = std::panic::catch_unwind(std::panic::AssertUnwindSafe(f));
    std::panic::set_hook(previous);
    drop(guard);
    result.map_err(|payload| {
        payload
            .downcast_ref::<&str>()
            .map(|s| s.to_string())
            .or_else(|| payload.downcast_ref::<String>().cloned())
            .unwrap_or_else(|| "the decoder stopped".to_string())
    })
}

fn polars_message(e: &PolarsError) -> String {
    e.to_string()
        .lines()
        .next()
        .unwrap_or("unreadable table")
        .to_string()
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::io::Write;

    fn write(dir: &tempfile::TempDir, name: &str, text: &str) -> PathBuf {
        let p = dir.path().join(name);
        let mut f = std::fs::File::create(&p).expect("create");
        f.write_all(text.as_bytes()).expect("write");
        p
    }

    #[test]
    fn reads_csv_with_bom_and_crlf() {
        let dir = tempfile::tempdir().expect("tempdir");
        let p = write(
            &dir,
            "a.csv",
            "\u{feff}C,Mn,uts\r\n0.1,1.2,500\r\n0.12,1.4,520\r\n",
        );
        let t = Table::read(&p).expect("read");
        assert_eq!(t.names(), &["C", "Mn", "uts"]);
        assert_eq!(t.numeric("uts").expect("uts"), vec![500.0, 520.0]);
    }

    #[test]
    fn bad_cell_names_row_and_column() {
        let dir = tempfile::tempdir().expect("tempdir");
        let p = write(&dir, "b.csv", "C,uts\n0.1,500\n0.1,abc\n");
        let t = Table::read(&p).expect("read");
        let e = t.numeric("uts").expect_err("text cell");
        let msg = e.to_string();
        assert!(
            msg.contains("row 2") && msg.contains("'uts'") && msg.contains("b.csv"),
            "{msg}"
        );
        let p = write(&dir, "c.csv", "C,uts\n0.1,NaN\n");
        let msg = Table::read(&p)
            .expect("read")
            .numeric("uts")
            .expect_err("nan")
            .to_string();
        assert!(msg.contains("not a finite number"), "{msg}");
    }

    #[test]
    fn csv_and_parquet_round_trip_and_format_is_sniffed() {
        let dir = tempfile::tempdir().expect("tempdir");
        let p = write(&dir, "a.csv", "id,C,uts\nW1,0.1,500\n\"W,2\",,520.5\n");
        let t = Table::read(&p).expect("read");
        let back = String::from_utf8(t.to_csv_bytes()).expect("utf8");
        assert_eq!(back, "id,C,uts\nW1,0.1,500\n\"W,2\",,520.5\n");
        // Parquet written under a name without extension is still read as
        // Parquet: the format is recognised by its magic bytes.
        let q = dir.path().join("same_table");
        std::fs::write(&q, t.to_parquet_bytes().expect("parquet")).expect("write");
        assert_eq!(FileFormat::sniff(&q).expect("sniff"), FileFormat::Parquet);
        let tq = Table::read(&q).expect("read parquet");
        assert_eq!(tq.names(), t.names());
        assert_eq!(tq.numeric_optional("C").expect("C"), vec![Some(0.1), None]);
        assert_eq!(tq.cell_text(0, 1).as_deref(), Some("W,2"));
    }

    #[test]
    fn formats_are_told_by_their_first_bytes() {
        // zip local-file header PK\x03\x04 (PKWARE APPNOTE.TXT §4.3.7; an
        // .xlsx is a zip, ECMA-376 Part 2); OLE2 D0 CF 11 E0 ([MS-CFB]
        // §2.2; an .xls); PAR1 (Apache Parquet file format)
        let zip = b"PK\x03\x04\x14\x00";
        let ole2 = b"\xD0\xCF\x11\xE0\xA1\xB1\x1A\xE1";
        assert_eq!(FileFormat::of_bytes(zip), FileFormat::Spreadsheet);
        assert_eq!(FileFormat::of_bytes(ole2), FileFormat::Spreadsheet);
        assert_eq!(FileFormat::of_bytes(b"PAR1\x15"), FileFormat::Parquet);
        assert_eq!(FileFormat::of_bytes(b"c_wt,mn_wt\n"), FileFormat::Csv);
        assert_eq!(FileFormat::of_bytes(b"PK"), FileFormat::Csv);
        assert_eq!(FileFormat::workbook_extension(zip), Some("xlsx"));
        assert_eq!(FileFormat::workbook_extension(ole2), Some("xls"));
        assert_eq!(FileFormat::workbook_extension(b"PAR1"), None);
    }

    #[test]
    fn a_sheet_is_named_beside_the_file_in_messages() {
        let t = Table::from_columns("heats.xlsx", vec![("c_wt".into(), vec![0.07])])
            .expect("table")
            .with_sheet(Some("welds"));
        assert_eq!(t.label(), "heats.xlsx, sheet 'welds'");
        let msg = t.numeric("mn_wt").expect_err("missing").to_string();
        assert!(
            msg.starts_with("heats.xlsx, sheet 'welds': no column"),
            "{msg}"
        );
        // the rows picked from it keep the sheet
        assert_eq!(t.select_rows(&[0]).sheet(), Some("welds"));
    }

    #[test]
    fn missing_column_lists_available() {
        let t = Table::from_columns("mem", vec![("a".into(), vec![1.0])]).expect("table");
        let msg = t.numeric("b").expect_err("missing").to_string();
        assert!(msg.contains("'b'") && msg.contains("a"), "{msg}");
    }
}
