//! The node lattice: the tensor product of two sorted lists of node coordinates (grid lines)
//! covering the domain, corners included; uniform or graded.
//!
//! Invariants: node (i, j) sits at (xs[i], ys[j]), 0 <= i < nx, 0 <= j < ny, each list
//! finite and strictly increasing with at least 3 lines, and its linear index is i + j*nx
//! (x fastest). Every other module uses this numbering. Cell i along x is [x(i), x(i+1)],
//! of width `dx(i)`; node i's control volume reaches half-way to each neighbouring line
//! ([`Grid::dual_x`]), so volumes on the domain's sides are half cells.
//!
//! A uniform grid (from [`Grid::fit`]) keeps its spacing h: node i is at `x0 + i*h` exactly,
//! every `dx(i)` is h itself (not a difference of rounded coordinates) and point lookups use
//! `(x - x0) / h`, so everything computed on it is bit for bit what a lattice of constant
//! spacing gives. Graded grids look points up by binary search.

use crate::design::Point;
use std::ops::RangeInclusive;
use std::sync::Arc;

/// One axis of the lattice: its node coordinates, and the spacing when it is constant.
#[derive(Clone, Debug, PartialEq)]
struct Lines {
    at: Arc<[f64]>,
    /// `Some(h)`: node k is at `at[0] + k*h` exactly.
    h: Option<f64>,
}

impl Lines {
    fn uniform(origin: f64, h: f64, cells: usize) -> Lines {
        Lines {
            at: (0..=cells).map(|k| origin + k as f64 * h).collect(),
            h: Some(h),
        }
    }

    /// Lines from coordinates; `None` unless finite, strictly increasing and at least 3.
    /// Lines that sit at `first + k*h` exactly for one h are uniform.
    fn graded(at: Vec<f64>) -> Option<Lines> {
        let ok =
            at.len() >= 3 && at.iter().all(|c| c.is_finite()) && at.windows(2).all(|w| w[0] < w[1]);
        if !ok {
            return None;
        }
        let n = at.len();
        let on = |h: f64| (0..n).all(|k| at[0] + k as f64 * h == at[k]);
        let h = [(at[n - 1] - at[0]) / (n - 1) as f64, at[1] - at[0]]
            .into_iter()
            .find(|&h| on(h));
        Some(Lines { at: at.into(), h })
    }

    fn n(&self) -> usize {
        self.at.len()
    }

    fn d(&self, k: usize) -> f64 {
        match self.h {
            Some(h) => {
                assert!(k + 1 < self.n(), "cell {k} of {} lines", self.n());
                h
            }
            None => self.at[k + 1] - self.at[k],
        }
    }

    /// Cell index holding c, clamped to the cells.
    fn cell(&self, c: f64) -> usize {
        let last = self.n() - 2;
        match self.h {
            Some(h) => ((((c - self.at[0]) / h).floor().max(0.0)) as usize).min(last),
            None => self
                .at
                .partition_point(|&a| a <= c)
                .saturating_sub(1)
                .min(last),
        }
    }

    /// Cell holding c (clamped to the lines) and the fraction of the way across it.
    fn locate(&self, c: f64) -> (usize, f64) {
        let n = self.n();
        match self.h {
            Some(h) => {
                let g = ((c - self.at[0]) / h).clamp(0.0, (n - 1) as f64);
                let k = (g.floor() as usize).min(n - 2);
                (k, g - k as f64)
            }
            None => {
                let k = self.cell(c);
                let t = (c - self.at[k]) / (self.at[k + 1] - self.at[k]);
                (k, t.clamp(0.0, 1.0))
            }
        }
    }

