//! Where two pieces meet, and the search for meeting pieces among many.
//!
//! Two segments are tested exactly (adaptive-precision orientation tests from the `robust`
//! crate), so a vertex lying exactly on another edge is always found. Where an arc takes part
//! the test is in floating point and counts pieces closer than `tol` (m) as meeting. The
//! search sorts pieces by their bounding boxes along x and tests only pairs whose boxes meet.

use super::piece::{BBox, Piece};
use crate::design::Point;

fn orient(a: Point, b: Point, c: Point) -> f64 {
    use robust::{orient2d, Coord};
    orient2d(
        Coord { x: a[0], y: a[1] },
        Coord { x: b[0], y: b[1] },
        Coord { x: c[0], y: c[1] },
    )
}

fn same_side(p: f64, q: f64) -> bool {
    (p > 0.0 && q > 0.0) || (p < 0.0 && q < 0.0)
}

/// Points where the segments ab and cd meet (touching included).
fn segments(a: Point, b: Point, c: Point, d: Point) -> Vec<Point> {
    let (o1, o2) = (orient(a, b, c), orient(a, b, d));
    if same_side(o1, o2) {
        return vec![];
    }
    let (o3, o4) = (orient(c, d, a), orient(c, d, b));
    if same_side(o3, o4) {
        return vec![];
    }
    if o1 == 0.0 && o2 == 0.0 {
        // Collinear: compare along the axis of larger extent.
        let ax = if (b[0] - a[0]).abs() >= (b[1] - a[1]).abs() {
            0
        } else {
            1
        };
        let (a0, a1) = (a[ax].min(b[ax]), a[ax].max(b[ax]));
        let (c0, c1) = (c[ax].min(d[ax]), c[ax].max(d[ax]));
        let (lo, hi) = (a0.max(c0), a1.min(c1));
        if lo > hi {
            return vec![];
        }
        return [a, b, c, d]
            .into_iter()
            .filter(|p| p[ax] >= lo && p[ax] <= hi)
            .collect();
    }
    let p = if o1 == 0.0 {
        c
    } else if o2 == 0.0 {
        d
    } else if o3 == 0.0 {
        a
    } else if o4 == 0.0 {
        b
    } else {
        let t = o3 / (o3 - o4);
        [a[0] + t * (b[0] - a[0]), a[1] + t * (b[1] - a[1])]
    };
    vec![p]
}

/// Points where segment ab meets the arc piece `arc` (within `tol`).
fn segment_arc(a: Point, b: Point, arc: &Piece, tol: f64) -> Vec<Point> {
    let Piece::Arc {
        center: c,
        radius: r,
        ..
    } = *arc
    else {
        unreachable!()
    };
    let d = [b[0] - a[0], b[1] - a[1]];
    let f = [a[0] - c[0], a[1] - c[1]];
    let dd = d[0] * d[0] + d[1] * d[1];
    let len = dd.sqrt();
    let fl = f[0].hypot(f[1]);
    let bq = f[0] * d[0] + f[1] * d[1];
    let cq = (fl - r) * (fl + r);
    let mut disc = bq * bq - dd * cq;
    let dist = (d[0] * f[1] - d[1] * f[0]).abs() / len;
    if (dist - r).abs() <= tol {
        disc = disc.max(0.0);
    }
    if disc < 0.0 {
        return vec![];
    }
    let sq = disc.sqrt();
    let bb = arc.bbox();
    let mut out = Vec::new();
    let roots = if sq == 0.0 {
        &[-bq / dd][..]
    } else {
        &[(-bq - sq) / dd, (-bq + sq) / dd][..]
    };
    for &t in roots {
        if t >= -tol / len && t <= 1.0 + tol / len {
            let t = t.clamp(0.0, 1.0);
            let p = [a[0] + t * d[0], a[1] + t * d[1]];
            if bb.holds(p, tol) {
                out.push(p);
            }
        }
    }
    out
}

