//! The `fieldgrid` command-line tool: argument parsing, design-file reading, result writing.
//!
//! The library crate `fieldgrid_solver` does the numerics; this crate owns every file, format
//! and message. Exit codes follow the contract: 0 done, 1 a change or margin beyond tolerance,
//! 2 bad input or usage, 3 the solver did not converge.

pub mod accuracy;
pub mod args;
pub mod commands;
pub mod design_file;
pub mod error;
pub mod exit;
pub mod hotspot_marks;
pub mod outdir;
pub mod pictures;
pub mod progress;
pub mod render;
pub mod spice;
pub mod summary;
pub mod timings;
pub mod vtk;
pub mod warning;
pub mod wording;

use clap::Parser;
use std::ffi::OsString;
use std::process::ExitCode;

pub use exit::{EXIT_BAD_INPUT, EXIT_CHANGED, EXIT_NOT_CONVERGED, EXIT_OK};

/// Tells the C heap to keep the memory a stage frees for the next stage; call it first, before
/// any thread starts. A study allocates and drops lattice-sized vectors stage after stage,
/// and returning them to the system and faulting fresh zeroed pages in again cost a sixth of
/// a small solve's time (the sensor-pad demo, one thread) and, at 2049 x 2049 nodes (lattice
/// vectors of 34 MB, above the largest threshold for fresh mappings), 343 000 page faults
/// and 0.6 s of system time where 175 000 and 0.4 s remain. glibc: no block comes from a
/// fresh mapping, and the heap's free top is not given back while under 2 GiB.
///
/// Every thread also allocates from that one heap. With `--threads` the study runs on a pool
/// thread, and glibc gives each thread a heap of its own made of 64 MiB mappings, which it
/// unmaps as soon as the block at their top is freed whatever the trim threshold: each
/// lattice vector of a solve was then mapped, zeroed page by page in one thread and unmapped
/// again (at N = 2048, two threads: 60 unmappings where 8 remain, 155 000 to 174 000 page
/// faults where 143 000 remain). The lattice-sized blocks are few, so the single heap's lock
/// is not contended. Results do not depend on it.
#[cfg(all(target_os = "linux", target_env = "gnu"))]
pub fn keep_freed_memory() {
    // SAFETY: mallopt only changes thresholds of the allocator; the caller runs no thread yet.
    unsafe {
        libc::mallopt(libc::M_MMAP_MAX, 0);
        libc::mallopt(libc::M_TRIM_THRESHOLD, i32::MAX);
        libc::mallopt(libc::M_ARENA_MAX, 1);
    }
}

/// Elsewhere the allocator keeps its defaults.
#[cfg(not(all(target_os = "linux", target_env = "gnu")))]
pub fn keep_freed_memory() {}

/// Runs the tool on the given arguments (the first is the program name).
pub fn main_with_args<I, T>(args: I) -> ExitCode
where
    I: IntoIterator<Item = T>,
    T: Into<OsString> + Clone,
{
    let cli = match args::Cli::try_parse_from(args) {
        Ok(c) => c,
        Err(e) => {
            let code = if e.use_stderr() {
                EXIT_BAD_INPUT
            } else {
                EXIT_OK
            };
            let _ = e.print();
            return ExitCode::from(code);
        }
    };
    let result = match &cli.command {
        args::Command::Solve(a) => commands::sensitivities::solve(a),
        args::Command::Check(a) => commands::check::run(a),
        args::Command::Impedance(a) => commands::sensitivities::impedance(a),
        args::Command::Compare(a) => commands::compare::run(a),
        args::Command::Sweep(a) => commands::sweep::run(a),
        args::Command::Target(a) => commands::target::run(a),
    };
    match result {
        Ok(code) => ExitCode::from(code),
        Err(f) => {
            eprintln!("fieldgrid: {}", f.message);
            ExitCode::from(f.code)
        }
    }
}
