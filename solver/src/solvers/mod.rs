//! Linear solvers for the five-point operator: red-black SOR, Jacobi-preconditioned CG and
//! multigrid-preconditioned CG. They know nothing of designs: a [`Stencil5`] and right-hand
//! sides in, a solution and an [`Info`] (or a [`SolveError`] carrying one) out.
//!
//! Invariants: the relative residual is `||b - A x||_2 / ||b||_2` over the full lattice (and a
//! solve given a charge scale also meets the [`charge`] test on `||b - A x||_1`); every
//! reduction goes through [`crate::parallel`], so results are bit-identical for any thread
//! count; `x` holds the last iterate also when an error is returned.

pub mod cg;
pub mod charge;
pub mod multigrid;
pub mod sor;

use crate::stencil::Stencil5;
pub use charge::{ChargeScale, CHARGE_TOL_FACTOR};
use std::sync::Arc;

/// Which solver to use.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum Method {
    /// Multigrid-preconditioned conjugate gradients (the default: fastest).
    #[default]
    Multigrid,
    /// Jacobi-preconditioned conjugate gradients.
    Cg,
    /// Red-black successive over-relaxation.
    Sor,
}

impl Method {
    /// Every method, for cross-checks.
    pub const ALL: [Method; 3] = [Method::Multigrid, Method::Cg, Method::Sor];

    /// The name reported in results.
    pub fn name(self) -> &'static str {
        match self {
            Method::Multigrid => "multigrid-cg",
            Method::Cg => "jacobi-cg",
            Method::Sor => "red-black-sor",
        }
    }
}

impl std::fmt::Display for Method {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}

/// Called with (iteration, relative residual) as a solve proceeds.
pub type Monitor = Arc<dyn Fn(usize, f64) + Send + Sync>;

/// Solver settings. Start from `Params::default()` and set the fields that matter (more
/// may be added).
#[derive(Clone)]
#[non_exhaustive]
pub struct Params {
    /// Stop when the relative residual falls to this value (and, with a `charge_scale`,
    /// the charge test at `CHARGE_TOL_FACTOR` times it is met).
    pub tol: f64,
    /// Give up after this many iterations; `None`: the method's own limit, which grows with
    /// the lattice.
    pub max_iter: Option<usize>,
    /// SOR relaxation factor; `None` picks the optimum for the Laplacian on this lattice.
    pub omega: Option<f64>,
    /// Progress callback.
    pub monitor: Option<Monitor>,
    /// The charge scale of an iterate, for solves whose results are charges: with it, a
    /// solve that meets `tol` goes on until also `||b - A x||_1 <= CHARGE_TOL_FACTOR * tol *
    /// scale(x)` (see [`charge`]).
    pub charge_scale: Option<ChargeScale>,
}

impl Default for Params {
    fn default() -> Self {
        Params {
            tol: 1e-8,
            max_iter: None,
            omega: None,
            monitor: None,
            charge_scale: None,
        }
    }
}

impl std::fmt::Debug for Params {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Params")
            .field("tol", &self.tol)
            .field("max_iter", &self.max_iter)
            .field("omega", &self.omega)
            .field("charge_scale", &self.charge_scale.is_some())
            .finish_non_exhaustive()
    }
}

/// Why a solve stopped.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[non_exhaustive]
pub enum StopReason {
    /// The relative residual reached the tolerance.
    Converged,
    /// The right-hand side is zero; the solution is zero.
    ZeroRhs,
    /// The iteration limit was reached first.
    MaxIterations,
    /// The residual stopped decreasing.
    Stagnated,
    /// The residual grew without bound.
    Diverged,
    /// A NaN or infinity appeared.
    NonFinite,
}

impl StopReason {
    /// The stable code of this reason (lower case words joined by `-`, never renamed or
    /// reused); the command line words it for users.
    pub fn code(&self) -> &'static str {
        match self {
            StopReason::Converged => "converged",
            StopReason::ZeroRhs => "zero-rhs",
            StopReason::MaxIterations => "max-iterations",
            StopReason::Stagnated => "stagnated",
            StopReason::Diverged => "diverged",
            StopReason::NonFinite => "non-finite",
        }
    }
}

impl std::fmt::Display for StopReason {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.code())
    }
}

/// What a solve did.
#[derive(Clone, Debug, PartialEq)]
pub struct Info {
    /// The method that ran.
    pub method: Method,
    /// Iterations performed.
    pub iterations: usize,
    /// Final relative residual.
    pub relative_residual: f64,
    /// Why it stopped.
    pub reason: StopReason,
    /// `||b - A x||_1` over the charge scale at exit, when the solve was given one: a bound
    /// on the error of every charge read from it, relative to the largest.
    pub charge_residual: Option<f64>,
}

