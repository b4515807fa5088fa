//! One module per command. Each validates its arguments into typed settings, runs the
//! library, and writes results through [`crate::outdir::OutDir`].

pub mod check;
pub mod compare;
pub mod evaluate;
pub mod impedance;
pub mod monte_carlo;
pub mod monte_carlo_run;
pub mod sensitivities;
pub mod solve;
pub mod sweep;
pub mod target;

use crate::args::SolveOptions;
use crate::design_file::{self, DesignSource};
use crate::error::Failure;
use fieldgrid_solver::design::Item;
use fieldgrid_solver::grid::GridError;
use fieldgrid_solver::plan::Plan;
use fieldgrid_solver::solvers::Params;
use fieldgrid_solver::study::StudyParams;
use std::path::Path;

/// Largest design file read, bytes (a path such as /dev/zero never ends).
pub const MAX_DESIGN_BYTES: u64 = 64 << 20;

/// Largest summary.json, sweep.json or other result file read back, bytes.
pub const MAX_RESULT_BYTES: u64 = 256 << 20;

/// The text of `path`: refused unless it is a regular file (a FIFO or a device such as
/// /dev/zero could block or never end), longer than `max` bytes (read at most `max + 1`),
/// or not UTF-8 (naming the line).
pub fn read_limited(path: &Path, max: u64) -> std::io::Result<String> {
    use std::io::{Error, ErrorKind, Read};
    let meta = std::fs::metadata(path)?;
    if !meta.is_file() {
        return Err(Error::new(
            ErrorKind::InvalidInput,
            if meta.is_dir() {
                "a directory, not a file"
            } else {
                "not a regular file (a pipe, device or socket)"
            },
        ));
    }
    let too_large = || {
        Error::new(
            ErrorKind::InvalidData,
            format!("larger than {} MiB", max >> 20),
        )
    };
    if meta.len() > max {
        return Err(too_large());
    }
    let mut bytes = Vec::new();
    std::fs::File::open(path)?
        .take(max + 1)
        .read_to_end(&mut bytes)?;
    if bytes.len() as u64 > max {
        return Err(too_large());
    }
    String::from_utf8(bytes).map_err(|e| {
        let good = &e.as_bytes()[..e.utf8_error().valid_up_to()];
        let line = good.iter().filter(|&&b| b == b'\n').count() + 1;
        Error::new(
            ErrorKind::InvalidData,
            format!("line {line} is not UTF-8 text (save the file as UTF-8)"),
        )
    })
}

/// Parses `--set NAME=VALUE` options into parameter overrides.
pub fn parameter_overrides(set: &crate::args::SetArgs) -> Result<Vec<(String, f64)>, Failure> {
    set.set
        .iter()
        .map(|s| {
            let form = "write --set NAME=VALUE, for example gap=0.5";
            let (name, value) = s
                .split_once('=')
                .ok_or_else(|| Failure::input(format!("--set {s}: no `=`: {form}")))?;
            let name = name.trim();
            if name.is_empty() {
                return Err(Failure::input(format!(
                    "--set {s}: no parameter name: {form}"
                )));
            }
            // A number or arithmetic of numbers (`2*1.5`, `sqrt(2)/2`); parameters of the
            // design are not known here, so a name other than a constant is refused.
            crate::design_file::expr::eval(value.trim(), &|_| None)
                .map(|v| (name.to_string(), v))
                .map_err(|e| {
                    Failure::input(format!(
                        "--set {s}: `{}` is not a number or an arithmetic expression of \
                         numbers: {e}",
                        value.trim()
                    ))
                })
        })
        .collect()
}

/// Reads and validates a design file, with `overrides` replacing parameter values.
pub fn load_design(path: &Path, overrides: &[(String, f64)]) -> Result<DesignSource, Failure> {
    let text = read_limited(path, MAX_DESIGN_BYTES)
        .map_err(|e| Failure::input(format!("{}: cannot read the design: {e}", path.display())))?;
    Ok(design_file::read_design(
        &text,
        &path.display().to_string(),
        overrides,
    )?)
}

/// Extra bytes per node that `--field-table` needs (the whole table is built before it is
/// written): measured 157 MiB against 124 MiB at 1001 x 1001 nodes, rounded up.
pub const FIELD_TABLE_BYTES_PER_NODE: f64 = 40.0;

/// Memory per byte of design text (polygon vertices, parameters, names, in the reader's
/// tree, the geometry and the rasteriser): a polygon of one million vertices (about 22 MB
/// of text) was observed to need 1.44 GB, about 65 bytes per byte of text.
pub const BYTES_PER_TEXT_BYTE: f64 = 64.0;

