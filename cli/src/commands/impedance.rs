//! `fieldgrid impedance DESIGN --signal NAME[,NAME] --out DIR`: transmission-line parameters
//! of a planar cross-section.
//!
//! The line study itself (two studies, unfolding across symmetry sides, error estimates) is
//! [`fieldgrid_solver::line_study`]; this command checks the arguments, writes everything
//! the `solve` command writes (for the design as drawn), the line parameters under `line` in
//! `summary.json` and in `line.csv`, and prints the table.

use super::solve::{study_failure, write_results};
use super::{check_memory, load_design, study_params, with_threads};
use crate::args::{ImpedanceArgs, SolveOptions};
use crate::design_file::DesignSource;
use crate::error::Failure;
use crate::outdir::{csv_bytes, num, OutDir};
use crate::summary::Summary;
use crate::{EXIT_NOT_CONVERGED, EXIT_OK};
use fieldgrid_solver::design::{Design, Mode};
use fieldgrid_solver::line::{self, LineParams};
use fieldgrid_solver::line_study::{self, LineStudy, LineStudyError, SignalError};
use fieldgrid_solver::plan::Plan;
use fieldgrid_solver::study::StudyParams;
use fieldgrid_solver::warning::Warning;
use serde_json::{json, Value};
use std::time::Instant;

/// More results computed around the nominal line study (sensitivities, tolerances): given
/// the design as read and the study (which keeps its solves, to start nearby solves from),
/// it adds to the summary and writes its own files into
/// the results directory before the summary is written, and returns the lines to print after
/// the report.
pub type Extra<'a> = &'a dyn Fn(
    &crate::design_file::DesignSource,
    &line_study::LineStudy,
    &mut Summary,
    &OutDir,
) -> Result<String, Failure>;

/// Runs the command, returning the exit code.
pub fn run(args: &ImpedanceArgs) -> Result<u8, Failure> {
    run_with(args, None)
}

/// Runs the command with `extra` results, returning the exit code.
pub fn run_with(args: &ImpedanceArgs, extra: Option<Extra>) -> Result<u8, Failure> {
    let mut src = load_design(&args.design, &super::parameter_overrides(&args.set)?)?;
    let accuracy = crate::accuracy::target(&mut src, &args.opts)?;
    let (mut params, plan) = prepare(&src, &args.signal, &args.opts)?;
    let progress = crate::progress::Progress::new(args.opts.quiet);
    params.stages = progress.stages(params.stages.take());
    params.solver.monitor = progress.iterations();
    params.keep_warm_start = extra.is_some();
    let mut out = OutDir::prepare(&args.out)?;
    let solved = match accuracy {
        Some(rel) => {
            study_accurate(&src, &args.signal, &params, &args.opts, rel).map(|(s, i)| (s, Some(i)))
        }
        None => study(&src, &plan, &args.signal, &params, args.opts.threads).map(|s| (s, None)),
    };
    progress.finish();
    let (
        LineSolved {
            study: ls,
            mut summary,
        },
        accuracy,
    ) = solved?;
    let warnings = line_warnings(&ls, &args.signal);
    let extra_text = match extra {
        Some(f) => Some(f(&src, &ls, &mut summary, &out)?),
        None => None,
    };
    write_line_results(&out, &src, &ls, &summary, &args.pictures)?;
    out.commit()?;
    if !args.opts.quiet {
        print!(
            "{}",
            report(
                &args.signal,
                &ls.mirrored,
                &ls.line,
                &ls.errors,
                &summary,
                &warnings,
                &out
            )
        );
        if let Some(info) = &accuracy {
            print!("{}", crate::accuracy::report(info));
        }
        if let Some(text) = &extra_text {
            print!("{text}");
        }
    }
    if !summary.solver.converged || accuracy.as_ref().is_some_and(|i| !i.met()) {
        return Ok(EXIT_NOT_CONVERGED);
    }
    Ok(EXIT_OK)
}

/// A finished line study and its summary ([`line_summary`]).
pub struct LineSolved {
    /// Both studies and the line parameters.
    pub study: LineStudy,
    /// What summary.json holds.
    pub summary: Summary,
}

