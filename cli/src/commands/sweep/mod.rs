//! `fieldgrid sweep DESIGN --vary NAME=START:STOP:COUNT ... --out DIR [--shard I/N]` and
//! `fieldgrid sweep --merge DIR... --out DIR`.
//!
//! The points are the cartesian product of the varied parameters, numbered from 0 with the
//! first `--vary` varying slowest. `sweep.csv` holds one row per point: the point index, the
//! varied parameters (in the design's own units), every capacitance entry `C[a,b]` (F/m planar,
//! F axisymmetric), the peak field and whether every solve converged, then every other
//! quantity `solve` reports ([`columns`]). `--set` fixes parameters for every point;
//! `--point-summaries` writes each point's `summary.json` as `point-P.summary.json`.
//! `sweep.json` holds the sweep's definition (design hash, varied and set parameters, solver
//! and tolerance) and the shard.
//!
//! Invariants:
//! - `--shard I/N` runs the points with index % N == I, with 0 <= I < N (I counts from 0,
//!   like a scheduler's array index from 0).
//! - Every point's design is read and checked before the first solve, so bad input costs
//!   no solve and leaves no rows. Points are generated one at a time and read again when
//!   solved: nothing is kept per point, so memory does not grow with the number of points.
//! - After each point its row is appended to `sweep.csv` in one write, synced, rows in point
//!   order; an interrupted run leaves a valid table (a last row cut short by a crash is
//!   dropped on resume) and a re-run with the same arguments resumes by skipping the points
//!   already there, read as a stream (one bit per point kept). A results directory of a different sweep is refused. One writer at a
//!   time: the directory is locked ([`crate::outdir::lock`]).
//! - A merge checks that every part belongs to the same sweep, that points given twice agree
//!   exactly, and that together they cover every point; it streams the tables ([`merge`]).
//! - A Monte Carlo run divided with `--shard` (`solve`/`impedance --monte-carlo N --shard
//!   I/K`) writes its samples as such a part, its definition under `monte_carlo`
//!   ([`super::monte_carlo`]); merging its parts also writes the statistics of the merged
//!   samples, `monte_carlo_statistics.csv`.

use super::{check_memory, load_design, study_params, with_threads};
use crate::args::{SolverChoice, SweepArgs};
use crate::design_file::DesignSource;
use crate::error::Failure;
use crate::outdir::{csv_bytes, OutDir};
use crate::{EXIT_NOT_CONVERGED, EXIT_OK};
use fieldgrid_solver::design::Drive;
use fieldgrid_solver::plan::Plan;
use fieldgrid_solver::study;
pub use file::SweepFile;
use std::path::Path;
pub use table::PointSet;

mod columns;
mod file;
mod merge;
mod points;
mod table;
pub use columns::{varied_column, Layout};
pub use points::{point_count, point_values, Shard, Vary, MAX_POINTS};

fn solver_name(c: SolverChoice) -> &'static str {
    fieldgrid_solver::solvers::Method::from(c).name()
}

