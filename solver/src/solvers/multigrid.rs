//! Multigrid-preconditioned CG for the five-point operator (work in progress: until the
//! operator-dependent hierarchy lands, the preconditioner is Jacobi and the method reports
//! itself as such through [`Hierarchy::solve`]).

use super::{Info, Params, SolveError};
use crate::stencil::Stencil5;

/// The multigrid hierarchy built once per operator.
#[derive(Debug)]
pub struct Hierarchy {
    _levels: usize,
}

impl Hierarchy {
    /// Builds the hierarchy for `a`.
    pub fn new(_a: &Stencil5) -> Hierarchy {
        Hierarchy { _levels: 1 }
    }

    /// Solves `A x = b`.
    pub fn solve(
        &self,
        a: &Stencil5,
        b: &[f64],
        x: &mut [f64],
        params: &Params,
    ) -> Result<Info, SolveError> {
        super::cg::solve(a, b, x, params)
    }

    /// Solves several right-hand sides.
    pub fn solve_many(
        &self,
        a: &Stencil5,
        bs: &[Vec<f64>],
        xs: &mut [Vec<f64>],
        params: &Params,
    ) -> Vec<Result<Info, SolveError>> {
        bs.iter()
            .zip(xs.iter_mut())
            .map(|(b, x)| self.solve(a, b, x, params))
            .collect()
    }
}
