//! Zebra line Gauss–Seidel: every other lattice line solved exactly at once, for operators
//! whose couplings are much stronger along one axis than the other (stretched cells).
//!
//! A half-sweep solves the lines of one parity (rows `j % 2 == q` for x-lines, columns
//! `i % 2 == q` for y-lines): each line's tridiagonal block (diagonal, couplings along the
//! line) against the right-hand side plus the couplings to the neighbouring lines, by the
//! Thomas algorithm. A sweep is x-lines even, odd, then y-lines even, odd; its reverse runs
//! the four half-sweeps backwards, so a sweep followed by its reverse is a symmetric smoother.
//!
//! Invariants: a half-sweep reads only lines of the other parity (five- and nine-point
//! operators couple a line to its two neighbours alone), so lines are solved in parallel with
//! results independent of the thread count; fixed nodes (identity rows, no couplings) come
//! out as their right-hand side, zero; a pivot that is not clearly positive (a line of a
//! floating region cut off from the others) is dropped and that unknown left at zero, so the
//! smoother stays a fixed symmetric linear map. `scratch` holds the eliminated couplings and
//! has the operator's vector length.

use super::level::{wide, Level, Real, Shared};
use super::transfer::PARALLEL_MIN;
use crate::stencil::Stencil5;
use rayon::prelude::*;

/// A pivot below this fraction of its diagonal is dropped.
const PIVOT_FLOOR: f64 = 1e-13;

/// Rows of one parity solved side by side by [`x_lines`].
const ROW_GROUP: usize = 4;

/// Columns per parallel task of a y-line half-sweep (rows are walked in order, so each task
/// reads whole row segments).
const COLUMN_BLOCK: usize = 128;

/// What the line kernels need of an operator: symmetric couplings to the two neighbours on
/// the line and the sum of the couplings to the neighbouring lines.
pub(super) trait LineOperator: Sync {
    /// Nodes along x and y.
    fn shape(&self) -> (usize, usize);
    /// Index of node (i, j) in the operator's vectors.
    fn at(&self, i: usize, j: usize) -> usize;
    /// Index step from (i, j) to (i, j + 1).
    fn stride(&self) -> usize;
    /// Diagonal at index p.
    fn diag(&self, p: usize) -> f64;
    /// Coupling of p to p + 1 (zero on the last column).
    fn east(&self, p: usize) -> f64;
    /// Coupling of p to p + stride (zero on the last row).
    fn north(&self, p: usize) -> f64;
    /// `b[p]` plus the couplings of node (i, j) to rows j - 1 and j + 1 times `x`.
    ///
    /// # Safety
    /// `x` points to a vector of the operator's length.
    unsafe fn across_rows(&self, b: &[f64], x: *const f64, i: usize, j: usize) -> f64;
    /// `b[p]` plus the couplings of node (i, j) to columns i - 1 and i + 1 times `x`.
    ///
    /// # Safety
    /// As for `across_rows`.
    unsafe fn across_columns(&self, b: &[f64], x: *const f64, i: usize, j: usize) -> f64;
}

impl LineOperator for Stencil5 {
    #[inline]
    fn shape(&self) -> (usize, usize) {
        (self.nx, self.ny)
    }
    #[inline]
    fn at(&self, i: usize, j: usize) -> usize {
        i + j * self.nx
    }
    #[inline]
    fn stride(&self) -> usize {
        self.nx
    }
    #[inline]
    fn diag(&self, p: usize) -> f64 {
        self.diag[p]
    }
    #[inline]
    fn east(&self, p: usize) -> f64 {
        self.east[p]
    }
    #[inline]
    fn north(&self, p: usize) -> f64 {
        self.north[p]
    }
    #[inline]
    unsafe fn across_rows(&self, b: &[f64], x: *const f64, i: usize, j: usize) -> f64 {
        let nx = self.nx;
        let p = i + j * nx;
        let mut s = *b.get_unchecked(p);
        if j + 1 < self.ny {
            s += self.north.get_unchecked(p) * *x.add(p + nx);
        }
        if j > 0 {
            s += self.north.get_unchecked(p - nx) * *x.add(p - nx);
        }
        s
    }
    #[inline]
    unsafe fn across_columns(&self, b: &[f64], x: *const f64, i: usize, j: usize) -> f64 {
        let p = i + j * self.nx;
        let mut s = *b.get_unchecked(p);
        if i + 1 < self.nx {
            s += self.east.get_unchecked(p) * *x.add(p + 1);
        }
        if i > 0 {
            s += self.east.get_unchecked(p - 1) * *x.add(p - 1);
        }
        s
    }
}

