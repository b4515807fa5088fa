//! What post-processing and pictures need from a shape: its sharp corners (where the field
//! is singular and keeps growing under refinement), its vertices on the domain's sides (which
//! `round` leaves sharp by default, and which a mirror plane may unfold into no corner at
//! all) and its outline as polylines.

use super::outline::{outline, signed_area2};
use crate::design::{Design, Domain, Point, Shape, Side};

/// Turns of less than this (rad) are not corners.
const STRAIGHT: f64 = 1e-12;

/// Turn angle at `v` between the edges p -> v and v -> n, rad in [0, pi].
fn turn(p: Point, v: Point, n: Point) -> f64 {
    let d1 = [v[0] - p[0], v[1] - p[1]];
    let d2 = [n[0] - v[0], n[1] - v[1]];
    (d1[0] * d2[1] - d1[1] * d2[0])
        .abs()
        .atan2(d1[0] * d2[0] + d1[1] * d2[1])
}

/// Vertices of a closed vertex loop that are corners (turn not zero), repeated vertices
/// ignored.
fn loop_corners(v: &[Point], out: &mut Vec<Point>) {
    let mut w: Vec<Point> = Vec::with_capacity(v.len());
    for &p in v {
        if w.last() != Some(&p) {
            w.push(p);
        }
    }
    while w.len() > 1 && w.first() == w.last() {
        w.pop();
    }
    let n = w.len();
    if n < 3 || signed_area2(&w) == 0.0 {
        return;
    }
    for k in 0..n {
        if turn(w[(k + n - 1) % n], w[k], w[(k + 1) % n]) > STRAIGHT {
            out.push(w[k]);
        }
    }
}

/// The vertices of a polygon (outer boundary, then holes) that `round` and `corners` leave
/// sharp (see [`Shape::Polygon`]).
pub(crate) fn unrounded_vertices(
    outer: &[Point],
    holes: &[Vec<Point>],
    round: f64,
    corners: Option<&[usize]>,
) -> Vec<Point> {
    let all: Vec<Point> = outer
        .iter()
        .chain(holes.iter().flatten())
        .copied()
        .collect();
    if round <= 0.0 {
        return all;
    }
    let pick = super::outline::rounded_vertices(corners, all.len());
    all.into_iter()
        .zip(pick)
        .filter(|(_, p)| !p)
        .map(|(v, _)| v)
        .collect()
}

/// The vertices of a polygon (0-based, outer boundary then holes) that lie off the domain's
/// sides, or `None` when none lies on a side. A vertex on a side (a mirror plane, a wall, the
/// axis) is where the drawing cuts the part, not a corner of it: rounding it would add a
/// hollow or a bump the part does not have. On a side means within 1e-9 of the domain's
/// larger extent.
pub fn corners_off_sides(
    outer: &[Point],
    holes: &[Vec<Point>],
    domain: &Domain,
) -> Option<Vec<usize>> {
    let on = on_side(domain);
    let all: Vec<&Point> = outer.iter().chain(holes.iter().flatten()).collect();
    if !all.iter().any(|p| on(p).is_some()) {
        return None;
    }
    Some((0..all.len()).filter(|&k| on(all[k]).is_none()).collect())
}

/// Which side of `domain` a point lies on, within 1e-9 of the domain's larger extent:
/// 0 left, 1 right, 2 bottom, 3 top (the first that matches).
pub fn on_side(domain: &Domain) -> impl Fn(&Point) -> Option<usize> {
    let [x0, x1] = domain.x;
    let [y0, y1] = domain.y;
    let tol = 1e-9 * (x1 - x0).abs().max((y1 - y0).abs());
    move |p: &Point| {
        [p[0] - x0, p[0] - x1, p[1] - y0, p[1] - y1]
            .iter()
            .position(|d| d.abs() <= tol)
    }
}

/// Whether a vertex `q` of a rectangle or a polygon's outer boundary lies on a mirror plane
/// (or the axis) where the part, unfolded across it, has no corner: one edge at `q` runs
/// along that side and the other leaves it at 90 degrees or more through the metal, so the
/// unfolded outline runs straight on (or turns inwards, where the field tends to zero). A
/// stem cut square by a mirror plane is such a vertex; a wedge meeting the plane at less
/// than 90 degrees is not (unfolded, it is a sharp corner of twice its angle). A thin
/// conductor's (polyline's) end on a mirror plane or the axis, its last segment square to
/// that side, is no edge either: unfolded, it is the middle of a straight strip (or a disc).
pub(crate) fn unfolds_flat(design: &Design, shape: &Shape, q: Point) -> bool {
    let ring = match shape {
        Shape::Rect { x, y, .. } => vec![[x[0], y[0]], [x[1], y[0]], [x[1], y[1]], [x[0], y[1]]],
        Shape::Polygon { outer, .. } => outer.clone(),
        Shape::Polyline(pts) => return polyline_end_unfolds_flat(design, pts, q),
        _ => return false,
    };
    let Some(k) = ring.iter().position(|p| *p == q) else {
        return false;
    };
    let n = ring.len();
    let (prev, next) = (ring[(k + n - 1) % n], ring[(k + 1) % n]);
    let (tol, sides) = sides_and_tolerance(design);
    sides.iter().any(|&(side, axis, at)| {
        let on = |p: Point| (p[axis] - at).abs() <= tol;
        matches!(side, Side::Symmetry | Side::Axis)
            && on(q)
            && [(prev, next), (next, prev)].iter().any(|&(a, b)| {
                let (u, v) = ([a[0] - q[0], a[1] - q[1]], [b[0] - q[0], b[1] - q[1]]);
                on(a) && u[0] * v[0] + u[1] * v[1] <= 1e-12 * u[0].hypot(u[1]) * v[0].hypot(v[1])
            })
    })
}

