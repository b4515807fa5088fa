//! A design solved at chosen parameter values, and the named quantities of its results: the
//! parameterised solves that `target`, `--sensitivity` and `--tolerance` share.
//!
//! Quantities are named as `compare` names them (`C[a,b]`, `Q[a]`, `F[a]`, `V[a]`,
//! `energy`, `peak_field`), plus `worst_margin` when a material has a strength and, for a
//! line study (signals given), the line's scalars `Z0`, `eps_eff`, `Z_odd`, `Z_even`,
//! `Z_diff`, `Z_common`, `eps_eff_odd`, `eps_eff_even`. Values are SI; parameters are in
//! the design's own units.
//!
//! Invariants: every evaluation reads the design file again with the overrides applied
//! (the `--set` values first, the varied ones after, so the varied ones win), plans its own
//! grid (a parameter may change the grid's size) and solves, from the warm start the
//! setup's study settings carry when it fits that grid (a line study's study with every
//! permittivity 1 from `vacuum_warm_start` when given), else from zero; the first failing
//! evaluation names the parameter values it was at.

use super::{check_memory, load_design, with_threads};
use crate::args::SolveOptions;
use crate::design_file::DesignSource;
use crate::error::Failure;
use crate::summary::Summary;
use fieldgrid_solver::design::Mode;
use fieldgrid_solver::line_study::{self, LineStudy, LineWarmStart};
use fieldgrid_solver::study::{self, Solution, StudyParams};
use std::path::Path;
use std::time::Instant;

/// What every evaluation shares.
pub struct Setup<'a> {
    /// The design file.
    pub design: &'a Path,
    /// `--set` values, applied before the evaluation's own.
    pub base: Vec<(String, f64)>,
    /// Study settings.
    pub params: StudyParams,
    /// The command's solver options (threads, memory limit).
    pub opts: &'a SolveOptions,
    /// The signal conductors, for a line study; empty for a plain study.
    pub signals: Vec<String>,
    /// The starting guess of a line study's study with every permittivity 1; `None`: the
    /// design study's (`params.warm_start`).
    pub vacuum_warm_start: Option<std::sync::Arc<fieldgrid_solver::study::WarmStart>>,
}

impl Setup<'_> {
    /// These settings with every solve started from the nominal solves `start` (each study
    /// from its own: the design's, and a line study's with every permittivity 1), keeping
    /// none.
    pub fn started_from(&self, start: &LineWarmStart) -> Setup<'_> {
        let mut params = self.params.clone();
        params.warm_start = start.design.clone();
        params.keep_warm_start = false;
        Setup {
            design: self.design,
            base: self.base.clone(),
            params,
            opts: self.opts,
            signals: self.signals.clone(),
            vacuum_warm_start: start.vacuum.clone(),
        }
    }
}

/// The solves around a nominal design: how many, how many started from the nominal
/// solves, and their iterations on the fine lattices.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct Solves {
    /// Designs solved (a line study counts once).
    pub studies: usize,
    /// Those whose lattice fitted the nominal solves, started from them.
    pub warm_starts: usize,
    /// Iterations of every linear solve on the fine lattices.
    pub iterations: usize,
}

impl Solves {
    /// Counts one evaluation started from `start`.
    pub fn count(&mut self, ev: &Evaluation, start: &LineWarmStart) {
        let sol = ev.solved.solution();
        self.studies += 1;
        self.iterations += ev.iterations();
        let fits = start
            .design
            .as_ref()
            .is_some_and(|w| w.fits(&sol.grid, sol.conductors.len()));
        self.warm_starts += usize::from(fits);
    }
}

/// The solved results of one evaluation.
pub enum Solved {
    /// A plain study.
    Study(Box<Solution>),
    /// A line study (the design's own study inside).
    Line(Box<LineStudy>),
}

impl Solved {
    /// The design's own study.
    pub fn solution(&self) -> &Solution {
        match self {
            Solved::Study(s) => s,
            Solved::Line(l) => &l.solution,
        }
    }

    /// The solves kept to start nearby designs from (when the study settings asked).
    pub fn warm_start(&self) -> LineWarmStart {
        match self {
            Solved::Study(s) => LineWarmStart {
                design: s.warm_start.clone(),
                vacuum: None,
            },
            Solved::Line(l) => l.warm_start(),
        }
    }
}

