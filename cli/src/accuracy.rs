//! `--accuracy REL` and `[grid] accuracy`: the target checked into the library's settings,
//! the `accuracy` object of summary.json and the lines of the report.
//!
//! The command line wins over the design file. An accuracy implies the graded lattice (the
//! loop refines the graded family of the design; see `fieldgrid_solver::accuracy`), so the
//! design's lattice is set to graded before its plan and memory are checked. The memory
//! limit of the loop is the one `--max-memory` sets for any solve, less what the design's
//! text holds.

use crate::args::SolveOptions;
use crate::design_file::DesignSource;
use crate::error::Failure;
use crate::wording;
use fieldgrid_solver::accuracy::{self, Info, Stop};
use fieldgrid_solver::design::Lattice;
use serde_json::{json, Value};

/// The accuracy asked for (the command line's, else the design file's), checked; `None`
/// when none is. With one, the design is switched to its graded lattice.
pub fn target(src: &mut DesignSource, opts: &SolveOptions) -> Result<Option<f64>, Failure> {
    let Some(rel) = opts.accuracy.or(src.accuracy) else {
        return Ok(None);
    };
    if !(rel.is_finite() && rel > 0.0 && rel < 1.0) {
        return Err(Failure::input(format!(
            "--accuracy is a relative error between 0 and 1 (1e-3 for 0.1 %), got {rel}"
        )));
    }
    if opts.no_error_estimate {
        return Err(Failure::input(
            "--accuracy needs the error estimate: leave out --no-error-estimate",
        ));
    }
    src.design.lattice = Lattice::Graded;
    Ok(Some(rel))
}

/// The library's settings for `rel` under the options' memory limit, the solves held to
/// `--tol` when given (else the loop's own tolerance, from `rel`).
pub fn params(src: &DesignSource, opts: &SolveOptions, rel: f64) -> accuracy::Params {
    let limit = opts
        .max_memory
        .unwrap_or_else(crate::commands::default_memory_limit_mib);
    let text_mib =
        src.text_bytes() as f64 * crate::commands::BYTES_PER_TEXT_BYTE / (1024.0 * 1024.0);
    accuracy::Params::default()
        .with_target(rel)
        .with_max_memory_mib(limit - text_mib)
        .with_solver_tol(opts.tol)
}

fn stop_name(stop: &Stop) -> &'static str {
    match stop {
        Stop::Met => "met",
        Stop::MemoryLimit { .. } => "memory-limit",
        Stop::Bisections => "refinements",
        Stop::Truncation => "truncation",
        _ => "other",
    }
}

/// The `accuracy` object of summary.json: target, whether it was met, the rounds and their
/// grids, each quantity's estimate (absolute, in its SI unit, and relative, with its parts),
/// what stopped the loop and, with open sides, the domain solved on.
pub fn summary(info: &Info) -> Value {
    let rounds: Vec<Value> = info
        .rounds
        .iter()
        .map(|r| {
            json!({
                "bisections": r.bisections,
                "refinement": r.refinement,
                "nx": r.nx,
                "ny": r.ny,
                "min_cell": r.min_cell,
                "max_cell": r.max_cell,
                "tol": r.tol,
                "memory_mib": r.memory_mib,
                "worst_over_target": finite(r.worst),
            })
        })
        .collect();
    let quantities: Vec<Value> = info
        .estimates
        .iter()
        .map(|e| {
            json!({
                "quantity": wording::quantity(&e.quantity),
                "value": e.value,
                "error_estimate": finite(e.error()),
                "relative": finite(e.relative()),
                "discretisation": finite(e.discretisation),
                "solver": e.solver,
                "truncation": finite(e.truncation),
                "singular": e.singular,
                "held": e.held,
                "met": !e.held || e.relative() <= info.target,
            })
        })
        .collect();
    let last = info.rounds.last();
    let mut v = json!({
        "target": info.target,
        "met": info.met(),
        "stop": stop_name(&info.stop),
        "rounds": info.rounds.len(),
        "grid": last.map(|r| json!({
            "nx": r.nx, "ny": r.ny, "min_cell": r.min_cell, "max_cell": r.max_cell,
            "bisections": r.bisections, "refinement": r.refinement,
        })),
        "history": rounds,
        "quantities": quantities,
    });
    if let Some(s) = info.shortest() {
        v["short"] = json!({
            "quantity": wording::quantity(&s.quantity),
            "relative": finite(s.relative()),
            "times_target": finite(s.relative() / info.target),
        });
    }
    if let Stop::MemoryLimit {
        needed_mib,
        limit_mib,
    } = info.stop
    {
        v["memory"] = json!({ "needed_mib": finite(needed_mib), "limit_mib": limit_mib });
    }
    if let Some(f) = &info.far_field {
        v["far_field"] = json!({ "enlargements": f.enlargements, "x": f.x, "y": f.y });
    }
    v
}

/// JSON has no infinity: an unknown error is null.
fn finite(x: f64) -> Value {
    if x.is_finite() {
        json!(x)
    } else {
        Value::Null
    }
}

/// The report's lines about the loop: the grid it settled on and the worst estimate, or
/// which quantity is short.
pub fn report(info: &Info) -> String {
    use std::fmt::Write;
    let mut s = String::new();
    let Some(r) = info.rounds.last() else {
        return s;
    };
    let rounds = info.rounds.len();
    let _ = write!(
        s,
        "accuracy {:e} {} after {rounds} round{}: grid {} x {} nodes, cells {:.3e} m to {:.3e} m",
        info.target,
        if info.met() { "met" } else { "NOT met" },
        if rounds == 1 { "" } else { "s" },
        r.nx,
        r.ny,
        r.min_cell,
        r.max_cell
    );
    if let Some(f) = &info.far_field {
        if f.enlargements > 0 {
            let _ = write!(
                s,
                ", open sides moved out to x {:.4e} m to {:.4e} m, y {:.4e} m to {:.4e} m",
                f.x[0], f.x[1], f.y[0], f.y[1]
            );
        }
    }
    s.push('\n');
    let worst = info
        .estimates
        .iter()
        .filter(|e| e.held)
        .max_by(|a, b| a.relative().total_cmp(&b.relative()));
    if let Some(w) = worst {
        let _ = writeln!(
            s,
            "  largest estimated error: {} {:.1e} (relative; discretisation {:.1e}, solver {:.1e}, far field {:.1e})",
            wording::quantity(&w.quantity),
            w.relative(),
            w.discretisation / w.value.abs(),
            w.solver / w.value.abs(),
            w.truncation / w.value.abs()
        );
    }
    let free: Vec<String> = info
        .estimates
        .iter()
        .filter(|e| !e.held && !e.singular)
        .map(|e| format!("{} {:.1e}", wording::quantity(&e.quantity), e.relative()))
        .collect();
    if !free.is_empty() {
        let _ = writeln!(
            s,
            "  estimated, not refined for: {} (forces on conductors touching a dielectric, another body or a side converge slowly)",
            free.join(", ")
        );
    }
    let singular = info.estimates.iter().filter(|e| e.singular).count();
    if singular > 0 {
        let _ = writeln!(
            s,
            "  {singular} hot spot{} at sharp corners not refined for (singular: no finite value)",
            if singular == 1 { "" } else { "s" }
        );
    }
    s
}
