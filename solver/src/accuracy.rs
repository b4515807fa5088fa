//! An accuracy the user asks for: refine a study until every quantity it reports is known to
//! within a relative target, or stop at the memory limit and say which quantity is short.
//!
//! The loop works on the graded family of the design ([`crate::grading`]): the base lines
//! with cells up to `2^BISECTIONS` times the design's `cell`, bisected `k` times, starting
//! at `k = BISECTIONS` (the design's own graded lattice). Every member holds every geometry
//! line, and the study's error estimate compares the lattice with the two below it in the
//! family, with the order observed from the three. A design drawn on a uniform lattice is
//! solved on its graded family here: only a family that keeps its edges on node lines
//! converges at a rate that can be read and predicted.
//!
//! Each member halves the cells of the one below along the grading's map
//! ([`grading::refined`]): away from singular points that is bisection, and next to sharp
//! corners and the ends of thin conductors the radical grading makes the cells shrink
//! faster, so that the singular points do not set the rate of convergence, while the
//! number of lines per axis only doubles: the error falls as the square of the cell, as the
//! number of nodes to the power -1.
//!
//! A design with no open side starts with a probe: the design's own member with an eighth of
//! its cells along each axis (a density of 1/8, about a fiftieth of the nodes), solved with
//! the error estimate. Its worst estimate and the order observed from its three lattices
//! predict the round that lands at about three quarters of the target; the probe itself is
//! never the result, and a round it predicts is accepted only on its own estimate, like any
//! other, so a wrong prediction costs a round, not accuracy. A design with an open side
//! starts on its own lattice (the study its far field begins with).
//!
//! Each round solves on one member and reads every quantity's estimated error
//! ([`quantities`]): discretisation, linear solver and, where a side is open, truncation of
//! the far field. While one that is not at a singular point is above the target, the next
//! round refines by the factor the observed order says is needed, two fifths more for safety
//! (at least 1.1, at most 8 along each axis, less when the memory limit allows no more), or
//! tightens the solver tolerance when the solver's share dominates. A factor is whole
//! bisections times a density in [1, 2) ([`grading::Params::density`]: more cells per step
//! of the grading's map), so a round lands near the target instead of up to four times the
//! nodes beyond it. Before the rounds, a design with open sides
//! is solved once more on a box with every open side moved out by the domain's extent
//! ([`far_field`]), at the same lines inside; twice the change bounds the truncation error,
//! and while it is above half the target the farther box becomes the design's box. The
//! study on the design's own box is made with the first round's settings (the error
//! estimate on), so that where the farther box is not needed it is the first round, not
//! solved again.
//!
//! Invariants: the solver tolerance is tied to the target and never looser than one the
//! caller fixes ([`Params::solver_tol`]); the result returned is always the last round's,
//! solved with the error estimate; a quantity at a singular point is reported with its
//! estimate but never refined for; the loop ends (bisections, memory and tolerance are all
//! bounded).

pub mod far_field;
pub mod quantities;

use crate::design::{Design, Lattice};
use crate::grading::{self, Lines, BISECTIONS};
use crate::grid::{Grid, GridError};
use crate::line_study::{self, LineStudy, LineStudyError};
use crate::plan::{self, Plan};
use crate::study::{self, Solution, StudyError, StudyParams};
use crate::warning::{AccuracyLimit, Warning};
pub use quantities::{Estimate, NotHeld, Quantities, Quantity};

/// The memory a round may take by default, MiB: 4 GiB, what the command line allows a solve
/// when it cannot read how much memory is available (otherwise it allows half of that, and
/// sets the limit itself). A library user on a larger or smaller machine sets their own with
/// [`Params::with_max_memory_mib`].
pub const DEFAULT_MAX_MEMORY_MIB: f64 = 4096.0;