impl Params {
    /// These settings with the tolerance `tol`.
    pub fn with_tol(mut self, tol: f64) -> Self {
        self.tol = tol;
        self
    }

    /// These settings with the iteration limit `max_iter`.
    pub fn with_max_iter(mut self, max_iter: usize) -> Self {
        self.max_iter = Some(max_iter);
        self
    }

    /// These settings with the SOR relaxation factor `omega`.
    pub fn with_omega(mut self, omega: f64) -> Self {
        self.omega = Some(omega);
        self
    }

    /// The iteration limit: `max_iter`, or the method's `default` when none is given.
    pub(crate) fn iteration_limit(&self, default: usize) -> usize {
        self.max_iter.unwrap_or(default)
    }
}

impl Info {
    /// The solve of a zero right-hand side: the solution is zero, nothing to iterate.
    pub(crate) fn zero_rhs(method: Method) -> Info {
        Info {
            method,
            iterations: 0,
            relative_residual: 0.0,
            reason: StopReason::ZeroRhs,
            charge_residual: None,
        }
    }

    /// True when the result met the tolerance.
    pub fn converged(&self) -> bool {
        matches!(self.reason, StopReason::Converged | StopReason::ZeroRhs)
    }

    /// `Ok(self)` when converged, else the error that carries it.
    pub(crate) fn into_result(self) -> Result<Info, SolveError> {
        if self.converged() {
            Ok(self)
        } else {
            Err(SolveError::NotConverged(self))
        }
    }
}

/// A solve that did not reach the tolerance. `x` holds the last iterate. `Display` renders
/// the method, the reason's code and the numbers, for logs.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum SolveError {
    /// Stopped before converging; the info says why.
    #[error("not-converged: {} {} after {} iterations, relative residual {:.3e}",
        .0.method, .0.reason, .0.iterations, .0.relative_residual)]
    NotConverged(Info),
}

impl SolveError {
    /// The diagnostics of the failed solve.
    pub fn info(&self) -> &Info {
        match self {
            SolveError::NotConverged(i) => i,
        }
    }
}

/// A solver made ready for one operator: setup (such as a multigrid hierarchy) done once and
/// shared by every right-hand side.
#[derive(Debug)]
pub enum Prepared {
    /// Jacobi-preconditioned CG.
    Cg,
    /// Red-black SOR.
    Sor,
    /// Multigrid-preconditioned CG with its hierarchy.
    Multigrid(Box<multigrid::Hierarchy>),
}

/// Work vectors kept from one solve to the next by [`Prepared::solve_in`]: empty until the
/// first solve, then the multigrid method's (the other methods keep none). At 2049 x 2049
/// nodes they are about 170 MB that each solve would otherwise allocate and zero again.
#[derive(Debug, Default)]
pub struct Scratch {
    multigrid: Option<multigrid::Scratch>,
}

/// Does the setup of `method` for `stencil`.
pub fn prepare(method: Method, stencil: &Stencil5) -> Prepared {
    prepare_with(method, stencil, &multigrid::Options::default())
}

/// [`prepare`] with the multigrid hierarchy's options (the other methods have no setup).
pub fn prepare_with(
    method: Method,
    stencil: &Stencil5,
    multigrid: &multigrid::Options,
) -> Prepared {
    match method {
        Method::Cg => Prepared::Cg,
        Method::Sor => Prepared::Sor,
        Method::Multigrid => Prepared::Multigrid(Box::new(multigrid::Hierarchy::with_options(
            stencil, multigrid,
        ))),
    }
}

impl Prepared {
    /// Solves `A x = b`, starting from the given `x`.
    pub fn solve(
        &self,
        stencil: &Stencil5,
        b: &[f64],
        x: &mut [f64],
        params: &Params,
    ) -> Result<Info, SolveError> {
        match self {
            Prepared::Cg => cg::solve(stencil, b, x, params),
            Prepared::Sor => sor::solve(stencil, b, x, params),
            Prepared::Multigrid(h) => h.solve(stencil, b, x, params),
        }
    }

    /// [`Prepared::solve`] in `scratch`, which keeps the method's work vectors from one solve
    /// to the next (start with [`Scratch::default`]; use it with this preparation only).
    /// Same results as `solve`.
    pub fn solve_in(
        &self,
        stencil: &Stencil5,
        b: &[f64],
        x: &mut [f64],
        params: &Params,
        scratch: &mut Scratch,
    ) -> Result<Info, SolveError> {
        match self {
            Prepared::Multigrid(h) => {
                let s = scratch.multigrid.get_or_insert_with(|| h.scratch());
                h.solve_in(stencil, b, x, params, s)
            }
            _ => self.solve(stencil, b, x, params),
        }
    }

