//! The typed design: what the user drew, in SI units, with parameters already evaluated.
//!
//! A [`Design`] is produced by a reader (the command-line crate parses TOML into it) and is
//! checked by [`validate`] for the geometric rules of the contract: shapes inside the domain,
//! conductors not touching or overlapping each other (the pieces of one conductor may),
//! polygons simple, materials physical. Errors ([`DesignError`]) name the item and the key so
//! the reader can point at the file span, and carry the rule broken as data.

mod error;

pub use error::{
    Boundary, DesignError, Edge, Fault, Item, Meeting, OutsideDomain, ShapeError, ShapeFault,
};

/// Planar cross-section or body of revolution.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum Mode {
    /// x and y are Cartesian; results are per unit length out of the plane.
    #[default]
    Planar,
    /// x is the radius r >= 0, y is the axial coordinate z; results are whole-body.
    Axisymmetric,
}

/// The condition applied on one side of the rectangular domain.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Side {
    /// Fixed at 0 V.
    Ground,
    /// Zero normal field (a mirror plane of the design).
    Symmetry,
    /// The field continues into unbounded space beyond the side.
    Open,
    /// Fixed at this potential, V.
    Fixed(f64),
    /// The axis r = 0 of an axisymmetric design (its left side); carries no condition.
    Axis,
}

impl Side {
    /// The fixed potential of a Dirichlet side, if it is one.
    pub fn potential(self) -> Option<f64> {
        match self {
            Side::Ground => Some(0.0),
            Side::Fixed(v) => Some(v),
            _ => None,
        }
    }
}

/// The four sides of the domain.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Sides {
    /// x = x0 (the axis in axisymmetric mode).
    pub left: Side,
    /// x = x1.
    pub right: Side,
    /// y = y0.
    pub bottom: Side,
    /// y = y1.
    pub top: Side,
}

impl Default for Sides {
    fn default() -> Self {
        Sides {
            left: Side::Ground,
            right: Side::Ground,
            bottom: Side::Ground,
            top: Side::Ground,
        }
    }
}

/// The rectangular solution domain and the requested grid spacing, m.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Domain {
    /// x extent [x0, x1] (radius in axisymmetric mode; x0 = 0 there).
    pub x: [f64; 2],
    /// y extent [y0, y1] (axial in axisymmetric mode).
    pub y: [f64; 2],
    /// Target cell size; the grid adjusts it to fit a whole number of cells.
    pub cell: f64,
}

/// How the node lines of the lattice are laid out.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
#[non_exhaustive]
pub enum Lattice {
    /// Equal cells, as close to the domain's `cell` as a whole number of cells allows.
    Uniform,
    /// Node lines on the geometry, graded towards its singular points
    /// ([`crate::grading`]); the domain's `cell` is the coarsest spacing. The lattice is a
    /// twice-bisected base grid, so the error estimate's coarser lattices (every other
    /// line) hold the same geometry lines. The default.
    #[default]
    Graded,
}

/// A point in the plane, m.
pub type Point = [f64; 2];

/// One shape of the design, in metres. Exactly one per conductor, dielectric or charge region.
#[derive(Clone, Debug, PartialEq)]
pub enum Shape {
    /// Axis-aligned rectangle `x0 <= x <= x1, y0 <= y <= y1`, corners optionally filleted.
    Rect {
        /// x extent.
        x: [f64; 2],
        /// y extent.
        y: [f64; 2],
        /// Fillet radius of every corner, 0 for sharp corners.
        round: f64,
    },
    /// Disc.
    Circle {
        /// Centre.
        center: Point,
        /// Radius, > 0.
        radius: f64,
    },
    /// Annulus `inner <= |p - center| <= outer`.
    Ring {
        /// Centre.
        center: Point,
        /// Inner radius, >= 0 and < outer.
        inner: f64,
        /// Outer radius.
        outer: f64,
    },
    /// Simple polygon (implicitly closed) with optional holes, corners optionally filleted.
    Polygon {
        /// Outer boundary vertices, at least 3, either orientation.
        outer: Vec<Point>,
        /// Hole boundaries, each at least 3 vertices, inside the outer boundary.
        holes: Vec<Vec<Point>>,
        /// Fillet radius of the rounded corners, 0 for sharp corners.
        round: f64,
        /// Which vertices `round` applies to, 0-based, counted through the outer boundary
        /// and then each hole in order; `None` rounds every corner. Vertices not listed stay
        /// exactly where they are.
        corners: Option<Vec<usize>>,
    },
    /// Open polyline: a conductor of zero thickness. Conductors only.
    Polyline(Vec<Point>),
}

