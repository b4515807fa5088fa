//! Multigrid-preconditioned conjugate gradients for the five-point operator.
//!
//! The hierarchy is geometric in its lattices and algebraic in its operators: each coarser
//! lattice keeps the even indices plus the last one along both axes, interpolation is
//! operator-dependent (black-box weights from the couplings, so dielectric jumps, conductor
//! surfaces and thin conductors are seen by every level), and coarse operators are Galerkin
//! products `P^T A P` (nine-point). One symmetric V-cycle — red-black Gauss–Seidel on the fine
//! level, four-colour Gauss–Seidel on coarse levels, a banded Cholesky solve on the coarsest —
//! preconditions CG (the loop of `cg::pcg`, with its vector work fused into fewer passes).
//!
//! Smoother choice: point smoothing stalls on stretched cells (graded lattices where a fine
//! line crosses a coarse region), where one direction's couplings dominate. When at least 1 %
//! of the free nodes draw 80 % or more of their diagonal from couplings along one axis
//! (`relaxation`: in a homogeneous medium, cells stretched beyond 2 : 1), every level is
//! smoothed instead by alternating zebra line Gauss–Seidel (x-lines even, odd, y-lines even,
//! odd; reversed after the coarse correction; one sweep each way on the fine level, two on
//! coarse levels), the coarse operators are kept in double
//! precision and the line points' weights use the lumped rule (`interpolation::Rule`), which
//! keeps interpolating a constant exactly where couplings across a line exceed those along
//! it by many decades (steep grading at a junction: cells stretched 10^5 : 1). Uniform lattices keep the point smoother and its results; [`Options::smoother`]
//! forces either. Standard (full) coarsening with operator-dependent interpolation and
//! alternating line relaxation is the combination known to be robust for anisotropy in
//! either direction (J. E. Dendy, "Black box multigrid", J. Comput. Phys. 48, 1982; U.
//! Trottenberg, C. W. Oosterlee, A. Schüller, "Multigrid", 2001, sec. 5.1–5.2).
//!
//! Invariants: fixed nodes keep zero corrections on every level; the preconditioner is
//! symmetric positive definite and a fixed linear map, so CG's convergence theory holds; the
//! setup and every cycle are bit-identical for any thread count; the hierarchy stores only
//! the coarse operators' upper halves (five numbers per coarse node), never the fine operator
//! or interpolation weights, which are recomputed from the couplings when used.
//!
//! Files: `hierarchy` (settings and the levels built once), `interpolation` and `galerkin`
//! (weights and coarse operators), `level` and `coarsest` (storage and the direct solve),
//! `smoother`, `lines` and `transfer` (the lattice kernels), `relaxation` (the choice of
//! smoother), `cycle` (the V-cycle), `krylov` (the CG loop around it); this file solves with
//! a hierarchy.

// Coarse coefficients are stored as `level::Real` (f32 or f64).
// Lattice kernels index several arrays by node number at once.
#![allow(
    clippy::unnecessary_cast,
    clippy::needless_range_loop,
    clippy::manual_div_ceil
)]

mod coarsest;
mod cycle;
mod galerkin;
mod hierarchy;
mod interpolation;
mod krylov;
mod level;
mod lines;
mod relaxation;
mod smoother;
mod transfer;

use super::{Info, Params, SolveError};
use crate::stencil::Stencil5;
use cycle::Workspace;
pub use hierarchy::{Hierarchy, Options};
use interpolation::LineWeights;
use level::Level;
pub use relaxation::{stretched_fraction, Relaxation, Smoother, STRETCHED_FRACTION, STRONG_SHARE};

impl Hierarchy {
    /// Bytes held by the hierarchy plus the scratch of one solve (excluding the fine
    /// operator and CG's own vectors).
    pub fn bytes(&self) -> usize {
        self.levels.iter().map(Level::bytes).sum::<usize>()
            + self.line_levels.iter().map(Level::bytes).sum::<usize>()
            + self.weights.iter().map(LineWeights::bytes).sum::<usize>()
            + self.coarsest.bytes()
            + Workspace::new(self).bytes()
    }

    fn check(&self, a: &Stencil5) {
        assert_eq!(
            (a.nx, a.ny),
            self.fine,
            "hierarchy built for another lattice"
        );
    }

    /// Solves `A x = b` by multigrid-preconditioned CG from the starting guess in `x`.
    pub fn solve(
        &self,
        a: &Stencil5,
        b: &[f64],
        x: &mut [f64],
        params: &Params,
    ) -> Result<Info, SolveError> {
        self.solve_in(a, b, x, params, &mut self.scratch())
    }

    /// Scratch vectors for [`Hierarchy::solve_in`].
    pub fn scratch(&self) -> Scratch {
        Scratch {
            cycle: Workspace::new(self),
            cg: krylov::Vectors::new(self.fine.0, self.fine.1),
        }
    }

    /// [`Hierarchy::solve`] in the given scratch (made by this hierarchy's
    /// [`Hierarchy::scratch`]): the same bits, without allocating and zeroing the scratch
    /// again for every right-hand side.
    pub fn solve_in(
        &self,
        a: &Stencil5,
        b: &[f64],
        x: &mut [f64],
        params: &Params,
        scratch: &mut Scratch,
    ) -> Result<Info, SolveError> {
        self.check(a);
        krylov::pcg(self, a, b, x, params, &mut scratch.cycle, &mut scratch.cg)
    }

    /// Solves several right-hand sides with one hierarchy and one set of scratch vectors;
    /// `xs[k]` is the starting guess for `bs[k]`.
    pub fn solve_many(
        &self,
        a: &Stencil5,
        bs: &[Vec<f64>],
        xs: &mut [Vec<f64>],
        params: &Params,
    ) -> Vec<Result<Info, SolveError>> {
        assert_eq!(bs.len(), xs.len(), "one starting guess per right-hand side");
        let mut scratch = self.scratch();
        bs.iter()
            .zip(xs.iter_mut())
            .map(|(b, x)| self.solve_in(a, b, x, params, &mut scratch))
            .collect()
    }
}

/// The scratch vectors of a solve with one hierarchy: the V-cycle's on every level and CG's
/// on the fine lattice (about 40 bytes per fine node). Any number of solves may run in it in
/// turn; each overwrites what it reads, so its results do not depend on earlier ones.
pub struct Scratch {
    cycle: Workspace,
    cg: krylov::Vectors,
}

impl std::fmt::Debug for Scratch {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Scratch").finish_non_exhaustive()
    }
}

#[cfg(test)]
mod line_tests;
#[cfg(test)]
mod tests;
