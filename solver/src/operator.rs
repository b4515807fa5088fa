//! Operator assembly: the one SPD five-point operator of a rasterised design, with the
//! couplings to fixed potentials that build right-hand sides and reactions (charges).
//!
//! Discretisation (finite volumes on the node lattice, uniform or graded): the flux across
//! the control-volume face of a lattice edge is `eps0 * eps * area / distance * (phi_a -
//! phi_b)`, where `eps` is the harmonic-mean relative permittivity along the edge (on an
//! interface along the edge, the mean of the two sides weighted by the face's part in each)
//! and `area` is the face length, half of each cell beside the edge (planar, per unit depth),
//! or the face's surface of revolution `2*pi*r*length` (axisymmetric). Where a conductor
//! surface cuts the edge at a fraction `theta` from a free node, the distance becomes
//! `theta * h`, h the edge's length, and the far value is the conductor's potential
//! (the symmetric boundary treatment of Gibou, Fedkiw, Cheng & Kang, J. Comput. Phys. 176
//! (2002) 205-227). Against the rows of Shortley and Weller (J. Appl. Phys. 9 (1938)
//! 334-348, from memory), which divide each axis's differences by the half-widths reaching
//! the surface, these rows weigh a cut axis's differences `(theta_lo + theta_hi) / 2` times:
//! an O(1) truncation error at cut nodes. The node potentials still converge at second
//! order, but beside a surface they carry an offset of order h^2 that depends on `theta`;
//! where a surface runs along a lattice line (the poles of a sphere or cylinder), `theta`
//! changes slowly along it and the surface field read from those nodes converges at about
//! first order there (measured in `tests/reference/uniform_field.rs`, the sphere in a
//! uniform field). Symmetry sides close their control volumes with no flux; the axis
//! carries none either, because the face area there is zero. Open sides add the far-field
//! (Robin) term of [`crate::open`] to the diagonal of their nodes, recorded as links to the
//! side's target at 0 V. In planar cells an oblique dielectric interface cuts, the cell's
//! five-point share is replaced by immersed linear elements ([`interface`]), the stencil's
//! `cross` correction among free nodes.
//!
//! Invariants:
//! - `stencil` is symmetric, its five-point couplings non-negative; fixed nodes have identity
//!   rows and no correction entries.
//! - For any node potentials `phi` that satisfy the fixed values, the reaction of target `t`
//!   (the sum of the fluxes leaving it) is its charge, and the reactions of all targets plus
//!   the free charge sum to zero (Gauss's law for the whole box).
//! - Every connected region of unknowns touches at least one fixed potential, so the
//!   operator is definite; assembly reports an error otherwise.

use crate::design::{Design, Mode, Side};
use crate::grid::Grid;
pub use crate::links::{Dir, DirectCoupling, Link, SideId};
use crate::material;
use crate::open;
use crate::raster::{Axis, Raster, NO_CONDUCTOR};
use crate::stencil::Stencil5;
use crate::EPS0;
use rayon::prelude::*;

/// Smallest cut fraction used in a weight; closer surfaces are treated as this close (an
/// error in the surface position of at most `THETA_MIN * h`, keeping the weights bounded).
pub const THETA_MIN: f64 = 0.01;

/// A design that cannot be turned into a definite operator. `Display` renders the code and
/// the data, for logs; the command line words it for users.
#[derive(Clone, Debug, PartialEq)]
#[non_exhaustive]
pub enum OperatorError {
    /// A region of free space has no fixed potential anywhere on its boundary (for example
    /// every side a symmetry side and no conductor), so its potential is undetermined.
    NoReference {
        /// A point of the region, m.
        x: f64,
        /// A point of the region, m.
        y: f64,
    },
}

impl OperatorError {
    /// The stable code of this error (lower case words joined by `-`, never renamed or
    /// reused).
    pub fn code(&self) -> &'static str {
        match self {
            OperatorError::NoReference { .. } => "no-reference",
        }
    }
}

