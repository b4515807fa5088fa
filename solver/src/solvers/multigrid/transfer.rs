//! Moving vectors between levels: restriction of residuals (P^T) and prolongation of
//! corrections (P), on the fine five-point level and on coarse nine-point levels.
//!
//! Invariants: both directions use the stored line weights of [`LineWeights`] and the
//! interior rule of [`super::interpolation`] in the same arithmetic form, so restriction is the
//! exact transpose of prolongation; a fixed coarse node receives a zero right-hand side and a
//! fixed fine node a zero correction.

use super::interpolation::{between, fine_of, interior_count, kind, Kind, LineWeights};
use super::level::{wide, Level, Real, Shared};
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

/// The fine-level restriction as two row stages: [`FineRestrict::interior_row`] (scaled
/// residuals of the interior points of a row) and [`FineRestrict::coarse_row`] (the coarse
/// right-hand side of a coarse row, from the interior values of the rows beside it). After a
/// red-black sweep that ended on black (`black_is_zero`), black residuals are zero and are
/// not recomputed; otherwise every residual is. Vectors are shared raw pointers so that the stages can run interleaved with
/// the smoother (see `smoother::wavefront`).
pub(super) struct FineRestrict<'a, R: Real = f32> {
    /// Fine operator.
    pub a: &'a Stencil5,
    /// Its line weights.
    pub lw: &'a LineWeights,
    /// Right-hand side of the fine smoothing.
    pub r: &'a [f64],
    /// The smoothed iterate (read only here).
    pub z: Shared,
    /// Scaled interior residuals, `interior_count(nx) * interior_count(ny)`.
    pub sbuf: Shared,
    /// The coarse level.
    pub c: &'a Level<R>,
    /// Its right-hand side (padded).
    pub bc: Shared,
    /// True when the residuals of black nodes ((i + j) odd) are zero.
    pub black_is_zero: bool,
}

