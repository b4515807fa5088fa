//! Gauss–Seidel smoothers: red-black on the fine five-point operator, four-colour on the
//! nine-point coarse levels.
//!
//! Invariants: within one colour every update reads only nodes of other colours, so rows of
//! a colour are updated in parallel with results independent of the thread count. A sweep
//! followed by the same colours in reverse order is symmetric, which keeps the V-cycle a
//! symmetric preconditioner. Fixed nodes need no test: their rows are identities with no
//! couplings, so an update sets them to their right-hand side, which is zero. Sweeps run
//! row-interleaved ([`two_stage`]) but compute exactly what colour-by-colour passes compute.

use super::level::{Level, Shared};
#[cfg(test)]
use super::transfer::check_fine;
use super::transfer::{chunks_mut, PARALLEL_MIN};
use crate::stencil::Stencil5;
use rayon::prelude::*;

/// A row stage of [`wavefront`].
pub(super) type Stage<'a> = &'a (dyn Fn(usize) + Sync);

/// Runs every stage over every row with the result of running the stages one after the
/// other, each over all rows in turn, but interleaved so that the rows a step needs are
/// still in cache: step t runs stage s on row t - s, for s = 0, 1, ... .
///
/// Requires: stage s on row j reads and writes only rows j-1..=j+1. Then every access
/// happens in the same order relative to the others as in the stage-by-stage order, so the
/// results are identical bit for bit. Rows are split into blocks run in parallel; the stages
/// that would need a neighbouring block's rows are deferred to a second parallel step over the
/// block boundaries.
pub(super) fn wavefront(rows: usize, big: bool, stages: &[Stage]) {
    let k = stages.len();
    if rows == 0 || k == 0 {
        return;
    }
    // Boundary regions (2k rows) must be at least two rows apart.
    let min_block = 2 * k + 2;
    let blocks = if big {
        (4 * rayon::current_num_threads())
            .min(rows / (2 * min_block))
            .max(1)
    } else {
        1
    };
    let bound = |b: usize| b * rows / blocks;
    let run = |b: usize| {
        let (lo, hi) = (bound(b), bound(b + 1));
        for t in lo..hi + k {
            for (s, stage) in stages.iter().enumerate() {
                let Some(j) = t.checked_sub(s) else { continue };
                let lo_s = if b == 0 { 0 } else { lo + s };
                let hi_s = if b + 1 == blocks {
                    rows
                } else {
                    hi.saturating_sub(s)
                };
                if j >= lo_s && j < hi_s {
                    stage(j);
                }
            }
        }
    };
    if blocks == 1 {
        run(0);
        return;
    }
    (0..blocks).into_par_iter().for_each(run);
    // Deferred: stage s on rows e - s .. e + s around each inner boundary e.
    (1..blocks).into_par_iter().for_each(|b| {
        let e = bound(b);
        for t in e.saturating_sub(k)..e + 2 * k {
            for (s, stage) in stages.iter().enumerate() {
                let Some(j) = t.checked_sub(s) else { continue };
                if j + s >= e && j < e + s {
                    stage(j);
                }
            }
        }
    });
}

/// Runs `first` over every row and then `second` over every row (see [`wavefront`]).
pub(super) fn two_stage(
    rows: usize,
    big: bool,
    first: impl Fn(usize) + Sync,
    second: impl Fn(usize) + Sync,
) {
    wavefront(rows, big, &[&first, &second]);
}

/// Gauss–Seidel update of the nodes of `colour` ((i + j) % 2) in row j of the fine lattice.
///
/// # Safety
/// `x` points to a vector of the lattice's length; no other thread writes row j's nodes of
/// this colour or reads them, nor writes their neighbours, during the call.
#[inline]
pub(super) unsafe fn rb_row(a: &Stencil5, b: &[f64], x: *mut f64, j: usize, colour: usize) {
    let (nx, ny) = (a.nx, a.ny);
    let (diag, east, north) = (&a.diag[..], &a.east[..], &a.north[..]);
    let base = j * nx;
    let start = (colour + j) % 2;
    let edge = |i: usize| {
        let p = base + i;
        let mut s = *b.get_unchecked(p);
        if i + 1 < nx {
            s += east.get_unchecked(p) * *x.add(p + 1);
        }
        if i > 0 {
            s += east.get_unchecked(p - 1) * *x.add(p - 1);
        }
        if j + 1 < ny {
            s += north.get_unchecked(p) * *x.add(p + nx);
        }
        if j > 0 {
            s += north.get_unchecked(p - nx) * *x.add(p - nx);
        }
        *x.add(p) = s / diag.get_unchecked(p);
    };
    let mut i = start;
    if j == 0 || j + 1 == ny {
        while i < nx {
            edge(i);
            i += 2;
        }
        return;
    }
    if i == 0 {
        edge(0);
        i = 2;
    }
    while i + 1 < nx {
        let p = base + i;
        let s = *b.get_unchecked(p)
            + east.get_unchecked(p) * *x.add(p + 1)
            + east.get_unchecked(p - 1) * *x.add(p - 1)
            + north.get_unchecked(p) * *x.add(p + nx)
            + north.get_unchecked(p - nx) * *x.add(p - nx);
        *x.add(p) = s / diag.get_unchecked(p);
        i += 2;
    }
    if i + 1 == nx {
        edge(i);
    }
}

