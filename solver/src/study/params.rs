//! What a study is asked to run and how it can fail: [`StudyParams`] (solver, multigrid,
//! error estimate, hot-spot search, warm start), [`StudyError`], and [`WarmStart`], the
//! solutions of an earlier study a later one may start from. Plain data: nothing here refers
//! to the study's steps, which all read it.

use crate::design::DesignError;
use crate::grid::{Grid, GridError};
use crate::operator::OperatorError;
use crate::post::HotspotParams;
use crate::solvers::{multigrid, Method, Params};
use crate::stages::StageMonitor;
use std::sync::Arc;

/// What to run. Start from `StudyParams::default()` and set the fields that matter (more
/// may be added).
#[derive(Clone, Debug)]
#[non_exhaustive]
pub struct StudyParams {
    /// Linear solver.
    pub method: Method,
    /// Its settings.
    pub solver: Params,
    /// The multigrid hierarchy's options (used when `method` is multigrid).
    pub multigrid: multigrid::Options,
    /// Also solve on the lattice twice as coarse and estimate discretisation errors.
    pub error_estimate: bool,
    /// Hot-spot search settings.
    pub hotspots: HotspotParams,
    /// Told as each stage of the study starts and ends.
    pub stages: Option<StageMonitor>,
    /// Starting guesses for the solves on the study's lattice (from an earlier study of a
    /// nearby design); used only when they fit the lattice (same node counts and
    /// conductors), else every solve starts from zero.
    pub warm_start: Option<Arc<WarmStart>>,
    /// Keep the lattice's solves in [`Solution::warm_start`], to start a later study from.
    pub keep_warm_start: bool,
    /// Start the solves on each graded lattice from the same study's solves on the lattice
    /// twice as coarse, interpolated (nested iteration), when the error estimate solved that
    /// lattice and no warm start fits; the solves stop on the same tests, a decade tighter.
    /// Uniform lattices always start from zero.
    pub coarse_start: bool,
}

impl Default for StudyParams {
    fn default() -> Self {
        StudyParams {
            method: Method::default(),
            solver: Params::default(),
            multigrid: multigrid::Options::default(),
            error_estimate: true,
            hotspots: HotspotParams::default(),
            stages: None,
            warm_start: None,
            keep_warm_start: false,
            coarse_start: true,
        }
    }
}

impl StudyParams {
    /// These settings with the linear solver `method`.
    pub fn with_method(mut self, method: Method) -> Self {
        self.method = method;
        self
    }

    /// These settings with the solver settings `solver`.
    pub fn with_solver(mut self, solver: Params) -> Self {
        self.solver = solver;
        self
    }

    /// These settings without a warm start and keeping nothing for one.
    pub(crate) fn cold(&self) -> StudyParams {
        StudyParams {
            warm_start: None,
            keep_warm_start: false,
            ..self.clone()
        }
    }

    /// These settings with the coarse start ([`StudyParams::coarse_start`]) on or off.
    pub fn with_coarse_start(mut self, on: bool) -> Self {
        self.coarse_start = on;
        self
    }

    /// These settings with the error estimate on or off.
    pub fn with_error_estimate(mut self, on: bool) -> Self {
        self.error_estimate = on;
        self
    }
}

/// A study that could not run.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum StudyError {
    /// The design breaks a rule.
    #[error(transparent)]
    Design(#[from] DesignError),
    /// The lattice cannot be built.
    #[error(transparent)]
    Grid(#[from] GridError),
    /// The operator cannot be built.
    #[error(transparent)]
    Operator(#[from] OperatorError),
}

impl StudyError {
    /// The stable code of the error within (the design's, the lattice's or the operator's).
    pub fn code(&self) -> &'static str {
        match self {
            StudyError::Design(e) => e.code(),
            StudyError::Grid(e) => e.code(),
            StudyError::Operator(e) => e.code(),
        }
    }
}

/// The solutions of a study's solves on its lattice, to start the solves of a nearby
/// design's study on the same lattice from: one per conductor at 1 V (every other at 0 V)
/// and the sides and free charge's. Any starting guess converges to the same tolerance (the
/// solvers stop on the residual relative to the right-hand side). Only the same node lines
/// take them: on a graded lattice whose lines moved with a parameter, node (i, j)'s old
/// value belongs to another point, and a solve started from it stopped at that tolerance
/// with a line's eps_eff 3e-4 off the cold solve's (the residual of the radically graded
/// cells hides smooth errors).
#[derive(Clone, Debug, PartialEq)]
pub struct WarmStart {
    pub(super) xs: Vec<f64>,
    pub(super) ys: Vec<f64>,
    pub(super) unit: Vec<Vec<f64>>,
    pub(super) background: Option<Vec<f64>>,
}

impl WarmStart {
    /// True when these solves were made on `grid`'s node lines with `conductors`
    /// conductors.
    pub fn fits(&self, grid: &Grid, conductors: usize) -> bool {
        self.xs == grid.xs() && self.ys == grid.ys() && self.unit.len() == conductors
    }
}
