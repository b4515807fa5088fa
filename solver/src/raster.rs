//! Rasterisation: from exact outlines to what the operator needs on the node lattice.
//!
//! For every node: which conductor (if any) holds it and which material fills it. For every
//! lattice edge that something crosses: where the first conductor surface lies as seen from
//! each free end (the fraction `theta` of the edge), and the harmonic-mean permittivity of the
//! free stretch up to it. Charge sources are spread to nodes.
//!
//! Invariants:
//! - Node classification and edge crossings come from the same crossing computation, so an
//!   edge whose ends lie on different sides of an outline always has a crossing recorded.
//! - An edge absent from `cut_edges` joins two nodes of the same conductor, or two free nodes
//!   of the same material with nothing between them.
//! - `HalfLink::ends_on == None` only when the other end is a free node and no conductor
//!   surface lies between; then `theta == 1`.
//!
//! How (see `geometry/lines.rs`, `raster/edges.rs`, `raster/charge.rs`):
//! - Each outline is cut with every node column x = x_i and every node row y = y_j (work
//!   proportional to the crossings, i.e. perimeter / cell, plus the lines spanned). On each line
//!   it leaves a set of closed intervals: the region with its boundary, so a node exactly on a
//!   conductor's surface belongs to the conductor and every free node is a positive distance
//!   from every surface. A node belongs to a conductor when its column or its row says so
//!   (the lowest index wins should two claim it within rounding); every edge is then cut with
//!   the intervals of its own line, so classification and crossings agree.
//! - A conductor drawn in several pieces (one net) is their union: on each line the closed
//!   intervals of its pieces merged where they overlap or touch, so the result is the one of a
//!   single outline around them all.
//! - Thin (polyline) conductors leave points on a line; a solid conductor thinner than a cell
//!   leaves an interval inside an edge. Either gives both free ends a half-link ending on it.
//! - Materials: dielectrics are painted in file order on the nodes of their closed regions,
//!   conductors on top. Along an edge the permittivity is piecewise constant between the
//!   crossings of dielectric outlines; where the edge runs exactly along an interface the
//!   two sides are averaged by the part of the edge's control-volume face in each (half of
//!   each neighbouring cell): (eps_1 d_1 + eps_2 d_2) / (d_1 + d_2).
//!   A free stretch takes the length-weighted harmonic mean; an edge whose permittivity is not
//!   that of its end nodes' material is a cut edge.
//! - Two conductors on the two ends of an edge give a [`DirectLink`] whose gap is the free
//!   length between them (a third conductor squeezed in between on that edge is not seen).
//! - Charge regions: the charge of a node's control volume (the box of half-cells around it,
//!   clipped to the domain) is the density times the exact area of the region inside the box
//!   (axisymmetric: times the exact `∫∫ 2 pi r dA`), from Green's theorem on the clipped
//!   outline. Concentrated charges are split bilinearly (planar) or linearly along the axis
//!   (axisymmetric). Charge that falls on a conductor node is dropped: a conductor holds no
//!   free charge and its node's potential is fixed anyway.
//! - Results do not depend on the number of threads (each line and each band of rows is
//!   computed on its own and the pieces are joined in a fixed order).

mod charge;
mod edges;

use crate::design::{Charge, Design, Mode};
use crate::geometry::lines::LineSets;
use crate::geometry::{outline, Outline};
use crate::grid::Grid;
use rayon::prelude::*;

/// No conductor at a node.
pub const NO_CONDUCTOR: u16 = u16::MAX;

/// Edge direction: from node p to p+1 (`X`) or to p+nx (`Y`).
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Axis {
    /// Along x.
    X,
    /// Along y.
    Y,
}

/// The free stretch of an edge seen from one free end.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct HalfLink {
    /// Distance from this end to the first conductor surface, as a fraction of the edge
    /// length, in (0, 1]; 1 when the stretch reaches the other end.
    pub theta: f64,
    /// Relative permittivity of the stretch: length-weighted harmonic mean of the materials.
    pub eps: f64,
    /// `Some(k)`: the stretch ends on the surface of conductor k. `None`: it reaches the other
    /// end, a free node.
    pub ends_on: Option<u16>,
}

