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
//! couplings. Under line relaxation the denominator is formed as the sum it equals in exact
//! arithmetic, the two lumped couplings plus the row's leak to fixed nodes ([`Rule::Lumped`]),
//! and the pair is rounded with its sum, so a row without leak interpolates a constant
//! exactly however stretched its cells. Invariants: a fixed fine node has a zero row of P (its couplings are zero), a
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

/// How the denominator of a line point's weights is formed.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(super) enum Rule {
    /// The diagonal less the two couplings along the line (point relaxation: its results).
    Classic,
    /// The lumped couplings towards both coarse sides, each taken by its size, plus the
    /// row's leak (its diagonal less every coupling) when that exceeds [`LEAK_FLOOR`] of the
    /// diagonal, else none (line relaxation). The same number in exact arithmetic when the
    /// lumped couplings are positive; but where the couplings along the line outweigh the
    /// lumped ones by ten decades and more (cells stretched 10^5 : 1) the classic difference
    /// is all rounding, and weights whose sum misses 1 by that rounding make an interpolated
    /// constant cost energy along the strong direction: the next coarse operator's row sums,
    /// and with them its weak couplings, turn to noise (measured on the sensor pad graded
    /// steeply at its junctions: denominators of zero and below, weights of -6e4 and 5e6 on
    /// the coarse levels, a V-cycle contracting by 0.93, CG 12 to 17 iterations).
    Lumped,
}

/// A row whose diagonal exceeds the sum of its couplings by less than this fraction of the
/// diagonal is taken to have no leak (no coupling to fixed nodes): below it the difference
/// is within the rounding of an assembled diagonal or a Galerkin sum.
pub(super) const LEAK_FLOOR: f64 = 1e-12;

/// Weights `(lo, hi)` of a line point (i, j) whose lumped couplings towards its two coarse
/// neighbours are `lo` and `hi` and whose couplings along the line are `along`.
#[inline]
fn line_pair(
    a: &impl Couplings,
    rule: Rule,
    (i, j): (usize, usize),
    lo: f64,
    hi: f64,
    along: [f64; 2],
) -> (f64, f64) {
    let d = a.diag_at(i, j);
    let den = match rule {
        Rule::Classic => d - along[0] - along[1],
        Rule::Lumped => {
            let (lo_, hi_) = (lo.abs(), hi.abs());
            let leak = d - along[0] - along[1] - lo - hi;
            let leak = if leak > LEAK_FLOOR * d { leak } else { 0.0 };
            let den = lo_ + hi_ + leak;
            if den.is_nan() || den <= 0.0 {
                return (0.0, 0.0);
            }
            return (lo_ / den, hi_ / den);
        }
    };
    if den.is_nan() || den <= 0.0 {
        return (0.0, 0.0);
    }
    (lo / den, hi / den)
}

/// `[u, v]` in single precision with their sum rounded as a whole: the larger is rounded,
/// the smaller is the rounded sum less it (exact, the two being within a factor of two), so
/// weights that sum to 1 still do and a constant is interpolated exactly.
fn round_pair(u: f64, v: f64) -> [f32; 2] {
    let sum = (u + v) as f32;
    if u >= v {
        let big = u as f32;
        [big, sum - big]
    } else {
        let big = v as f32;
        [sum - big, big]
    }
}

/// Weights of an x-line point (i, j) to its west and east coarse neighbours.
#[inline]
pub(super) fn xline_weights(a: &impl Couplings, rule: Rule, i: usize, j: usize) -> (f64, f64) {
    if !a.is_unknown(i, j) {
        return (0.0, 0.0);
    }
    let c = |di, dj| a.coupling(i, j, di, dj);
    let w = c(-1, 0) + c(-1, 1) + c(-1, -1);
    let e = c(1, 0) + c(1, 1) + c(1, -1);
    let (w, e) = line_pair(a, rule, (i, j), w, e, [c(0, 1), c(0, -1)]);
    (w * mask(a, i - 1, j), e * mask(a, i + 1, j))
}

/// Weights of a y-line point (i, j) to its south and north coarse neighbours.
#[inline]
pub(super) fn yline_weights(a: &impl Couplings, rule: Rule, i: usize, j: usize) -> (f64, f64) {
    if !a.is_unknown(i, j) {
        return (0.0, 0.0);
    }
    let c = |di, dj| a.coupling(i, j, di, dj);
    let s = c(0, -1) + c(1, -1) + c(-1, -1);
    let n = c(0, 1) + c(1, 1) + c(-1, 1);
    let (s, n) = line_pair(a, rule, (i, j), s, n, [c(1, 0), c(-1, 0)]);
    (s * mask(a, i, j - 1), n * mask(a, i, j + 1))
}

