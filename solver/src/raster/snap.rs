//! Nodes that lie within a sliver of a conductor surface join that conductor.
//!
//! A free node whose edge meets a conductor surface closer than [`SNAP`] of the spacing is
//! made a node of that conductor, as the cut-cell method recommends for tiny fractions
//! (Gibou, Fedkiw, Cheng & Kang, J. Comput. Phys. 176 (2002) 205-227): the surface then moves
//! by at most `SNAP * h`, and no weight grows without bound. This also makes a thin conductor
//! that lies on a node row within rounding (for example at 0.6 + 8.4 mm) behave exactly as one
//! that lies on it.
//!
//! Invariant kept: after snapping, every cut edge again satisfies the raster invariants (a free
//! end's link ends on a conductor or on a free node; edges between different conductors carry a
//! direct link).

use super::{Axis, CutEdge, DirectLink, HalfLink, Raster, NO_CONDUCTOR};
use crate::design::Design;
use crate::material;
use std::collections::HashMap;

/// Smallest cut fraction kept; nearer nodes join the conductor.
pub const SNAP: f64 = 0.01;

/// Applies the snapping rule to a rasterised design.
pub(super) fn snap_near_surfaces(r: &mut Raster, design: &Design) {
    let nx = r.grid.nx;
    // Nearest conductor below the threshold for each node.
    let mut best: HashMap<usize, (f64, u16)> = HashMap::new();
    for c in &r.cut_edges {
        let b = upper(c, nx);
        for (node, half) in [(c.node as usize, c.from_a), (b, c.from_b)] {
            if let Some(HalfLink {
                theta,
                ends_on: Some(k),
                ..
            }) = half
            {
                if theta < SNAP {
                    let e = best.entry(node).or_insert((theta, k));
                    if theta < e.0 {
                        *e = (theta, k);
                    }
                }
            }
        }
    }
    if best.is_empty() {
        return;
    }
    let mut snapped: Vec<(usize, u16)> = best.into_iter().map(|(p, (_, k))| (p, k)).collect();
    snapped.sort_unstable();
    for &(p, k) in &snapped {
        r.conductor[p] = k;
    }
    let mut index: HashMap<(u32, Axis), usize> = r
        .cut_edges
        .iter()
        .enumerate()
        .map(|(i, c)| ((c.node, c.axis), i))
        .collect();
    let (gnx, gny) = (r.grid.nx, r.grid.ny);
    let mut touched: Vec<(u32, Axis)> = Vec::new();
    for &(p, _) in &snapped {
        let (i, j) = (p % gnx, p / gnx);
        if i + 1 < gnx {
            touched.push((p as u32, Axis::X));
        }
        if i > 0 {
            touched.push(((p - 1) as u32, Axis::X));
        }
        if j + 1 < gny {
            touched.push((p as u32, Axis::Y));
        }
        if j > 0 {
            touched.push(((p - gnx) as u32, Axis::Y));
        }
    }
    touched.sort_unstable();
    touched.dedup();
    for key in touched {
        let a = key.0 as usize;
        let b = match key.1 {
            Axis::X => a + 1,
            Axis::Y => a + nx,
        };
        let pos = *index.entry(key).or_insert_with(|| {
            // A plain edge: same material at both ends, nothing between them.
            let eps = material::of(design, r.material[a]).permittivity;
            let h = HalfLink {
                theta: 1.0,
                eps,
                ends_on: None,
            };
            r.cut_edges.push(CutEdge {
                node: key.0,
                axis: key.1,
                from_a: Some(h),
                from_b: Some(h),
                direct: None,
                interface: None,
            });
            r.cut_edges.len() - 1
        });
        let c = &mut r.cut_edges[pos];
        let (ka, kb) = (r.conductor[a], r.conductor[b]);
        let old_a = c.from_a;
        let old_b = c.from_b;
        c.from_a = free_end(old_a, ka, kb);
        c.from_b = free_end(old_b, kb, ka);
        if ka != NO_CONDUCTOR && kb != NO_CONDUCTOR && ka != kb && c.direct.is_none() {
            // The gap is what the snapped end saw of the other conductor.
            let seen = |h: Option<HalfLink>, k: u16| h.filter(|h| h.ends_on == Some(k));
            let (gap, eps) = seen(old_a, kb).or(seen(old_b, ka)).map_or(
                (1.0, material::of(design, r.material[a]).permittivity),
                |h| (h.theta, h.eps),
            );
            c.direct = Some(DirectLink {
                a: ka,
                b: kb,
                gap,
                eps,
            });
        }
    }
    // Edges inside one conductor carry nothing and have no record.
    let conductor = &r.conductor;
    r.cut_edges.retain(|c| {
        let (ka, kb) = (conductor[c.node as usize], conductor[upper(c, nx)]);
        ka == NO_CONDUCTOR || ka != kb
    });
    r.cut_edges.sort_by_key(|c| (c.node, c.axis));
    r.node_charge
        .retain(|&(p, _)| r.conductor[p as usize] == NO_CONDUCTOR);
}

fn upper(c: &CutEdge, nx: usize) -> usize {
    match c.axis {
        Axis::X => c.node as usize + 1,
        Axis::Y => c.node as usize + nx,
    }
}

/// The half-link of an end after snapping: none for a conductor end; a link reaching the
/// other end now ends on that end's conductor.
fn free_end(h: Option<HalfLink>, this: u16, other: u16) -> Option<HalfLink> {
    if this != NO_CONDUCTOR {
        return None;
    }
    let mut h = h?;
    if h.ends_on.is_none() && other != NO_CONDUCTOR {
        h.ends_on = Some(other);
    }
    Some(h)
}
