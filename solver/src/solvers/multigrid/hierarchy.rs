//! The multigrid hierarchy: its settings, and the coarse levels, interpolation weights and
//! coarsest factor built once per operator.
//!
//! Invariants: each coarser lattice keeps the even indices plus the last one along both axes;
//! coarsening stops at `coarsest_nodes` or when a lattice no longer shrinks; the hierarchy
//! holds the coarse operators' upper halves only, never the fine operator; building it is
//! bit-identical for any thread count.

use super::coarsest::BandCholesky;
use super::galerkin;
use super::interpolation::{coarse_len, LineWeights};
use super::level::Level;
use crate::stencil::Stencil5;

/// Settings of the hierarchy and its cycle.
#[derive(Clone, Debug, PartialEq)]
#[non_exhaustive]
pub struct Options {
    /// Red-black sweeps before and after the coarse correction on the fine level.
    pub fine_sweeps: usize,
    /// Four-colour sweeps before and after the coarse correction on each coarse level.
    pub coarse_sweeps: usize,
    /// Coarsening stops once a level has at most this many nodes; that level is solved
    /// directly.
    pub coarsest_nodes: usize,
}

impl Default for Options {
    fn default() -> Self {
        Options {
            fine_sweeps: 2,
            coarse_sweeps: 1,
            coarsest_nodes: 1600,
        }
    }
}

/// The multigrid hierarchy built once per operator and shared by every right-hand side.
pub struct Hierarchy {
    /// Fine lattice nx, ny.
    pub(super) fine: (usize, usize),
    /// Coarse levels, finest first; the last is solved directly.
    pub(super) levels: Vec<Level>,
    /// `weights[k]`: line weights from level k (0 = fine) to level k + 1.
    pub(super) weights: Vec<LineWeights>,
    /// Factor of the last level (of the fine level when there is no coarse level).
    pub(super) coarsest: BandCholesky,
    pub(super) options: Options,
}

impl std::fmt::Debug for Hierarchy {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Hierarchy")
            .field("lattices", &self.lattices())
            .field("options", &self.options)
            .finish()
    }
}

impl Hierarchy {
    /// Builds the hierarchy for `a` with default options.
    pub fn new(a: &Stencil5) -> Hierarchy {
        Hierarchy::with_options(a, &Options::default())
    }

    /// Builds the hierarchy for `a`.
    pub fn with_options(a: &Stencil5, options: &Options) -> Hierarchy {
        assert_eq!(
            a.diag.len(),
            a.len(),
            "stencil arrays must cover the lattice"
        );
        let mut levels: Vec<Level> = Vec::new();
        let mut weights: Vec<LineWeights> = Vec::new();
        let mut dims = (a.nx, a.ny);
        loop {
            let next = (coarse_len(dims.0), coarse_len(dims.1));
            if dims.0 * dims.1 <= options.coarsest_nodes.max(1) || next == dims {
                break;
            }
            let (w, level) = match levels.last() {
                None => {
                    let w = LineWeights::new(a);
                    let c = galerkin::coarse_operator(a, &w);
                    (w, c)
                }
                Some(l) => {
                    let w = LineWeights::new(l);
                    let c = galerkin::coarse_operator(l, &w);
                    (w, c)
                }
            };
            weights.push(w);
            levels.push(level);
            dims = next;
        }
        let coarsest = match levels.last() {
            None => BandCholesky::new(a),
            Some(l) => BandCholesky::new(l),
        };
        Hierarchy {
            fine: (a.nx, a.ny),
            levels,
            weights,
            coarsest,
            options: options.clone(),
        }
    }

    /// Lattice sizes (nx, ny) of every level, fine first.
    pub fn lattices(&self) -> Vec<(usize, usize)> {
        std::iter::once(self.fine)
            .chain(self.levels.iter().map(|l| (l.nx, l.ny)))
            .collect()
    }
}