impl<R: Real> LineOperator for Level<R> {
    #[inline]
    fn shape(&self) -> (usize, usize) {
        (self.nx, self.ny)
    }
    #[inline]
    fn at(&self, i: usize, j: usize) -> usize {
        self.idx(i, j)
    }
    #[inline]
    fn stride(&self) -> usize {
        self.s
    }
    #[inline]
    fn diag(&self, p: usize) -> f64 {
        wide(self.coef[p][0])
    }
    #[inline]
    fn east(&self, p: usize) -> f64 {
        wide(self.coef[p][1])
    }
    #[inline]
    fn north(&self, p: usize) -> f64 {
        wide(self.coef[p][2])
    }
    #[inline]
    unsafe fn across_rows(&self, b: &[f64], x: *const f64, i: usize, j: usize) -> f64 {
        let (p, s, k) = (self.idx(i, j), self.s, &self.coef);
        let c = k.get_unchecked(p);
        *b.get_unchecked(p)
            + wide(c[2]) * *x.add(p + s)
            + wide(k.get_unchecked(p - s)[2]) * *x.add(p - s)
            + diagonal_neighbours(k, x, p, s)
    }
    #[inline]
    unsafe fn across_columns(&self, b: &[f64], x: *const f64, i: usize, j: usize) -> f64 {
        let (p, s, k) = (self.idx(i, j), self.s, &self.coef);
        let c = k.get_unchecked(p);
        *b.get_unchecked(p)
            + wide(c[1]) * *x.add(p + 1)
            + wide(k.get_unchecked(p - 1)[1]) * *x.add(p - 1)
            + diagonal_neighbours(k, x, p, s)
    }
}

/// Couplings of padded node p to its four diagonal neighbours times `x` (they lie on the
/// neighbouring rows and columns alike).
#[inline]
unsafe fn diagonal_neighbours<R: Real>(k: &[[R; 5]], x: *const f64, p: usize, s: usize) -> f64 {
    let c = k.get_unchecked(p);
    wide(c[3]) * *x.add(p + s + 1)
        + wide(k.get_unchecked(p - s - 1)[3]) * *x.add(p - s - 1)
        + wide(c[4]) * *x.add(p + s - 1)
        + wide(k.get_unchecked(p - s + 1)[4]) * *x.add(p - s + 1)
}

/// Reciprocal of a pivot, or zero when it is not clearly positive.
#[inline]
fn reciprocal(pivot: f64, diag: f64) -> f64 {
    if pivot > PIVOT_FLOOR * diag {
        1.0 / pivot
    } else {
        0.0
    }
}

/// Solves the x-line on row j.
///
/// # Safety
/// `x` and `w` point to vectors of the operator's length; no one else touches row j of
/// either, nor writes rows j - 1 and j + 1 of `x`, meanwhile.
#[inline]
unsafe fn x_line<A: LineOperator>(a: &A, b: &[f64], x: *mut f64, w: *mut f64, j: usize) {
    let (nx, _) = a.shape();
    let p0 = a.at(0, j);
    let (mut cp, mut y, mut c) = (0.0, 0.0, 0.0);
    for i in 0..nx {
        let p = p0 + i;
        let d = a.diag(p);
        let inv = reciprocal(d - c * cp, d);
        y = (a.across_rows(b, x, i, j) + c * y) * inv;
        c = a.east(p);
        cp = c * inv;
        *x.add(p) = y;
        *w.add(p) = cp;
    }
    for i in (0..nx.saturating_sub(1)).rev() {
        let p = p0 + i;
        *x.add(p) += *w.add(p) * *x.add(p + 1);
    }
}

