//! The choice between point and line relaxation, made once per operator.
//!
//! Point Gauss–Seidel smooths an error only where a node's couplings are of similar strength
//! in both directions; on stretched cells (a fine grid line crossing a coarse region) the
//! coupling along the short side dominates and an error smooth along that direction but
//! rough across it survives every sweep, so CG iterations grow with the aspect ratio. Line
//! relaxation solves along the strong direction exactly and removes that stall.
//!
//! Criterion (ours): a free node is *stretched* when its couplings to free neighbours along
//! one axis (on nine-point levels, half of each diagonal coupling counts for each axis) make
//! up at least [`STRONG_SHARE`] of its diagonal, which in a homogeneous medium is a cell
//! aspect ratio of 2 (couplings 4 : 1); couplings to fixed nodes only add to the diagonal, so
//! cut cells next to a conductor do not count. The hierarchy uses line relaxation when at
//! least [`STRETCHED_FRACTION`] of the free nodes of the fine operator are stretched, points
//! otherwise. Uniform square-cell lattices stay well below the threshold whatever their
//! materials and conductors (a node on a dielectric interface weighs both sides alike), so
//! their results are those of the point smoother.

use crate::stencil::Stencil5;

/// Share of the diagonal above which the couplings along one axis make a node stretched.
pub const STRONG_SHARE: f64 = 0.8;

/// Share of stretched free nodes from which the hierarchy relaxes by lines.
pub const STRETCHED_FRACTION: f64 = 0.01;

/// Which smoother the hierarchy uses.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
#[non_exhaustive]
pub enum Smoother {
    /// Lines when the fine operator is stretched by the criterion above, points otherwise.
    #[default]
    Auto,
    /// Red-black point Gauss–Seidel on the fine level, four-colour on coarse levels.
    Points,
    /// Alternating zebra line Gauss–Seidel on every level.
    Lines,
}

/// The smoother a hierarchy was built with.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[non_exhaustive]
pub enum Relaxation {
    /// Point Gauss–Seidel.
    Points,
    /// Zebra line Gauss–Seidel, alternating directions.
    Lines,
}

/// Share (0 to 1) of the free nodes of `a` that are stretched; 0 without free nodes.
pub fn stretched_fraction(a: &Stencil5) -> f64 {
    let nx = a.nx;
    let free = |q: usize| a.unknown[q];
    let mut stretched = 0usize;
    let mut total = 0usize;
    for p in 0..a.len() {
        if !a.unknown[p] {
            continue;
        }
        total += 1;
        let (i, j) = (p % nx, p / nx);
        let mut ax = 0.0;
        let mut ay = 0.0;
        if i + 1 < nx && free(p + 1) {
            ax += a.east[p];
        }
        if i > 0 && free(p - 1) {
            ax += a.east[p - 1];
        }
        if j + 1 < a.ny && free(p + nx) {
            ay += a.north[p];
        }
        if j > 0 && free(p - nx) {
            ay += a.north[p - nx];
        }
        if ax.max(ay) >= STRONG_SHARE * a.diag[p] {
            stretched += 1;
        }
    }
    if total == 0 {
        0.0
    } else {
        stretched as f64 / total as f64
    }
}

impl Smoother {
    /// The relaxation this setting gives on the operator `a`.
    pub fn resolve(self, a: &Stencil5) -> Relaxation {
        match self {
            Smoother::Points => Relaxation::Points,
            Smoother::Lines => Relaxation::Lines,
            Smoother::Auto => {
                if stretched_fraction(a) >= STRETCHED_FRACTION {
                    Relaxation::Lines
                } else {
                    Relaxation::Points
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A Dirichlet box with cell widths hx by hy (couplings hy / hx along x, hx / hy along y).
    fn box_with_cells(n: usize, hx: f64, hy: f64) -> Stencil5 {
        let mut a = Stencil5::dirichlet_box(n, n, |_, _| 1.0);
        for p in 0..a.len() {
            if a.unknown[p] {
                a.east[p] *= hy / hx;
                a.north[p] *= hx / hy;
                a.diag[p] = 2.0 * (hy / hx + hx / hy);
            }
        }
        a
    }

    #[test]
    fn square_cells_and_dielectric_jumps_keep_points() {
        assert_eq!(
            Smoother::Auto.resolve(&box_with_cells(40, 1.0, 1.0)),
            Relaxation::Points
        );
        let (a, _) = crate::solvers::testing::jump_problem(65, 1000.0);
        assert!(stretched_fraction(&a) < STRETCHED_FRACTION);
        assert_eq!(Smoother::Auto.resolve(&a), Relaxation::Points);
    }

    #[test]
    fn stretched_cells_choose_lines_from_aspect_ratio_two() {
        assert_eq!(
            Smoother::Auto.resolve(&box_with_cells(40, 1.0, 1.9)),
            Relaxation::Points
        );
        assert_eq!(
            Smoother::Auto.resolve(&box_with_cells(40, 1.0, 2.0)),
            Relaxation::Lines
        );
        assert_eq!(
            Smoother::Auto.resolve(&box_with_cells(40, 50.0, 1.0)),
            Relaxation::Lines
        );
        assert_eq!(
            Smoother::Points.resolve(&box_with_cells(40, 50.0, 1.0)),
            Relaxation::Points
        );
        assert_eq!(
            Smoother::Lines.resolve(&box_with_cells(40, 1.0, 1.0)),
            Relaxation::Lines
        );
    }
}
