//! The library's error type. Every variant carries the offending value and,
//! where one exists, the valid range, so that a message can be acted on
//! without reading the code.

/// Errors returned by mettle.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum Error {
    /// A file could not be opened or read.
    #[error("{path}: cannot read")]
    Io {
        /// The file.
        path: String,
        /// What the operating system said.
        source: std::io::Error,
    },
    /// A file could not be written.
    #[error("{path}: cannot write")]
    Write {
        /// The file.
        path: String,
        /// What the operating system said.
        source: std::io::Error,
    },
    /// A file is not a well-formed table.
    #[error("{path}: {message}")]
    Read {
        /// The file.
        path: String,
        /// What is wrong with it.
        message: String,
    },
    /// One cell holds a value that cannot be used.
    #[error("{path}: row {row} (line {line}), column '{column}': {problem}")]
    Cell {
        /// The file.
        path: String,
        /// Data row, 1-based, header excluded.
        row: usize,
        /// Line of the file, 1-based, header included.
        line: usize,
        /// Column name.
        column: String,
        /// What is wrong with the value.
        problem: String,
    },
    /// A column that was asked for is not in the table.
    #[error("{path}: no column named '{name}'{suggestion}; the columns are: {available}")]
    MissingColumn {
        /// The file.
        path: String,
        /// The column asked for.
        name: String,
        /// The columns the file has.
        available: String,
        /// " (did you mean 'X'?)" when a column's name is close, else empty.
        suggestion: String,
    },
    /// A setting is outside its valid range.
    #[error("invalid {name} = {value}: {expected}")]
    InvalidParameter {
        /// The setting.
        name: &'static str,
        /// The value given.
        value: String,
        /// The valid range, in words.
        expected: String,
    },
    /// Too few rows to train.
    #[error(
        "{path}: {n_rows} usable rows for {n_inputs} inputs; training needs at least {needed}"
    )]
    NotEnoughRows {
        /// The file.
        path: String,
        /// Rows available.
        n_rows: usize,
        /// Inputs in use.
        n_inputs: usize,
        /// Rows needed.
        needed: usize,
    },
    /// The target has a single value: there is nothing to learn.
    #[error("{path}: target '{name}' has the same value ({value}) in every row; there is nothing to learn")]
    ConstantTarget {
        /// The file.
        path: String,
        /// The target column.
        name: String,
        /// Its only value.
        value: f64,
    },
    /// No input is left once constant columns are set aside.
    #[error("{path}: no usable input: {detail}")]
    NoInputs {
        /// The file.
        path: String,
        /// Why each candidate input was set aside.
        detail: String,
    },
    /// Every candidate network failed to train.
    #[error("every candidate network failed to train: {reasons}")]
    AllCandidatesFailed {
        /// The distinct reasons.
        reasons: String,
    },
    /// A model file is corrupt, truncated or not a model file.
    #[error("{path}: not a usable mettle model file: {reason}")]
    ModelFormat {
        /// The file.
        path: String,
        /// What is wrong.
        reason: String,
    },
    /// A model file was written by a newer mettle.
    #[error("{path}: model format version {found} is newer than this mettle reads (up to {supported}); upgrade mettle")]
    ModelVersion {
        /// The file.
        path: String,
        /// The version in the file.
        found: u64,
        /// The newest version this build reads.
        supported: u64,
    },
    /// A schema file is malformed or inconsistent.
    #[error("{path}: {message}")]
    Schema {
        /// The schema file (or `<model>` for a schema stored in a model).
        path: String,
        /// What is wrong, with the valid choices.
        message: String,
    },
    /// A column the schema declares is not in the table.
    #[error("{path}: header row (line 1): column '{name}' declared in schema {schema} is not in the file; the columns are: {available}")]
    DeclaredColumnMissing {
        /// The data file.
        path: String,
        /// The schema file.
        schema: String,
        /// The declared column.
        name: String,
        /// The columns the file has.
        available: String,
    },
    /// The elements of one row sum above 100 wt%.
    #[error("{path}: row {row} (line {line}), columns {columns}: the elements sum to {total} wt%, above the 100 wt% a composition can hold")]
    CompositionSum {
        /// The data file.
        path: String,
        /// Data row, 1-based.
        row: usize,
        /// Line of the file, 1-based, header included.
        line: usize,
        /// The composition columns with their values (wt%).
        columns: String,
        /// Their sum, wt%.
        total: f64,
    },
    /// Rows lack input values; nothing is imputed. Training may leave such
    /// rows out explicitly (option `drop_incomplete_rows`); the CLI adds
    /// the remedy that fits the command.
    #[error("{path}: input values are missing in {n_rows} row(s), and nothing is ever filled in: {detail}")]
    MissingInputs {
        /// The data file.
        path: String,
        /// Rows concerned.
        n_rows: usize,
        /// Row by row, the columns that are empty.
        detail: String,
    },
    /// A derived input cannot be computed.
    #[error("{path}: {message}")]
    Derive {
        /// The data file.
        path: String,
        /// What the derivation reported.
        message: String,
    },
    /// A value a model needs cannot be used at prediction time.
    #[error("{path}: row {row}, column '{column}': {problem}")]
    PredictInput {
        /// The input file.
        path: String,
        /// Data row, 1-based.
        row: usize,
        /// Column name.
        column: String,
        /// What is wrong.
        problem: String,
    },
    /// A table given as the model's training data holds other rows.
    #[error("{path}: not the rows this model was trained on (fingerprint {found}; the model was trained on {data_file}, fingerprint {expected})")]
    NotTrainingData {
        /// The table given.
        path: String,
        /// Its fingerprint.
        found: String,
        /// The fingerprint the model records.
        expected: String,
        /// The training file the model records.
        data_file: String,
    },
    /// A requirement (screening or design) cannot be understood or used.
    #[error("requirement '{given}': {problem}")]
    Requirement {
        /// The requirement as written.
        given: String,
        /// What is wrong, with the accepted forms or values.
        problem: String,
    },
    /// A cost-and-limits file is malformed or inconsistent.
    #[error("{path}: {message}")]
    Costs {
        /// The file.
        path: String,
        /// What is wrong, with the valid choices or range.
        message: String,
    },
    /// A chart could not be drawn.
    #[error("drawing a chart failed: {message}")]
    Plot {
        /// What the drawing library said.
        message: String,
    },
}

impl Error {
    /// True when the error is the user's input (bad file, bad value, bad
    /// setting) rather than a failure while running; the CLI maps the first
    /// to exit code 2 and the second to exit code 1.
    pub fn is_bad_input(&self) -> bool {
        !matches!(
            self,
            Error::Write { .. } | Error::AllCandidatesFailed { .. } | Error::Plot { .. }
        )
    }
}

/// Result with mettle's [`Error`].
pub type Result<T> = std::result::Result<T, Error>;
