//! The rules on one shape: finite numbers, positive sizes, simple polygons (no edge meeting
//! another except its neighbours at their shared vertex), holes inside their outer ring and
//! apart, a shape inside the domain (and on r >= 0 in axisymmetric mode), and overlaps
//! between two shapes.
//!
//! Invariants: two segments are compared exactly (adaptive-precision orientation tests);
//! pieces closer than `Ctx::tol` count as touching when an arc is involved; a shape may stick
//! out of the domain by `Ctx::tol_domain` at most.

use crate::design::{
    Boundary, DesignError, Edge, Fault, Item, Meeting, OutsideDomain, Point, Shape, ShapeFault,
};
use crate::geometry::fillet::plain_loop;
use crate::geometry::intersect::{first_meeting, tag, Tagged};
use crate::geometry::outline::{outline, shape_key, signed_area2, Outline};

/// Where shapes must lie and how close counts as touching.
pub(super) struct Ctx {
    pub(super) axisymmetric: bool,
    pub(super) x: [f64; 2],
    pub(super) y: [f64; 2],
    /// Allowed overhang beyond the domain, m.
    pub(super) tol_domain: f64,
    /// Distance counted as touching for arcs, m.
    pub(super) tol: f64,
}

/// A shape rule broken: the shape key at fault and the rule.
pub(super) type Fail = (&'static str, ShapeFault);

pub(super) fn finite_points<'a>(mut pts: impl Iterator<Item = &'a Point>) -> bool {
    pts.all(|p| p[0].is_finite() && p[1].is_finite())
}

pub(super) fn all_finite(shape: &Shape) -> bool {
    match shape {
        Shape::Rect { x, y, round } => x.iter().chain(y).chain([round]).all(|v| v.is_finite()),
        Shape::Circle { center, radius } => {
            finite_points([center].into_iter()) && radius.is_finite()
        }
        Shape::Ring {
            center,
            inner,
            outer,
        } => finite_points([center].into_iter()) && inner.is_finite() && outer.is_finite(),
        Shape::Polygon {
            outer,
            holes,
            round,
            ..
        } => {
            finite_points(outer.iter())
                && holes.iter().all(|h| finite_points(h.iter()))
                && round.is_finite()
        }
        Shape::Polyline(p) => finite_points(p.iter()),
    }
}

pub(super) fn has_zero_edge(v: &[Point], closed: bool) -> Option<usize> {
    let n = v.len();
    let m = if closed { n } else { n.saturating_sub(1) };
    (0..m).find(|&k| v[k] == v[(k + 1) % n])
}

/// Self-crossings of the user's vertex loops (in the user's vertex order, so edge numbers
/// match the file): outer boundary first, then the holes.
pub(super) fn check_simple(outer: &[Point], holes: &[Vec<Point>], tol: f64) -> Result<(), Fail> {
    let loops: Vec<&[Point]> = std::iter::once(outer)
        .chain(holes.iter().map(|h| h.as_slice()))
        .collect();
    let o = Outline {
        loops: loops.iter().map(|v| plain_loop(v)).collect(),
        open: false,
    };
    let items: Vec<Tagged> = tag(&o, 0);
    if let Some((p, q, _)) = first_meeting(&items, tol, |_, _| true, |_| true) {
        let (p, q) = if (p.lp, p.idx) <= (q.lp, q.idx) {
            (p, q)
        } else {
            (q, p)
        };
        let edge = |t: &Tagged| Edge {
            boundary: if t.lp == 0 {
                Boundary::Outer
            } else {
                Boundary::Hole(t.lp - 1)
            },
            index: t.idx,
        };
        let key = if p.lp == 0 && q.lp == 0 {
            "polygon"
        } else {
            "holes"
        };
        return Err((
            key,
            ShapeFault::EdgesMeet {
                first: edge(&p),
                second: edge(&q),
            },
        ));
    }
    // With no crossings, one vertex tells where a whole hole lies.
    let outer_only = Outline {
        loops: vec![o.loops[0].clone()],
        open: false,
    };
    for (h, v) in holes.iter().enumerate() {
        if !outer_only.contains(v[0]) {
            return Err(("holes", ShapeFault::HoleOutside { hole: h }));
        }
        for (g, w) in holes.iter().enumerate() {
            let other = Outline {
                loops: vec![o.loops[g + 1].clone()],
                open: false,
            };
            if g != h && other.contains(v[0]) {
                return Err(("holes", ShapeFault::HoleInHole { hole: h, other: g }));
            }
            let _ = w;
        }
    }
    Ok(())
}

