//! The whole part of a drawn part: the symmetry sides that mirror it, and what unfolding
//! across them does to its values.
//!
//! A `symmetry` side that a conductor reaches halves the part: the conductor is cut by the
//! mirror plane, and the drawn design is a half (or a quarter) of the part. A symmetry side
//! that no conductor reaches is a wall of zero normal field around a whole part (a panel cut
//! out of a repeating pattern, say) and halves nothing. In a planar design every side can be
//! a mirror; in an axisymmetric design only the bottom and top (planes z = const; the left
//! side is the axis, and a symmetry condition on the outer radius is a wall, not a mirror). Unfolding doubles once per axis that has a mirror side:
//! with mirrors on both sides of one axis the drawn part repeats without end, and the unfolded
//! values are those of one period (the drawn part and its image). A conductor that touches a
//! mirror plane is one conductor with its image; one that does not touch it has an image of
//! its own, which the whole-part values take as joined to it (one net, driven in phase, as the
//! mirrored solution already has them).
//!
//! Invariants: `factor` is 1, 2 or 4; a whole-part Maxwell matrix is `factor` times the drawn
//! part's, exactly the matrix of the unfolded design with each conductor and its images
//! joined into one net.

use crate::design::{Design, Mode, Side};

/// How a drawn design unfolds into the whole part.
#[derive(Clone, Debug, PartialEq)]
pub struct Unfolding {
    /// The mirror sides ("left", "right", "bottom", "top"), in that order.
    pub sides: Vec<&'static str>,
    /// Whole-part values are this multiple of the drawn part's (charges, capacitances,
    /// energy, forces along a mirror plane).
    pub factor: f64,
    /// Conductors that do not touch some mirror side: each is joined with its image(s).
    pub joined: Vec<String>,
}

impl Unfolding {
    /// True when the drawn design is the whole part.
    pub fn is_whole(&self) -> bool {
        self.sides.is_empty()
    }
}

/// The mirror sides of a design and what they make of its values.
pub fn unfolding(design: &Design) -> Unfolding {
    let s = &design.sides;
    let planar = design.mode == Mode::Planar;
    let candidates = [
        ("left", s.left, 0usize, design.domain.x[0], planar),
        ("right", s.right, 0, design.domain.x[1], planar),
        ("bottom", s.bottom, 1, design.domain.y[0], true),
        ("top", s.top, 1, design.domain.y[1], true),
    ];
    let mut sides = Vec::new();
    let mut axes = [false; 2];
    let mut joined: Vec<String> = Vec::new();
    for (name, side, axis, at, mirror) in candidates {
        let cut = |c: &crate::design::Conductor| c.shapes().any(|s| touches(design, s, axis, at));
        if side != Side::Symmetry || !mirror || !design.conductors.iter().any(cut) {
            continue;
        }
        sides.push(name);
        axes[axis] = true;
        for c in &design.conductors {
            if !cut(c) && !joined.contains(&c.name) {
                joined.push(c.name.clone());
            }
        }
    }
    let factor = axes.iter().map(|&a| if a { 2.0 } else { 1.0 }).product();
    Unfolding {
        sides,
        factor,
        joined,
    }
}

/// Whether a shape reaches the line `coordinate[axis] = at` (within a billionth of the
/// domain), where its image joins it.
pub fn touches(design: &Design, shape: &crate::design::Shape, axis: usize, at: f64) -> bool {
    let d = &design.domain;
    let tol = 1e-9 * (d.x[1] - d.x[0]).abs().max((d.y[1] - d.y[0]).abs());
    crate::geometry::outline(shape).is_ok_and(|o| {
        let b = o.bbox();
        (b.min[axis] - at).abs() <= tol || (b.max[axis] - at).abs() <= tol
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::design::{Conductor, Domain, Drive, Shape, Sides};

    fn design(sides: Sides, mode: Mode) -> Design {
        let rect = |x: [f64; 2]| Shape::Rect {
            x,
            y: [0.2, 0.4],
            round: 0.0,
        };
        Design {
            mode,
            domain: Domain {
                x: [0.0, 1.0],
                y: [0.0, 1.0],
                cell: 0.1,
            },
            sides,
            conductors: vec![
                Conductor {
                    name: "centre".into(),
                    drive: Drive::Fixed(1.0),
                    joined: Vec::new(),
                    shape: rect([0.0, 0.3]),
                },
                Conductor {
                    name: "apart".into(),
                    drive: Drive::Fixed(0.0),
                    joined: Vec::new(),
                    shape: rect([0.5, 0.7]),
                },
            ],
            ..Design::default()
        }
    }

    #[test]
    fn a_mirror_plane_doubles_and_joins_the_conductors_apart_from_it() {
        let sides = Sides {
            left: Side::Symmetry,
            ..Sides::default()
        };
        let u = unfolding(&design(sides, Mode::Planar));
        assert_eq!(u.sides, ["left"]);
        assert_eq!(u.factor, 2.0);
        assert_eq!(u.joined, ["apart"]);
        assert!(unfolding(&design(Sides::default(), Mode::Planar)).is_whole());
    }

    #[test]
    fn a_symmetry_side_no_conductor_reaches_halves_nothing() {
        let sides = Sides {
            left: Side::Symmetry,
            right: Side::Symmetry,
            bottom: Side::Symmetry,
            top: Side::Ground,
        };
        let u = unfolding(&design(sides, Mode::Planar));
        assert_eq!(u.sides, ["left"]);
        assert_eq!(u.factor, 2.0);
        let mut d = design(sides, Mode::Planar);
        d.conductors[1].shape = Shape::Rect {
            x: [0.5, 1.0],
            y: [0.0, 0.1],
            round: 0.0,
        };
        let u = unfolding(&d);
        assert_eq!(u.sides, ["left", "right", "bottom"]);
        assert_eq!(u.factor, 4.0);
        assert_eq!(u.joined, ["apart", "centre"]);
    }

    #[test]
    fn an_axisymmetric_outer_wall_is_no_mirror() {
        let sides = Sides {
            left: Side::Axis,
            right: Side::Symmetry,
            ..Sides::default()
        };
        let mut d = design(sides, Mode::Axisymmetric);
        d.conductors[1].shape = Shape::Rect {
            x: [0.5, 1.0],
            y: [0.2, 0.4],
            round: 0.0,
        };
        assert!(unfolding(&d).is_whole());
    }
}