/// One named quantity.
#[derive(Clone, Debug, PartialEq)]
pub struct Named {
    /// Its name (`C[a,b]`, `Z0`, ...).
    pub name: String,
    /// SI unit ("" for a ratio).
    pub unit: String,
    /// Value.
    pub value: f64,
    /// Estimated discretisation error, same unit, when known.
    pub error: Option<f64>,
}

/// One evaluation: the design read at the parameter values, its results and quantities.
pub struct Evaluation {
    /// The design read with the overrides.
    pub src: DesignSource,
    /// The solved results.
    pub solved: Solved,
    /// Its summary (as `solve` or `impedance` writes it).
    pub summary: Summary,
    /// Every named quantity, in report order.
    pub quantities: Vec<Named>,
}

impl Evaluation {
    /// The quantity named `name` (exactly, else ignoring case), or a message listing the
    /// names there are.
    pub fn quantity(&self, name: &str) -> Result<&Named, Failure> {
        find(&self.quantities, name).ok_or_else(|| unknown_quantity(&self.quantities, name))
    }

    /// True when every solve converged.
    pub fn converged(&self) -> bool {
        self.summary.solver.converged
    }

    /// The iterations of every solve on the fine lattice (both studies of a line study).
    pub fn iterations(&self) -> usize {
        match &self.solved {
            Solved::Study(s) => s.solve.total_iterations,
            Solved::Line(l) => l.solution.solve.total_iterations + l.vacuum.solve.total_iterations,
        }
    }
}

/// The quantity named `name` in `list`: exactly, else ignoring case.
pub fn find<'q>(list: &'q [Named], name: &str) -> Option<&'q Named> {
    list.iter()
        .find(|q| q.name == name)
        .or_else(|| list.iter().find(|q| q.name.eq_ignore_ascii_case(name)))
}

/// The values in `list` of the quantities named as in `nominal` (NaN where missing).
pub fn pick(nominal: &[Named], list: &[Named]) -> Vec<f64> {
    nominal
        .iter()
        .map(|q| find(list, &q.name).map_or(f64::NAN, |x| x.value))
        .collect()
}

/// The message for a quantity name that `list` does not hold.
pub fn unknown_quantity(list: &[Named], name: &str) -> Failure {
    let names: Vec<&str> = list.iter().map(|q| q.name.as_str()).collect();
    Failure::input(format!(
        "--quantity {name}: no such quantity here (there are: {}){}",
        names.join(", "),
        if is_line_name(name) {
            "; line quantities need --signal"
        } else {
            ""
        }
    ))
}

/// True for the names of line quantities (which need a line study).
pub fn is_line_name(name: &str) -> bool {
    let n = name.to_ascii_lowercase();
    n == "z0" || n.starts_with("z_") || n.starts_with("eps_eff")
}

/// Solves the design at `values` (parameter name, value in design units).
pub fn evaluate(setup: &Setup, values: &[(String, f64)]) -> Result<Evaluation, Failure> {
    let mut overrides = setup.base.clone();
    overrides.extend(values.iter().cloned());
    let at = |f: Failure| at_values(values, f);
    let src = load_design(setup.design, &overrides).map_err(at)?;
    let start = Instant::now();
    if setup.signals.is_empty() {
        let (plan, _) = check_memory(
            &src,
            study::plan(&src.design, &setup.params),
            setup.opts.max_memory,
            0.0,
        )
        .map_err(at)?;
        let sol = with_threads(setup.opts.threads, || {
            study::run_planned(&src.design, &plan, &setup.params)
        })?
        .map_err(|e| at(super::solve::study_failure(&src, e)))?;
        let mut summary = Summary::from_solution(
            &sol,
            src.design.depth,
            start.elapsed().as_secs_f64(),
            &src.text_hash,
        );
        summary.parameters = crate::summary::parameters(&src);
        let quantities = study_quantities(&summary);
        Ok(Evaluation {
            src,
            solved: Solved::Study(Box::new(sol)),
            summary,
            quantities,
        })
    } else {
        if src.design.mode != Mode::Planar {
            return Err(Failure::input(format!(
                "{}: line quantities need a planar cross-section (mode = \"planar\")",
                setup.design.display()
            )));
        }
        super::impedance::check_signals(&src.design, &setup.signals).map_err(at)?;
        let (plan, _) = check_memory(
            &src,
            line_study::plan(&src.design, &setup.params),
            setup.opts.max_memory,
            0.0,
        )
        .map_err(at)?;
        let guess = LineWarmStart {
            design: setup.params.warm_start.clone(),
            vacuum: (setup.vacuum_warm_start.clone()).or_else(|| setup.params.warm_start.clone()),
        };
        let ls = with_threads(setup.opts.threads, || {
            line_study::run_planned_from(&src.design, &plan, &setup.signals, &setup.params, &guess)
        })?
        .map_err(|e| at(super::impedance::line_failure(&src, &setup.signals, e)))?;
        let summary = super::impedance::line_summary(
            &src,
            &ls,
            &setup.signals,
            start.elapsed().as_secs_f64(),
        );
        let mut quantities = study_quantities(&summary);
        quantities.extend(line_quantities(&ls));
        Ok(Evaluation {
            src,
            solved: Solved::Line(Box::new(ls)),
            summary,
            quantities,
        })
    }
}

