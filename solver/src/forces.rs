//! The force on a conductor from the Maxwell stress weighted over a volume around it, where
//! the conductor stands in one material, clear of every other body.
//!
//! With a weight `theta` equal to 1 on and near the conductor and 0 beyond a band around it,
//! the divergence theorem turns the stress on the conductor's surface into
//! `F_i = -integral T_ij d(theta)/dx_j dV` over the band, wherever the stress is free of
//! divergence there (one material, no free charge, no other conductor, no side). The band
//! lies away from the surface, so the singular field at sharp corners and the cut cells'
//! one-sided differences never enter: the integrand is smooth and the node quadrature is
//! second order, and the force converges as the energy does. (The weighted-volume form of
//! the stress integral is the one finite-element codes use for forces, often called
//! Coulomb's virtual work: J. L. Coulomb, "A methodology for the determination of global
//! electromechanical quantities from a finite element analysis", IEEE Trans. Magn. 19 (1983)
//! 2514-2519; from memory.)
//!
//! The weight is a smooth step (C2 quintic) of the distance to the conductor's outline,
//! from 1 at `inner` to 0 at `outer`, both fixed from the design's lattice so that the coarse
//! lattices of the error estimate integrate the same weight.
//!
//! Invariants: a force is given only when every node within `outer` of the box, outside the
//! conductor, is a free node of the conductor's material with no free charge, not on a side
//! (the axis of an axisymmetric design excepted), and every node of the band has no cut link;
//! else the reason ([`NoBand`]) and the caller integrates over a path at the surface. Planar: N/m; axisymmetric:
//! N along the axis only.

use crate::design::{Design, Mode, Shape, Side};
use crate::post::FieldEval;
use crate::raster::NO_CONDUCTOR;
use crate::EPS0;

/// How a conductor's force was integrated.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[non_exhaustive]
pub enum ForceMethod {
    /// The stress weighted over a band clear of the conductor ([`weighted_force`]): converges
    /// as the capacitance does.
    Volume,
    /// The stress on the lattice path one node layer outside the conductor
    /// ([`crate::post::force_on_path`]), for the reason given: the path meets the singular
    /// field at the conductor's corners and junctions and converges slowly.
    Path(NoBand),
}

/// Why a conductor's force cannot be weighted over a band around it.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[non_exhaustive]
pub enum NoBand {
    /// The conductor touches more than one material (it lies on a dielectric interface):
    /// the stress has a divergence (the force on the dielectric) inside any band.
    Interface,
    /// Another body, a side or free charge touches the conductor, or it has no free node
    /// beside it: there is no gap for a band.
    NoGap,
    /// The gap to the nearest obstacle is too narrow for a band of [`BAND_CELLS`] cells
    /// clear of the cut cells.
    Narrow,
}

/// The weight of a conductor's volume force.
#[derive(Clone, Debug, PartialEq)]
pub struct Weight {
    shapes: Vec<Shape>,
    inner: f64,
    outer: f64,
    material: u16,
}

/// Share of the gap to the nearest obstacle where the weight starts to fall.
const INNER: f64 = 0.2;
/// Share of the gap where it reaches 0.
const OUTER: f64 = 0.8;
/// Fewest cells across the band.
pub const BAND_CELLS: f64 = 4.0;

/// Distance from q to the segment a-b, with the unit vector from the segment to q.
fn to_segment(q: [f64; 2], a: [f64; 2], b: [f64; 2]) -> (f64, [f64; 2]) {
    let (ux, uy) = (b[0] - a[0], b[1] - a[1]);
    let l2 = ux * ux + uy * uy;
    let t = if l2 > 0.0 {
        (((q[0] - a[0]) * ux + (q[1] - a[1]) * uy) / l2).clamp(0.0, 1.0)
    } else {
        0.0
    };
    let (dx, dy) = (q[0] - a[0] - t * ux, q[1] - a[1] - t * uy);
    let d = dx.hypot(dy);
    (
        d,
        if d > 0.0 {
            [dx / d, dy / d]
        } else {
            [0.0, 0.0]
        },
    )
}

/// Distance from q to a closed outline (0 inside), with its gradient.
fn to_outline(q: [f64; 2], pts: &[[f64; 2]]) -> (f64, [f64; 2]) {
    let mut best = (f64::INFINITY, [0.0, 0.0]);
    let mut inside = false;
    for (i, &a) in pts.iter().enumerate() {
        let b = pts[(i + 1) % pts.len()];
        let s = to_segment(q, a, b);
        if s.0 < best.0 {
            best = s;
        }
        if (a[1] > q[1]) != (b[1] > q[1])
            && q[0] < a[0] + (q[1] - a[1]) / (b[1] - a[1]) * (b[0] - a[0])
        {
            inside = !inside;
        }
    }
    if inside {
        (0.0, [0.0, 0.0])
    } else {
        best
    }
}

/// Distance from q to a shape as drawn (rounding ignored: it only takes metal away), 0 on
/// and inside it, with its gradient.
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
        Shape::Polyline(p) => p.windows(2).map(|w| to_segment(q, w[0], w[1])).fold(
            (f64::INFINITY, [0.0, 0.0]),
            |a, b| if b.0 < a.0 { b } else { a },
        ),
    }
}

impl Weight {
    /// Distance from (x, y) to the conductor, m, with its gradient.
    fn distance(&self, x: f64, y: f64) -> (f64, [f64; 2]) {
        self.shapes
            .iter()
            .map(|s| to_shape([x, y], s))
            .fold(
                (f64::INFINITY, [0.0, 0.0]),
                |a, b| if b.0 < a.0 { b } else { a },
            )
    }