/// The accuracy asked for and the limits of the search. Start from `Params::default()`.
#[derive(Clone, Debug, PartialEq)]
#[non_exhaustive]
pub struct Params {
    /// Relative error every quantity must be known to, in (0, 1).
    pub target: f64,
    /// Largest estimated memory of a round, MiB ([`DEFAULT_MAX_MEMORY_MIB`] by default).
    pub max_memory_mib: f64,
    /// Most bisections of the base lattice (each multiplies the nodes by about 4).
    pub max_bisections: usize,
    /// Which quantities of a study the target covers (capacitance entries always).
    pub quantities: Quantities,
    /// The grading of the family.
    pub grading: grading::Params,
    /// The relative residual the caller holds every solve to at most; `None` (the default):
    /// the loop's own from the target alone ([`solver_tolerance`]), and the study's
    /// `solver.tol` is not read.
    pub solver_tol: Option<f64>,
}

impl Default for Params {
    fn default() -> Self {
        Params {
            target: 1e-3,
            max_memory_mib: DEFAULT_MAX_MEMORY_MIB,
            max_bisections: 9,
            quantities: Quantities::default(),
            grading: grading::Params::default(),
            solver_tol: None,
        }
    }
}

impl Params {
    /// These settings with the relative target `target`.
    pub fn with_target(mut self, target: f64) -> Self {
        self.target = target;
        self
    }

    /// These settings with no solve looser than the relative residual `tol` (`None`: the
    /// loop's own from the target).
    pub fn with_solver_tol(mut self, tol: Option<f64>) -> Self {
        self.solver_tol = tol;
        self
    }

    /// These settings with no round larger than `mib` MiB.
    pub fn with_max_memory_mib(mut self, mib: f64) -> Self {
        self.max_memory_mib = mib;
        self
    }
}

/// One round of the loop: the lattice it solved on.
#[derive(Clone, Debug, PartialEq)]
pub struct Round {
    /// Bisections of the base lattice.
    pub bisections: usize,
    /// Cells per cell of the design's own graded lattice along each axis, about:
    /// `2^(bisections - BISECTIONS)` times the density of the grading's map.
    pub refinement: f64,
    /// Node lines along x and y.
    pub nx: usize,
    /// Node lines along y.
    pub ny: usize,
    /// Smallest and largest cell, m.
    pub min_cell: f64,
    /// Largest cell, m.
    pub max_cell: f64,
    /// Relative residual the solves stopped at.
    pub tol: f64,
    /// Estimated memory of the round, MiB.
    pub memory_mib: f64,
    /// The largest ratio of a quantity's estimated relative error to the target (quantities
    /// at singular points left out).
    pub worst: f64,
}

/// Why the loop ended.
#[derive(Clone, Debug, PartialEq)]
#[non_exhaustive]
pub enum Stop {
    /// Every quantity is within the target.
    Met,
    /// The next lattice would need more memory than allowed.
    MemoryLimit {
        /// Estimated memory of the smallest finer lattice, MiB.
        needed_mib: f64,
        /// The limit, MiB.
        limit_mib: f64,
    },
    /// The family has been bisected as often as allowed.
    Bisections,
    /// The far field's truncation alone is above the target, and no farther box fits.
    Truncation,
}

/// How the open sides were placed.
#[derive(Clone, Debug, PartialEq)]
pub struct FarField {
    /// Times the open sides were moved out.
    pub enlargements: usize,
    /// The domain solved on, m.
    pub x: [f64; 2],
    /// The domain solved on, m.
    pub y: [f64; 2],
}

/// What the loop did and how accurate its result is.
#[derive(Clone, Debug, PartialEq)]
pub struct Info {
    /// The relative target.
    pub target: f64,
    /// Every round, in order; the last one is the result's.
    pub rounds: Vec<Round>,
    /// The estimates of the result's quantities.
    pub estimates: Vec<Estimate>,
    /// Why the loop ended.
    pub stop: Stop,
    /// The far field, when a side is open.
    pub far_field: Option<FarField>,
}

impl Info {
    /// True when every quantity the target covers is within it.
    pub fn met(&self) -> bool {
        self.stop == Stop::Met
    }