/// Two different conductors joined by one edge: the gap between them along the edge.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct DirectLink {
    /// Conductor at the lower end (node a).
    pub a: u16,
    /// Conductor at the upper end (node b).
    pub b: u16,
    /// Length of the gap between the two surfaces as a fraction of the edge, in (0, 1].
    pub gap: f64,
    /// Harmonic-mean relative permittivity of the gap.
    pub eps: f64,
}

/// A lattice edge that needs more than "same material at both ends".
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CutEdge {
    /// Lower end a; the upper end is a+1 (`X`) or a+nx (`Y`).
    pub node: u32,
    /// Direction.
    pub axis: Axis,
    /// Seen from a, when a is free.
    pub from_a: Option<HalfLink>,
    /// Seen from b, when b is free.
    pub from_b: Option<HalfLink>,
    /// Present when a and b lie in two different conductors.
    pub direct: Option<DirectLink>,
    /// On an edge between two free nodes with no conductor on it: the fraction from a of
    /// its one permittivity change, when it has exactly one and runs along no interface.
    pub interface: Option<f64>,
}

/// The rasterised design.
#[derive(Clone, Debug, PartialEq)]
pub struct Raster {
    /// The lattice.
    pub grid: Grid,
    /// Conductor index per node, [`NO_CONDUCTOR`] for a free node.
    pub conductor: Vec<u16>,
    /// Material per node: 0 the background, d+1 dielectric d (the last painted wins); looked
    /// up with [`crate::material::of`].
    pub material: Vec<u16>,
    /// Cut edges, sorted by (node, axis), each edge at most once.
    pub cut_edges: Vec<CutEdge>,
    /// Free charge per node: planar C/m, axisymmetric C (the charge in the node's control
    /// volume; whole ring in axisymmetric mode). Sorted by node, each node at most once.
    pub node_charge: Vec<(u32, f64)>,
}

/// Rows of nodes per band when painting nodes (a fixed number: results do not depend on it).
const BAND: usize = 64;

/// Node index range `[lo, hi)` of the coordinates (sorted) inside the closed interval.
fn node_range(coords: &[f64], iv: [f64; 2]) -> (usize, usize) {
    (
        coords.partition_point(|&c| c < iv[0]),
        coords.partition_point(|&c| c <= iv[1]),
    )
}

/// The outline of a shape of a validated design.
fn outline_of(shape: &crate::design::Shape) -> Outline {
    outline(shape).expect("rasterize needs a design that passed design::validate")
}

/// Cross-sections of one outline along the node columns and the node rows.
struct Sections {
    cols: LineSets,
    rows: LineSets,
}

impl Sections {
    fn new(o: &Outline, xs: &[f64], ys: &[f64], sides: bool) -> Sections {
        Sections {
            cols: LineSets::build(o, xs, sides),
            rows: LineSets::build(&o.transposed(), ys, sides),
        }
    }

    /// Closed cross-sections of the union of the pieces of one conductor.
    fn union(pieces: &[Outline], xs: &[f64], ys: &[f64]) -> Sections {
        let parts: Vec<Sections> = pieces
            .iter()
            .map(|o| Sections::new(o, xs, ys, false))
            .collect();
        let (cols, rows): (Vec<LineSets>, Vec<LineSets>) =
            parts.into_iter().map(|s| (s.cols, s.rows)).unzip();
        Sections {
            cols: LineSets::union(&cols),
            rows: LineSets::union(&rows),
        }
    }
}

