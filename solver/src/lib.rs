//! fieldgrid: finite-difference solution of 2-D electrostatic fields around electrodes.
//!
//! The library takes a typed, SI [`design::Design`] and produces the solved field and every
//! quantity derived from it. It does no I/O and prints nothing; reading design files and
//! writing results belong to the command-line crate.
//!
//! Data flow: [`design`] (typed input) -> [`geometry`] (exact outlines and predicates) ->
//! [`raster`] (node classification and cut edges on a [`grid::Grid`]) -> [`operator`]
//! (one SPD five-point operator, [`stencil::Stencil5`]) -> [`solvers`] -> [`study`]
//! (excitations, superposition) -> [`post`] (charges, capacitance, field, hot spots).
#![deny(missing_docs)]
// Lattice code indexes several arrays by node number in one loop; iterator chains would hide it.
#![allow(clippy::needless_range_loop)]

pub mod accuracy;
pub mod circuit;
pub mod design;
pub mod forces;
pub mod geometry;
pub mod grading;
pub mod grid;
mod hotspot_search;
pub mod line;
pub mod line_study;
mod links;
pub mod margin_map;
pub mod material;
pub mod newton;
pub mod open;
pub mod operator;
pub mod parallel;
pub mod peaks;
pub mod plan;
pub mod post;
pub mod quantity;
pub mod raster;
pub mod root;
#[cfg(test)]
mod seeded;
pub mod sensitivity;
pub mod solvers;
pub mod stages;
pub mod stencil;
pub mod study;
pub mod surface;
pub mod surface_field;
pub mod surface_results;
pub mod tolerance;
pub mod unfold;
pub mod warning;

/// Permittivity of free space, F/m (CODATA 2018 recommended value).
pub const EPS0: f64 = 8.854_187_812_8e-12;
/// Permeability of free space, H/m (CODATA 2018 recommended value).
pub const MU0: f64 = 1.256_637_062_12e-6;