    /// Solves for several right-hand sides; `xs[k]` is the starting guess for `bs[k]`.
    /// Returns one result per right-hand side, in order.
    pub fn solve_many(
        &self,
        stencil: &Stencil5,
        bs: &[Vec<f64>],
        xs: &mut [Vec<f64>],
        params: &Params,
    ) -> Vec<Result<Info, SolveError>> {
        match self {
            Prepared::Multigrid(h) => h.solve_many(stencil, bs, xs, params),
            _ => bs
                .iter()
                .zip(xs.iter_mut())
                .map(|(b, x)| self.solve(stencil, b, x, params))
                .collect(),
        }
    }

    /// The method this was prepared for.
    pub fn method(&self) -> Method {
        match self {
            Prepared::Cg => Method::Cg,
            Prepared::Sor => Method::Sor,
            Prepared::Multigrid(_) => Method::Multigrid,
        }
    }
}

/// Prepares and solves in one call.
pub fn solve(
    method: Method,
    stencil: &Stencil5,
    b: &[f64],
    x: &mut [f64],
    params: &Params,
) -> Result<Info, SolveError> {
    prepare(method, stencil).solve(stencil, b, x, params)
}

/// The residual history of an iteration and the reasons to stop it, shared by the iterative
/// methods so that they stop for the same reasons.
#[derive(Clone, Copy, Debug)]
pub(crate) struct Progress {
    tol: f64,
    initial: f64,
    best: f64,
    /// Iterations since `best` last fell.
    since_best: usize,
    /// Iterations without a fall below half of `best` that count as stagnation.
    window: usize,
}

impl Progress {
    /// A history that starts at the relative residual `initial`, aiming at `tol`.
    pub(crate) fn new(initial: f64, tol: f64, window: usize) -> Progress {
        Progress {
            tol,
            initial,
            best: initial,
            since_best: 0,
            window,
        }
    }

    /// True once the relative residual has reached the tolerance.
    pub(crate) fn met(&self) -> bool {
        self.best <= self.tol
    }

    /// Records the relative residual `rel` reached after `steps` more iterations and says
    /// whether to stop: converged, non-finite, diverged (1e8 times the start) or stagnated.
    pub(crate) fn record(&mut self, rel: f64, steps: usize) -> Option<StopReason> {
        if rel < self.best {
            self.best = rel;
            self.since_best = 0;
        } else {
            self.since_best += steps;
        }
        if rel <= self.tol {
            Some(StopReason::Converged)
        } else if !rel.is_finite() {
            // NaN lands here too: it compares false with the tolerance.
            Some(StopReason::NonFinite)
        } else if rel > 1e8 * self.initial.max(1.0) {
            Some(StopReason::Diverged)
        } else if self.since_best > self.window && rel > 0.5 * self.best {
            Some(StopReason::Stagnated)
        } else {
            None
        }
    }
}

/// Why a conjugate-gradient step cannot go on when `p.Ap` is not positive (the operator or
/// preconditioner is not positive definite in finite precision), if it cannot.
pub(crate) fn curvature_breakdown(pap: f64) -> Option<StopReason> {
    if pap.is_nan() || pap <= 0.0 {
        Some(if pap.is_finite() {
            StopReason::Stagnated
        } else {
            StopReason::NonFinite
        })
    } else {
        None
    }
}

/// The outcome of a Krylov iteration that stopped for `reason` (none: the iteration limit)
/// with the true relative residual `true_rel` and charge ratio `charge_residual`: the
/// recurrence can drift from the true residual, and only the true one may claim success.
pub(crate) fn krylov_outcome(
    method: Method,
    iterations: usize,
    reason: Option<StopReason>,
    true_rel: f64,
    charge_residual: Option<f64>,
    tol: f64,
) -> Result<Info, SolveError> {
    let mut reason = reason.unwrap_or(StopReason::MaxIterations);
    if reason == StopReason::Converged && true_rel > 10.0 * tol {
        reason = StopReason::Stagnated;
    }
    if !true_rel.is_finite() {
        reason = StopReason::NonFinite;
    }
    Info {
        method,
        iterations,
        relative_residual: true_rel,
        reason,
        charge_residual,
    }
    .into_result()
}

#[cfg(test)]
pub(crate) mod testing {
    //! Operators shared by the solver unit tests.
    use crate::stencil::Stencil5;

