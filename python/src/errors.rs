//! The library's errors as the exceptions of `mettle.errors`.
//!
//! The classes are defined in Python (`python/mettle/errors.py`), where a
//! class can derive from both `mettle.MettleError` and the built-in it
//! refines (`ValueError`, `OSError`); this module only picks the class.

use pyo3::prelude::*;
use pyo3::types::PyAnyMethods;

/// The class of `mettle.errors` an error is raised as.
pub fn class_name(e: &mettle::Error) -> &'static str {
    use mettle::Error as E;
    match e {
        E::Io { .. } => "FileReadError",
        E::Write { .. } => "FileWriteError",
        E::Read { .. }
        | E::Cell { .. }
        | E::MissingColumn { .. }
        | E::NotEnoughRows { .. }
        | E::ConstantTarget { .. }
        | E::NoInputs { .. }
        | E::DeclaredColumnMissing { .. }
        | E::CompositionSum { .. }
        | E::MissingInputs { .. }
        | E::Derive { .. }
        | E::PredictInput { .. }
        | E::NotTrainingData { .. } => "DataError",
        E::InvalidParameter { .. } => "SettingsError",
        E::AllCandidatesFailed { .. } => "TrainingError",
        E::ModelFormat { .. } | E::ModelVersion { .. } => "ModelError",
        E::Schema { .. } => "SchemaError",
        E::Requirement { .. } => "RequirementError",
        E::Costs { .. } => "CostsError",
        _ => "MettleError",
    }
}

/// The message the command line prints after `mettle: error: `: the error
/// and its causes, joined by `: ` (anyhow's alternate form).
pub fn message(e: &dyn std::error::Error) -> String {
    let mut s = e.to_string();
    let mut cause = e.source();
    while let Some(c) = cause {
        s.push_str(": ");
        s.push_str(&c.to_string());
        cause = c.source();
    }
    s
}

/// The Python exception for a library error.
pub fn to_py(py: Python<'_>, e: &mettle::Error) -> PyErr {
    raise(py, class_name(e), &message(e))
}

/// An exception of class `name` of `mettle.errors` with `msg`.
pub fn raise(py: Python<'_>, name: &str, msg: &str) -> PyErr {
    let made = py
        .import("mettle.errors")
        .and_then(|m| m.getattr(name))
        .and_then(|cls| cls.call1((msg.to_string(),)));
    match made {
        Ok(exc) => PyErr::from_value(exc),
        Err(e) => e,
    }
}
