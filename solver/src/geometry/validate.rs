//! The design rules of the contract that a reader cannot check key by key.
//!
//! Each error names the item and the top-level key of that item at fault (a shape error
//! names the shape's key, such as `"polygon"`, or `"holes"` and `"round"`), so the reader can
//! point at the span. Checks run in file order and stop at the first failure.
//!
//! Tolerances: a shape may stick out of the domain by 1e-9 of the domain's larger side
//! (rounding of user numbers and unit conversion); pieces closer than 1e-12 of the domain's
//! scale count as touching when an arc is involved (two segments are compared exactly).

use super::fillet::plain_loop;
use super::intersect::{first_meeting, tag, Tagged};
use super::outline::{outline, shape_key, Outline};
use crate::design::{
    Charge, Design, DesignError, Drive, Item, Mode, OutsideDomain, Point, Shape, Side,
};

/// Where shapes must lie and how close counts as touching.
struct Ctx {
    axisymmetric: bool,
    x: [f64; 2],
    y: [f64; 2],
    /// Allowed overhang beyond the domain, m.
    tol_domain: f64,
    /// Distance counted as touching for arcs, m.
    tol: f64,
}

type Fail = (&'static str, String);

fn finite_points<'a>(mut pts: impl Iterator<Item = &'a Point>) -> bool {
    pts.all(|p| p[0].is_finite() && p[1].is_finite())
}

fn all_finite(shape: &Shape) -> bool {
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
        } => {
            finite_points(outer.iter())
                && holes.iter().all(|h| finite_points(h.iter()))
                && round.is_finite()
        }
        Shape::Polyline(p) => finite_points(p.iter()),
    }
}

fn has_zero_edge(v: &[Point], closed: bool) -> Option<usize> {
    let n = v.len();
    let m = if closed { n } else { n.saturating_sub(1) };
    (0..m).find(|&k| v[k] == v[(k + 1) % n])
}

