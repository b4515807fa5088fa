//! Gauss–Seidel smoothers: red-black on the fine five-point operator, four-colour on the
//! nine-point coarse levels, plus the coarse-level residual.
//!
//! Invariants: within one colour every update reads only nodes of other colours, so rows of
//! a colour are updated in parallel with results independent of the thread count. A pass
//! followed by the same colours in reverse order is symmetric, which keeps the V-cycle a
//! symmetric preconditioner. Fixed nodes need no test: their rows are identities with no
//! couplings and a zero right-hand side, so an update leaves them at zero.

use super::level::{Level, Shared};
use crate::stencil::Stencil5;
use rayon::prelude::*;

/// Lattices with fewer nodes than this are swept on the calling thread.
const PARALLEL_MIN: usize = 1 << 14;

/// One Gauss–Seidel pass over the nodes (i, j) with (i + j) % 2 == colour.
pub(super) fn red_black_pass(a: &Stencil5, b: &[f64], x: &mut [f64], colour: usize) {
    let (nx, ny) = (a.nx, a.ny);
    let ptr = Shared::new(x);
    let row = move |j: usize| {
        let x = ptr.get();
        let base = j * nx;
        let (diag, east, north) = (&a.diag, &a.east, &a.north);
        let mut i = (colour + j) % 2;
        // SAFETY: writes go to nodes of this colour in row j; reads are of the other colour
        // (same row or rows j +- 1), which no thread writes during this pass.
        unsafe {
            while i < nx {
                let p = base + i;
                let mut s = b[p];
                if i + 1 < nx {
                    s += east[p] * *x.add(p + 1);
                }
                if i > 0 {
                    s += east[p - 1] * *x.add(p - 1);
                }
                if j + 1 < ny {
                    s += north[p] * *x.add(p + nx);
                }
                if j > 0 {
                    s += north[p - nx] * *x.add(p - nx);
                }
                *x.add(p) = s / diag[p];
                i += 2;
            }
        }
    };
    if a.len() >= PARALLEL_MIN {
        (0..ny).into_par_iter().for_each(row);
    } else {
        (0..ny).for_each(row);
    }
}

/// The four colours of a nine-point lattice, as (i % 2, j % 2), in forward order.
const COLOURS: [(usize, usize); 4] = [(0, 0), (1, 0), (0, 1), (1, 1)];

/// One four-colour Gauss–Seidel sweep; `reverse` runs the colours backwards.
pub(super) fn four_colour_sweep(l: &Level, b: &[f64], x: &mut [f64], reverse: bool) {
    for k in 0..4 {
        let (ci, cj) = COLOURS[if reverse { 3 - k } else { k }];
        colour_pass(l, b, x, ci, cj);
    }
}

fn colour_pass(l: &Level, b: &[f64], x: &mut [f64], ci: usize, cj: usize) {
    let (nx, ny, s) = (l.nx, l.ny, l.s);
    let ptr = Shared::new(x);
    let row = move |j: usize| {
        let x = ptr.get();
        let k = &l.coef;
        let mut i = ci;
        // SAFETY: writes go to nodes of colour (ci, cj) in row j; every neighbour read has
        // another colour and is not written during this pass.
        unsafe {
            while i < nx {
                let p = (i + 1) + (j + 1) * s;
                let c = &k[p];
                let v = b[p]
                    + c[1] as f64 * *x.add(p + 1)
                    + k[p - 1][1] as f64 * *x.add(p - 1)
                    + c[2] as f64 * *x.add(p + s)
                    + k[p - s][2] as f64 * *x.add(p - s)
                    + c[3] as f64 * *x.add(p + s + 1)
                    + k[p - s - 1][3] as f64 * *x.add(p - s - 1)
                    + c[4] as f64 * *x.add(p + s - 1)
                    + k[p - s + 1][4] as f64 * *x.add(p - s + 1);
                *x.add(p) = v / c[0] as f64;
                i += 2;
            }
        }
    };
    let rows = (cj..ny).step_by(2);
    if nx * ny >= PARALLEL_MIN {
        rows.collect::<Vec<_>>().into_par_iter().for_each(row);
    } else {
        rows.for_each(row);
    }
}

/// `r = b - A x` on a coarse level (ghost entries untouched).
pub(super) fn residual(l: &Level, b: &[f64], x: &[f64], r: &mut [f64]) {
    let (nx, ny, s) = (l.nx, l.ny, l.s);
    let row = |(rowi, rr): (usize, &mut [f64])| {
        if rowi == 0 || rowi > ny {
            return;
        }
        let k = &l.coef;
        for i in 1..=nx {
            let p = rowi * s + i;
            let c = &k[p];
            rr[i] = b[p] - c[0] as f64 * x[p]
                + c[1] as f64 * x[p + 1]
                + k[p - 1][1] as f64 * x[p - 1]
                + c[2] as f64 * x[p + s]
                + k[p - s][2] as f64 * x[p - s]
                + c[3] as f64 * x[p + s + 1]
                + k[p - s - 1][3] as f64 * x[p - s - 1]
                + c[4] as f64 * x[p + s - 1]
                + k[p - s + 1][4] as f64 * x[p - s + 1];
        }
    };
    if nx * ny >= PARALLEL_MIN {
        r.par_chunks_mut(s).enumerate().for_each(row);
    } else {
        r.chunks_mut(s).enumerate().for_each(row);
    }
}
