//! Pieces of an outline: straight segments and quadrant arcs, their bounding boxes, lengths,
//! moments, flattening, and the construction of arcs split at their quadrant points.
//!
//! Invariants: a [`Piece::Arc`] never leaves one quadrant of its circle (it is monotone in x
//! and y, and its bounding box is that of its end points); its end points are stored, not
//! recomputed from angles, so neighbouring pieces share them exactly. Lengths are metres.

use crate::design::Point;
use std::f64::consts::{FRAC_PI_2, PI, TAU};

/// One piece of an outline, monotone in x and in y.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Piece {
    /// Straight segment from `a` to `b`.
    Line {
        /// Start, m.
        a: Point,
        /// End, m.
        b: Point,
    },
    /// Circular arc from `a` to `b` around `center`, within one quadrant of its circle.
    Arc {
        /// Start, m (on the circle up to rounding).
        a: Point,
        /// End, m.
        b: Point,
        /// Centre of the circle, m.
        center: Point,
        /// Radius, m, > 0.
        radius: f64,
        /// True when the arc turns counter-clockwise about its centre.
        ccw: bool,
    },
}

/// An axis-aligned bounding box, m.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct BBox {
    /// Smallest x and y.
    pub min: Point,
    /// Largest x and y.
    pub max: Point,
}

impl BBox {
    /// The empty box (min > max), neutral for [`BBox::union`].
    pub const EMPTY: BBox = BBox {
        min: [f64::INFINITY; 2],
        max: [f64::NEG_INFINITY; 2],
    };

    /// The smallest box holding both.
    pub fn union(self, o: BBox) -> BBox {
        BBox {
            min: [self.min[0].min(o.min[0]), self.min[1].min(o.min[1])],
            max: [self.max[0].max(o.max[0]), self.max[1].max(o.max[1])],
        }
    }

    /// True when the boxes overlap or touch, each grown by `tol`.
    pub fn meets(&self, o: &BBox, tol: f64) -> bool {
        self.min[0] <= o.max[0] + tol
            && o.min[0] <= self.max[0] + tol
            && self.min[1] <= o.max[1] + tol
            && o.min[1] <= self.max[1] + tol
    }

    /// True when `p` lies in the box grown by `tol`.
    pub fn holds(&self, p: Point, tol: f64) -> bool {
        p[0] >= self.min[0] - tol
            && p[0] <= self.max[0] + tol
            && p[1] >= self.min[1] - tol
            && p[1] <= self.max[1] + tol
    }
}

/// `phi - sin(phi)` without cancellation for small angles.
pub(crate) fn phi_minus_sin(phi: f64) -> f64 {
    if phi < 0.1 {
        let p2 = phi * phi;
        phi * p2 / 6.0
            * (1.0 - p2 / 20.0 * (1.0 - p2 / 42.0 * (1.0 - p2 / 72.0 * (1.0 - p2 / 110.0))))
    } else {
        phi - phi.sin()
    }
}

pub(crate) fn sub(p: Point, q: Point) -> Point {
    [p[0] - q[0], p[1] - q[1]]
}

fn norm(v: Point) -> f64 {
    v[0].hypot(v[1])
}

/// Sign of the offset of a quadrant arc from its centre along one axis (+1 or -1).
fn side(a: f64, b: f64, c: f64) -> f64 {
    if 0.5 * (a + b) - c < 0.0 {
        -1.0
    } else {
        1.0
    }
}

impl Piece {
    /// Start point.
    pub fn start(&self) -> Point {
        match *self {
            Piece::Line { a, .. } | Piece::Arc { a, .. } => a,
        }
    }

    /// End point.
    pub fn end(&self) -> Point {
        match *self {
            Piece::Line { b, .. } | Piece::Arc { b, .. } => b,
        }
    }

    /// `[min, max]` of x over the piece (those of its end points, by monotonicity).
    pub fn x_range(&self) -> [f64; 2] {
        let (a, b) = (self.start(), self.end());
        [a[0].min(b[0]), a[0].max(b[0])]
    }

    /// `[min, max]` of y over the piece.
    pub fn y_range(&self) -> [f64; 2] {
        let (a, b) = (self.start(), self.end());
        [a[1].min(b[1]), a[1].max(b[1])]
    }

    /// Bounding box of the piece.
    pub fn bbox(&self) -> BBox {
        let (x, y) = (self.x_range(), self.y_range());
        BBox {
            min: [x[0], y[0]],
            max: [x[1], y[1]],
        }
    }

