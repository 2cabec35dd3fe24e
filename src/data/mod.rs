//! Reading test records and writing results: tables from CSV or Parquet,
//! the training-data fingerprint, atomic writes.

mod atomic;
mod fingerprint;
mod table;

pub use atomic::write_atomic;
pub use fingerprint::fingerprint;
pub use table::{ColumnData, FileFormat, Table};