impl std::fmt::Display for OperatorError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}: {self:?}", self.code())
    }
}

impl std::error::Error for OperatorError {}

/// The assembled operator of one design on one lattice.
#[derive(Clone, Debug)]
pub struct Operator {
    /// The lattice.
    pub grid: Grid,
    /// Planar or axisymmetric weights.
    pub mode: Mode,
    /// The matrix seen by the solvers.
    pub stencil: Stencil5,
    /// Number of conductors (targets 0..n_conductors).
    pub n_conductors: usize,
    /// Fixed potential of each side, `None` for symmetry, open or axis sides.
    pub side_potential: [Option<f64>; 4],
    /// Couplings of unknowns to fixed potentials, sorted by (node, dir).
    pub links: Vec<Link>,
    /// Couplings between fixed targets.
    pub direct: Vec<DirectCoupling>,
    /// Free charge of each unknown node divided by eps0 (planar V, axisymmetric V*m), sorted.
    pub source: Vec<(u32, f64)>,
    /// Free charge that falls in the control volumes of each target's fixed nodes, C/m or C.
    /// It is part of what the target's reaction measures and is subtracted from it.
    pub absorbed: Vec<f64>,
}

impl Operator {
    /// Number of fixed-potential targets (conductors, then the four sides).
    pub fn n_targets(&self) -> usize {
        self.n_conductors + 4
    }

    /// Target index of a side.
    pub fn side_target(&self, s: SideId) -> u32 {
        (self.n_conductors + s as usize) as u32
    }

    /// Potentials of every target for the given conductor potentials, with sides at their
    /// design values when `with_sides` (otherwise 0).
    pub fn target_values(&self, conductor: &[f64], with_sides: bool) -> Vec<f64> {
        assert_eq!(conductor.len(), self.n_conductors);
        let mut v = conductor.to_vec();
        for s in self.side_potential {
            v.push(if with_sides { s.unwrap_or(0.0) } else { 0.0 });
        }
        v
    }

    /// Right-hand side for the given target potentials, plus the free charge when `with_source`.
    pub fn rhs(&self, values: &[f64], with_source: bool) -> Vec<f64> {
        let mut b = vec![0.0; self.grid.len()];
        for l in &self.links {
            b[l.node as usize] += l.weight * values[l.target as usize];
        }
        if with_source {
            for &(p, s) in &self.source {
                b[p as usize] += s;
            }
        }
        b
    }

    /// Charge of every target (C/m planar, C axisymmetric) for node potentials `phi` solved
    /// with the target potentials `values` and, when `with_source`, the free charge.
    pub fn reactions(&self, phi: &[f64], values: &[f64], with_source: bool) -> Vec<f64> {
        let mut q = vec![0.0; self.n_targets()];
        for l in &self.links {
            q[l.target as usize] += l.weight * (values[l.target as usize] - phi[l.node as usize]);
        }
        for d in &self.direct {
            let f = d.weight * (values[d.a as usize] - values[d.b as usize]);
            q[d.a as usize] += f;
            q[d.b as usize] -= f;
        }
        q.iter_mut().for_each(|v| *v *= EPS0);
        if with_source {
            q.iter_mut().zip(&self.absorbed).for_each(|(q, a)| *q -= a);
        }
        q
    }

    /// Total free charge in the unknowns, C/m or C.
    pub fn free_charge(&self) -> f64 {
        self.source.iter().map(|s| s.1).sum::<f64>() * EPS0
    }

    /// The links of node `p` (empty for most nodes).
    pub fn links_of(&self, p: usize) -> &[Link] {
        let lo = self.links.partition_point(|l| (l.node as usize) < p);
        let hi = lo + self.links[lo..].partition_point(|l| l.node as usize == p);
        &self.links[lo..hi]
    }
}

/// Face area factor and its radius rule, per mode.
struct Faces {
    grid: Grid,
    axisymmetric: bool,
}

