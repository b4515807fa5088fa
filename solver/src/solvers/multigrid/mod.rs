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
//! Invariants: fixed nodes keep zero corrections on every level; the preconditioner is
//! symmetric positive definite and a fixed linear map, so CG's convergence theory holds; the
//! setup and every cycle are bit-identical for any thread count; the hierarchy stores only
//! the coarse operators' upper halves (five numbers per coarse node), never the fine operator
//! or interpolation weights, which are recomputed from the couplings when used.

// Coarse coefficients are stored as `level::Real`, which need not be f64.
// Lattice kernels index several arrays by node number at once.
#![allow(
    clippy::unnecessary_cast,
    clippy::needless_range_loop,
    clippy::manual_div_ceil
)]

mod coarsest;
mod cycle;
mod galerkin;
mod interpolation;
mod krylov;
mod level;
mod smoother;
mod transfer;

use super::{Info, Params, SolveError};
use crate::stencil::Stencil5;
use coarsest::BandCholesky;
use cycle::Workspace;
use interpolation::{coarse_len, LineWeights};
use level::Level;

/// Settings of the hierarchy and its cycle.
#[derive(Clone, Debug, PartialEq)]
#[non_exhaustive]
pub struct Options {
    /// Red-black sweeps before and after the coarse correction on the fine level.
    pub fine_sweeps: usize,
    /// Four-colour sweeps before and after the coarse correction on each coarse level.
    pub coarse_sweeps: usize,
    /// Coarsening stops once a level has at most this many nodes; that level is solved
    /// directly.
    pub coarsest_nodes: usize,
}

impl Default for Options {
    fn default() -> Self {
        Options {
            fine_sweeps: 2,
            coarse_sweeps: 1,
            coarsest_nodes: 1600,
        }
    }
}

/// The multigrid hierarchy built once per operator and shared by every right-hand side.
pub struct Hierarchy {
    /// Fine lattice nx, ny.
    fine: (usize, usize),
    /// Coarse levels, finest first; the last is solved directly.
    levels: Vec<Level>,
    /// `weights[k]`: line weights from level k (0 = fine) to level k + 1.
    weights: Vec<LineWeights>,
    /// Factor of the last level (of the fine level when there is no coarse level).
    coarsest: BandCholesky,
    options: Options,
}

impl std::fmt::Debug for Hierarchy {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Hierarchy")
            .field("lattices", &self.lattices())
            .field("options", &self.options)
            .finish()
    }
}

impl Hierarchy {
    /// Builds the hierarchy for `a` with default options.
    pub fn new(a: &Stencil5) -> Hierarchy {
        Hierarchy::with_options(a, &Options::default())
    }

    /// Builds the hierarchy for `a`.
    pub fn with_options(a: &Stencil5, options: &Options) -> Hierarchy {
        assert_eq!(
            a.diag.len(),
            a.len(),
            "stencil arrays must cover the lattice"
        );
        let mut levels: Vec<Level> = Vec::new();
        let mut weights: Vec<LineWeights> = Vec::new();
        let mut dims = (a.nx, a.ny);
        loop {
            let next = (coarse_len(dims.0), coarse_len(dims.1));
            if dims.0 * dims.1 <= options.coarsest_nodes.max(1) || next == dims {
                break;
            }
            let (w, level) = match levels.last() {
                None => {
                    let w = LineWeights::new(a);
                    let c = galerkin::coarse_operator(a, &w);
                    (w, c)
                }
                Some(l) => {
                    let w = LineWeights::new(l);
                    let c = galerkin::coarse_operator(l, &w);
                    (w, c)
                }
            };
            weights.push(w);
            levels.push(level);
            dims = next;
        }
        let coarsest = match levels.last() {
            None => BandCholesky::new(a),
            Some(l) => BandCholesky::new(l),
        };
        Hierarchy {
            fine: (a.nx, a.ny),
            levels,
            weights,
            coarsest,
            options: options.clone(),
        }
    }

    /// Lattice sizes (nx, ny) of every level, fine first.
    pub fn lattices(&self) -> Vec<(usize, usize)> {
        std::iter::once(self.fine)
            .chain(self.levels.iter().map(|l| (l.nx, l.ny)))
            .collect()
    }

    /// Bytes held by the hierarchy plus the scratch of one solve (excluding the fine
    /// operator and CG's own vectors).
    pub fn bytes(&self) -> usize {
        self.levels.iter().map(Level::bytes).sum::<usize>()
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
        self.check(a);
        let mut ws = Workspace::new(self);
        self.solve_with(a, b, x, params, &mut ws)
    }

    fn solve_with(
        &self,
        a: &Stencil5,
        b: &[f64],
        x: &mut [f64],
        params: &Params,
        ws: &mut Workspace,
    ) -> Result<Info, SolveError> {
        krylov::pcg(self, a, b, x, params, ws)
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
        self.check(a);
        assert_eq!(bs.len(), xs.len(), "one starting guess per right-hand side");
        let mut ws = Workspace::new(self);
        bs.iter()
            .zip(xs.iter_mut())
            .map(|(b, x)| self.solve_with(a, b, x, params, &mut ws))
            .collect()
    }
}

#[cfg(test)]
mod tests;
