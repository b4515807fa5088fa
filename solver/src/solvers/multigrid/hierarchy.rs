//! The multigrid hierarchy: its settings, and the coarse levels, interpolation weights and
//! coarsest factor built once per operator.
//!
//! Invariants: each coarser lattice keeps the even indices plus the last one along both axes;
//! coarsening stops at `coarsest_nodes` or when a lattice no longer shrinks; the hierarchy
//! holds the coarse operators' upper halves only, never the fine operator; building it is
//! bit-identical for any thread count. The relaxation (points or lines, see
//! [`super::relaxation`]) is fixed at setup; with points the coarse operators are kept in
//! single precision (`levels`), with lines in double precision (`line_levels`), and the other
//! list is empty.

use super::coarsest::BandCholesky;
use super::galerkin;
use super::interpolation::{coarse_len, LineWeights, Rule};
use super::level::{Level, Real};
use super::relaxation::{Relaxation, Smoother};
use crate::stencil::Stencil5;

/// Settings of the hierarchy and its cycle.
#[derive(Clone, Debug, PartialEq)]
#[non_exhaustive]
pub struct Options {
    /// Point or line relaxation, or the choice by the operator's stretching.
    pub smoother: Smoother,
    /// Red-black sweeps before and after the coarse correction on the fine level (points).
    pub fine_sweeps: usize,
    /// Four-colour sweeps before and after the coarse correction on each coarse level
    /// (points).
    pub coarse_sweeps: usize,
    /// Alternating line sweeps before and after the coarse correction on every level
    /// (lines).
    pub line_sweeps: usize,
    /// Alternating line sweeps before and after the coarse correction on each coarse level
    /// (lines).
    pub coarse_line_sweeps: usize,
    /// Coarsening stops once a level has at most this many nodes; that level is solved
    /// directly.
    pub coarsest_nodes: usize,
}

impl Default for Options {
    fn default() -> Self {
        Options {
            smoother: Smoother::Auto,
            fine_sweeps: 2,
            coarse_sweeps: 1,
            line_sweeps: 1,
            coarse_line_sweeps: 2,
            coarsest_nodes: 1600,
        }
    }
}

/// The multigrid hierarchy built once per operator and shared by every right-hand side.
pub struct Hierarchy {
    /// Fine lattice nx, ny.
    pub(super) fine: (usize, usize),
    /// Coarse levels under point relaxation, finest first; the last is solved directly.
    pub(super) levels: Vec<Level>,
    /// Coarse levels under line relaxation, likewise.
    pub(super) line_levels: Vec<Level<f64>>,
    /// `weights[k]`: line weights from level k (0 = fine) to level k + 1.
    pub(super) weights: Vec<LineWeights>,
    /// Factor of the last level (of the fine level when there is no coarse level).
    pub(super) coarsest: BandCholesky,
    pub(super) options: Options,
    /// The smoother chosen at setup.
    pub(super) relaxation: Relaxation,
}

impl std::fmt::Debug for Hierarchy {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Hierarchy")
            .field("lattices", &self.lattices())
            .field("options", &self.options)
            .field("relaxation", &self.relaxation)
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
        let relaxation = options.smoother.resolve(a);
        let (mut levels, mut line_levels) = (Vec::new(), Vec::new());
        let (weights, coarsest) = match relaxation {
            Relaxation::Points => build(a, options, Rule::Classic, &mut levels),
            Relaxation::Lines => build(a, options, Rule::Lumped, &mut line_levels),
        };
        Hierarchy {
            fine: (a.nx, a.ny),
            levels,
            line_levels,
            weights,
            coarsest,
            options: options.clone(),
            relaxation,
        }
    }

    /// Number of coarse levels.
    pub(super) fn depth(&self) -> usize {
        self.levels.len() + self.line_levels.len()
    }

    /// Padded lengths of the coarse levels, finest first.
    pub(super) fn padded_lens(&self) -> Vec<usize> {
        let single = self.levels.iter().map(|l| l.padded_len());
        single
            .chain(self.line_levels.iter().map(|l| l.padded_len()))
            .collect()
    }

    /// The smoother chosen at setup.
    pub fn relaxation(&self) -> Relaxation {
        self.relaxation
    }

    /// Lattice sizes (nx, ny) of every level, fine first.
    pub fn lattices(&self) -> Vec<(usize, usize)> {
        std::iter::once(self.fine)
            .chain(self.levels.iter().map(|l| (l.nx, l.ny)))
            .chain(self.line_levels.iter().map(|l| (l.nx, l.ny)))
            .collect()
    }
}

/// Builds the coarse levels of `a` into `levels`, returning the line weights and the factor
/// of the coarsest level.
fn build<R: Real>(
    a: &Stencil5,
    options: &Options,
    rule: Rule,
    levels: &mut Vec<Level<R>>,
) -> (Vec<LineWeights>, BandCholesky) {
    let mut weights: Vec<LineWeights> = Vec::new();
    let mut dims = (a.nx, a.ny);
    loop {
        let next = (coarse_len(dims.0), coarse_len(dims.1));
        if dims.0 * dims.1 <= options.coarsest_nodes.max(1) || next == dims {
            break;
        }
        let (w, level) = match levels.last() {
            None => {
                let w = LineWeights::new(a, rule);
                let c = galerkin::coarse_operator(a, &w);
                (w, c)
            }
            Some(l) => {
                let w = LineWeights::new(l, rule);
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
    (weights, coarsest)
}