/// How a conductor's potential is set.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Drive {
    /// Held at this potential, V.
    Fixed(f64),
    /// Net charge zero; the potential follows from the solve.
    Floating,
}

/// An electrode: one body of metal at one potential (one net), drawn as one shape or as
/// several that may touch or overlap (a ground pour and its via fence). It is their union:
/// one conductor in the raster, one row of the capacitance matrix, one charge.
#[derive(Clone, Debug, PartialEq)]
pub struct Conductor {
    /// Unique name.
    pub name: String,
    /// Fixed potential or floating.
    pub drive: Drive,
    /// Its outline (its first piece).
    pub shape: Shape,
    /// Further pieces of the same metal, after `shape`; each may touch or overlap the others.
    pub joined: Vec<Shape>,
}

impl Conductor {
    /// Every piece: `shape`, then `joined` (piece p is `Item::ConductorPiece(_, p)` in errors).
    pub fn shapes(&self) -> impl Iterator<Item = &Shape> {
        std::iter::once(&self.shape).chain(&self.joined)
    }
}

/// A region of different permittivity. Later dielectrics cover earlier ones.
#[derive(Clone, Debug, PartialEq)]
pub struct Dielectric {
    /// Name, for reports.
    pub name: String,
    /// Relative permittivity, > 0.
    pub permittivity: f64,
    /// Breakdown field strength, V/m, if known.
    pub strength: Option<f64>,
    /// Its outline.
    pub shape: Shape,
}

/// A free charge source.
#[derive(Clone, Debug, PartialEq)]
pub enum Charge {
    /// Uniform volume charge density over a region.
    Region {
        /// Name, for reports.
        name: String,
        /// Charge density, C/m^3.
        density: f64,
        /// Its outline (not a polyline).
        shape: Shape,
    },
    /// A concentrated charge: a line charge (C/m) in planar mode, a point charge on the axis
    /// (C) in axisymmetric mode.
    Concentrated {
        /// Name, for reports.
        name: String,
        /// Position, m.
        at: Point,
        /// C/m (planar) or C (axisymmetric).
        amount: f64,
    },
}

/// A point where potential and field are reported.
#[derive(Clone, Debug, PartialEq)]
pub struct Probe {
    /// Name, for reports.
    pub name: String,
    /// Position, m.
    pub at: Point,
}

/// The material filling everything not covered by a dielectric.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Background {
    /// Relative permittivity, > 0.
    pub permittivity: f64,
    /// Breakdown field strength, V/m, if known.
    pub strength: Option<f64>,
}

impl Default for Background {
    fn default() -> Self {
        Background {
            permittivity: 1.0,
            strength: None,
        }
    }
}

/// A complete, typed design in SI units.
#[derive(Clone, Debug, PartialEq, Default)]
pub struct Design {
    /// Planar or axisymmetric.
    pub mode: Mode,
    /// Planar only: out-of-plane length, m, for whole-part totals.
    pub depth: Option<f64>,
    /// Domain and cell size.
    pub domain: Domain,
    /// Uniform or graded node lines.
    pub lattice: Lattice,
    /// Side conditions.
    pub sides: Sides,
    /// Background material.
    pub background: Background,
    /// Electrodes, in file order.
    pub conductors: Vec<Conductor>,
    /// Dielectric regions, in painting order.
    pub dielectrics: Vec<Dielectric>,
    /// Free charges.
    pub charges: Vec<Charge>,
    /// Probe points.
    pub probes: Vec<Probe>,
}

impl Default for Domain {
    fn default() -> Self {
        Domain {
            x: [0.0, 1.0],
            y: [0.0, 1.0],
            cell: 0.01,
        }
    }
}

/// Checks the geometric and physical rules of the contract that a reader cannot check key by
/// key: finite numbers, positive sizes and permittivities, shapes inside the domain, simple
/// polygons, conductors not overlapping, unique conductor names, axisymmetric constraints.
/// (The rules need the exact outlines, so they live in [`crate::geometry`].)
pub use crate::geometry::validate_design as validate;
