//! Moving vectors between levels: restriction of residuals (P^T) and prolongation of
//! corrections (P), on the fine five-point level and on coarse nine-point levels.
//!
//! Invariants: both directions use the stored line weights of [`LineWeights`] and the
//! interior rule of [`super::interpolation`] in the same arithmetic form, so restriction is the
//! exact transpose of prolongation; a fixed coarse node receives a zero right-hand side and a
//! fixed fine node a zero correction.

use super::interpolation::{between, fine_of, interior_count, kind, Kind, LineWeights};
use super::level::Level;
use crate::stencil::Stencil5;
use rayon::prelude::*;

/// Lattices with fewer nodes than this are processed on the calling thread.
pub(super) const PARALLEL_MIN: usize = 1 << 14;

/// Runs `f(k, chunk)` over the chunks of `v`, in parallel when `big`.
#[inline]
pub(super) fn chunks_mut<T: Send>(
    big: bool,
    v: &mut [T],
    len: usize,
    f: impl Fn(usize, &mut [T]) + Sync + Send,
) {
    if len == 0 {
        return;
    }
    if big {
        v.par_chunks_mut(len).enumerate().for_each(|(k, c)| f(k, c));
    } else {
        v.chunks_mut(len).enumerate().for_each(|(k, c)| f(k, c));
    }
}

/// Residual `r - A z` of the fine stencil at node (i, j).
#[inline]
fn fine_residual(a: &Stencil5, r: &[f64], z: &[f64], i: usize, j: usize) -> f64 {
    let nx = a.nx;
    let p = i + j * nx;
    let mut s = r[p] - a.diag[p] * z[p];
    if i + 1 < nx {
        s += a.east[p] * z[p + 1];
    }
    if i > 0 {
        s += a.east[p - 1] * z[p - 1];
    }
    if j + 1 < a.ny {
        s += a.north[p] * z[p + nx];
    }
    if j > 0 {
        s += a.north[p - nx] * z[p - nx];
    }
    s
}