impl Faces {
    /// Extent of node i's control volume along x: [lo, hi].
    fn span_x(&self, i: usize) -> (f64, f64) {
        self.grid.dual_x(i)
    }

    /// Length of node j's control volume along y: half of each neighbouring cell.
    fn len_y(&self, j: usize) -> f64 {
        self.grid.dual_len_y(j)
    }

    /// Weight per unit permittivity of the x-edge stretch from node (i, j) of length
    /// `theta * dx` towards +x (`sign` = 1) or -x (`sign` = -1), dx the edge's length.
    fn wx(&self, i: usize, j: usize, theta: f64, sign: f64) -> f64 {
        let g = &self.grid;
        let d = theta * if sign > 0.0 { g.dx(i) } else { g.dx(i - 1) };
        let area = if self.axisymmetric {
            // Radius of the stretch midpoint: r * dphi/dr is nearly constant along the stretch.
            let r = g.x(i) + sign * 0.5 * d;
            2.0 * std::f64::consts::PI * r * self.len_y(j)
        } else {
            self.len_y(j)
        };
        area / d
    }

    /// Area of node (i, j)'s control-volume face on side `s` (planar: length per unit depth,
    /// m; axisymmetric: surface of revolution, m^2).
    fn boundary_area(&self, s: SideId, i: usize, j: usize) -> f64 {
        let g = &self.grid;
        match s {
            SideId::Left | SideId::Right => {
                if self.axisymmetric {
                    2.0 * std::f64::consts::PI * g.x(i) * self.len_y(j)
                } else {
                    self.len_y(j)
                }
            }
            SideId::Bottom | SideId::Top => {
                let (lo, hi) = self.span_x(i);
                if self.axisymmetric {
                    std::f64::consts::PI * (hi * hi - lo * lo)
                } else {
                    hi - lo
                }
            }
        }
    }

    /// Weight per unit permittivity of the y-edge stretch from node (i, j) of length
    /// `theta * dy` towards +y (`sign` = 1) or -y (`sign` = -1), dy the edge's length.
    fn wy(&self, i: usize, j: usize, theta: f64, sign: f64) -> f64 {
        let g = &self.grid;
        let (lo, hi) = self.span_x(i);
        let area = if self.axisymmetric {
            std::f64::consts::PI * (hi * hi - lo * lo)
        } else {
            hi - lo
        };
        area / (theta * if sign > 0.0 { g.dy(j) } else { g.dy(j - 1) })
    }
}

/// Assembles the operator of `design` rasterised as `raster`.
pub fn assemble(design: &Design, raster: &Raster) -> Result<Operator, OperatorError> {
    assemble_by(design, raster, rows::Interior::Whole)
}

/// [`assemble`], with the interior nodes' couplings gathered as `interior` says (the
/// operator is the same either way, bit for bit).
fn assemble_by(
    design: &Design,
    raster: &Raster,
    interior: rows::Interior,
) -> Result<Operator, OperatorError> {
    let mut a = Assembly::new(design, raster);
    a.couple_edges(interior);
    a.fix_rows();
    if a.sides.contains(&Side::Open) {
        a.couple_open_sides();
    }
    // Stable: links of one node and direction keep the order they were gathered in.
    a.links.par_sort_by_key(|l| (l.node, l.dir));
    a.finish()
}

/// The operator under assembly: the design's targets, which nodes are unknowns, and the
/// couplings gathered so far. The steps run in the order of [`assemble`]; each adds to the
/// couplings in a fixed order, so the operator is the same whatever the thread count.
struct Assembly<'a> {
    design: &'a Design,
    raster: &'a Raster,
    grid: Grid,
    /// Number of conductors; side s is target `nc + s`.
    nc: usize,
    sides: [Side; 4],
    side_potential: [Option<f64>; 4],
    faces: Faces,
    /// Relative permittivity of each material index of the raster.
    eps: Vec<f64>,
    /// True for a node whose potential is solved for.
    unknown: Vec<bool>,
    diag: Vec<f64>,
    east: Vec<f64>,
    north: Vec<f64>,
    links: Vec<Link>,
    direct: Vec<DirectCoupling>,
}

