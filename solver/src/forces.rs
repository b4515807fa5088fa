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
//! else the reason ([`NoBand`]) and the caller integrates over a path at the surface. Planar:
//! N/m; axisymmetric: N along the axis only. The searches visit only the nodes within reach
//! of the conductor's box (the gap search grows outward from it), and the band's terms are
//! added in node order: the results are those of a loop over every node, bit for bit, for
//! any thread count.

mod distance;
#[cfg(test)]
mod tests;

use crate::design::{Design, Mode, Side};
use crate::parallel;
use crate::post::FieldEval;
use crate::raster::NO_CONDUCTOR;
use crate::EPS0;
use distance::Shapes;

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
    shapes: Shapes,
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
/// Lattice rows whose stress terms are gathered at a time (in parallel) before they are
/// added in node order.
const ROWS_AT_ONCE: usize = 64;

impl Weight {
    /// The weight's gradient at distance `d` from the conductor, whose gradient is `g`, 1/m.
    fn gradient(&self, d: f64, g: [f64; 2]) -> [f64; 2] {
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
    k: usize,
    material: u16,
    /// The left side is the axis, which the stress may touch.
    axis: bool,
    /// Nodes holding free charge, ascending.
    charged: Vec<u32>,
}

impl Obstacles<'_> {
    fn at(&self, p: usize) -> bool {
        let nx = self.field.op.grid.nx;
        self.at_node(p, p % nx, p / nx)
    }

    /// [`Obstacles::at`] at node p = i + j nx.
    fn at_node(&self, p: usize, i: usize, j: usize) -> bool {
        let op = self.field.op;
        let g = &op.grid;
        let r = self.field.raster;
        let own = r.conductor[p] != NO_CONDUCTOR && r.conductor[p] as usize == self.k;
        if own {
            return false;
        }
        !op.stencil.unknown[p]
            || r.material[p] != self.material
            || (i == 0 && !self.axis)
            || i + 1 == g.nx
            || j == 0
            || j + 1 == g.ny
            || self.charged.binary_search(&(p as u32)).is_ok()
    }
}

fn obstacles<'a>(
    field: &'a FieldEval<'a>,
    design: &Design,
    k: usize,
    material: u16,
) -> Obstacles<'a> {
    let mut charged: Vec<u32> = field
        .op
        .source
        .iter()
        .filter(|&&(_, s)| s != 0.0)
        .map(|&(p, _)| p)
        .collect();
    charged.sort_unstable();
    Obstacles {
        field,
        k,
        material,
        axis: design.mode == Mode::Axisymmetric && design.sides.left == Side::Axis,
        charged,
    }
}

/// The highest and lowest relative permittivity among the materials beside conductor k on
/// this lattice (those of the free nodes linked to it); `None` when it has no free node beside
/// it.
pub fn permittivities_beside(field: &FieldEval, design: &Design, k: usize) -> Option<[f64; 2]> {
    let mut out: Option<[f64; 2]> = None;
    for l in field.op.links.iter().filter(|l| l.target as usize == k) {
        let m = field.raster.material[l.node as usize];
        let e = crate::material::of(design, m).permittivity;
        let [hi, lo] = out.get_or_insert([e, e]);
        *hi = hi.max(e);
        *lo = lo.min(e);
    }
    out
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
    let g = &op.grid;
    let mut w = Weight {
        shapes: Shapes::new(c.shapes(), g),
        inner: 0.0,
        outer: 0.0,
        material,
    };
    let obs = obstacles(field, design, k, material);
    let gap = w.shapes.nearest(g, |p| obs.at(p));
    if !gap.is_finite() || gap <= 0.0 {
        return Err(NoBand::NoGap);
    }
    w.inner = INNER * gap;
    w.outer = OUTER * gap;
    // Enough cells across the band (the largest cell up to the obstacle counts), and nothing
    // but regular nodes in it.
    let band = w.outer - w.inner;
    let (rows, cols) = w.shapes.window(g, gap);
    let wide_cols: Vec<usize> = cols
        .clone()
        .filter(|&i| (g.dual_x(i).1 - g.dual_x(i).0) * BAND_CELLS > band)
        .collect();
    let all_cols: Vec<usize> = cols.collect();
    for j in rows {
        let row = if g.dual_len_y(j) * BAND_CELLS > band {
            &all_cols
        } else {
            &wide_cols
        };
        if row
            .iter()
            .any(|&i| w.shapes.distance(g.x(i), g.y(j)).0 <= gap)
        {
            return Err(NoBand::Narrow);
        }
    }
    let mut linked = op.links.iter().map(|l| l.node as usize).peekable();
    while let Some(p) = linked.next() {
        while linked.peek() == Some(&p) {
            linked.next();
        }
        let (x, y) = (g.x(p % g.nx), g.y(p / g.nx));
        if w.shapes.beyond(x, y, w.outer) {
            continue;
        }
        let d = w.shapes.distance(x, y).0;
        if d > w.inner && d < w.outer {
            return Err(NoBand::Narrow);
        }
    }
    Ok(w)
}

/// The force on conductor k from the stress weighted by `w` over this lattice's nodes, or
/// `None` when an obstacle or a cut link lies within the weight's reach on this lattice.
/// Only the nodes within `outer` of the conductor's box are visited; their terms are added
/// in node order, so the sum does not depend on the thread count.
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
    // The stress term of every node of row j with a weight gradient, in node order.
    let (rows, cols) = w.shapes.window(g, w.outer);
    let terms = |j: &usize| -> Option<Vec<[f64; 2]>> {
        let j = *j;
        let y = g.y(j);
        let mut out = Vec::new();
        // This row's links, walked along with the nodes.
        let first = j * g.nx;
        let links = &op.links[op.links.partition_point(|l| (l.node as usize) < first)..];
        let mut link = links.iter().map(|l| l.node as usize).peekable();
        for i in cols.clone() {
            let p = i + first;
            let x = g.x(i);
            if w.shapes.beyond(x, y, w.outer) {
                continue;
            }
            let (d, dg) = w.shapes.distance(x, y);
            if d > w.outer {
                continue;
            }
            if obs.at_node(p, i, j) {
                return None;
            }
            let gt = w.gradient(d, dg);
            if gt == [0.0, 0.0] {
                continue;
            }
            while link.next_if(|&q| q < p).is_some() {}
            if link.peek() == Some(&p) {
                return None;
            }
            // As `field.at(p)`: a node with no link.
            let e = if op.stencil.unknown[p] {
                field.at_free(p, i, j)
            } else {
                [f64::NAN; 2]
            };
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
            out.push(t.map(|ti| (ti[0] * gt[0] + ti[1] * gt[1]) * vol));
        }
        Some(out)
    };
    let rows: Vec<usize> = rows.collect();
    let mut f = [0.0f64; 2];
    for batch in rows.chunks(ROWS_AT_ONCE) {
        for row in parallel::map(batch, terms) {
            for term in row? {
                f[0] -= term[0];
                f[1] -= term[1];
            }
        }
    }
    if axi {
        f[0] = 0.0;
    }
    Some(f)
}