/// Restricts the fine residual `r - A z` to the coarse right-hand side `bc`, right after a
/// red-black sweep that ended on black: black residuals are zero and are not recomputed.
/// `sbuf` (interior points only) receives the interior residuals over their diagonals.
#[allow(clippy::too_many_arguments)]
pub(super) fn restrict_fine(
    a: &Stencil5,
    lw: &LineWeights,
    r: &[f64],
    z: &[f64],
    sbuf: &mut [f64],
    c: &Level,
    bc: &mut [f64],
) {
    let (nx, ny) = (a.nx, a.ny);
    let len = a.len();
    assert!(
        r.len() == len
            && z.len() == len
            && a.diag.len() == len
            && a.east.len() == len
            && a.north.len() == len
    );
    let big = len >= PARALLEL_MIN;
    let mx = interior_count(nx);
    let (d, e, n) = (&a.diag[..], &a.east[..], &a.north[..]);
    // Residual at a node with all four neighbours inside the lattice.
    // SAFETY: callers pass such nodes only, so every index is below `len`.
    let inner = |p: usize| unsafe {
        r.get_unchecked(p) - d.get_unchecked(p) * z.get_unchecked(p)
            + e.get_unchecked(p) * z.get_unchecked(p + 1)
            + e.get_unchecked(p - 1) * z.get_unchecked(p - 1)
            + n.get_unchecked(p) * z.get_unchecked(p + nx)
            + n.get_unchecked(p - nx) * z.get_unchecked(p - nx)
    };
    chunks_mut(big, sbuf, mx, |m, row| {
        let base = (2 * m + 1) * nx;
        for (k, sv) in row.iter_mut().enumerate() {
            // Interior points are never on the lattice edge.
            let p = base + 2 * k + 1;
            *sv = inner(p) / d[p];
        }
    });
    let sbuf = &*sbuf;
    let known = |i: usize, j: usize| -> f64 {
        if (i + j) % 2 == 1 {
            0.0
        } else {
            fine_residual(a, r, z, i, j)
        }
    };
    let cx = c.nx;
    // Coarse columns whose fine node and both x-line neighbours are regular: 2ic +- 1 lie
    // between coarse indices (so the line points are black and inside).
    let (reg0, reg1) = (1, nx.saturating_sub(1) / 2);
    chunks_mut(big, bc, c.s, |row, out| {
        if row == 0 || row > c.ny {
            return;
        }
        let jc = row - 1;
        let fj = fine_of(jc, ny);
        let up = between(fj as isize + 1, ny);
        let down = between(fj as isize - 1, ny);
        let s_up = if up {
            &sbuf[(fj / 2) * mx..(fj / 2 + 1) * mx]
        } else {
            &[][..]
        };
        let s_dn = if down {
            &sbuf[((fj - 1) / 2) * mx..((fj - 1) / 2 + 1) * mx]
        } else {
            &[][..]
        };
        let yw_up = if up { lw.yw_row(fj + 1) } else { &[][..] };
        let yw_dn = if down { lw.yw_row(fj - 1) } else { &[][..] };
        let xw = lw.xw_row(jc);
        let general = |ic: usize| -> f64 {
            let fi = fine_of(ic, nx);
            let p = fi + fj * nx;
            if !a.unknown[p] {
                return 0.0;
            }
            let east = between(fi as isize + 1, nx);
            let west = between(fi as isize - 1, nx);
            let mut v = known(fi, fj);
            if east {
                let (l, k) = (p + 1, (fi + 1) / 2);
                let mut t = known(fi + 1, fj);
                if up {
                    t += n[l] * s_up[k];
                }
                if down {
                    t += n[l - nx] * s_dn[k];
                }
                v += xw[k][0] as f64 * t;
            }
            if west {
                let (l, k) = (p - 1, (fi - 1) / 2);
                let mut t = known(fi - 1, fj);
                if up {
                    t += n[l] * s_up[k];
                }
                if down {
                    t += n[l - nx] * s_dn[k];
                }
                v += xw[k][1] as f64 * t;
            }
            if up {
                let l = p + nx;
                let mut t = known(fi, fj + 1);
                if east {
                    t += e[l] * s_up[(fi + 1) / 2];
                }
                if west {
                    t += e[l - 1] * s_up[(fi - 1) / 2];
                }
                v += yw_up[ic][0] as f64 * t;
            }
            if down {
                let l = p - nx;
                let mut t = known(fi, fj - 1);
                if east {
                    t += e[l] * s_dn[(fi + 1) / 2];
                }
                if west {
                    t += e[l - 1] * s_dn[(fi - 1) / 2];
                }
                v += yw_dn[ic][1] as f64 * t;
            }
            v
        };
        if !(up && down && fj % 2 == 0) || reg1 <= reg0 {
            for ic in 0..cx {
                out[ic + 1] = general(ic);
            }
            return;
        }
        out[1] = general(0);
        for ic in reg0..reg1 {
            let p = 2 * ic + fj * nx;
            if !a.unknown[p] {
                out[ic + 1] = 0.0;
                continue;
            }
            let (ke, kw) = (ic, ic - 1);
            let (su_e, su_w, sd_e, sd_w) = (s_up[ke], s_up[kw], s_dn[ke], s_dn[kw]);
            let v = inner(p)
                + xw[ke][0] as f64 * (n[p + 1] * su_e + n[p + 1 - nx] * sd_e)
                + xw[kw][1] as f64 * (n[p - 1] * su_w + n[p - 1 - nx] * sd_w)
                + yw_up[ic][0] as f64 * (e[p + nx] * su_e + e[p + nx - 1] * su_w)
                + yw_dn[ic][1] as f64 * (e[p - nx] * sd_e + e[p - nx - 1] * sd_w);
            out[ic + 1] = v;
        }
        for ic in reg1.max(1)..cx {
            out[ic + 1] = general(ic);
        }
    });
}