    /// The warning that the target was not met, naming the quantity farthest beyond it and
    /// what stopped the loop; `None` when it was met.
    pub fn warning(&self) -> Option<Warning> {
        let limit = match self.stop {
            Stop::Met => return None,
            Stop::MemoryLimit {
                needed_mib,
                limit_mib,
            } => AccuracyLimit::Memory {
                needed_mib,
                limit_mib,
            },
            Stop::Bisections => AccuracyLimit::Refinements,
            Stop::Truncation => AccuracyLimit::Truncation,
        };
        let short = self.shortest()?;
        Some(Warning::AccuracyNotMet {
            quantity: short.quantity.clone(),
            relative: short.relative(),
            target: self.target,
            limit,
        })
    }

    /// Every warning of the loop: the target not met ([`Info::warning`]), and each force of
    /// a kind the target covers that is estimated but not held, with the reason.
    pub fn warnings(&self) -> Vec<Warning> {
        let not_held = self
            .estimates
            .iter()
            .filter_map(|e| match (&e.quantity, e.not_held) {
                (Quantity::Force { conductor }, Some(NotHeld::Force(reason))) => {
                    Some(Warning::ForceNotHeld {
                        conductor: conductor.clone(),
                        reason,
                        relative: e.relative(),
                    })
                }
                _ => None,
            });
        self.warning().into_iter().chain(not_held).collect()
    }

    /// The quantity the target covers farthest beyond it, if any is.
    pub fn shortest(&self) -> Option<&Estimate> {
        self.estimates
            .iter()
            .filter(|e| e.held && ratio(e, self.target) > 1.0)
            .max_by(|a, b| ratio(a, self.target).total_cmp(&ratio(b, self.target)))
    }
}

/// A loop that could not run. `Display` renders the code and the data, for logs; the command
/// line words it for users.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum AccuracyError {
    /// The target is not a number in (0, 1) (the value given).
    #[error("{TARGET_CODE}: Target({0:?})")]
    Target(f64),
    /// A study failed.
    #[error(transparent)]
    Study(#[from] StudyError),
    /// A line study failed.
    #[error(transparent)]
    Line(#[from] LineStudyError),
}

/// The code of [`AccuracyError::Target`].
const TARGET_CODE: &str = "accuracy-target";

impl AccuracyError {
    /// The stable code of this error (lower case words joined by `-`, never renamed or
    /// reused): the loop's own refusal of its target, or the failed study's own code (the
    /// design's, the lattice's, the operator's, the signals' or the line's).
    pub fn code(&self) -> &'static str {
        match self {
            AccuracyError::Target(_) => TARGET_CODE,
            AccuracyError::Study(e) => e.code(),
            AccuracyError::Line(e) => e.code(),
        }
    }
}

impl From<GridError> for AccuracyError {
    fn from(e: GridError) -> Self {
        AccuracyError::Study(StudyError::Grid(e))
    }
}

/// Solves `design` until every capacitance entry (and the forces and hot spots that
/// `params.quantities` names) is within the target, or a limit stops the loop.
pub fn solve(
    design: &Design,
    study: &StudyParams,
    params: &Params,
) -> Result<(Solution, Info), AccuracyError> {
    let which = params.quantities;
    let kind = Kind {
        plan: &|g: Grid, s: &StudyParams| plan::on_grid(g, s.method, s.error_estimate),
        run: &|d: &Design, p: &Plan, s: &StudyParams| Ok(study::run_planned(d, p, s)?),
        estimates: &|sol: &Solution| quantities::of_study(sol, which),
        order: &|sol: &Solution| sol.capacitance.error_model.as_ref().map(|m| m.order),
    };
    refine(design, study, params, &kind)
}

