//! The rules on one shape: finite numbers, positive sizes, simple polygons (no edge meeting
//! another except its neighbours at their shared vertex), holes inside their outer ring and
//! apart, a shape inside the domain (and on r >= 0 in axisymmetric mode), and overlaps
//! between two shapes.
//!
//! Invariants: two segments are compared exactly (adaptive-precision orientation tests);
//! pieces closer than `Ctx::tol` count as touching when an arc is involved; a shape may stick
//! out of the domain by `Ctx::tol_domain` at most.

use crate::design::{DesignError, Item, OutsideDomain, Point, Shape};
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

pub(super) type Fail = (&'static str, String);

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
        let name = |t: &Tagged| {
            if t.lp == 0 {
                format!("edge {} of the polygon", t.idx + 1)
            } else {
                format!("edge {} of hole {}", t.idx + 1, t.lp)
            }
        };
        let key = if p.lp == 0 && q.lp == 0 {
            "polygon"
        } else {
            "holes"
        };
        return Err((key, format!("{} crosses or touches {}", name(&p), name(&q))));
    }
    // With no crossings, one vertex tells where a whole hole lies.
    let outer_only = Outline {
        loops: vec![o.loops[0].clone()],
        open: false,
    };
    for (h, v) in holes.iter().enumerate() {
        if !outer_only.contains(v[0]) {
            return Err(("holes", format!("hole {} is not inside the polygon", h + 1)));
        }
        for (g, w) in holes.iter().enumerate() {
            let other = Outline {
                loops: vec![o.loops[g + 1].clone()],
                open: false,
            };
            if g != h && other.contains(v[0]) {
                return Err((
                    "holes",
                    format!("hole {} lies inside hole {}", h + 1, g + 1),
                ));
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
        return Err((key, "every number of the shape must be finite".into()));
    }
    match shape {
        Shape::Rect { x, y, round } => {
            if x[1] <= x[0] || y[1] <= y[0] {
                return Err((
                    "rect",
                    "a rectangle needs x = [x0, x1] with x0 < x1 and y = [y0, y1] with y0 < y1"
                        .into(),
                ));
            }
            if *round < 0.0 {
                return Err(("round", "round must not be negative".into()));
            }
        }
        Shape::Circle { radius, .. } => {
            if *radius <= 0.0 {
                return Err((
                    "circle",
                    format!("the radius must be positive, got {radius}"),
                ));
            }
        }
        Shape::Ring { inner, outer, .. } => {
            if *inner < 0.0 {
                return Err(("ring", format!("inner must not be negative, got {inner}")));
            }
            if inner >= outer {
                return Err((
                    "ring",
                    format!("inner ({inner}) must be smaller than outer ({outer})"),
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
                    format!("vertex {k} does not exist: the polygon has {total} vertices"),
                ));
            }
            if outer.len() < 3 {
                return Err((
                    "polygon",
                    format!("a polygon needs at least 3 vertices, got {}", outer.len()),
                ));
            }
            if let Some(k) = has_zero_edge(outer, true) {
                return Err((
                    "polygon",
                    format!(
                        "edge {} of the polygon has zero length (repeated vertex)",
                        k + 1
                    ),
                ));
            }
            for (h, v) in holes.iter().enumerate() {
                if v.len() < 3 {
                    return Err((
                        "holes",
                        format!("hole {} needs at least 3 vertices, got {}", h + 1, v.len()),
                    ));
                }
                if let Some(k) = has_zero_edge(v, true) {
                    return Err((
                        "holes",
                        format!(
                            "edge {} of hole {} has zero length (repeated vertex)",
                            k + 1,
                            h + 1
                        ),
                    ));
                }
            }
            if *round < 0.0 {
                return Err(("round", "round must not be negative".into()));
            }
            if signed_area2(outer) == 0.0 {
                return Err((
                    "polygon",
                    "the polygon has no area (its vertices lie on one line)".into(),
                ));
            }
            if let Some(h) = holes.iter().position(|v| signed_area2(v) == 0.0) {
                return Err((
                    "holes",
                    format!("hole {} has no area (its vertices lie on one line)", h + 1),
                ));
            }
            check_simple(outer, holes, ctx.tol)?;
        }
        Shape::Polyline(p) => {
            if p.len() < 2 {
                return Err((
                    "polyline",
                    format!("a polyline needs at least 2 points, got {}", p.len()),
                ));
            }
            if let Some(k) = has_zero_edge(p, false) {
                return Err((
                    "polyline",
                    format!(
                        "segment {} of the polyline has zero length (repeated point)",
                        k + 1
                    ),
                ));
            }
        }
    }
    let o = outline(shape).map_err(|e| (e.key, e.message))?;
    if let Shape::Polygon { round, .. } = shape {
        if *round > 0.0 {
            let items = tag(&o, 0);
            if first_meeting(&items, ctx.tol, |_, _| true, |_| true).is_some() {
                return Err((
                    "round",
                    format!("with round = {round} the rounded outline crosses or touches itself"),
                ));
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
    let o = check_shape(shape, ctx).map_err(|(k, m)| err(item, k, m))?;
    match outside_domain(&o, ctx) {
        None => Ok(o),
        Some(out) => {
            let message = out.summary();
            Err(DesignError {
                outside: Some(Box::new(out)),
                ..err(item, shape_key(shape), message)
            })
        }
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
pub(super) fn overlap(a: &Outline, b: &Outline, ctx: &Ctx) -> Option<&'static str> {
    if !a.bbox().meets(&b.bbox(), ctx.tol) {
        return None;
    }
    let mut items = tag(a, 0);
    items.extend(tag(b, 1));
    let tol = ctx.tol;
    let keep = |p: Point| !ctx.axisymmetric || p[0] >= -tol;
    if first_meeting(&items, tol, |p, q| p.tag != q.tag, keep).is_some() {
        return Some("touches or overlaps");
    }
    if a.contains(probe_point(b, ctx.axisymmetric)) || b.contains(probe_point(a, ctx.axisymmetric))
    {
        return Some("lies inside or around");
    }
    None
}

pub(super) fn err(item: Item, key: &'static str, message: impl Into<String>) -> DesignError {
    DesignError::new(item, key, message)
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
