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