/// Solves the line study of `signals` in `design` until its scalar line parameters (Z0,
/// eps_eff and, for a pair, the modal ones) are within the target, or a limit stops it.
pub fn solve_line(
    design: &Design,
    signals: &[String],
    study: &StudyParams,
    params: &Params,
) -> Result<(LineStudy, Info), AccuracyError> {
    line_study::check_signals(design, signals).map_err(LineStudyError::from)?;
    let kind = Kind {
        plan: &|g: Grid, s: &StudyParams| {
            plan::on_grid(g, s.method, s.error_estimate).holding_a_solution()
        },
        run: &|d: &Design, p: &Plan, s: &StudyParams| {
            Ok(line_study::run_planned(d, p, signals, s)?)
        },
        estimates: &|ls: &LineStudy| quantities::of_line(ls),
        order: &|ls: &LineStudy| {
            let a = ls.solution.capacitance.error_model.as_ref()?.order;
            let b = ls.vacuum.capacitance.error_model.as_ref()?.order;
            Some(a.min(b))
        },
    };
    refine(design, study, params, &kind)
}

/// The lattice of member `k` of the graded family of `design` (member [`BISECTIONS`] is the
/// design's own graded lattice; the loop solves on that one and finer ones; every other
/// line of member `k` is member `k - 1`).
pub fn lattice(design: &Design, params: &Params, k: usize) -> Result<Grid, GridError> {
    let family = Family {
        design,
        grading: params.grading,
        enlargements: 0,
    };
    Ok(family.member(k)?.1)
}

/// The solver tolerance for a target: [`TOL_SHARE`] of it, never looser than the caller's
/// (when one is fixed) and never below what double precision reaches.
pub fn solver_tolerance(caller: Option<f64>, target: f64) -> f64 {
    let own = target * TOL_SHARE;
    caller.map_or(own, |c| c.min(own)).max(MIN_TOL)
}

/// The loop's relative residual as a share of the target: four decades below it. The
/// capacitance of a small coupling beside large self capacitances carries a solver error
/// well above the relative residual: on the sensor pad at 1e-3 (289 449 nodes, every entry
/// against the same lattice solved to 1e-10) the worst entry's solver error was 2.8e-7 at a
/// residual of 1e-7 (three multigrid-CG iterations from the nested start, 3e-4 of the
/// target), 8.7e-9 at 1e-8 (four), but 1.4e-5 at 1e-6 (two; 1.4 % of the target, where
/// the asymmetry of the matrix, the solver's estimate, read up to 160 times less).
pub const TOL_SHARE: f64 = 1e-4;

/// Tightest relative residual the loop asks for.
const MIN_TOL: f64 = 1e-13;

/// Share of the target the truncation of the far field may take.
const TRUNCATION_SHARE: f64 = 0.5;

/// Share of the target above which the solver's error tightens the tolerance.
const SOLVER_SHARE: f64 = 0.1;

/// Most times the open sides are moved out.
const MAX_ENLARGEMENTS: usize = 3;

/// Largest refinement of one round, along each axis.
const MAX_STEP: f64 = 8.0;

/// Smallest refinement of one round, along each axis.
const MIN_STEP: f64 = 1.1;

/// The predicted refinement is taken this much larger, so that the next round lands near
/// half the target at second order rather than on it: the estimates of the demos' small
/// quantities read up to 1.6 times low near 1e-4 (the microstrip's Z0 against the
/// finite-element value), and a round that lands just under the target would leave them
/// beyond it.
const SAFETY: f64 = 1.4;

/// The refinement of the probe, the first round of a design with no open side: an eighth of
/// the cells of the design's own lattice along each axis (about a fiftieth of its nodes).
/// Its estimate (and the order observed from its three lattices) predicts the round that
/// lands at [`LANDING`] of the target; it is never the result. On the sensor pad at 1e-3 the
/// design's own lattice lands at 0.52 of the target (387 045 nodes); after the probe (8 145
/// nodes, 26 times the target at the observed order 1.91) a round sized for 0.65 landed at
/// 0.67 with 289 449 (true worst error 6.4e-4 against the finite-element values), and at
/// 1e-4 at 0.70 with 3 197 905 nodes (6.5e-5 true) where the design's own lattice and the
/// round after it took 387 045 and 4 073 113. A quarter of the cells (27 297 nodes) predicted
/// as well (0.67 and 0.59) but cost more than it saved: its surfaces and hot spots are most
/// of a probe's time. A probe with no estimate (a lattice too small to coarsen) is followed
/// by the design's own lattice; the round after a probe is at most [`MAX_STEP`] times the
/// design's own lattice, as the round after that lattice.
const PROBE: f64 = 0.125;

