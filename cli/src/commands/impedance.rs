//! `fieldgrid impedance DESIGN --signal NAME[,NAME] --out DIR`: transmission-line parameters
//! of a planar cross-section.
//!
//! Two studies on the same lattice: the design as drawn (capacitance matrix C) and the design
//! with every permittivity set to 1 (C0). The matrices over the signal conductors, every
//! other conductor grounded, go to [`fieldgrid_solver::line::parameters`]. A symmetry side
//! that every signal touches is unfolded: the line is the design and its mirror image, so
//! each such side doubles the matrices (a half model reports the whole line). Everything the
//! `solve` command writes is written too (for the design as drawn), with the line parameters
//! under `line` in `summary.json` and in `line.csv`.

use super::solve::{study_failure, write_results};
use super::{check_memory, load_design, study_params, with_threads};
use crate::args::ImpedanceArgs;
use crate::error::Failure;
use crate::outdir::{csv_bytes, num, OutDir};
use crate::summary::Summary;
use crate::{EXIT_NOT_CONVERGED, EXIT_OK};
use fieldgrid_solver::design::{Design, Drive, Mode, Shape, Side};
use fieldgrid_solver::line::{self, LineParams};
use fieldgrid_solver::study::{self, Solution, StudyError, StudyParams};
use serde_json::{json, Value};
use std::time::Instant;

/// Runs the command, returning the exit code.
pub fn run(args: &ImpedanceArgs) -> Result<u8, Failure> {
    let src = load_design(&args.design, &super::parameter_overrides(&args.set)?)?;
    let design = &src.design;
    if design.mode != Mode::Planar {
        return Err(Failure::input(format!(
            "{}: `impedance` needs a planar cross-section (mode = \"planar\")",
            args.design.display()
        )));
    }
    check_signals(design, &args.signal)?;
    check_memory(&src, &args.design, args.opts.max_memory)?;
    let params = study_params(&args.opts)?;
    let out = OutDir::prepare(&args.out)?;
    let start = Instant::now();
    let ls = with_threads(args.opts.threads, || {
        line_study(design, &args.signal, &params)
    })?
    .map_err(|e| match e {
        LineStudyError::Study(e) => study_failure(&src, e),
        LineStudyError::Line(e) => {
            Failure::input(format!("--signal {}: {e}", args.signal.join(",")))
        }
    })?;
    let seconds = start.elapsed().as_secs_f64();
    if !args.opts.quiet && std::io::IsTerminal::is_terminal(&std::io::stderr()) {
        eprint!("\r{:60}\r", "");
    }
    let (sol, sol0, lp, errors) = (&ls.solution, &ls.vacuum, &ls.line, &ls.errors);

    let mut warnings = ls.warnings.clone();
    for w in &sol0.warnings {
        if !sol.warnings.contains(w) {
            warnings.push(format!("study with every permittivity 1: {w}"));
        }
    }
    let mut summary = Summary::from_solution(sol, design.depth, seconds, &src.text_hash);
    summary.parameters = crate::summary::parameters(&src);
    summary.warnings.extend(warnings.iter().cloned());
    summary.solver.converged &= sol0.solve.converged;
    summary.solver.solves += sol0.solve.solves;
    summary.solver.iterations = summary.solver.iterations.max(sol0.solve.iterations);
    summary.solver.relative_residual = summary
        .solver
        .relative_residual
        .max(sol0.solve.relative_residual);
    if summary.solver.failure.is_none() {
        summary.solver.failure = sol0.solve.failure.clone();
    }
    summary.line = Some(line_json(&args.signal, &ls.mirrored, lp, errors));
    write_results(&out, sol, &summary, design, false)?;
    out.write("line.csv", &line_csv(lp, errors))?;
    let (potential_png, field_png) =
        crate::pictures::field_maps(&src, sol, false, &args.pictures.render_options());
    out.write_png("potential.png", &potential_png)?;
    out.write_png("field.png", &field_png)?;
    if !args.opts.quiet {
        print!(
            "{}",
            report(&args.signal, &ls.mirrored, lp, errors, &summary, &out)
        );
    }
    if !summary.solver.converged {
        return Ok(EXIT_NOT_CONVERGED);
    }
    Ok(EXIT_OK)
}