/// Runs the command, returning the exit code.
pub fn run(args: &SweepArgs) -> Result<u8, Failure> {
    if !args.merge.is_empty() {
        return merge::merge(&args.merge, &args.out, args.opts.quiet);
    }
    let design = args
        .design
        .as_deref()
        .ok_or_else(|| Failure::input("sweep needs a DESIGN (or --merge DIR...)"))?;
    let mut vary = Vec::new();
    for v in &args.vary {
        let v = Vary::parse(v).map_err(Failure::input)?;
        if vary.iter().any(|w: &Vary| w.name == v.name) {
            return Err(Failure::input(format!(
                "--vary {}: the parameter is varied twice",
                v.name
            )));
        }
        vary.push(v);
    }
    if vary.is_empty() {
        return Err(Failure::input(
            "sweep needs at least one --vary NAME=START:STOP:COUNT",
        ));
    }
    let points = point_count(&vary).map_err(Failure::input)?;
    let shard = args
        .shard
        .as_deref()
        .map(Shard::parse)
        .transpose()
        .map_err(Failure::input)?;
    let mut params = study_params(&args.opts)?;
    // The sweep's own progress bar replaces the per-solve residual display.
    params.solver.monitor = None;
    let mine = || (0..points).filter(move |&p| shard.is_none_or(|s| s.runs(p)));
    let set = super::parameter_overrides(&args.set)?;
    if let Some((name, _)) = set.iter().find(|(n, _)| vary.iter().any(|v| &v.name == n)) {
        return Err(Failure::input(format!(
            "--set {name}: the parameter is also varied (--vary {name}=...)"
        )));
    }
    let overrides = |values: &[f64]| -> Vec<(String, f64)> {
        let mut o = set.clone();
        o.extend(vary.iter().zip(values).map(|(v, &x)| (v.name.clone(), x)));
        o
    };
    let load_point = |p: usize| -> Result<(Vec<f64>, DesignSource, Plan), Failure> {
        let values = point_values(&vary, p);
        let mut src = load_design(design, &overrides(&values))
            .map_err(|f| point_failure(p, &vary, &values, f))?;
        crate::accuracy::target(&mut src, &args.opts)
            .map_err(|f| point_failure(p, &vary, &values, f))?;
        let (plan, _) = check_memory(
            &src,
            study::plan(&src.design, &params),
            args.opts.max_memory,
            0.0,
        )
        .map_err(|f| point_failure(p, &vary, &values, f))?;
        Ok((values, src, plan))
    };

    // Every point of this shard is read and checked before anything is solved; the points
    // are generated one at a time and nothing of a checked point is kept, so memory does not
    // grow with the number of points.
    let first = load_design(design, &set)?;
    let names = fixed_names(&first);
    let layout = Layout::of(&first.design);
    let mut count = 0usize;
    for p in mine() {
        let (values, src, _) = load_point(p)?;
        if fixed_names(&src) != names {
            return Err(point_failure(
                p,
                &vary,
                &values,
                Failure::input("the fixed-potential conductors differ from the design's"),
            ));
        }
        count += 1;
    }
    let hash = first.text_hash.clone();
    let varied: Vec<String> = vary
        .iter()
        .map(|v| varied_column(&v.name, first.parameter_unit(&v.name)))
        .collect();
    drop(first);
    let columns = layout.columns(&varied);
    let def = SweepFile {
        version: 1,
        design: design.display().to_string(),
        design_hash: hash,
        vary: vary.clone(),
        points,
        solver: solver_name(args.opts.solver).to_string(),
        tol: args.opts.tol_or_default(),
        columns: columns.clone(),
        shard,
        set: set
            .iter()
            .map(|(name, value)| crate::summary::ParameterSummary {
                name: name.clone(),
                value: *value,
            })
            .collect(),
        monte_carlo: None,
    };

    let mut out = OutDir::prepare_in_place(&args.out)?;
    let (done, mut unconverged) = open_part(&out, &def)?;

    let skipped = mine().filter(|&p| done.contains(p)).count();
    let bar = crate::progress::counter(args.opts.quiet, count, skipped);
    let mut solved = 0;
    for p in mine().filter(|&p| !done.contains(p)) {
        let (values, src, plan) = load_point(p)?;
        if let Some(bar) = &bar {
            let at: Vec<String> = vary
                .iter()
                .zip(&values)
                .map(|(v, &x)| format!("{}={}", v.name, value_text(x)))
                .collect();
            bar.set_message(format!("point {p}: {}", at.join(" ")));
        }
        let rel = args.opts.accuracy.or(src.accuracy);
        let (sol, short, accuracy) = match rel {
            Some(rel) => {
                let (sol, sm, info) = super::solve::solve_accurate(&src, &params, &args.opts, rel)?;
                (sol, !info.met(), sm.accuracy)
            }
            None => (
                with_threads(args.opts.threads, || {
                    study::run_planned(&src.design, &plan, &params)
                })?
                .map_err(|e| super::solve::study_failure(&src, e))?,
                false,
                None,
            ),
        };
        let texts: Vec<String> = values.iter().map(|&v| value_text(v)).collect();
        let row = layout.row(p, &texts, &sol);
        if args.point_summaries {
            let mut summary =
                crate::summary::Summary::from_solution(&sol, src.design.depth, 0.0, &src.text_hash);
            summary.parameters = crate::summary::parameters(&src);
            summary.part = Some(crate::summary::PartSummary::of(&src.design));
            summary.accuracy = accuracy;
            let json = serde_json::to_vec_pretty(&summary)
                .map_err(|e| Failure::io("encoding a point's summary.json", e))?;
            out.write(&format!("point-{p}.summary.json"), &json)?;
        }
        // A point whose accuracy target was not met is counted as one that did not converge.
        if !sol.solve.converged || short {
            unconverged += 1;
        }
        // One whole row per point, appended: the table is never rewritten.
        out.append("sweep.csv", &row_bytes(&row))?;
        solved += 1;
        if let Some(bar) = &bar {
            bar.inc(1);
        }
    }
    if let Some(bar) = &bar {
        bar.finish_and_clear();
    }
    out.commit()?;
    if !args.opts.quiet {
        let part = shard
            .map(|s| format!(" (shard {}/{})", s.index, s.count))
            .unwrap_or_default();
        println!(
            "sweep{part}: {} of {} points solved now, {skipped} already in {}",
            solved,
            count,
            out.path().join("sweep.csv").display()
        );
        if unconverged > 0 {
            let w = crate::warning::ToolWarning::SweepNotConverged {
                points: unconverged,
            };
            println!("warning [{}]: {w}", crate::warning::Coded::code(&w));
        }
    }
    Ok(if unconverged > 0 {
        EXIT_NOT_CONVERGED
    } else {
        EXIT_OK
    })
}

