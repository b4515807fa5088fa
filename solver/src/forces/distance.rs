//! The distance from a point to a conductor's shapes as drawn (rounding ignored: it only
//! takes metal away), 0 on and inside them, with its gradient; and the box that bounds it
//! from below, so that a search over the lattice visits only the nodes within reach.
//!
//! Invariants: [`Shapes::distance`] gives the bits of measuring every segment with `hypot`
//! and keeping the first nearest (segments are compared by squared length first and only
//! those within [`TIE`] of the nearest are measured; a shape whose box lies farther than the
//! nearest distance found so far cannot hold the first nearest and is passed over). A node
//! [`Shapes::window`] leaves out, or [`Shapes::beyond`] rejects, lies farther than the reach
//! from every shape also as computed: both keep a slack of [`SLACK`] of the coordinates'
//! size, far above the rounding of either computation. Lengths in m.

use crate::design::Shape;
use crate::grid::Grid;
use std::ops::Range;

/// Relative width, in squared length, within which segments are measured with `hypot`: far
/// above the few units in the last place between `hypot(a, b)` and `sqrt(a² + b²)`.
const TIE: f64 = 1e-9;
/// Squared lengths below this are measured whatever their rank (the squares lose their
/// precision in the subnormal range).
const TINY_SQ: f64 = 1e-280;
/// Slack of the box bounds, relative to the size of the coordinates: far above the rounding
/// of the distance (a few units in the last place of the coordinates).
const SLACK: f64 = 1e-9;

/// An axis-aligned box: `[[x0, y0], [x1, y1]]`, m.
type Box2 = [[f64; 2]; 2];

/// A conductor's shapes with their boxes.
#[derive(Clone, Debug, PartialEq)]
pub(super) struct Shapes {
    shapes: Vec<Shape>,
    boxes: Vec<Box2>,
    /// The box of every shape.
    bbox: Box2,
    /// The largest coordinate magnitude of the boxes and the lattice, m: the scale of the
    /// rounding of every distance computed here.
    scale: f64,
}

/// Offset from the segment a-b to q (q minus its nearest point on the segment).
fn offset(q: [f64; 2], a: [f64; 2], b: [f64; 2]) -> [f64; 2] {
    let (ux, uy) = (b[0] - a[0], b[1] - a[1]);
    let l2 = ux * ux + uy * uy;
    let t = if l2 > 0.0 {
        (((q[0] - a[0]) * ux + (q[1] - a[1]) * uy) / l2).clamp(0.0, 1.0)
    } else {
        0.0
    };
    [q[0] - a[0] - t * ux, q[1] - a[1] - t * uy]
}

/// Length of an offset, with the unit vector along it.
fn measured(o: [f64; 2]) -> (f64, [f64; 2]) {
    let d = o[0].hypot(o[1]);
    (
        d,
        if d > 0.0 {
            [o[0] / d, o[1] / d]
        } else {
            [0.0, 0.0]
        },
    )
}

/// Distance from q to the nearest of the segments, with the unit vector from it to q: the
/// first segment of least `hypot` length.
fn to_segments<I>(q: [f64; 2], segments: I) -> (f64, [f64; 2])
where
    I: Iterator<Item = ([f64; 2], [f64; 2])> + Clone,
{
    let sq = |(a, b)| {
        let o = offset(q, a, b);
        (o[0] * o[0] + o[1] * o[1], o)
    };
    // The first few segments' offsets (a rectangle's four) are kept from the first pass for
    // the second; more are computed again (the same bits either way).
    let mut kept = [(0.0, [0.0; 2]); KEPT];
    let (mut n, mut least) = (0, f64::INFINITY);
    for (s2, o) in segments.clone().map(sq) {
        least = least.min(s2);
        if n < KEPT {
            kept[n] = (s2, o);
        }
        n += 1;
    }
    let cut = (least * (1.0 + TIE)).max(TINY_SQ);
    let mut best = (f64::INFINITY, [0.0, 0.0]);
    let mut measure = |(s2, o): (f64, [f64; 2])| {
        if s2 <= cut || s2.is_nan() {
            let m = measured(o);
            if m.0 < best.0 {
                best = m;
            }
        }
    };
    if n <= KEPT {
        kept[..n].iter().copied().for_each(&mut measure);
    } else {
        segments.map(sq).for_each(&mut measure);
    }
    best
}

