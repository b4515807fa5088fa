//! Free charge onto nodes: exact control-volume integrals of charge regions, and the
//! conserving split of concentrated charges.
//!
//! Node (i, j)'s control volume is the box between the half-way lines of the lattice,
//! `[X_i, X_{i+1}] x [Y_j, Y_{j+1}]` with X_0 = x0, X_i = (x_{i-1} + x_i) / 2, X_nx = x1 (so
//! boxes on the domain's sides are halved). By Green's theorem, for a region R with boundary
//! oriented filled-side-left and a box B = [xa, xb] x [ya, yb],
//! `area(R ∩ B) = Σ_{pieces of ∂R in B} ∫ (x - xa) dy + (xb - xa) * |R ∩ {x = xb} ∩ [ya, yb]|`
//! (the box's left side contributes nothing, its top and bottom have dy = 0), and likewise
//! `∫∫_{R ∩ B} x dA` with `(x^2 - xa^2) / 2` in place of `x - xa`. The pieces are cut at every
//! half-way line; a piece lying on a half-way line X_i belongs to the box on its right, and the
//! right-side length is taken just left of the line, so each bit of boundary counts once.

use crate::design::Point;
use crate::geometry::lines::LineSets;
use crate::geometry::{Outline, Piece};
use crate::grid::Grid;
use rayon::prelude::*;

/// Half-way lines along one axis: `n + 1` values from the first node to the last.
fn halfway(n: usize, at: impl Fn(usize) -> f64) -> Vec<f64> {
    let mut v = Vec::with_capacity(n + 1);
    v.push(at(0));
    for k in 1..n {
        v.push(0.5 * (at(k - 1) + at(k)));
    }
    v.push(at(n - 1));
    v
}

/// Box index along one axis holding coordinate `c` (boxes `[v_k, v_{k+1})`), if any.
fn cell_of(v: &[f64], c: f64) -> Option<usize> {
    let k = v.partition_point(|&x| x <= c).checked_sub(1)?;
    (k + 1 < v.len()).then_some(k)
}

/// Rows of boxes per parallel band of the side terms (fixed: results do not depend on it).
const BAND: usize = 64;

/// Per node, the area (planar, m^2) or `∫∫ x dA` (axisymmetric, m^3) of the region inside its
/// control volume; sorted by node, one entry per node.
pub(super) fn region(o: &Outline, grid: &Grid, axisymmetric: bool) -> Vec<(u32, f64)> {
    let (nx, ny) = (grid.nx, grid.ny);
    let cx = halfway(nx, |i| grid.x(i));
    let cy = halfway(ny, |j| grid.y(j));
    let weight = |m: usize| {
        let (xa, xb) = (cx[m], cx[m + 1]);
        if axisymmetric {
            0.5 * (xb - xa) * (xb + xa)
        } else {
            xb - xa
        }
    };

    // Boundary pieces, cut at every half-way line they cross.
    let mut terms: Vec<(u32, f64)> = Vec::new();
    let mut pts: Vec<(f64, Point)> = Vec::new();
    for p in o.pieces() {
        let (a, b) = (p.start(), p.end());
        let key = |q: Point| (q[0] - a[0]).abs() + (q[1] - a[1]).abs();
        pts.clear();
        let [x0, x1] = p.x_range();
        for &c in &cx[cx.partition_point(|&c| c <= x0)..] {
            if c >= x1 {
                break;
            }
            let q = [c, p.y_at(c)];
            pts.push((key(q), q));
        }
        let [y0, y1] = p.y_range();
        for &c in &cy[cy.partition_point(|&c| c <= y0)..] {
            if c >= y1 {
                break;
            }
            let q = [p.x_at(c), c];
            pts.push((key(q), q));
        }
        pts.sort_by(|u, v| u.0.total_cmp(&v.0));
        let mut from = a;
        for q in pts.iter().map(|u| u.1).chain([b]) {
            if q != from {
                let mid = [0.5 * (from[0] + q[0]), 0.5 * (from[1] + q[1])];
                if let (Some(i), Some(j)) = (cell_of(&cx, mid[0]), cell_of(&cy, mid[1])) {
                    let sub: Piece = p.between(from, q);
                    let v = if axisymmetric {
                        sub.moment_radial(cx[i])
                    } else {
                        sub.moment_area(cx[i])
                    };
                    terms.push(((i + j * nx) as u32, v));
                }
                from = q;
            }
        }
    }
    terms.sort_by_key(|e| e.0);

    // Right sides: section m (just left of x = cx[m+1]) is the right side of box column m.
    // Visited box row by box row, so the terms come out sorted by node, and merged band by
    // band with the piece terms of the band.
    let sides = LineSets::build(o, &cx[1..], true);
    let (m0, m1) = sides.span();
    let m1 = m1.min(nx).max(m0);
    let cols: Vec<(&[[f64; 2]], f64)> = (m0..m1).map(|m| (sides.lower(m), weight(m))).collect();
    let b = o.bbox();
    let l0 = cy.partition_point(|&y| y <= b.min[1]).saturating_sub(1);
    let l1 = cy.partition_point(|&y| y < b.max[1]).min(ny).max(l0);
    let bands: Vec<usize> = (l0..l1).step_by(BAND).collect();
    let parts: Vec<Vec<(u32, f64)>> = bands
        .par_iter()
        .map(|&lb| {
            let le = (lb + BAND).min(l1);
            // Piece terms of this band's rows (all rows before the first band go to it, all
            // after the last to the last, so none is lost).
            let lo = if lb == l0 {
                0
            } else {
                terms.partition_point(|e| (e.0 as usize) < lb * nx)
            };
            let hi = if le == l1 {
                terms.len()
            } else {
                terms.partition_point(|e| (e.0 as usize) < le * nx)
            };
            let band_terms = &terms[lo..hi];
            let mut out: Vec<(u32, f64)> =
                Vec::with_capacity((le - lb) * cols.len() + band_terms.len());
            let mut t = 0;
            // Appends one entry, adding it to the last when both are of the same node.
            let put = |out: &mut Vec<(u32, f64)>, e: (u32, f64)| match out.last_mut() {
                Some(last) if last.0 == e.0 => last.1 += e.1,
                _ => out.push(e),
            };
            let mut cur: Vec<usize> = cols
                .iter()
                .map(|c| c.0.partition_point(|iv| iv[1] <= cy[lb]))
                .collect();
            for l in lb..le {
                let (ya, yb) = (cy[l], cy[l + 1]);
                for (k, (ivs, w)) in cols.iter().enumerate() {
                    let c = &mut cur[k];
                    while *c < ivs.len() && ivs[*c][1] <= ya {
                        *c += 1;
                    }
                    let mut len = 0.0;
                    for iv in ivs[*c..].iter().take_while(|iv| iv[0] < yb) {
                        len += (iv[1].min(yb) - iv[0].max(ya)).max(0.0);
                    }
                    if len > 0.0 {
                        let node = (m0 + k + l * nx) as u32;
                        while t < band_terms.len() && band_terms[t].0 < node {
                            put(&mut out, band_terms[t]);
                            t += 1;
                        }
                        put(&mut out, (node, w * len));
                    }
                }
            }
            for &e in &band_terms[t..] {
                put(&mut out, e);
            }
            out
        })
        .collect();
    if parts.is_empty() {
        return merge_sum(&[], &terms);
    }
    parts.concat()
}

