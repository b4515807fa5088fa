//! The plan of a study, made before anything is solved: its lattice and an estimate of the
//! memory the study needs.
//!
//! The lattice is fitted here once ([`Grid::fit`], or [`crate::grading::grid`] for a graded
//! design); a study run from a plan
//! ([`crate::study::run_planned`]) uses that lattice, so what a user was told about the grid
//! and its memory is what runs.
//!
//! The memory model is a fixed part plus bytes per lattice node that depend on the linear
//! solver and on the error estimate. Measured as the peak resident set of `fieldgrid solve`
//! (`/usr/bin/time -v`, two threads) on the benchmark design (`benches/problem.toml`, two
//! dielectrics, three conductors) at 501 x 501 and 1001 x 1001 nodes; the slope between the
//! two sizes is the cost per node: multigrid with the error estimate 88.5 B, multigrid without
//! it 75.7 B, Jacobi-CG without it 65.9 B, SOR without it 62.0 B. The model keeps the
//! earlier rule's 128 B per node (measured on another design with an open side) for
//! multigrid with the error estimate and scales the others by the measured ratios, rounded
//! up to 8 B: the error estimate adds 16 B, the multigrid hierarchy 16 B, over 96 B for
//! the fine study with a one-level solver. A line study holds the first study's solution
//! while the second runs: on the microstrip demo refined to 509 x 501 and 1017 x 1001 nodes
//! it cost 37.5 B (error estimate) and 53.8 B (without) per node more than one study, which
//! scaled alike and rounded up is [`HELD_SOLUTION_BYTES_PER_NODE`].
//!
//! Invariant: the estimate never falls as the lattice grows, and the configuration that
//! needs the most (multigrid with the error estimate) is never cheaper than another.

use crate::design::{Design, Lattice};
use crate::grid::{Grid, GridError};
use crate::solvers::Method;

/// Memory of the process apart from the lattice (code, fonts, threads), MiB, rounded up.
pub const BASE_MIB: f64 = 16.0;

/// Bytes per node of the fine study with a one-level solver (CG or SOR): operator, raster,
/// solver vectors, potentials, post-processing and pictures.
pub const STUDY_BYTES_PER_NODE: f64 = 96.0;

/// Bytes per node the multigrid hierarchy adds (coarse operators and their vectors).
pub const MULTIGRID_BYTES_PER_NODE: f64 = 16.0;

/// Bytes per node the error estimate adds (the studies on the coarser lattices).
pub const ERROR_ESTIMATE_BYTES_PER_NODE: f64 = 16.0;

/// Bytes per node of a study's solution kept while another study runs (a line study).
pub const HELD_SOLUTION_BYTES_PER_NODE: f64 = 80.0;

/// A study's lattice and memory estimate.
#[derive(Clone, Debug, PartialEq)]
pub struct Plan {
    grid: Grid,
    bytes_per_node: f64,
}

impl Plan {
    /// The lattice the study runs on.
    pub fn grid(&self) -> &Grid {
        &self.grid
    }

    /// The same plan on another lattice over the same domain (a graded one, say); the
    /// memory estimate follows its node count.
    pub fn with_grid(mut self, grid: Grid) -> Plan {
        self.grid = grid;
        self
    }

    /// The same plan with one more study's solution held while this one runs (the line
    /// study's two studies on one lattice).
    pub fn holding_a_solution(mut self) -> Plan {
        self.bytes_per_node += HELD_SOLUTION_BYTES_PER_NODE;
        self
    }

    /// Estimated bytes per lattice node.
    pub fn bytes_per_node(&self) -> f64 {
        self.bytes_per_node
    }

    /// Estimated peak memory of the study, MiB.
    pub fn memory_mib(&self) -> f64 {
        self.memory_mib_with(0.0)
    }

    /// Estimated peak memory with `extra` bytes per node held beside the study (for
    /// example a table of every node built from its results), MiB.
    pub fn memory_mib_with(&self, extra: f64) -> f64 {
        BASE_MIB + self.grid.len() as f64 * (self.bytes_per_node + extra) / (1024.0 * 1024.0)
    }
}

/// Fits the lattice of `design` and estimates the memory of its study with the linear solver
/// `method`, with or without the error estimate (`study::plan` takes both from the study's
/// settings).
pub fn plan(design: &Design, method: Method, error_estimate: bool) -> Result<Plan, GridError> {
    let d = &design.domain;
    let grid = match design.lattice {
        Lattice::Uniform => Grid::fit(d.x, d.y, d.cell)?,
        // The design's own cell is named, not the graded base grid's multiple of it.
        Lattice::Graded if !(d.cell.is_finite() && d.cell > 0.0) => {
            return Err(GridError::Cell(d.cell))
        }
        Lattice::Graded => crate::grading::grid(design, &crate::grading::Params::default())?,
    };
    Ok(on_grid(grid, method, error_estimate))
}