/// Segments whose offsets [`to_segments`] keeps between its two passes.
const KEPT: usize = 4;

/// Distance from q to a closed outline (0 inside), with its gradient.
fn to_outline(q: [f64; 2], pts: &[[f64; 2]]) -> (f64, [f64; 2]) {
    let n = pts.len();
    let mut inside = false;
    for (i, &a) in pts.iter().enumerate() {
        let b = pts[(i + 1) % n];
        if (a[1] > q[1]) != (b[1] > q[1])
            && q[0] < a[0] + (q[1] - a[1]) / (b[1] - a[1]) * (b[0] - a[0])
        {
            inside = !inside;
        }
    }
    if inside {
        return (0.0, [0.0, 0.0]);
    }
    to_segments(q, (0..n).map(|i| (pts[i], pts[(i + 1) % n])))
}

/// Distance from q to a shape, 0 on and inside it, with its gradient.
fn to_shape(q: [f64; 2], s: &Shape) -> (f64, [f64; 2]) {
    let radial = |c: [f64; 2], d: f64, sign: f64| {
        let (x, y) = (q[0] - c[0], q[1] - c[1]);
        let r = x.hypot(y);
        if d > 0.0 && r > 0.0 {
            (d, [sign * x / r, sign * y / r])
        } else {
            (0.0, [0.0, 0.0])
        }
    };
    match s {
        Shape::Rect { x, y, .. } => {
            to_outline(q, &[[x[0], y[0]], [x[1], y[0]], [x[1], y[1]], [x[0], y[1]]])
        }
        Shape::Circle { center: c, radius } => {
            let r = (q[0] - c[0]).hypot(q[1] - c[1]);
            radial(*c, r - radius, 1.0)
        }
        Shape::Ring {
            center: c,
            inner,
            outer,
        } => {
            let r = (q[0] - c[0]).hypot(q[1] - c[1]);
            if r < *inner {
                radial(*c, inner - r, -1.0)
            } else {
                radial(*c, r - outer, 1.0)
            }
        }
        Shape::Polygon { outer, .. } => to_outline(q, outer),
        Shape::Polyline(p) => to_segments(q, p.windows(2).map(|w| (w[0], w[1]))),
    }
}

/// The box of a shape as drawn.
fn box_of(s: &Shape) -> Box2 {
    let of_points = |p: &[[f64; 2]]| {
        p.iter()
            .fold([[f64::INFINITY; 2], [f64::NEG_INFINITY; 2]], |b, q| {
                [
                    [b[0][0].min(q[0]), b[0][1].min(q[1])],
                    [b[1][0].max(q[0]), b[1][1].max(q[1])],
                ]
            })
    };
    match s {
        Shape::Rect { x, y, .. } => [[x[0], y[0]], [x[1], y[1]]],
        Shape::Circle {
            center: c,
            radius: r,
        }
        | Shape::Ring {
            center: c,
            outer: r,
            ..
        } => [[c[0] - r, c[1] - r], [c[0] + r, c[1] + r]],
        Shape::Polygon { outer, .. } => of_points(outer),
        Shape::Polyline(p) => of_points(p),
    }
}

/// Squared distance from q to a box, per axis: (x, y).
fn box_offset(q: [f64; 2], b: &Box2) -> [f64; 2] {
    [
        (b[0][0] - q[0]).max(q[0] - b[1][0]).max(0.0),
        (b[0][1] - q[1]).max(q[1] - b[1][1]).max(0.0),
    ]
}

/// Nodes whose coordinate (ascending) lies in [lo, hi].
fn span(at: &[f64], lo: f64, hi: f64) -> Range<usize> {
    let start = at.partition_point(|&c| c < lo);
    start..at.partition_point(|&c| c <= hi).max(start)
}

