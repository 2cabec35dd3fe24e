//! Reading test records and writing results: tables from CSV or Parquet,
//! the training-data fingerprint, atomic writes; the schema that says
//! what each column is ([`schema`]).

mod atomic;
pub mod audit;
pub mod cells;
mod derived;
pub mod draft;
mod fingerprint;
pub mod guess;
mod ids;
pub mod modes;
pub mod schema;
pub mod spreadsheet;
pub mod suggest;
mod table;

pub use atomic::{write_atomic, AtomicFile};
pub(crate) use derived::find_header;
pub use derived::{derive_columns, DeriveOutcome};
pub use fingerprint::fingerprint;
pub use ids::{identifier_column, RowLabels};
pub use table::{csv_field, ColumnData, FileFormat, Table, TableBatches};