/// Checks one shape and returns its outline.
pub(super) fn check_shape(shape: &Shape, ctx: &Ctx) -> Result<Outline, Fail> {
    let key = shape_key(shape);
    if !all_finite(shape) {
        return Err((key, ShapeFault::NotFinite));
    }
    match shape {
        Shape::Rect { x, y, round } => {
            if x[1] <= x[0] || y[1] <= y[0] {
                return Err(("rect", ShapeFault::EmptyRect { x: *x, y: *y }));
            }
            if *round < 0.0 {
                return Err(("round", ShapeFault::NegativeRound { round: *round }));
            }
        }
        Shape::Circle { radius, .. } => {
            if *radius <= 0.0 {
                return Err(("circle", ShapeFault::RadiusNotPositive { radius: *radius }));
            }
        }
        Shape::Ring { inner, outer, .. } => {
            if *inner < 0.0 {
                return Err(("ring", ShapeFault::RingInnerNegative { inner: *inner }));
            }
            if inner >= outer {
                return Err((
                    "ring",
                    ShapeFault::RingInnerNotSmaller {
                        inner: *inner,
                        outer: *outer,
                    },
                ));
            }
        }
        Shape::Polygon {
            outer,
            holes,
            round,
            corners,
        } => {
            let total = outer.len() + holes.iter().map(Vec::len).sum::<usize>();
            if let Some(k) = corners.iter().flatten().find(|&&k| k >= total) {
                return Err((
                    "round_corners",
                    ShapeFault::NoSuchVertex {
                        vertex: *k,
                        vertices: total,
                    },
                ));
            }
            let too_few = |boundary, count, needed| ShapeFault::TooFewVertices {
                boundary,
                count,
                needed,
                distinct: false,
            };
            if outer.len() < 3 {
                return Err(("polygon", too_few(Boundary::Outer, outer.len(), 3)));
            }
            if let Some(k) = has_zero_edge(outer, true) {
                let edge = Edge {
                    boundary: Boundary::Outer,
                    index: k,
                };
                return Err(("polygon", ShapeFault::ZeroEdge(edge)));
            }
            for (h, v) in holes.iter().enumerate() {
                if v.len() < 3 {
                    return Err(("holes", too_few(Boundary::Hole(h), v.len(), 3)));
                }
                if let Some(k) = has_zero_edge(v, true) {
                    let edge = Edge {
                        boundary: Boundary::Hole(h),
                        index: k,
                    };
                    return Err(("holes", ShapeFault::ZeroEdge(edge)));
                }
            }
            if *round < 0.0 {
                return Err(("round", ShapeFault::NegativeRound { round: *round }));
            }
            if signed_area2(outer) == 0.0 {
                let boundary = Boundary::Outer;
                return Err(("polygon", ShapeFault::NoArea { boundary }));
            }
            if let Some(h) = holes.iter().position(|v| signed_area2(v) == 0.0) {
                let boundary = Boundary::Hole(h);
                return Err(("holes", ShapeFault::NoArea { boundary }));
            }
            check_simple(outer, holes, ctx.tol)?;
        }
        Shape::Polyline(p) => {
            if p.len() < 2 {
                let fault = ShapeFault::TooFewVertices {
                    boundary: Boundary::Polyline,
                    count: p.len(),
                    needed: 2,
                    distinct: false,
                };
                return Err(("polyline", fault));
            }
            if let Some(k) = has_zero_edge(p, false) {
                let edge = Edge {
                    boundary: Boundary::Polyline,
                    index: k,
                };
                return Err(("polyline", ShapeFault::ZeroEdge(edge)));
            }
        }
    }
    let o = outline(shape).map_err(|e| (e.key, e.fault))?;
    if let Shape::Polygon { round, .. } = shape {
        if *round > 0.0 {
            let items = tag(&o, 0);
            if first_meeting(&items, ctx.tol, |_, _| true, |_| true).is_some() {
                return Err(("round", ShapeFault::RoundedOutlineMeets { round: *round }));
            }
        }
    }
    Ok(o)
}

