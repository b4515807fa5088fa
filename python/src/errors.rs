//! The command's failures as Python exceptions of the classes in `fieldgrid/errors.py`.
//!
//! Invariant: a failure placed in the design file becomes `DesignError` carrying file, line,
//! column, key and message (line 0 when the error has no place in the file); any other
//! failure the command reports with exit code 2 becomes `FieldgridError`.

use fieldgrid_cli::error::Failure;
use pyo3::prelude::*;
use pyo3::types::PyDict;

/// The Python exception for a failure.
pub fn to_py(py: Python<'_>, f: Failure) -> PyErr {
    match build(py, f) {
        Ok(e) => e,
        Err(e) => e,
    }
}

fn build(py: Python<'_>, f: Failure) -> PyResult<PyErr> {
    let errors = py.import("fieldgrid.errors")?;
    let value = match &f.location {
        Some(at) => {
            let kw = PyDict::new(py);
            kw.set_item("file", &at.file)?;
            kw.set_item("line", at.line)?;
            kw.set_item("column", at.column)?;
            kw.set_item("key", &at.key)?;
            kw.set_item("message", &at.message)?;
            kw.set_item("source_line", &at.source_line)?;
            errors
                .getattr("DesignError")?
                .call((f.message.as_str(),), Some(&kw))?
        }
        None => errors
            .getattr("FieldgridError")?
            .call1((f.message.as_str(),))?,
    };
    Ok(PyErr::from_value(value))
}

/// Runs `f` and turns its failure into the Python exception.
pub fn check<T>(py: Python<'_>, r: Result<T, Failure>) -> PyResult<T> {
    r.map_err(|f| to_py(py, f))
}
