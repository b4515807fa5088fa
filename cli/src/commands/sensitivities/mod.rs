//! `--sensitivity`, `--tolerance` and `--monte-carlo` of `solve` and `impedance`: the
//! derivative of every reported quantity with respect to design parameters, and the spread
//! of every quantity under the parameters' tolerances.
//!
//! Derivatives are central differences of paired solves at p +/- h, the step h from
//! [`fieldgrid_solver::sensitivity::step`] (on a uniform lattice the bodies move two cells;
//! on a graded one, and for a parameter that moves no body, the step is 1 % of the value); a second pair at p +/- 2h gives each its
//! error estimate, which widens the spreads. Spreads are the linear worst case, the RSS
//! and the dominant parameter ([`fieldgrid_solver::tolerance::spread`]); Monte Carlo solves
//! seeded uniform samples ([`fieldgrid_solver::tolerance::samples`]).
//!
//! Output: summary.json `sensitivities` (parameter -> quantity -> derivative, SI per design
//! unit of the parameter; null where a quantity is missing at a perturbed point) with
//! `sensitivity_errors` (the same shape: error estimates) and `sensitivity_steps`
//! (parameter -> step), `tolerances` (quantity -> nominal, worst-case
//! low and high, rss, dominant parameter, `monte_carlo` statistics and, with `--vertices`,
//! the extremes over the corners of the tolerance box);
//! `sensitivities.csv` (one row per quantity and parameter) and `tolerances.csv` (one row
//! per quantity); with `--monte-carlo`, `monte_carlo.csv` (every sample) and
//! `monte_carlo_statistics.csv` ([`super::monte_carlo`]). With `--shard I/K` only that
//! shard's samples are solved, as a part of a sweep ([`super::monte_carlo_run::shard`]).
//!
//! Every solve around the nominal design (paired, Monte Carlo, corner) starts from the
//! nominal solves when its lattice has their node lines (a line study's two studies each
//! from its own), else from zero; summary.json `perturbed_solves` counts the studies, those
//! started so and their iterations.
//!
//! Invariants: every toleranced parameter gets a derivative; the paired solves use the
//! same settings as the nominal one and stop at the same relative residual whatever they
//! start from (a start changes the iterations, not the accuracy); Monte Carlo samples
//! depend only on the seed, the count and the tolerances.

mod tables;

use super::evaluate::{self, Named, Setup, Solves};
use super::monte_carlo;
use super::monte_carlo_run;
use crate::args::{ImpedanceArgs, SensitivityArgs, SetArgs, SolveArgs, SolveOptions};
use crate::design_file::DesignSource;
use crate::error::Failure;
use crate::outdir::OutDir;
use fieldgrid_solver::line_study::LineWarmStart;
use fieldgrid_solver::{sensitivity, tolerance};
use std::collections::BTreeMap;
use std::path::Path;

/// Most Monte Carlo points.
pub const MAX_MONTE_CARLO: usize = monte_carlo::MAX_SAMPLES;

/// The parameters, tolerances and options asked for.
#[derive(Clone, Debug, PartialEq)]
pub struct Request {
    /// Parameters whose derivatives are taken (every toleranced one among them).
    pub parameters: Vec<String>,
    /// (parameter, tolerance in design units).
    pub tolerances: Vec<(String, f64)>,
    /// Monte Carlo points and seed.
    pub monte_carlo: Option<(usize, u64)>,
    /// Solve every corner of the tolerance box.
    pub vertices: bool,
    /// Solve only this shard's Monte Carlo samples (and the nominal design).
    pub shard: Option<super::sweep::Shard>,
}

