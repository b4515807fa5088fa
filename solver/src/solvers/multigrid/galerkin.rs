//! Galerkin coarse operators: `A_c = P^T A P` on the next coarser lattice.
//!
//! Invariants: the product of a symmetric five- or nine-point operator with the interpolation
//! of [`super::interpolation`] is a symmetric nine-point operator; only its upper half
//! (centre, east, north, north-east, north-west) is computed, from the row of the lower node,
//! so the stored operator is exactly symmetric. A coarse node is fixed exactly when the fine
//! node it sits on is fixed; it then gets an identity row and no couplings.

use super::interpolation::{coarse_len, fine_of, prow, LineWeights, PRow};
use super::level::{Couplings, Level, Real};
use rayon::prelude::*;

/// The coarse operator of `a`.
pub(super) fn coarse_operator<R: Real>(a: &impl Couplings, lw: &LineWeights) -> Level<R> {
    let (nx, ny) = a.dims();
    let (cx, cy) = (coarse_len(nx), coarse_len(ny));
    let mut level = Level::<R>::identity(cx, cy);
    let s = level.s;
    let unknown: Vec<bool> = (0..level.padded_len())
        .map(|p| {
            let (i, j) = (p % s, p / s);
            (1..=cx).contains(&i)
                && (1..=cy).contains(&j)
                && a.is_unknown(fine_of(i - 1, nx), fine_of(j - 1, ny))
        })
        .collect();
    // Blocks of coarse rows share the rows of P they need (each fine row's P is computed
    // about once instead of two and a half times).
    const BLOCK: usize = 16;
    level.coef[s..(cy + 1) * s]
        .par_chunks_mut(BLOCK * s)
        .enumerate()
        .for_each(|(blk, out)| {
            let jc0 = blk * BLOCK;
            let jc1 = (jc0 + BLOCK).min(cy);
            let r0 = fine_of(jc0, ny).saturating_sub(2);
            let r1 = (fine_of(jc1 - 1, ny) + 2).min(ny - 1);
            let mut rows = Vec::with_capacity((r1 - r0 + 1) * nx);
            for j in r0..=r1 {
                for i in 0..nx {
                    rows.push(prow(a, lw, i, j));
                }
            }
            for jc in jc0..jc1 {
                coarse_row(
                    a,
                    &rows,
                    r0,
                    jc,
                    &mut out[(jc - jc0) * s..(jc - jc0 + 1) * s],
                );
            }
        });
    level.unknown = unknown;
    level
}

/// Slot in `[diag, e, n, ne, nw, sink]` of the coarse offset (dx, dy), dx, dy in -1..=2, at
/// index (dx + 1) + 4 (dy + 1).
const SLOT: [usize; 16] = [5, 5, 5, 5, 5, 0, 1, 5, 4, 2, 3, 5, 5, 5, 5, 5];

/// Computes padded row `jc` of the coarse operator into `out`; `rows` holds the rows of P
/// of fine rows `r0..` (at least those within two rows of the coarse row's fine row).
fn coarse_row<A: Couplings, R: Real>(
    a: &A,
    rows: &[PRow],
    r0: usize,
    jc: usize,
    out: &mut [[R; 5]],
) {
    let (nx, ny) = a.dims();
    let cx = coarse_len(nx);
    let fj = fine_of(jc, ny);
    let at = |i: usize, j: usize| -> &PRow { &rows[(j - r0) * nx + i] };
    for ic in 0..cx {
        let fi = fine_of(ic, nx);
        if !a.is_unknown(fi, fj) {
            out[ic + 1] = [1.0, 0.0, 0.0, 0.0, 0.0].map(R::from_f64);
            continue;
        }
        // Slots [diag, e, n, ne, nw] and a sink for the lower half.
        let mut acc = [0.0f64; 6];
        for pj in fj.saturating_sub(1)..=(fj + 1).min(ny - 1) {
            for pi in fi.saturating_sub(1)..=(fi + 1).min(nx - 1) {
                let pr = at(pi, pj);
                let (da, db) = (ic.wrapping_sub(pr.base.0), jc.wrapping_sub(pr.base.1));
                if da > 1 || db > 1 {
                    continue;
                }
                let phi = pr.w[db][da];
                if phi == 0.0 {
                    continue;
                }
                let arow = a.row(pi, pj);
                for (o, &(di, dj)) in A::OFFSETS.iter().enumerate() {
                    let apq = arow[o];
                    if apq == 0.0 {
                        continue;
                    }
                    // A non-zero entry couples to a node inside the lattice.
                    let qr = at((pi as isize + di) as usize, (pj as isize + dj) as usize);
                    // The parents of q lie within one coarse index of (ic, jc).
                    let ox = (qr.base.0 + 1).wrapping_sub(ic);
                    let oy = (qr.base.1 + 1).wrapping_sub(jc);
                    debug_assert!(ox <= 2 && oy <= 2);
                    let k = ox + 4 * oy;
                    let f = phi * apq;
                    acc[SLOT[k]] += f * qr.w[0][0];
                    acc[SLOT[k + 1]] += f * qr.w[0][1];
                    acc[SLOT[k + 4]] += f * qr.w[1][0];
                    acc[SLOT[k + 5]] += f * qr.w[1][1];
                }
            }
        }
        out[ic + 1] = [acc[0], -acc[1], -acc[2], -acc[3], -acc[4]].map(R::from_f64);
    }
}