    /// The y at which the piece meets the line x = c, for c in its x range (for a vertical
    /// piece: its start). End points are returned exactly; the value is clamped to the
    /// piece's y range.
    pub fn y_at(&self, c: f64) -> f64 {
        let (a, b) = (self.start(), self.end());
        if c == a[0] {
            return a[1];
        }
        if c == b[0] {
            return b[1];
        }
        let [lo, hi] = self.y_range();
        let y = match *self {
            Piece::Line { a, b } => a[1] + (c - a[0]) * ((b[1] - a[1]) / (b[0] - a[0])),
            Piece::Arc {
                a,
                b,
                center,
                radius,
                ..
            } => {
                let dx = c - center[0];
                let s = ((radius - dx) * (radius + dx)).max(0.0).sqrt();
                center[1] + side(a[1], b[1], center[1]) * s
            }
        };
        y.clamp(lo, hi)
    }

    /// The x at which the piece meets the line y = c, for c in its y range.
    pub fn x_at(&self, c: f64) -> f64 {
        self.transposed().y_at(c)
    }

    /// The piece mirrored in the line x = y (x and y swapped; arcs change their sense).
    pub fn transposed(&self) -> Piece {
        let t = |p: Point| [p[1], p[0]];
        match *self {
            Piece::Line { a, b } => Piece::Line { a: t(a), b: t(b) },
            Piece::Arc {
                a,
                b,
                center,
                radius,
                ccw,
            } => Piece::Arc {
                a: t(a),
                b: t(b),
                center: t(center),
                radius,
                ccw: !ccw,
            },
        }
    }

    /// The same piece traversed backwards.
    pub fn reversed(&self) -> Piece {
        match *self {
            Piece::Line { a, b } => Piece::Line { a: b, b: a },
            Piece::Arc {
                a,
                b,
                center,
                radius,
                ccw,
            } => Piece::Arc {
                a: b,
                b: a,
                center,
                radius,
                ccw: !ccw,
            },
        }
    }

    /// The part of this piece's carrier (line or circle) from `p` to `q`, both on the piece.
    pub fn between(&self, p: Point, q: Point) -> Piece {
        match *self {
            Piece::Line { .. } => Piece::Line { a: p, b: q },
            Piece::Arc {
                center,
                radius,
                ccw,
                ..
            } => Piece::Arc {
                a: p,
                b: q,
                center,
                radius,
                ccw,
            },
        }
    }

    /// Angle subtended by an arc piece at its centre (0 for a segment), from its chord.
    pub fn sweep(&self) -> f64 {
        match *self {
            Piece::Line { .. } => 0.0,
            Piece::Arc { a, b, radius, .. } => {
                2.0 * (0.5 * norm(sub(b, a)) / radius).min(1.0).asin()
            }
        }
    }

    /// Length of the piece, m.
    pub fn length(&self) -> f64 {
        match *self {
            Piece::Line { a, b } => norm(sub(b, a)),
            Piece::Arc { radius, .. } => radius * self.sweep(),
        }
    }

    /// `∫ (x - xr) dy` along the piece, m^2: summed over a closed loop with its filled side
    /// on the left it is the enclosed area, whatever `xr`.
    pub fn moment_area(&self, xr: f64) -> f64 {
        let (a, b) = (self.start(), self.end());
        let chord = 0.5 * ((a[0] - xr) + (b[0] - xr)) * (b[1] - a[1]);
        match *self {
            Piece::Line { .. } => chord,
            Piece::Arc { radius, ccw, .. } => {
                let seg = 0.5 * radius * radius * phi_minus_sin(self.sweep());
                if ccw {
                    chord + seg
                } else {
                    chord - seg
                }
            }
        }
    }

    /// `∫ (x^2 - xr^2)/2 dy` along the piece, m^3: summed over a closed loop it is the
    /// first moment `∫∫ x dA` of the enclosed region.
    pub fn moment_radial(&self, xr: f64) -> f64 {
        let (a, b) = (self.start(), self.end());
        let (ua, ub) = (a[0] - xr, b[0] - xr);
        let chord = 0.5 * (b[1] - a[1]) * ((ua * ua + ua * ub + ub * ub) / 3.0 + xr * (ua + ub));
        match *self {
            Piece::Line { .. } => chord,
            Piece::Arc {
                radius,
                ccw,
                center,
                ..
            } => {
                let half = 0.5 * norm(sub(b, a));
                if half == 0.0 {
                    return chord;
                }
                let phi = 2.0 * (half / radius).min(1.0).asin();
                let area = 0.5 * radius * radius * phi_minus_sin(phi);
                // Unit vector from the centre towards the arc's middle (the chord's middle
                // lies on it, the arc being less than a half turn).
                let m = sub([0.5 * (a[0] + b[0]), 0.5 * (a[1] + b[1])], center);
                let bx = m[0] / norm(m);
                // First moment of the circular segment: area * centroid x, the centroid
                // being 4 r sin^3(phi/2) / (3 (phi - sin phi)) from the centre.
                let s = half / radius;
                let seg = area * center[0] + 2.0 / 3.0 * radius * radius * radius * s * s * s * bx;
                if ccw {
                    chord + seg
                } else {
                    chord - seg
                }
            }
        }
    }