/// Each side of the domain as (its kind, the coordinate across it, where it lies), and the
/// distance within which a point counts as on a side (1e-9 of the domain's larger extent, m).
fn sides_and_tolerance(design: &Design) -> (f64, [(Side, usize, f64); 4]) {
    let d = &design.domain;
    let tol = 1e-9 * (d.x[1] - d.x[0]).abs().max((d.y[1] - d.y[0]).abs());
    let s = &design.sides;
    let sides = [
        (s.left, 0, d.x[0]),
        (s.right, 0, d.x[1]),
        (s.bottom, 1, d.y[0]),
        (s.top, 1, d.y[1]),
    ];
    (tol, sides)
}

/// Whether `q` is an end of the polyline `pts` on a mirror plane or the axis whose segment
/// leaves that side square to it (see [`unfolds_flat`]).
fn polyline_end_unfolds_flat(design: &Design, pts: &[Point], q: Point) -> bool {
    let ends = [
        (pts.first(), pts.iter().find(|&&p| p != q)),
        (pts.last(), pts.iter().rev().find(|&&p| p != q)),
    ];
    let (tol, sides) = sides_and_tolerance(design);
    ends.iter().any(|&(end, other)| {
        let (Some(&end), Some(&b)) = (end, other) else {
            return false;
        };
        end == q
            && sides.iter().any(|&(side, axis, at)| {
                let (across, along) =
                    ((b[axis] - q[axis]).abs(), (b[1 - axis] - q[1 - axis]).abs());
                // Unfolded, the strip turns by twice the segment's angle off the normal.
                matches!(side, Side::Symmetry | Side::Axis)
                    && (q[axis] - at).abs() <= tol
                    && 2.0 * along.atan2(across) <= STRAIGHT
            })
    })
}

/// The sharp corners of a shape: unrounded rectangle and polygon vertices (holes included)
/// where the outline turns, and a polyline's end points and kinks. Circles, rings and
/// rounded shapes have none; a polygon rounded at chosen corners keeps its others. Points are in metres, in outline order; in axisymmetric mode
/// the caller drops those with x < 0.
pub fn sharp_corners(shape: &Shape) -> Vec<Point> {
    let mut out = Vec::new();
    match shape {
        Shape::Rect { x, y, round } if *round <= 0.0 => {
            out.extend([[x[0], y[0]], [x[1], y[0]], [x[1], y[1]], [x[0], y[1]]]);
        }
        Shape::Polygon {
            outer,
            holes,
            round,
            corners,
        } if *round <= 0.0 || corners.is_some() => {
            let mut all = Vec::new();
            loop_corners(outer, &mut all);
            for h in holes {
                loop_corners(h, &mut all);
            }
            let sharp = unrounded_vertices(outer, holes, *round, corners.as_deref());
            out.extend(all.into_iter().filter(|p| sharp.contains(p)));
        }
        Shape::Polyline(pts) => {
            let mut w: Vec<Point> = Vec::with_capacity(pts.len());
            for &p in pts {
                if w.last() != Some(&p) {
                    w.push(p);
                }
            }
            if let (Some(&first), Some(&last)) = (w.first(), w.last()) {
                out.push(first);
                for k in 1..w.len().saturating_sub(1) {
                    if turn(w[k - 1], w[k], w[k + 1]) > STRAIGHT {
                        out.push(w[k]);
                    }
                }
                if w.len() > 1 {
                    out.push(last);
                }
            }
        }
        _ => {}
    }
    out
}