impl<R: Real> FineRestrict<'_, R> {
    /// Residual `r - A z` at node (i, j).
    ///
    /// # Safety
    /// `z` points to a lattice vector whose entries around (i, j) are not being written.
    #[inline]
    unsafe fn residual(&self, i: usize, j: usize) -> f64 {
        let (a, z) = (self.a, self.z.get());
        let nx = a.nx;
        let p = i + j * nx;
        let mut s = self.r[p] - a.diag[p] * *z.add(p);
        if i + 1 < nx {
            s += a.east[p] * *z.add(p + 1);
        }
        if i > 0 {
            s += a.east[p - 1] * *z.add(p - 1);
        }
        if j + 1 < a.ny {
            s += a.north[p] * *z.add(p + nx);
        }
        if j > 0 {
            s += a.north[p - nx] * *z.add(p - nx);
        }
        s
    }

    /// Residual at a node with all four neighbours inside the lattice.
    ///
    /// # Safety
    /// As for `residual`, and p must not be on the lattice edge.
    #[inline]
    unsafe fn inner(&self, p: usize) -> f64 {
        let (a, z, nx) = (self.a, self.z.get(), self.a.nx);
        let (d, e, n, r) = (&a.diag, &a.east, &a.north, self.r);
        r.get_unchecked(p) - d.get_unchecked(p) * *z.add(p)
            + e.get_unchecked(p) * *z.add(p + 1)
            + e.get_unchecked(p - 1) * *z.add(p - 1)
            + n.get_unchecked(p) * *z.add(p + nx)
            + n.get_unchecked(p - nx) * *z.add(p - nx)
    }

    /// Stage 1: scaled residuals of the interior points of fine row j (other rows: nothing).
    ///
    /// # Safety
    /// Vectors have their documented lengths; rows j-1..=j+1 of z are final and not being
    /// written; no one else writes this row of `sbuf`.
    pub unsafe fn interior_row(&self, j: usize) {
        let (nx, ny) = (self.a.nx, self.a.ny);
        if !between(j as isize, ny) {
            return;
        }
        let mx = interior_count(nx);
        let out = self.sbuf.get().add((j / 2) * mx);
        let base = j * nx;
        for k in 0..mx {
            let p = base + 2 * k + 1;
            *out.add(k) = self.inner(p) / self.a.diag.get_unchecked(p);
        }
    }

    /// Stage 2: the coarse right-hand side of the coarse row lying on fine row j (other
    /// rows: nothing).
    ///
    /// # Safety
    /// As for `interior_row`, with `sbuf` rows j +- 1 complete; no one else writes this row
    /// of `bc`.
    pub unsafe fn coarse_row(&self, j: usize) {
        let (a, lw, c) = (self.a, self.lw, self.c);
        let (nx, ny) = (a.nx, a.ny);
        let jc = match kind(j, ny) {
            Kind::Coarse(jc) => jc,
            Kind::Between(_) => return,
        };
        let fj = j;
        let mx = interior_count(nx);
        let (e, n) = (&a.east[..], &a.north[..]);
        let up = between(fj as isize + 1, ny);
        let down = between(fj as isize - 1, ny);
        let sb = self.sbuf.get();
        let s_up = if up { sb.add((fj / 2) * mx) } else { sb };
        let s_dn = if down {
            sb.add(((fj - 1) / 2) * mx)
        } else {
            sb
        };
        let su = |k: usize| *s_up.add(k);
        let sd = |k: usize| *s_dn.add(k);
        let yw_up = if up { lw.yw_row(fj + 1) } else { &[][..] };
        let yw_dn = if down { lw.yw_row(fj - 1) } else { &[][..] };
        let xw = lw.xw_row(jc);
        let out = self.bc.get().add(c.idx(0, jc));
        let known = |i: usize, j: usize| -> f64 {
            if self.black_is_zero && (i + j) % 2 == 1 {
                0.0
            } else {
                self.residual(i, j)
            }
        };
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
                    t += n[l] * su(k);
                }
                if down {
                    t += n[l - nx] * sd(k);
                }
                v += xw[k][0] as f64 * t;
            }
            if west {
                let (l, k) = (p - 1, (fi - 1) / 2);
                let mut t = known(fi - 1, fj);
                if up {
                    t += n[l] * su(k);
                }
                if down {
                    t += n[l - nx] * sd(k);
                }
                v += xw[k][1] as f64 * t;
            }
            if up {
                let l = p + nx;
                let mut t = known(fi, fj + 1);
                if east {
                    t += e[l] * su((fi + 1) / 2);
                }
                if west {
                    t += e[l - 1] * su((fi - 1) / 2);
                }
                v += yw_up[ic][0] as f64 * t;
            }
            if down {
                let l = p - nx;
                let mut t = known(fi, fj - 1);
                if east {
                    t += e[l] * sd((fi + 1) / 2);
                }
                if west {
                    t += e[l - 1] * sd((fi - 1) / 2);
                }
                v += yw_dn[ic][1] as f64 * t;
            }
            v
        };
        let cx = c.nx;
        // Coarse columns whose fine node is inside and whose x-line neighbours 2ic +- 1 lie
        // between coarse indices: those line points are black and inside.
        let (reg0, reg1) = (1, nx.saturating_sub(1) / 2);
        if !(up && down && fj % 2 == 0 && self.black_is_zero) || reg1 <= reg0 {
            for ic in 0..cx {
                *out.add(ic) = general(ic);
            }
            return;
        }
        *out = general(0);
        for ic in reg0..reg1 {
            let p = 2 * ic + fj * nx;
            if !a.unknown[p] {
                *out.add(ic) = 0.0;
                continue;
            }
            let (ke, kw) = (ic, ic - 1);
            let (su_e, su_w, sd_e, sd_w) = (su(ke), su(kw), sd(ke), sd(kw));
            let v = self.inner(p)
                + xw[ke][0] as f64 * (n[p + 1] * su_e + n[p + 1 - nx] * sd_e)
                + xw[kw][1] as f64 * (n[p - 1] * su_w + n[p - 1 - nx] * sd_w)
                + yw_up[ic][0] as f64 * (e[p + nx] * su_e + e[p + nx - 1] * su_w)
                + yw_dn[ic][1] as f64 * (e[p - nx] * sd_e + e[p - nx - 1] * sd_w);
            *out.add(ic) = v;
        }
        for ic in reg1.max(1)..cx {
            *out.add(ic) = general(ic);
        }
    }
}

