//! The symmetric V-cycle used as the CG preconditioner, and the per-solve scratch it needs.
//!
//! Invariants: the cycle starts from a zero correction, smooths with a colour order on the way
//! down and the reverse order on the way up, restricts with the exact transpose of the
//! prolongation and solves the coarsest level directly, so `z = M^-1 r` is linear in r with M
//! symmetric positive definite. Nothing in it depends on the thread count. With line
//! relaxation every level runs alternating zebra line sweeps on the way down and the same
//! sweeps reversed on the way up, in whole-lattice passes.

use super::hierarchy::Hierarchy;
use super::interpolation::interior_count;
use super::level::Shared;
use super::lines::line_sweep;
use super::relaxation::Relaxation;
use super::smoother::{four_colour_sweep, red_black_stages, wavefront, Stage};
use super::transfer::{
    check_fine, each, prolong_coarse, prolong_fine_row, restrict_coarse, FineRestrict, PARALLEL_MIN,
};
use crate::parallel;
use crate::stencil::Stencil5;

/// Scratch vectors of one solve (one set serves any number of right-hand sides in turn).
pub(super) struct Workspace {
    /// Scaled fine residuals at interior points.
    pub(super) sbuf: Vec<f64>,
    /// Per coarse level: iterate, right-hand side, residual (padded).
    pub(super) x: Vec<Vec<f64>>,
    pub(super) b: Vec<Vec<f64>>,
    pub(super) r: Vec<Vec<f64>>,
    /// Line relaxation only: eliminated couplings per level, fine first.
    pub(super) lines: Vec<Vec<f64>>,
}

impl Workspace {
    /// Scratch for `h`, whose fine level is nx x ny.
    pub fn new(h: &Hierarchy) -> Workspace {
        let (nx, ny) = h.fine;
        let sbuf = if h.depth() == 0 {
            Vec::new()
        } else {
            vec![0.0; interior_count(nx) * interior_count(ny)]
        };
        let lens = h.padded_lens();
        let n = lens.len();
        let x = lens.iter().map(|&l| vec![0.0; l]).collect();
        let b = lens.iter().map(|&l| vec![0.0; l]).collect();
        // The coarsest level needs no residual.
        let r = lens
            .iter()
            .enumerate()
            .map(|(k, &l)| if k + 1 < n { vec![0.0; l] } else { Vec::new() })
            .collect();
        let lines = match h.relaxation {
            Relaxation::Points => Vec::new(),
            Relaxation::Lines if h.depth() == 0 => Vec::new(),
            Relaxation::Lines => std::iter::once(nx * ny)
                .chain(lens.iter().copied())
                .map(|n| vec![0.0; n])
                .collect(),
        };
        Workspace {
            sbuf,
            x,
            b,
            r,
            lines,
        }
    }

    /// Bytes held.
    pub fn bytes(&self) -> usize {
        8 * (self.sbuf.len()
            + [&self.x, &self.b, &self.r, &self.lines]
                .iter()
                .map(|v| v.iter().map(Vec::len).sum::<usize>())
                .sum::<usize>())
    }
}

/// Row j's sum of `r . z`, left to right.
fn row_dot(nx: usize, r: &[f64], z: *const f64, j: usize) -> f64 {
    let mut s = 0.0;
    for q in j * nx..(j + 1) * nx {
        // SAFETY: the caller guarantees z has the lattice length and row j is final.
        s += r[q] * unsafe { *z.add(q) };
    }
    s
}