/// The results.
#[derive(Clone, Debug, PartialEq)]
pub struct Analysis {
    /// Parameter names.
    pub parameters: Vec<String>,
    /// Their nominal values (design units).
    pub values: Vec<f64>,
    /// Their steps (design units).
    pub steps: Vec<f64>,
    /// The nominal quantities.
    pub quantities: Vec<Named>,
    /// `derivatives[p][q]`: dQ/dp, SI per design unit (NaN when missing at a perturbed point).
    pub derivatives: Vec<Vec<f64>>,
    /// `errors[p][q]`: the derivative's error estimate, same units.
    pub errors: Vec<Vec<f64>>,
    /// Per quantity, when tolerances were given.
    pub spreads: Vec<tolerance::Spread>,
    /// The Monte Carlo samples, when asked for.
    pub monte_carlo: Option<MonteCarlo>,
    /// Per quantity, the extremes over the corners of the tolerance box, when asked for.
    pub vertices: Option<Vec<Option<tolerance::Stats>>>,
    /// Whether every solve converged.
    pub converged: bool,
    /// The solves made around the nominal design.
    pub solves: Solves,
}

/// The samples of an unsharded Monte Carlo run.
#[derive(Clone, Debug, PartialEq)]
pub struct MonteCarlo {
    /// Number of samples.
    pub count: usize,
    /// The generator's seed.
    pub seed: u64,
    /// Per quantity (its column, in the order of the nominal quantities), the statistics of
    /// the samples, from `rows`.
    pub stats: Vec<(String, Option<tolerance::Stats>)>,
    /// The columns of the samples table.
    pub columns: Vec<String>,
    /// Its rows, by sample.
    pub rows: BTreeMap<usize, Vec<String>>,
}

/// `fieldgrid solve`, with the sensitivities and tolerances asked for.
pub fn solve(args: &SolveArgs) -> Result<u8, Failure> {
    let (setup, req) = match prepare(
        &args.design,
        &args.set,
        &args.sens,
        &args.opts,
        &[],
        &args.out,
    )? {
        Prepared::Plain => return super::solve::run(args),
        Prepared::Done(code) => return Ok(code),
        Prepared::Analysis(a) => *a,
    };
    let extra = |src: &DesignSource,
                 sol: &fieldgrid_solver::study::Solution,
                 summary: &mut crate::summary::Summary,
                 out: &OutDir| {
        let nominal = evaluate::study_quantities(summary);
        let start = LineWarmStart {
            design: sol.warm_start.clone(),
            vacuum: None,
        };
        attach(&setup, &req, src, &nominal, &start, summary, out)
    };
    super::solve::run_with(args, Some(&extra))
}

/// `fieldgrid impedance`, with the sensitivities and tolerances asked for.
pub fn impedance(args: &ImpedanceArgs) -> Result<u8, Failure> {
    let (setup, req) = match prepare(
        &args.design,
        &args.set,
        &args.sens,
        &args.opts,
        &args.signal,
        &args.out,
    )? {
        Prepared::Plain => return super::impedance::run(args),
        Prepared::Done(code) => return Ok(code),
        Prepared::Analysis(a) => *a,
    };
    let extra = |src: &DesignSource,
                 ls: &fieldgrid_solver::line_study::LineStudy,
                 summary: &mut crate::summary::Summary,
                 out: &OutDir| {
        let mut nominal = evaluate::study_quantities(summary);
        nominal.extend(evaluate::line_quantities(ls));
        attach(&setup, &req, src, &nominal, &ls.warm_start(), summary, out)
    };
    super::impedance::run_with(args, Some(&extra))
}

/// What a command with the sensitivity options goes on to do.
enum Prepared<'a> {
    /// Nothing was asked for: the plain command.
    Plain,
    /// `--shard` with `--monte-carlo`: that shard's samples were solved alone, with this exit
    /// code.
    Done(u8),
    /// The nominal solve, then the analysis around it.
    Analysis(Box<(Setup<'a>, Request)>),
}

/// Reads the request against the design (with the `--set` values) and settles the command's
/// course, running a Monte Carlo shard into `out` at once; `signals` are the line study's
/// signal conductors (empty for `solve`).
fn prepare<'a>(
    design: &'a Path,
    set: &SetArgs,
    sens: &SensitivityArgs,
    opts: &'a SolveOptions,
    signals: &[String],
    out: &Path,
) -> Result<Prepared<'a>, Failure> {
    let overrides = super::parameter_overrides(set)?;
    let Some(req) = request(sens, &super::load_design(design, &overrides)?)? else {
        return Ok(Prepared::Plain);
    };
    let mut params = super::study_params(opts)?;
    params.solver.monitor = None;
    let setup = Setup {
        design,
        base: overrides,
        params,
        opts,
        signals: signals.to_vec(),
        vacuum_warm_start: None,
    };
    if let (Some(shard), Some((count, seed))) = (req.shard, req.monte_carlo) {
        let def = monte_carlo_run::definition(&setup, count, seed, &req.tolerances);
        return monte_carlo_run::shard(&setup, &def, shard, out).map(Prepared::Done);
    }
    Ok(Prepared::Analysis(Box::new((setup, req))))
}