    /// Nodes with lo <= c <= hi (on a uniform axis: as `(lo - x0) / h` rounds).
    fn inside(&self, lo: f64, hi: f64) -> Option<RangeInclusive<usize>> {
        match self.h {
            Some(h) => {
                let k0 = ((lo - self.at[0]) / h).ceil().max(0.0) as usize;
                let k1 = ((hi - self.at[0]) / h).floor().min((self.n() - 1) as f64);
                (k1 >= 0.0).then_some(k0..=k1 as usize)
            }
            None => {
                let k0 = self.at.partition_point(|&a| a < lo);
                let k1 = self.at.partition_point(|&a| a <= hi);
                (k1 > 0).then(|| k0..=k1 - 1)
            }
        }
    }

    /// Nodes of the cells that cover [lo, hi], clamped to the lines.
    fn covering(&self, lo: f64, hi: f64) -> RangeInclusive<usize> {
        let last = self.n() - 1;
        match self.h {
            Some(h) => {
                let k0 = ((lo - self.at[0]) / h).floor().max(0.0) as usize;
                let k1 = (((hi - self.at[0]) / h).ceil().max(0.0) as usize).min(last);
                k0..=k1
            }
            None => {
                let k0 = self.at.partition_point(|&a| a <= lo).saturating_sub(1);
                let k1 = self.at.partition_point(|&a| a < hi).min(last);
                k0..=k1
            }
        }
    }

    /// Extent [lo, hi] of node k's control volume.
    fn dual(&self, k: usize) -> (f64, f64) {
        let c = self.at[k];
        let lo = if k == 0 { c } else { c - 0.5 * self.d(k - 1) };
        let hi = if k + 1 == self.n() {
            c
        } else {
            c + 0.5 * self.d(k)
        };
        (lo, hi)
    }

    /// Length of node k's control volume (half of each neighbouring cell).
    fn dual_len(&self, k: usize) -> f64 {
        if k == 0 {
            0.5 * self.d(0)
        } else if k + 1 == self.n() {
            0.5 * self.d(k - 1)
        } else {
            0.5 * self.d(k - 1) + 0.5 * self.d(k)
        }
    }

    fn min(&self) -> f64 {
        match self.h {
            Some(h) => h,
            None => (0..self.n() - 1)
                .map(|k| self.d(k))
                .fold(f64::INFINITY, f64::min),
        }
    }

    fn max(&self) -> f64 {
        match self.h {
            Some(h) => h,
            None => (0..self.n() - 1).map(|k| self.d(k)).fold(0.0, f64::max),
        }
    }

    /// Every other line, the first and the last kept; a uniform axis is refitted with half
    /// as many cells (rounded up), at least 2.
    fn coarsened(&self) -> Lines {
        let cells = self.n() - 1;
        match self.h {
            Some(_) => {
                let c = (cells as f64 / 2.0).ceil().max(2.0) as usize;
                let span = self.at[cells] - self.at[0];
                Lines::uniform(self.at[0], span / c as f64, c)
            }
            None if cells <= 2 => self.clone(),
            None => {
                let mut at: Vec<f64> = self.at.iter().copied().step_by(2).collect();
                if cells % 2 == 1 {
                    at.push(self.at[cells]);
                }
                Lines::graded(at).expect("a subset of valid lines")
            }
        }
    }

    /// Every cell split at its midpoint.
    fn bisected(&self) -> Lines {
        let cells = self.n() - 1;
        match self.h {
            Some(h) => Lines::uniform(self.at[0], 0.5 * h, 2 * cells),
            None => {
                let mut at = Vec::with_capacity(2 * cells + 1);
                for w in self.at.windows(2) {
                    at.push(w[0]);
                    at.push(0.5 * (w[0] + w[1]));
                }
                at.push(self.at[cells]);
                Lines {
                    at: at.into(),
                    h: None,
                }
            }
        }
    }
}

/// A node lattice: the tensor product of the x and y grid lines.
#[derive(Clone, Debug, PartialEq)]
pub struct Grid {
    /// Nodes along x (cells + 1). Read-only: set with the lines.
    pub nx: usize,
    /// Nodes along y (cells + 1). Read-only: set with the lines.
    pub ny: usize,
    x: Lines,
    y: Lines,
}

