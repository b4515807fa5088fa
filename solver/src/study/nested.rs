//! Nested iteration: the solves on a lattice start from the same study's solves on the
//! lattice twice as coarse (which the error estimate solves anyway, and first), interpolated
//! onto the finer lines.
//!
//! Each coarse solve is completed with the potentials its fixed nodes hold (the unit
//! potential on its own conductor, the side potentials of the background solve) and
//! interpolated bilinearly in the node coordinates; the fine lattice's fixed nodes start at
//! zero, as the solvers require. Only the starting guess changes: every solve still stops on
//! its residual relative to its right-hand side and on the charge test
//! ([`crate::solvers::CHARGE_TOL_FACTOR`]), both absolute measures of the fine solve's own
//! residual, so the accuracy a solve stops at does not depend on where it started.
//!
//! Invariants: a start is made only for the same conductors; the interpolation reads each
//! fine node's coordinates, so it is correct on any pair of lattices covering the same
//! domain (on a graded family the coarse lines are every other fine line).

use super::params::WarmStart;
use crate::grid::Grid;
use crate::operator::{self, Operator};
use crate::raster::{Raster, NO_CONDUCTOR};

/// The solves of a study on a coarser lattice, each completed with its fixed nodes' values.
pub(super) struct CoarseStart {
    xs: Vec<f64>,
    ys: Vec<f64>,
    /// Per conductor at 1 V (every other target at 0 V), V.
    unit: Vec<Vec<f64>>,
    /// The sides and the free charge's, V, when that solve ran.
    background: Option<Vec<f64>>,
}

impl CoarseStart {
    /// The start made from the solves `solves` of a coarse study with the operator `op` on
    /// `raster`.
    pub(super) fn of(op: &Operator, raster: &Raster, solves: &WarmStart) -> CoarseStart {
        let nc = op.n_conductors;
        let unit = solves
            .unit
            .iter()
            .enumerate()
            .map(|(k, x)| {
                let mut v = vec![0.0; nc];
                v[k] = 1.0;
                completed(op, raster, x, &op.target_values(&v, false))
            })
            .collect();
        let background = solves
            .background
            .as_ref()
            .map(|x| completed(op, raster, x, &op.target_values(&vec![0.0; nc], true)));
        CoarseStart {
            xs: solves.xs.clone(),
            ys: solves.ys.clone(),
            unit,
            background,
        }
    }

    /// True when this start holds a solve for each of `conductors` conductors.
    pub(super) fn fits(&self, conductors: usize) -> bool {
        self.unit.len() == conductors
    }

    /// The starting guess of the unit solve of conductor `k` on the lattice of `op`.
    pub(super) fn unit(&self, k: usize, op: &Operator) -> Vec<f64> {
        self.onto(&self.unit[k], op)
    }

    /// The starting guess of the background solve on the lattice of `op`, when the coarse
    /// study ran one.
    pub(super) fn background(&self, op: &Operator) -> Option<Vec<f64>> {
        self.background.as_ref().map(|v| self.onto(v, op))
    }

    fn onto(&self, v: &[f64], op: &Operator) -> Vec<f64> {
        interpolated(&self.xs, &self.ys, v, &op.grid, &op.stencil.unknown)
    }
}

/// The field `v` on the lines `xs` x `ys` interpolated bilinearly at the nodes of `grid`
/// marked `unknown` (zero at the others).
fn interpolated(xs: &[f64], ys: &[f64], v: &[f64], grid: &Grid, unknown: &[bool]) -> Vec<f64> {
    let ax = weights(xs, grid.xs());
    let ay = weights(ys, grid.ys());
    let ncx = xs.len();
    let mut out = vec![0.0; grid.len()];
    for (j, &(j0, ty)) in ay.iter().enumerate() {
        let (r0, r1) = (j0 * ncx, (j0 + 1).min(ys.len() - 1) * ncx);
        for (i, &(i0, tx)) in ax.iter().enumerate() {
            let p = j * grid.nx + i;
            if !unknown[p] {
                continue;
            }
            let i1 = (i0 + 1).min(ncx - 1);
            let low = v[r0 + i0] + tx * (v[r0 + i1] - v[r0 + i0]);
            let high = v[r1 + i0] + tx * (v[r1 + i1] - v[r1 + i0]);
            out[p] = low + ty * (high - low);
        }
    }
    out
}

/// The solve `x` of `op` on `raster` with its fixed nodes set to the target potentials
/// `values`.
fn completed(op: &Operator, raster: &Raster, x: &[f64], values: &[f64]) -> Vec<f64> {
    let (nx, ny) = (op.grid.nx, op.grid.ny);
    let mut v = x.to_vec();
    for (p, v) in v.iter_mut().enumerate() {
        if op.stencil.unknown[p] {
            continue;
        }
        let k = raster.conductor[p];
        *v = if k != NO_CONDUCTOR {
            values[k as usize]
        } else {
            match operator::fixed_side(&op.side_potential, nx, ny, p % nx, p / nx) {
                Some(s) => values[op.side_target(s) as usize],
                None => 0.0,
            }
        };
    }
    v
}

/// For each fine coordinate, the coarse interval `[c[i], c[i + 1]]` holding it and the
/// position in it, in [0, 1] (clamped outside the coarse lines).
fn weights(coarse: &[f64], fine: &[f64]) -> Vec<(usize, f64)> {
    let last = coarse.len().saturating_sub(1);
    fine.iter()
        .map(|&x| {
            let i = coarse
                .partition_point(|&c| c <= x)
                .saturating_sub(1)
                .min(last);
            if i == last {
                return (i, 0.0);
            }
            let t = (x - coarse[i]) / (coarse[i + 1] - coarse[i]);
            (i, t.clamp(0.0, 1.0))
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn interpolation_weights_find_the_coarse_interval() {
        let w = weights(&[0.0, 1.0, 3.0], &[0.0, 0.5, 1.0, 2.5, 3.0]);
        assert_eq!(w, [(0, 0.0), (0, 0.5), (1, 0.0), (1, 0.75), (2, 0.0)]);
    }

    #[test]
    fn a_linear_field_is_interpolated_exactly() {
        let coarse = Grid::from_lines(vec![0.0, 0.5, 2.0], vec![0.0, 1.0, 1.5]).unwrap();
        let fine =
            Grid::from_lines(vec![0.0, 0.2, 0.5, 1.0, 2.0], vec![0.0, 0.3, 1.0, 1.2, 1.5]).unwrap();
        let f = |x: f64, y: f64| 2.0 * x - 3.0 * y + 0.5 * x * y;
        let v: Vec<f64> = coarse
            .ys()
            .iter()
            .flat_map(|&y| coarse.xs().iter().map(move |&x| f(x, y)))
            .collect();
        let mut unknown = vec![true; fine.len()];
        unknown[7] = false;
        let got = interpolated(coarse.xs(), coarse.ys(), &v, &fine, &unknown);
        // Bilinear interpolation reproduces a bilinear function at every unknown node.
        for (j, &y) in fine.ys().iter().enumerate() {
            for (i, &x) in fine.xs().iter().enumerate() {
                let p = j * fine.nx + i;
                let want = if unknown[p] { f(x, y) } else { 0.0 };
                assert!((got[p] - want).abs() < 1e-12, "({x}, {y}): {}", got[p]);
            }
        }
    }
}