/// The two studies of a line and what follows from them.
#[derive(Debug)]
pub struct LineStudy {
    /// The study of the design as drawn.
    pub solution: Solution,
    /// The study with every permittivity 1.
    pub vacuum: Solution,
    /// Line parameters of the signals.
    pub line: LineParams,
    /// Estimated discretisation errors of the scalar parameters, by key (empty without the
    /// error estimate).
    pub errors: Vec<(&'static str, f64)>,
    /// Symmetry sides the line was unfolded across (each doubles every signal conductor).
    pub mirrored: Vec<&'static str>,
    /// Warnings about the line parameters.
    pub warnings: Vec<String>,
}

/// A line study that could not run.
#[derive(Debug)]
pub enum LineStudyError {
    /// One of the two studies failed.
    Study(StudyError),
    /// The matrices do not describe a line.
    Line(line::LineError),
}

/// Runs both studies of a planar design and derives the line parameters of `signals`
/// (fixed-potential conductors of the design, checked by the caller).
pub fn line_study(
    design: &Design,
    signals: &[String],
    params: &StudyParams,
) -> Result<LineStudy, LineStudyError> {
    let solution = study::run(design, params).map_err(LineStudyError::Study)?;
    let vacuum = study::run(&without_dielectrics(design), params).map_err(LineStudyError::Study)?;
    let (mirrored, mut warnings) = mirrors(design, signals);
    let factor = 2f64.powi(mirrored.len() as i32);
    let pick = |sol: &Solution, m: &[Vec<f64>]| {
        let mut c = submatrix(sol, m, signals);
        c.iter_mut().flatten().for_each(|v| *v *= factor);
        c
    };
    let line = line::parameters(
        &pick(&solution, &solution.capacitance.matrix),
        &pick(&vacuum, &vacuum.capacitance.matrix),
    )
    .map_err(LineStudyError::Line)?;
    let errors = match (
        &solution.capacitance.error_model,
        &vacuum.capacitance.error_model,
    ) {
        (Some(m), Some(m0)) => {
            match line::parameters(&pick(&solution, &m.coarse), &pick(&vacuum, &m0.coarse)) {
                Ok(coarse) => {
                    // The more cautious of the two studies' orders.
                    let model = if m0.order < m.order { m0 } else { m };
                    line::scalars(&line)
                        .into_iter()
                        .zip(line::scalars(&coarse))
                        .map(|((k, f), (_, c))| (k, model.estimate(f, c)))
                        .collect()
                }
                Err(_) => Vec::new(),
            }
        }
        _ => Vec::new(),
    };
    warnings.extend(line_warnings(&line));
    Ok(LineStudy {
        solution,
        vacuum,
        line,
        errors,
        mirrored,
        warnings,
    })
}

/// The symmetry sides that every signal touches: the line is the design unfolded across
/// them, each doubling every signal conductor (and so its capacitances). A symmetry side
/// that some signal does not touch mirrors that signal into a second conductor driven in
/// phase; that is said in a warning.
fn mirrors(design: &Design, signals: &[String]) -> (Vec<&'static str>, Vec<String>) {
    let d = &design.domain;
    let tol = 1e-9 * (d.x[1] - d.x[0]).abs().max((d.y[1] - d.y[0]).abs());
    let s = &design.sides;
    let sides = [
        ("left", s.left, 0usize, d.x[0]),
        ("right", s.right, 0, d.x[1]),
        ("bottom", s.bottom, 1, d.y[0]),
        ("top", s.top, 1, d.y[1]),
    ];
    let mut mirrored = Vec::new();
    let mut warnings = Vec::new();
    for (name, side, axis, at) in sides {
        if side != Side::Symmetry {
            continue;
        }
        let touching: Vec<bool> = signals
            .iter()
            .map(|sig| {
                let c = design
                    .conductors
                    .iter()
                    .find(|c| &c.name == sig)
                    .expect("signals checked before the study");
                let (lo, hi) = extent(&c.shape, axis);
                (lo - at).abs() <= tol || (hi - at).abs() <= tol
            })
            .collect();
        if touching.iter().all(|&t| t) {
            mirrored.push(name);
        } else {
            let apart: Vec<&str> = signals
                .iter()
                .zip(&touching)
                .filter(|(_, &t)| !t)
                .map(|(s, _)| s.as_str())
                .collect();
            warnings.push(format!(
                "the symmetry side `{name}` mirrors {} into a second conductor driven in phase: \
                 the results describe the line together with that image",
                apart.join(", ")
            ));
        }
    }
    (mirrored, warnings)
}

/// Extent of a shape along an axis (0: x, 1: y), m.
fn extent(shape: &Shape, axis: usize) -> (f64, f64) {
    let points: Vec<[f64; 2]> = match shape {
        Shape::Rect { x, y, .. } => vec![[x[0], y[0]], [x[1], y[1]]],
        Shape::Circle { center, radius } => vec![
            [center[0] - radius, center[1] - radius],
            [center[0] + radius, center[1] + radius],
        ],
        Shape::Ring { center, outer, .. } => vec![
            [center[0] - outer, center[1] - outer],
            [center[0] + outer, center[1] + outer],
        ],
        Shape::Polygon { outer, .. } => outer.clone(),
        Shape::Polyline(p) => p.clone(),
    };
    points
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), p| {
            (lo.min(p[axis]), hi.max(p[axis]))
        })
}