impl Shapes {
    /// The shapes and their boxes, with the rounding scale of this lattice.
    pub(super) fn new<'a>(shapes: impl Iterator<Item = &'a Shape>, grid: &Grid) -> Shapes {
        let shapes: Vec<Shape> = shapes.cloned().collect();
        let boxes: Vec<Box2> = shapes.iter().map(box_of).collect();
        let bbox = boxes
            .iter()
            .fold([[f64::INFINITY; 2], [f64::NEG_INFINITY; 2]], |a, b| {
                [
                    [a[0][0].min(b[0][0]), a[0][1].min(b[0][1])],
                    [a[1][0].max(b[1][0]), a[1][1].max(b[1][1])],
                ]
            });
        let lattice = [
            grid.x(0),
            grid.x(grid.nx - 1),
            grid.y(0),
            grid.y(grid.ny - 1),
        ];
        let scale = bbox
            .iter()
            .flatten()
            .chain(&lattice)
            .fold(0.0f64, |s, c| s.max(c.abs()));
        Shapes {
            shapes,
            boxes,
            bbox,
            scale,
        }
    }

    /// The slack of a bound at this reach, m.
    fn slack(&self, reach: f64) -> f64 {
        SLACK * (self.scale + reach)
    }

    /// Distance from (x, y) to the shapes, m, with its gradient: the first shape of least
    /// distance.
    pub(super) fn distance(&self, x: f64, y: f64) -> (f64, [f64; 2]) {
        let q = [x, y];
        let mut best = (f64::INFINITY, [0.0, 0.0]);
        for (s, b) in self.shapes.iter().zip(&self.boxes) {
            if best.0.is_finite() {
                let o = box_offset(q, b);
                let reach = best.0 + self.slack(best.0);
                if o[0] * o[0] + o[1] * o[1] > reach * reach {
                    continue;
                }
            }
            let d = to_shape(q, s);
            if d.0 < best.0 {
                best = d;
            }
        }
        best
    }

    /// True when (x, y) lies farther than `reach` from every shape (as [`Shapes::distance`]
    /// computes it), judged by the box alone.
    pub(super) fn beyond(&self, x: f64, y: f64, reach: f64) -> bool {
        let o = box_offset([x, y], &self.bbox);
        let r = reach + self.slack(reach);
        o[0] * o[0] + o[1] * o[1] > r * r
    }

    /// The lattice rows and columns holding every node within `reach` of the shapes.
    pub(super) fn window(&self, g: &Grid, reach: f64) -> (Range<usize>, Range<usize>) {
        let r = reach + self.slack(reach);
        let b = &self.bbox;
        (
            span(g.ys(), b[0][1] - r, b[1][1] + r),
            span(g.xs(), b[0][0] - r, b[1][0] + r),
        )
    }

    /// The least distance from the shapes to a node for which `hit` holds (infinite when
    /// none does). Rows are visited outward from the box, and within a row only the
    /// columns within the least distance found so far, so the search covers the area that
    /// distance reaches rather than the lattice.
    pub(super) fn nearest(&self, g: &Grid, hit: impl Fn(usize) -> bool) -> f64 {
        let mut least = f64::INFINITY;
        let b = &self.bbox;
        // Rows at and above the box's foot, upward; then the rows below it, downward: the
        // distance to the box along y grows along each sequence.
        let foot = span(g.ys(), b[0][1], f64::INFINITY).start;
        let row = |j: usize, least: &mut f64| -> bool {
            let y = g.y(j);
            let dy = (b[0][1] - y).max(y - b[1][1]).max(0.0);
            let r = *least + self.slack(*least);
            if dy > r {
                return false;
            }
            let cols = span(g.xs(), b[0][0] - r, b[1][0] + r);
            for i in cols {
                let p = i + j * g.nx;
                let x = g.x(i);
                if hit(p) && !self.beyond(x, y, *least) {
                    *least = least.min(self.distance(x, y).0);
                }
            }
            true
        };
        for j in foot..g.ny {
            if !row(j, &mut least) {
                break;
            }
        }
        for j in (0..foot).rev() {
            if !row(j, &mut least) {
                break;
            }
        }
        least
    }
}
