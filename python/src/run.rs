//! `solve`, `impedance` and `check`: the commands' own steps (prepare, study, summary) run
//! with the GIL released, the options checked exactly as the command checks them.
//!
//! Invariants: the study settings come from `fieldgrid_cli::commands::study_params` on a
//! `SolveOptions` built from the keywords, so a result equals the command's bit for bit; the
//! progress callback only observes (it is called with the GIL held, its first exception
//! stops further calls and is raised when the study returns).

use crate::design::NativeDesign;
use crate::errors::check as py_check;
use crate::result::{Kind, NativeResult};
use clap::ValueEnum;
use fieldgrid_cli::args::{SolveOptions, SolverChoice};
use fieldgrid_cli::commands::{impedance as line_cmd, solve as solve_cmd};
use fieldgrid_cli::design_file::DesignSource;
use fieldgrid_cli::error::Failure;
use fieldgrid_solver::stages::{Event, StageMonitor};
use fieldgrid_solver::study::StudyParams;
use pyo3::exceptions::PyValueError;
use pyo3::prelude::*;
use std::sync::{Arc, Mutex};

/// The options `solve` and `impedance` share, as the Python package passes them (a dict of
/// every keyword, defaults filled in by the package's signature).
#[derive(FromPyObject)]
#[pyo3(from_item_all)]
pub struct Keywords {
    solver: String,
    tol: Option<f64>,
    threads: Option<usize>,
    max_iterations: Option<usize>,
    error_estimate: bool,
    max_memory: Option<f64>,
    accuracy: Option<f64>,
}

impl Keywords {
    /// The command-line options these keywords stand for (`quiet`: no terminal progress
    /// line).
    fn options(&self) -> PyResult<SolveOptions> {
        let solver = SolverChoice::from_str(&self.solver, false).map_err(|_| {
            let names: Vec<String> = SolverChoice::value_variants()
                .iter()
                .filter_map(|v| v.to_possible_value().map(|p| p.get_name().to_string()))
                .collect();
            PyValueError::new_err(format!(
                "solver {:?}: not a solver (choose one of {})",
                self.solver,
                names.join(", ")
            ))
        })?;
        Ok(SolveOptions {
            solver,
            tol: self.tol,
            threads: self.threads,
            max_iterations: self.max_iterations,
            quiet: true,
            no_error_estimate: !self.error_estimate,
            max_memory: self.max_memory,
            accuracy: self.accuracy,
        })
    }
}

/// The user's progress callback and the first exception it raised.
struct Progress {
    callback: Py<PyAny>,
    stage: Mutex<&'static str>,
    error: Mutex<Option<PyErr>>,
}

impl Progress {
    fn call(&self, iteration: Option<usize>, residual: Option<f64>) {
        let mut error = self.error.lock().expect("progress lock");
        if error.is_some() {
            return;
        }
        let stage = *self.stage.lock().expect("progress lock");
        Python::attach(|py| {
            if let Err(e) = self.callback.call1(py, (stage, iteration, residual)) {
                *error = Some(e);
            }
        });
    }

    /// Hooks the callback onto the study's stage and iteration monitors.
    fn install(self: &Arc<Self>, params: &mut StudyParams) {
        let me = Arc::clone(self);
        params.stages = Some(StageMonitor(Arc::new(move |stage, event| {
            if event == Event::Start {
                *me.stage.lock().expect("progress lock") = stage.key();
                me.call(None, None);
            }
        })));
        let me = Arc::clone(self);
        params.solver.monitor = Some(Arc::new(move |it, rel| me.call(Some(it), Some(rel))));
    }

    fn raised(&self) -> PyResult<()> {
        match self.error.lock().expect("progress lock").take() {
            Some(e) => Err(e),
            None => Ok(()),
        }
    }
}

fn progress_of(callback: Option<Py<PyAny>>) -> Option<Arc<Progress>> {
    callback.map(|callback| {
        Arc::new(Progress {
            callback,
            stage: Mutex::new("start"),
            error: Mutex::new(None),
        })
    })
}