/// Adds the interpolated coarse correction `xc` to the fine iterate `z`.
pub(super) fn prolong_fine(a: &Stencil5, lw: &LineWeights, z: &mut [f64], c: &Level, xc: &[f64]) {
    let (nx, ny) = (a.nx, a.ny);
    let big = a.len() >= PARALLEL_MIN;
    let (d, e, n) = (&a.diag[..], &a.east[..], &a.north[..]);
    let (cx, mx) = (c.nx, interior_count(nx));
    let crow = |jc: usize| &xc[c.idx(0, jc)..c.idx(0, jc) + cx];
    chunks_mut(big, z, nx, |j, row| match kind(j, ny) {
        Kind::Coarse(jc) => {
            let (ec, xw) = (crow(jc), lw.xw_row(jc));
            for ic in 0..cx {
                row[fine_of(ic, nx)] += ec[ic];
            }
            for i0 in 0..mx {
                let w = xw[i0];
                row[2 * i0 + 1] += w[0] as f64 * ec[i0] + w[1] as f64 * ec[i0 + 1];
            }
        }
        Kind::Between(j0) => {
            let (es, en) = (crow(j0), crow(j0 + 1));
            let (xs, xn, yw) = (lw.xw_row(j0), lw.xw_row(j0 + 1), lw.yw_row(j));
            let ey = |ic: usize| yw[ic][0] as f64 * es[ic] + yw[ic][1] as f64 * en[ic];
            for ic in 0..cx {
                row[fine_of(ic, nx)] += ey(ic);
            }
            let base = j * nx;
            for i0 in 0..mx {
                let i = 2 * i0 + 1;
                let p = base + i;
                let ex_s = xs[i0][0] as f64 * es[i0] + xs[i0][1] as f64 * es[i0 + 1];
                let ex_n = xn[i0][0] as f64 * en[i0] + xn[i0][1] as f64 * en[i0 + 1];
                row[i] +=
                    (e[p - 1] * ey(i0) + e[p] * ey(i0 + 1) + n[p - nx] * ex_s + n[p] * ex_n) / d[p];
            }
        }
    });
}

/// Restricts the residual `b - A x` of coarse level `l` to the right-hand side `bc` of level
/// `c`; `r` is scratch of the level's padded length (it receives the residual, divided by the
/// diagonal at interior points).
pub(super) fn restrict_coarse(
    l: &Level,
    lw: &LineWeights,
    b: &[f64],
    x: &[f64],
    r: &mut [f64],
    c: &Level,
    bc: &mut [f64],
) {
    let (nx, ny, s) = (l.nx, l.ny, l.s);
    assert!(b.len() == l.padded_len() && x.len() == l.padded_len() && r.len() == l.padded_len());
    let big = nx * ny >= PARALLEL_MIN;
    let k = &l.coef[..];
    chunks_mut(big, r, s, |row, rr| {
        if row == 0 || row > ny {
            return;
        }
        let jb = between(row as isize - 1, ny);
        for i in 1..=nx {
            let p = row * s + i;
            let cp = &k[p];
            let res = b[p] - cp[0] as f64 * x[p]
                + cp[1] as f64 * x[p + 1]
                + k[p - 1][1] as f64 * x[p - 1]
                + cp[2] as f64 * x[p + s]
                + k[p - s][2] as f64 * x[p - s]
                + cp[3] as f64 * x[p + s + 1]
                + k[p - s - 1][3] as f64 * x[p - s - 1]
                + cp[4] as f64 * x[p + s - 1]
                + k[p - s + 1][4] as f64 * x[p - s + 1];
            rr[i] = if jb && between(i as isize - 1, nx) {
                res / cp[0] as f64
            } else {
                res
            };
        }
    });
    let r = &*r;
    chunks_mut(big, bc, c.s, |row, out| {
        if row == 0 || row > c.ny {
            return;
        }
        let jc = row - 1;
        let fj = fine_of(jc, ny);
        let (up, down) = (between(fj as isize + 1, ny), between(fj as isize - 1, ny));
        let xw = lw.xw_row(jc);
        let yw_up = if up { lw.yw_row(fj + 1) } else { &[][..] };
        let yw_dn = if down { lw.yw_row(fj - 1) } else { &[][..] };
        for ic in 0..c.nx {
            let fi = fine_of(ic, nx);
            let f = l.idx(fi, fj);
            if !l.unknown[f] {
                out[ic + 1] = 0.0;
                continue;
            }
            let (east, west) = (between(fi as isize + 1, nx), between(fi as isize - 1, nx));
            let mut v = r[f];
            if east && up {
                v += k[f][3] as f64 * r[f + s + 1];
            }
            if west && down {
                v += k[f - s - 1][3] as f64 * r[f - s - 1];
            }
            if west && up {
                v += k[f][4] as f64 * r[f + s - 1];
            }
            if east && down {
                v += k[f - s + 1][4] as f64 * r[f - s + 1];
            }
            // Line points: their residual plus couplings to interior points times the
            // scaled interior residuals, times their weight towards this coarse node.
            if east {
                let q = f + 1;
                let mut t = r[q];
                if up {
                    t += k[q][2] as f64 * r[q + s];
                }
                if down {
                    t += k[q - s][2] as f64 * r[q - s];
                }
                v += xw[(fi + 1) / 2][0] as f64 * t;
            }
            if west {
                let q = f - 1;
                let mut t = r[q];
                if up {
                    t += k[q][2] as f64 * r[q + s];
                }
                if down {
                    t += k[q - s][2] as f64 * r[q - s];
                }
                v += xw[(fi - 1) / 2][1] as f64 * t;
            }
            if up {
                let q = f + s;
                let mut t = r[q];
                if east {
                    t += k[q][1] as f64 * r[q + 1];
                }
                if west {
                    t += k[q - 1][1] as f64 * r[q - 1];
                }
                v += yw_up[ic][0] as f64 * t;
            }
            if down {
                let q = f - s;
                let mut t = r[q];
                if east {
                    t += k[q][1] as f64 * r[q + 1];
                }
                if west {
                    t += k[q - 1][1] as f64 * r[q - 1];
                }
                v += yw_dn[ic][1] as f64 * t;
            }
            out[ic + 1] = v;
        }
    });
}