/// Checks that the design is planar and the signals name fixed conductors, then the study's
/// settings and its plan's memory (as [`super::solve::prepare`]).
pub fn prepare(
    src: &DesignSource,
    signals: &[String],
    opts: &SolveOptions,
) -> Result<(StudyParams, Plan), Failure> {
    let design = &src.design;
    if design.mode != Mode::Planar {
        return Err(Failure::input(format!(
            "{}: `impedance` needs a planar cross-section (mode = \"planar\")",
            src.file
        )));
    }
    check_signals(design, signals)?;
    let params = study_params(opts)?;
    let (plan, _) = check_memory(src, line_study::plan(design, &params), opts.max_memory, 0.0)?;
    Ok((params, plan))
}

/// Runs a prepared line study on `threads` worker threads and builds its summary.
pub fn study(
    src: &DesignSource,
    plan: &Plan,
    signals: &[String],
    params: &StudyParams,
    threads: Option<usize>,
) -> Result<LineSolved, Failure> {
    let start = Instant::now();
    let ls = with_threads(threads, || {
        line_study::run_planned(&src.design, plan, signals, params)
    })?
    .map_err(|e| line_failure(src, signals, e))?;
    let seconds = start.elapsed().as_secs_f64();
    let summary = line_summary(src, &ls, signals, seconds);
    Ok(LineSolved { study: ls, summary })
}

/// Runs a line study refined to the relative accuracy `rel` of its line parameters, on the
/// options' threads and under their memory limit, and builds its summary (with the
/// `accuracy` object, and the warning when the target was not met).
pub fn study_accurate(
    src: &DesignSource,
    signals: &[String],
    params: &StudyParams,
    opts: &SolveOptions,
    rel: f64,
) -> Result<(LineSolved, fieldgrid_solver::accuracy::Info), Failure> {
    use fieldgrid_solver::accuracy::{self, AccuracyError};
    let start = Instant::now();
    let acc = crate::accuracy::params(src, opts, rel);
    let (mut ls, info) = with_threads(opts.threads, || {
        accuracy::solve_line(&src.design, signals, params, &acc)
    })?
    .map_err(|e| match e {
        AccuracyError::Line(e) => line_failure(src, signals, e),
        e => super::solve::accuracy_failure(src, e),
    })?;
    ls.warnings.extend(info.warnings());
    let seconds = start.elapsed().as_secs_f64();
    let mut summary = line_summary(src, &ls, signals, seconds);
    summary.accuracy = Some(crate::accuracy::summary(&info));
    Ok((LineSolved { study: ls, summary }, info))
}

/// The summary of a line study: the design's own study, the vacuum study's solver record
/// and warnings folded in, and the line parameters under `line`.
pub fn line_summary(
    src: &crate::design_file::DesignSource,
    ls: &line_study::LineStudy,
    signals: &[String],
    seconds: f64,
) -> Summary {
    let (sol, sol0, lp, errors) = (&ls.solution, &ls.vacuum, &ls.line, &ls.errors);
    let design = &src.design;
    let mut summary = Summary::from_solution(sol, design.depth, seconds, &src.text_hash);
    summary.parameters = crate::summary::parameters(src);
    summary.warnings.clear();
    summary.warning_details.clear();
    line_warnings(ls, signals)
        .iter()
        .for_each(|w| summary.warn(w));
    summary.solver.converged &= sol0.solve.converged;
    summary.solver.solves += sol0.solve.solves;
    summary.solver.iterations = summary.solver.iterations.max(sol0.solve.iterations);
    summary.solver.relative_residual = summary
        .solver
        .relative_residual
        .max(sol0.solve.relative_residual);
    if summary.solver.failure.is_none() {
        summary.solver.failure = sol0
            .solve
            .failure
            .as_ref()
            .map(crate::wording::warnings::solve_failure);
    }
    summary.line = Some(line_json(signals, &ls.mirrored, lp, errors));
    summary
}