/// A failure prefixed with the parameter values it happened at.
fn at_values(values: &[(String, f64)], f: Failure) -> Failure {
    if values.is_empty() {
        return f;
    }
    let at: Vec<String> = values
        .iter()
        .map(|(n, v)| format!("{n} = {}", super::sweep::value_text(*v)))
        .collect();
    let message = f.message.strip_prefix("error: ").unwrap_or(&f.message);
    Failure {
        code: f.code,
        message: format!("at {}: {message}", at.join(", ")),
        location: f.location,
    }
}

/// The quantities of a study's summary with their error estimates.
pub fn study_quantities(s: &Summary) -> Vec<Named> {
    let cap = &s.capacitance;
    let mut out: Vec<Named> = super::compare::quantities(s)
        .into_iter()
        .map(|q| Named {
            name: q.name,
            unit: q.unit,
            value: q.value,
            error: None,
        })
        .collect();
    for q in &mut out {
        q.error = error_of(s, cap, &q.name);
    }
    if let Some(w) = &s.worst_margin {
        // margin = strength / (field + error): its own uncertainty follows from the field's.
        let error = w
            .error_estimate
            .filter(|_| w.field > 0.0)
            .map(|e| w.margin * e / w.field);
        out.push(Named {
            name: "worst_margin".into(),
            unit: String::new(),
            value: w.margin,
            error,
        });
    }
    out
}

fn error_of(s: &Summary, cap: &crate::summary::CapacitanceSummary, name: &str) -> Option<f64> {
    let inner = |prefix: &str| {
        name.strip_prefix(prefix)
            .and_then(|r| r.strip_suffix(']'))
            .map(str::to_string)
    };
    if let Some(pair) = inner("C[") {
        let e = cap.error_estimate.as_ref()?;
        let (a, b) = pair.split_once(',')?;
        let i = cap.names.iter().position(|n| n == a)?;
        let j = cap.names.iter().position(|n| n == b)?;
        return Some(e[i][j]);
    }
    if let Some(c) = inner("Q[") {
        return s.conductors.iter().find(|x| x.name == c)?.charge_error;
    }
    if let Some(c) = inner("F[") {
        let e = s
            .conductors
            .iter()
            .find(|x| x.name == c)?
            .force_error_estimate?;
        return Some(if s.per_length { e[0].hypot(e[1]) } else { e[1] });
    }
    if name == "peak_field" {
        return s.peak_field.as_ref()?.error_estimate;
    }
    None
}

/// The line scalars of a line study, named `Z0`, `eps_eff`, `Z_odd`, ...
pub fn line_quantities(ls: &LineStudy) -> Vec<Named> {
    fieldgrid_solver::line::scalars(&ls.line)
        .into_iter()
        .map(|(k, v)| {
            let name = match k.strip_prefix('z') {
                Some(rest) => format!("Z{rest}"),
                None => k.to_string(),
            };
            Named {
                name,
                unit: if k.starts_with("eps") { "" } else { "ohm" }.into(),
                value: v,
                error: ls.errors.iter().find(|e| e.0 == k).map(|e| e.1),
            }
        })
        .collect()
}