/// A lattice that cannot be fitted. `Display` renders the code and the data, for logs; the
/// command line words it for users.
#[derive(Clone, Copy, Debug, PartialEq)]
#[non_exhaustive]
pub enum GridError {
    /// The cell size is not a positive finite number (the value given, m).
    Cell(f64),
    /// The domain has no positive, finite width and height.
    Domain,
    /// More than 1e8 cells along an axis.
    TooManyCells {
        /// Cells along x.
        x: f64,
        /// Cells along y.
        y: f64,
    },
    /// Grid lines that are not at least 3 finite, strictly increasing coordinates.
    Lines {
        /// 'x' or 'y'.
        axis: char,
    },
}

impl GridError {
    /// The stable code of this error (lower case words joined by `-`, never renamed or
    /// reused).
    pub fn code(&self) -> &'static str {
        match self {
            GridError::Cell(_) => "cell-size",
            GridError::Domain => "empty-domain",
            GridError::TooManyCells { .. } => "too-many-cells",
            GridError::Lines { .. } => "grid-lines",
        }
    }
}

impl std::fmt::Display for GridError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}: {self:?}", self.code())
    }
}

impl std::error::Error for GridError {}

impl Grid {
    /// Fits a uniform grid to the domain with cells as close to `cell` as a whole number of
    /// cells allows along each axis (at least 2 cells per axis).
    pub fn fit(x: [f64; 2], y: [f64; 2], cell: f64) -> Result<Grid, GridError> {
        if !(cell.is_finite() && cell > 0.0) {
            return Err(GridError::Cell(cell));
        }
        let lx = x[1] - x[0];
        let ly = y[1] - y[0];
        if !(lx.is_finite() && lx > 0.0 && ly.is_finite() && ly > 0.0) {
            return Err(GridError::Domain);
        }
        let cx = (lx / cell).round().max(2.0);
        let cy = (ly / cell).round().max(2.0);
        if cx > 1.0e8 || cy > 1.0e8 {
            return Err(GridError::TooManyCells { x: cx, y: cy });
        }
        let (cx, cy) = (cx as usize, cy as usize);
        Ok(Grid::of(
            Lines::uniform(x[0], lx / cx as f64, cx),
            Lines::uniform(y[0], ly / cy as f64, cy),
        ))
    }

    /// A grid on the given node lines (each strictly increasing, finite, at least 3 lines).
    /// Lines at `x0 + i*h` exactly for one h make a uniform axis.
    pub fn from_lines(xs: Vec<f64>, ys: Vec<f64>) -> Result<Grid, GridError> {
        let x = Lines::graded(xs).ok_or(GridError::Lines { axis: 'x' })?;
        let y = Lines::graded(ys).ok_or(GridError::Lines { axis: 'y' })?;
        Ok(Grid::of(x, y))
    }

    /// The uniform grid of `nodes` columns and rows from `origin` with constant `spacing`,
    /// node (i, j) at `origin + (i, j) * spacing` exactly. Panics unless there are at least
    /// 3 nodes per axis and the spacings are positive and finite.
    pub fn regular(origin: Point, spacing: [f64; 2], nodes: [usize; 2]) -> Grid {
        assert!(
            nodes.iter().all(|&n| n >= 3) && spacing.iter().all(|h| h.is_finite() && *h > 0.0),
            "a grid needs 3 nodes per axis and positive spacings"
        );
        Grid::of(
            Lines::uniform(origin[0], spacing[0], nodes[0] - 1),
            Lines::uniform(origin[1], spacing[1], nodes[1] - 1),
        )
    }

    fn of(x: Lines, y: Lines) -> Grid {
        Grid {
            nx: x.n(),
            ny: y.n(),
            x,
            y,
        }
    }

    /// Nodes along x.
    pub fn nx(&self) -> usize {
        self.nx
    }

    /// Nodes along y.
    pub fn ny(&self) -> usize {
        self.ny
    }