/// Paints conductor and material indices on every node.
///
/// Materials and conductors are filled row by row from the row sections. A conductor also
/// claims the first and the last node of each of its column intervals: only nodes within
/// rounding of the outline can be in a column interval and not in the row interval through
/// them, and those sit at the interval's ends (or beside an edge that runs within rounding of
/// the column, where the edge walk meets the surface at a vanishing but positive distance).
/// Conductors are painted from the last to the first, so the lowest index wins.
fn classify(
    grid: &Grid,
    xs: &[f64],
    ys: &[f64],
    cond: &[Sections],
    diel: &[Sections],
) -> (Vec<u16>, Vec<u16>) {
    let (nx, n) = (grid.nx, grid.len());
    let mut conductor = vec![NO_CONDUCTOR; n];
    let mut material = vec![0u16; n];
    // Column-interval end nodes of each conductor, sorted by (row, column).
    let marks: Vec<Vec<(usize, usize)>> = cond
        .par_iter()
        .map(|s| {
            let (c0, c1) = s.cols.span();
            let mut m = Vec::new();
            for i in c0..c1.min(nx) {
                for iv in s.cols.closed(i) {
                    let (lo, hi) = node_range(ys, *iv);
                    if lo < hi {
                        m.push((lo, i));
                        if hi - 1 > lo {
                            m.push((hi - 1, i));
                        }
                    }
                }
            }
            m.sort_unstable();
            m
        })
        .collect();
    conductor
        .par_chunks_mut(nx * BAND)
        .zip(material.par_chunks_mut(nx * BAND))
        .enumerate()
        .for_each(|(b, (cband, mband))| {
            let j0 = b * BAND;
            let j1 = j0 + cband.len() / nx;
            for (d, s) in diel.iter().enumerate() {
                for j in j0..j1 {
                    let row = &mut mband[(j - j0) * nx..(j - j0 + 1) * nx];
                    for iv in s.rows.closed(j) {
                        let (lo, hi) = node_range(xs, *iv);
                        row[lo..hi].fill(d as u16 + 1);
                    }
                }
            }
            for (k, s) in cond.iter().enumerate().rev() {
                for j in j0..j1 {
                    let row = &mut cband[(j - j0) * nx..(j - j0 + 1) * nx];
                    for iv in s.rows.closed(j) {
                        let (lo, hi) = node_range(xs, *iv);
                        row[lo..hi].fill(k as u16);
                    }
                }
                let m = &marks[k];
                let from = m.partition_point(|e| e.0 < j0);
                for &(j, i) in m[from..].iter().take_while(|e| e.0 < j1) {
                    cband[(j - j0) * nx + i] = k as u16;
                }
            }
        });
    (conductor, material)
}

/// Indices i where the node pairs (a[i], b[i]) or (c[i], d[i]) differ. Blocks without a
/// difference (most of them) are passed over with a branch-free test.
fn differences(a: &[u16], b: &[u16], c: &[u16], d: &[u16], out: &mut Vec<u32>) {
    const BLOCK: usize = 64;
    for s in (0..a.len()).step_by(BLOCK) {
        let e = (s + BLOCK).min(a.len());
        let (a, b, c, d) = (&a[s..e], &b[s..e], &c[s..e], &d[s..e]);
        let any = a
            .iter()
            .zip(b)
            .zip(c.iter().zip(d))
            .fold(0u16, |acc, ((a, b), (c, d))| acc | (a ^ b) | (c ^ d));
        if any != 0 {
            for i in 0..a.len() {
                if (a[i] ^ b[i]) | (c[i] ^ d[i]) != 0 {
                    out.push((s + i) as u32);
                }
            }
        }
    }
}

/// Per line, the edges whose two nodes differ in conductor or material. Y-edges (between rows
/// j and j+1) are listed per column, x-edges per row; each list ascending.
fn class_changes(
    grid: &Grid,
    conductor: &[u16],
    material: &[u16],
) -> (Vec<Vec<u32>>, Vec<Vec<u32>>) {
    let (nx, ny) = (grid.nx, grid.ny);
    fn row(v: &[u16], j: usize, nx: usize) -> &[u16] {
        &v[j * nx..(j + 1) * nx]
    }
    let y_found: Vec<Vec<u32>> = (0..ny.saturating_sub(1))
        .into_par_iter()
        .map(|j| {
            let mut out = Vec::new();
            differences(
                row(conductor, j, nx),
                row(conductor, j + 1, nx),
                row(material, j, nx),
                row(material, j + 1, nx),
                &mut out,
            );
            out
        })
        .collect();
    let mut cols: Vec<Vec<u32>> = vec![Vec::new(); nx];
    for (j, found) in y_found.iter().enumerate() {
        for &i in found {
            cols[i as usize].push(j as u32);
        }
    }
    let rows: Vec<Vec<u32>> = (0..ny)
        .into_par_iter()
        .map(|j| {
            let (c, m) = (row(conductor, j, nx), row(material, j, nx));
            let mut out = Vec::new();
            differences(&c[..nx - 1], &c[1..], &m[..nx - 1], &m[1..], &mut out);
            out
        })
        .collect();
    (cols, rows)
}