/// The extents of an outline that does not lie inside the domain, if it does not.
pub(super) fn outside_domain(o: &Outline, ctx: &Ctx) -> Option<OutsideDomain> {
    let b = o.bbox();
    let t = ctx.tol_domain;
    let inside_x = if ctx.axisymmetric {
        b.max[0] > 0.0
    } else {
        b.min[0] >= ctx.x[0] - t
    };
    let inside = inside_x
        && b.max[0] <= ctx.x[1] + t
        && b.min[1] >= ctx.y[0] - t
        && b.max[1] <= ctx.y[1] + t;
    (!inside).then_some(OutsideDomain {
        shape: [[b.min[0], b.max[0]], [b.min[1], b.max[1]]],
        domain: [ctx.x, ctx.y],
        axisymmetric: ctx.axisymmetric,
    })
}

/// Checks one shape of `item`, inside the domain, and returns its outline.
pub(super) fn checked_outline(
    shape: &Shape,
    ctx: &Ctx,
    item: Item,
) -> Result<Outline, DesignError> {
    let o = check_shape(shape, ctx).map_err(|(k, f)| err(item, k, Fault::Shape(f)))?;
    match outside_domain(&o, ctx) {
        None => Ok(o),
        Some(out) => Err(err(item, shape_key(shape), Fault::Outside(out))),
    }
}

/// A point of the outline's boundary that counts (x >= 0 in axisymmetric mode).
pub(super) fn probe_point(o: &Outline, axisymmetric: bool) -> Point {
    let mut best = o.loops[0][0].start();
    for p in o.pieces() {
        let s = p.start();
        if !axisymmetric {
            return s;
        }
        if s[0] > best[0] {
            best = s;
        }
    }
    best
}

/// Why two conductors may not both stand, if they touch or one holds the other.
pub(super) fn overlap(a: &Outline, b: &Outline, ctx: &Ctx) -> Option<Meeting> {
    if !a.bbox().meets(&b.bbox(), ctx.tol) {
        return None;
    }
    let mut items = tag(a, 0);
    items.extend(tag(b, 1));
    let tol = ctx.tol;
    let keep = |p: Point| !ctx.axisymmetric || p[0] >= -tol;
    if first_meeting(&items, tol, |p, q| p.tag != q.tag, keep).is_some() {
        return Some(Meeting::Touch);
    }
    if a.contains(probe_point(b, ctx.axisymmetric)) || b.contains(probe_point(a, ctx.axisymmetric))
    {
        return Some(Meeting::Inside);
    }
    None
}

pub(super) fn err(item: Item, key: &'static str, fault: Fault) -> DesignError {
    DesignError::new(item, key, fault)
}

pub(super) fn positive(v: f64) -> bool {
    v.is_finite() && v > 0.0
}

pub(super) fn in_domain(p: Point, ctx: &Ctx) -> bool {
    let t = ctx.tol_domain;
    p[0].is_finite()
        && p[1].is_finite()
        && p[0] >= ctx.x[0] - t
        && p[0] <= ctx.x[1] + t
        && p[1] >= ctx.y[0] - t
        && p[1] <= ctx.y[1] + t
}