    /// Appends points along the piece after its start, up to and including its end, so that
    /// the chords stay within `tol` of an arc (tol > 0).
    pub fn flatten_into(&self, tol: f64, out: &mut Vec<Point>) {
        if let Piece::Arc {
            a,
            center,
            radius,
            ccw,
            b,
        } = *self
        {
            let sweep = self.sweep();
            let max_step = if tol >= radius {
                PI
            } else {
                2.0 * (1.0 - tol / radius).acos()
            };
            let n = ((sweep / max_step.max(1e-6)).ceil() as usize).clamp(1, 1 << 16);
            let t0 = (a[1] - center[1]).atan2(a[0] - center[0]);
            let dir = if ccw { 1.0 } else { -1.0 };
            for k in 1..n {
                let t = t0 + dir * sweep * k as f64 / n as f64;
                out.push([center[0] + radius * t.cos(), center[1] + radius * t.sin()]);
            }
            out.push(b);
        } else {
            out.push(self.end());
        }
    }
}

/// A full circle as four quadrant arcs, counter-clockwise when `ccw`.
pub(crate) fn circle_loop(center: Point, r: f64, ccw: bool) -> Vec<Piece> {
    let [cx, cy] = center;
    let pts = [[cx + r, cy], [cx, cy + r], [cx - r, cy], [cx, cy - r]];
    let mut l: Vec<Piece> = (0..4)
        .map(|k| Piece::Arc {
            a: pts[k],
            b: pts[(k + 1) % 4],
            center,
            radius: r,
            ccw: true,
        })
        .collect();
    if !ccw {
        l = l.iter().rev().map(Piece::reversed).collect();
    }
    l
}

/// Appends the arc from `a` to `b` about `center` (less than a full turn), split into
/// quadrant pieces. Split points closer than 1e-12 rad to an end are not made.
pub(crate) fn push_arc(out: &mut Vec<Piece>, center: Point, r: f64, a: Point, b: Point, ccw: bool) {
    let [cx, cy] = center;
    let ta = (a[1] - cy).atan2(a[0] - cx);
    let tb = (b[1] - cy).atan2(b[0] - cx);
    let dir = if ccw { 1.0 } else { -1.0 };
    let sweep = (dir * (tb - ta)).rem_euclid(TAU);
    let extremes = [[cx + r, cy], [cx, cy + r], [cx - r, cy], [cx, cy - r]];
    let mut splits: Vec<(f64, Point)> = (0..4)
        .filter_map(|k| {
            let o = (dir * (k as f64 * FRAC_PI_2 - ta)).rem_euclid(TAU);
            (o > 1e-12 && o < sweep - 1e-12).then_some((o, extremes[k]))
        })
        .collect();
    splits.sort_by(|p, q| p.0.total_cmp(&q.0));
    let mut from = a;
    for (_, p) in splits {
        out.push(Piece::Arc {
            a: from,
            b: p,
            center,
            radius: r,
            ccw,
        });
        from = p;
    }
    out.push(Piece::Arc {
        a: from,
        b,
        center,
        radius: r,
        ccw,
    });
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn phi_minus_sin_is_continuous_at_the_switch() {
        let p = 0.1 - 1e-12;
        let (a, b) = (phi_minus_sin(p), p - p.sin());
        assert!((a - b).abs() < 1e-12 * a, "{a} {b}");
    }

    #[test]
    fn flatten_stays_within_tolerance() {
        let circle = circle_loop([0.0, 0.0], 1.0, true);
        let mut pts = vec![circle[0].start()];
        for p in &circle {
            p.flatten_into(1e-3, &mut pts);
        }
        assert_eq!(pts.first(), pts.last());
        for w in pts.windows(2) {
            let m = [(w[0][0] + w[1][0]) / 2.0, (w[0][1] + w[1][1]) / 2.0];
            assert!(1.0 - norm(m) <= 1e-3 + 1e-12);
        }
    }
}