impl<'a> Assembly<'a> {
    /// The targets of `design` and its unknowns: nodes neither in a conductor nor on a fixed
    /// side.
    fn new(design: &'a Design, raster: &'a Raster) -> Assembly<'a> {
        let grid = raster.grid.clone();
        let n = grid.len();
        let sides = [
            design.sides.left,
            design.sides.right,
            design.sides.bottom,
            design.sides.top,
        ];
        let axisymmetric = design.mode == Mode::Axisymmetric;
        let mut a = Assembly {
            design,
            raster,
            grid: grid.clone(),
            nc: design.conductors.len(),
            sides,
            side_potential: sides.map(Side::potential),
            faces: Faces {
                grid: grid.clone(),
                axisymmetric,
            },
            eps: (0..=design.dielectrics.len())
                .map(|m| material::of(design, m as u16).permittivity)
                .collect(),
            unknown: vec![false; n],
            diag: vec![0.0; n],
            east: vec![0.0; n],
            north: vec![0.0; n],
            links: Vec::new(),
            direct: Vec::new(),
        };
        let mut unknown = std::mem::take(&mut a.unknown);
        crate::parallel::for_each_row(&mut unknown, grid.nx, |j, row| {
            for (i, u) in row.iter_mut().enumerate() {
                let p = grid.idx(i, j);
                *u = raster.conductor[p] == NO_CONDUCTOR && a.side_of(i, j).is_none();
            }
        });
        a.unknown = unknown;
        a
    }

    fn side_of(&self, i: usize, j: usize) -> Option<SideId> {
        fixed_side(&self.side_potential, self.grid.nx, self.grid.ny, i, j)
    }

    fn side_target(&self, s: SideId) -> u32 {
        (self.nc + s as usize) as u32
    }

    /// Identity rows for fixed nodes, and no coupling from an unknown to a fixed neighbour
    /// (that coupling is a link). Free-free couplings are symmetric: the upper end added the
    /// same weight to its diagonal from its own half-link (equal by the raster invariant).
    fn fix_rows(&mut self) {
        let n = self.grid.len();
        let nx = self.grid.nx;
        let unknown = &self.unknown;
        self.diag
            .par_chunks_mut(nx)
            .zip(self.east.par_chunks_mut(nx))
            .zip(self.north.par_chunks_mut(nx))
            .enumerate()
            .for_each(|(j, ((diag, east), north))| {
                for i in 0..nx {
                    let p = j * nx + i;
                    if !unknown[p] {
                        (diag[i], east[i], north[i]) = (1.0, 0.0, 0.0);
                    }
                    if p + 1 < n && !unknown[p + 1] {
                        east[i] = 0.0;
                    }
                    if p + nx < n && !unknown[p + nx] {
                        north[i] = 0.0;
                    }
                }
            });
    }

    /// Open sides: far-field (Robin) terms on the diagonal, as links to the side at 0 V, and
    /// the tangential couplings of the far-field condition.
    fn couple_open_sides(&mut self) {
        let (design, raster) = (self.design, self.raster);
        let model = open::far_field(design);
        let robin = open::links(
            &self.grid,
            &self.sides,
            &model,
            &self.unknown,
            |s| self.side_target(s),
            |p| material::of(design, raster.material[p]).permittivity,
            |s, i, j| self.faces.boundary_area(s, i, j),
        );
        for l in &robin {
            self.diag[l.node as usize] += l.weight;
        }
        self.links.extend(robin);
        let eps = |p: usize| material::of(design, raster.material[p]).permittivity;
        let pair_eps = |p: usize, q: usize| 2.0 * eps(p) * eps(q) / (eps(p) + eps(q));
        for (p, q, w) in open::tangential_couplings(&self.grid, &model, &self.unknown, pair_eps) {
            self.diag[p] += w;
            self.diag[q] += w;
            if q == p + 1 {
                self.east[p] += w;
            } else {
                self.north[p] += w;
            }
        }
    }

    /// Node charges of the raster: on unknowns a source (charge / eps0), on fixed nodes
    /// absorbed by the conductor or side that holds them.
    fn sources(&self) -> (Vec<(u32, f64)>, Vec<f64>) {
        let nx = self.grid.nx;
        let mut source = Vec::new();
        let mut absorbed = vec![0.0; self.nc + 4];
        for &(p, q) in &self.raster.node_charge {
            let p = p as usize;
            if self.unknown[p] {
                source.push((p as u32, q / EPS0));
            } else if self.raster.conductor[p] != NO_CONDUCTOR {
                absorbed[self.raster.conductor[p] as usize] += q;
            } else if let Some(s) = self.side_of(p % nx, p / nx) {
                absorbed[self.side_target(s) as usize] += q;
            }
        }
        (source, absorbed)
    }

    /// The correction of cells an oblique dielectric interface cuts ([`interface`]); planar
    /// only (empty in axisymmetric mode, where the five-point shares stay).
    fn interface_cells(&self) -> Vec<(u32, u32, f64)> {
        if self.faces.axisymmetric {
            return Vec::new();
        }
        let (design, raster) = (self.design, self.raster);
        let eps = |p: usize| material::of(design, raster.material[p]).permittivity;
        interface::correction(&interface::Inputs {
            grid: &self.grid,
            unknown: &self.unknown,
            eps: &eps,
            cut: &raster.cut_edges,
        })
    }

    /// The operator, once every region of unknowns is known to touch a fixed potential.
    fn finish(self) -> Result<Operator, OperatorError> {
        let (source, absorbed) = self.sources();
        let cross = self.interface_cells();
        let stencil = Stencil5 {
            nx: self.grid.nx,
            ny: self.grid.ny,
            diag: self.diag,
            east: self.east,
            north: self.north,
            unknown: self.unknown,
            cross,
        };
        check_reference(&stencil, &self.links, &self.grid)?;
        Ok(Operator {
            grid: self.grid,
            mode: self.design.mode,
            stencil,
            n_conductors: self.nc,
            side_potential: self.side_potential,
            links: self.links,
            direct: self.direct,
            source,
            absorbed,
        })
    }
}

