//! Tables from Python: the package hands over a list of `(name, values)`
//! pairs, `values` a C-contiguous float64 buffer (numpy; NaN is a missing
//! cell, as an empty cell of a CSV file) or a list of `str`/`None` (text,
//! parsed by the library with its own messages, exactly as a CSV cell).

use std::path::Path;

use mettle::data::{ColumnData, Table};
use pyo3::buffer::PyBuffer;
use pyo3::prelude::*;

/// One column as the package hands it over.
pub struct PyColumn {
    name: String,
    data: ColumnData,
}

impl<'a, 'py> FromPyObject<'a, 'py> for PyColumn {
    type Error = PyErr;

    fn extract(obj: Borrowed<'a, 'py, PyAny>) -> PyResult<Self> {
        let (name, values): (String, Bound<'py, PyAny>) = obj.extract()?;
        let data = match PyBuffer::<f64>::get(&values) {
            Ok(buf) => {
                let v = buf.to_vec(obj.py())?;
                ColumnData::Number(v.into_iter().map(|x| (!x.is_nan()).then_some(x)).collect())
            }
            Err(_) => ColumnData::Text(values.extract::<Vec<Option<String>>>()?),
        };
        Ok(PyColumn { name, data })
    }
}

/// The table the columns make, named `source` in every message; checked
/// as [`Table::read`] checks a file (no column, no row).
pub fn table(source: &str, columns: Vec<PyColumn>) -> mettle::Result<Table> {
    let mut t = Table::from_optional_columns(Path::new(source), Vec::new())?;
    for c in columns {
        t.push_column(c.name, c.data)?;
    }
    t.check_has_rows()?;
    Ok(t)
}

/// Where the rows come from: a file (read as the command line reads it)
/// or columns from a DataFrame or array.
pub enum Source {
    /// A CSV or Parquet file.
    File(std::path::PathBuf),
    /// Columns, and the name messages give them.
    Columns(String, Vec<PyColumn>),
}

impl Source {
    /// The table.
    pub fn into_table(self) -> mettle::Result<Table> {
        match self {
            Source::File(p) => Table::read(&p),
            Source::Columns(name, cols) => table(&name, cols),
        }
    }

    /// From the package's arguments: `path` when given, else the columns.
    pub fn new(
        path: Option<std::path::PathBuf>,
        source: String,
        columns: Option<Vec<PyColumn>>,
    ) -> Source {
        match path {
            Some(p) => Source::File(p),
            None => Source::Columns(source, columns.unwrap_or_default()),
        }
    }
}
