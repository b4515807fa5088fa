//! The far field of open sides for the accuracy loop: a design whose open sides stand
//! farther out, on a lattice that keeps every node line of the nearer box.
//!
//! Each open side moves outward by the domain's extent along its axis; the node lines beyond
//! the old side continue the last cell's spacing, growing by the grading's `growth` per cell,
//! so the enlarged lattice holds the nearer lattice's lines unchanged and adds only a few
//! dozen lines per side. Shapes that reach an open side (a laminate, a ground plane running
//! off the drawing) are carried on to the new side, so that what the design leaves unbounded
//! stays unbounded. Comparing a result on the two boxes, at the same lines inside the nearer
//! one, isolates the error of truncating the far field from the discretisation.
//!
//! Invariants: the enlarged lines start with the nearer lines (on the sides that stay) and
//! are strictly increasing; only open sides move; the axis of a body of revolution never
//! moves.

use crate::design::{Design, Shape, Side};
use crate::grading::Lines;

/// True when the design has an open side.
pub fn has_open_side(design: &Design) -> bool {
    let s = &design.sides;
    [s.left, s.right, s.bottom, s.top].contains(&Side::Open)
}

/// The design with its open sides moved outward (each by the domain's extent along its
/// axis) and the base lines `lines` of its lattice continued to the new sides, growing by
/// `growth` per cell. `None` when no side is open.
pub fn enlarged(design: &Design, lines: &Lines, growth: f64) -> Option<(Design, Lines)> {
    if !has_open_side(design) {
        return None;
    }
    let s = design.sides;
    let d = design.domain;
    let (ex, ey) = (d.x[1] - d.x[0], d.y[1] - d.y[0]);
    let mut x = lines.x.clone();
    let mut y = lines.y.clone();
    if s.left == Side::Open {
        x = extend_low(&x, ex, growth);
    }
    if s.right == Side::Open {
        x = extend_high(&x, ex, growth);
    }
    if s.bottom == Side::Open {
        y = extend_low(&y, ey, growth);
    }
    if s.top == Side::Open {
        y = extend_high(&y, ey, growth);
    }
    let mut big = design.clone();
    big.domain.x = [x[0], x[x.len() - 1]];
    big.domain.y = [y[0], y[y.len() - 1]];
    let mv = Moves {
        x: [
            (s.left == Side::Open).then_some((d.x[0], big.domain.x[0])),
            (s.right == Side::Open).then_some((d.x[1], big.domain.x[1])),
        ],
        y: [
            (s.bottom == Side::Open).then_some((d.y[0], big.domain.y[0])),
            (s.top == Side::Open).then_some((d.y[1], big.domain.y[1])),
        ],
    };
    for c in &mut big.conductors {
        mv.shape(&mut c.shape);
        c.joined.iter_mut().for_each(|j| mv.shape(j));
    }
    for e in &mut big.dielectrics {
        mv.shape(&mut e.shape);
    }
    for c in &mut big.charges {
        if let crate::design::Charge::Region { shape, .. } = c {
            mv.shape(shape);
        }
    }
    Some((big, Lines { x, y }))
}

/// Coordinates on an old side and where they go, per axis (low side, high side).
struct Moves {
    x: [Option<(f64, f64)>; 2],
    y: [Option<(f64, f64)>; 2],
}

impl Moves {
    fn coord(moves: &[Option<(f64, f64)>; 2], c: &mut f64) {
        for (from, to) in moves.iter().flatten() {
            if *c == *from {
                *c = *to;
            }
        }
    }

    fn point(&self, p: &mut [f64; 2]) {
        Self::coord(&self.x, &mut p[0]);
        Self::coord(&self.y, &mut p[1]);
    }

    /// Carries every edge of `shape` that lies on an open side on to the new side.
    fn shape(&self, shape: &mut Shape) {
        match shape {
            Shape::Rect { x, y, .. } => {
                x.iter_mut().for_each(|c| Self::coord(&self.x, c));
                y.iter_mut().for_each(|c| Self::coord(&self.y, c));
            }
            Shape::Polygon { outer, holes, .. } => {
                outer.iter_mut().for_each(|p| self.point(p));
                holes.iter_mut().flatten().for_each(|p| self.point(p));
            }
            Shape::Polyline(points) => points.iter_mut().for_each(|p| self.point(p)),
            Shape::Circle { .. } | Shape::Ring { .. } => {}
        }
    }
}

/// The lines of `outer` (an enlarged base) beyond the span of `inner` (the nearer box's
/// lines refined `bisections` times), each of their cells bisected `bisections` times, on
/// either side of `inner`.
pub fn joined(outer: &Lines, inner: &Lines, bisections: usize) -> Lines {
    Lines {
        x: joined_axis(&outer.x, &inner.x, bisections),
        y: joined_axis(&outer.y, &inner.y, bisections),
    }
}

