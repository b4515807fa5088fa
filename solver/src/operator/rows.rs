//! The edge couplings of the operator, gathered by rows of nodes in parallel.
//!
//! Invariants: each row writes only its own nodes' diagonal, east and north weights; a
//! node's diagonal adds its four edge ends in the order south, west, east, north, the order
//! in which a sweep of the edges in node order (x-edge before y-edge) reaches them, and the
//! couplings between fixed targets are put back in that sweep's order. So the operator is
//! bit-identical whatever the thread count, and equal to the one that sweep assembles.
//!
//! Most nodes are interior: an unknown whose four edges are uncut and whose four neighbours
//! are unknowns. Their edge ends are whole free stretches (fraction 1, the lower node's
//! permittivity), so they are weighed directly, with the same operations in the same order as
//! [`Assembly::couple_end`] would (`x / (1.0 * d) == x / d` exactly), from widths taken
//! once per column and row on planar lattices.

use super::{geometric_weight, Assembly, THETA_MIN};
use crate::links::{Dir, DirectCoupling, Link};
use crate::raster::{Axis, CutEdge, HalfLink, NO_CONDUCTOR};
use rayon::prelude::*;

/// Place of a coupling in the sweep of the edges in node order: the edge's lower node, its
/// axis, and 0 for the edge's own coupling, 1 from its lower end, 2 from its upper end.
type SweepKey = (u32, Axis, u8);

/// An edge's half-links seen from its lower and upper end, and the coupling of the two
/// conductors it joins.
type Halves = (
    Option<HalfLink>,
    Option<HalfLink>,
    Option<crate::raster::DirectLink>,
);

/// Cut records of one row's edges, looked up in increasing (node, axis).
struct Records<'r> {
    cut: &'r [CutEdge],
    next: usize,
}

impl<'r> Records<'r> {
    /// The record of the edge from `a` along `axis`, if cut; keys asked in increasing order.
    fn find(&mut self, a: usize, axis: Axis) -> Option<&'r CutEdge> {
        let key = (a as u32, axis);
        while self
            .cut
            .get(self.next)
            .is_some_and(|c| (c.node, c.axis) < key)
        {
            self.next += 1;
        }
        self.cut.get(self.next).filter(|c| (c.node, c.axis) == key)
    }
}

/// How [`Assembly::couple_edges`] treats interior nodes; the operator is the same either
/// way, bit for bit.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(super) enum Interior {
    /// Weighed directly from the lattice's widths (the assembly's way).
    Whole,
    /// Edge end by edge end, like every other node (the reference the first must equal).
    #[cfg_attr(not(test), allow(dead_code))]
    ByEnds,
}

/// Planar widths the interior nodes' weights are made of, per column.
struct Widths {
    /// Cell widths `dx(i)`, m.
    dx: Vec<f64>,
    /// Control-volume widths along x of each column, m (`hi - lo` of `dual_x`).
    span: Vec<f64>,
}

/// What one row of nodes adds besides its diagonal, east and north weights.
#[derive(Default)]
struct RowCouplings {
    links: Vec<Link>,
    direct: Vec<(SweepKey, DirectCoupling)>,
}

impl<'a> Assembly<'a> {
    /// Every lattice edge, rows of nodes in parallel: each row gathers the four edge ends of
    /// its own nodes (in the order south, west, east, north, the order a sweep of the edges in
    /// node order adds them to a diagonal), and the couplings between fixed targets are put
    /// back in that sweep's order, so the operator is bit-identical whatever the thread count.
    pub(super) fn couple_edges(&mut self, interior: Interior) {
        let nx = self.grid.nx;
        let g = &self.grid;
        let widths = (interior == Interior::Whole).then(|| Widths {
            dx: (0..nx.saturating_sub(1)).map(|i| g.dx(i)).collect(),
            span: (0..nx)
                .map(|i| {
                    let (lo, hi) = g.dual_x(i);
                    hi - lo
                })
                .collect(),
        });
        let mut diag = std::mem::take(&mut self.diag);
        let mut east = std::mem::take(&mut self.east);
        let mut north = std::mem::take(&mut self.north);
        let this = &*self;
        let rows: Vec<RowCouplings> = diag
            .par_chunks_mut(nx)
            .zip(east.par_chunks_mut(nx))
            .zip(north.par_chunks_mut(nx))
            .enumerate()
            .map(|(j, ((d, e), n))| this.couple_row(j, widths.as_ref(), d, e, n))
            .collect();
        (self.diag, self.east, self.north) = (diag, east, north);
        let mut direct = Vec::new();
        for r in rows {
            self.links.extend(r.links);
            direct.extend(r.direct);
        }
        direct.sort_by_key(|d| d.0);
        self.direct.extend(direct.into_iter().map(|d| d.1));
    }

