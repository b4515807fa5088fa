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
    /// Compare two revisions (design files or earlier summary.json files); exit 1 when a
    /// result moved beyond the tolerance.
    Compare(CompareArgs),
    /// Solve a design over a grid of parameter values, optionally one shard of it.
    Sweep(SweepArgs),
    /// Find the value of a design parameter that brings a result to a wanted value (several
    /// results with as many parameters at once).
    Target(TargetArgs),
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

impl From<SolverChoice> for fieldgrid_solver::solvers::Method {
    fn from(c: SolverChoice) -> Self {
        use fieldgrid_solver::solvers::Method;
        match c {
            SolverChoice::Multigrid => Method::Multigrid,
            SolverChoice::Cg => Method::Cg,
            SolverChoice::Sor => Method::Sor,
        }
    }
}

/// Options shared by every command that solves.
#[derive(Args, Debug, Clone)]
pub struct SolveOptions {
    /// Linear solver.
    #[arg(long, value_enum, default_value_t = SolverChoice::Multigrid)]
    pub solver: SolverChoice,
    /// Relative residual at which a solve stops; it also goes on until the sum of the
    /// residual's magnitudes is within 1000 times this of the largest conductor charge
    /// (default 1e-8; with --accuracy, 1e-4 of the accuracy, and never looser than this when
    /// given).
    #[arg(long)]
    pub tol: Option<f64>,
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
    /// Refine the graded grid until every reported quantity (capacitance entries, forces,
    /// fields at hot spots not at sharp corners; Z0 and eps_eff for `impedance`) has an
    /// estimated relative error below REL (1e-3 for 0.1 %), counting the solver and, where a
    /// side is open, the truncation of the far field; exit code 3 with the results written
    /// and flagged when the memory limit stops it first. Wins over `accuracy` in [grid].
    #[arg(long, value_name = "REL")]
    pub accuracy: Option<f64>,
}

/// The relative residual of a solve when `--tol` is not given.
pub const DEFAULT_TOL: f64 = 1e-8;

impl SolveOptions {
    /// The relative residual of a solve: `--tol`, else [`DEFAULT_TOL`].
    pub fn tol_or_default(&self) -> f64 {
        self.tol.unwrap_or(DEFAULT_TOL)
    }
}

/// Parameter values given on the command line.
#[derive(Args, Debug, Clone, Default)]
pub struct SetArgs {
    /// NAME=VALUE: use VALUE (a number, in the design's units) for the design's parameter
    /// NAME instead of the value in the file. Repeat for several parameters.
    #[arg(long = "set", value_name = "NAME=VALUE")]
    pub set: Vec<String>,
}

/// Options of the pictures a command draws.
#[derive(Args, Debug, Clone)]
pub struct PictureArgs {
    /// Width of the PNG pictures, px (400 to 8000; the height follows the design's shape).
    #[arg(long, value_name = "PX", default_value_t = 1200,
          value_parser = clap::value_parser!(u32).range(400..=8000))]
    pub picture_width: u32,
    /// Draw the pictures of this window of the domain only: X0,X1,Y0,Y1 in the design's
    /// length unit (r and z in axisymmetric designs); the part outside the domain is cut off.
    /// Overrides the design's `[pictures] zoom`.
    #[arg(long, value_name = "X0,X1,Y0,Y1", allow_hyphen_values = true,
          value_parser = parse_zoom)]
    pub zoom: Option<[f64; 4]>,
}

impl PictureArgs {
    /// The renderer's options for these arguments and the design `src`: `--zoom`, else the
    /// design's `[pictures] zoom`.
    pub fn render_options(
        &self,
        src: &crate::design_file::DesignSource,
    ) -> crate::render::RenderOptions {
        crate::render::RenderOptions {
            width: self.picture_width,
            zoom: self.zoom.or(src.zoom),
        }
    }
}

/// `X0,X1,Y0,Y1`: four finite numbers, X0 < X1 and Y0 < Y1.
fn parse_zoom(s: &str) -> Result<[f64; 4], String> {
    let v: Vec<f64> = s
        .split(',')
        .map(|t| t.trim().parse::<f64>())
        .collect::<Result<_, _>>()
        .map_err(|_| format!("{s:?}: expected four numbers X0,X1,Y0,Y1"))?;
    let [x0, x1, y0, y1] = v[..] else {
        return Err(format!("{s:?}: expected four numbers X0,X1,Y0,Y1"));
    };
    if !v.iter().all(|x| x.is_finite()) || x0 >= x1 || y0 >= y1 {
        return Err(format!(
            "{s:?}: the window needs X0 < X1 and Y0 < Y1, finite, in the design's unit"
        ));
    }
    Ok([x0, x1, y0, y1])
}

