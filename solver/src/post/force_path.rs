//! The force on a conductor from the Maxwell stress tensor integrated over the lattice
//! contour one layer of nodes outside it, with the flux of D through the same path (what
//! share of the conductor's field the path sees).
//!
//! Invariants: the contour's faces are visited in node order (the nodes of the window that
//! holds the conductor's nodes and the free nodes linked to it, row by row), so the sums are
//! those of a loop over every node of the lattice, bit for bit, for any thread count.
//! Planar: N/m; axisymmetric: N along the axis only.

use super::FieldEval;
use crate::design::{Design, Mode};
use crate::raster::NO_CONDUCTOR;
use crate::EPS0;

/// Electrostatic force on conductor k by the Maxwell stress tensor over the lattice contour
/// that encloses the conductor's nodes and the free nodes linked to it. Planar: N/m.
/// Axisymmetric: N, axial component only (the radial one vanishes by symmetry).
pub fn force(field: &FieldEval, design: &Design, k: usize) -> [f64; 2] {
    force_on_path(field, design, k).force
}

/// The force on a conductor and what its integration path sees.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct PathForce {
    /// The force, as [`force`] gives it.
    pub force: [f64; 2],
    /// The flux of D out through the same path (C/m planar, C axisymmetric): by Gauss's law
    /// the conductor's charge when the path sees all of its field. Where the conductor faces
    /// a fixed potential across no free node (a layer thinner than a cell between it and
    /// another conductor or a fixed side), the field there lies outside the path and so does
    /// its share of the charge and of the force.
    pub flux: f64,
    /// The flux's magnitude summed face by face (the scale of `flux` when the charges on the
    /// conductor's faces cancel).
    pub abs_flux: f64,
}

impl PathForce {
    /// The share of the conductor's field (of `charge`, its charge from the operator) that
    /// the path sees, to one: `1 - |flux - charge| / max(|charge|, abs_flux)`, clamped to
    /// [0, 1].
    pub fn seen(&self, charge: f64) -> f64 {
        let scale = charge.abs().max(self.abs_flux);
        if scale > 0.0 {
            (1.0 - (self.flux - charge).abs() / scale).clamp(0.0, 1.0)
        } else {
            1.0
        }
    }
}

/// A force path that sees less than this share of its conductor's field does not resolve
/// the force (measured on the demo MEMS actuator: the drive electrode on a nitride layer
/// one cell thick, 2.5 % seen and the force of the wrong sign; at two cells and more across
/// the layer 99.95 % and the force within 0.1 %).
pub const RESOLVED_FORCE_SHARE: f64 = 0.9;

/// [`force`] with the flux through the same path.
pub fn force_on_path(field: &FieldEval, design: &Design, k: usize) -> PathForce {
    let op = field.op;
    let g = &op.grid;
    let (nx, ny) = (g.nx, g.ny);
    let n = g.len();
    let raster = field.raster;
    // The nodes inside the path (the conductor's and the free nodes linked to it) lie in the
    // window `cols` x `rows`; the mask covers the window alone, and nodes are visited in node
    // order within it, so the sums are those of a loop over the whole lattice.
    let own = |p: usize| raster.conductor[p] as usize == k && raster.conductor[p] != NO_CONDUCTOR;
    let linked = op.links.iter().filter(|l| l.target as usize == k);
    let Some((cols, rows)) = path_window(g, n, &own, linked.clone().map(|l| l.node as usize))
    else {
        return PathForce {
            force: [0.0; 2],
            flux: 0.0,
            abs_flux: 0.0,
        };
    };
    let w = cols.end - cols.start;
    let at = |p: usize| (p / nx - rows.start) * w + (p % nx - cols.start);
    let mut mask = vec![false; w * (rows.end - rows.start)];
    for j in rows.clone() {
        for i in cols.clone() {
            let p = i + j * nx;
            if own(p) {
                mask[at(p)] = true;
            }
        }
    }
    for p in linked.map(|l| l.node as usize) {
        mask[at(p)] = true;
    }
    let inside = |p: usize| {
        let (i, j) = (p % nx, p / nx);
        cols.contains(&i) && rows.contains(&j) && mask[at(p)]
    };
    let axi = design.mode == Mode::Axisymmetric;
    let eps_of = |p: usize| crate::material::of(design, raster.material[p]).permittivity;
    let mut f = [0.0f64; 2];
    let (mut flux, mut abs_flux) = (0.0, 0.0);
    // E on the face between p (inside) and q (outside), from node fields on both sides and
    // the potential difference across the face.
    let node_e = |p: usize| {
        let e = field.at(p);
        if e[0].is_finite() {
            e
        } else {
            [0.0, 0.0]
        }
    };
    for j in rows.clone() {
        for i in cols.clone() {
            let p = i + j * nx;
            if !inside(p) {
                continue;
            }
            let nbrs = [
                (i + 1 < nx, p.wrapping_add(1), [1.0, 0.0]),
                (i > 0, p.wrapping_sub(1), [-1.0, 0.0]),
                (j + 1 < ny, p.wrapping_add(nx), [0.0, 1.0]),
                (j > 0, p.wrapping_sub(nx), [0.0, -1.0]),
            ];
            for (ok, q, nrm) in nbrs {
                if !ok || inside(q) {
                    continue;
                }
                if !op.stencil.unknown[q]
                    && raster.conductor[q] == NO_CONDUCTOR
                    && !op.stencil.unknown[p]
                {
                    continue;
                }
                let along_x = nrm[0] != 0.0;
                // The edge from p to q.
                let h = match (along_x, nrm[0] + nrm[1] > 0.0) {
                    (true, true) => g.dx(i),
                    (true, false) => g.dx(i - 1),
                    (false, true) => g.dy(j),
                    (false, false) => g.dy(j - 1),
                };
                let en = -(field.phi[q] - field.phi[p]) / h;
                let (ep, eq) = (node_e(p), node_e(q));
                let et = if along_x {
                    0.5 * (ep[1] + eq[1])
                } else {
                    0.5 * (ep[0] + eq[0])
                };
                let e = if along_x {
                    [en * nrm[0], et]
                } else {
                    [et, en * nrm[1]]
                };
                let eps = EPS0 * 0.5 * (eps_of(p) + eps_of(q));
                let e2 = e[0] * e[0] + e[1] * e[1];
                let enorm = e[0] * nrm[0] + e[1] * nrm[1];
                let t = [
                    eps * (enorm * e[0] - 0.5 * e2 * nrm[0]),
                    eps * (enorm * e[1] - 0.5 * e2 * nrm[1]),
                ];
                // Face size: the control-volume face between p and q.
                let area = if along_x {
                    let r = g.x(i) + 0.5 * nrm[0] * h;
                    let l = g.dual_len_y(j);
                    if axi {
                        2.0 * std::f64::consts::PI * r * l
                    } else {
                        l
                    }
                } else {
                    let (lo, hi) = g.dual_x(i);
                    if axi {
                        std::f64::consts::PI * (hi * hi - lo * lo)
                    } else {
                        hi - lo
                    }
                };
                f[0] += t[0] * area;
                f[1] += t[1] * area;
                flux += eps * enorm * area;
                abs_flux += (eps * enorm * area).abs();
            }
        }
    }
    if axi {
        f[0] = 0.0;
    }
    PathForce {
        force: f,
        flux,
        abs_flux,
    }
}