/// The outline of a shape as polylines for drawing: each closed loop as a closed polyline
/// (its first point repeated at the end), a polyline as itself; arcs are replaced by chords
/// within `tol` (m, > 0) of them. Empty for a shape that has no outline (one that fails
/// validation).
pub fn outline_polylines(shape: &Shape, tol: f64) -> Vec<Vec<Point>> {
    let Ok(o) = outline(shape) else {
        return Vec::new();
    };
    let tol = if tol > 0.0 {
        tol
    } else {
        f64::EPSILON * o.bbox().max[0].abs().max(1.0)
    };
    o.loops
        .iter()
        .filter(|l| !l.is_empty())
        .map(|l| {
            let mut pts = vec![l[0].start()];
            for p in l {
                p.flatten_into(tol, &mut pts);
            }
            pts
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::design::{Conductor, Drive};

    /// One conductor at 1 V with `shape` in the domain [0, 1] x [0, 1].
    fn in_unit_square(name: &str, shape: Shape) -> Design {
        let mut d = Design {
            conductors: vec![Conductor {
                name: name.into(),
                drive: Drive::Fixed(1.0),
                joined: Vec::new(),
                shape,
            }],
            ..Design::default()
        };
        d.domain.x = [0.0, 1.0];
        d.domain.y = [0.0, 1.0];
        d
    }

    #[test]
    fn a_corner_on_a_mirror_plane_is_sharp_only_where_the_unfolded_part_has_one() {
        // Domain [0, 1] x [0, 1] with the top a mirror plane: a stem cut square by it and a
        // wedge meeting it at 45 degrees (unfolded, a 90 degree corner).
        let on_top = |outer: Vec<Point>, top: Side| {
            let shape = Shape::Polygon {
                outer,
                holes: vec![],
                round: 0.0,
                corners: None,
            };
            let mut d = in_unit_square("c", shape);
            d.sides.top = top;
            crate::post::sharp_corners(&d)
        };
        let stem = vec![[0.4, 0.5], [0.6, 0.5], [0.6, 1.0], [0.4, 1.0]];
        assert_eq!(
            on_top(stem.clone(), Side::Symmetry),
            vec![[0.4, 0.5], [0.6, 0.5]]
        );
        assert_eq!(on_top(stem, Side::Ground).len(), 4);
        let wedge = vec![[0.4, 0.5], [0.9, 1.0], [0.4, 1.0]];
        assert_eq!(on_top(wedge, Side::Symmetry), vec![[0.4, 0.5], [0.9, 1.0]]);
    }

    #[test]
    fn a_thin_conductors_end_on_a_mirror_plane_is_not_an_edge() {
        // A half strip from the left side (x = 0) to x = 0.3 at y = 0.5: on a mirror plane
        // its end there is the middle of the whole strip; on a wall, or leaving the plane
        // aslant (unfolded, a kink), it stays a sharp corner.
        let half_strip = |pts: Vec<Point>, left: Side| {
            let mut d = in_unit_square("trace", Shape::Polyline(pts));
            d.sides.left = left;
            crate::post::sharp_corners(&d)
        };
        let square = vec![[0.0, 0.5], [0.3, 0.5]];
        assert_eq!(half_strip(square.clone(), Side::Symmetry), vec![[0.3, 0.5]]);
        assert_eq!(half_strip(square.clone(), Side::Axis), vec![[0.3, 0.5]]);
        let reversed: Vec<Point> = square.iter().rev().copied().collect();
        assert_eq!(half_strip(reversed, Side::Symmetry), vec![[0.3, 0.5]]);
        assert_eq!(half_strip(square, Side::Ground).len(), 2);
        let aslant = vec![[0.0, 0.5], [0.3, 0.6]];
        assert_eq!(half_strip(aslant, Side::Symmetry).len(), 2);
    }

    #[test]
    fn rect_and_polygon_corners() {
        assert_eq!(
            sharp_corners(&Shape::Rect {
                x: [0.0, 1.0],
                y: [0.0, 2.0],
                round: 0.0
            })
            .len(),
            4
        );
        assert!(sharp_corners(&Shape::Rect {
            x: [0.0, 1.0],
            y: [0.0, 2.0],
            round: 0.1
        })
        .is_empty());
        // A collinear vertex is no corner.
        let p = Shape::Polygon {
            outer: vec![[0.0, 0.0], [1.0, 0.0], [2.0, 0.0], [2.0, 1.0], [0.0, 1.0]],
            holes: vec![vec![[0.5, 0.25], [0.75, 0.25], [0.75, 0.5]]],
            round: 0.0,
            corners: None,
        };
        let c = sharp_corners(&p);
        assert_eq!(c.len(), 7);
        assert!(!c.contains(&[1.0, 0.0]));
        assert!(sharp_corners(&Shape::Circle {
            center: [0.0, 0.0],
            radius: 1.0
        })
        .is_empty());
    }

    #[test]
    fn polyline_ends_and_kinks() {
        let s = Shape::Polyline(vec![[0.0, 0.0], [1.0, 0.0], [2.0, 0.0], [2.0, 1.0]]);
        assert_eq!(sharp_corners(&s), vec![[0.0, 0.0], [2.0, 0.0], [2.0, 1.0]]);
    }

    #[test]
    fn drawing_polylines_close_and_follow_arcs() {
        let s = Shape::Ring {
            center: [1.0, 1.0],
            inner: 0.5,
            outer: 1.0,
        };
        let l = outline_polylines(&s, 1e-4);
        assert_eq!(l.len(), 2);
        for (poly, r) in l.iter().zip([1.0, 0.5]) {
            assert_eq!(poly.first(), poly.last());
            assert!(poly.len() > 20);
            for p in poly {
                assert!(((p[0] - 1.0).hypot(p[1] - 1.0) - r).abs() < 1e-12);
            }
        }
        let open = outline_polylines(&Shape::Polyline(vec![[0.0, 0.0], [1.0, 1.0]]), 1e-3);
        assert_eq!(open, vec![vec![[0.0, 0.0], [1.0, 1.0]]]);
    }
}
