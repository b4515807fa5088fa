//! The design rules of the contract that a reader cannot check key by key.
//!
//! Each error names the item and the top-level key of that item at fault (a shape error
//! names the shape's key, such as `"polygon"`, or `"holes"` and `"round"`), so the reader can
//! point at the span, and carries the rule broken as a [`Fault`] with its data (the reader
//! words it). Checks run in file order and stop at the first failure.
//!
//! Tolerances: a shape may stick out of the domain by 1e-9 of the domain's larger side
//! (rounding of user numbers and unit conversion); pieces closer than 1e-12 of the domain's
//! scale count as touching when an arc is involved (two segments are compared exactly).

mod shapes;

use super::outline::{shape_key, Outline};
use crate::design::{
    Charge, Design, DesignError, Drive, Fault, Item, Mode, OutsideDomain, Shape, Side,
};
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

/// The fault of a positive relative permittivity outside the accepted range, if it is.
fn permittivity_out_of_range(eps: f64) -> Option<Fault> {
    (!(MIN_PERMITTIVITY..=MAX_PERMITTIVITY).contains(&eps)).then_some(Fault::PermittivityRange {
        value: eps,
        min: MIN_PERMITTIVITY,
        max: MAX_PERMITTIVITY,
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
    for (key, range) in [("x", dom.x), ("y", dom.y)] {
        if !(range[0].is_finite() && range[1].is_finite() && range[1] > range[0]) {
            return Err(err(Item::Grid, key, Fault::DomainExtent { range }));
        }
    }
    if !positive(dom.cell) {
        let cell = dom.cell;
        return Err(err(Item::Grid, "cell", Fault::CellNotPositive { cell }));
    }
    // Lengths far beyond any design: their squares and products (areas of revolution,
    // energies) would leave the range of double precision. Shapes lie inside the domain,
    // so bounding the domain bounds every coordinate.
    for (key, r) in [("x", dom.x), ("y", dom.y)] {
        let (reach, size) = (r[0].abs().max(r[1].abs()), r[1] - r[0]);
        if !(reach <= MAX_LENGTH && size >= MIN_LENGTH) {
            let fault = Fault::DomainScale {
                range: r,
                min: MIN_LENGTH,
                max: MAX_LENGTH,
            };
            return Err(err(Item::Grid, key, fault));
        }
    }
    if axisymmetric && dom.x[0] != 0.0 {
        let x0 = dom.x[0];
        return Err(err(Item::Grid, "x", Fault::AxisNotAtZero { x0 }));
    }
    if let Some(depth) = d.depth {
        if axisymmetric {
            return Err(err(Item::Top, "depth", Fault::DepthAxisymmetric));
        }
        if !positive(depth) {
            let fault = Fault::NotPositive { value: depth };
            return Err(err(Item::Top, "depth", fault));
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
                return Err(err(Item::Sides, name, Fault::NotFinite { value: *v }));
            }
            Side::Axis if !(axisymmetric && k == 0) => {
                return Err(err(Item::Sides, name, Fault::AxisOffLeft));
            }
            _ if axisymmetric && k == 0 && *s != Side::Axis => {
                return Err(err(Item::Sides, name, Fault::LeftIsAxis));
            }
            _ => {}
        }
    }
    let bg = d.background;
    if !positive(bg.permittivity) {
        let fault = Fault::NotPositive {
            value: bg.permittivity,
        };
        return Err(err(Item::Background, "permittivity", fault));
    }
    if let Some(f) = permittivity_out_of_range(bg.permittivity) {
        return Err(err(Item::Background, "permittivity", f));
    }
    if let Some(value) = bg.strength.filter(|s| !positive(*s)) {
        let fault = Fault::NotPositive { value };
        return Err(err(Item::Background, "strength", fault));
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
            let name = c.name.clone();
            let fault = Fault::DuplicateConductor { name };
            return Err(err(Item::Conductor(i), "name", fault));
        }
        if let Drive::Fixed(v) = c.drive {
            if !v.is_finite() {
                let fault = Fault::NotFinite { value: v };
                return Err(err(Item::Conductor(i), "potential", fault));
            }
        }
        let mine = outlines.len();
        for (p, shape) in c.shapes().enumerate() {
            let item = piece_item(i, p);
            let o = checked_outline(shape, &ctx, item)?;
            for (j, prev) in &outlines[..mine] {
                if let Some(how) = overlap(prev, &o, &ctx) {
                    let fault = Fault::ConductorsMeet {
                        conductor: c.name.clone(),
                        other: d.conductors[*j].name.clone(),
                        how,
                    };
                    return Err(err(item, shape_key(shape), fault));
                }
            }
            outlines.push((i, o));
        }
    }
    for (i, e) in d.dielectrics.iter().enumerate() {
        let item = Item::Dielectric(i);
        if !positive(e.permittivity) {
            let fault = Fault::NotPositive {
                value: e.permittivity,
            };
            return Err(err(item, "permittivity", fault));
        }
        if let Some(f) = permittivity_out_of_range(e.permittivity) {
            return Err(err(item, "permittivity", f));
        }
        if let Some(value) = e.strength.filter(|s| !positive(*s)) {
            return Err(err(item, "strength", Fault::NotPositive { value }));
        }
        if matches!(e.shape, Shape::Polyline(_)) {
            return Err(err(item, "polyline", Fault::PolylineArea));
        }
        checked_outline(&e.shape, &ctx, item)?;
    }
    for (i, c) in d.charges.iter().enumerate() {
        let item = Item::Charge(i);
        match c {
            Charge::Region { density, shape, .. } => {
                if !density.is_finite() {
                    let fault = Fault::NotFinite { value: *density };
                    return Err(err(item, "density", fault));
                }
                if matches!(shape, Shape::Polyline(_)) {
                    return Err(err(item, "polyline", Fault::PolylineArea));
                }
                checked_outline(shape, &ctx, item)?;
            }
            Charge::Concentrated { at, amount, .. } => {
                if !amount.is_finite() {
                    let fault = Fault::NotFinite { value: *amount };
                    return Err(err(item, "amount", fault));
                }
                if !in_domain(*at, &ctx) {
                    return Err(err(item, "at", Fault::Outside(outside_point(*at, &ctx))));
                }
                if axisymmetric && at[0] != 0.0 {
                    let fault = Fault::PointChargeOffAxis { x: at[0] };
                    return Err(err(item, "at", fault));
                }
            }
        }
    }
    for (i, p) in d.probes.iter().enumerate() {
        if !in_domain(p.at, &ctx) {
            let fault = Fault::Outside(outside_point(p.at, &ctx));
            return Err(err(Item::Probe(i), "at", fault));
        }
    }
    Ok(())
}

/// A point outside the domain as the fault's data.
fn outside_point(at: crate::design::Point, ctx: &Ctx) -> OutsideDomain {
    OutsideDomain {
        shape: [[at[0], at[0]], [at[1], at[1]]],
        domain: [ctx.x, ctx.y],
        axisymmetric: ctx.axisymmetric,
    }
}

#[cfg(test)]
mod tests;