/// Rasterises a validated design onto `grid` (see the module documentation).
///
/// Panics if the design has a shape without an outline (one that fails
/// [`crate::design::validate`]).
pub fn rasterize(design: &Design, grid: &Grid) -> Raster {
    let (nx, ny) = (grid.nx, grid.ny);
    let (xs, ys) = (grid.xs(), grid.ys());
    let cond_outlines: Vec<Vec<Outline>> = design
        .conductors
        .iter()
        .map(|c| c.shapes().map(outline_of).collect())
        .collect();
    let diel_outlines: Vec<Outline> = design
        .dielectrics
        .iter()
        .map(|d| outline_of(&d.shape))
        .collect();
    let cond: Vec<Sections> = cond_outlines
        .par_iter()
        .map(|pieces| match pieces.as_slice() {
            [o] => Sections::new(o, xs, ys, false),
            _ => Sections::union(pieces, xs, ys),
        })
        .collect();
    let diel: Vec<Sections> = diel_outlines
        .par_iter()
        .map(|o| Sections::new(o, xs, ys, true))
        .collect();
    let (conductor, material) = classify(grid, xs, ys, &cond, &diel);
    let (col_changes, row_changes) = class_changes(grid, &conductor, &material);

    let mut eps_of = vec![design.background.permittivity];
    eps_of.extend(design.dielectrics.iter().map(|d| d.permittivity));
    let nodes = edges::Nodes {
        conductor: &conductor,
        material: &material,
        eps_of: &eps_of,
    };
    let columns: Vec<Vec<CutEdge>> = (0..nx)
        .into_par_iter()
        .map(|i| {
            let line = edges::Line::new(
                ys,
                i,
                i,
                nx,
                Axis::Y,
                cond.iter().map(|s| &s.cols),
                diel.iter().map(|s| &s.cols),
                &eps_of,
                edges::Banks::of(i, nx, |k| grid.dx(k)),
            );
            line.cut_edges(&nodes, &col_changes[i])
        })
        .collect();
    let rows: Vec<Vec<CutEdge>> = (0..ny)
        .into_par_iter()
        .map(|j| {
            let line = edges::Line::new(
                xs,
                j,
                j * nx,
                1,
                Axis::X,
                cond.iter().map(|s| &s.rows),
                diel.iter().map(|s| &s.rows),
                &eps_of,
                edges::Banks::of(j, ny, |k| grid.dy(k)),
            );
            line.cut_edges(&nodes, &row_changes[j])
        })
        .collect();
    let mut cut_edges: Vec<CutEdge> = columns.into_iter().chain(rows).flatten().collect();
    cut_edges.par_sort_unstable_by_key(|c| (c.node, c.axis));

    let axisymmetric = design.mode == Mode::Axisymmetric;
    let mut node_charge: Vec<(u32, f64)> = Vec::new();
    for c in &design.charges {
        let part = match c {
            Charge::Region { density, shape, .. } => {
                let o = outline_of(shape);
                let scale = if axisymmetric {
                    2.0 * std::f64::consts::PI * density
                } else {
                    *density
                };
                let mut v = charge::region(&o, grid, axisymmetric);
                v.iter_mut().for_each(|e| e.1 *= scale);
                v
            }
            Charge::Concentrated { at, amount, .. } => {
                charge::concentrated(*at, *amount, grid, axisymmetric)
            }
        };
        node_charge = if node_charge.is_empty() {
            part
        } else {
            charge::merge_sum(&node_charge, &part)
        };
    }
    node_charge.retain(|&(p, q)| q != 0.0 && conductor[p as usize] == NO_CONDUCTOR);
    let mut raster = Raster {
        grid: grid.clone(),
        conductor,
        material,
        cut_edges,
        node_charge,
    };
    snap::snap_near_surfaces(&mut raster, design);
    raster
}

mod snap;
pub use snap::SNAP;

#[cfg(test)]
mod tests;
