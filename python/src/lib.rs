//! The extension module `fieldgrid._fieldgrid`: the thin native layer under the Python
//! package `fieldgrid` (whose pure-Python part gives the documented API and the numpy
//! arrays).
//!
//! Invariants: every number comes from the library crates exactly as the command computes it
//! (the same reader, the same `study_params`, the same summary and file writers of
//! `fieldgrid_cli`), so a result is bit for bit the command's for the same design and
//! options; every solve runs with the GIL released; no module of this crate formats a
//! result for people.

mod design;
mod dict_toml;
mod errors;
mod result;
mod run;

use pyo3::prelude::*;

/// The module's classes and functions.
#[pymodule]
fn _fieldgrid(m: &Bound<'_, PyModule>) -> PyResult<()> {
    // A Python process keeps its own SIGINT handling (KeyboardInterrupt).
    fieldgrid_cli::outdir::leave_signals_alone();
    m.add("VERSION", env!("CARGO_PKG_VERSION"))?;
    m.add_class::<design::NativeDesign>()?;
    m.add_class::<result::NativeResult>()?;
    m.add_function(wrap_pyfunction!(run::solve, m)?)?;
    m.add_function(wrap_pyfunction!(run::impedance, m)?)?;
    m.add_function(wrap_pyfunction!(run::check, m)?)?;
    Ok(())
}