    /// Number of nodes.
    pub fn len(&self) -> usize {
        self.nx * self.ny
    }

    /// True for a grid without nodes (never: a grid has at least 3 x 3 nodes).
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// Linear index of node (i, j).
    #[inline]
    pub fn idx(&self, i: usize, j: usize) -> usize {
        i + j * self.nx
    }

    /// x of node column i, m.
    #[inline]
    pub fn x(&self, i: usize) -> f64 {
        self.x.at[i]
    }

    /// y of node row j, m.
    #[inline]
    pub fn y(&self, j: usize) -> f64 {
        self.y.at[j]
    }

    /// The node columns' x, m, increasing.
    pub fn xs(&self) -> &[f64] {
        &self.x.at
    }

    /// The node rows' y, m, increasing.
    pub fn ys(&self) -> &[f64] {
        &self.y.at
    }

    /// Near corner x (the first column), m.
    pub fn x0(&self) -> f64 {
        self.x(0)
    }

    /// Near corner y (the first row), m.
    pub fn y0(&self) -> f64 {
        self.y(0)
    }

    /// Far corner x (the last column), m.
    pub fn x1(&self) -> f64 {
        self.x(self.nx - 1)
    }

    /// Far corner y (the last row), m.
    pub fn y1(&self) -> f64 {
        self.y(self.ny - 1)
    }

    /// Width of cell i, x(i+1) - x(i), m; i < nx - 1.
    #[inline]
    pub fn dx(&self, i: usize) -> f64 {
        self.x.d(i)
    }

    /// Height of cell j, y(j+1) - y(j), m; j < ny - 1.
    #[inline]
    pub fn dy(&self, j: usize) -> f64 {
        self.y.d(j)
    }

    /// Index i of the cell [x(i), x(i+1)] holding x, clamped to the cells.
    pub fn cell_x(&self, x: f64) -> usize {
        self.x.cell(x)
    }

    /// Index j of the cell [y(j), y(j+1)] holding y, clamped to the cells.
    pub fn cell_y(&self, y: f64) -> usize {
        self.y.cell(y)
    }

    /// The cell holding x (clamped to the domain) and the fraction of the way across it, in
    /// [0, 1]: the bilinear weight of column i+1.
    pub fn locate_x(&self, x: f64) -> (usize, f64) {
        self.x.locate(x)
    }

    /// As [`Grid::locate_x`] along y.
    pub fn locate_y(&self, y: f64) -> (usize, f64) {
        self.y.locate(y)
    }

    /// The node columns with lo <= x <= hi (`None` when all lie above hi; an empty range
    /// when none lies between).
    pub fn columns_within(&self, lo: f64, hi: f64) -> Option<RangeInclusive<usize>> {
        self.x.inside(lo, hi)
    }

    /// The node rows with lo <= y <= hi, as [`Grid::columns_within`].
    pub fn rows_within(&self, lo: f64, hi: f64) -> Option<RangeInclusive<usize>> {
        self.y.inside(lo, hi)
    }

    /// The node columns of the cells that cover [lo, hi] (clamped to the domain).
    pub fn columns_covering(&self, lo: f64, hi: f64) -> RangeInclusive<usize> {
        self.x.covering(lo, hi)
    }

    /// The node rows of the cells that cover [lo, hi] (clamped to the domain).
    pub fn rows_covering(&self, lo: f64, hi: f64) -> RangeInclusive<usize> {
        self.y.covering(lo, hi)
    }

    /// Extent [lo, hi] along x of column i's control volume, m.
    pub fn dual_x(&self, i: usize) -> (f64, f64) {
        self.x.dual(i)
    }

    /// Extent [lo, hi] along y of row j's control volume, m.
    pub fn dual_y(&self, j: usize) -> (f64, f64) {
        self.y.dual(j)
    }

    /// Width of column i's control volume (half of each neighbouring cell), m.
    pub fn dual_len_x(&self, i: usize) -> f64 {
        self.x.dual_len(i)
    }

