//! `NativeResult`: a finished study kept whole (the solution, its summary and the design),
//! so its arrays can be read and its files written exactly as the command writes them.
//!
//! Arrays are handed to Python as native-endian bytes of `f64` (`i32` for the conductor
//! index) in node order, x fastest: node (i, j) at index `j * nx + i`; the Python side views
//! them as numpy arrays of shape (ny, nx).

use fieldgrid_cli::commands::{impedance::LineSolved, solve as solve_cmd};
use fieldgrid_cli::design_file::DesignSource;
use fieldgrid_cli::outdir::OutDir;
use fieldgrid_cli::render::RenderOptions;
use fieldgrid_cli::summary::Summary;
use fieldgrid_cli::timings::Timings;
use fieldgrid_solver::raster::NO_CONDUCTOR;
use fieldgrid_solver::study::Solution;
use pyo3::exceptions::PyValueError;
use pyo3::prelude::*;
use pyo3::types::PyBytes;
use std::path::{Path, PathBuf};
use std::sync::Arc;

/// What kind of study made the result.
pub enum Kind {
    /// `solve`.
    Solve(Box<Solution>),
    /// `impedance`: both studies and the line parameters.
    Line(Box<LineSolved>),
}

/// A finished study.
#[pyclass(module = "fieldgrid._fieldgrid", frozen)]
pub struct NativeResult {
    src: Arc<DesignSource>,
    kind: Kind,
    summary: Summary,
}

/// Picture options as `--picture-width` accepts them (400 to 8000 px), with the design's
/// `[pictures] zoom` as the command takes it.
pub fn render_options(
    width: u32,
    src: &fieldgrid_cli::design_file::DesignSource,
) -> PyResult<RenderOptions> {
    if !(400..=8000).contains(&width) {
        return Err(PyValueError::new_err(format!(
            "picture_width {width}: must lie between 400 and 8000 px"
        )));
    }
    Ok(RenderOptions {
        width,
        zoom: src.zoom,
    })
}

fn f64_bytes<'py>(py: Python<'py>, v: impl IntoIterator<Item = f64>) -> Bound<'py, PyBytes> {
    let bytes: Vec<u8> = v.into_iter().flat_map(f64::to_ne_bytes).collect();
    PyBytes::new(py, &bytes)
}

impl NativeResult {
    /// Wraps a finished study.
    pub fn new(src: Arc<DesignSource>, kind: Kind, summary: Summary) -> NativeResult {
        NativeResult { src, kind, summary }
    }

    /// The solution of the design as drawn.
    fn sol(&self) -> &Solution {
        match &self.kind {
            Kind::Solve(s) => s,
            Kind::Line(l) => &l.study.solution,
        }
    }
}

#[pymethods]
impl NativeResult {
    /// summary.json's text (compact).
    fn summary_json(&self) -> PyResult<String> {
        serde_json::to_string(&self.summary).map_err(|e| PyValueError::new_err(e.to_string()))
    }

    /// (nx, ny).
    #[getter]
    fn shape(&self) -> (usize, usize) {
        let g = &self.sol().grid;
        (g.nx, g.ny)
    }

    /// Node x (r) coordinates, m.
    fn xs<'py>(&self, py: Python<'py>) -> Bound<'py, PyBytes> {
        f64_bytes(py, self.sol().grid.xs().iter().copied())
    }

    /// Node y (z) coordinates, m.
    fn ys<'py>(&self, py: Python<'py>) -> Bound<'py, PyBytes> {
        f64_bytes(py, self.sol().grid.ys().iter().copied())
    }

    /// Potential at every node, V.
    fn potential<'py>(&self, py: Python<'py>) -> Bound<'py, PyBytes> {
        f64_bytes(py, self.sol().potential.iter().copied())
    }

    /// (Ex, Ey) at every node, V/m (NaN inside conductors and at fixed nodes).
    fn field<'py>(&self, py: Python<'py>) -> (Bound<'py, PyBytes>, Bound<'py, PyBytes>) {
        let sol = self.sol();
        let (ex, ey): (Vec<f64>, Vec<f64>) = py.detach(|| {
            let f = sol.field();
            (0..sol.grid.len())
                .map(|p| f.at(p))
                .map(|e| (e[0], e[1]))
                .unzip()
        });
        (f64_bytes(py, ex), f64_bytes(py, ey))
    }

    /// |E| at every node, V/m (NaN inside conductors and at fixed nodes).
    fn field_magnitude<'py>(&self, py: Python<'py>) -> Bound<'py, PyBytes> {
        f64_bytes(py, self.sol().field_magnitude().iter().copied())
    }

    /// Relative permittivity at every node.
    fn permittivity<'py>(&self, py: Python<'py>) -> Bound<'py, PyBytes> {
        let design = &self.src.design;
        let raster = &self.sol().raster;
        f64_bytes(
            py,
            raster
                .material
                .iter()
                .map(|&m| fieldgrid_solver::material::of(design, m).permittivity),
        )
    }

    /// Index (design order) of the conductor holding each node, -1 for none.
    fn conductor_index<'py>(&self, py: Python<'py>) -> Bound<'py, PyBytes> {
        let bytes: Vec<u8> = self
            .sol()
            .raster
            .conductor
            .iter()
            .map(|&c| if c == NO_CONDUCTOR { -1 } else { i32::from(c) })
            .flat_map(i32::to_ne_bytes)
            .collect();
        PyBytes::new(py, &bytes)
    }

    /// Writes the files the command writes into `out` (replacing an earlier set there as
    /// one whole); returns the directory.
    #[pyo3(signature = (out, *, field_table=false, vtk=false, log_field=false,
                        picture_width=1200))]
    fn write(
        &self,
        py: Python<'_>,
        out: PathBuf,
        field_table: bool,
        vtk: bool,
        log_field: bool,
        picture_width: u32,
    ) -> PyResult<PathBuf> {
        let src = &self.src;
        let pictures = render_options(picture_width, src)?;
        let done = py.detach(|| -> Result<PathBuf, fieldgrid_cli::error::Failure> {
            let mut dir = OutDir::prepare(&out)?;
            match &self.kind {
                Kind::Solve(sol) => {
                    let files = solve_cmd::Files {
                        field_table,
                        vtk,
                        log_field,
                        pictures,
                        threads: None,
                        subcircuit: solve_cmd::subcircuit_name(Path::new(&src.file)),
                        source: src.file.clone(),
                    };
                    // capacitance.cir is written whenever there is one; why there is none
                    // is the command's note to its reader, not a result.
                    let _circuit = solve_cmd::write_files(
                        &dir,
                        src,
                        sol,
                        &self.summary,
                        &files,
                        &Timings::new(),
                    )?;
                }
                Kind::Line(line) => {
                    if field_table || vtk || log_field {
                        return Err(fieldgrid_cli::error::Failure::input(
                            "field_table, vtk and log_field are options of a solve's files",
                        ));
                    }
                    let pictures = fieldgrid_cli::args::PictureArgs {
                        picture_width: pictures.width,
                        zoom: pictures.zoom,
                    };
                    fieldgrid_cli::commands::impedance::write_line_results(
                        &dir,
                        src,
                        &line.study,
                        &line.summary,
                        &pictures,
                    )?
                }
            }
            dir.commit()?;
            Ok(out.clone())
        });
        crate::errors::check(py, done)
    }
}
