//! `--sensitivity`, `--tolerance` and `--monte-carlo` of `solve` and `impedance`: the
//! derivative of every reported quantity with respect to design parameters, and the spread
//! of every quantity under the parameters' tolerances.
//!
//! Derivatives are central differences of paired solves at p +/- h, the step h from
//! [`fieldgrid_solver::sensitivity::step`] (the bodies move two coarsest cells; a parameter
//! that moves no body steps 1 % of its value); a second pair at p +/- 2h gives each its
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
//! nominal solves when its lattice has their node counts (a line study's two studies each
//! from its own), else from zero; summary.json `perturbed_solves` counts the studies, those
//! started so and their iterations.
//!
//! Invariants: every toleranced parameter gets a derivative; the paired solves use the
//! same settings as the nominal one and stop at the same relative residual whatever they
//! start from (a start changes the iterations, not the accuracy); Monte Carlo samples
//! depend only on the seed, the count and the tolerances.

use super::evaluate::{self, Named, Setup, Solves};
use super::monte_carlo;
use super::monte_carlo_run;
use crate::args::{ImpedanceArgs, SensitivityArgs, SolveArgs};
use crate::design_file::DesignSource;
use crate::error::Failure;
use crate::outdir::{csv_bytes, num, OutDir};
use fieldgrid_solver::line_study::LineWarmStart;
use fieldgrid_solver::{sensitivity, tolerance};
use serde_json::{json, Map, Value};
use std::collections::BTreeMap;

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
    let overrides = super::parameter_overrides(&args.set)?;
    let Some(req) = request(&args.sens, &super::load_design(&args.design, &overrides)?)? else {
        return super::solve::run(args);
    };
    let mut params = super::study_params(&args.opts)?;
    params.solver.monitor = None;
    let setup = Setup {
        design: &args.design,
        base: overrides,
        params,
        opts: &args.opts,
        signals: Vec::new(),
        vacuum_warm_start: None,
    };
    if let Some(code) = shard(&setup, &req, &args.out)? {
        return Ok(code);
    }
    let extra = |src: &DesignSource,
                 sol: &fieldgrid_solver::study::Solution,
                 summary: &mut crate::summary::Summary,
                 out: &OutDir| {
        let nominal = evaluate::study_quantities(summary);
        let start = LineWarmStart {
            design: sol.warm_start.clone(),
            vacuum: None,
        };
        let a = analyse(&setup, src, &nominal, &req, &start)?;
        a.attach(summary, &req.tolerances);
        a.write(out, &req.tolerances)?;
        Ok(a.report(&req.tolerances))
    };
    super::solve::run_with(args, Some(&extra))
}

/// `fieldgrid impedance`, with the sensitivities and tolerances asked for.
pub fn impedance(args: &ImpedanceArgs) -> Result<u8, Failure> {
    let overrides = super::parameter_overrides(&args.set)?;
    let Some(req) = request(&args.sens, &super::load_design(&args.design, &overrides)?)? else {
        return super::impedance::run(args);
    };
    let mut params = super::study_params(&args.opts)?;
    params.solver.monitor = None;
    let setup = Setup {
        design: &args.design,
        base: overrides,
        params,
        opts: &args.opts,
        signals: args.signal.clone(),
        vacuum_warm_start: None,
    };
    if let Some(code) = shard(&setup, &req, &args.out)? {
        return Ok(code);
    }
    let extra = |src: &DesignSource,
                 ls: &fieldgrid_solver::line_study::LineStudy,
                 summary: &mut crate::summary::Summary,
                 out: &OutDir| {
        let mut nominal = evaluate::study_quantities(summary);
        nominal.extend(evaluate::line_quantities(ls));
        let a = analyse(&setup, src, &nominal, &req, &ls.warm_start())?;
        a.attach(summary, &req.tolerances);
        a.write(out, &req.tolerances)?;
        Ok(a.report(&req.tolerances))
    };
    super::impedance::run_with(args, Some(&extra))
}