    /// Height of row j's control volume (half of each neighbouring cell), m.
    pub fn dual_len_y(&self, j: usize) -> f64 {
        self.y.dual_len(j)
    }

    /// Smallest cell width or height, m.
    pub fn min_cell(&self) -> f64 {
        self.x.min().min(self.y.min())
    }

    /// Largest cell width or height, m.
    pub fn max_cell(&self) -> f64 {
        self.x.max().max(self.y.max())
    }

    /// Largest cell width, m.
    pub fn max_dx(&self) -> f64 {
        self.x.max()
    }

    /// Largest cell height, m.
    pub fn max_dy(&self) -> f64 {
        self.y.max()
    }

    /// The larger side of the cell holding `p` (clamped to the domain), m: the local
    /// spacing that scales fits, search radii and sampling steps.
    pub fn spacing_at(&self, p: Point) -> f64 {
        self.dx(self.cell_x(p[0])).max(self.dy(self.cell_y(p[1])))
    }

    /// True when both axes have constant spacing.
    pub fn is_uniform(&self) -> bool {
        self.x.h.is_some() && self.y.h.is_some()
    }

    /// How many times finer this grid is than `coarse` (the same domain), the smaller of
    /// the two axes' ratios: spacings on uniform axes, cell counts otherwise.
    pub fn ratio_from(&self, coarse: &Grid) -> f64 {
        let axis = |f: &Lines, c: &Lines| match (f.h, c.h) {
            (Some(hf), Some(hc)) => hc / hf,
            _ => (f.n() - 1) as f64 / (c.n() - 1) as f64,
        };
        axis(&self.x, &coarse.x).min(axis(&self.y, &coarse.y))
    }

    /// Every other line, the first and last kept: about twice the spacing over the same
    /// domain (a uniform grid is refitted with half as many cells, rounded up, at least 2),
    /// for error estimates.
    pub fn coarsened(&self) -> Grid {
        Grid::of(self.x.coarsened(), self.y.coarsened())
    }