/// The share of the target the round after the probe is predicted to land at: an error
/// estimate that is honest within the ratios the reference cases show is then below the target
/// with a margin, and a prediction that misses costs another round, never accuracy (the
/// result is accepted on its own estimate only). On the sensor pad (solver tolerance 1e-4 of
/// the target) the round lands at 0.69 of 1e-3 with 251 125 nodes (6.6e-4 true) and at 0.72
/// of 1e-4 with 2 777 297 (6.7e-5 true); sized for 0.65 it took 289 449 and 3 197 905, 13 %
/// more. Sized for 0.8 it landed at 0.90 of 1e-3 (241 241 nodes, 8.6e-4 true): too near
/// the target for a prediction that missed by 13 %.
const LANDING: f64 = 0.75;

/// Smaller refinements tried, as fractions of the predicted one's logarithm, when the
/// memory limit refuses it.
const FALLBACKS: [f64; 3] = [0.75, 0.5, 0.25];

/// What the loop needs of a kind of study.
struct Kind<'a, T> {
    plan: &'a dyn Fn(Grid, &StudyParams) -> Plan,
    run: &'a dyn Fn(&Design, &Plan, &StudyParams) -> Result<T, AccuracyError>,
    estimates: &'a dyn Fn(&T) -> Vec<Estimate>,
    order: &'a dyn Fn(&T) -> Option<f64>,
}

/// The estimated relative error of `e` over the target (0 for an exact zero).
fn ratio(e: &Estimate, target: f64) -> f64 {
    let err = e.error();
    if err == 0.0 {
        0.0
    } else {
        err / (target * e.value.abs())
    }
}

/// The graded family of a design. Member `k` is the base lines (cells up to
/// `2^BISECTIONS` times the design's `cell`) refined `k` times along the grading's map
/// ([`grading::refined`]: bisection away from singular points, radical grading next to
/// them), with the open sides moved out `enlargements` times (the lines beyond the design's
/// box bisected `k` times); its two coarser lattices (every other line, twice) are members
/// `k - 1` and `k - 2`, the ones its error estimate compares it with. Member [`BISECTIONS`]
/// of a design whose sides stay is the design's own graded lattice.
struct Family<'a> {
    design: &'a Design,
    grading: grading::Params,
    enlargements: usize,
}

impl Family<'_> {
    /// The design (its open sides moved out) and the lines of member `k`.
    fn lines(&self, k: usize) -> Result<(Design, Lines), GridError> {
        let coarsest = (1usize << BISECTIONS) as f64 * self.design.domain.cell;
        let mut lines = grading::refined(self.design, coarsest, &self.grading, k)?;
        let mut d = self.design.clone();
        if self.enlargements > 0 {
            let mut base = grading::lines(self.design, coarsest, &self.grading)?;
            for _ in 0..self.enlargements {
                (d, base) = far_field::enlarged(&d, &base, self.grading.growth)
                    .expect("only designs with an open side are enlarged");
            }
            lines = far_field::joined(&base, &lines, k);
        }
        Ok((d, lines))
    }

    /// The design and lattice of member `k`.
    fn member(&self, k: usize) -> Result<(Design, Grid), GridError> {
        let (d, lines) = self.lines(k)?;
        Ok((d, Grid::from_lines(lines.x, lines.y)?))
    }
}

/// Hot spots on two lattices are one when this close, in smallest cells of the lattice.
const SAME_SPOT_CELLS: f64 = 2.0;