/// `z = M^-1 r` by one V-cycle, returning `r . z` (summed per row into `partial`, then in
/// row order).
pub(super) fn vcycle(
    h: &Hierarchy,
    a: &Stencil5,
    ws: &mut Workspace,
    r: &[f64],
    z: &mut [f64],
    partial: &mut [f64],
) -> f64 {
    let nx = a.nx;
    check_fine(a, &[r.len(), z.len()]);
    assert_eq!(partial.len(), a.ny);
    if h.depth() == 0 {
        h.coarsest.solve(r, z, |i, j| i + j * nx);
        for (j, s) in partial.iter_mut().enumerate() {
            *s = row_dot(nx, r, z.as_ptr(), j);
        }
        return parallel::sum(partial);
    }
    assert_eq!(ws.sbuf.len(), interior_count(a.nx) * interior_count(a.ny));
    if h.relaxation == Relaxation::Lines {
        return vcycle_lines(h, a, ws, r, z, partial);
    }
    assert_eq!(ws.b[0].len(), h.levels[0].padded_len());
    let big = a.len() >= PARALLEL_MIN;
    let sweeps = h.options.fine_sweeps.max(1);
    {
        // Pre-smoothing from zero and restriction, interleaved by rows.
        let zp = Shared::new(z);
        let fr = FineRestrict {
            a,
            lw: &h.weights[0],
            r,
            z: zp,
            sbuf: Shared::new(&mut ws.sbuf),
            c: &h.levels[0],
            bc: Shared::new(&mut ws.b[0]),
            black_is_zero: true,
        };
        let mut stages = red_black_stages(a, r, zp, 0, sweeps, true);
        // SAFETY: lengths checked above; `wavefront` keeps the stage-by-stage order of every
        // access, each stage writing only its own row.
        stages.push(Box::new(|j| unsafe { fr.interior_row(j) }));
        stages.push(Box::new(|j| unsafe { fr.coarse_row(j) }));
        let refs: Vec<Stage> = stages.iter().map(|s| &**s as Stage).collect();
        wavefront(a.ny, big, &refs);
    }
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
    {
        // Prolongation and post-smoothing (black first), interleaved by rows.
        let zp = Shared::new(z);
        let (lw, c, xc) = (&h.weights[0], &h.levels[0], &ws.x[0][..]);
        assert_eq!(xc.len(), c.padded_len());
        let mut stages: Vec<Box<dyn Fn(usize) + Sync>> = Vec::new();
        // SAFETY: as above.
        stages.push(Box::new(move |j| unsafe {
            prolong_fine_row(a, lw, zp.get(), c, xc, j)
        }));
        stages.extend(red_black_stages(a, r, zp, 1, sweeps, false));
        let sp = Shared::new(partial);
        // SAFETY: row j of z is final once the last smoothing stage has passed it.
        stages.push(Box::new(move |j| unsafe {
            *sp.get().add(j) = row_dot(nx, r, zp.get(), j)
        }));
        let refs: Vec<Stage> = stages.iter().map(|s| &**s as Stage).collect();
        wavefront(a.ny, big, &refs);
    }
    parallel::sum(partial)
}

/// [`vcycle`] with line relaxation on every level (whole-lattice passes).
fn vcycle_lines(
    h: &Hierarchy,
    a: &Stencil5,
    ws: &mut Workspace,
    r: &[f64],
    z: &mut [f64],
    partial: &mut [f64],
) -> f64 {
    let nx = a.nx;
    let big = a.len() >= PARALLEL_MIN;
    let sweeps = h.options.line_sweeps.max(1);
    let coarse_sweeps = h.options.coarse_line_sweeps.max(1);
    let levels = &h.line_levels;
    assert_eq!(ws.b[0].len(), levels[0].padded_len());
    assert_eq!(ws.lines.len(), levels.len() + 1);
    for sweep in 0..sweeps {
        line_sweep(a, r, z, &mut ws.lines[0], false, sweep == 0);
    }
    {
        let fr = FineRestrict {
            a,
            lw: &h.weights[0],
            r,
            z: Shared::new(z),
            sbuf: Shared::new(&mut ws.sbuf),
            c: &levels[0],
            bc: Shared::new(&mut ws.b[0]),
            black_is_zero: false,
        };
        // SAFETY: lengths checked by the caller; each stage writes only its own row and reads
        // z, which nothing writes meanwhile.
        let first = |j| unsafe { fr.interior_row(j) };
        let second = |j| unsafe { fr.coarse_row(j) };
        wavefront(a.ny, big, &[&first, &second]);
    }
    let last = levels.len() - 1;
    for k in 0..last {
        let l = &levels[k];
        for sweep in 0..coarse_sweeps {
            line_sweep(
                l,
                &ws.b[k],
                &mut ws.x[k],
                &mut ws.lines[k + 1],
                false,
                sweep == 0,
            );
        }
        let (lo, hi) = ws.b.split_at_mut(k + 1);
        restrict_coarse(
            l,
            &h.weights[k + 1],
            &lo[k],
            &ws.x[k],
            &mut ws.r[k],
            &levels[k + 1],
            &mut hi[0],
        );
    }
    {
        let s = levels[last].s;
        h.coarsest
            .solve(&ws.b[last], &mut ws.x[last], |i, j| (i + 1) + (j + 1) * s);
    }
    for k in (0..last).rev() {
        let l = &levels[k];
        let (lo, hi) = ws.x.split_at_mut(k + 1);
        prolong_coarse(l, &h.weights[k + 1], &mut lo[k], &levels[k + 1], &hi[0]);
        for _ in 0..coarse_sweeps {
            line_sweep(l, &ws.b[k], &mut lo[k], &mut ws.lines[k + 1], true, false);
        }
    }
    {
        let zp = Shared::new(z);
        let (lw, c, xc) = (&h.weights[0], &levels[0], &ws.x[0][..]);
        assert_eq!(xc.len(), c.padded_len());
        // SAFETY: each call writes only its own row of z.
        each(big, a.ny, |j| unsafe {
            prolong_fine_row(a, lw, zp.get(), c, xc, j)
        });
    }
    for _ in 0..sweeps {
        line_sweep(a, r, z, &mut ws.lines[0], true, false);
    }
    let zc = &*z;
    crate::parallel::for_each_row(partial, 1, |j, s| s[0] = row_dot(nx, r, zc.as_ptr(), j));
    parallel::sum(partial)
}
