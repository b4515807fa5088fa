//! `fieldgrid compare BASE NEW`: the change between two revisions, quantity by quantity.
//!
//! BASE and NEW are each a design file (solved now, with the common solve options), a
//! `summary.json` written by `solve`, or a results directory holding one. Both become a
//! [`Summary`]; the compared quantities are every capacitance entry `C[a,b]`, every
//! conductor's charge `Q[a]` and force `F[a]` (planar: its magnitude; axisymmetric: along
//! the axis), the potential `V[a]` of every floating conductor, the energy and the peak
//! field. A quantity present on one side only is reported and counts as a change.
//!
//! Invariants: capacitance entries and charges are compared by magnitude (a coupling, negative
//! in the Maxwell matrix, that grows reads as growth: change |new| - |base|), other quantities
//! as signed values; a sign change counts as the whole difference. The relative change is the
//! change over |base| (zero when both are zero, infinite when only the base is zero). A
//! quantity is beyond tolerance when |relative change| > `--rel-tol` and |change| exceeds the
//! `--abs-tol` of its unit (when given); the net charge of a floating conductor, zero by
//! definition, is never beyond tolerance. With `--out`, and both sides design files over the
//! same domain, the picture `field_change.png` maps |E|(NEW) - |E|(BASE) on NEW's grid
//! (BASE's field carried onto it bilinearly when the grid lines differ). Exit 0: nothing
//! beyond tolerance; 1: something is; 2: bad input; 3: a solve (now, or recorded in a
//! summary) did not converge.
//!
//! This file reads the two sides and runs the command; `changes` names a summary's
//! quantities and judges each change against the tolerances, `picture` draws the change in
//! field magnitude, `report` writes `compare.csv`, `compare.json` and the printed table.

mod changes;
mod picture;
mod report;

use super::{check_memory, load_design, study_params, with_threads};
use crate::args::CompareArgs;
use crate::design_file::DesignSource;
use crate::error::Failure;
use crate::outdir::OutDir;
use crate::summary::{Summary, VERSION};
use crate::{EXIT_CHANGED, EXIT_NOT_CONVERGED, EXIT_OK};
use changes::{changes, parse_abs_tol, Tolerance};
pub use changes::{quantities, Change, Kind, Quantity};
use fieldgrid_solver::study::{self, Solution};
use picture::change_picture;
use report::{render_table, write_outputs};
use std::path::{Path, PathBuf};
use std::time::Instant;

/// One side of the comparison.
pub struct Revision {
    /// The path as given.
    pub path: PathBuf,
    /// Its results.
    pub summary: Summary,
    /// The solution and its design, when the input was a design file (for the change
    /// picture).
    pub solution: Option<(Solution, DesignSource)>,
}

/// What kind of file an input is.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum InputKind {
    /// A design file (TOML).
    Design,
    /// A summary.json.
    Summary,
}

/// Decides whether a path is a summary (a `.json` file, a directory with `summary.json`, or
/// a file whose text opens with `{`) or a design.
pub fn classify(path: &Path) -> Result<(InputKind, PathBuf), Failure> {
    if path.is_dir() {
        let s = path.join("summary.json");
        if s.is_file() {
            return Ok((InputKind::Summary, s));
        }
        return Err(Failure::input(format!(
            "{}: a directory without summary.json (give a design file, a summary.json, or a \
             results directory of `fieldgrid solve`)",
            path.display()
        )));
    }
    let ext = path
        .extension()
        .map(|e| e.to_string_lossy().to_ascii_lowercase());
    match ext.as_deref() {
        Some("json") => Ok((InputKind::Summary, path.to_path_buf())),
        Some("toml") => Ok((InputKind::Design, path.to_path_buf())),
        _ => {
            let text =
                super::read_limited(path, super::MAX_DESIGN_BYTES.max(super::MAX_RESULT_BYTES))
                    .map_err(|e| Failure::input(format!("{}: cannot read: {e}", path.display())))?;
            if text.trim_start().starts_with('{') {
                Ok((InputKind::Summary, path.to_path_buf()))
            } else {
                Ok((InputKind::Design, path.to_path_buf()))
            }
        }
    }
}

