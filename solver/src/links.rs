//! Links: how unknown nodes couple to fixed potentials (conductors and fixed or open sides),
//! and how fixed targets couple to each other. The operator records them; right-hand sides,
//! reactions (charges) and the far-field condition of open sides are built from them.
//!
//! Invariants: target k < n_conductors is conductor k, target `n_conductors + s` is side s in
//! [`SideId::ALL`] order; weights are non-negative (planar: dimensionless, axisymmetric: m),
//! so a flux is `eps0 * weight * (V_target - phi)`; `theta` is at least
//! [`THETA_MIN`](crate::operator::THETA_MIN).

use crate::grid::Grid;

/// One side of the domain, as a fixed-potential target.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum SideId {
    /// x = x0.
    Left,
    /// x = x1.
    Right,
    /// y = y0.
    Bottom,
    /// y = y1.
    Top,
}

impl SideId {
    /// All sides in target order.
    pub const ALL: [SideId; 4] = [SideId::Left, SideId::Right, SideId::Bottom, SideId::Top];

    /// The design key of the side.
    pub fn name(self) -> &'static str {
        match self {
            SideId::Left => "left",
            SideId::Right => "right",
            SideId::Bottom => "bottom",
            SideId::Top => "top",
        }
    }
}

/// Direction of a link from its node.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord)]
pub enum Dir {
    /// +x.
    East,
    /// -x.
    West,
    /// +y.
    North,
    /// -y.
    South,
}

impl Dir {
    /// Unit vector of the direction.
    pub fn unit(self) -> [f64; 2] {
        match self {
            Dir::East => [1.0, 0.0],
            Dir::West => [-1.0, 0.0],
            Dir::North => [0.0, 1.0],
            Dir::South => [0.0, -1.0],
        }
    }

    /// Length of the lattice edge from node (i, j) in this direction, m: the spacing a
    /// link's `theta` is a fraction of. On the domain's sides, where an open side's link
    /// points out of the domain, the boundary cell's width.
    pub fn step(self, grid: &Grid, i: usize, j: usize) -> f64 {
        match self {
            Dir::East => grid.dx(i.min(grid.nx - 2)),
            Dir::West => grid.dx(i.max(1) - 1),
            Dir::North => grid.dy(j.min(grid.ny - 2)),
            Dir::South => grid.dy(j.max(1) - 1),
        }
    }
}

/// A coupling of an unknown node to a fixed potential.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Link {
    /// The unknown node.
    pub node: u32,
    /// Target index: conductor k is k, side s is `n_conductors + s`.
    pub target: u32,
    /// Weight (planar: dimensionless, axisymmetric: m); flux = eps0 * weight * (V_t - phi).
    pub weight: f64,
    /// Direction from the node towards the target.
    pub dir: Dir,
    /// Distance to the target's surface as a fraction of the edge length [`Dir::step`]
    /// (clamped to THETA_MIN).
    pub theta: f64,
    /// Relative permittivity of the stretch.
    pub eps: f64,
}

/// A coupling between two fixed targets (a conductor within one cell of another conductor or
/// of a fixed side). It carries charge but no unknown.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct DirectCoupling {
    /// First target.
    pub a: u32,
    /// Second target.
    pub b: u32,
    /// Weight, as in [`Link::weight`].
    pub weight: f64,
}
