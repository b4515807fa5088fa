//! Which corners `round = r` rounds when the design does not choose them with
//! `round_corners`: every corner of the part, none of the vertices where the drawing meets a
//! side of the domain (a mirror plane, a wall, the axis).
//!
//! Invariants: a vertex on a side is where the drawing cuts the part, not a corner of it
//! (rounding it would add a hollow or a bump the part does not have), so it stays exactly
//! where it was drawn; shapes with chosen corners, unrounded shapes and shapes off the sides
//! are left as read. A rounded rectangle touching a side becomes the polygon of its four
//! corners, counter-clockwise from (x0, y0), with the corners off the sides chosen.

use fieldgrid_solver::design::{Charge, Design, Shape};
use fieldgrid_solver::geometry::corners_off_sides;

/// Leaves the corners on the domain's sides sharp in every rounded shape of `d` that does
/// not choose its corners.
pub(super) fn sharp_on_sides(d: &mut Design) {
    let domain = d.domain;
    let shapes = d
        .conductors
        .iter_mut()
        .flat_map(|c| std::iter::once(&mut c.shape).chain(c.joined.iter_mut()))
        .chain(d.dielectrics.iter_mut().map(|m| &mut m.shape))
        .chain(d.charges.iter_mut().filter_map(|c| match c {
            Charge::Region { shape, .. } => Some(shape),
            _ => None,
        }));
    for shape in shapes {
        match shape {
            Shape::Polygon {
                outer,
                holes,
                round,
                corners: corners @ None,
            } if *round > 0.0 => {
                *corners = corners_off_sides(outer, holes, &domain);
            }
            Shape::Rect { x, y, round } if *round > 0.0 => {
                let outer = vec![[x[0], y[0]], [x[1], y[0]], [x[1], y[1]], [x[0], y[1]]];
                if let Some(corners) = corners_off_sides(&outer, &[], &domain) {
                    *shape = Shape::Polygon {
                        outer,
                        holes: Vec::new(),
                        round: *round,
                        corners: Some(corners),
                    };
                }
            }
            _ => {}
        }
    }
}
