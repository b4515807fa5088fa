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
pub(super) fn coarse_operator(a: &impl Couplings, lw: &LineWeights) -> Level {
    let (nx, ny) = a.dims();
    let (cx, cy) = (coarse_len(nx), coarse_len(ny));
    let mut level = Level::identity(cx, cy);
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

/// Computes padded row `jc` of the coarse operator into `out`; `rows` holds the rows of P
/// of fine rows `r0..` (at least those within two rows of the coarse row's fine row).
fn coarse_row<A: Couplings>(a: &A, rows: &[PRow], r0: usize, jc: usize, out: &mut [[Real; 5]]) {
    let (nx, ny) = a.dims();
    let cx = coarse_len(nx);
    let fj = fine_of(jc, ny);
    let at = |i: usize, j: usize| -> &PRow { &rows[(j - r0) * nx + i] };
    for ic in 0..cx {
        let fi = fine_of(ic, nx);
        if !a.is_unknown(fi, fj) {
            out[ic + 1] = [1.0, 0.0, 0.0, 0.0, 0.0];
            continue;
        }
        let mut acc = [0.0f64; 5];
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
                for &(di, dj) in A::OFFSETS {
                    let (qi, qj) = (pi as isize + di, pj as isize + dj);
                    if qi < 0 || qj < 0 || qi as usize >= nx || qj as usize >= ny {
                        continue;
                    }
                    let apq = if di == 0 && dj == 0 {
                        a.diag_at(pi, pj)
                    } else {
                        -a.coupling(pi, pj, di, dj)
                    };
                    if apq == 0.0 {
                        continue;
                    }
                    let qr = at(qi as usize, qj as usize);
                    for (b, wrow) in qr.w.iter().enumerate() {
                        for (aa, &w) in wrow.iter().enumerate() {
                            if w == 0.0 {
                                continue;
                            }
                            let dk = (
                                (qr.base.0 + aa) as isize - ic as isize,
                                (qr.base.1 + b) as isize - jc as isize,
                            );
                            let slot = match dk {
                                (0, 0) => 0,
                                (1, 0) => 1,
                                (0, 1) => 2,
                                (1, 1) => 3,
                                (-1, 1) => 4,
                                _ => continue,
                            };
                            acc[slot] += phi * apq * w;
                        }
                    }
                }
            }
        }
        out[ic + 1] = [
            acc[0] as Real,
            -acc[1] as Real,
            -acc[2] as Real,
            -acc[3] as Real,
            -acc[4] as Real,
        ];
    }
}