fn refine<T>(
    design: &Design,
    study: &StudyParams,
    params: &Params,
    kind: &Kind<T>,
) -> Result<(T, Info), AccuracyError> {
    let target = params.target;
    if !(target.is_finite() && target > 0.0 && target < 1.0) {
        return Err(AccuracyError::Target(target));
    }
    let mut design = design.clone();
    design.lattice = Lattice::Graded;
    let design = design;
    let mut sp = study.clone().with_error_estimate(true);
    sp.solver.tol = solver_tolerance(params.solver_tol, target);
    let limit = params.max_memory_mib;
    let mut family = Family {
        design: &design,
        grading: params.grading,
        enlargements: 0,
    };

    // The far field: move open sides out until the truncation is within its share.
    let mut truncation: Option<Vec<Estimate>> = None;
    let mut far = None;
    // The study of the design's own box and lattice, run with the first round's settings: the
    // first round is this study when the far field needs no farther box.
    let mut first: Option<T> = None;
    if far_field::has_open_side(&design) {
        let quick = sp.cold().with_error_estimate(false);
        let k = BISECTIONS;
        let mut near: Option<Vec<Estimate>> = None;
        for _ in 0..MAX_ENLARGEMENTS {
            let bigger = Family {
                enlargements: family.enlargements + 1,
                ..family
            };
            let (big, big_grid) = bigger.member(k)?;
            if (kind.plan)(big_grid.clone(), &sp).memory_mib() > limit {
                break;
            }
            let (near_design, near_grid) = family.member(k)?;
            let within = SAME_SPOT_CELLS * near_grid.min_cell();
            let mut near_est = match near.take() {
                Some(e) => e,
                None => {
                    let p = (kind.plan)(near_grid, &sp);
                    let out = (kind.run)(&near_design, &p, &sp)?;
                    let e = (kind.estimates)(&out);
                    first = Some(out);
                    e
                }
            };
            let p = (kind.plan)(big_grid, &quick);
            let far_est = (kind.estimates)(&(kind.run)(&big, &p, &quick)?);
            quantities::add_truncation(&mut near_est, &far_est, within);
            let fits =
                |e: &Estimate| !e.held || e.truncation <= TRUNCATION_SHARE * target * e.value.abs();
            if near_est.iter().all(fits) {
                truncation = Some(near_est);
                break;
            }
            // The farther box's truncation is at most the change (it falls at least as the
            // inverse of the box size).
            let mut moved = far_est.clone();
            for e in moved.iter_mut() {
                e.truncation = near_est
                    .iter()
                    .find(|n| n.quantity == e.quantity)
                    .map_or(0.0, |n| 0.5 * n.truncation);
            }
            truncation = Some(moved);
            family = bigger;
            near = Some(far_est);
        }
        let (d, _) = family.lines(BISECTIONS)?;
        far = Some(FarField {
            enlargements: family.enlargements,
            x: d.domain.x,
            y: d.domain.y,
        });
    }

    // Refinement over the design's own graded lattice: member `BISECTIONS + log2` of the
    // family whose grading has the density of the fraction. A design with no open side starts
    // with the probe, whose estimate predicts the first round that may be the result; one
    // with an open side starts on its own lattice, the study its far field began with.
    let probe = far.is_none();
    let mut refinement = if probe { PROBE } else { 1.0f64 };
    let largest = (1u64 << params.max_bisections.saturating_sub(BISECTIONS).min(60)) as f64;
    let mut rounds = Vec::new();
    loop {
        let (k, density) = split_refinement(refinement);
        family.grading.density = params.grading.density * density;
        let (member_design, grid) = family.member(k)?;
        let within = SAME_SPOT_CELLS * grid.min_cell();
        let mut round = Round {
            bisections: k,
            refinement,
            nx: grid.nx,
            ny: grid.ny,
            min_cell: grid.min_cell(),
            max_cell: grid.max_cell(),
            tol: sp.solver.tol,
            memory_mib: 0.0,
            worst: f64::INFINITY,
        };
        let plan = (kind.plan)(grid, &sp);
        round.memory_mib = plan.memory_mib();
        // The first round on the design's own box is the study the far field began with.
        let out = match first.take() {
            Some(out) if family.enlargements == 0 && refinement == 1.0 => out,
            _ => (kind.run)(&member_design, &plan, &sp)?,
        };
        let mut estimates = (kind.estimates)(&out);
        if let Some(t) = &truncation {
            quantities::carry_truncation(&mut estimates, t, within);
        }
        round.worst = estimates
            .iter()
            .filter(|e| e.held)
            .map(|e| ratio(e, target))
            .fold(0.0, f64::max);
        let worst = round.worst;
        rounds.push(round);
        let probing = probe && refinement == PROBE;
        if worst <= 1.0 && !probing {
            return Ok(done(out, Stop::Met, estimates, rounds, target, &far));
        }
        let open = |e: &&Estimate| e.held && ratio(e, target) > 1.0;
        let short: Vec<&Estimate> = estimates.iter().filter(open).collect();
        if short.iter().any(|e| e.truncation > target * e.value.abs()) {
            return Ok(done(out, Stop::Truncation, estimates, rounds, target, &far));
        }
        let solver_bound = short
            .iter()
            .any(|e| e.solver > SOLVER_SHARE * target * e.value.abs());
        if solver_bound && sp.solver.tol > MIN_TOL {
            sp.solver.tol = (sp.solver.tol * 1e-2).max(MIN_TOL);
            continue;
        }
        // The refinement that brings the worst estimate to the target at the observed order
        // (from the probe: to `LANDING` of it, at most `MAX_STEP` times the design's own
        // lattice, as from that lattice; with no estimate, the design's own lattice).
        let p = (kind.order)(&out).unwrap_or(1.0).clamp(0.5, 2.0);
        let want = match probing {
            true if worst.is_finite() => (worst / LANDING)
                .powf(1.0 / p)
                .clamp(MIN_STEP, MAX_STEP / PROBE),
            true => 1.0 / PROBE,
            false => (worst.powf(1.0 / p) * SAFETY).clamp(MIN_STEP, MAX_STEP),
        };
        if refinement >= largest {
            return Ok(done(out, Stop::Bisections, estimates, rounds, target, &far));
        }
        let mut step = None;
        let mut needed = f64::INFINITY;
        for f in std::iter::once(1.0).chain(FALLBACKS) {
            let next = (refinement * want.powf(f).max(MIN_STEP)).min(largest);
            let (k, density) = split_refinement(next);
            let member = Family {
                grading: grading::Params {
                    density: params.grading.density * density,
                    ..family.grading
                },
                ..family
            };
            let mib = (kind.plan)(member.member(k)?.1, &sp).memory_mib();
            if mib <= limit {
                step = Some(next);
                break;
            }
            needed = needed.min(mib);
        }
        match step {
            Some(next) => refinement = next,
            None => {
                let stop = Stop::MemoryLimit {
                    needed_mib: needed,
                    limit_mib: limit,
                };
                return Ok(done(out, stop, estimates, rounds, target, &far));
            }
        }
    }
}

/// The member and the density of a refinement `r` over the design's own lattice:
/// `r = 2^(k - BISECTIONS) * density`, density in [1, 2) for `r >= 1`; below 1 (the probe, and
/// a round predicted from it) the design's own member with the density `r`, so that its two
/// coarser lattices still hold every geometry line.
fn split_refinement(r: f64) -> (usize, f64) {
    if r < 1.0 {
        return (BISECTIONS, r);
    }
    let whole = r.log2().floor().max(0.0);
    let density = (r / whole.exp2()).max(1.0);
    // Rounding of the logarithm may leave the density a hair under 2.
    if density >= 2.0 {
        (BISECTIONS + whole as usize + 1, density / 2.0)
    } else {
        (BISECTIONS + whole as usize, density)
    }
}

/// The result of the last round with what the loop did.
fn done<T>(
    out: T,
    stop: Stop,
    estimates: Vec<Estimate>,
    rounds: Vec<Round>,
    target: f64,
    far: &Option<FarField>,
) -> (T, Info) {
    let info = Info {
        target,
        rounds,
        estimates,
        stop,
        far_field: far.clone(),
    };
    (out, info)
}

#[cfg(test)]
mod tests;