/// Solves the x-lines on the rows `js` side by side: each row's arithmetic is that of
/// [`x_line`], but the independent recurrences interleave, so the processor overlaps their
/// divisions instead of waiting on each in turn.
///
/// # Safety
/// As for [`x_line`], for every row of `js`.
#[inline]
unsafe fn x_lines<A: LineOperator>(
    a: &A,
    b: &[f64],
    x: *mut f64,
    w: *mut f64,
    js: [usize; ROW_GROUP],
) {
    let (nx, _) = a.shape();
    let p0 = js.map(|j| a.at(0, j));
    let (mut cp, mut y, mut c) = ([0.0; ROW_GROUP], [0.0; ROW_GROUP], [0.0; ROW_GROUP]);
    for i in 0..nx {
        for g in 0..ROW_GROUP {
            let p = p0[g] + i;
            let d = a.diag(p);
            let inv = reciprocal(d - c[g] * cp[g], d);
            y[g] = (a.across_rows(b, x, i, js[g]) + c[g] * y[g]) * inv;
            c[g] = a.east(p);
            cp[g] = c[g] * inv;
            *x.add(p) = y[g];
            *w.add(p) = cp[g];
        }
    }
    for i in (0..nx.saturating_sub(1)).rev() {
        for g in 0..ROW_GROUP {
            let p = p0[g] + i;
            *x.add(p) += *w.add(p) * *x.add(p + 1);
        }
    }
}

/// Solves the y-lines of the columns `i0, i0 + 2, ... < i1` together, row by row.
///
/// # Safety
/// As for [`x_line`], for these columns of `x` and `w` and their neighbouring columns.
unsafe fn y_lines<A: LineOperator>(
    a: &A,
    b: &[f64],
    x: *mut f64,
    w: *mut f64,
    i0: usize,
    i1: usize,
) {
    let (_, ny) = a.shape();
    let s = a.stride();
    for j in 0..ny {
        let mut i = i0;
        while i < i1 {
            let p = a.at(i, j);
            let d = a.diag(p);
            let (c, cp, y) = if j == 0 {
                (0.0, 0.0, 0.0)
            } else {
                (a.north(p - s), *w.add(p - s), *x.add(p - s))
            };
            let inv = reciprocal(d - c * cp, d);
            *x.add(p) = (a.across_columns(b, x, i, j) + c * y) * inv;
            *w.add(p) = a.north(p) * inv;
            i += 2;
        }
    }
    for j in (0..ny.saturating_sub(1)).rev() {
        let mut i = i0;
        while i < i1 {
            let p = a.at(i, j);
            *x.add(p) += *w.add(p) * *x.add(p + s);
            i += 2;
        }
    }
}

/// The four half-sweeps of a sweep, in order.
const FORWARD: [(Axis, usize); 4] = [(Axis::X, 0), (Axis::X, 1), (Axis::Y, 0), (Axis::Y, 1)];

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Axis {
    X,
    Y,
}

/// One half-sweep: the lines along `axis` of parity `q`.
fn half_sweep<A: LineOperator>(
    a: &A,
    b: &[f64],
    x: &mut [f64],
    w: &mut [f64],
    axis: Axis,
    q: usize,
) {
    let (nx, ny) = a.shape();
    let big = nx * ny >= PARALLEL_MIN;
    let (xp, wp) = (Shared::new(x), Shared::new(w));
    match axis {
        Axis::X => {
            // SAFETY: lengths checked by the caller; rows of parity q are disjoint and read
            // only rows of the other parity.
            let rows = (ny + 1 - q.min(ny)) / 2;
            let group = |k: usize| unsafe {
                let first = ROW_GROUP * k;
                if first + ROW_GROUP <= rows {
                    x_lines(
                        a,
                        b,
                        xp.get(),
                        wp.get(),
                        [0, 1, 2, 3].map(|g| 2 * (first + g) + q),
                    );
                } else {
                    for r in first..rows {
                        x_line(a, b, xp.get(), wp.get(), 2 * r + q);
                    }
                }
            };
            let groups = rows.div_ceil(ROW_GROUP);
            if big {
                (0..groups).into_par_iter().for_each(group);
            } else {
                (0..groups).for_each(group);
            }
        }
        Axis::Y => {
            let blocks = nx.div_ceil(COLUMN_BLOCK);
            // SAFETY: as above, by columns; each block owns its columns of parity q.
            let block = |k: usize| unsafe {
                let i0 = k * COLUMN_BLOCK + q;
                let i1 = ((k + 1) * COLUMN_BLOCK).min(nx);
                y_lines(a, b, xp.get(), wp.get(), i0, i1)
            };
            if big {
                (0..blocks).into_par_iter().for_each(block);
            } else {
                (0..blocks).for_each(block);
            }
        }
    }
}

