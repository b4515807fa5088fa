//! The design rules of the contract that a reader cannot check key by key.
//!
//! Each error names the item and the top-level key of that item at fault (a shape error
//! names the shape's key, such as `"polygon"`, or `"holes"` and `"round"`), so the reader can
//! point at the span. Checks run in file order and stop at the first failure.
//!
//! Tolerances: a shape may stick out of the domain by 1e-9 of the domain's larger side
//! (rounding of user numbers and unit conversion); pieces closer than 1e-12 of the domain's
//! scale count as touching when an arc is involved (two segments are compared exactly).

mod shapes;

use super::outline::{shape_key, Outline};
use crate::design::{Charge, Design, DesignError, Drive, Item, Mode, Shape, Side};
use shapes::{checked_outline, err, in_domain, overlap, positive, Ctx};

/// Largest coordinate of a domain, m.
pub const MAX_LENGTH: f64 = 1e100;
/// Smallest width or height of a domain, m.
pub const MIN_LENGTH: f64 = 1e-100;

/// Smallest relative permittivity accepted: vacuum's. Every material's static relative
/// permittivity is at least 1 (a polarisable medium only adds to the vacuum's displacement;
/// common practice), so a smaller value is a typing slip, not a material.
pub const MIN_PERMITTIVITY: f64 = 1.0;
/// Largest relative permittivity accepted (far above any material; near the double range
/// the operator's weights overflow).
pub const MAX_PERMITTIVITY: f64 = 1e12;

/// Why a positive relative permittivity is refused, if it is.
fn permittivity_out_of_range(eps: f64) -> Option<String> {
    (!(MIN_PERMITTIVITY..=MAX_PERMITTIVITY).contains(&eps)).then(|| {
        format!(
            "the relative permittivity must lie between {MIN_PERMITTIVITY} (vacuum; no \
             material's static permittivity is smaller) and {MAX_PERMITTIVITY:e}, got {}",
            if (1e-4..1e6).contains(&eps.abs()) {
                format!("{eps}")
            } else {
                format!("{eps:e}")
            }
        )
    })
}

/// The item of piece `p` of conductor `i` in errors.
fn piece_item(i: usize, p: usize) -> Item {
    if p == 0 {
        Item::Conductor(i)
    } else {
        Item::ConductorPiece(i, p)
    }
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

    // Every piece of every earlier conductor; the pieces of one conductor may touch and
    // overlap each other (the conductor is their union), pieces of two conductors may not.
    let mut outlines: Vec<(usize, Outline)> = Vec::new();
    for (i, c) in d.conductors.iter().enumerate() {
        if d.conductors[..i].iter().any(|o| o.name == c.name) {
            return Err(err(
                Item::Conductor(i),
                "name",
                format!("a conductor named `{}` already exists", c.name),
            ));
        }
        if let Drive::Fixed(v) = c.drive {
            if !v.is_finite() {
                return Err(err(
                    Item::Conductor(i),
                    "potential",
                    format!("the potential must be a finite number, got {v}"),
                ));
            }
        }
        let mine = outlines.len();
        for (p, shape) in c.shapes().enumerate() {
            let item = piece_item(i, p);
            let o = checked_outline(shape, &ctx, item)?;
            for (j, prev) in &outlines[..mine] {
                if let Some(how) = overlap(prev, &o, &ctx) {
                    return Err(err(
                        item,
                        shape_key(shape),
                        format!(
                            "conductor `{}` {how} conductor `{}`: two conductors must not touch \
                             or overlap; if they are one piece of metal (a pour and its via \
                             fence, say), give both the same `name` and potential so they form \
                             one conductor, and if they are separate, leave a gap between them",
                            c.name, d.conductors[*j].name
                        ),
                    ));
                }
            }
            outlines.push((i, o));
        }
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
            let out = crate::design::OutsideDomain {
                shape: [[p.at[0], p.at[0]], [p.at[1], p.at[1]]],
                domain: [ctx.x, ctx.y],
                axisymmetric: ctx.axisymmetric,
            };
            return Err(DesignError {
                message: out.summary().to_string(),
                outside: Some(Box::new(out)),
                ..err(Item::Probe(i), "at", "")
            });
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests;