/// Self-crossings of the user's vertex loops (in the user's vertex order, so edge numbers
/// match the file): outer boundary first, then the holes.
fn check_simple(outer: &[Point], holes: &[Vec<Point>], tol: f64) -> Result<(), Fail> {
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
fn check_shape(shape: &Shape, ctx: &Ctx) -> Result<Outline, Fail> {
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
        } => {
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
            if super::outline::signed_area2(outer) == 0.0 {
                return Err((
                    "polygon",
                    "the polygon has no area (its vertices lie on one line)".into(),
                ));
            }
            if let Some(h) = holes
                .iter()
                .position(|v| super::outline::signed_area2(v) == 0.0)
            {
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
fn outside_domain(o: &Outline, ctx: &Ctx) -> Option<OutsideDomain> {
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
fn checked_outline(shape: &Shape, ctx: &Ctx, item: Item) -> Result<Outline, DesignError> {
    let o = check_shape(shape, ctx).map_err(|(k, m)| err(item, k, m))?;
    match outside_domain(&o, ctx) {
        None => Ok(o),
        Some(out) => {
            let message = out.describe(|v| format!("{v:e}"), "m");
            Err(DesignError {
                outside: Some(Box::new(out)),
                ..err(item, shape_key(shape), message)
            })
        }
    }
}

/// A point of the outline's boundary that counts (x >= 0 in axisymmetric mode).
fn probe_point(o: &Outline, axisymmetric: bool) -> Point {
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
fn overlap(a: &Outline, b: &Outline, ctx: &Ctx) -> Option<&'static str> {
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

fn err(item: Item, key: &'static str, message: impl Into<String>) -> DesignError {
    DesignError::new(item, key, message)
}

fn positive(v: f64) -> bool {
    v.is_finite() && v > 0.0
}

fn in_domain(p: Point, ctx: &Ctx) -> bool {
    let t = ctx.tol_domain;
    p[0].is_finite()
        && p[1].is_finite()
        && p[0] >= ctx.x[0] - t
        && p[0] <= ctx.x[1] + t
        && p[1] >= ctx.y[0] - t
        && p[1] <= ctx.y[1] + t
}

/// Largest coordinate of a domain, m.
pub const MAX_LENGTH: f64 = 1e100;
/// Smallest width or height of a domain, m.
pub const MIN_LENGTH: f64 = 1e-100;

/// Smallest relative permittivity accepted (far below any material; a subnormal one would
/// make the operator's weights vanish).
pub const MIN_PERMITTIVITY: f64 = 1e-12;
/// Largest relative permittivity accepted (far above any material; near the double range
/// the operator's weights overflow).
pub const MAX_PERMITTIVITY: f64 = 1e12;

/// Why a positive relative permittivity is refused, if it is.
fn permittivity_out_of_range(eps: f64) -> Option<String> {
    (!(MIN_PERMITTIVITY..=MAX_PERMITTIVITY).contains(&eps)).then(|| {
        format!(
            "the relative permittivity must lie between {MIN_PERMITTIVITY:e} and \
             {MAX_PERMITTIVITY:e}, got {eps:e}"
        )
    })
}

/// Checks the geometric and physical rules of the contract (see [`crate::design::validate`]).
pub fn validate_design(d: &Design) -> Result<(), DesignError> {
    let axisymmetric = d.mode == Mode::Axisymmetric;
    let dom = &d.domain;
    if !(dom.x[0].is_finite() && dom.x[1].is_finite() && dom.x[1] > dom.x[0]) {
        return Err(err(
            Item::Grid,
            "x",
            "the domain needs x = [x0, x1] with finite x0 < x1",
        ));
    }
    if !(dom.y[0].is_finite() && dom.y[1].is_finite() && dom.y[1] > dom.y[0]) {
        return Err(err(
            Item::Grid,
            "y",
            "the domain needs y = [y0, y1] with finite y0 < y1",
        ));
    }
    if !positive(dom.cell) {
        return Err(err(
            Item::Grid,
            "cell",
            format!("the cell size must be a positive number, got {}", dom.cell),
        ));
    }
    // Lengths far beyond any design: their squares and products (areas of revolution,
    // energies) would leave the range of double precision. Shapes lie inside the domain,
    // so bounding the domain bounds every coordinate.
    for (key, r) in [("x", dom.x), ("y", dom.y)] {
        let (reach, size) = (r[0].abs().max(r[1].abs()), r[1] - r[0]);
        if !(reach <= MAX_LENGTH && size >= MIN_LENGTH) {
            return Err(err(
                Item::Grid,
                key,
                format!(
                    "the domain spans [{:e}, {:e}] m: fieldgrid computes with domains between \
                     {MIN_LENGTH:e} m and {MAX_LENGTH:e} m",
                    r[0], r[1]
                ),
            ));
        }
    }
    if axisymmetric && dom.x[0] != 0.0 {
        return Err(err(
            Item::Grid,
            "x",
            "in axisymmetric mode x is the radius and must start at 0",
        ));
    }
    if let Some(depth) = d.depth {
        if axisymmetric {
            return Err(err(
                Item::Top,
                "depth",
                "depth applies to planar designs only",
            ));
        }
        if !positive(depth) {
            return Err(err(
                Item::Top,
                "depth",
                format!("depth must be a positive number, got {depth}"),
            ));
        }
    }
    let sides = [
        ("left", d.sides.left),
        ("right", d.sides.right),
        ("bottom", d.sides.bottom),
        ("top", d.sides.top),
    ];
    for (k, (name, s)) in sides.iter().enumerate() {
        match s {
            Side::Fixed(v) if !v.is_finite() => {
                return Err(err(
                    Item::Sides,
                    name,
                    format!("the potential must be a finite number, got {v}"),
                ));
            }
            Side::Axis if !(axisymmetric && k == 0) => {
                return Err(err(
                    Item::Sides,
                    name,
                    "only the left side of an axisymmetric design is the axis",
                ));
            }
            _ if axisymmetric && k == 0 && *s != Side::Axis => {
                return Err(err(
                    Item::Sides,
                    name,
                    "in axisymmetric mode the left side is the axis and takes no condition",
                ));
            }
            _ => {}
        }
    }
    if !positive(d.background.permittivity) {
        return Err(err(
            Item::Background,
            "permittivity",
            "the relative permittivity must be a positive number",
        ));
    }
    if let Some(m) = permittivity_out_of_range(d.background.permittivity) {
        return Err(err(Item::Background, "permittivity", m));
    }
    if d.background.strength.is_some_and(|s| !positive(s)) {
        return Err(err(
            Item::Background,
            "strength",
            "the strength must be a positive number (V/m)",
        ));
    }
    let size = (dom.x[1] - dom.x[0]).max(dom.y[1] - dom.y[0]);
    let scale = size
        .max(dom.x[0].abs())
        .max(dom.x[1].abs())
        .max(dom.y[0].abs())
        .max(dom.y[1].abs());
    let ctx = Ctx {
        axisymmetric,
        x: dom.x,
        y: dom.y,
        tol_domain: 1e-9 * size,
        tol: 1e-12 * scale,
    };

    let mut outlines: Vec<Outline> = Vec::with_capacity(d.conductors.len());
    for (i, c) in d.conductors.iter().enumerate() {
        let item = Item::Conductor(i);
        if d.conductors[..i].iter().any(|o| o.name == c.name) {
            return Err(err(
                item,
                "name",
                format!("a conductor named `{}` already exists", c.name),
            ));
        }
        if let Drive::Fixed(v) = c.drive {
            if !v.is_finite() {
                return Err(err(
                    item,
                    "potential",
                    format!("the potential must be a finite number, got {v}"),
                ));
            }
        }
        let o = checked_outline(&c.shape, &ctx, item)?;
        for (j, prev) in outlines.iter().enumerate() {
            if let Some(how) = overlap(prev, &o, &ctx) {
                let key = shape_key(&c.shape);
                return Err(err(
                    item,
                    key,
                    format!(
                        "conductor `{}` {how} conductor `{}`: conductors must not touch or overlap",
                        c.name, d.conductors[j].name
                    ),
                ));
            }
        }
        outlines.push(o);
    }
    for (i, e) in d.dielectrics.iter().enumerate() {
        let item = Item::Dielectric(i);
        if !positive(e.permittivity) {
            return Err(err(
                item,
                "permittivity",
                format!(
                    "the relative permittivity must be a positive number, got {}",
                    e.permittivity
                ),
            ));
        }
        if let Some(m) = permittivity_out_of_range(e.permittivity) {
            return Err(err(item, "permittivity", m));
        }
        if e.strength.is_some_and(|s| !positive(s)) {
            return Err(err(
                item,
                "strength",
                "the strength must be a positive number (V/m)",
            ));
        }
        if matches!(e.shape, Shape::Polyline(_)) {
            return Err(err(
                item,
                "polyline",
                "a polyline has no area: only conductors may be polylines",
            ));
        }
        checked_outline(&e.shape, &ctx, item)?;
    }
    for (i, c) in d.charges.iter().enumerate() {
        let item = Item::Charge(i);
        match c {
            Charge::Region { density, shape, .. } => {
                if !density.is_finite() {
                    return Err(err(
                        item,
                        "density",
                        format!("the density must be a finite number, got {density}"),
                    ));
                }
                if matches!(shape, Shape::Polyline(_)) {
                    return Err(err(
                        item,
                        "polyline",
                        "a polyline has no area: only conductors may be polylines",
                    ));
                }
                checked_outline(shape, &ctx, item)?;
            }
            Charge::Concentrated { at, amount, .. } => {
                if !amount.is_finite() {
                    return Err(err(
                        item,
                        "amount",
                        format!("the amount must be a finite number, got {amount}"),
                    ));
                }
                if !in_domain(*at, &ctx) {
                    return Err(err(item, "at", "the charge must lie inside the domain"));
                }
                if axisymmetric && at[0] != 0.0 {
                    return Err(err(item, "at", "in axisymmetric mode a concentrated charge is a point charge and must lie on the axis (x = 0)"));
                }
            }
        }
    }
    for (i, p) in d.probes.iter().enumerate() {
        if !in_domain(p.at, &ctx) {
            return Err(err(
                Item::Probe(i),
                "at",
                "the probe must lie inside the domain",
            ));
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::design::{Conductor, Dielectric, Domain, Probe, Sides};

    fn base() -> Design {
        Design {
            domain: Domain {
                x: [0.0, 10.0],
                y: [0.0, 5.0],
                cell: 0.1,
            },
            ..Design::default()
        }
    }

    fn cond(name: &str, shape: Shape) -> Conductor {
        Conductor {
            name: name.into(),
            drive: Drive::Fixed(1.0),
            shape,
        }
    }

    fn rect(x: [f64; 2], y: [f64; 2]) -> Shape {
        Shape::Rect { x, y, round: 0.0 }
    }

    fn poly(v: &[[f64; 2]]) -> Shape {
        Shape::Polygon {
            outer: v.to_vec(),
            holes: vec![],
            round: 0.0,
        }
    }

    #[track_caller]
    fn fails(d: &Design, item: Item, key: &str) {
        match validate_design(d) {
            Err(e) => assert_eq!((e.item, e.key), (item, key), "{}", e.message),
            Ok(()) => panic!("expected an error on {item:?} {key}"),
        }
    }

    #[test]
    fn a_sound_design_passes() {
        let mut d = base();
        d.conductors.push(cond("a", rect([1.0, 2.0], [1.0, 2.0])));
        d.conductors.push(cond(
            "b",
            Shape::Circle {
                center: [5.0, 2.5],
                radius: 1.0,
            },
        ));
        d.conductors.push(cond(
            "c",
            Shape::Polyline(vec![[7.0, 1.0], [9.0, 1.0], [9.0, 4.0]]),
        ));
        d.dielectrics.push(Dielectric {
            name: "s".into(),
            permittivity: 4.0,
            strength: None,
            shape: rect([0.0, 10.0], [0.0, 1.5]),
        });
        d.charges.push(Charge::Concentrated {
            name: "q".into(),
            at: [3.0, 3.0],
            amount: 1e-9,
        });
        d.probes.push(Probe {
            name: "p".into(),
            at: [10.0, 5.0],
        });
        validate_design(&d).unwrap();
    }

    #[test]
    fn grid_rules() {
        let mut d = base();
        d.domain.cell = 0.0;
        fails(&d, Item::Grid, "cell");
        let mut d = base();
        d.domain.x = [1.0, 1.0];
        fails(&d, Item::Grid, "x");
        let mut d = base();
        d.domain.y = [0.0, f64::NAN];
        fails(&d, Item::Grid, "y");
        let mut d = base();
        d.mode = Mode::Axisymmetric;
        d.sides.left = Side::Axis;
        d.domain.x = [1.0, 3.0];
        fails(&d, Item::Grid, "x");
    }

    #[test]
    fn top_side_and_background_rules() {
        let mut d = base();
        d.depth = Some(-1.0);
        fails(&d, Item::Top, "depth");
        let mut d = base();
        d.sides = Sides {
            top: Side::Fixed(f64::INFINITY),
            ..Sides::default()
        };
        fails(&d, Item::Sides, "top");
        let mut d = base();
        d.mode = Mode::Axisymmetric;
        fails(&d, Item::Sides, "left");
        let mut d = base();
        d.sides.right = Side::Axis;
        fails(&d, Item::Sides, "right");
        let mut d = base();
        d.background.permittivity = 0.0;
        fails(&d, Item::Background, "permittivity");
        let mut d = base();
        d.background.strength = Some(-3.0);
        fails(&d, Item::Background, "strength");
    }

    #[test]
    fn conductor_number_rules() {
        let mut d = base();
        d.conductors.push(Conductor {
            name: "a".into(),
            drive: Drive::Fixed(f64::NAN),
            shape: rect([1.0, 2.0], [1.0, 2.0]),
        });
        fails(&d, Item::Conductor(0), "potential");
        let mut d = base();
        d.conductors.push(cond(
            "a",
            Shape::Circle {
                center: [f64::NAN, 1.0],
                radius: 1.0,
            },
        ));
        fails(&d, Item::Conductor(0), "circle");
        let mut d = base();
        d.conductors.push(cond(
            "a",
            Shape::Circle {
                center: [2.0, 2.0],
                radius: 0.0,
            },
        ));
        fails(&d, Item::Conductor(0), "circle");
    }

    #[test]
    fn ring_rules() {
        let mut d = base();
        d.conductors.push(cond(
            "a",
            Shape::Ring {
                center: [2.0, 2.0],
                inner: 1.0,
                outer: 1.0,
            },
        ));
        fails(&d, Item::Conductor(0), "ring");
        let mut d = base();
        d.conductors.push(cond(
            "a",
            Shape::Ring {
                center: [2.0, 2.0],
                inner: -0.5,
                outer: 1.0,
            },
        ));
        fails(&d, Item::Conductor(0), "ring");
        let mut d = base();
        d.conductors.push(cond(
            "a",
            Shape::Ring {
                center: [2.0, 2.0],
                inner: 0.0,
                outer: 1.0,
            },
        ));
        validate_design(&d).unwrap();
    }

    #[test]
    fn rect_and_round_rules() {
        let mut d = base();
        d.conductors.push(cond("a", rect([2.0, 1.0], [1.0, 2.0])));
        fails(&d, Item::Conductor(0), "rect");
        let mut d = base();
        d.conductors.push(cond(
            "a",
            Shape::Rect {
                x: [1.0, 2.0],
                y: [1.0, 3.0],
                round: 0.6,
            },
        ));
        fails(&d, Item::Conductor(0), "round");
        let mut d = base();
        d.conductors.push(cond(
            "a",
            Shape::Rect {
                x: [1.0, 2.0],
                y: [1.0, 3.0],
                round: -0.1,
            },
        ));
        fails(&d, Item::Conductor(0), "round");
        let mut d = base();
        d.conductors.push(cond(
            "a",
            Shape::Rect {
                x: [1.0, 2.0],
                y: [1.0, 3.0],
                round: 0.5,
            },
        ));
        validate_design(&d).unwrap();
    }

    #[test]
    fn polygon_rules() {
        let mut d = base();
        d.conductors
            .push(cond("a", poly(&[[1.0, 1.0], [2.0, 1.0]])));
        fails(&d, Item::Conductor(0), "polygon");
        // A bow tie crosses itself.
        let mut d = base();
        d.conductors.push(cond(
            "a",
            poly(&[[1.0, 1.0], [2.0, 2.0], [2.0, 1.0], [1.0, 2.0]]),
        ));
        fails(&d, Item::Conductor(0), "polygon");
        // A vertex exactly on a non-adjacent edge touches it.
        let mut d = base();
        d.conductors.push(cond(
            "a",
            poly(&[[1.0, 1.0], [3.0, 1.0], [3.0, 3.0], [2.0, 1.0], [1.0, 3.0]]),
        ));
        fails(&d, Item::Conductor(0), "polygon");
        // A repeated vertex gives a zero-length edge.
        let mut d = base();
        d.conductors.push(cond(
            "a",
            poly(&[[1.0, 1.0], [2.0, 1.0], [2.0, 1.0], [1.0, 2.0]]),
        ));
        fails(&d, Item::Conductor(0), "polygon");
        // All vertices on a line.
        let mut d = base();
        d.conductors
            .push(cond("a", poly(&[[1.0, 1.0], [2.0, 1.0], [3.0, 1.0]])));
        fails(&d, Item::Conductor(0), "polygon");
        // A spike folding straight back.
        let mut d = base();
        d.conductors.push(cond(
            "a",
            poly(&[[1.0, 1.0], [3.0, 1.0], [2.0, 1.0], [2.0, 2.0]]),
        ));
        fails(&d, Item::Conductor(0), "polygon");
    }

    #[test]
    fn hole_rules() {
        let outer = vec![[1.0, 1.0], [5.0, 1.0], [5.0, 4.0], [1.0, 4.0]];
        let hole = |v: &[[f64; 2]]| v.to_vec();
        let with = |holes: Vec<Vec<[f64; 2]>>| {
            let mut d = base();
            d.conductors.push(cond(
                "a",
                Shape::Polygon {
                    outer: outer.clone(),
                    holes,
                    round: 0.0,
                },
            ));
            d
        };
        validate_design(&with(vec![hole(&[[2.0, 2.0], [3.0, 2.0], [3.0, 3.0]])])).unwrap();
        // Hole crossing the outer boundary.
        fails(
            &with(vec![hole(&[[2.0, 2.0], [6.0, 2.0], [3.0, 3.0]])]),
            Item::Conductor(0),
            "holes",
        );
        // Hole outside.
        fails(
            &with(vec![hole(&[[6.0, 2.0], [7.0, 2.0], [7.0, 3.0]])]),
            Item::Conductor(0),
            "holes",
        );
        // Two holes crossing each other.
        let h1 = hole(&[[2.0, 2.0], [3.0, 2.0], [3.0, 3.0], [2.0, 3.0]]);
        let h2 = hole(&[[2.5, 2.5], [3.5, 2.5], [3.5, 3.5], [2.5, 3.5]]);
        fails(&with(vec![h1.clone(), h2]), Item::Conductor(0), "holes");
        // A hole inside another hole.
        let h3 = hole(&[[2.2, 2.2], [2.8, 2.2], [2.8, 2.8]]);
        fails(&with(vec![h1, h3]), Item::Conductor(0), "holes");
        // Too few vertices.
        fails(
            &with(vec![hole(&[[2.0, 2.0], [3.0, 2.0]])]),
            Item::Conductor(0),
            "holes",
        );
    }

    #[test]
    fn round_too_large_for_a_notch() {
        // A notch 0.2 wide: its two concave fillets fit its bottom up to r = 0.1.
        let v = [
            [1.0, 1.0],
            [4.0, 1.0],
            [4.0, 4.0],
            [2.6, 4.0],
            [2.6, 2.0],
            [2.4, 2.0],
            [2.4, 4.0],
            [1.0, 4.0],
        ];
        let mut d = base();
        d.conductors.push(cond(
            "a",
            Shape::Polygon {
                outer: v.to_vec(),
                holes: vec![],
                round: 0.1,
            },
        ));
        validate_design(&d).unwrap();
        let mut d = base();
        d.conductors.push(cond(
            "a",
            Shape::Polygon {
                outer: v.to_vec(),
                holes: vec![],
                round: 0.15,
            },
        ));
        fails(&d, Item::Conductor(0), "round");
    }

    #[test]
    fn polyline_rules() {
        let mut d = base();
        d.conductors
            .push(cond("a", Shape::Polyline(vec![[1.0, 1.0]])));
        fails(&d, Item::Conductor(0), "polyline");
        let mut d = base();
        d.conductors.push(cond(
            "a",
            Shape::Polyline(vec![[1.0, 1.0], [1.0, 1.0], [2.0, 1.0]]),
        ));
        fails(&d, Item::Conductor(0), "polyline");
        let mut d = base();
        d.dielectrics.push(Dielectric {
            name: "s".into(),
            permittivity: 2.0,
            strength: None,
            shape: Shape::Polyline(vec![[1.0, 1.0], [2.0, 1.0]]),
        });
        fails(&d, Item::Dielectric(0), "polyline");
        let mut d = base();
        d.charges.push(Charge::Region {
            name: "q".into(),
            density: 1.0,
            shape: Shape::Polyline(vec![[1.0, 1.0], [2.0, 1.0]]),
        });
        fails(&d, Item::Charge(0), "polyline");
    }

    #[test]
    fn shapes_must_lie_inside_the_domain() {
        let mut d = base();
        d.conductors.push(cond("a", rect([9.0, 10.5], [1.0, 2.0])));
        fails(&d, Item::Conductor(0), "rect");
        // Touching a side is allowed, and so is rounding of 1e-10 relative.
        let mut d = base();
        d.conductors
            .push(cond("a", rect([9.0, 10.0 + 1e-10], [0.0, 2.0])));
        validate_design(&d).unwrap();
        let mut d = base();
        d.dielectrics.push(Dielectric {
            name: "s".into(),
            permittivity: 2.0,
            strength: None,
            shape: Shape::Circle {
                center: [1.0, 1.0],
                radius: 1.5,
            },
        });
        fails(&d, Item::Dielectric(0), "circle");
        let mut d = base();
        d.charges.push(Charge::Region {
            name: "q".into(),
            density: 1.0,
            shape: rect([-1.0, 1.0], [1.0, 2.0]),
        });
        fails(&d, Item::Charge(0), "rect");
    }

    #[test]
    fn axisymmetric_shapes_may_cross_the_axis() {
        let mut d = base();
        d.mode = Mode::Axisymmetric;
        d.sides.left = Side::Axis;
        d.conductors.push(cond(
            "sphere",
            Shape::Circle {
                center: [0.0, 2.5],
                radius: 1.0,
            },
        ));
        d.conductors
            .push(cond("disc", rect([-1.0, 2.0], [4.0, 4.5])));
        validate_design(&d).unwrap();
        // Entirely on the negative side: outside.
        d.conductors
            .push(cond("ghost", rect([-2.0, -1.0], [0.5, 1.0])));
        fails(&d, Item::Conductor(2), "rect");
        // Still bounded on the right.
        let mut d2 = base();
        d2.mode = Mode::Axisymmetric;
        d2.sides.left = Side::Axis;
        d2.conductors
            .push(cond("a", rect([-1.0, 11.0], [1.0, 2.0])));
        fails(&d2, Item::Conductor(0), "rect");
    }

    #[test]
    fn axisymmetric_point_charge_on_the_axis() {
        let mut d = base();
        d.mode = Mode::Axisymmetric;
        d.sides.left = Side::Axis;
        d.charges.push(Charge::Concentrated {
            name: "q".into(),
            at: [0.5, 2.0],
            amount: 1e-12,
        });
        fails(&d, Item::Charge(0), "at");
        d.charges[0] = Charge::Concentrated {
            name: "q".into(),
            at: [0.0, 2.0],
            amount: 1e-12,
        };
        validate_design(&d).unwrap();
        d.charges[0] = Charge::Concentrated {
            name: "q".into(),
            at: [0.0, 2.0],
            amount: f64::NAN,
        };
        fails(&d, Item::Charge(0), "amount");
    }

    #[test]
    fn charge_probe_and_dielectric_numbers() {
        let mut d = base();
        d.charges.push(Charge::Concentrated {
            name: "q".into(),
            at: [11.0, 2.0],
            amount: 1e-12,
        });
        fails(&d, Item::Charge(0), "at");
        let mut d = base();
        d.charges.push(Charge::Region {
            name: "q".into(),
            density: f64::INFINITY,
            shape: rect([1.0, 2.0], [1.0, 2.0]),
        });
        fails(&d, Item::Charge(0), "density");
        let mut d = base();
        d.probes.push(Probe {
            name: "p".into(),
            at: [1.0, -1.0],
        });
        fails(&d, Item::Probe(0), "at");
        let mut d = base();
        d.dielectrics.push(Dielectric {
            name: "s".into(),
            permittivity: -2.0,
            strength: None,
            shape: rect([1.0, 2.0], [1.0, 2.0]),
        });
        fails(&d, Item::Dielectric(0), "permittivity");
        let mut d = base();
        d.dielectrics.push(Dielectric {
            name: "s".into(),
            permittivity: 2.0,
            strength: Some(0.0),
            shape: rect([1.0, 2.0], [1.0, 2.0]),
        });
        fails(&d, Item::Dielectric(0), "strength");
        // Dielectrics may overlap each other and conductors.
        let mut d = base();
        d.conductors.push(cond("a", rect([1.0, 2.0], [1.0, 2.0])));
        for _ in 0..2 {
            d.dielectrics.push(Dielectric {
                name: "s".into(),
                permittivity: 2.0,
                strength: None,
                shape: rect([0.5, 3.0], [0.5, 3.0]),
            });
        }
        validate_design(&d).unwrap();
    }

    #[test]
    fn conductor_names_unique() {
        let mut d = base();
        d.conductors.push(cond("a", rect([1.0, 2.0], [1.0, 2.0])));
        d.conductors.push(cond("a", rect([3.0, 4.0], [1.0, 2.0])));
        fails(&d, Item::Conductor(1), "name");
    }

    #[test]
    fn conductors_must_not_overlap() {
        let cases: Vec<(Shape, Shape)> = vec![
            // Crossing outlines.
            (rect([1.0, 3.0], [1.0, 3.0]), rect([2.0, 4.0], [2.0, 4.0])),
            // Touching along an edge.
            (rect([1.0, 2.0], [1.0, 2.0]), rect([2.0, 3.0], [1.0, 2.0])),
            // One inside the other.
            (
                rect([1.0, 5.0], [1.0, 4.0]),
                Shape::Circle {
                    center: [3.0, 2.5],
                    radius: 0.5,
                },
            ),
            (
                Shape::Circle {
                    center: [3.0, 2.5],
                    radius: 0.5,
                },
                rect([1.0, 5.0], [1.0, 4.0]),
            ),
            // A circle tangent to a rectangle.
            (
                rect([1.0, 2.0], [1.0, 2.0]),
                Shape::Circle {
                    center: [3.0, 1.5],
                    radius: 1.0,
                },
            ),
            // Two circles touching.
            (
                Shape::Circle {
                    center: [2.0, 2.0],
                    radius: 1.0,
                },
                Shape::Circle {
                    center: [4.0, 2.0],
                    radius: 1.0,
                },
            ),
            // A polyline crossing a rectangle, and one inside it.
            (
                rect([1.0, 2.0], [1.0, 2.0]),
                Shape::Polyline(vec![[0.5, 1.5], [3.0, 1.5]]),
            ),
            (
                rect([1.0, 2.0], [1.0, 2.0]),
                Shape::Polyline(vec![[1.2, 1.5], [1.8, 1.5]]),
            ),
            // Two polylines crossing.
            (
                Shape::Polyline(vec![[1.0, 1.0], [3.0, 3.0]]),
                Shape::Polyline(vec![[1.0, 3.0], [3.0, 1.0]]),
            ),
            // Inside a ring's material, and not in its hole: overlap.
            (
                Shape::Ring {
                    center: [3.0, 2.5],
                    inner: 1.0,
                    outer: 2.0,
                },
                Shape::Circle {
                    center: [3.0, 1.0],
                    radius: 0.2,
                },
            ),
        ];
        for (a, b) in cases {
            let mut d = base();
            d.conductors.push(cond("a", a.clone()));
            d.conductors.push(cond("b", b.clone()));
            fails(&d, Item::Conductor(1), shape_key(&b));
        }
        // A conductor in a ring's hole is fine, and so are near neighbours.
        let mut d = base();
        d.conductors.push(cond(
            "ring",
            Shape::Ring {
                center: [3.0, 2.5],
                inner: 1.0,
                outer: 2.0,
            },
        ));
        d.conductors.push(cond(
            "core",
            Shape::Circle {
                center: [3.0, 2.5],
                radius: 0.5,
            },
        ));
        d.conductors
            .push(cond("next", rect([5.0 + 1e-6, 6.0], [1.0, 2.0])));
        validate_design(&d).unwrap();
    }

    #[test]
    fn axisymmetric_overlap_only_counts_for_r_positive() {
        // Two rectangles that meet only at x < 0 do not overlap.
        let mut d = base();
        d.mode = Mode::Axisymmetric;
        d.sides.left = Side::Axis;
        // Their slanted edges cross at x = -0.8.
        d.conductors.push(cond(
            "a",
            poly(&[[-2.0, 1.0], [1.0, 1.0], [1.0, 1.5], [-2.0, 3.5]]),
        ));
        d.conductors.push(cond(
            "b",
            poly(&[[-2.0, 2.5], [1.0, 3.0], [1.0, 4.0], [-2.0, 4.0]]),
        ));
        validate_design(&d).unwrap();
        d.mode = Mode::Planar;
        d.sides.left = Side::Ground;
        d.domain.x = [-3.0, 10.0];
        fails(&d, Item::Conductor(1), "polygon");
    }
}