/// The columns and rows spanning every node for which `own` holds and every node of
/// `linked`, `None` when there is none. The lattice (`n` nodes) is scanned in chunks on every
/// thread; the bounds do not depend on how it is cut.
fn path_window(
    g: &crate::grid::Grid,
    n: usize,
    own: &(impl Fn(usize) -> bool + Sync),
    linked: impl Iterator<Item = usize>,
) -> Option<(std::ops::Range<usize>, std::ops::Range<usize>)> {
    // (lowest node, highest node) of each chunk: rows from the nodes, columns per row.
    type Span = Option<[usize; 4]>;
    let widen = |s: Span, p: usize| -> Span {
        let (i, j) = (p % g.nx, p / g.nx);
        Some(match s {
            None => [i, i, j, j],
            Some([i0, i1, j0, j1]) => [i0.min(i), i1.max(i), j0.min(j), j1.max(j)],
        })
    };
    let join = |a: Span, b: Span| -> Span {
        match (a, b) {
            (Some(a), Some(b)) => Some([
                a[0].min(b[0]),
                a[1].max(b[1]),
                a[2].min(b[2]),
                a[3].max(b[3]),
            ]),
            (a, None) => a,
            (None, b) => b,
        }
    };
    let scanned = crate::parallel::chunks(n, |range| range.filter(|&p| own(p)).fold(None, widen))
        .into_iter()
        .fold(None, join);
    let [i0, i1, j0, j1] = linked.fold(scanned, widen)?;
    Some((i0..i1 + 1, j0..j1 + 1))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_force_path_window_spans_every_node_of_the_conductor_and_of_its_links() {
        // Scattered node sets on a 37 x 23 lattice (seeded), against the box of a plain scan.
        let xs: Vec<f64> = (0..37).map(|i| i as f64).collect();
        let ys: Vec<f64> = (0..23).map(|j| j as f64).collect();
        let g = crate::grid::Grid::from_lines(xs, ys).unwrap();
        let n = g.len();
        let mut rng = crate::seeded::uniform(16);
        for case in 0..200 {
            let share = [0.0, 0.002, 0.02, 0.3][case % 4];
            let own: Vec<bool> = (0..n).map(|_| rng() < share).collect();
            let linked: Vec<usize> = (0..case % 3)
                .map(|_| (rng() * n as f64) as usize % n)
                .collect();
            let nodes = (0..n).filter(|&p| own[p]).chain(linked.iter().copied());
            let want = nodes.fold(None, |b: Option<[usize; 4]>, p| {
                let (i, j) = (p % g.nx, p / g.nx);
                Some(b.map_or([i, i, j, j], |b| {
                    [b[0].min(i), b[1].max(i), b[2].min(j), b[3].max(j)]
                }))
            });
            let got = path_window(&g, n, &|p| own[p], linked.iter().copied());
            assert_eq!(
                got,
                want.map(|[i0, i1, j0, j1]| (i0..i1 + 1, j0..j1 + 1)),
                "case {case}"
            );
        }
    }
}
