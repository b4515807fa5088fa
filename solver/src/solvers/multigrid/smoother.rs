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
use super::transfer::{chunks_mut, PARALLEL_MIN};
use crate::stencil::Stencil5;
use rayon::prelude::*;

/// Runs `first(j)` for every row and then `second(j)` for every row, with the result of two
/// separate passes, but interleaved in blocks of rows so that each row is loaded once.
///
/// Requires: `second(j)` reads only what `first` leaves in rows j-1..=j+1, and `first(j)`
/// reads rows j-1..=j+1 only where `second` has not written yet. Within a block the order is
/// first(j+1), second(j); the second stage of the rows on each side of a block boundary
/// waits for a final parallel step, after every first stage is done.
pub(super) fn two_stage(
    rows: usize,
    big: bool,
    first: impl Fn(usize) + Sync,
    second: impl Fn(usize) + Sync,
) {
    if rows == 0 {
        return;
    }
    let blocks = if big {
        (4 * rayon::current_num_threads()).min(rows / 8).max(1)
    } else {
        1
    };
    let bound = |k: usize| k * rows / blocks;
    let run = |k: usize| {
        let (b, e) = (bound(k), bound(k + 1));
        first(b);
        for j in b..e {
            if j + 1 < e {
                first(j + 1);
            }
            let deferred = (j == b && k > 0) || (j + 1 == e && k + 1 < blocks);
            if !deferred {
                second(j);
            }
        }
    };
    if blocks == 1 {
        run(0);
        return;
    }
    (0..blocks).into_par_iter().for_each(run);
    (1..blocks).into_par_iter().for_each(|k| {
        let b = bound(k);
        second(b - 1);
        if b + 1 < bound(k + 1) || k + 1 == blocks {
            second(b);
        }
    });
}

/// Gauss–Seidel update of the nodes of `colour` ((i + j) % 2) in row j of the fine lattice.
///
/// # Safety
/// `x` points to a vector of the lattice's length; no other thread writes row j's nodes of
/// this colour or reads them, nor writes their neighbours, during the call.
#[inline]
unsafe fn rb_row(a: &Stencil5, b: &[f64], x: *mut f64, j: usize, colour: usize) {
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

/// One red-black Gauss–Seidel sweep on the fine lattice: colour `first` ((i + j) % 2), then
/// the other. With `from_zero` the iterate is taken as zero on entry (and overwritten).
pub(super) fn red_black_sweep(
    a: &Stencil5,
    b: &[f64],
    x: &mut [f64],
    first: usize,
    from_zero: bool,
) {
    let n = a.len();
    assert!(
        b.len() == n
            && x.len() == n
            && a.diag.len() == n
            && a.east.len() == n
            && a.north.len() == n
    );
    let nx = a.nx;
    let ptr = Shared::new(x);
    // SAFETY (both stages): lengths are checked above; `two_stage` orders the rows so that
    // each update sees exactly the values of a colour-by-colour sweep and no two threads
    // touch the same row's colour at once.
    let stage0 = |j: usize| unsafe {
        let x = ptr.get();
        if from_zero {
            let base = j * nx;
            for i in 0..nx {
                let p = base + i;
                *x.add(p) = if (i + j) % 2 == first {
                    b.get_unchecked(p) / a.diag.get_unchecked(p)
                } else {
                    0.0
                };
            }
        } else {
            rb_row(a, b, x, j, first);
        }
    };
    let stage1 = |j: usize| unsafe { rb_row(a, b, ptr.get(), j, 1 - first) };
    two_stage(a.ny, n >= PARALLEL_MIN, stage0, stage1);
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