/// Row j of the first red pass from a zero iterate: `x = b / diag` on nodes of `colour`,
/// zero on the others (it reads no neighbour).
///
/// # Safety
/// `x` points to a lattice vector; no one else reads or writes row j meanwhile.
#[inline]
pub(super) unsafe fn from_zero_row(a: &Stencil5, b: &[f64], x: *mut f64, j: usize, colour: usize) {
    let nx = a.nx;
    let base = j * nx;
    for i in 0..nx {
        let p = base + i;
        *x.add(p) = if (i + j) % 2 == colour {
            b.get_unchecked(p) / a.diag.get_unchecked(p)
        } else {
            0.0
        };
    }
}

/// Row stages of `sweeps` red-black sweeps on the fine lattice, each colour `first` then the
/// other, for [`wavefront`]; with `from_zero` the iterate is taken as zero on entry.
///
/// # Safety
/// Lengths are checked by the caller (`transfer::check_fine`); the stages must run through
/// [`wavefront`] (or in stage order) with nothing else touching `x`.
pub(super) fn red_black_stages<'a>(
    a: &'a Stencil5,
    b: &'a [f64],
    x: Shared,
    first: usize,
    sweeps: usize,
    from_zero: bool,
) -> Vec<Box<dyn Fn(usize) + Sync + 'a>> {
    let mut stages: Vec<Box<dyn Fn(usize) + Sync + 'a>> = Vec::new();
    for sweep in 0..sweeps {
        if sweep == 0 && from_zero {
            stages.push(Box::new(move |j| unsafe {
                from_zero_row(a, b, x.get(), j, first)
            }));
        } else {
            stages.push(Box::new(move |j| unsafe {
                rb_row(a, b, x.get(), j, first)
            }));
        }
        stages.push(Box::new(move |j| unsafe {
            rb_row(a, b, x.get(), j, 1 - first)
        }));
    }
    stages
}

/// One red-black Gauss–Seidel sweep on the fine lattice: colour `first` ((i + j) % 2), then
/// the other. With `from_zero` the iterate is taken as zero on entry (and overwritten).
#[cfg(test)]
pub(super) fn red_black_sweep(
    a: &Stencil5,
    b: &[f64],
    x: &mut [f64],
    first: usize,
    from_zero: bool,
) {
    check_fine(a, &[b.len(), x.len()]);
    let stages = red_black_stages(a, b, Shared::new(x), first, 1, from_zero);
    let refs: Vec<Stage> = stages.iter().map(|s| &**s as Stage).collect();
    wavefront(a.ny, a.len() >= PARALLEL_MIN, &refs);
}

/// Gauss–Seidel update of the nodes of colour (ci, j % 2) in row j of a coarse level.
///
/// # Safety
/// As for [`rb_row`], with `x` a padded vector of the level.
#[inline]
unsafe fn colour_row(l: &Level, b: &[f64], x: *mut f64, j: usize, ci: usize) {
    let (nx, s) = (l.nx, l.s);
    let k = &l.coef;
    let mut i = ci;
    while i < nx {
        let p = (i + 1) + (j + 1) * s;
        let c = k.get_unchecked(p);
        let v = b.get_unchecked(p)
            + c[1] as f64 * *x.add(p + 1)
            + k.get_unchecked(p - 1)[1] as f64 * *x.add(p - 1)
            + c[2] as f64 * *x.add(p + s)
            + k.get_unchecked(p - s)[2] as f64 * *x.add(p - s)
            + c[3] as f64 * *x.add(p + s + 1)
            + k.get_unchecked(p - s - 1)[3] as f64 * *x.add(p - s - 1)
            + c[4] as f64 * *x.add(p + s - 1)
            + k.get_unchecked(p - s + 1)[4] as f64 * *x.add(p - s + 1);
        *x.add(p) = v / c[0] as f64;
        i += 2;
    }
}

/// One four-colour Gauss–Seidel sweep, colours (i % 2, j % 2) in the order (0,0), (1,0),
/// (0,1), (1,1); `reverse` runs them backwards. With `from_zero` the iterate is zeroed first.
pub(super) fn four_colour_sweep(
    l: &Level,
    b: &[f64],
    x: &mut [f64],
    reverse: bool,
    from_zero: bool,
) {
    assert!(b.len() == l.padded_len() && x.len() == l.padded_len());
    let big = l.nx * l.ny >= PARALLEL_MIN;
    if from_zero {
        chunks_mut(big, x, l.s, |_, row| row.iter_mut().for_each(|v| *v = 0.0));
    }
    // Rows of parity `p1` (both colours of a row in order) form the first stage.
    let (p1, order) = if reverse { (1, [1, 0]) } else { (0, [0, 1]) };
    let ptr = Shared::new(x);
    // SAFETY (both stages): as in `red_black_sweep`; a row holds two colours that do not
    // couple to rows of the same parity.
    let stage = |parity: usize| {
        move |j: usize| {
            if j % 2 == parity {
                for ci in order {
                    unsafe { colour_row(l, b, ptr.get(), j, ci) };
                }
            }
        }
    };
    two_stage(l.ny, big, stage(p1), stage(1 - p1));
}