/// The analysis around the nominal solve: added to the summary, written beside it, and its
/// report returned for printing.
fn attach(
    setup: &Setup,
    req: &Request,
    src: &DesignSource,
    nominal: &[Named],
    start: &LineWarmStart,
    summary: &mut crate::summary::Summary,
    out: &OutDir,
) -> Result<String, Failure> {
    let a = analyse(setup, src, nominal, req, start)?;
    a.attach(summary, &req.tolerances);
    a.write(out, &req.tolerances)?;
    Ok(a.report(&req.tolerances))
}

/// Checks the options against the design: `None` when nothing was asked for.
pub fn request(args: &SensitivityArgs, src: &DesignSource) -> Result<Option<Request>, Failure> {
    let known = |name: &str, what: &str| -> Result<(), Failure> {
        if src.parameters.iter().any(|p| p.0 == name) {
            return Ok(());
        }
        let names: Vec<&str> = src.parameters.iter().map(|p| p.0.as_str()).collect();
        Err(Failure::input(format!(
            "{what} {name}: the design has no parameter of that name (its parameters: {})",
            if names.is_empty() {
                "none".to_string()
            } else {
                names.join(", ")
            }
        )))
    };
    if args.shard.is_some() && args.monte_carlo.is_none() {
        return Err(Failure::input(
            "--shard divides the samples of --monte-carlo N between runs: give --monte-carlo \
             N (and its --seed) too",
        ));
    }
    let mut tolerances: Vec<(String, f64)> = src.tolerances.clone();
    for t in &args.tolerance {
        let (name, value) = t.split_once('=').ok_or_else(|| {
            Failure::input(format!(
                "--tolerance {t}: write --tolerance NAME=VALUE, for example w=0.025"
            ))
        })?;
        let name = name.trim();
        let v: f64 = value
            .trim()
            .parse()
            .ok()
            .filter(|v: &f64| v.is_finite() && *v > 0.0)
            .ok_or_else(|| {
                Failure::input(format!(
                    "--tolerance {t}: `{}` is not a positive number",
                    value.trim()
                ))
            })?;
        // The command line replaces the design file's value of the same parameter.
        tolerances.retain(|x| x.0 != name);
        tolerances.push((name.to_string(), v));
    }
    for (name, _) in &tolerances {
        known(name, "--tolerance")?;
    }
    let mut parameters: Vec<String> = match &args.sensitivity {
        Some(list) if list.is_empty() => src.parameters.iter().map(|p| p.0.clone()).collect(),
        Some(list) => {
            for n in list {
                known(n, "--sensitivity")?;
            }
            list.clone()
        }
        None => Vec::new(),
    };
    // Tolerances from the design file alone ask for nothing: the command-line options do.
    let asked = args.sensitivity.is_some() || !args.tolerance.is_empty();
    if args.monte_carlo.is_some() && !asked && src.tolerances.is_empty() {
        return Err(Failure::input(
            "--monte-carlo needs tolerances: give --tolerance NAME=VALUE (or [tolerances] \
             in the design)",
        ));
    }
    if !asked && args.monte_carlo.is_none() && !args.vertices {
        return Ok(None);
    }
    if args.vertices && tolerances.is_empty() {
        return Err(Failure::input(
            "--vertices needs tolerances: give --tolerance NAME=VALUE (or [tolerances] in \
             the design)",
        ));
    }
    if args.vertices && tolerances.len() > tolerance::MAX_VERTEX_PARAMETERS {
        return Err(Failure::input(format!(
            "--vertices: {} toleranced parameters have {} corners; at most {} parameters \
             (use --monte-carlo for more)",
            tolerances.len(),
            1u64 << tolerances.len().min(63),
            tolerance::MAX_VERTEX_PARAMETERS
        )));
    }
    for (name, _) in &tolerances {
        if !parameters.contains(name) {
            parameters.push(name.clone());
        }
    }
    if parameters.is_empty() {
        return Err(Failure::input(format!(
            "{}: --sensitivity needs design parameters, and the design has none",
            src.file
        )));
    }
    let monte_carlo = match args.monte_carlo {
        None => None,
        Some(n) if (1..=MAX_MONTE_CARLO).contains(&n) => {
            if tolerances.is_empty() {
                return Err(Failure::input(
                    "--monte-carlo needs tolerances: give --tolerance NAME=VALUE",
                ));
            }
            Some((n, args.seed))
        }
        Some(n) => {
            return Err(Failure::input(format!(
                "--monte-carlo {n}: give 1 to {MAX_MONTE_CARLO} points"
            )))
        }
    };
    let shard = match &args.shard {
        None => None,
        Some(_) if args.sensitivity.is_some() || args.vertices => {
            return Err(Failure::input(
                "--shard solves one shard's Monte Carlo samples only: take --sensitivity and \
                 --vertices in a run without --shard",
            ))
        }
        Some(s) => Some(super::sweep::Shard::parse(s).map_err(Failure::input)?),
    };
    Ok(Some(Request {
        parameters,
        tolerances,
        monte_carlo,
        vertices: args.vertices,
        shard,
    }))
}

