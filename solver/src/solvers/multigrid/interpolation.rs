//! Operator-dependent interpolation P between a level and the next coarser one, and its
//! transpose (restriction).
//!
//! Coarsening is vertex-centred: along an axis of n nodes the coarse nodes are the even
//! indices plus always the last one, so a coarse axis has n/2 + 1 nodes and every other fine
//! index lies between two coarse ones. A fine node is a coarse point (both indices coarse),
//! an x-line point (x between, y coarse), a y-line point, or an interior point (both between).
//! Weights follow the black-box rule: a line point takes the operator's couplings towards each
//! coarse side, summed across the line and divided by the diagonal less the couplings along
//! the line; an interior point averages its eight neighbours' interpolated values with its own
//! couplings. Invariants: a fixed fine node has a zero row of P (its couplings are zero), a
//! fixed coarse node a zero column (its weights are masked to zero), so corrections never
//! move a fixed node; restriction is exactly the transpose of prolongation.

use super::level::{Couplings, Level, Shared};
use crate::stencil::Stencil5;
use rayon::prelude::*;

/// Where a fine index lies on the coarse axis.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(super) enum Kind {
    /// On coarse index `.0`.
    Coarse(usize),
    /// Between coarse indices `.0` and `.0 + 1`.
    Between(usize),
}

/// The class of fine index `i` on an axis of `n` nodes.
#[inline]
pub(super) fn kind(i: usize, n: usize) -> Kind {
    if i % 2 == 0 {
        Kind::Coarse(i / 2)
    } else if i + 1 == n {
        Kind::Coarse(i / 2 + 1)
    } else {
        Kind::Between(i / 2)
    }
}

/// True when fine index `i` (possibly out of range) lies between two coarse indices.
#[inline]
pub(super) fn between(i: isize, n: usize) -> bool {
    i > 0 && (i as usize) % 2 == 1 && (i as usize) + 1 < n
}

/// Coarse nodes on an axis of `n` fine nodes.
#[inline]
pub(super) fn coarse_len(n: usize) -> usize {
    n / 2 + 1
}

/// Fine index of coarse index `ic` on an axis of `n` fine nodes.
#[inline]
pub(super) fn fine_of(ic: usize, n: usize) -> usize {
    (2 * ic).min(n - 1)
}

#[inline]
fn mask(a: &impl Couplings, i: usize, j: usize) -> f64 {
    if a.is_unknown(i, j) {
        1.0
    } else {
        0.0
    }
}

/// Weights of an x-line point (i, j) to its west and east coarse neighbours.
#[inline]
pub(super) fn xline_weights(a: &impl Couplings, i: usize, j: usize) -> (f64, f64) {
    if !a.is_unknown(i, j) {
        return (0.0, 0.0);
    }
    let c = |di, dj| a.coupling(i, j, di, dj);
    let w = c(-1, 0) + c(-1, 1) + c(-1, -1);
    let e = c(1, 0) + c(1, 1) + c(1, -1);
    let den = a.diag_at(i, j) - c(0, 1) - c(0, -1);
    if den.is_nan() || den <= 0.0 {
        return (0.0, 0.0);
    }
    (w / den * mask(a, i - 1, j), e / den * mask(a, i + 1, j))
}

/// Weights of a y-line point (i, j) to its south and north coarse neighbours.
#[inline]
pub(super) fn yline_weights(a: &impl Couplings, i: usize, j: usize) -> (f64, f64) {
    if !a.is_unknown(i, j) {
        return (0.0, 0.0);
    }
    let c = |di, dj| a.coupling(i, j, di, dj);
    let s = c(0, -1) + c(1, -1) + c(-1, -1);
    let n = c(0, 1) + c(1, 1) + c(-1, 1);
    let den = a.diag_at(i, j) - c(1, 0) - c(-1, 0);
    if den.is_nan() || den <= 0.0 {
        return (0.0, 0.0);
    }
    (s / den * mask(a, i, j - 1), n / den * mask(a, i, j + 1))
}