/// Points where two arc pieces meet (within `tol`).
fn arcs(p: &Piece, q: &Piece, tol: f64) -> Vec<Point> {
    let (
        Piece::Arc {
            center: c1,
            radius: r1,
            ..
        },
        Piece::Arc {
            center: c2,
            radius: r2,
            ..
        },
    ) = (*p, *q)
    else {
        unreachable!()
    };
    let (bp, bq) = (p.bbox(), q.bbox());
    let v = [c2[0] - c1[0], c2[1] - c1[1]];
    let dist = v[0].hypot(v[1]);
    if dist <= tol && (r1 - r2).abs() <= tol {
        // One circle: connected arcs overlap when an end of one lies on the other.
        return [p.start(), p.end()]
            .into_iter()
            .filter(|e| bq.holds(*e, tol))
            .chain(
                [q.start(), q.end()]
                    .into_iter()
                    .filter(|e| bp.holds(*e, tol)),
            )
            .take(1)
            .collect();
    }
    if dist > r1 + r2 + tol || dist < (r1 - r2).abs() - tol {
        return vec![];
    }
    let a = (r1 * r1 - r2 * r2 + dist * dist) / (2.0 * dist);
    let h = (r1 * r1 - a * a).max(0.0).sqrt();
    let u = [v[0] / dist, v[1] / dist];
    let m = [c1[0] + a * u[0], c1[1] + a * u[1]];
    [
        [m[0] - h * u[1], m[1] + h * u[0]],
        [m[0] + h * u[1], m[1] - h * u[0]],
    ]
    .into_iter()
    .filter(|x| bp.holds(*x, tol) && bq.holds(*x, tol))
    .collect()
}

/// Points where two pieces meet (touching included): exact for two segments, within `tol`
/// otherwise. Collinear overlapping segments give the ends of the overlap.
pub(crate) fn meet(p: &Piece, q: &Piece, tol: f64) -> Vec<Point> {
    match (*p, *q) {
        (Piece::Line { a, b }, Piece::Line { a: c, b: d }) => segments(a, b, c, d),
        (Piece::Line { a, b }, Piece::Arc { .. }) => segment_arc(a, b, q, tol),
        (Piece::Arc { .. }, Piece::Line { a, b }) => segment_arc(a, b, p, tol),
        _ => arcs(p, q, tol),
    }
}

/// A piece with its place in a set of outlines.
#[derive(Clone, Copy, Debug)]
pub(crate) struct Tagged {
    /// The piece.
    pub piece: Piece,
    /// Which outline (caller's numbering).
    pub tag: usize,
    /// Loop within the outline.
    pub lp: usize,
    /// Index within the loop.
    pub idx: usize,
    /// Pieces in the loop.
    pub n: usize,
    /// True for an open path (no wrap-around neighbour).
    pub open: bool,
}

impl Tagged {
    /// True when the two pieces follow each other in one loop or path.
    fn neighbours(&self, o: &Tagged) -> bool {
        if self.tag != o.tag || self.lp != o.lp {
            return false;
        }
        let next = |k: usize| if self.open { k + 1 } else { (k + 1) % self.n };
        next(self.idx) == o.idx || next(o.idx) == self.idx
    }
}

/// The pieces of an outline, tagged.
pub(crate) fn tag(o: &super::Outline, tag: usize) -> Vec<Tagged> {
    let mut v = Vec::new();
    for (lp, l) in o.loops.iter().enumerate() {
        for (idx, p) in l.iter().enumerate() {
            v.push(Tagged {
                piece: *p,
                tag,
                lp,
                idx,
                n: l.len(),
                open: o.open,
            });
        }
    }
    v
}

/// Neighbouring segments meet at their shared end; they overlap only when the second turns
/// straight back along the first.
fn folds_back(p: &Piece, q: &Piece) -> bool {
    match (*p, *q) {
        (Piece::Line { a, b }, Piece::Line { a: c, b: d }) => {
            let (other_p, other_q) = if b == c {
                (a, d)
            } else if d == a {
                (b, c)
            } else {
                return false;
            };
            let s = if b == c { b } else { a };
            orient(other_p, s, other_q) == 0.0
                && (other_p[0] - s[0]) * (other_q[0] - s[0])
                    + (other_p[1] - s[1]) * (other_q[1] - s[1])
                    > 0.0
        }
        // Arcs meet their neighbours tangentially (fillets, quadrant splits).
        _ => false,
    }
}