/// `fieldgrid solve`.
#[derive(Args, Debug)]
pub struct SolveArgs {
    /// The design file (TOML).
    pub design: PathBuf,
    /// Parameter values.
    #[command(flatten)]
    pub set: SetArgs,
    /// Directory for the results (created if missing).
    #[arg(long)]
    pub out: PathBuf,
    /// Also write the full-grid table `field.csv` (one row per node).
    #[arg(long)]
    pub field_table: bool,
    /// Also write `field.vti` (VTK image data; `field.vtr`, a rectilinear grid, when the
    /// grid is graded: potential, field, permittivity, conductor index per node) for
    /// general-purpose 3-D viewers.
    #[arg(long)]
    pub vtk: bool,
    /// Draw field.png on a logarithmic scale (four decades below the peak) instead of a
    /// linear one whose colours saturate at the 99.5th percentile.
    #[arg(long)]
    pub log_field: bool,
    /// Picture options.
    #[command(flatten)]
    pub pictures: PictureArgs,
    /// Exit with code 1 when any hot spot's margin is below this value.
    #[arg(long)]
    pub min_margin: Option<f64>,
    /// Require the circuit export `capacitance.cir` (refused for a planar design without
    /// `depth`; without this option it is written whenever it can be).
    #[arg(long)]
    pub circuit: bool,
    /// Print the wall time of each stage (rasterisation, assembly, solver setup, solves,
    /// post-processing, pictures, files) to standard error when done.
    #[arg(long)]
    pub timings: bool,
    /// Sensitivities and tolerances.
    #[command(flatten)]
    pub sens: SensitivityArgs,
    /// Solver options.
    #[command(flatten)]
    pub opts: SolveOptions,
}

/// Sensitivities and tolerances of a solve's results.
#[derive(Args, Debug, Clone, Default)]
pub struct SensitivityArgs {
    /// Also the derivative of every reported quantity with respect to the design's
    /// parameters (central differences of paired solves): every parameter, or those named.
    /// Written to summary.json `sensitivities` and sensitivities.csv.
    #[arg(long, value_name = "NAME[,NAME...]", num_args = 0..=1, value_delimiter = ',')]
    pub sensitivity: Option<Vec<String>>,
    /// NAME=VALUE: the parameter may lie within +/- VALUE (design units) of its value. Gives
    /// every quantity's worst case, RSS spread and dominant parameter (tolerances.csv,
    /// summary.json `tolerances`). Repeat for several; a design's `[tolerances]` table
    /// gives them too.
    #[arg(long = "tolerance", value_name = "NAME=VALUE")]
    pub tolerance: Vec<String>,
    /// Also solve N points with every toleranced parameter drawn uniformly within its
    /// tolerance (seeded: the same seed gives the same results).
    #[arg(long, value_name = "N")]
    pub monte_carlo: Option<usize>,
    /// Seed of --monte-carlo.
    #[arg(long, default_value_t = 1, value_name = "SEED")]
    pub seed: u64,
    /// I/K (0 <= I < K): solve only the --monte-carlo samples k with k % K == I and append
    /// them to --out's sweep.csv (a re-run resumes), for a batch scheduler's array task;
    /// join the shards with `fieldgrid sweep --merge`, which gives the statistics of the
    /// unsharded run. Nothing else is solved but the nominal design.
    #[arg(long, value_name = "I/K")]
    pub shard: Option<String>,
    /// Also solve every corner of the tolerance box (2^k solves for k toleranced
    /// parameters, at most 6) and give each quantity's extremes there.
    #[arg(long)]
    pub vertices: bool,
}

/// `fieldgrid target`.
#[derive(Args, Debug)]
pub struct TargetArgs {
    /// The design file (TOML).
    pub design: PathBuf,
    /// Parameter values.
    #[command(flatten)]
    pub set: SetArgs,
    /// The result to bring to --value, named as `compare` names it (C[a,b], Q[a], F[a],
    /// V[a], energy, peak_field), worst_margin, or with --signal Z0, eps_eff, Z_odd,
    /// Z_even, Z_diff. Repeat for several targets.
    #[arg(long, value_name = "Q", required = true)]
    pub quantity: Vec<String>,
    /// The wanted value, SI (ohm, F/m, F, V/m; a ratio for eps_eff and worst_margin), one
    /// per --quantity in order.
    #[arg(long, value_name = "X", required = true, allow_hyphen_values = true)]
    pub value: Vec<f64>,
    /// NAME=LO:HI: the parameter adjusted, and the values it may take (design units), one
    /// per --quantity in order.
    #[arg(long, value_name = "NAME=LO:HI", required = true)]
    pub vary: Vec<String>,
    /// The signal conductors, for line quantities (as for `impedance`).
    #[arg(long, value_delimiter = ',', value_name = "NAME[,NAME...]")]
    pub signal: Vec<String>,
    /// Stop when a quantity is within this of its value (SI; one per --quantity). Default:
    /// the quantity's estimated discretisation error.
    #[arg(long, value_name = "X")]
    pub value_tol: Vec<f64>,
    /// Most solves of the search (a line study counts as one).
    #[arg(long, default_value_t = 40, value_name = "N")]
    pub max_solves: usize,
    /// Directory for target.json and the final solve's files (created if missing).
    #[arg(long)]
    pub out: PathBuf,
    /// Picture options.
    #[command(flatten)]
    pub pictures: PictureArgs,
    /// Solver options.
    #[command(flatten)]
    pub opts: SolveOptions,
}