    /// A box with a dielectric jump and an interior fixed block; rhs from a smooth source.
    pub fn jump_problem(n: usize, contrast: f64) -> (Stencil5, Vec<f64>) {
        let mut s = Stencil5::dirichlet_box(n, n, |_, j| if j < n / 2 { contrast } else { 1.0 });
        // Fix an interior block (a conductor): identity rows, couplings cut.
        let (i0, i1, j0, j1) = (n / 3, n / 3 + n / 8 + 1, 2 * n / 3, 2 * n / 3 + 2);
        let nx = n;
        for j in j0..j1 {
            for i in i0..i1 {
                let p = i + j * nx;
                s.unknown[p] = false;
            }
        }
        for p in 0..s.len() {
            if !s.unknown[p] {
                s.diag[p] = 1.0;
                let (i, j) = (p % nx, p / nx);
                if i + 1 < nx {
                    s.east[p] = 0.0;
                }
                if i > 0 {
                    s.east[p - 1] = 0.0;
                }
                if j + 1 < n {
                    s.north[p] = 0.0;
                }
                if j > 0 {
                    s.north[p - nx] = 0.0;
                }
            }
        }
        let b = (0..s.len())
            .map(|p| {
                if s.unknown[p] {
                    1.0 + ((p % nx) as f64 * 0.1).sin()
                } else {
                    0.0
                }
            })
            .collect();
        (s, b)
    }
}

#[cfg(test)]
mod progress_tests {
    use super::{Progress, StopReason};

    #[test]
    fn progress_stops_for_each_reason_and_not_before() {
        let mut p = Progress::new(1.0, 1e-8, 3);
        assert_eq!(p.record(0.5, 1), None);
        assert_eq!(p.record(1e-9, 1), Some(StopReason::Converged));
        let mut p = Progress::new(1.0, 1e-8, 3);
        assert_eq!(p.record(f64::NAN, 1), Some(StopReason::NonFinite));
        assert_eq!(p.record(f64::INFINITY, 1), Some(StopReason::NonFinite));
        let mut p = Progress::new(2.0, 1e-8, 3);
        assert_eq!(p.record(1.9e8, 1), None);
        assert_eq!(p.record(2.1e8, 1), Some(StopReason::Diverged));
        // Stagnation: more than `window` iterations since the best residual last fell, and
        // still above half of it.
        let mut p = Progress::new(1.0, 1e-8, 3);
        assert_eq!(p.record(0.1, 1), None);
        for _ in 0..3 {
            assert_eq!(p.record(0.1, 1), None);
        }
        assert_eq!(p.record(0.1, 1), Some(StopReason::Stagnated));
        // A fall below half of the best in time keeps it going.
        let mut p = Progress::new(1.0, 1e-8, 3);
        assert_eq!(p.record(0.1, 2), None);
        assert_eq!(p.record(0.2, 2), None);
        assert_eq!(p.record(0.04, 2), None);
    }
}

#[cfg(test)]
mod correction_tests {
    use super::{solve, testing::jump_problem, Method, Params};
    use crate::parallel;

    #[test]
    fn every_method_solves_an_operator_with_a_correction() {
        // Diagonal couplings w (e_p - e_q)(e_p - e_q)^T between free nodes along a band, as
        // cells cut by an oblique interface add them: symmetric, zero row sums, PSD.
        let (mut a, b) = jump_problem(33, 20.0);
        let nx = a.nx;
        let mut cross = Vec::new();
        for k in 4..26 {
            let (p, q) = (k + (k + 2) * nx, k + 1 + (k + 3) * nx);
            if a.unknown[p] && a.unknown[q] {
                let w = 0.3 + 0.01 * k as f64;
                cross.extend([(p, p, w), (q, q, w), (p, q, -w), (q, p, -w)]);
            }
        }
        cross.sort_by_key(|e| (e.0, e.1));
        let mut merged: Vec<(u32, u32, f64)> = Vec::new();
        for (p, q, w) in cross {
            match merged.last_mut() {
                Some(m) if (m.0, m.1) == (p as u32, q as u32) => m.2 += w,
                _ => merged.push((p as u32, q as u32, w)),
            }
        }
        assert!(merged.len() > 40);
        let five = a.clone();
        a.cross = merged;
        let params = Params {
            tol: 1e-10,
            ..Params::default()
        };
        let mut plain = vec![0.0; a.len()];
        solve(Method::Cg, &five, &b, &mut plain, &params).unwrap();
        let mut x = Vec::new();
        for m in Method::ALL {
            let mut xm = vec![0.0; a.len()];
            solve(m, &a, &b, &mut xm, &params).unwrap();
            let mut r = vec![0.0; a.len()];
            let rel = a.residual(&b, &xm, &mut r) / parallel::norm2(&b);
            assert!(rel <= 2e-10, "{m:?}: residual {rel:e}");
            x.push(xm);
        }
        let scale = x[0].iter().fold(0.0f64, |m, v| m.max(v.abs()));
        let gap = |u: &[f64], v: &[f64]| {
            u.iter()
                .zip(v)
                .fold(0.0f64, |m, (a, b)| m.max((a - b).abs()))
        };
        for xm in &x[1..] {
            assert!(gap(&x[0], xm) < 1e-7 * scale, "{}", gap(&x[0], xm));
        }
        // The correction is felt.
        assert!(gap(&x[0], &plain) > 1e-3 * scale);
    }
}
