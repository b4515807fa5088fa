//! Exact outlines of the design's shapes and the predicates on them.
//!
//! Every [`Shape`](crate::design::Shape) becomes an [`Outline`]: closed loops of straight
//! segments and circular arcs filled by the even-odd rule, or, for a polyline, one open path
//! that fills nothing. Invariants of an outline:
//! - every [`Piece`] is monotone in x and in y (arcs are split where their tangent is
//!   horizontal or vertical), so a line x = c or y = c meets a piece once at most, unless the
//!   piece lies on that line;
//! - consecutive pieces share their end points bit for bit and every loop closes exactly, so
//!   parity counts with the half-open rule are exact (a vertex on a line is counted once);
//! - loops have the filled side on their left: outer boundaries counter-clockwise, holes
//!   clockwise, so boundary integrals give areas and moments with the right sign.
//!
//! The submodules, each depending only on those before it: `piece` (segments and quadrant
//! arcs), `crossings` (pieces against a family of lines), `fillet` (rounded corners),
//! [`outline`] (loops, shape conversion, area and crossings), `lines` (cross-sections along a
//! family of grid lines, for the rasteriser), `intersect` (where two pieces meet), `corners`
//! (sharp corners and drawing polylines) and `validate` (the design rules).

mod corners;
mod crossings;
mod fillet;
mod intersect;
pub(crate) mod lines;
pub mod outline;
mod piece;
mod validate;

pub use corners::{corners_off_sides, on_side, outline_polylines, sharp_corners};
pub(crate) use corners::{unfolds_flat, unrounded_vertices};
pub(crate) use intersect::meet;
pub use outline::{outline, BBox, Outline, Piece};
pub use validate::validate_design;