    /// The weight's gradient at (x, y), 1/m.
    fn gradient(&self, x: f64, y: f64) -> [f64; 2] {
        let (d, g) = self.distance(x, y);
        let w = self.outer - self.inner;
        let t = (d - self.inner) / w;
        if !(t > 0.0 && t < 1.0) {
            return [0.0, 0.0];
        }
        let ds = 30.0 * t * t * (1.0 - t) * (1.0 - t) / w;
        [-ds * g[0], -ds * g[1]]
    }
}

/// Whether node p is one the stress may not cross: a fixed node of another body or a side,
/// another material, free charge, or a node on a side (the axis excepted).
struct Obstacles<'a> {
    field: &'a FieldEval<'a>,
    design: &'a Design,
    k: usize,
    material: u16,
    charged: Vec<bool>,
}

impl Obstacles<'_> {
    fn at(&self, p: usize) -> bool {
        let op = self.field.op;
        let g = &op.grid;
        let r = self.field.raster;
        let (i, j) = (p % g.nx, p / g.nx);
        let own = r.conductor[p] != NO_CONDUCTOR && r.conductor[p] as usize == self.k;
        if own {
            return false;
        }
        let axis = self.design.mode == Mode::Axisymmetric && self.design.sides.left == Side::Axis;
        !op.stencil.unknown[p]
            || r.material[p] != self.material
            || self.charged[p]
            || (i == 0 && !axis)
            || i + 1 == g.nx
            || j == 0
            || j + 1 == g.ny
    }
}

fn obstacles<'a>(
    field: &'a FieldEval<'a>,
    design: &'a Design,
    k: usize,
    material: u16,
) -> Obstacles<'a> {
    let mut charged = vec![false; field.op.grid.len()];
    for &(p, s) in &field.op.source {
        if s != 0.0 {
            charged[p as usize] = true;
        }
    }
    Obstacles {
        field,
        design,
        k,
        material,
        charged,
    }
}

/// The weight of conductor k's volume force on this lattice (the design's own), or why the
/// conductor does not stand in one material clear of every other body by enough cells for a
/// band.
pub fn weight(field: &FieldEval, design: &Design, k: usize) -> Result<Weight, NoBand> {
    let c = design.conductors.get(k).ok_or(NoBand::NoGap)?;
    let op = field.op;
    let mut material = None;
    for l in op.links.iter().filter(|l| l.target as usize == k) {
        let m = field.raster.material[l.node as usize];
        if *material.get_or_insert(m) != m {
            return Err(NoBand::Interface);
        }
    }
    let material = material.ok_or(NoBand::NoGap)?;
    let mut w = Weight {
        shapes: c.shapes().cloned().collect(),
        inner: 0.0,
        outer: 0.0,
        material,
    };
    let obs = obstacles(field, design, k, material);
    let g = &op.grid;
    let mut gap = f64::INFINITY;
    for p in 0..g.len() {
        if obs.at(p) {
            gap = gap.min(w.distance(g.x(p % g.nx), g.y(p / g.nx)).0);
        }
    }
    if !gap.is_finite() || gap <= 0.0 {
        return Err(NoBand::NoGap);
    }
    w.inner = INNER * gap;
    w.outer = OUTER * gap;
    // Enough cells across the band (the largest cell up to the obstacle counts), and nothing
    // but regular nodes in it.
    let band = w.outer - w.inner;
    for p in 0..g.len() {
        let (i, j) = (p % g.nx, p / g.nx);
        let d = w.distance(g.x(i), g.y(j)).0;
        if d <= gap {
            let h = g.dual_x(i).1 - g.dual_x(i).0;
            if h.max(g.dual_len_y(j)) * BAND_CELLS > band {
                return Err(NoBand::Narrow);
            }
        }
        if d > w.inner && d < w.outer && !op.links_of(p).is_empty() {
            return Err(NoBand::Narrow);
        }
    }
    Ok(w)
}

/// The force on conductor k from the stress weighted by `w` over this lattice's nodes, or
/// `None` when an obstacle or a cut link lies within the weight's reach on this lattice.
pub fn weighted_force(
    field: &FieldEval,
    design: &Design,
    k: usize,
    w: &Weight,
) -> Option<[f64; 2]> {
    let op = field.op;
    let g = &op.grid;
    let obs = obstacles(field, design, k, w.material);
    let eps = EPS0 * crate::material::of(design, w.material).permittivity;
    let axi = design.mode == Mode::Axisymmetric;
    let mut f = [0.0f64; 2];
    for p in 0..g.len() {
        let (i, j) = (p % g.nx, p / g.nx);
        let (x, y) = (g.x(i), g.y(j));
        let d = w.distance(x, y).0;
        if d > w.outer {
            continue;
        }
        if obs.at(p) {
            return None;
        }
        let gt = w.gradient(x, y);
        if gt == [0.0, 0.0] {
            continue;
        }
        if !op.links_of(p).is_empty() {
            return None;
        }
        let e = field.at(p);
        let e2 = e[0] * e[0] + e[1] * e[1];
        let t = [
            [eps * (e[0] * e[0] - 0.5 * e2), eps * e[0] * e[1]],
            [eps * e[0] * e[1], eps * (e[1] * e[1] - 0.5 * e2)],
        ];
        let (a, b) = g.dual_x(i);
        let vol = if axi {
            std::f64::consts::PI * (b * b - a * a) * g.dual_len_y(j)
        } else {
            (b - a) * g.dual_len_y(j)
        };
        for (fi, ti) in f.iter_mut().zip(t) {
            *fi -= (ti[0] * gt[0] + ti[1] * gt[1]) * vol;
        }
    }
    if axi {
        f[0] = 0.0;
    }
    Some(f)
}