/// The line-point weights of one level, computed once and stored in single precision (they
/// are the same numbers in prolongation, restriction and the Galerkin product, so rounding
/// them keeps P^T exact and the coarse operator exactly P^T A P; under the lumped rule a
/// pair is rounded with its sum, [`round_pair`]).
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
    pub fn new(a: &impl Couplings, rule: Rule) -> LineWeights {
        let (nx, ny) = a.dims();
        let (mx, my, cx, cy) = (
            interior_count(nx),
            interior_count(ny),
            coarse_len(nx),
            coarse_len(ny),
        );
        let round = |(u, v): (f64, f64)| match rule {
            Rule::Classic => [u as f32, v as f32],
            Rule::Lumped => round_pair(u, v),
        };
        let x = (0..cy * mx)
            .into_par_iter()
            .map(|k| {
                round(xline_weights(
                    a,
                    rule,
                    2 * (k % mx) + 1,
                    fine_of(k / mx, ny),
                ))
            })
            .collect();
        let y = (0..my * cx)
            .into_par_iter()
            .map(|k| {
                round(yline_weights(
                    a,
                    rule,
                    fine_of(k % cx, nx),
                    2 * (k / cx) + 1,
                ))
            })
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

#[cfg(test)]
mod tests {
    use super::super::line_tests::{geometric, GradedBox, Side};
    use super::*;

    /// A box graded towards its corner (0, 0) with cells up to `ratio` times longer than
    /// wide, insulated on the left and bottom, so that most rows have no leak.
    fn corner_box(n: usize, ratio: f64) -> crate::stencil::Stencil5 {
        GradedBox {
            xs: geometric(0.0, 1.0, n, ratio),
            ys: geometric(0.0, 1.0, n, ratio),
            axisymmetric: false,
            sides: [
                Side::Insulated,
                Side::Fixed(0.0),
                Side::Insulated,
                Side::Fixed(1.0),
            ],
        }
        .assemble()
        .0
    }

    /// Largest miss of 1 by the stored weights of a line point whose neighbours are all free.
    fn worst_miss(a: &crate::stencil::Stencil5, lw: &LineWeights) -> f64 {
        let (nx, ny) = (a.nx, a.ny);
        let free = |i: usize, j: usize| {
            a.unknown[i + j * nx]
                && a.unknown[i - 1 + j * nx]
                && a.unknown[i + 1 + j * nx]
                && a.unknown[i + (j - 1) * nx]
                && a.unknown[i + (j + 1) * nx]
        };
        let mut worst: f64 = 0.0;
        for j in 1..ny - 1 {
            for i in 1..nx - 1 {
                if !free(i, j) {
                    continue;
                }
                let w = match (kind(i, nx), kind(j, ny)) {
                    (Kind::Between(_), Kind::Coarse(_)) => lw.xw(i, j),
                    (Kind::Coarse(_), Kind::Between(_)) => lw.yw(i, j),
                    _ => continue,
                };
                worst = worst.max((w[0] + w[1] - 1.0).abs());
            }
        }
        worst
    }

    #[test]
    fn lumped_weights_interpolate_a_constant_exactly_on_cells_stretched_a_million_to_one() {
        // Couplings along the line up to 1e12 times the lumped ones: the diagonal less the
        // couplings along it is then all rounding, and the classic weights miss 1 by far more
        // than single precision (guarding the reason for the lumped rule).
        let a = corner_box(101, 1e6);
        let classic = worst_miss(&a, &LineWeights::new(&a, Rule::Classic));
        assert!(classic > 1e-6, "classic weights miss 1 by {classic:e} only");
        assert_eq!(worst_miss(&a, &LineWeights::new(&a, Rule::Lumped)), 0.0);
    }

    #[test]
    fn lumped_weights_equal_classic_ones_where_nothing_cancels() {
        // Square cells, a dielectric jump and fixed sides: both rules give the same weights to
        // rounding, leaks to fixed nodes included.
        let (a, _) = crate::solvers::testing::jump_problem(33, 10.0);
        for j in 0..a.ny {
            for i in 0..a.nx {
                for (lumped, classic) in [
                    (
                        xline_weights(&a, Rule::Lumped, i, j),
                        xline_weights(&a, Rule::Classic, i, j),
                    ),
                    (
                        yline_weights(&a, Rule::Lumped, i, j),
                        yline_weights(&a, Rule::Classic, i, j),
                    ),
                ] {
                    assert!((lumped.0 - classic.0).abs() <= 1e-14, "({i}, {j})");
                    assert!((lumped.1 - classic.1).abs() <= 1e-14, "({i}, {j})");
                }
            }
        }
    }

    #[test]
    fn a_rounded_pair_keeps_its_sum() {
        for (u, v) in [
            (0.3, 0.7),
            (0.7, 0.3),
            (1.0 / 3.0, 2.0 / 3.0),
            (1e-9, 1.0 - 1e-9),
        ] {
            let [a, b] = round_pair(u, v);
            assert_eq!(a as f64 + b as f64, 1.0, "{u} + {v}");
            assert!((a as f64 - u).abs() <= 1e-7 && (b as f64 - v).abs() <= 1e-7);
        }
        let [a, b] = round_pair(0.25, 0.5);
        assert_eq!((a, b), (0.25, 0.5));
    }
}