fn joined_axis(outer: &[f64], inner: &[f64], bisections: usize) -> Vec<f64> {
    let (lo, hi) = (inner[0], inner[inner.len() - 1]);
    let split = |part: Vec<f64>| {
        (0..bisections).fold(part, |p, _| {
            let mut out = Vec::with_capacity(2 * p.len());
            for w in p.windows(2) {
                out.extend([w[0], 0.5 * (w[0] + w[1])]);
            }
            out.extend(p.last());
            out
        })
    };
    let below: Vec<f64> = outer.iter().copied().filter(|&t| t <= lo).collect();
    let above: Vec<f64> = outer.iter().copied().filter(|&t| t >= hi).collect();
    let mut out = split(below);
    out.pop();
    out.extend_from_slice(inner);
    out.extend(split(above).into_iter().skip(1));
    out
}

/// Lines continued above the last one by at least `by`, each cell `growth` times the one
/// before.
fn extend_high(lines: &[f64], by: f64, growth: f64) -> Vec<f64> {
    let n = lines.len();
    let end = lines[n - 1] + by;
    let mut out = lines.to_vec();
    let mut h = lines[n - 1] - lines[n - 2];
    let mut t = lines[n - 1];
    while t < end {
        h *= growth;
        t += h;
        out.push(t);
    }
    out
}

/// Lines continued below the first one by at least `by`, each cell `growth` times the one
/// before.
fn extend_low(lines: &[f64], by: f64, growth: f64) -> Vec<f64> {
    let mirrored: Vec<f64> = lines.iter().rev().map(|t| -t).collect();
    extend_high(&mirrored, by, growth)
        .into_iter()
        .rev()
        .map(|t| -t)
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::design::{Conductor, Dielectric, Drive};

    fn strip() -> Design {
        let mut d = Design::default();
        d.domain.x = [0.0, 2.0];
        d.domain.y = [0.0, 1.0];
        d.sides.right = Side::Open;
        d.sides.top = Side::Open;
        d.dielectrics.push(Dielectric {
            name: "slab".into(),
            permittivity: 3.0,
            strength: None,
            shape: Shape::Rect {
                x: [0.0, 2.0],
                y: [0.0, 0.25],
                round: 0.0,
            },
        });
        d.conductors.push(Conductor {
            name: "c".into(),
            drive: Drive::Fixed(1.0),
            shape: Shape::Polyline(vec![[0.0, 0.25], [0.5, 0.25]]),
            joined: Vec::new(),
        });
        d
    }

    #[test]
    fn open_sides_move_out_and_keep_the_nearer_lines() {
        let d = strip();
        let lines = Lines {
            x: vec![0.0, 0.25, 0.5, 1.0, 1.5, 2.0],
            y: vec![0.0, 0.25, 0.5, 1.0],
        };
        let (big, l) = enlarged(&d, &lines, 1.2).unwrap();
        assert_eq!(&l.x[..6], &lines.x[..]);
        assert_eq!(&l.y[..4], &lines.y[..]);
        assert!(l.x.windows(2).all(|w| w[0] < w[1]));
        assert!(big.domain.x[1] >= 4.0 && big.domain.y[1] >= 2.0);
        assert_eq!(big.domain.x[0], 0.0);
        assert_eq!(*l.x.last().unwrap(), big.domain.x[1]);
        // Growth by the given ratio, from the last cell of the nearer box.
        assert!((l.x[6] - l.x[5] - 0.6).abs() < 1e-12);
        // The slab runs on to the new right side; the conductor stays where it is.
        match &big.dielectrics[0].shape {
            Shape::Rect { x, y, .. } => {
                assert_eq!(x[1], big.domain.x[1]);
                assert_eq!(y[1], 0.25);
            }
            s => panic!("{s:?}"),
        }
        assert_eq!(big.conductors[0].shape, d.conductors[0].shape);
    }

    #[test]
    fn a_closed_box_is_not_enlarged() {
        let mut d = strip();
        d.sides.right = Side::Ground;
        d.sides.top = Side::Symmetry;
        let lines = Lines {
            x: vec![0.0, 1.0, 2.0],
            y: vec![0.0, 0.5, 1.0],
        };
        assert!(enlarged(&d, &lines, 1.2).is_none());
    }

    #[test]
    fn a_refined_lattice_keeps_its_lines_and_bisects_the_farther_ones() {
        let outer = Lines {
            x: vec![-1.0, 0.0, 1.0, 2.0, 4.0],
            y: vec![0.0, 1.0, 3.0],
        };
        let inner = Lines {
            x: vec![0.0, 0.3, 1.0, 1.8, 2.0],
            y: vec![0.0, 0.5, 1.0],
        };
        let l = joined(&outer, &inner, 1);
        assert_eq!(l.x, vec![-1.0, -0.5, 0.0, 0.3, 1.0, 1.8, 2.0, 3.0, 4.0]);
        assert_eq!(l.y, vec![0.0, 0.5, 1.0, 2.0, 3.0]);
        // Nothing beyond: the inner lines alone.
        assert_eq!(joined(&inner, &inner, 2), inner);
    }

    #[test]
    fn a_low_side_grows_downward() {
        let l = extend_low(&[0.0, 0.5, 1.0], 1.0, 2.0);
        assert_eq!(l, vec![-1.0, 0.0, 0.5, 1.0]);
    }
}