/// Reads a summary.json.
pub fn read_summary(path: &Path) -> Result<Summary, Failure> {
    let text = super::read_limited(path, super::MAX_RESULT_BYTES)
        .map_err(|e| Failure::input(format!("{}: cannot read: {e}", path.display())))?;
    let s: Summary = serde_json::from_str(&text).map_err(|e| {
        Failure::input(format!(
            "{}: not a fieldgrid summary.json: {e}",
            path.display()
        ))
    })?;
    if s.version != VERSION {
        return Err(Failure::input(format!(
            "{}: summary version {} is not supported (this fieldgrid reads version {VERSION})",
            path.display(),
            s.version
        )));
    }
    let n = s.capacitance.names.len();
    if s.capacitance.matrix.len() != n || s.capacitance.matrix.iter().any(|r| r.len() != n) {
        return Err(Failure::input(format!(
            "{}: capacitance.matrix is not {n} x {n} (one row and column per name)",
            path.display()
        )));
    }
    // Changes are matched by name: a name given twice would pair the wrong entries.
    let names = [
        ("capacitance.names", s.capacitance.names.clone()),
        (
            "conductors",
            s.conductors.iter().map(|c| c.name.clone()).collect(),
        ),
    ];
    for (key, list) in names {
        let mut seen = std::collections::HashSet::new();
        if let Some(d) = list.iter().find(|n| !seen.insert(n.as_str())) {
            return Err(Failure::input(format!(
                "{}: {key} names `{d}` twice; changes are matched by name, so names must be \
                 unique",
                path.display()
            )));
        }
    }
    Ok(s)
}

/// Loads one side: reads a summary, or reads and solves a design.
fn load(path: &Path, args: &CompareArgs, role: &str) -> Result<Revision, Failure> {
    let (kind, file) = classify(path)?;
    match kind {
        InputKind::Summary => Ok(Revision {
            path: path.to_path_buf(),
            summary: read_summary(&file)?,
            solution: None,
        }),
        InputKind::Design => {
            let mut src = load_design(&file, &[])?;
            let accuracy = crate::accuracy::target(&mut src, &args.opts)?;
            let mut params = study_params(&args.opts)?;
            let progress = crate::progress::Progress::new(args.opts.quiet)
                .labelled(&format!("{role} {}", file.display()));
            params.stages = progress.stages(params.stages.take());
            params.solver.monitor = progress.iterations();
            let (plan, _) = check_memory(
                &src,
                study::plan(&src.design, &params),
                args.opts.max_memory,
                0.0,
            )?;
            let start = Instant::now();
            let (sol, summary) = match accuracy {
                Some(rel) => {
                    let (sol, summary, _) =
                        super::solve::solve_accurate(&src, &params, &args.opts, rel)?;
                    (sol, summary)
                }
                None => {
                    let sol = with_threads(args.opts.threads, || {
                        study::run_planned(&src.design, &plan, &params)
                    })?
                    .map_err(|e| super::solve::study_failure(&src, e))?;
                    let summary = Summary::from_solution(
                        &sol,
                        src.design.depth,
                        start.elapsed().as_secs_f64(),
                        &src.text_hash,
                    );
                    (sol, summary)
                }
            };
            progress.finish();
            Ok(Revision {
                path: path.to_path_buf(),
                summary,
                solution: Some((sol, src)),
            })
        }
    }
}

/// True when the summary's solve was refined to an accuracy and did not reach it.
fn accuracy_short(summary: &Summary) -> bool {
    summary
        .accuracy
        .as_ref()
        .is_some_and(|a| a["met"] == serde_json::Value::Bool(false))
}