/// Weights of an interior point (i, j) to its corners `[sw, se, nw, ne]`.
pub(super) fn interior_weights(a: &impl Couplings, i: usize, j: usize) -> [f64; 4] {
    if !a.is_unknown(i, j) {
        return [0.0; 4];
    }
    let d = a.diag_at(i, j);
    let c = |di, dj| a.coupling(i, j, di, dj);
    let (xs_w, xs_e) = xline_weights(a, i, j - 1);
    let (xn_w, xn_e) = xline_weights(a, i, j + 1);
    let (yw_s, yw_n) = yline_weights(a, i - 1, j);
    let (ye_s, ye_n) = yline_weights(a, i + 1, j);
    [
        (c(-1, -1) + c(0, -1) * xs_w + c(-1, 0) * yw_s) / d * mask(a, i - 1, j - 1),
        (c(1, -1) + c(0, -1) * xs_e + c(1, 0) * ye_s) / d * mask(a, i + 1, j - 1),
        (c(-1, 1) + c(0, 1) * xn_w + c(-1, 0) * yw_n) / d * mask(a, i - 1, j + 1),
        (c(1, 1) + c(0, 1) * xn_e + c(1, 0) * ye_n) / d * mask(a, i + 1, j + 1),
    ]
}

/// One row of P: weight `w[b][a]` to coarse node `(base.0 + a, base.1 + b)`.
#[derive(Clone, Copy, Debug, Default)]
pub(super) struct PRow {
    /// Lower-left coarse parent.
    pub base: (usize, usize),
    /// Weights to the (up to) four parents.
    pub w: [[f64; 2]; 2],
}

