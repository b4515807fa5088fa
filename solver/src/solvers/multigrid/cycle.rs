//! The symmetric V-cycle used as the CG preconditioner, and the per-solve scratch it needs.
//!
//! Invariants: the cycle starts from a zero correction, smooths with a colour order on the way
//! down and the reverse order on the way up, restricts with the exact transpose of the
//! prolongation and solves the coarsest level directly, so `z = M^-1 r` is linear in r with M
//! symmetric positive definite. Nothing in it depends on the thread count.

use super::interpolation::interior_count;
use super::smoother::{four_colour_sweep, red_black_sweep};
use super::transfer::{prolong_coarse, prolong_fine, restrict_coarse, restrict_fine};
use super::Hierarchy;
use crate::stencil::Stencil5;

/// Scratch vectors of one solve (one set serves any number of right-hand sides in turn).
pub(super) struct Workspace {
    /// Scaled fine residuals at interior points.
    sbuf: Vec<f64>,
    /// Per coarse level: iterate, right-hand side, residual (padded).
    x: Vec<Vec<f64>>,
    b: Vec<Vec<f64>>,
    r: Vec<Vec<f64>>,
}

impl Workspace {
    /// Scratch for `h`, whose fine level is nx x ny.
    pub fn new(h: &Hierarchy) -> Workspace {
        let (nx, ny) = h.fine;
        let sbuf = if h.levels.is_empty() {
            Vec::new()
        } else {
            vec![0.0; interior_count(nx) * interior_count(ny)]
        };
        let n = h.levels.len();
        let x = h.levels.iter().map(|l| vec![0.0; l.padded_len()]).collect();
        let b = h.levels.iter().map(|l| vec![0.0; l.padded_len()]).collect();
        // The coarsest level needs no residual.
        let r = h
            .levels
            .iter()
            .enumerate()
            .map(|(k, l)| {
                if k + 1 < n {
                    vec![0.0; l.padded_len()]
                } else {
                    Vec::new()
                }
            })
            .collect();
        Workspace { sbuf, x, b, r }
    }

    /// Bytes held.
    pub fn bytes(&self) -> usize {
        8 * (self.sbuf.len()
            + [&self.x, &self.b, &self.r]
                .iter()
                .map(|v| v.iter().map(Vec::len).sum::<usize>())
                .sum::<usize>())
    }
}

/// `z = M^-1 r` by one V-cycle.
pub(super) fn vcycle(h: &Hierarchy, a: &Stencil5, ws: &mut Workspace, r: &[f64], z: &mut [f64]) {
    let nx = a.nx;
    if h.levels.is_empty() {
        h.coarsest.solve(r, z, |i, j| i + j * nx);
        return;
    }
    let sweeps = h.options.fine_sweeps.max(1);
    for sweep in 0..sweeps {
        red_black_sweep(a, r, z, 0, sweep == 0);
    }
    restrict_fine(
        a,
        &h.weights[0],
        r,
        z,
        &mut ws.sbuf,
        &h.levels[0],
        &mut ws.b[0],
    );
    let last = h.levels.len() - 1;
    let coarse_sweeps = h.options.coarse_sweeps.max(1);
    for k in 0..last {
        let l = &h.levels[k];
        let x = &mut ws.x[k];
        for sweep in 0..coarse_sweeps {
            four_colour_sweep(l, &ws.b[k], x, false, sweep == 0);
        }
        let (lo, hi) = ws.b.split_at_mut(k + 1);
        restrict_coarse(
            l,
            &h.weights[k + 1],
            &lo[k],
            x,
            &mut ws.r[k],
            &h.levels[k + 1],
            &mut hi[0],
        );
    }
    {
        let s = h.levels[last].s;
        h.coarsest
            .solve(&ws.b[last], &mut ws.x[last], |i, j| (i + 1) + (j + 1) * s);
    }
    for k in (0..last).rev() {
        let l = &h.levels[k];
        let (lo, hi) = ws.x.split_at_mut(k + 1);
        prolong_coarse(l, &h.weights[k + 1], &mut lo[k], &h.levels[k + 1], &hi[0]);
        for _ in 0..coarse_sweeps {
            four_colour_sweep(l, &ws.b[k], &mut lo[k], true, false);
        }
    }
    prolong_fine(a, &h.weights[0], z, &h.levels[0], &ws.x[0]);
    for _ in 0..sweeps {
        red_black_sweep(a, r, z, 1, false);
    }
}
