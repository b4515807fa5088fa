//! `NativeDesign`: a design read and validated by the command's reader, from a file, TOML
//! text or a Python dict, with parameter values replaced as `--set` replaces them.
//!
//! Invariant: a `NativeDesign` always holds a design that read without error; replacing
//! parameters reads its text again (so expressions that use them are evaluated anew) and
//! yields a new object, never changing this one.

use crate::dict_toml;
use fieldgrid_cli::commands::{read_limited, MAX_DESIGN_BYTES};
use fieldgrid_cli::design_file::{read_design, DesignSource, InputError};
use fieldgrid_cli::error::Failure;
use fieldgrid_solver::design::Mode;
use pyo3::exceptions::{PyFileNotFoundError, PyOSError, PyPermissionError, PyValueError};
use pyo3::prelude::*;
use std::io::ErrorKind;
use std::path::Path;
use std::sync::Arc;

/// A validated design and the text it was read from.
#[pyclass(module = "fieldgrid._fieldgrid", frozen)]
pub struct NativeDesign {
    /// The design as the reader returned it.
    pub src: Arc<DesignSource>,
    /// The TOML text it was read from (for a dict, the text made from it).
    text: String,
    /// Parameter values replaced, in the order given.
    overrides: Vec<(String, f64)>,
}

fn read(
    py: Python<'_>,
    text: String,
    file: &str,
    overrides: Vec<(String, f64)>,
) -> PyResult<NativeDesign> {
    if let Some((name, v)) = overrides.iter().find(|(_, v)| !v.is_finite()) {
        return Err(PyValueError::new_err(format!(
            "parameter {name}: {v} is not a finite number"
        )));
    }
    let src = read_design(&text, file, &overrides)
        .map_err(|e: InputError| crate::errors::to_py(py, Failure::from(e)))?;
    Ok(NativeDesign {
        src: Arc::new(src),
        text,
        overrides,
    })
}

#[pymethods]
impl NativeDesign {
    /// Reads the design file at `path` (named in messages as given).
    #[staticmethod]
    fn from_file(py: Python<'_>, path: &str, overrides: Vec<(String, f64)>) -> PyResult<Self> {
        let text = read_limited(Path::new(path), MAX_DESIGN_BYTES).map_err(|e| {
            let message = format!("{path}: cannot read the design: {e}");
            match e.kind() {
                ErrorKind::NotFound => PyFileNotFoundError::new_err(message),
                ErrorKind::PermissionDenied => PyPermissionError::new_err(message),
                _ => PyOSError::new_err(message),
            }
        })?;
        read(py, text, path, overrides)
    }

    /// Reads TOML text; `file` names it in messages and is the base of relative SVG paths.
    #[staticmethod]
    fn from_text(
        py: Python<'_>,
        text: String,
        file: &str,
        overrides: Vec<(String, f64)>,
    ) -> PyResult<Self> {
        read(py, text, file, overrides)
    }

    /// Reads a dict shaped like the TOML file (tables as dicts, arrays of tables as lists
    /// of dicts).
    #[staticmethod]
    fn from_dict(
        py: Python<'_>,
        design: &Bound<'_, PyAny>,
        file: &str,
        overrides: Vec<(String, f64)>,
    ) -> PyResult<Self> {
        let text = dict_toml::to_toml(design)?;
        read(py, text, file, overrides)
    }

    /// The same text read again with `overrides` (replacing every earlier override).
    fn with_overrides(&self, py: Python<'_>, overrides: Vec<(String, f64)>) -> PyResult<Self> {
        read(py, self.text.clone(), &self.src.file, overrides)
    }

    /// The file name as given.
    #[getter]
    fn file(&self) -> String {
        self.src.file.clone()
    }

    /// The TOML text read.
    #[getter]
    fn text(&self) -> String {
        self.text.clone()
    }

    /// The parameter values replaced.
    #[getter]
    fn overrides(&self) -> Vec<(String, f64)> {
        self.overrides.clone()
    }

    /// The parameters as used (overrides applied), in file order, in the file's units.
    #[getter]
    fn parameters(&self) -> Vec<(String, f64)> {
        self.src.parameters.clone()
    }

    /// "planar" or "axisymmetric".
    #[getter]
    fn mode(&self) -> &'static str {
        match self.src.design.mode {
            Mode::Planar => "planar",
            _ => "axisymmetric",
        }
    }

    /// The file's length unit ("mm", "m", ...).
    #[getter]
    fn unit(&self) -> &'static str {
        self.src.unit.name()
    }

    /// Conductor names, in design order.
    #[getter]
    fn conductors(&self) -> Vec<String> {
        let d = &self.src.design;
        d.conductors.iter().map(|c| c.name.clone()).collect()
    }

    /// Dielectric names, in design order.
    #[getter]
    fn dielectrics(&self) -> Vec<String> {
        let d = &self.src.design;
        d.dielectrics.iter().map(|c| c.name.clone()).collect()
    }

    /// Hex of the hash of the text (summary.json's `design_hash`).
    #[getter]
    fn text_hash(&self) -> String {
        self.src.text_hash.clone()
    }
}