/// Checks the lengths the fine row kernels rely on.
pub(super) fn check_fine(a: &Stencil5, vectors: &[usize]) {
    let n = a.len();
    assert!(a.diag.len() == n && a.east.len() == n && a.north.len() == n && a.unknown.len() == n);
    assert!(
        vectors.iter().all(|&l| l == n),
        "vector length differs from the lattice"
    );
}

#[cfg(test)]
/// Restricts the fine residual `r - A z` to the coarse right-hand side `bc` (both stages of
/// [`FineRestrict`] one after the other), right after a sweep that ended on black.
pub(super) fn restrict_fine(
    a: &Stencil5,
    lw: &LineWeights,
    r: &[f64],
    z: &[f64],
    sbuf: &mut [f64],
    c: &Level,
    bc: &mut [f64],
) {
    check_fine(a, &[r.len(), z.len()]);
    assert!(
        sbuf.len() == interior_count(a.nx) * interior_count(a.ny) && bc.len() == c.padded_len()
    );
    let big = a.len() >= PARALLEL_MIN;
    let fr = FineRestrict {
        a,
        lw,
        r,
        z: Shared::new_const(z),
        sbuf: Shared::new(sbuf),
        c,
        bc: Shared::new(bc),
        black_is_zero: true,
    };
    // SAFETY: lengths checked; each stage writes only its own row; the second stage runs
    // after the first is complete.
    each(big, a.ny, |j| unsafe { fr.interior_row(j) });
    each(big, a.ny, |j| unsafe { fr.coarse_row(j) });
}

/// Adds the interpolated coarse correction `xc` to row j of the fine iterate `z`.
///
/// # Safety
/// `z` points to a lattice vector; no one else reads or writes its row j meanwhile.
pub(super) unsafe fn prolong_fine_row<R: Real>(
    a: &Stencil5,
    lw: &LineWeights,
    z: *mut f64,
    c: &Level<R>,
    xc: &[f64],
    j: usize,
) {
    let (nx, ny) = (a.nx, a.ny);
    let (d, e, n) = (&a.diag[..], &a.east[..], &a.north[..]);
    let (cx, mx) = (c.nx, interior_count(nx));
    let crow = |jc: usize| &xc[c.idx(0, jc)..c.idx(0, jc) + cx];
    let row = z.add(j * nx);
    match kind(j, ny) {
        Kind::Coarse(jc) => {
            let (ec, xw) = (crow(jc), lw.xw_row(jc));
            for ic in 0..cx {
                *row.add(fine_of(ic, nx)) += ec[ic];
            }
            for i0 in 0..mx {
                let w = xw[i0];
                *row.add(2 * i0 + 1) += w[0] as f64 * ec[i0] + w[1] as f64 * ec[i0 + 1];
            }
        }
        Kind::Between(j0) => {
            let (es, en) = (crow(j0), crow(j0 + 1));
            let (xs, xn, yw) = (lw.xw_row(j0), lw.xw_row(j0 + 1), lw.yw_row(j));
            let ey = |ic: usize| yw[ic][0] as f64 * es[ic] + yw[ic][1] as f64 * en[ic];
            for ic in 0..cx {
                *row.add(fine_of(ic, nx)) += ey(ic);
            }
            let base = j * nx;
            for i0 in 0..mx {
                let i = 2 * i0 + 1;
                let p = base + i;
                let ex_s = xs[i0][0] as f64 * es[i0] + xs[i0][1] as f64 * es[i0 + 1];
                let ex_n = xn[i0][0] as f64 * en[i0] + xn[i0][1] as f64 * en[i0 + 1];
                *row.add(i) +=
                    (e[p - 1] * ey(i0) + e[p] * ey(i0 + 1) + n[p - nx] * ex_s + n[p] * ex_n) / d[p];
            }
        }
    }
}

/// Adds the interpolated coarse correction `xc` to the fine iterate `z`.
#[cfg(test)]
pub(super) fn prolong_fine(a: &Stencil5, lw: &LineWeights, z: &mut [f64], c: &Level, xc: &[f64]) {
    check_fine(a, &[z.len()]);
    let big = a.len() >= PARALLEL_MIN;
    let zp = Shared::new(z);
    // SAFETY: length checked; each call writes only its own row.
    each(big, a.ny, |j| unsafe {
        prolong_fine_row(a, lw, zp.get(), c, xc, j)
    });
}

