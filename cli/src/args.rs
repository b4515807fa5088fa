//! Command-line arguments (clap). Parsing only: validation into typed settings happens in
//! the commands.

use clap::{Args, Parser, Subcommand, ValueEnum};
use std::path::PathBuf;

/// Solve 2-D electrostatic fields around electrodes.
#[derive(Parser, Debug)]
#[command(name = "fieldgrid", version, about, long_about = None, propagate_version = true)]
pub struct Cli {
    /// What to do.
    #[command(subcommand)]
    pub command: Command,
}

/// The commands.
#[derive(Subcommand, Debug)]
pub enum Command {
    /// Solve a design and write every result to --out.
    Solve(SolveArgs),
    /// Validate a design and report its grid and memory needs, without solving.
    Check(CheckArgs),
    /// Line parameters of a planar cross-section: capacitance and inductance matrices,
    /// characteristic impedance, effective permittivity, odd/even/differential impedances.
    Impedance(ImpedanceArgs),
}

/// Linear solver choice on the command line.
#[derive(ValueEnum, Clone, Copy, Debug, PartialEq, Eq)]
pub enum SolverChoice {
    /// Multigrid-preconditioned conjugate gradients (default).
    Multigrid,
    /// Jacobi-preconditioned conjugate gradients.
    Cg,
    /// Red-black successive over-relaxation.
    Sor,
}

/// Options shared by every command that solves.
#[derive(Args, Debug, Clone)]
pub struct SolveOptions {
    /// Linear solver.
    #[arg(long, value_enum, default_value_t = SolverChoice::Multigrid)]
    pub solver: SolverChoice,
    /// Relative residual at which a solve stops.
    #[arg(long, default_value_t = 1e-8)]
    pub tol: f64,
    /// Worker threads (default: every core).
    #[arg(long)]
    pub threads: Option<usize>,
    /// Stop a linear solve after this many iterations (default: the solver's own limit).
    #[arg(long, value_name = "N")]
    pub max_iterations: Option<usize>,
    /// Print nothing but errors.
    #[arg(long)]
    pub quiet: bool,
    /// Skip the coarse-grid solve that estimates discretisation errors.
    #[arg(long)]
    pub no_error_estimate: bool,
    /// Refuse designs whose estimated memory exceeds this many MiB (default: half of the
    /// memory available).
    #[arg(long, value_name = "MIB")]
    pub max_memory: Option<f64>,
}

/// `fieldgrid solve`.
#[derive(Args, Debug)]
pub struct SolveArgs {
    /// The design file (TOML).
    pub design: PathBuf,
    /// Directory for the results (created if missing).
    #[arg(long)]
    pub out: PathBuf,
    /// Also write the full-grid table `field.csv` (one row per node).
    #[arg(long)]
    pub field_table: bool,
    /// Draw field.png on a logarithmic scale.
    #[arg(long)]
    pub log_field: bool,
    /// Exit with code 1 when any hot spot's margin is below this value.
    #[arg(long)]
    pub min_margin: Option<f64>,
    /// Solver options.
    #[command(flatten)]
    pub opts: SolveOptions,
}

/// `fieldgrid check`.
#[derive(Args, Debug)]
pub struct CheckArgs {
    /// The design file (TOML).
    pub design: PathBuf,
    /// Write a preview picture `preview.png` (and `check.json`) here.
    #[arg(long)]
    pub out: Option<PathBuf>,
    /// Print nothing but errors.
    #[arg(long)]
    pub quiet: bool,
}

/// `fieldgrid impedance`.
#[derive(Args, Debug)]
pub struct ImpedanceArgs {
    /// The design file (TOML), a planar cross-section.
    pub design: PathBuf,
    /// The signal conductors, comma-separated; every other conductor is grounded.
    #[arg(
        long,
        value_delimiter = ',',
        required = true,
        value_name = "NAME[,NAME...]"
    )]
    pub signal: Vec<String>,
    /// Directory for the results (created if missing).
    #[arg(long)]
    pub out: PathBuf,
    /// Solver options.
    #[command(flatten)]
    pub opts: SolveOptions,
}