/// The warnings of a line study about what it reports: capacitance entries between signals
/// only, the vacuum study's where they say something new, and the line's own diagnoses only
/// from converged numbers.
pub fn line_warnings(ls: &line_study::LineStudy, signals: &[String]) -> Vec<Warning> {
    let (sol, sol0) = (&ls.solution, &ls.vacuum);
    let reported = |w: &Warning| match w {
        Warning::CapacitanceError { row, column, .. } => {
            signals.contains(row) && signals.contains(column)
        }
        _ => true,
    };
    let mut warnings: Vec<Warning> = sol
        .warnings
        .iter()
        .filter(|w| reported(w))
        .cloned()
        .collect();
    for w in sol0.warnings.iter().filter(|w| reported(w)) {
        // The same sentence as the design's own study says nothing new.
        let said = crate::wording::warning(w);
        if !sol
            .warnings
            .iter()
            .any(|x| crate::wording::warning(x) == said)
        {
            warnings.push(Warning::VacuumStudy(Box::new(w.clone())));
        }
    }
    if sol.solve.converged && sol0.solve.converged {
        warnings.extend(ls.warnings.iter().cloned());
    }
    warnings
}

/// Writes the files of a line study (everything `solve` writes for the design as drawn,
/// and line.csv) into `out`, with `summary` as summary.json.
pub fn write_line_results(
    out: &OutDir,
    src: &crate::design_file::DesignSource,
    ls: &line_study::LineStudy,
    summary: &Summary,
    pictures: &crate::args::PictureArgs,
) -> Result<(), Failure> {
    write_results(out, &ls.solution, summary, &src.design, false)?;
    out.write("line.csv", &line_csv(&ls.line, &ls.errors))?;
    let (potential_png, field_png) =
        crate::pictures::field_maps(src, &ls.solution, false, &pictures.render_options(src));
    out.write_png("potential.png", &potential_png)?;
    out.write_png("field.png", &field_png)?;
    if let Some(img) = crate::pictures::margin_map(src, &ls.solution, &pictures.render_options(src))
    {
        out.write_png("margin.png", &img)?;
    }
    Ok(())
}

/// Every signal names a distinct conductor with a fixed potential; the message for the user
/// when one does not.
pub fn check_signals(design: &Design, signals: &[String]) -> Result<(), Failure> {
    line_study::check_signals(design, signals).map_err(|e| signal_failure(design, signals, &e))
}

/// Maps a line study's failure to the user's message.
pub fn line_failure(
    src: &crate::design_file::DesignSource,
    signals: &[String],
    e: LineStudyError,
) -> Failure {
    match e {
        LineStudyError::Study(e) => study_failure(src, e),
        LineStudyError::Signals(e) => signal_failure(&src.design, signals, &e),
        e => Failure::input(format!(
            "--signal {}: {}",
            signals.join(","),
            crate::wording::line_study(&e)
        )),
    }
}

fn signal_failure(design: &Design, signals: &[String], e: &SignalError) -> Failure {
    let message = match e {
        SignalError::Unknown(s) => {
            let names: Vec<&str> = design.conductors.iter().map(|c| c.name.as_str()).collect();
            format!(
                "--signal {s}: the design has no conductor of that name (its conductors: {})",
                if names.is_empty() {
                    "none".to_string()
                } else {
                    names.join(", ")
                }
            )
        }
        SignalError::Floating(s) => {
            format!("--signal {s}: the conductor is floating; a signal needs a fixed potential")
        }
        SignalError::Repeated(s) => format!("--signal {s}: named twice"),
        other => format!(
            "--signal {}: {}",
            signals.join(","),
            crate::wording::signal(other)
        ),
    };
    Failure::input(message)
}

