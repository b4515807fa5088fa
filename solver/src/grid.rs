//! The node lattice: a uniform rectangular grid of nodes covering the domain, corners included.
//!
//! Invariant: node (i, j) sits at (x0 + i*hx, y0 + j*hy), 0 <= i < nx, 0 <= j < ny, and its
//! linear index is i + j*nx (x fastest). Every other module uses this numbering.

/// A uniform node lattice.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Grid {
    /// Nodes along x (cells + 1).
    pub nx: usize,
    /// Nodes along y (cells + 1).
    pub ny: usize,
    /// x of node column 0, m.
    pub x0: f64,
    /// y of node row 0, m.
    pub y0: f64,
    /// Node spacing along x, m.
    pub hx: f64,
    /// Node spacing along y, m.
    pub hy: f64,
}

/// A lattice that cannot be fitted.
#[derive(Clone, Copy, Debug, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum GridError {
    /// The cell size is not a positive finite number.
    #[error("cell size must be a positive number, got {0}")]
    Cell(f64),
    /// The domain has no positive, finite width and height.
    #[error("the domain must have positive width and height")]
    Domain,
    /// More than 1e8 cells along an axis.
    #[error("{x} x {y} cells is far too many")]
    TooManyCells {
        /// Cells along x.
        x: f64,
        /// Cells along y.
        y: f64,
    },
}

impl Grid {
    /// Fits a grid to the domain with cells as close to `cell` as a whole number of cells
    /// allows along each axis (at least 2 cells per axis).
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
        Ok(Grid {
            nx: cx + 1,
            ny: cy + 1,
            x0: x[0],
            y0: y[0],
            hx: lx / cx as f64,
            hy: ly / cy as f64,
        })
    }

    /// Number of nodes.
    pub fn len(&self) -> usize {
        self.nx * self.ny
    }

    /// True for a grid without nodes (never produced by [`Grid::fit`]).
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
        self.x0 + i as f64 * self.hx
    }

    /// y of node row j, m.
    #[inline]
    pub fn y(&self, j: usize) -> f64 {
        self.y0 + j as f64 * self.hy
    }

    /// Far corner (x1, y1) of the domain, m.
    pub fn x1(&self) -> f64 {
        self.x(self.nx - 1)
    }

    /// Far corner y, m.
    pub fn y1(&self) -> f64 {
        self.y(self.ny - 1)
    }

    /// The grid with twice the spacing over the same domain (cells halved, rounded up), used
    /// for error estimates.
    pub fn coarsened(&self) -> Grid {
        let cx = ((self.nx - 1) as f64 / 2.0).ceil().max(2.0) as usize;
        let cy = ((self.ny - 1) as f64 / 2.0).ceil().max(2.0) as usize;
        let lx = self.x1() - self.x0;
        let ly = self.y1() - self.y0;
        Grid {
            nx: cx + 1,
            ny: cy + 1,
            x0: self.x0,
            y0: self.y0,
            hx: lx / cx as f64,
            hy: ly / cy as f64,
        }
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
}