/// One alternating zebra sweep (x-lines even, odd, y-lines even, odd), or with `reverse` the
/// same half-sweeps backwards. With `from_zero` the iterate is zeroed first.
pub(super) fn line_sweep<A: LineOperator>(
    a: &A,
    b: &[f64],
    x: &mut [f64],
    scratch: &mut [f64],
    reverse: bool,
    from_zero: bool,
) {
    let (nx, ny) = a.shape();
    let len = a.at(nx - 1, ny - 1) + 1;
    assert!(b.len() >= len && x.len() >= len && scratch.len() >= len);
    if from_zero {
        x.fill(0.0);
    }
    if reverse {
        for &(axis, q) in FORWARD.iter().rev() {
            half_sweep(a, b, x, scratch, axis, q);
        }
    } else {
        for &(axis, q) in FORWARD.iter() {
            half_sweep(a, b, x, scratch, axis, q);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A dense copy of the x-line block of row j, solved by Gaussian elimination.
    fn dense_line_solve(a: &Stencil5, b: &[f64], x: &[f64], j: usize) -> Vec<f64> {
        let nx = a.nx;
        let mut m = vec![vec![0.0; nx + 1]; nx];
        for i in 0..nx {
            let p = i + j * nx;
            m[i][i] = a.diag[p];
            if i + 1 < nx {
                m[i][i + 1] = -a.east[p];
                m[i + 1][i] = -a.east[p];
            }
            m[i][nx] = unsafe { a.across_rows(b, x.as_ptr(), i, j) };
        }
        for k in 0..nx {
            for r in k + 1..nx {
                let f = m[r][k] / m[k][k];
                for c in k..=nx {
                    m[r][c] -= f * m[k][c];
                }
            }
        }
        let mut out = vec![0.0; nx];
        for k in (0..nx).rev() {
            let mut s = m[k][nx];
            for c in k + 1..nx {
                s -= m[k][c] * out[c];
            }
            out[k] = s / m[k][k];
        }
        out
    }

    #[test]
    fn a_line_solve_matches_dense_elimination() {
        let a = Stencil5::dirichlet_box(9, 7, |i, j| 1.0 + ((3 * i + j) % 4) as f64);
        let b: Vec<f64> = (0..a.len()).map(|p| ((p * 5 % 7) as f64) - 3.0).collect();
        let x0: Vec<f64> = (0..a.len()).map(|p| ((p * 3 % 11) as f64) * 0.1).collect();
        let mut x = x0.clone();
        let mut w = vec![0.0; a.len()];
        half_sweep(&a, &b, &mut x, &mut w, Axis::X, 1);
        for j in [1, 3, 5] {
            let want = dense_line_solve(&a, &b, &x0, j);
            for i in 0..a.nx {
                let got = x[i + j * a.nx];
                assert!(
                    (got - want[i]).abs() < 1e-12,
                    "row {j} node {i}: {got} vs {}",
                    want[i]
                );
            }
        }
        // Rows of the other parity are untouched.
        for p in 0..a.nx {
            assert_eq!(x[p], x0[p]);
        }
    }

    #[test]
    fn rows_solved_side_by_side_equal_rows_solved_one_by_one() {
        let a = Stencil5::dirichlet_box(37, 23, |i, j| 1.0 + ((i * j) % 5) as f64);
        let b: Vec<f64> = (0..a.len()).map(|p| ((p * 5 % 7) as f64) - 3.0).collect();
        let x0: Vec<f64> = (0..a.len()).map(|p| ((p * 3 % 11) as f64) * 0.1).collect();
        for q in [0, 1] {
            let (mut want, mut w) = (x0.clone(), vec![0.0; a.len()]);
            for j in (q..a.ny).step_by(2) {
                unsafe { x_line(&a, &b, want.as_mut_ptr(), w.as_mut_ptr(), j) };
            }
            let mut x = x0.clone();
            half_sweep(&a, &b, &mut x, &mut w, Axis::X, q);
            assert!(
                x.iter().zip(&want).all(|(u, v)| u.to_bits() == v.to_bits()),
                "parity {q}"
            );
        }
    }
}