/// Checks a study's plan (its grid, fitted once, and its memory with `extra` bytes per node
/// held beside it, plus the design text's own): refuses designs whose estimate exceeds the
/// limit. Returns the plan and the whole estimate, MiB.
pub fn check_memory(
    src: &DesignSource,
    plan: Result<Plan, GridError>,
    max_mib: Option<f64>,
    extra: f64,
) -> Result<(Plan, f64), Failure> {
    let plan = plan
        .map_err(|e| Failure::from(src.error_at(Item::Grid, "cell", crate::wording::grid(&e))))?;
    let text_mib = src.text_bytes() as f64 * BYTES_PER_TEXT_BYTE / (1024.0 * 1024.0);
    let mib = plan.memory_mib_with(extra) + text_mib;
    let limit = max_mib.unwrap_or_else(default_memory_limit_mib);
    if text_mib > limit {
        return Err(Failure::from(src.error_at(
            Item::Top,
            "",
            format!(
                "the design's {} bytes of text (vertices, parameters, names) need about {:.0} \
                 MiB, more than the {:.0} MiB allowed (--max-memory)",
                src.text_bytes(),
                text_mib,
                limit
            ),
        )));
    }
    if mib > limit {
        let grid = plan.grid();
        return Err(Failure::from(src.error_at(
            Item::Grid,
            "cell",
            format!(
            "a {} x {} grid needs about {:.0} MiB, more than the {:.0} MiB allowed (--max-memory): use a larger cell",
            grid.nx,
            grid.ny,
            mib,
            limit
        ))));
    }
    Ok((plan, mib))
}

/// Half of the memory the system reports available (Linux), or 4 GiB when unknown.
pub fn default_memory_limit_mib() -> f64 {
    std::fs::read_to_string("/proc/meminfo")
        .ok()
        .and_then(|s| {
            s.lines()
                .find(|l| l.starts_with("MemAvailable:"))
                .and_then(|l| l.split_whitespace().nth(1)?.parse::<f64>().ok())
        })
        .map(|kib| kib / 1024.0 / 2.0)
        .unwrap_or(fieldgrid_solver::accuracy::DEFAULT_MAX_MEMORY_MIB)
}

/// Most threads `--threads` may ask for: four per processor available here (at least 16).
/// More only slows the solve down (measured 35 times slower at 1000 threads on 2 cores).
pub fn max_threads() -> usize {
    std::thread::available_parallelism().map_or(4, |n| n.get()) * 4
}

/// Refuses `--threads 0` and thread counts beyond [`max_threads`] (before any work).
pub fn check_threads(threads: Option<usize>) -> Result<(), Failure> {
    match threads {
        Some(0) => Err(Failure::input("--threads must be at least 1")),
        Some(n) if n > max_threads().max(16) => Err(Failure::input(format!(
            "--threads {n}: more than {} (four per processor here); more threads than \
             processors only slow the solve down",
            max_threads().max(16)
        ))),
        _ => Ok(()),
    }
}

/// Runs `f` on a thread pool of the requested size.
pub fn with_threads<T: Send>(
    threads: Option<usize>,
    f: impl FnOnce() -> T + Send,
) -> Result<T, Failure> {
    check_threads(threads)?;
    match threads {
        None => Ok(f()),
        Some(0) => Err(Failure::input("--threads must be at least 1")),
        Some(n) => {
            let pool = rayon::ThreadPoolBuilder::new()
                .num_threads(n)
                .build()
                .map_err(|e| Failure::input(format!("--threads {n}: {e}")))?;
            Ok(pool.install(f))
        }
    }
}

/// Study settings from the command line, with a progress display on a terminal.
pub fn study_params(opts: &SolveOptions) -> Result<StudyParams, Failure> {
    let tol = opts.tol_or_default();
    if !(tol.is_finite() && tol > 0.0 && tol < 1.0) {
        return Err(Failure::input(format!(
            "--tol must lie between 0 and 1, got {tol}"
        )));
    }
    if opts.max_iterations == Some(0) {
        return Err(Failure::input(
            "--max-iterations must be at least 1 (leave it out for the solver's own limit)",
        ));
    }
    check_threads(opts.threads)?;
    let mut solver = Params::default();
    solver.tol = tol;
    solver.max_iter = opts.max_iterations;
    let mut params = StudyParams::default();
    params.method = opts.solver.into();
    params.solver = solver;
    params.error_estimate = !opts.no_error_estimate;
    Ok(params)
}