/// The step of each parameter at `values` (design units): the design is read at the values
/// and at each parameter nudged by 0.1 %, and the bodies' movement measured.
pub fn steps(setup: &Setup, names: &[String], values: &[f64]) -> Result<Vec<f64>, Failure> {
    let at: Vec<(String, f64)> = names.iter().cloned().zip(values.iter().copied()).collect();
    let read = |over: &[(String, f64)]| {
        let mut o = setup.base.clone();
        o.extend(over.iter().cloned());
        super::load_design(setup.design, &o)
    };
    let base = read(&at)?;
    // A graded lattice lays its node lines on the bodies' edges and moves them with the
    // bodies, so no cell size bounds the step from below there (0: a relative step).
    let cell = match base.design.lattice {
        fieldgrid_solver::design::Lattice::Uniform => base.design.domain.cell,
        _ => 0.0,
    };
    let mut out = Vec::new();
    for (i, &v) in values.iter().enumerate() {
        let nudge = 1e-3 * if v != 0.0 { v.abs() } else { 1.0 };
        let mut moved = at.clone();
        moved[i].1 = v + nudge;
        // A nudge the design refuses (a shape leaving the domain) is tried the other way.
        let other = read(&moved).or_else(|_| {
            moved[i].1 = v - nudge;
            read(&moved)
        })?;
        let per_unit = sensitivity::displacement(&base.design, &other.design)
            .map(|d| d / nudge)
            .unwrap_or(0.0);
        out.push(sensitivity::step(v, per_unit, cell));
    }
    Ok(out)
}