/// `fieldgrid check`.
#[derive(Args, Debug)]
pub struct CheckArgs {
    /// The design file (TOML).
    pub design: PathBuf,
    /// Parameter values.
    #[command(flatten)]
    pub set: SetArgs,
    /// Write a preview picture `preview.png` (and `check.json`) here.
    #[arg(long)]
    pub out: Option<PathBuf>,
    /// Draw the grid's node lines on `preview.png`.
    #[arg(long)]
    pub grid_lines: bool,
    /// Picture options.
    #[command(flatten)]
    pub pictures: PictureArgs,
    /// Print nothing but errors.
    #[arg(long)]
    pub quiet: bool,
    /// Refuse designs whose estimated memory exceeds this many MiB (default: half of the
    /// memory available), as a solve would.
    #[arg(long, value_name = "MIB")]
    pub max_memory: Option<f64>,
}

/// `fieldgrid impedance`.
#[derive(Args, Debug)]
pub struct ImpedanceArgs {
    /// The design file (TOML), a planar cross-section.
    pub design: PathBuf,
    /// Parameter values.
    #[command(flatten)]
    pub set: SetArgs,
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
    /// Picture options.
    #[command(flatten)]
    pub pictures: PictureArgs,
    /// Sensitivities and tolerances.
    #[command(flatten)]
    pub sens: SensitivityArgs,
    /// Solver options.
    #[command(flatten)]
    pub opts: SolveOptions,
}

/// `fieldgrid compare`.
#[derive(Args, Debug)]
pub struct CompareArgs {
    /// The base revision: a design file (solved now) or a summary.json (or a results
    /// directory holding one).
    pub base: PathBuf,
    /// The new revision, as BASE.
    pub new: PathBuf,
    /// Relative change beyond which a quantity counts as changed.
    #[arg(long, default_value_t = 0.01, value_name = "X")]
    pub rel_tol: f64,
    /// Absolute change, in SI units of one unit kind, below which a quantity of that unit does
    /// not count as changed (a change must pass both tolerances), e.g. `F/m=1e-15`,
    /// `V/m=1e3`; repeatable, one per unit.
    #[arg(long, value_name = "UNIT=X")]
    pub abs_tol: Vec<String>,
    /// Write compare.csv, compare.json and (for two designs on one grid) field_change.png here.
    #[arg(long)]
    pub out: Option<PathBuf>,
    /// Picture options.
    #[command(flatten)]
    pub pictures: PictureArgs,
    /// Solver options (for design files).
    #[command(flatten)]
    pub opts: SolveOptions,
}

/// `fieldgrid sweep`.
#[derive(Args, Debug)]
pub struct SweepArgs {
    /// The design file (TOML) whose parameters are varied.
    #[arg(required_unless_present = "merge")]
    pub design: Option<PathBuf>,
    /// NAME=START:STOP:COUNT: COUNT evenly spaced values of parameter NAME from START to STOP
    /// (in the design's own units). Repeat for a cartesian product; the first varies slowest.
    #[arg(
        long,
        value_name = "NAME=START:STOP:COUNT",
        required_unless_present = "merge"
    )]
    pub vary: Vec<String>,
    /// Directory for sweep.csv and sweep.json (created if missing; a re-run resumes).
    #[arg(long)]
    pub out: PathBuf,
    /// Run only the points whose index (counted from 0) leaves remainder I when divided by N;
    /// I counts from 0, so I/N runs from 0/N to (N-1)/N.
    #[arg(long, value_name = "I/N", conflicts_with = "merge")]
    pub shard: Option<String>,
    /// Join the results directories of the shards of one sweep into --out, in point order.
    #[arg(long, value_name = "DIR", num_args = 1.., conflicts_with_all = ["design", "vary"])]
    pub merge: Vec<PathBuf>,
    /// Parameter values fixed for every point.
    #[command(flatten)]
    pub set: SetArgs,
    /// Also write each point's summary.json, as point-P.summary.json.
    #[arg(long, conflicts_with = "merge")]
    pub point_summaries: bool,
    /// Solver options.
    #[command(flatten)]
    pub opts: SolveOptions,
}