/// The design's source with the accuracy target applied (its grid set to the loop's first
/// lattice), and the target.
fn targeted(
    py: Python<'_>,
    design: &NativeDesign,
    opts: &SolveOptions,
) -> PyResult<(Arc<DesignSource>, Option<f64>)> {
    let mut src = Arc::clone(&design.src);
    let target = py_check(
        py,
        fieldgrid_cli::accuracy::target(Arc::make_mut(&mut src), opts),
    )?;
    Ok((src, target))
}

/// Runs `study` with the GIL released, the progress callback (if any) hooked onto `params`;
/// the callback's first exception wins over the study's result.
fn run_study<T: Send>(
    py: Python<'_>,
    mut params: StudyParams,
    progress: Option<Py<PyAny>>,
    study: impl FnOnce(&StudyParams) -> Result<T, Failure> + Send,
) -> PyResult<T> {
    let progress = progress_of(progress);
    if let Some(p) = &progress {
        p.install(&mut params);
    }
    let done = py.detach(|| study(&params));
    if let Some(p) = &progress {
        p.raised()?;
    }
    py_check(py, done)
}

/// Solves a design as `fieldgrid solve` does.
#[pyfunction]
#[pyo3(signature = (design, options, progress=None))]
pub fn solve(
    py: Python<'_>,
    design: &NativeDesign,
    options: Keywords,
    progress: Option<Py<PyAny>>,
) -> PyResult<NativeResult> {
    let opts = options.options()?;
    let (src, target) = targeted(py, design, &opts)?;
    let (params, plan) = py_check(py, solve_cmd::prepare(&src, &opts, 0.0))?;
    let (sol, summary) = run_study(py, params, progress, |params| match target {
        Some(rel) => solve_cmd::solve_accurate(&src, params, &opts, rel).map(|(s, m, _)| (s, m)),
        None => solve_cmd::solve_planned(&src, &plan, params, opts.threads),
    })?;
    Ok(NativeResult::new(src, Kind::Solve(Box::new(sol)), summary))
}

/// Line parameters of a planar design as `fieldgrid impedance` computes them.
#[pyfunction]
#[pyo3(signature = (design, signals, options, progress=None))]
pub fn impedance(
    py: Python<'_>,
    design: &NativeDesign,
    signals: Vec<String>,
    options: Keywords,
    progress: Option<Py<PyAny>>,
) -> PyResult<NativeResult> {
    let opts = options.options()?;
    let (src, target) = targeted(py, design, &opts)?;
    let (params, plan) = py_check(py, line_cmd::prepare(&src, &signals, &opts))?;
    let solved = run_study(py, params, progress, |params| match target {
        Some(rel) => line_cmd::study_accurate(&src, &signals, params, &opts, rel).map(|(s, _)| s),
        None => line_cmd::study(&src, &plan, &signals, params, opts.threads),
    })?;
    let summary = solved.summary.clone();
    Ok(NativeResult::new(
        src,
        Kind::Line(Box::new(solved)),
        summary,
    ))
}

/// What `fieldgrid check` reports (check.json's text); with `out`, writes preview.png (with
/// the node lines drawn when `grid_lines`) and check.json there as the command does.
#[pyfunction]
#[pyo3(signature = (design, out=None, picture_width=1200, grid_lines=false))]
pub fn check(
    py: Python<'_>,
    design: &NativeDesign,
    out: Option<std::path::PathBuf>,
    picture_width: u32,
    grid_lines: bool,
) -> PyResult<String> {
    let src = Arc::clone(&design.src);
    let render = crate::result::render_options(picture_width, &src)?;
    let report = py.detach(
        || -> Result<serde_json::Value, fieldgrid_cli::error::Failure> {
            let (plan, _, report) = fieldgrid_cli::commands::check::check(&src, None)?;
            if let Some(dir) = &out {
                let mut o = fieldgrid_cli::outdir::OutDir::prepare(dir)?;
                let lines = grid_lines.then_some(plan.grid());
                fieldgrid_cli::commands::check::write_files(&o, &src, &report, lines, &render)?;
                o.commit()?;
            }
            Ok(report)
        },
    );
    let report = py_check(py, report)?;
    Ok(report.to_string())
}
