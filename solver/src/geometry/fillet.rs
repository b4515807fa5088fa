//! Vertex loops to pieces, with every corner optionally rounded.
//!
//! A fillet of radius r at a corner is the arc of radius r tangent to both edges; it cuts a
//! convex corner and fills a concave one alike. Its tangent points lie `r * tan(turn/2)`
//! from the vertex along each edge, so an edge holds the fillets at both its ends only when
//! the two distances add up to no more than its length. Vertices where the outline goes
//! straight on (turn below 1e-12 rad) are left as they are.
//!
//! Errors are [`FilletError`] values whose indices count in the loop as given (vertex k, edge
//! k from vertex k to k + 1); the caller, which knows the loop's place in the shape and
//! whether it reversed it, restates them in the user's order.

use super::piece::{push_arc, Piece};
use crate::design::Point;

/// Turns below this (rad) count as straight on.
const STRAIGHT: f64 = 1e-12;

/// Why a loop cannot take its fillets.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) enum FilletError {
    /// Edge k has zero length (or is not a number).
    ZeroEdge {
        /// The edge, 0-based.
        edge: usize,
    },
    /// The loop folds straight back on itself at vertex k, which is to be rounded.
    FoldsBack {
        /// The vertex, 0-based.
        vertex: usize,
    },
    /// The fillets at both ends of edge k need more than its length.
    TooLarge {
        /// The edge, 0-based.
        edge: usize,
        /// Its length, m.
        length: f64,
        /// What its fillets take of it, m.
        needed: f64,
    },
}

/// The loop through `v` (closed implicitly) as segments, dropping zero-length edges.
pub(crate) fn plain_loop(v: &[Point]) -> Vec<Piece> {
    let n = v.len();
    (0..n)
        .filter(|&k| v[k] != v[(k + 1) % n])
        .map(|k| Piece::Line {
            a: v[k],
            b: v[(k + 1) % n],
        })
        .collect()
}