    /// Every cell split in two at its midpoint (undone by [`Grid::coarsened`] on a graded
    /// grid).
    pub fn bisected(&self) -> Grid {
        Grid::of(self.x.bisected(), self.y.bisected())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fit_adjusts_cell_to_whole_cells() {
        let g = Grid::fit([0.0, 1.0], [0.0, 0.5], 0.3).unwrap();
        assert_eq!((g.nx, g.ny), (4, 3));
        assert!((g.x1() - 1.0).abs() < 1e-15 && (g.y1() - 0.5).abs() < 1e-15);
        assert!(g.is_uniform());
        assert_eq!(g.dx(2), 1.0 / 3.0);
    }

    #[test]
    fn fit_rejects_bad_cell() {
        assert_eq!(
            Grid::fit([0.0, 1.0], [0.0, 1.0], 0.0),
            Err(GridError::Cell(0.0))
        );
        assert!(matches!(
            Grid::fit([0.0, 1.0], [0.0, 1.0], f64::NAN),
            Err(GridError::Cell(_))
        ));
        assert_eq!(
            Grid::fit([0.0, 1.0], [1.0, 1.0], 0.1),
            Err(GridError::Domain)
        );
        assert!(matches!(
            Grid::fit([0.0, 1.0], [0.0, 1.0], 1e-9),
            Err(GridError::TooManyCells { .. })
        ));
    }

    #[test]
    fn lines_must_be_increasing_finite_and_three() {
        let ok = vec![0.0, 0.1, 0.5];
        for bad in [
            vec![0.0, 1.0],
            vec![0.0, 0.5, 0.5],
            vec![0.0, 0.7, 0.5],
            vec![0.0, f64::NAN, 0.5],
        ] {
            assert_eq!(
                Grid::from_lines(bad.clone(), ok.clone()),
                Err(GridError::Lines { axis: 'x' })
            );
            assert_eq!(
                Grid::from_lines(ok.clone(), bad),
                Err(GridError::Lines { axis: 'y' })
            );
        }
        assert!(!Grid::from_lines(ok.clone(), ok).unwrap().is_uniform());
    }

    #[test]
    fn lines_of_a_fitted_grid_give_the_same_grid() {
        let g = Grid::fit([0.0, 2.0], [-1.0, 1.0], 0.25).unwrap();
        let again = Grid::from_lines(g.xs().to_vec(), g.ys().to_vec()).unwrap();
        assert_eq!(again, g);
    }

    fn graded() -> Grid {
        Grid::from_lines(
            vec![-1.0, -0.5, -0.2, 0.0, 0.1, 0.4, 1.0],
            vec![0.0, 0.3, 0.35, 0.5],
        )
        .unwrap()
    }

    #[test]
    fn graded_lookups_find_the_holding_cell() {
        let g = graded();
        assert_eq!((g.nx, g.ny), (7, 4));
        assert_eq!(g.cell_x(-2.0), 0);
        assert_eq!(g.cell_x(-0.2), 2);
        assert_eq!(g.cell_x(0.05), 3);
        assert_eq!(g.cell_x(1.0), 5);
        assert_eq!(g.cell_x(7.0), 5);
        let (i, t) = g.locate_x(0.25);
        assert_eq!(i, 4);
        assert!((t - 0.5).abs() < 1e-15);
        assert_eq!(g.locate_y(0.5), (2, 1.0));
        assert_eq!(g.columns_within(-0.2, 0.1), Some(2..=4));
        assert_eq!(g.columns_within(-0.3, 0.05), Some(2..=3));
        assert_eq!(g.columns_within(-5.0, -3.0), None);
        assert_eq!(g.columns_covering(-0.3, 0.05), 1..=4);
        assert_eq!(g.columns_covering(-0.2, 0.1), 2..=4);
        assert_eq!(g.min_cell(), g.dy(1));
        assert_eq!(g.max_cell(), 0.6);
        assert!((g.spacing_at([0.05, 0.32]) - 0.1).abs() < 1e-15);
    }

    #[test]
    fn control_volumes_tile_the_domain() {
        let g = graded();
        let total: f64 = (0..g.nx).map(|i| g.dual_len_x(i)).sum();
        assert!((total - 2.0).abs() < 1e-15);
        assert_eq!(g.dual_x(0), (-1.0, -0.75));
        let (lo, hi) = g.dual_x(6);
        assert!((lo - 0.7).abs() < 1e-15 && hi == 1.0);
        for i in 0..g.nx {
            let (lo, hi) = g.dual_x(i);
            assert!((hi - lo - g.dual_len_x(i)).abs() < 1e-15);
        }
    }

    #[test]
    fn bisected_then_coarsened_is_the_grid() {
        let g = graded();
        let b = g.bisected();
        assert_eq!((b.nx, b.ny), (13, 7));
        assert!((b.x(5) - (-0.1)).abs() < 1e-15);
        assert_eq!(b.coarsened(), g);
        assert_eq!(b.ratio_from(&g), 2.0);
        // An odd number of cells keeps the last line.
        let c = g.coarsened();
        assert_eq!(c.ys(), &[0.0, 0.35, 0.5]);
        assert_eq!(c.xs(), &[-1.0, -0.2, 0.1, 1.0]);
    }

    #[test]
    fn uniform_coarsening_refits_half_the_cells() {
        let g = Grid::fit([0.0, 1.0], [0.0, 0.7], 0.1).unwrap();
        let c = g.coarsened();
        assert!(c.is_uniform());
        assert_eq!((c.nx, c.ny), (6, 5));
        assert_eq!(c.dx(0), g.x1() / 5.0);
        let b = g.bisected();
        assert!(b.is_uniform());
        assert_eq!(b.x(2 * 7), g.x(7));
        assert_eq!(b.dx(3), 0.5 * g.dx(0));
    }
}