/// Runs the command, returning the exit code.
pub fn run(args: &CompareArgs) -> Result<u8, Failure> {
    if !(args.rel_tol.is_finite() && args.rel_tol >= 0.0) {
        return Err(Failure::input(format!(
            "--rel-tol must be a number >= 0, got {}",
            args.rel_tol
        )));
    }
    parse_abs_tol(&args.abs_tol)?;
    // Classify both before solving either, so a bad NEW costs no solve of BASE.
    classify(&args.base)?;
    classify(&args.new)?;
    let mut out = args.out.as_deref().map(OutDir::prepare).transpose()?;
    let base = load(&args.base, args, "BASE")?;
    let new = load(&args.new, args, "NEW")?;
    if base.summary.mode != new.summary.mode || base.summary.per_length != new.summary.per_length {
        return Err(Failure::input(format!(
            "{} is {} and {} is {}: their results have different units and cannot be compared",
            args.base.display(),
            base.summary.mode,
            args.new.display(),
            new.summary.mode
        )));
    }
    let tol = Tolerance {
        rel: args.rel_tol,
        abs: parse_abs_tol(&args.abs_tol)?,
    };
    let table = changes(&base.summary, &new.summary, &tol);
    let beyond = table.iter().filter(|c| c.beyond_tolerance).count();
    let mut remarks = Vec::new();
    let (gb, gn) = (&base.summary.grid, &new.summary.grid);
    if (gb.nx, gb.ny) != (gn.nx, gn.ny) || gb.cell != gn.cell {
        remarks.push(format!(
            "the grids differ (BASE {} x {} nodes, cell {:.4e} m; NEW {} x {}, cell {:.4e} m): \
             part of each change is discretisation",
            gb.nx, gb.ny, gb.cell, gn.nx, gn.ny, gn.cell
        ));
    }
    let unconverged: Vec<String> = [(&base, "BASE"), (&new, "NEW")]
        .iter()
        .filter(|(r, _)| !r.summary.solver.converged)
        .map(|(r, role)| format!("{role} ({})", r.path.display()))
        .collect();
    if !unconverged.is_empty() {
        remarks.push(format!(
            "the solve of {} did not converge: its numbers are not reliable",
            unconverged.join(" and ")
        ));
    }
    // A revision whose accuracy target was not met is flagged as an unconverged one is.
    let short: Vec<String> = [(&base, "BASE"), (&new, "NEW")]
        .iter()
        .filter(|(r, _)| accuracy_short(&r.summary))
        .map(|(r, role)| format!("{role} ({})", r.path.display()))
        .collect();
    if !short.is_empty() {
        remarks.push(format!(
            "the accuracy asked of {} was not met (see its summary's `accuracy`)",
            short.join(" and ")
        ));
    }
    let unconverged: Vec<String> = unconverged.into_iter().chain(short).collect();
    let picture = match (&base.solution, &new.solution, &out) {
        (Some((sb, base_src)), Some((sn, src)), Some(_)) => {
            let (gb, gn) = (&sb.grid, &sn.grid);
            let same_domain =
                [gb.x0(), gb.x1(), gb.y0(), gb.y1()] == [gn.x0(), gn.x1(), gn.y0(), gn.y1()];
            if same_domain {
                Some(change_picture(
                    (sb, base_src),
                    (sn, src),
                    &args.pictures.render_options(src),
                ))
            } else {
                remarks.push(
                    "no field_change.png: the two designs have different domains".to_string(),
                );
                None
            }
        }
        _ => None,
    };
    if let Some(out) = &mut out {
        write_outputs(out, args, &table, beyond, &remarks)?;
        if let Some(img) = &picture {
            out.write_png("field_change.png", img)?;
        }
        out.commit()?;
    }
    if !args.opts.quiet {
        print!("{}", render_table(args, &table, beyond, &remarks));
    }
    Ok(if !unconverged.is_empty() {
        EXIT_NOT_CONVERGED
    } else if beyond > 0 {
        EXIT_CHANGED
    } else {
        EXIT_OK
    })
}