/// The loop through `v` (closed implicitly, no zero-length edges) with the corners `pick`
/// selects (one flag per vertex) rounded with radius `r` > 0; the others stay sharp. An error
/// names the edge or vertex at fault.
pub(crate) fn rounded_loop(v: &[Point], r: f64, pick: &[bool]) -> Result<Vec<Piece>, FilletError> {
    let n = v.len();
    let edge = |k: usize| {
        let (a, b) = (v[k], v[(k + 1) % n]);
        let d = [b[0] - a[0], b[1] - a[1]];
        let len = d[0].hypot(d[1]);
        (len, [d[0] / len, d[1] / len])
    };
    let edges: Vec<(f64, Point)> = (0..n).map(edge).collect();
    if let Some(edge) = edges.iter().position(|e| e.0.is_nan() || e.0 <= 0.0) {
        return Err(FilletError::ZeroEdge { edge });
    }
    // Per vertex k: tangent distance, tangent points and arc (centre, ccw).
    struct Corner {
        t: f64,
        t1: Point,
        t2: Point,
        center: Point,
        ccw: bool,
    }
    let mut corners = Vec::with_capacity(n);
    for k in 0..n {
        let d1 = edges[(k + n - 1) % n].1;
        let d2 = edges[k].1;
        let cross = d1[0] * d2[1] - d1[1] * d2[0];
        let dot = d1[0] * d2[0] + d1[1] * d2[1];
        let turn = cross.abs().atan2(dot);
        let p = v[k];
        if turn < STRAIGHT || !pick[k] {
            corners.push(Corner {
                t: 0.0,
                t1: p,
                t2: p,
                center: p,
                ccw: true,
            });
            continue;
        }
        if turn > std::f64::consts::PI - STRAIGHT {
            return Err(FilletError::FoldsBack { vertex: k });
        }
        let t = r * (0.5 * turn).tan();
        let t1 = [p[0] - d1[0] * t, p[1] - d1[1] * t];
        let t2 = [p[0] + d2[0] * t, p[1] + d2[1] * t];
        let ccw = cross > 0.0;
        let s = if ccw { r } else { -r };
        let center = [t1[0] - d1[1] * s, t1[1] + d1[0] * s];
        corners.push(Corner {
            t,
            t1,
            t2,
            center,
            ccw,
        });
    }
    // Each edge must hold the tangent lengths of both its ends.
    for k in 0..n {
        let needed = corners[k].t + corners[(k + 1) % n].t;
        let length = edges[k].0;
        if needed > length * (1.0 + 1e-12) {
            return Err(FilletError::TooLarge {
                edge: k,
                length,
                needed,
            });
        }
    }
    // Where two fillets meet on an edge, both use the same point.
    for k in 0..n {
        let next = (k + 1) % n;
        let need = corners[k].t + corners[next].t;
        if need >= edges[k].0 * (1.0 - 1e-12) && corners[next].t > 0.0 && corners[k].t > 0.0 {
            corners[next].t1 = corners[k].t2;
        }
    }
    let mut out = Vec::new();
    for k in 0..n {
        let c = &corners[k];
        if c.t > 0.0 {
            push_arc(&mut out, c.center, r, c.t1, c.t2, c.ccw);
        }
        let from = if c.t > 0.0 { c.t2 } else { v[k] };
        let nc = &corners[(k + 1) % n];
        let to = if nc.t > 0.0 { nc.t1 } else { v[(k + 1) % n] };
        if from != to {
            out.push(Piece::Line { a: from, b: to });
        }
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fillet_arcs_are_tangent_and_on_radius() {
        let v = vec![[0.0, 0.0], [3.0, 0.0], [3.0, 1.0], [1.5, 2.5], [0.0, 1.0]];
        let r = 0.25;
        let l = rounded_loop(&v, r, &[true; 5]).unwrap();
        for (k, p) in l.iter().enumerate() {
            assert_eq!(p.end(), l[(k + 1) % l.len()].start());
            if let Piece::Arc {
                a,
                b,
                center,
                radius,
                ..
            } = *p
            {
                assert_eq!(radius, r);
                for q in [a, b] {
                    assert!(((q[0] - center[0]).hypot(q[1] - center[1]) - r).abs() < 1e-15);
                }
            }
        }
    }

    #[test]
    fn straight_vertex_gets_no_fillet() {
        let v = vec![[0.0, 0.0], [1.0, 0.0], [2.0, 0.0], [2.0, 2.0], [0.0, 2.0]];
        let l = rounded_loop(&v, 0.1, &[true; 5]).unwrap();
        let arcs = l.iter().filter(|p| matches!(p, Piece::Arc { .. })).count();
        // Four rounded right angles, one quadrant piece each.
        assert_eq!(arcs, 4);
    }

    #[test]
    fn radius_too_large_names_the_edge() {
        let v = vec![[0.0, 0.0], [1.0, 0.0], [1.0, 5.0], [0.0, 5.0]];
        // Edge 0 (1 long) needs 0.6 at each end; edge 1 (5 long) holds its fillets.
        match rounded_loop(&v, 0.6, &[true; 4]).unwrap_err() {
            FilletError::TooLarge {
                edge,
                length,
                needed,
            } => {
                assert_eq!((edge, length), (0, 1.0));
                assert!((needed - 1.2).abs() < 1e-12, "{needed}");
            }
            e => panic!("{e:?}"),
        }
    }

    #[test]
    fn a_spike_to_be_rounded_names_its_vertex() {
        // At vertex 1 the outline turns straight back along edge 0.
        let v = vec![[0.0, 0.0], [3.0, 0.0], [2.0, 0.0], [2.0, 2.0]];
        assert_eq!(
            rounded_loop(&v, 0.1, &[true; 4]).unwrap_err(),
            FilletError::FoldsBack { vertex: 1 }
        );
    }

    #[test]
    fn chosen_corner_rounding_leaves_other_vertices_in_place() {
        let v = vec![[0.0, 0.0], [2.0, 0.0], [2.0, 1.0], [0.0, 1.0]];
        let l = rounded_loop(&v, 0.25, &[false, true, false, false]).unwrap();
        let arcs: Vec<&Piece> = l
            .iter()
            .filter(|p| matches!(p, Piece::Arc { .. }))
            .collect();
        assert_eq!(arcs.len(), 1);
        let ends: Vec<Point> = l.iter().map(|p| p.start()).collect();
        for k in [0, 2, 3] {
            assert!(ends.contains(&v[k]), "vertex {k} moved: {ends:?}");
        }
        assert!(!ends.contains(&v[1]));
    }
}