/// Starts or resumes the part `def` in the results directory `out` (prepared in place):
/// which points it already holds and how many of them did not converge. Refuses a directory
/// holding another sweep or points outside the shard; writes `sweep.json` and the table's
/// header when missing.
pub fn open_part(out: &OutDir, def: &SweepFile) -> Result<(PointSet, usize), Failure> {
    let (done, unconverged) = resume(out, def)?;
    let def_json =
        serde_json::to_vec_pretty(def).map_err(|e| Failure::io("encoding sweep.json", e))?;
    out.write("sweep.json", &def_json)?;
    if !out.path().join("sweep.csv").exists() {
        out.write("sweep.csv", &empty_table(&def.columns))?;
    }
    Ok((done, unconverged))
}

/// A parameter value as written in the table and messages: the shortest decimal form, in
/// exponent form for magnitudes outside [1e-9, 1e15) (1e300 is not written as 301 digits).
pub fn value_text(v: f64) -> String {
    if v != 0.0 && !(1e-9..1e15).contains(&v.abs()) {
        format!("{v:e}")
    } else {
        format!("{v}")
    }
}

fn fixed_names(s: &DesignSource) -> Vec<String> {
    s.design
        .conductors
        .iter()
        .filter(|c| matches!(c.drive, Drive::Fixed(_)))
        .map(|c| c.name.clone())
        .collect()
}

fn point_failure(p: usize, vary: &[Vary], values: &[f64], f: Failure) -> Failure {
    let at: Vec<String> = vary
        .iter()
        .zip(values)
        .map(|(v, &x)| format!("{} = {}", v.name, value_text(x)))
        .collect();
    let message = f.message.strip_prefix("error: ").unwrap_or(&f.message);
    Failure {
        code: f.code,
        message: format!("sweep point {p} ({}): {message}", at.join(", ")),
        location: f.location,
    }
}

/// One CSV row, with its line end.
pub fn row_bytes(row: &[String]) -> Vec<u8> {
    let mut w = csv::WriterBuilder::new()
        .has_headers(false)
        .from_writer(Vec::new());
    w.write_record(row).expect("in-memory CSV write");
    w.into_inner().expect("in-memory CSV flush")
}