/// The plan of a study on a given lattice (one the caller fitted, such as a finer member of
/// a graded family) with the linear solver `method`, with or without the error estimate.
pub fn on_grid(grid: Grid, method: Method, error_estimate: bool) -> Plan {
    let mut bytes_per_node = STUDY_BYTES_PER_NODE;
    if method == Method::Multigrid {
        bytes_per_node += MULTIGRID_BYTES_PER_NODE;
    }
    if error_estimate {
        bytes_per_node += ERROR_ESTIMATE_BYTES_PER_NODE;
    }
    Plan {
        grid,
        bytes_per_node,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn design(cell: f64) -> Design {
        let mut d = Design::default();
        d.domain.cell = cell;
        d
    }

    #[test]
    fn the_default_study_keeps_128_bytes_per_node() {
        let mut d = design(1e-3);
        d.lattice = Lattice::Uniform;
        let p = plan(&d, Method::Multigrid, true).unwrap();
        assert_eq!(p.bytes_per_node(), 128.0);
        assert_eq!((p.grid().nx, p.grid().ny), (1001, 1001));
        let want = BASE_MIB + 1001.0 * 1001.0 * 128.0 / 1048576.0;
        assert!((p.memory_mib() - want).abs() < 1e-9);
        assert!(p.memory_mib_with(40.0) > p.memory_mib());
    }

    #[test]
    fn solver_and_error_estimate_change_the_estimate() {
        let d = design(1e-2);
        let at =
            |method: Method, estimate: bool| plan(&d, method, estimate).unwrap().bytes_per_node();
        assert!(at(Method::Multigrid, false) < at(Method::Multigrid, true));
        assert!(at(Method::Cg, true) < at(Method::Multigrid, true));
        assert_eq!(at(Method::Cg, false), at(Method::Sor, false));
        for m in Method::ALL {
            for e in [false, true] {
                assert!(at(m, e) <= at(Method::Multigrid, true), "{m:?} {e}");
            }
        }
    }

    #[test]
    fn a_bad_cell_is_a_grid_error() {
        assert_eq!(
            plan(&design(-1.0), Method::Multigrid, true),
            Err(GridError::Cell(-1.0))
        );
        let mut d = design(-1.0);
        d.lattice = Lattice::Uniform;
        assert_eq!(
            plan(&d, Method::Multigrid, true),
            Err(GridError::Cell(-1.0))
        );
    }

    #[test]
    fn a_graded_lattice_and_its_coarser_lattices_hold_the_geometry_lines() {
        use crate::design::{Conductor, Drive, Shape};
        let mut d = design(0.05);
        d.lattice = Lattice::Graded;
        d.conductors.push(Conductor {
            name: "c".into(),
            drive: Drive::Fixed(1.0),
            joined: Vec::new(),
            shape: Shape::Rect {
                x: [0.3, 0.55],
                y: [0.4, 0.41],
                round: 0.0,
            },
        });
        let g = plan(&d, Method::Multigrid, true).unwrap().grid().clone();
        assert!(!g.is_uniform());
        assert!(g.max_cell() <= 0.05 * (1.0 + 1e-12), "{}", g.max_cell());
        let coarse = g.coarsened();
        let coarser = coarse.coarsened();
        // The coarser lattices are the family's members below: every other line, twice.
        let member = |k| {
            let l =
                crate::grading::refined(&d, 0.2, &crate::grading::Params::default(), k).unwrap();
            Grid::from_lines(l.x, l.y).unwrap()
        };
        for (lattice, k) in [(&coarse, 1), (&coarser, 0)] {
            let m = member(k);
            assert_eq!((lattice.nx, lattice.ny), (m.nx, m.ny));
            for (a, b) in lattice
                .xs()
                .iter()
                .zip(m.xs())
                .chain(lattice.ys().iter().zip(m.ys()))
            {
                assert!((a - b).abs() < 1e-12, "{a} against {b}");
            }
        }
        for lattice in [&g, &coarse, &coarser] {
            for x in [0.0, 0.3, 0.55, 1.0] {
                assert!(lattice.xs().contains(&x), "x = {x}");
            }
            for y in [0.0, 0.4, 0.41, 1.0] {
                assert!(lattice.ys().contains(&y), "y = {y}");
            }
        }
    }
}