/// Every signal names a distinct conductor with a fixed potential.
pub fn check_signals(design: &Design, signals: &[String]) -> Result<(), Failure> {
    let names: Vec<&str> = design.conductors.iter().map(|c| c.name.as_str()).collect();
    for (k, s) in signals.iter().enumerate() {
        match design.conductors.iter().find(|c| &c.name == s) {
            None => {
                return Err(Failure::input(format!(
                    "--signal {s}: the design has no conductor of that name (its conductors: {})",
                    if names.is_empty() {
                        "none".to_string()
                    } else {
                        names.join(", ")
                    }
                )))
            }
            Some(c) if c.drive == Drive::Floating => {
                return Err(Failure::input(format!(
                    "--signal {s}: the conductor is floating; a signal needs a fixed potential"
                )))
            }
            Some(_) if signals[..k].contains(s) => {
                return Err(Failure::input(format!("--signal {s}: named twice")))
            }
            Some(_) => {}
        }
    }
    Ok(())
}

/// The design with the background and every dielectric at relative permittivity 1.
pub fn without_dielectrics(design: &Design) -> Design {
    let mut d = design.clone();
    d.background.permittivity = 1.0;
    for m in &mut d.dielectrics {
        m.permittivity = 1.0;
    }
    d
}

/// Rows and columns of the signals in a study's Maxwell matrix `m`.
fn submatrix(sol: &Solution, m: &[Vec<f64>], signals: &[String]) -> Vec<Vec<f64>> {
    let index: Vec<usize> = signals
        .iter()
        .map(|s| {
            sol.capacitance
                .names
                .iter()
                .position(|n| n == s)
                .expect("signals are fixed conductors, checked before the study")
        })
        .collect();
    index
        .iter()
        .map(|&i| index.iter().map(|&j| m[i][j]).collect())
        .collect()
}

fn line_warnings(lp: &LineParams) -> Vec<String> {
    let mut out = Vec::new();
    if let Some(p) = &lp.pair {
        if !p.symmetric {
            out.push(
                "the pair is not symmetric: z_odd and z_even are half the impedance seen by a \
                 differential current (I, -I) and twice that seen by a common current (I, I); \
                 they are not propagation modes (see eps_eff_modes)"
                    .to_string(),
            );
        }
    }
    out
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
    out: &OutDir,
) -> String {
    use std::fmt::Write;
    let mut s = String::new();
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
    for w in &summary.warnings {
        let _ = writeln!(s, "warning: {w}");
    }
    let _ = writeln!(s, "results in {}", out.path().display());
    s
}