/// A concentrated charge split onto the nodes around it: bilinearly onto the four nodes of
/// its cell (planar), or linearly onto the two axis nodes around it (axisymmetric). The
/// shares add up to `amount`.
pub(super) fn concentrated(
    at: Point,
    amount: f64,
    grid: &Grid,
    axisymmetric: bool,
) -> Vec<(u32, f64)> {
    let locate = |c: f64, cell: usize, pos: &dyn Fn(usize) -> f64| {
        let t = ((c - pos(cell)) / (pos(cell + 1) - pos(cell))).clamp(0.0, 1.0);
        (cell, t)
    };
    let (j, ty) = locate(at[1], grid.cell_y(at[1]), &|j| grid.y(j));
    let shares: Vec<(usize, usize, f64)> = if axisymmetric {
        vec![(0, j, 1.0 - ty), (0, j + 1, ty)]
    } else {
        let (i, tx) = locate(at[0], grid.cell_x(at[0]), &|i| grid.x(i));
        vec![
            (i, j, (1.0 - tx) * (1.0 - ty)),
            (i + 1, j, tx * (1.0 - ty)),
            (i, j + 1, (1.0 - tx) * ty),
            (i + 1, j + 1, tx * ty),
        ]
    };
    shares
        .into_iter()
        .filter(|s| s.2 != 0.0)
        .map(|(i, j, w)| (grid.idx(i, j) as u32, amount * w))
        .collect()
}

/// Merges two lists sorted by node into one with a single entry per node, adding entries of
/// one node in a fixed order (those of `a` first).
pub(super) fn merge_sum(a: &[(u32, f64)], b: &[(u32, f64)]) -> Vec<(u32, f64)> {
    let mut out: Vec<(u32, f64)> = Vec::with_capacity(a.len() + b.len());
    let (mut i, mut j) = (0, 0);
    while i < a.len() || j < b.len() {
        let e = if j >= b.len() || (i < a.len() && a[i].0 <= b[j].0) {
            i += 1;
            a[i - 1]
        } else {
            j += 1;
            b[j - 1]
        };
        match out.last_mut() {
            Some(last) if last.0 == e.0 => last.1 += e.1,
            _ => out.push(e),
        }
    }
    out
}