fn line_json(
    signals: &[String],
    mirrored: &[&str],
    lp: &LineParams,
    errors: &[(&str, f64)],
) -> Value {
    let mut v = json!({
        "signals": signals,
        "unfolded_across": mirrored,
        "c": lp.c,
        "c0": lp.c0,
        "l": lp.l,
        "z": lp.z,
        "eps_eff_modes": lp.eps_eff_modes,
        "units": { "c": "F/m", "l": "H/m", "z": "ohm" },
    });
    let obj = v.as_object_mut().expect("a JSON object");
    for (k, x) in line::scalars(lp) {
        obj.insert(k.to_string(), json!(x));
    }
    if let Some(p) = &lp.pair {
        obj.insert("symmetric".into(), json!(p.symmetric));
    }
    if !errors.is_empty() {
        let e: serde_json::Map<String, Value> = errors
            .iter()
            .map(|(k, x)| (k.to_string(), json!(x)))
            .collect();
        obj.insert("error_estimate".into(), Value::Object(e));
    }
    v
}

fn line_csv(lp: &LineParams, errors: &[(&str, f64)]) -> Vec<u8> {
    let unit = |k: &str| if k.starts_with("eps") { "" } else { "ohm" };
    csv_bytes(
        &["quantity", "value", "error estimate", "unit"],
        line::scalars(lp).into_iter().map(|(k, v)| {
            let e = errors.iter().find(|e| e.0 == k).map(|e| num(e.1));
            vec![
                k.to_string(),
                num(v),
                e.unwrap_or_default(),
                unit(k).to_string(),
            ]
        }),
    )
}

/// The short table printed after the studies.
fn report(
    signals: &[String],
    mirrored: &[&str],
    lp: &LineParams,
    errors: &[(&str, f64)],
    summary: &Summary,
    warnings: &[Warning],
    out: &OutDir,
) -> String {
    use std::fmt::Write;
    let mut s = String::new();
    let lines = crate::warning::report_lines(warnings);
    // A failure to converge is said first: every number below it is unreliable.
    let (first, rest) = match summary.solver.converged {
        true => (&[][..], &lines[..]),
        false => lines.split_at(lines.len().min(1)),
    };
    for w in first {
        let _ = writeln!(s, "{w}: the numbers below are not reliable");
    }
    let _ = writeln!(
        s,
        "line parameters of {} ({} x {} nodes, {} solves in {:.2} s):",
        signals.join(", "),
        summary.grid.nx,
        summary.grid.ny,
        summary.solver.solves,
        summary.solver.seconds
    );
    if !mirrored.is_empty() {
        let _ = writeln!(
            s,
            "  (the whole line: the design unfolded across its symmetry side {})",
            mirrored.join(" and ")
        );
    }
    let err = |k: &str| {
        errors
            .iter()
            .find(|e| e.0 == k)
            .map(|e| format!("  (+/- {:.2e})", e.1))
            .unwrap_or_default()
    };
    let label = |k: &'static str| match k {
        "z0" => "characteristic impedance",
        "eps_eff" => "effective permittivity",
        "z_odd" => "odd-mode impedance",
        "z_even" => "even-mode impedance",
        "z_diff" => "differential impedance",
        "z_common" => "common-mode impedance",
        "eps_eff_odd" => "odd-mode effective permittivity",
        "eps_eff_even" => "even-mode effective permittivity",
        _ => k,
    };
    for (k, v) in line::scalars(lp) {
        let unit = if k.starts_with("eps") { "" } else { " ohm" };
        let _ = writeln!(s, "  {:34} {v:10.4}{unit}{}", label(k), err(k));
    }
    let matrix = |s: &mut String, name: &str, m: &[Vec<f64>], unit: &str| {
        let _ = writeln!(s, "  {name} ({unit}):");
        for (i, row) in m.iter().enumerate() {
            let r: Vec<String> = row.iter().map(|v| format!("{v:12.4e}")).collect();
            let _ = writeln!(s, "    {:>12} {}", signals[i], r.join(" "));
        }
    };
    matrix(&mut s, "capacitance C", &lp.c, "F/m");
    matrix(
        &mut s,
        "capacitance C0, every permittivity 1",
        &lp.c0,
        "F/m",
    );
    matrix(&mut s, "inductance L", &lp.l, "H/m");
    if signals.len() > 1 {
        matrix(&mut s, "characteristic impedance Z", &lp.z, "ohm");
    }
    for w in rest {
        let _ = writeln!(s, "{w}");
    }
    let _ = writeln!(s, "results in {}", out.path().display());
    s
}
