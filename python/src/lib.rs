//! `mettle._mettle`: the Python extension module over the mettle library.
//!
//! Only glue lives here: Python values are turned into the library's
//! [`mettle::data::Table`], settings into [`mettle::committee::CommitteeParams`]
//! exactly as the command line's `train` builds them, and the library's
//! results back into plain Python values (the package `mettle`, in
//! `python/mettle/`, turns those into DataFrames). Nothing is estimated
//! here that the library could estimate.
//!
//! Errors are raised as the exception classes of `mettle.errors`, with the
//! message the command line prints after `mettle: error: `.

mod errors;
mod frame;
mod predict;
mod progress;
mod train;

use pyo3::prelude::*;
use pyo3::types::PyBytes;

pub(crate) use errors::to_py;

/// A trained model (the library's [`mettle::Model`]).
#[pyclass(name = "RawModel", module = "mettle._mettle", frozen)]
pub struct RawModel {
    pub(crate) model: mettle::Model,
}

#[pymethods]
impl RawModel {
    /// Read a model file written by `mettle train` or `Model.save`.
    #[staticmethod]
    fn load(py: Python<'_>, path: std::path::PathBuf) -> PyResult<RawModel> {
        // the message the command line gives for the same file
        let model = py.detach(|| mettle::Model::load(&path)).map_err(|e| {
            crate::errors::raise(
                py,
                crate::errors::class_name(&e),
                &format!(
                    "the model file {} (a model written by `mettle train`): {}",
                    path.display(),
                    crate::errors::message(&e)
                ),
            )
        })?;
        Ok(RawModel { model })
    }

    /// Parse model JSON (the bytes of a model file); `name` names it in messages.
    #[staticmethod]
    fn from_json(py: Python<'_>, bytes: &[u8], name: &str) -> PyResult<RawModel> {
        let model = mettle::Model::from_json(bytes, name).map_err(|e| to_py(py, &e))?;
        Ok(RawModel { model })
    }

    /// The model file's bytes (identical models give identical bytes).
    fn to_json<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyBytes>> {
        let bytes = self.model.to_json().map_err(|e| to_py(py, &e))?;
        Ok(PyBytes::new(py, &bytes))
    }

    /// Write the model file atomically (a failed write leaves any older file intact).
    fn save(&self, py: Python<'_>, path: std::path::PathBuf) -> PyResult<()> {
        py.detach(|| self.model.save(&path))
            .map_err(|e| to_py(py, &e))
    }

    /// The model card as JSON text: the object `mettle explain --format json` prints.
    fn explain_json(&self, py: Python<'_>) -> PyResult<String> {
        let card = mettle::explain::model_card(&self.model);
        serde_json::to_string(&card).map_err(|e| {
            to_py(
                py,
                &mettle::Error::ModelFormat {
                    path: "<model>".into(),
                    reason: e.to_string(),
                },
            )
        })
    }

    /// The inputs declared as codes, as the model file records them
    /// (`codes`: per code its name and levels, each with code, name,
    /// indicator column and training row count), as JSON text; `[]`
    /// for a model without codes.
    fn codes_json(&self, py: Python<'_>) -> PyResult<String> {
        serde_json::to_string(&self.model.codes).map_err(|e| {
            to_py(
                py,
                &mettle::Error::ModelFormat {
                    path: "<model>".into(),
                    reason: e.to_string(),
                },
            )
        })
    }

    /// Target names, in the model's order.
    #[getter]
    fn targets(&self) -> Vec<String> {
        self.model.targets.iter().map(|t| t.name.clone()).collect()
    }

    /// Input names in network order (after the schema's derivations).
    #[getter]
    fn inputs(&self) -> Vec<String> {
        self.model.inputs.iter().map(|i| i.name.clone()).collect()
    }

    /// The columns a table given to `predict` must hold: the schema's
    /// raw inputs for a model trained through a schema, else the inputs.
    #[getter]
    fn required_columns(&self) -> Vec<String> {
        match &self.model.schema {
            Some(s) => s
                .columns
                .iter()
                .filter(|c| {
                    matches!(
                        c.role,
                        mettle::data::schema::Role::Input | mettle::data::schema::Role::Auxiliary
                    )
                })
                .map(|c| c.name.clone())
                .collect(),
            None => self.inputs(),
        }
    }

    /// Per target: the unit of the estimates (internal, or as declared
    /// with `declared`), `None` without a schema.
    fn target_units(&self, declared: bool) -> Vec<Option<String>> {
        self.model
            .target_columns(declared)
            .iter()
            .map(|c| c.unit.map(|u| u.symbol().to_string()))
            .collect()
    }

    /// The seed the model was trained with.
    #[getter]
    fn seed(&self) -> u64 {
        self.model.training.settings.seed
    }

    /// File name of the training table as recorded.
    #[getter]
    fn data_file(&self) -> String {
        self.model.training.data_file.clone()
    }
}

#[pymodule]
fn _mettle(m: &Bound<'_, PyModule>) -> PyResult<()> {
    m.add_class::<RawModel>()?;
    m.add_function(wrap_pyfunction!(train::train, m)?)?;
    m.add_function(wrap_pyfunction!(predict::predict, m)?)?;
    m.add_function(wrap_pyfunction!(predict::screen, m)?)?;
    m.add("CAUTION", mettle::predict::CAUTION)?;
    m.add("VERSION", env!("CARGO_PKG_VERSION"))?;
    Ok(())
}