/// With `--shard`, runs that shard's Monte Carlo samples alone and returns the exit code.
fn shard(setup: &Setup, req: &Request, out: &std::path::Path) -> Result<Option<u8>, Failure> {
    let (Some(shard), Some((count, seed))) = (req.shard, req.monte_carlo) else {
        return Ok(None);
    };
    let def = monte_carlo_run::definition(setup, count, seed, &req.tolerances);
    monte_carlo_run::shard(setup, &def, shard, out).map(Some)
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
    let cell = base.design.domain.cell;
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
/// lattice has their node counts.
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

fn finite(v: f64) -> Value {
    if v.is_finite() {
        json!(v)
    } else {
        Value::Null
    }
}

impl Analysis {
    /// summary.json `sensitivities`: parameter -> quantity -> derivative.
    pub fn sensitivities_json(&self) -> Value {
        self.by_parameter(&self.derivatives)
    }

    /// summary.json `sensitivity_errors`: parameter -> quantity -> error estimate.
    pub fn errors_json(&self) -> Value {
        self.by_parameter(&self.errors)
    }

    /// parameter -> quantity -> value, from one row of values per parameter.
    fn by_parameter(&self, rows: &[Vec<f64>]) -> Value {
        let mut out = Map::new();
        for (name, row) in self.parameters.iter().zip(rows) {
            let row: Map<String, Value> = self
                .quantities
                .iter()
                .zip(row)
                .map(|(q, &d)| (q.name.clone(), finite(d)))
                .collect();
            out.insert(name.clone(), Value::Object(row));
        }
        Value::Object(out)
    }

    /// summary.json `sensitivity_steps`: parameter -> step (design units).
    pub fn steps_json(&self) -> Value {
        Value::Object(
            self.parameters
                .iter()
                .zip(&self.steps)
                .map(|(n, &h)| (n.clone(), json!(h)))
                .collect(),
        )
    }

    /// summary.json `tolerances`, when tolerances were given.
    pub fn tolerances_json(&self, tolerances: &[(String, f64)]) -> Option<Value> {
        if self.spreads.is_empty() {
            return None;
        }
        let mut quantities = Map::new();
        for (q, s) in self.quantities.iter().zip(&self.spreads) {
            let mut v = json!({
                "unit": q.unit,
                "nominal": s.nominal,
                "worst_low": finite(s.low),
                "worst_high": finite(s.high),
                "rss": finite(s.rss),
                "dominant": s.dominant.map(|i| tolerances[i].0.clone()),
            });
            let i = self.quantities.iter().position(|x| x.name == q.name);
            if let Some(Some(st)) = self.vertices.as_ref().zip(i).map(|(v, i)| &v[i]) {
                v["vertices"] = json!({ "count": st.count, "min": st.min, "max": st.max });
            }
            if let Some(mc) = &self.monte_carlo {
                if let Some((_, Some(st))) = i.map(|i| &mc.stats[i]) {
                    v["monte_carlo"] = json!({
                        "count": st.count, "mean": st.mean, "std": st.std,
                        "min": st.min, "max": st.max,
                    });
                }
            }
            quantities.insert(q.name.clone(), v);
        }
        let mut out = json!({
            "method": "linear worst case and root-sum-square from the sensitivities, each widened by its error estimate; \
                       each parameter within +/- its tolerance",
            "parameters": tolerances.iter().map(|(n, t)| (n.clone(), json!(t)))
                .collect::<Map<String, Value>>(),
            "quantities": quantities,
        });
        if let Some(MonteCarlo { count, seed, .. }) = &self.monte_carlo {
            out["monte_carlo"] = json!({ "count": count, "seed": seed,
                "distribution": "uniform within +/- the tolerance" });
        }
        Some(out)
    }

    /// sensitivities.csv: one row per quantity and parameter.
    pub fn sensitivities_csv(&self) -> Vec<u8> {
        let mut rows = Vec::new();
        for (qi, q) in self.quantities.iter().enumerate() {
            for (p, name) in self.parameters.iter().enumerate() {
                let d = self.derivatives[p][qi];
                let e = self.errors[p][qi];
                rows.push(vec![
                    q.name.clone(),
                    q.unit.clone(),
                    name.clone(),
                    num(self.values[p]),
                    num(self.steps[p]),
                    if d.is_finite() { num(d) } else { String::new() },
                    if e.is_finite() { num(e) } else { String::new() },
                ]);
            }
        }
        csv_bytes(
            &[
                "quantity",
                "unit",
                "parameter",
                "parameter value",
                "step",
                "derivative (unit per parameter unit)",
                "error estimate (unit per parameter unit)",
            ],
            rows,
        )
    }

    /// tolerances.csv: one row per quantity.
    pub fn tolerances_csv(&self, tolerances: &[(String, f64)]) -> Vec<u8> {
        let mc = self.monte_carlo.as_ref();
        let rows = self.quantities.iter().enumerate().map(|(i, q)| {
            let s = &self.spreads[i];
            let st = mc.and_then(|m| m.stats[i].1.as_ref());
            let opt = |f: fn(&tolerance::Stats) -> f64| st.map(|s| num(f(s))).unwrap_or_default();
            let corners = self.vertices.as_ref().and_then(|v| v[i].as_ref());
            let corner =
                |f: fn(&tolerance::Stats) -> f64| corners.map(|s| num(f(s))).unwrap_or_default();
            vec![
                q.name.clone(),
                q.unit.clone(),
                num(s.nominal),
                num(s.low),
                num(s.high),
                num(s.rss),
                s.dominant
                    .map(|d| tolerances[d].0.clone())
                    .unwrap_or_default(),
                opt(|s| s.mean),
                opt(|s| s.std),
                opt(|s| s.min),
                opt(|s| s.max),
                corner(|s| s.min),
                corner(|s| s.max),
            ]
        });
        csv_bytes(
            &[
                "quantity",
                "unit",
                "nominal",
                "worst case low",
                "worst case high",
                "rss",
                "dominant parameter",
                "monte carlo mean",
                "monte carlo std",
                "monte carlo min",
                "monte carlo max",
                "vertex min",
                "vertex max",
            ],
            rows,
        )
    }

    /// Writes the CSV files and puts the JSON into `summary`.
    pub fn attach(&self, summary: &mut crate::summary::Summary, tolerances: &[(String, f64)]) {
        summary.sensitivities = Some(self.sensitivities_json());
        summary.sensitivity_steps = Some(self.steps_json());
        summary.sensitivity_errors = Some(self.errors_json());
        summary.tolerances = self.tolerances_json(tolerances);
        summary.perturbed_solves = Some(json!({
            "studies": self.solves.studies,
            "warm_starts": self.solves.warm_starts,
            "iterations": self.solves.iterations,
        }));
        summary.solver.converged &= self.converged;
    }

    /// Writes sensitivities.csv (and tolerances.csv when tolerances were given; the Monte
    /// Carlo samples and their statistics when asked for).
    pub fn write(&self, out: &OutDir, tolerances: &[(String, f64)]) -> Result<(), Failure> {
        out.write("sensitivities.csv", &self.sensitivities_csv())?;
        if !self.spreads.is_empty() {
            out.write("tolerances.csv", &self.tolerances_csv(tolerances))?;
        }
        if let Some(mc) = &self.monte_carlo {
            let header: Vec<&str> = mc.columns.iter().map(String::as_str).collect();
            out.write(
                "monte_carlo.csv",
                &csv_bytes(&header, mc.rows.values().cloned()),
            )?;
            out.write(
                "monte_carlo_statistics.csv",
                &monte_carlo::statistics_csv(&mc.stats),
            )?;
        }
        Ok(())
    }

    /// The lines printed after the report.
    pub fn report(&self, tolerances: &[(String, f64)]) -> String {
        use std::fmt::Write;
        let mut s = String::new();
        let shown = |q: &Named| !q.name.starts_with("F[") || q.value != 0.0;
        let _ = writeln!(
            s,
            "sensitivities (per design unit, +/- estimated error; steps {}):",
            self.parameters
                .iter()
                .zip(&self.steps)
                .map(|(n, h)| format!("{n} {h:.3e}"))
                .collect::<Vec<_>>()
                .join(", ")
        );
        for (qi, q) in self.quantities.iter().enumerate().filter(|(_, q)| shown(q)) {
            let d: Vec<String> = self
                .parameters
                .iter()
                .enumerate()
                .map(|(p, n)| {
                    format!(
                        "d/d{n} {:11.4e} +/- {:.1e}",
                        self.derivatives[p][qi], self.errors[p][qi]
                    )
                })
                .collect();
            let _ = writeln!(s, "  {:>16}  {}", q.name, d.join("  "));
        }
        if !self.spreads.is_empty() {
            let _ = writeln!(
                s,
                "tolerances ({}): worst case (linear), RSS, dominant parameter{}:",
                tolerances
                    .iter()
                    .map(|(n, t)| format!("{n} +/- {t}"))
                    .collect::<Vec<_>>()
                    .join(", "),
                if self.monte_carlo.is_some() {
                    ", Monte Carlo mean and std"
                } else {
                    ""
                }
            );
            for (qi, q) in self.quantities.iter().enumerate().filter(|(_, q)| shown(q)) {
                let sp = &self.spreads[qi];
                let mc = self
                    .monte_carlo
                    .as_ref()
                    .and_then(|m| m.stats[qi].1.as_ref())
                    .map(|st| format!("  mc {:.4e} +/- {:.2e}", st.mean, st.std))
                    .unwrap_or_default();
                let corners = self
                    .vertices
                    .as_ref()
                    .and_then(|v| v[qi].as_ref())
                    .map(|st| format!("  corners {:.4e} .. {:.4e}", st.min, st.max))
                    .unwrap_or_default();
                let _ = writeln!(
                    s,
                    "  {:>16}  {:.4e} .. {:.4e}  rss {:.2e}  {}{mc}{corners}",
                    q.name,
                    sp.low,
                    sp.high,
                    sp.rss,
                    sp.dominant.map(|d| tolerances[d].0.as_str()).unwrap_or("-"),
                );
            }
            let _ = writeln!(
                s,
                "caution: tolerance spreads are first-order estimates from discretised \
                 solves; acceptance follows the applicable standards and licensed \
                 engineering practice."
            );
        }
        s
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn named(name: &str, value: f64) -> Named {
        Named {
            name: name.into(),
            unit: "F/m".into(),
            value,
            error: None,
        }
    }

    #[test]
    fn the_tables_hold_one_row_per_quantity_and_parameter() {
        let a = Analysis {
            parameters: vec!["w".into(), "h".into()],
            values: vec![1.0, 2.0],
            steps: vec![0.01, 0.02],
            quantities: vec![named("C[a,a]", 1e-10), named("energy", 2e-10)],
            derivatives: vec![vec![3e-12, f64::NAN], vec![-1e-12, 2e-12]],
            errors: vec![vec![1e-14, f64::NAN], vec![1e-14, 1e-14]],
            spreads: vec![
                tolerance::spread(1e-10, &[3e-12], &[1e-14], &[0.1]),
                tolerance::spread(2e-10, &[f64::NAN], &[0.0], &[0.1]),
            ],
            monte_carlo: None,
            vertices: None,
            converged: true,
            solves: Solves::default(),
        };
        let csv = String::from_utf8(a.sensitivities_csv()).unwrap();
        assert_eq!(csv.lines().count(), 5, "{csv}");
        let j = a.sensitivities_json();
        assert_eq!(j["w"]["C[a,a]"], json!(3e-12));
        assert_eq!(j["w"]["energy"], Value::Null);
        let t = a.tolerances_json(&[("w".into(), 0.1)]).unwrap();
        assert_eq!(t["quantities"]["C[a,a]"]["dominant"], json!("w"));
        assert_eq!(t["quantities"]["energy"]["rss"], Value::Null);
    }
}
