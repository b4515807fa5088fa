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

use super::level::Couplings;
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

/// Coarse index of a fine index known to be coarse.
#[inline]
pub(super) fn coarse_index(i: usize, n: usize) -> usize {
    match kind(i, n) {
        Kind::Coarse(ic) => ic,
        Kind::Between(_) => unreachable!("index {i} lies between coarse indices"),
    }
}

/// Interior points per row (and per column) of an axis of `n` nodes.
#[inline]
pub(super) fn interior_count(n: usize) -> usize {
    n.saturating_sub(1) / 2
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

/// The line-point weights of one level, computed once and stored in single precision (they
/// are the same numbers in prolongation, restriction and the Galerkin product, so rounding
/// them keeps P^T exact and the coarse operator exactly P^T A P).
pub(super) struct LineWeights {
    nx: usize,
    ny: usize,
    /// Between-indices per row (x) and per column (y).
    mx: usize,
    cx: usize,
    /// x-line points: `[west, east]` at `jc * mx + i / 2`.
    x: Vec<[f32; 2]>,
    /// y-line points: `[south, north]` at `(j / 2) * cx + ic`.
    y: Vec<[f32; 2]>,
}

impl LineWeights {
    /// The weights of the operator `a`.
    pub fn new(a: &impl Couplings) -> LineWeights {
        let (nx, ny) = a.dims();
        let (mx, my, cx, cy) = (
            interior_count(nx),
            interior_count(ny),
            coarse_len(nx),
            coarse_len(ny),
        );
        let round = |(u, v): (f64, f64)| [u as f32, v as f32];
        let x = (0..cy * mx)
            .into_par_iter()
            .map(|k| round(xline_weights(a, 2 * (k % mx) + 1, fine_of(k / mx, ny))))
            .collect();
        let y = (0..my * cx)
            .into_par_iter()
            .map(|k| round(yline_weights(a, fine_of(k % cx, nx), 2 * (k / cx) + 1)))
            .collect();
        LineWeights {
            nx,
            ny,
            mx,
            cx,
            x,
            y,
        }
    }

    /// Bytes held.
    pub fn bytes(&self) -> usize {
        8 * (self.x.len() + self.y.len())
    }

    /// `[west, east]` of x-line point (i, j) (i between, j coarse).
    #[inline]
    pub fn xw(&self, i: usize, j: usize) -> [f64; 2] {
        let w = self.x[coarse_index(j, self.ny) * self.mx + i / 2];
        [w[0] as f64, w[1] as f64]
    }

    /// `[west, east]` of the x-line point at between-index `i` on coarse row `jc`.
    #[inline]
    pub fn xw_row(&self, jc: usize) -> &[[f32; 2]] {
        &self.x[jc * self.mx..(jc + 1) * self.mx]
    }

    /// `[south, north]` of y-line point (i, j) (i coarse, j between).
    #[inline]
    pub fn yw(&self, i: usize, j: usize) -> [f64; 2] {
        let w = self.y[(j / 2) * self.cx + coarse_index(i, self.nx)];
        [w[0] as f64, w[1] as f64]
    }

    /// `[south, north]` of the y-line points of between-row `j`, by coarse column.
    #[inline]
    pub fn yw_row(&self, j: usize) -> &[[f32; 2]] {
        &self.y[(j / 2) * self.cx..(j / 2 + 1) * self.cx]
    }
}

/// Weights of an interior point (i, j) to its corners `[sw, se, nw, ne]`: its couplings
/// applied to the interpolated values of its eight neighbours, over its diagonal.
pub(super) fn interior_weights(
    a: &impl Couplings,
    lw: &LineWeights,
    i: usize,
    j: usize,
) -> [f64; 4] {
    if !a.is_unknown(i, j) {
        return [0.0; 4];
    }
    let d = a.diag_at(i, j);
    let c = |di, dj| a.coupling(i, j, di, dj);
    let [xs_w, xs_e] = lw.xw(i, j - 1);
    let [xn_w, xn_e] = lw.xw(i, j + 1);
    let [yw_s, yw_n] = lw.yw(i - 1, j);
    let [ye_s, ye_n] = lw.yw(i + 1, j);
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
pub(super) fn prow(a: &impl Couplings, lw: &LineWeights, i: usize, j: usize) -> PRow {
    let (nx, ny) = a.dims();
    let mut row = PRow::default();
    match (kind(i, nx), kind(j, ny)) {
        (Kind::Coarse(ic), Kind::Coarse(jc)) => {
            row.base = (ic, jc);
            row.w[0][0] = mask(a, i, j);
        }
        (Kind::Between(i0), Kind::Coarse(jc)) => {
            row.base = (i0, jc);
            row.w[0] = lw.xw(i, j);
        }
        (Kind::Coarse(ic), Kind::Between(j0)) => {
            row.base = (ic, j0);
            let [s, n] = lw.yw(i, j);
            row.w[0][0] = s;
            row.w[1][0] = n;
        }
        (Kind::Between(i0), Kind::Between(j0)) => {
            row.base = (i0, j0);
            let [sw, se, nw, ne] = interior_weights(a, lw, i, j);
            row.w = [[sw, se], [nw, ne]];
        }
    }
    row
}