/// The first pair (by the sweep order) of pieces that meet at a point accepted by `keep`,
/// among the pairs allowed by `pair`. Neighbours in one loop are tested only for folding
/// back.
pub(crate) fn first_meeting(
    items: &[Tagged],
    tol: f64,
    pair: impl Fn(&Tagged, &Tagged) -> bool,
    keep: impl Fn(Point) -> bool,
) -> Option<(Tagged, Tagged, Point)> {
    let boxes: Vec<BBox> = items.iter().map(|t| t.piece.bbox()).collect();
    let mut order: Vec<usize> = (0..items.len()).collect();
    order.sort_by(|&i, &j| boxes[i].min[0].total_cmp(&boxes[j].min[0]).then(i.cmp(&j)));
    for (k, &i) in order.iter().enumerate() {
        for &j in &order[k + 1..] {
            if boxes[j].min[0] > boxes[i].max[0] + tol {
                break;
            }
            let (p, q) = (&items[i], &items[j]);
            if !pair(p, q) || !boxes[i].meets(&boxes[j], tol) {
                continue;
            }
            if p.neighbours(q) {
                if !p.open && folds_back(&p.piece, &q.piece) {
                    let s = if p.piece.end() == q.piece.start() {
                        q.piece.start()
                    } else {
                        p.piece.start()
                    };
                    return Some((*p, *q, s));
                }
                continue;
            }
            if let Some(x) = meet(&p.piece, &q.piece, tol).into_iter().find(|x| keep(*x)) {
                return Some((*p, *q, x));
            }
        }
    }
    None
}

#[cfg(test)]
mod tests {
    use super::*;

    fn line(a: Point, b: Point) -> Piece {
        Piece::Line { a, b }
    }

    #[test]
    fn segments_exact_touch_and_miss() {
        // A vertex exactly on the other segment.
        assert_eq!(
            meet(
                &line([0.0, 0.0], [1.0, 1.0]),
                &line([0.1, 0.1], [0.1, 2.0]),
                0.0
            ),
            vec![[0.1, 0.1]]
        );
        // Parallel, apart by one ulp.
        let y = 0.3f64;
        let y2 = f64::from_bits(y.to_bits() + 1);
        assert!(meet(&line([0.0, y], [1.0, y]), &line([0.0, y2], [1.0, y2]), 0.0).is_empty());
        // Collinear overlap.
        assert_eq!(
            meet(
                &line([0.0, 0.0], [2.0, 0.0]),
                &line([1.0, 0.0], [3.0, 0.0]),
                0.0
            )
            .len(),
            2
        );
        // Crossing.
        let x = meet(
            &line([0.0, 0.0], [2.0, 2.0]),
            &line([0.0, 2.0], [2.0, 0.0]),
            0.0,
        );
        assert_eq!(x, vec![[1.0, 1.0]]);
    }

    #[test]
    fn arcs_and_segments_meet_within_tolerance() {
        let arc = Piece::Arc {
            a: [1.0, 0.0],
            b: [0.0, 1.0],
            center: [0.0, 0.0],
            radius: 1.0,
            ccw: true,
        };
        // Tangent line x = 1 touches at (1, 0).
        assert_eq!(meet(&line([1.0, -1.0], [1.0, 1.0]), &arc, 1e-12).len(), 1);
        // A line through the other quadrant misses the piece.
        assert!(meet(&line([-2.0, -0.5], [2.0, -0.5]), &arc, 1e-12).is_empty());
        let arc2 = Piece::Arc {
            a: [2.0, 1.0],
            b: [1.0, 2.0],
            center: [1.0, 1.0],
            radius: 1.0,
            ccw: true,
        };
        assert!(meet(&arc, &arc2, 1e-12).is_empty());
        let arc3 = Piece::Arc {
            a: [1.0, 0.0],
            b: [0.0, 1.0],
            center: [1.0, 1.0],
            radius: 1.0,
            ccw: false,
        };
        assert_eq!(meet(&arc, &arc3, 1e-12).len(), 2);
    }
}