/// A table of no rows: the header alone.
fn empty_table(columns: &[String]) -> Vec<u8> {
    let header: Vec<&str> = columns.iter().map(|s| s.as_str()).collect();
    csv_bytes(&header, std::iter::empty())
}

/// Reads `sweep.json` of a directory, if present (its rows are streamed by [`table`]).
fn read_dir(dir: &Path) -> Result<Option<SweepFile>, Failure> {
    let json = dir.join("sweep.json");
    let csv = dir.join("sweep.csv");
    if !json.exists() {
        if csv.exists() {
            return Err(Failure::input(format!(
                "{}: sweep.csv without sweep.json: not a fieldgrid sweep directory",
                dir.display()
            )));
        }
        return Ok(None);
    }
    let text = super::read_limited(&json, super::MAX_RESULT_BYTES)
        .map_err(|e| Failure::input(format!("{}: cannot read: {e}", json.display())))?;
    let def: SweepFile = serde_json::from_str(&text).map_err(|e| {
        Failure::input(format!(
            "{}: not a fieldgrid sweep.json: {e}",
            json.display()
        ))
    })?;
    Ok(Some(def))
}

/// Which points `out` already holds and how many of them did not converge, when
/// it holds this very sweep (and shard); an error when it holds another one. A last row cut
/// short by a crash (no line end) is dropped first: it is solved again.
fn resume(out: &OutDir, def: &SweepFile) -> Result<(PointSet, usize), Failure> {
    let csv = out.path().join("sweep.csv");
    drop_torn_row(&csv)?;
    let mut done = PointSet::new(def.points);
    let Some(old) = read_dir(out.path())? else {
        return Ok((done, 0));
    };
    if !(old.same_sweep(def) && old.shard == def.shard) {
        return Err(Failure::input(format!(
            "{} holds another sweep ({}): use another --out, or remove sweep.json and \
             sweep.csv there to start over",
            out.path().display(),
            old.difference(def)
        )));
    }
    if !csv.exists() {
        return Ok((done, 0));
    }
    let mut unconverged = 0;
    let at = columns::converged_column(&old.columns);
    table::for_each_row(&csv, &old, |p, rec| {
        if def.shard.is_some_and(|s| !s.runs(p)) {
            return Err(Failure::input(format!(
                "{}: sweep.csv holds point {p}, which is not in this shard: remove it or use \
                 another --out",
                out.path().display()
            )));
        }
        done.insert(p);
        unconverged += usize::from(at.and_then(|k| rec.get(k)) == Some("false"));
        Ok(())
    })?;
    Ok((done, unconverged))
}

/// Cuts `table` after its last line end (a row appended when the machine stopped may be
/// incomplete).
fn drop_torn_row(table: &Path) -> Result<(), Failure> {
    use std::io::{Read, Seek, SeekFrom};
    let Ok(mut f) = std::fs::OpenOptions::new()
        .read(true)
        .write(true)
        .open(table)
    else {
        return Ok(());
    };
    let len = f.metadata().map(|m| m.len()).unwrap_or(0);
    if len == 0 {
        return Ok(());
    }
    // Look back in blocks for the last line end.
    let mut end = len;
    let mut buf = vec![0u8; 64 * 1024];
    while end > 0 {
        let start = end.saturating_sub(buf.len() as u64);
        let n = (end - start) as usize;
        let read = f
            .seek(SeekFrom::Start(start))
            .and_then(|_| f.read_exact(&mut buf[..n]));
        if read.is_err() {
            return Ok(());
        }
        if let Some(i) = buf[..n].iter().rposition(|&b| b == b'\n') {
            let keep = start + i as u64 + 1;
            if keep < len {
                f.set_len(keep)
                    .map_err(|e| Failure::io(format!("repairing {}", table.display()), e))?;
            }
            return Ok(());
        }
        end = start;
    }
    Ok(())
}