/// The row of P for fine node (i, j).
pub(super) fn prow(a: &impl Couplings, i: usize, j: usize) -> PRow {
    let (nx, ny) = a.dims();
    let mut row = PRow::default();
    match (kind(i, nx), kind(j, ny)) {
        (Kind::Coarse(ic), Kind::Coarse(jc)) => {
            row.base = (ic, jc);
            row.w[0][0] = mask(a, i, j);
        }
        (Kind::Between(i0), Kind::Coarse(jc)) => {
            row.base = (i0, jc);
            let (w, e) = xline_weights(a, i, j);
            row.w[0] = [w, e];
        }
        (Kind::Coarse(ic), Kind::Between(j0)) => {
            row.base = (ic, j0);
            let (s, n) = yline_weights(a, i, j);
            row.w[0][0] = s;
            row.w[1][0] = n;
        }
        (Kind::Between(i0), Kind::Between(j0)) => {
            row.base = (i0, j0);
            let [sw, se, nw, ne] = interior_weights(a, i, j);
            row.w = [[sw, se], [nw, ne]];
        }
    }
    row
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

/// Interior points per row (and per column) of an axis of `n` nodes.
#[inline]
pub(super) fn interior_count(n: usize) -> usize {
    n.saturating_sub(1) / 2
}

/// Restricts the fine residual `r - A z` to the coarse right-hand side `bc`, right after a
/// red-black sweep that ended on black: black residuals are zero and are not recomputed.
/// `sbuf` (interior points only) holds the scaled interior residuals.
pub(super) fn restrict_fine(
    a: &Stencil5,
    r: &[f64],
    z: &[f64],
    sbuf: &mut [f64],
    coarse: &Level,
    bc: &mut [f64],
) {
    let (nx, ny) = (a.nx, a.ny);
    let mx = interior_count(nx);
    if mx > 0 {
        sbuf.par_chunks_mut(mx).enumerate().for_each(|(m, row)| {
            let j = 2 * m + 1;
            for (k, s) in row.iter_mut().enumerate() {
                let i = 2 * k + 1;
                *s = fine_residual(a, r, z, i, j) / a.diag[i + j * nx];
            }
        });
    }
    let sbuf = &*sbuf;
    // Scaled residual of an interior point; zero for any other node.
    let sv = |i: isize, j: isize| -> f64 {
        if between(i, nx) && between(j, ny) {
            sbuf[(j as usize / 2) * mx + i as usize / 2]
        } else {
            0.0
        }
    };
    // Residual where it is not known to vanish (red nodes).
    let known = |i: usize, j: usize| -> f64 {
        if (i + j) % 2 == 1 {
            0.0
        } else {
            fine_residual(a, r, z, i, j)
        }
    };
    let cs = coarse.s;
    bc.par_chunks_mut(cs).enumerate().for_each(|(row, out)| {
        if row == 0 || row > coarse.ny {
            return;
        }
        let jc = row - 1;
        let fj = fine_of(jc, ny);
        let jj = fj as isize;
        for ic in 0..coarse.nx {
            let fi = fine_of(ic, nx);
            let ii = fi as isize;
            if !a.unknown[fi + fj * nx] {
                out[ic + 1] = 0.0;
                continue;
            }
            let mut v = known(fi, fj);
            // x-line neighbours east and west: t = r + couplings to interior points * s.
            if between(ii + 1, nx) {
                let l = fi + 1;
                let t = known(l, fj)
                    + a.coupling(l, fj, 0, 1) * sv(ii + 1, jj + 1)
                    + a.coupling(l, fj, 0, -1) * sv(ii + 1, jj - 1);
                v += xline_weights(a, l, fj).0 * t;
            }
            if between(ii - 1, nx) {
                let l = fi - 1;
                let t = known(l, fj)
                    + a.coupling(l, fj, 0, 1) * sv(ii - 1, jj + 1)
                    + a.coupling(l, fj, 0, -1) * sv(ii - 1, jj - 1);
                v += xline_weights(a, l, fj).1 * t;
            }
            if between(jj + 1, ny) {
                let l = fj + 1;
                let t = known(fi, l)
                    + a.coupling(fi, l, 1, 0) * sv(ii + 1, jj + 1)
                    + a.coupling(fi, l, -1, 0) * sv(ii - 1, jj + 1);
                v += yline_weights(a, fi, l).0 * t;
            }
            if between(jj - 1, ny) {
                let l = fj - 1;
                let t = known(fi, l)
                    + a.coupling(fi, l, 1, 0) * sv(ii + 1, jj - 1)
                    + a.coupling(fi, l, -1, 0) * sv(ii - 1, jj - 1);
                v += yline_weights(a, fi, l).1 * t;
            }
            out[ic + 1] = v;
        }
    });
}

/// Adds the interpolated coarse correction `xc` to the fine iterate `z`.
pub(super) fn prolong_fine(a: &Stencil5, z: &mut [f64], coarse: &Level, xc: &[f64]) {
    let (nx, ny) = (a.nx, a.ny);
    let ec = |ic: usize, jc: usize| xc[coarse.idx(ic, jc)];
    // Interpolated value at a line point.
    let eline = |i: usize, j: usize| -> f64 {
        match (kind(i, nx), kind(j, ny)) {
            (Kind::Between(i0), Kind::Coarse(jc)) => {
                let (w, e) = xline_weights(a, i, j);
                w * ec(i0, jc) + e * ec(i0 + 1, jc)
            }
            (Kind::Coarse(ic), Kind::Between(j0)) => {
                let (s, n) = yline_weights(a, i, j);
                s * ec(ic, j0) + n * ec(ic, j0 + 1)
            }
            _ => unreachable!("not a line point"),
        }
    };
    z.par_chunks_mut(nx)
        .enumerate()
        .for_each(|(j, row)| match kind(j, ny) {
            Kind::Coarse(jc) => {
                for (i, zi) in row.iter_mut().enumerate() {
                    match kind(i, nx) {
                        Kind::Coarse(ic) => *zi += ec(ic, jc),
                        Kind::Between(_) => *zi += eline(i, j),
                    }
                }
            }
            Kind::Between(_) => {
                for (i, zi) in row.iter_mut().enumerate() {
                    match kind(i, nx) {
                        Kind::Coarse(_) => *zi += eline(i, j),
                        Kind::Between(_) => {
                            let p = i + j * nx;
                            let s = a.east[p - 1] * eline(i - 1, j)
                                + a.east[p] * eline(i + 1, j)
                                + a.north[p - nx] * eline(i, j - 1)
                                + a.north[p] * eline(i, j + 1);
                            *zi += s / a.diag[p];
                        }
                    }
                }
            }
        });
}

/// Restricts the residual `r` of coarse level `l` to the right-hand side `bc` of level
/// `c`. `r` is overwritten (scaled interior values, then line values).
pub(super) fn restrict_coarse(l: &Level, r: &mut [f64], c: &Level, bc: &mut [f64]) {
    let (nx, ny, s) = (l.nx, l.ny, l.s);
    // Interior points: r / diag.
    r.par_chunks_mut(s).enumerate().for_each(|(row, rr)| {
        if row == 0 || !between(row as isize - 1, ny) {
            return;
        }
        let base = row * s;
        for i in (1..nx).step_by(2) {
            if between(i as isize, nx) {
                rr[i + 1] /= l.coef[base + i + 1][0] as f64;
            }
        }
    });
    // Line points: add couplings to the interior points times their scaled residuals.
    let ptr = Shared::new(r);
    (0..ny).into_par_iter().for_each(|j| {
        let r = ptr.get();
        let jb = between(j as isize, ny);
        let up = between(j as isize + 1, ny);
        let down = between(j as isize - 1, ny);
        for i in 0..nx {
            let ib = between(i as isize, nx);
            let p = l.idx(i, j);
            // SAFETY: this pass writes only line points of row j and reads only interior
            // points, which it never writes.
            unsafe {
                if ib && !jb {
                    let mut t = *r.add(p);
                    if up {
                        t += l.coef[p][2] as f64 * *r.add(p + s);
                    }
                    if down {
                        t += l.coef[p - s][2] as f64 * *r.add(p - s);
                    }
                    *r.add(p) = t;
                } else if jb && !ib {
                    let mut t = *r.add(p);
                    if between(i as isize + 1, nx) {
                        t += l.coef[p][1] as f64 * *r.add(p + 1);
                    }
                    if between(i as isize - 1, nx) {
                        t += l.coef[p - 1][1] as f64 * *r.add(p - 1);
                    }
                    *r.add(p) = t;
                }
            }
        }
    });
    let r = &*r;
    bc.par_chunks_mut(c.s).enumerate().for_each(|(row, out)| {
        if row == 0 || row > c.ny {
            return;
        }
        let jc = row - 1;
        let fj = fine_of(jc, ny);
        let jj = fj as isize;
        for ic in 0..c.nx {
            let fi = fine_of(ic, nx);
            let ii = fi as isize;
            let f = l.idx(fi, fj);
            if !l.unknown[f] {
                out[ic + 1] = 0.0;
                continue;
            }
            let k = &l.coef;
            let mut v = r[f];
            let (e, w) = (between(ii + 1, nx), between(ii - 1, nx));
            let (n, so) = (between(jj + 1, ny), between(jj - 1, ny));
            if e && n {
                v += k[f][3] as f64 * r[f + s + 1];
            }
            if w && so {
                v += k[f - s - 1][3] as f64 * r[f - s - 1];
            }
            if w && n {
                v += k[f][4] as f64 * r[f + s - 1];
            }
            if e && so {
                v += k[f - s + 1][4] as f64 * r[f - s + 1];
            }
            if e {
                v += xline_weights(l, fi + 1, fj).0 * r[f + 1];
            }
            if w {
                v += xline_weights(l, fi - 1, fj).1 * r[f - 1];
            }
            if n {
                v += yline_weights(l, fi, fj + 1).0 * r[f + s];
            }
            if so {
                v += yline_weights(l, fi, fj - 1).1 * r[f - s];
            }
            out[ic + 1] = v;
        }
    });
}

/// Adds the interpolated correction `xc` of level `c` to the iterate `x` of level `l`;
/// `e` is scratch of the size of `x`.
pub(super) fn prolong_coarse(l: &Level, x: &mut [f64], e: &mut [f64], c: &Level, xc: &[f64]) {
    let (nx, ny, s) = (l.nx, l.ny, l.s);
    let ec = |ic: usize, jc: usize| xc[c.idx(ic, jc)];
    x.par_chunks_mut(s)
        .zip(e.par_chunks_mut(s))
        .enumerate()
        .for_each(|(row, (xr, er))| {
            if row == 0 || row > ny {
                return;
            }
            let j = row - 1;
            let kj = kind(j, ny);
            for i in 0..nx {
                let v = match (kind(i, nx), kj) {
                    (Kind::Coarse(ic), Kind::Coarse(jc)) => ec(ic, jc),
                    (Kind::Between(i0), Kind::Coarse(jc)) => {
                        let (w, e) = xline_weights(l, i, j);
                        w * ec(i0, jc) + e * ec(i0 + 1, jc)
                    }
                    (Kind::Coarse(ic), Kind::Between(j0)) => {
                        let (s, n) = yline_weights(l, i, j);
                        s * ec(ic, j0) + n * ec(ic, j0 + 1)
                    }
                    (Kind::Between(_), Kind::Between(_)) => continue,
                };
                er[i + 1] = v;
                xr[i + 1] += v;
            }
        });
    let e = &*e;
    x.par_chunks_mut(s).enumerate().for_each(|(row, xr)| {
        if row == 0 || !between(row as isize - 1, ny) {
            return;
        }
        let k = &l.coef;
        for i in 0..nx {
            if !between(i as isize, nx) {
                continue;
            }
            let p = row * s + i + 1;
            let v = k[p][1] as f64 * e[p + 1]
                + k[p - 1][1] as f64 * e[p - 1]
                + k[p][2] as f64 * e[p + s]
                + k[p - s][2] as f64 * e[p - s]
                + k[p][3] as f64 * e[p + s + 1]
                + k[p - s - 1][3] as f64 * e[p - s - 1]
                + k[p][4] as f64 * e[p + s - 1]
                + k[p - s + 1][4] as f64 * e[p - s + 1];
            xr[i + 1] += v / k[p][0] as f64;
        }
    });
}