/// Runs `f(j)` for j in 0..n, in parallel when `big`.
pub(super) fn each(big: bool, n: usize, f: impl Fn(usize) + Sync + Send) {
    if big {
        (0..n).into_par_iter().for_each(f);
    } else {
        (0..n).for_each(f);
    }
}

/// Restricts the residual `b - A x` of coarse level `l` to the right-hand side `bc` of level
/// `c`; `r` is scratch of the level's padded length (it receives the residual, divided by the
/// diagonal at interior points).
pub(super) fn restrict_coarse<R: Real>(
    l: &Level<R>,
    lw: &LineWeights,
    b: &[f64],
    x: &[f64],
    r: &mut [f64],
    c: &Level<R>,
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
            let res = b[p] - wide(cp[0]) * x[p]
                + wide(cp[1]) * x[p + 1]
                + wide(k[p - 1][1]) * x[p - 1]
                + wide(cp[2]) * x[p + s]
                + wide(k[p - s][2]) * x[p - s]
                + wide(cp[3]) * x[p + s + 1]
                + wide(k[p - s - 1][3]) * x[p - s - 1]
                + wide(cp[4]) * x[p + s - 1]
                + wide(k[p - s + 1][4]) * x[p - s + 1];
            rr[i] = if jb && between(i as isize - 1, nx) {
                res / wide(cp[0])
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
                v += wide(k[f][3]) * r[f + s + 1];
            }
            if west && down {
                v += wide(k[f - s - 1][3]) * r[f - s - 1];
            }
            if west && up {
                v += wide(k[f][4]) * r[f + s - 1];
            }
            if east && down {
                v += wide(k[f - s + 1][4]) * r[f - s + 1];
            }
            // Line points: their residual plus couplings to interior points times the
            // scaled interior residuals, times their weight towards this coarse node.
            if east {
                let q = f + 1;
                let mut t = r[q];
                if up {
                    t += wide(k[q][2]) * r[q + s];
                }
                if down {
                    t += wide(k[q - s][2]) * r[q - s];
                }
                v += xw[(fi + 1) / 2][0] as f64 * t;
            }
            if west {
                let q = f - 1;
                let mut t = r[q];
                if up {
                    t += wide(k[q][2]) * r[q + s];
                }
                if down {
                    t += wide(k[q - s][2]) * r[q - s];
                }
                v += xw[(fi - 1) / 2][1] as f64 * t;
            }
            if up {
                let q = f + s;
                let mut t = r[q];
                if east {
                    t += wide(k[q][1]) * r[q + 1];
                }
                if west {
                    t += wide(k[q - 1][1]) * r[q - 1];
                }
                v += yw_up[ic][0] as f64 * t;
            }
            if down {
                let q = f - s;
                let mut t = r[q];
                if east {
                    t += wide(k[q][1]) * r[q + 1];
                }
                if west {
                    t += wide(k[q - 1][1]) * r[q - 1];
                }
                v += yw_dn[ic][1] as f64 * t;
            }
            out[ic + 1] = v;
        }
    });
}

/// Adds the interpolated correction `xc` of level `c` to the iterate `x` of level `l`.
pub(super) fn prolong_coarse<R: Real>(
    l: &Level<R>,
    lw: &LineWeights,
    x: &mut [f64],
    c: &Level<R>,
    xc: &[f64],
) {
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
                    let v = wide(k[p][1]) * ey(i0 + 1)
                        + wide(k[p - 1][1]) * ey(i0)
                        + wide(k[p][2]) * ex_n
                        + wide(k[p - s][2]) * ex_s
                        + wide(k[p][3]) * en[i0 + 1]
                        + wide(k[p - s - 1][3]) * es[i0]
                        + wide(k[p][4]) * en[i0]
                        + wide(k[p - s + 1][4]) * es[i0 + 1];
                    xr[i + 1] += v / wide(k[p][0]);
                }
            }
        }
    });
}