/// The fixed side that owns node (i, j), if any. Dirichlet sides own their nodes; the bottom
/// and top sides take the corners they share with a fixed left or right side.
pub fn fixed_side(
    side_potential: &[Option<f64>; 4],
    nx: usize,
    ny: usize,
    i: usize,
    j: usize,
) -> Option<SideId> {
    if j == 0 && side_potential[2].is_some() {
        Some(SideId::Bottom)
    } else if j + 1 == ny && side_potential[3].is_some() {
        Some(SideId::Top)
    } else if i == 0 && side_potential[0].is_some() {
        Some(SideId::Left)
    } else if i + 1 == nx && side_potential[1].is_some() {
        Some(SideId::Right)
    } else {
        None
    }
}

fn geometric_weight(faces: &Faces, axis: Axis, i: usize, j: usize, theta: f64, sign: f64) -> f64 {
    match axis {
        Axis::X => faces.wx(i, j, theta, sign),
        Axis::Y => faces.wy(i, j, theta, sign),
    }
}

/// Every connected region of unknowns must touch a fixed potential.
fn check_reference(s: &Stencil5, links: &[Link], grid: &Grid) -> Result<(), OperatorError> {
    match anchored::first_unanchored(s, links.iter().map(|l| l.node as usize)) {
        Some(p) => Err(OperatorError::NoReference {
            x: grid.x(p % s.nx),
            y: grid.y(p / s.nx),
        }),
        None => Ok(()),
    }
}

mod anchored;
mod interface;
mod rows;
#[cfg(test)]
mod tests;
