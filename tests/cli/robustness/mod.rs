//! Robustness of the command and the solvers, one module per concern: interrupted runs
//! (fault injection), refusals before any work, bounded and extreme inputs, non-convergence,
//! stretched cells of graded lattices, reproducible numbers, and the fuzzing findings
//! replayed as regression tests. The helpers and the design they share are here.

mod bounded_inputs;
mod convergence;
mod extreme_values;
mod fault_injection;
mod fuzz_findings;
pub(crate) mod interrupted;
mod refusals;
mod reproducible;
pub(crate) mod result_sets;
mod stretched_cells;

use clap::Parser;
use fieldgrid_cli::args::{Cli, Command as Cmd};
use fieldgrid_cli::commands;

/// The prefix of the robustness modules' scratch directories.
const SCRATCH: &str = "fieldgrid-robust";

/// Runs a command in-process and returns its failure (code, message), or its exit code.
fn failure_of(args: &[&str]) -> Result<u8, (u8, String)> {
    let mut full = vec!["fieldgrid"];
    full.extend_from_slice(args);
    let cli = Cli::try_parse_from(full).expect("arguments parse");
    let r = match &cli.command {
        Cmd::Solve(a) => commands::solve::run(a),
        Cmd::Check(a) => commands::check::run(a),
        Cmd::Impedance(a) => commands::impedance::run(a),
        Cmd::Compare(a) => commands::compare::run(a),
        Cmd::Sweep(a) => commands::sweep::run(a),
        Cmd::Target(a) => commands::target::run(a),
    };
    r.map_err(|f| (f.code, f.message))
}

/// The mirror box, its top at 50 V, a 5 V pad in the middle.
const PLATES: &str = fieldgrid_tests::mirror_box_4x2_mm!(
    r#"top = 50.0
[[conductor]]
name = "pad"
potential = 5.0
rect = { x = [1.0, 3.0], y = [0.8, 1.0] }
"#
);