/// Adds the interpolated correction `xc` of level `c` to the iterate `x` of level `l`.
pub(super) fn prolong_coarse(l: &Level, lw: &LineWeights, x: &mut [f64], c: &Level, xc: &[f64]) {
    let (nx, ny, s) = (l.nx, l.ny, l.s);
    let big = nx * ny >= PARALLEL_MIN;
    let (cx, mx) = (c.nx, interior_count(nx));
    let k = &l.coef[..];
    let crow = |jc: usize| &xc[c.idx(0, jc)..c.idx(0, jc) + cx];
    chunks_mut(big, x, s, |row, xr| {
        if row == 0 || row > ny {
            return;
        }
        let j = row - 1;
        match kind(j, ny) {
            Kind::Coarse(jc) => {
                let (ec, xw) = (crow(jc), lw.xw_row(jc));
                for ic in 0..cx {
                    xr[fine_of(ic, nx) + 1] += ec[ic];
                }
                for i0 in 0..mx {
                    let w = xw[i0];
                    xr[2 * i0 + 2] += w[0] as f64 * ec[i0] + w[1] as f64 * ec[i0 + 1];
                }
            }
            Kind::Between(j0) => {
                let (es, en) = (crow(j0), crow(j0 + 1));
                let (xs, xn, yw) = (lw.xw_row(j0), lw.xw_row(j0 + 1), lw.yw_row(j));
                let ey = |ic: usize| yw[ic][0] as f64 * es[ic] + yw[ic][1] as f64 * en[ic];
                for ic in 0..cx {
                    xr[fine_of(ic, nx) + 1] += ey(ic);
                }
                for i0 in 0..mx {
                    let i = 2 * i0 + 1;
                    let p = row * s + i + 1;
                    let ex_s = xs[i0][0] as f64 * es[i0] + xs[i0][1] as f64 * es[i0 + 1];
                    let ex_n = xn[i0][0] as f64 * en[i0] + xn[i0][1] as f64 * en[i0 + 1];
                    let v = k[p][1] as f64 * ey(i0 + 1)
                        + k[p - 1][1] as f64 * ey(i0)
                        + k[p][2] as f64 * ex_n
                        + k[p - s][2] as f64 * ex_s
                        + k[p][3] as f64 * en[i0 + 1]
                        + k[p - s - 1][3] as f64 * es[i0]
                        + k[p][4] as f64 * en[i0]
                        + k[p - s + 1][4] as f64 * es[i0 + 1];
                    xr[i + 1] += v / k[p][0] as f64;
                }
            }
        }
    });
}