/// Runs the paired solves (and the Monte Carlo points) around the nominal design `src`
/// whose quantities are `nominal`, each started from the nominal solves `start` when its
/// lattice has their node lines.
pub fn analyse(
    setup: &Setup,
    src: &DesignSource,
    nominal: &[Named],
    req: &Request,
    start: &LineWarmStart,
) -> Result<Analysis, Failure> {
    let values: Vec<f64> = req
        .parameters
        .iter()
        .map(|n| {
            src.parameters
                .iter()
                .find(|p| &p.0 == n)
                .map(|p| p.1)
                .expect("checked by request")
        })
        .collect();
    let steps = steps(setup, &req.parameters, &values)?;
    let mut converged = true;
    let mut solves = Solves::default();
    let warm = setup.started_from(start);
    let mut solve_at = |over: Vec<(String, f64)>| -> Result<(Vec<Named>, bool), Failure> {
        let ev = evaluate::evaluate(&warm, &over)?;
        converged &= ev.converged();
        solves.count(&ev, start);
        let ok = ev.converged();
        Ok((ev.quantities, ok))
    };
    let pick = |list: &[Named]| evaluate::pick(nominal, list);
    let mut derivatives = Vec::new();
    let mut errors = Vec::new();
    for (i, name) in req.parameters.iter().enumerate() {
        let mut difference = |h: f64| -> Result<Vec<f64>, Failure> {
            let (up, down) = (
                sensitivity::stepped(values[i], h),
                sensitivity::stepped(values[i], -h),
            );
            let plus = pick(&solve_at(vec![(name.clone(), up)])?.0);
            let minus = pick(&solve_at(vec![(name.clone(), down)])?.0);
            Ok(sensitivity::central(&plus, &minus, 0.5 * (up - down)))
        };
        let d1 = difference(steps[i])?;
        let d2 = difference(2.0 * steps[i])?;
        let (d, e): (Vec<f64>, Vec<f64>) = d1
            .iter()
            .zip(&d2)
            .map(|(&a, &b)| sensitivity::with_error(a, b))
            .unzip();
        derivatives.push(d);
        errors.push(e);
    }
    let tol_index: Vec<(usize, f64)> = req
        .tolerances
        .iter()
        .map(|(n, t)| {
            (
                req.parameters.iter().position(|p| p == n).expect("added"),
                *t,
            )
        })
        .collect();
    let spreads = if tol_index.is_empty() {
        Vec::new()
    } else {
        nominal
            .iter()
            .enumerate()
            .map(|(q, named)| {
                let d: Vec<f64> = tol_index.iter().map(|&(p, _)| derivatives[p][q]).collect();
                let e: Vec<f64> = tol_index.iter().map(|&(p, _)| errors[p][q]).collect();
                let t: Vec<f64> = tol_index.iter().map(|&(_, t)| t).collect();
                tolerance::spread(named.value, &d, &e, &t)
            })
            .collect()
    };
    let monte_carlo = match req.monte_carlo {
        None => None,
        Some((count, seed)) => {
            let def = monte_carlo_run::definition(setup, count, seed, &req.tolerances);
            let centre = monte_carlo_run::centre(&def, src);
            let mut rows = BTreeMap::new();
            for k in 0..count {
                let point = monte_carlo_run::point(&def, &centre, k);
                let (list, ok) = solve_at(monte_carlo_run::overrides(&def, &point))?;
                rows.insert(k, monte_carlo::row(k, &point, &pick(&list), ok));
            }
            let columns = monte_carlo_run::columns(&def, nominal);
            let stats = monte_carlo::statistics(&columns, def.tolerances.len(), rows.values());
            Some(MonteCarlo {
                count,
                seed,
                stats,
                columns,
                rows,
            })
        }
    };
    let vertices = if req.vertices {
        let centre: Vec<f64> = tol_index.iter().map(|&(p, _)| values[p]).collect();
        let tol: Vec<f64> = tol_index.iter().map(|&(_, t)| t).collect();
        let mut columns = vec![Vec::new(); nominal.len()];
        for corner in tolerance::vertices(&centre, &tol) {
            let over = tol_index
                .iter()
                .zip(&corner)
                .map(|(&(p, _), &v)| (req.parameters[p].clone(), sensitivity::stepped(v, 0.0)))
                .collect();
            for (c, v) in columns.iter_mut().zip(pick(&solve_at(over)?.0)) {
                if v.is_finite() {
                    c.push(v);
                }
            }
        }
        Some(columns.iter().map(|c| tolerance::stats(c)).collect())
    } else {
        None
    };
    Ok(Analysis {
        vertices,
        parameters: req.parameters.clone(),
        values,
        steps,
        quantities: nominal.to_vec(),
        derivatives,
        errors,
        spreads,
        monte_carlo,
        converged,
        solves,
    })
}