    /// The cut records of the edges whose lower end lies in row `j`.
    fn cut_records(&self, j: usize) -> Records<'a> {
        let nx = self.grid.nx as u32;
        let cut = &self.raster.cut_edges[..];
        let lo = cut.partition_point(|c| c.node < j as u32 * nx);
        let hi = lo + cut[lo..].partition_point(|c| c.node < (j as u32 + 1) * nx);
        Records {
            cut: &cut[lo..hi],
            next: 0,
        }
    }

    /// The half-links of the edge from `a` to `b` seen from each end, and the coupling of two
    /// conductors it joins: from its cut record, or a free edge in `a`'s material, or none
    /// (both ends in conductors).
    fn halves(&self, a: usize, b: usize, record: Option<&CutEdge>) -> Halves {
        let raster = self.raster;
        match record {
            Some(c) => (c.from_a, c.from_b, c.direct),
            None if raster.conductor[a] == NO_CONDUCTOR && raster.conductor[b] == NO_CONDUCTOR => {
                let h = HalfLink {
                    theta: 1.0,
                    eps: self.eps[raster.material[a] as usize],
                    ends_on: None,
                };
                (Some(h), Some(h), None)
            }
            None => (None, None, None),
        }
    }

    /// The couplings of row `j`'s nodes: their diagonal, east and north weights written into
    /// the row's slices, their links and the direct couplings they give. With `widths`,
    /// interior nodes are weighed directly.
    fn couple_row(
        &self,
        j: usize,
        widths: Option<&Widths>,
        diag: &mut [f64],
        east: &mut [f64],
        north: &mut [f64],
    ) -> RowCouplings {
        let (nx, ny) = (self.grid.nx, self.grid.ny);
        let mut here = self.cut_records(j);
        let mut below = match j {
            0 => Records { cut: &[], next: 0 },
            _ => self.cut_records(j - 1),
        };
        let mut out = RowCouplings::default();
        // The upper end's half-link of the x-edge ending at the current node, and whether
        // that edge has a cut record.
        let mut west: Option<HalfLink> = None;
        let mut west_cut = false;
        let inner_row = widths.is_some() && j > 0 && j + 1 < ny;
        // Planar: the row's control-volume height and the heights of the cells below and
        // above it.
        let (len_y, dy_lo, dy_hi) = match inner_row {
            true => (
                self.grid.dual_len_y(j),
                self.grid.dy(j - 1),
                self.grid.dy(j),
            ),
            false => (0.0, 0.0, 0.0),
        };
        let planar = !self.faces.axisymmetric;
        for i in 0..nx {
            let p = self.grid.idx(i, j);
            let at = (p, i, j);
            if inner_row && i > 0 && i + 1 < nx && !west_cut {
                let u = &self.unknown;
                if u[p]
                    && u[p - 1]
                    && u[p + 1]
                    && u[p - nx]
                    && u[p + nx]
                    && below.find(p - nx, Axis::Y).is_none()
                    && here.find(p, Axis::X).is_none()
                    && here.find(p, Axis::Y).is_none()
                {
                    let m = &self.raster.material;
                    let (eps_s, eps_w) =
                        (self.eps[m[p - nx] as usize], self.eps[m[p - 1] as usize]);
                    let eps_p = self.eps[m[p] as usize];
                    let [s, w, e, n] = match widths {
                        Some(wd) if planar => [
                            eps_s * (wd.span[i] / dy_lo),
                            eps_w * (len_y / wd.dx[i - 1]),
                            eps_p * (len_y / wd.dx[i]),
                            eps_p * (wd.span[i] / dy_hi),
                        ],
                        _ => [
                            eps_s * self.faces.wy(i, j, 1.0, -1.0),
                            eps_w * self.faces.wx(i, j, 1.0, -1.0),
                            eps_p * self.faces.wx(i, j, 1.0, 1.0),
                            eps_p * self.faces.wy(i, j, 1.0, 1.0),
                        ],
                    };
                    diag[i] += s;
                    diag[i] += w;
                    diag[i] += e;
                    diag[i] += n;
                    (east[i], north[i]) = (e, n);
                    west = Some(HalfLink {
                        theta: 1.0,
                        eps: eps_p,
                        ends_on: None,
                    });
                    continue;
                }
            }
            if j > 0 {
                let a = p - nx;
                if let (_, Some(h), _) = self.halves(a, p, below.find(a, Axis::Y)) {
                    let key = (a as u32, Axis::Y, 2);
                    self.couple_end(Axis::Y, at, h, a, -1.0, key, &mut diag[i], None, &mut out);
                }
            }
            if let Some(h) = west.take() {
                let key = (p as u32 - 1, Axis::X, 2);
                self.couple_end(
                    Axis::X,
                    at,
                    h,
                    p - 1,
                    -1.0,
                    key,
                    &mut diag[i],
                    None,
                    &mut out,
                );
            }
            for (axis, b, coupling) in [
                (Axis::X, (i + 1 < nx).then_some(p + 1), &mut east[i]),
                (Axis::Y, (j + 1 < ny).then_some(p + nx), &mut north[i]),
            ] {
                let Some(b) = b else { continue };
                let record = here.find(p, axis);
                let (from_a, from_b, direct_link) = self.halves(p, b, record);
                if axis == Axis::X {
                    (west, west_cut) = (from_b, record.is_some());
                }
                if let Some(d) = direct_link {
                    let w = d.eps
                        * geometric_weight(&self.faces, axis, i, j, d.gap.max(THETA_MIN), 1.0);
                    let coupling = DirectCoupling {
                        a: d.a as u32,
                        b: d.b as u32,
                        weight: w,
                    };
                    out.direct.push(((p as u32, axis, 0), coupling));
                }
                if let Some(h) = from_a {
                    let key = (p as u32, axis, 1);
                    self.couple_end(
                        axis,
                        at,
                        h,
                        b,
                        1.0,
                        key,
                        &mut diag[i],
                        Some(coupling),
                        &mut out,
                    );
                }
            }
        }
        out
    }

    /// One free end of an edge: node `p` at (pi, pj), its half-link `h` along `axis` towards
    /// `other` (`sign` +1 towards +x or +y). An unknown node gains the weight on its diagonal
    /// `diag` and a free-free coupling (written to `coupling`, given for the lower end only)
    /// or a link to a target; a fixed side node facing a conductor surface gains a direct
    /// coupling, placed at `key` in the edge sweep's order.
    #[allow(clippy::too_many_arguments)]
    fn couple_end(
        &self,
        axis: Axis,
        (p, pi, pj): (usize, usize, usize),
        h: HalfLink,
        other: usize,
        sign: f64,
        key: SweepKey,
        diag: &mut f64,
        coupling: Option<&mut f64>,
        out: &mut RowCouplings,
    ) {
        let nx = self.grid.nx;
        let theta = h.theta.clamp(THETA_MIN, 1.0);
        let w = h.eps * geometric_weight(&self.faces, axis, pi, pj, theta, sign);
        let dir = match (axis, sign > 0.0) {
            (Axis::X, true) => Dir::East,
            (Axis::X, false) => Dir::West,
            (Axis::Y, true) => Dir::North,
            (Axis::Y, false) => Dir::South,
        };
        let target = match h.ends_on {
            Some(k) => Some(k as u32),
            None if self.unknown[other] => None,
            None => {
                let (oi, oj) = (other % nx, other / nx);
                match self.side_of(oi, oj) {
                    Some(s) => Some(self.side_target(s)),
                    // The other end is a conductor node reached without a recorded
                    // surface: the surface is at that node.
                    None => Some(self.raster.conductor[other] as u32),
                }
            }
        };
        if self.unknown[p] {
            *diag += w;
            match target {
                // Free-free coupling: recorded once, from the lower end.
                None => {
                    if let Some(c) = coupling {
                        *c = w;
                    }
                }
                Some(t) => out.links.push(Link {
                    node: p as u32,
                    target: t,
                    weight: w,
                    dir,
                    theta,
                    eps: h.eps,
                }),
            }
        } else if let (Some(t), Some(s)) = (target, self.side_of(pi, pj)) {
            // A fixed side node facing a conductor surface.
            if (t as usize) < self.nc {
                let coupling = DirectCoupling {
                    a: self.side_target(s),
                    b: t,
                    weight: w,
                };
                out.direct.push((key, coupling));
            }
        }
    }
}
