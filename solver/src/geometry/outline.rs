//! Outlines: the exact boundary of a shape as loops of [`Piece`]s, its area, first moment,
//! bounding box, inside test and crossings with vertical and horizontal lines.
//!
//! Invariants: loops close exactly and have the filled side on their left (outer boundaries
//! counter-clockwise, holes clockwise); a polyline is one open path that fills nothing.
//! Crossing rules: a line x = c is crossed by a non-vertical piece spanning `[x_min, x_max]`
//! when `x_min < c <= x_max` (the half-open rule, equal to crossing the line just left of c).

use crate::design::{Boundary, Edge, Point, Shape, ShapeError, ShapeFault};

use super::crossings::{hits, HIT_A};
use super::fillet::{self, FilletError};
use super::piece::{circle_loop, sub};
pub use super::piece::{BBox, Piece};

/// The exact boundary of a shape.
#[derive(Clone, Debug, PartialEq)]
pub struct Outline {
    /// Closed loops (each ending where it starts), filled by the even-odd rule; for an open
    /// outline, one open path.
    pub loops: Vec<Vec<Piece>>,
    /// True for a polyline: the path is open and nothing is filled.
    pub open: bool,
}

/// The design key of a shape kind.
pub(crate) fn shape_key(shape: &Shape) -> &'static str {
    match shape {
        Shape::Rect { .. } => "rect",
        Shape::Circle { .. } => "circle",
        Shape::Ring { .. } => "ring",
        Shape::Polygon { .. } => "polygon",
        Shape::Polyline(_) => "polyline",
    }
}

/// Twice the signed area of a vertex loop (positive counter-clockwise).
pub(crate) fn signed_area2(v: &[Point]) -> f64 {
    let o = v[0];
    let mut s = 0.0;
    for k in 1..v.len().saturating_sub(1) {
        let p = sub(v[k], o);
        let q = sub(v[k + 1], o);
        s += p[0] * q[1] - p[1] * q[0];
    }
    s
}

/// A vertex loop oriented counter-clockwise (`ccw`) or clockwise, the corners `pick` selects
/// (one flag per vertex of `v`) filleted with radius `round` (0: sharp). `boundary` and `key`
/// name the loop in errors, whose indices count in `v`'s order as given.
fn polygon_loop(
    v: &[Point],
    round: f64,
    pick: &[bool],
    ccw: bool,
    boundary: Boundary,
    key: &'static str,
) -> Result<Vec<Piece>, ShapeError> {
    let n = v.len();
    let mut v = v.to_vec();
    let mut pick = pick.to_vec();
    let reversed = (signed_area2(&v) > 0.0) != ccw;
    if reversed {
        v.reverse();
        pick.reverse();
    }
    if round > 0.0 {
        // Vertex k of the reversed loop is vertex n-1-k as given; its edge k (from vertex
        // n-1-k back to n-2-k) is edge n-2-k as given.
        let vertex = |k: usize| if reversed { n - 1 - k } else { k };
        let edge = |k: usize| Edge {
            boundary,
            index: if reversed { (2 * n - 2 - k) % n } else { k },
        };
        fillet::rounded_loop(&v, round, &pick).map_err(|e| {
            let fault = match e {
                FilletError::ZeroEdge { edge: k } => ShapeFault::ZeroEdge(edge(k)),
                FilletError::FoldsBack { vertex: k } => ShapeFault::FoldsBack {
                    boundary,
                    vertex: vertex(k),
                },
                FilletError::TooLarge {
                    edge: k,
                    length,
                    needed,
                } => ShapeFault::RoundTooLarge {
                    round,
                    edge: edge(k),
                    length,
                    needed,
                },
            };
            ShapeError::new("round", fault)
        })
    } else {
        let l = fillet::plain_loop(&v);
        if l.len() < 3 {
            return Err(ShapeError::new(
                key,
                ShapeFault::TooFewVertices {
                    boundary,
                    count: l.len(),
                    needed: 3,
                    distinct: true,
                },
            ));
        }
        Ok(l)
    }
}

/// One flag per vertex of a polygon (outer boundary, then each hole): whether `corners`
/// (see [`Shape::Polygon`]) selects it for rounding. Indices past `total` select nothing.
pub fn rounded_vertices(corners: Option<&[usize]>, total: usize) -> Vec<bool> {
    match corners {
        None => vec![true; total],
        Some(list) => {
            let mut pick = vec![false; total];
            for &k in list {
                if let Some(p) = pick.get_mut(k) {
                    *p = true;
                }
            }
            pick
        }
    }
}

/// The outline of a shape. Errors only for shapes that break the shape rules (sizes not
/// positive, fillet radius too large, fewer than 3 distinct polygon vertices); the full set
/// of rules is checked by [`validate_design`](super::validate_design).
pub fn outline(shape: &Shape) -> Result<Outline, ShapeError> {
    match shape {
        Shape::Rect { x, y, round } => {
            if !(x[1] > x[0] && y[1] > y[0]) {
                return Err(ShapeError::new(
                    "rect",
                    ShapeFault::EmptyRect { x: *x, y: *y },
                ));
            }
            let v = [[x[0], y[0]], [x[1], y[0]], [x[1], y[1]], [x[0], y[1]]];
            Ok(Outline {
                loops: vec![polygon_loop(
                    &v,
                    *round,
                    &[true; 4],
                    true,
                    Boundary::Outer,
                    "rect",
                )?],
                open: false,
            })
        }
        Shape::Circle { center, radius } => {
            if radius.is_nan() || *radius <= 0.0 {
                return Err(ShapeError::new(
                    "circle",
                    ShapeFault::RadiusNotPositive { radius: *radius },
                ));
            }
            Ok(Outline {
                loops: vec![circle_loop(*center, *radius, true)],
                open: false,
            })
        }
        Shape::Ring {
            center,
            inner,
            outer,
        } => {
            if inner.is_nan() || *inner < 0.0 {
                return Err(ShapeError::new(
                    "ring",
                    ShapeFault::RingInnerNegative { inner: *inner },
                ));
            }
            if outer.is_nan() || inner >= outer {
                return Err(ShapeError::new(
                    "ring",
                    ShapeFault::RingInnerNotSmaller {
                        inner: *inner,
                        outer: *outer,
                    },
                ));
            }
            let mut loops = vec![circle_loop(*center, *outer, true)];
            if *inner > 0.0 {
                loops.push(circle_loop(*center, *inner, false));
            }
            Ok(Outline { loops, open: false })
        }
        Shape::Polygon {
            outer,
            holes,
            round,
            corners,
        } => {
            if outer.len() < 3 {
                return Err(ShapeError::new(
                    "polygon",
                    ShapeFault::TooFewVertices {
                        boundary: Boundary::Outer,
                        count: outer.len(),
                        needed: 3,
                        distinct: false,
                    },
                ));
            }
            let total = outer.len() + holes.iter().map(Vec::len).sum::<usize>();
            let pick = rounded_vertices(corners.as_deref(), total);
            let mut loops = vec![polygon_loop(
                outer,
                *round,
                &pick[..outer.len()],
                true,
                Boundary::Outer,
                "polygon",
            )?];
            let mut at = outer.len();
            for (k, h) in holes.iter().enumerate() {
                if h.len() < 3 {
                    return Err(ShapeError::new(
                        "holes",
                        ShapeFault::TooFewVertices {
                            boundary: Boundary::Hole(k),
                            count: h.len(),
                            needed: 3,
                            distinct: false,
                        },
                    ));
                }
                let p = &pick[at..at + h.len()];
                at += h.len();
                loops.push(polygon_loop(
                    h,
                    *round,
                    p,
                    false,
                    Boundary::Hole(k),
                    "holes",
                )?);
            }
            Ok(Outline { loops, open: false })
        }
        Shape::Polyline(pts) => {
            let path: Vec<Piece> = pts
                .windows(2)
                .filter(|w| w[0] != w[1])
                .map(|w| Piece::Line { a: w[0], b: w[1] })
                .collect();
            if path.is_empty() {
                return Err(ShapeError::new(
                    "polyline",
                    ShapeFault::TooFewVertices {
                        boundary: Boundary::Polyline,
                        count: pts.len().min(1),
                        needed: 2,
                        distinct: true,
                    },
                ));
            }
            Ok(Outline {
                loops: vec![path],
                open: true,
            })
        }
    }
}

impl Outline {
    /// Every piece of every loop.
    pub fn pieces(&self) -> impl Iterator<Item = &Piece> + '_ {
        self.loops.iter().flatten()
    }

    /// Bounding box of the outline.
    pub fn bbox(&self) -> BBox {
        self.pieces().fold(BBox::EMPTY, |b, p| b.union(p.bbox()))
    }

    /// Filled area, m^2 (0 for an open outline). Exact for segments and arcs up to rounding.
    pub fn area(&self) -> f64 {
        if self.open {
            return 0.0;
        }
        let xr = self.bbox().min[0];
        self.pieces().map(|p| p.moment_area(xr)).sum()
    }

    /// First moment `∫∫ x dA` of the filled region, m^3 (0 for an open outline).
    pub fn moment_x(&self) -> f64 {
        if self.open {
            return 0.0;
        }
        self.pieces().map(|p| p.moment_radial(0.0)).sum()
    }

    /// The outline with x and y swapped (loop orientation reverses).
    pub fn transposed(&self) -> Outline {
        Outline {
            loops: self
                .loops
                .iter()
                .map(|l| l.iter().map(Piece::transposed).collect())
                .collect(),
            open: self.open,
        }
    }

    /// Sorted y of the crossings with the vertical line x = c under the half-open rule
    /// (`x_min < c <= x_max`), so a vertex on the line is counted once; pieces lying on the
    /// line are not crossings. For a closed outline the count is even.
    pub fn vertical_crossings(&self, c: f64) -> Vec<f64> {
        hits(self.pieces(), &[c])
            .into_iter()
            .filter(|h| h.flags & HIT_A != 0)
            .map(|h| h.at)
            .collect()
    }

    /// Sorted x of the crossings with the horizontal line y = c (half-open in y).
    pub fn horizontal_crossings(&self, c: f64) -> Vec<f64> {
        self.transposed().vertical_crossings(c)
    }

    /// True when `p` is inside the filled region (even-odd rule); points on the boundary may
    /// go either way. Always false for an open outline.
    pub fn contains(&self, p: Point) -> bool {
        !self.open
            && self
                .vertical_crossings(p[0])
                .iter()
                .filter(|&&y| y > p[1])
                .count()
                % 2
                == 1
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::f64::consts::PI;

    fn rect(x: [f64; 2], y: [f64; 2], round: f64) -> Shape {
        Shape::Rect { x, y, round }
    }

    fn closes(o: &Outline) -> bool {
        o.loops.iter().all(|l| {
            l.windows(2).all(|w| w[0].end() == w[1].start())
                && (o.open || l.last().unwrap().end() == l[0].start())
        })
    }

    fn monotone_arcs(o: &Outline) -> bool {
        // Each arc stays in one quadrant: its end points lie on the same side of the
        // centre along both axes (up to the split tolerance).
        o.pieces().all(|p| match *p {
            Piece::Line { .. } => true,
            Piece::Arc {
                a,
                b,
                center,
                radius,
                ..
            } => {
                let t = 1e-9 * radius * radius;
                (a[0] - center[0]) * (b[0] - center[0]) >= -t
                    && (a[1] - center[1]) * (b[1] - center[1]) >= -t
            }
        })
    }

    #[test]
    fn rect_area_and_bbox() {
        let o = outline(&rect([1.0, 3.0], [-1.0, 0.5], 0.0)).unwrap();
        assert!(closes(&o));
        assert!((o.area() - 3.0).abs() < 1e-15);
        assert_eq!(
            o.bbox(),
            BBox {
                min: [1.0, -1.0],
                max: [3.0, 0.5]
            }
        );
    }

    #[test]
    fn rounded_rect_area_is_wh_minus_4_minus_pi_r2() {
        // Closed form: a rectangle with every corner rounded loses (4 - pi) r^2 (four
        // squares r x r less four quarter discs), common practice.
        let (w, h, r) = (3.0, 2.0, 0.4);
        let o = outline(&rect([0.5, 0.5 + w], [1.0, 1.0 + h], r)).unwrap();
        assert!(closes(&o) && monotone_arcs(&o));
        let exact = w * h - (4.0 - PI) * r * r;
        assert!(
            (o.area() - exact).abs() < 1e-14,
            "{} vs {}",
            o.area(),
            exact
        );
        // A stadium: 2r equal to the height.
        let o = outline(&rect([0.0, 3.0], [0.0, 1.0], 0.5)).unwrap();
        assert!(closes(&o));
        assert!((o.area() - (3.0 - (4.0 - PI) * 0.25)).abs() < 1e-14);
        // A square rounded with half its side is a disc: the four fillets meet.
        let o = outline(&rect([-1.0, 1.0], [2.0, 4.0], 1.0)).unwrap();
        assert!(closes(&o) && monotone_arcs(&o));
        assert!(o.pieces().all(|p| matches!(p, Piece::Arc { .. })));
        assert!((o.area() - PI).abs() < 1e-14);
    }

    #[test]
    fn circle_and_ring_areas() {
        let o = outline(&Shape::Circle {
            center: [0.3, -0.2],
            radius: 1.7,
        })
        .unwrap();
        assert!(closes(&o) && monotone_arcs(&o));
        assert!((o.area() - PI * 1.7 * 1.7).abs() < 1e-14);
        let o = outline(&Shape::Ring {
            center: [5.0, 5.0],
            inner: 0.5,
            outer: 2.0,
        })
        .unwrap();
        assert!(closes(&o));
        assert!((o.area() - PI * (4.0 - 0.25)).abs() < 1e-13);
    }

    #[test]
    fn polygon_with_hole_area_either_orientation() {
        let outer = vec![[0.0, 0.0], [4.0, 0.0], [4.0, 3.0], [0.0, 3.0]];
        let hole = vec![[1.0, 1.0], [1.0, 2.0], [2.0, 2.0], [2.0, 1.0]]; // clockwise already
        let mut hole_ccw = hole.clone();
        hole_ccw.reverse();
        for h in [hole, hole_ccw] {
            let o = outline(&Shape::Polygon {
                outer: outer.clone(),
                holes: vec![h],
                round: 0.0,
                corners: None,
            })
            .unwrap();
            assert!((o.area() - 11.0).abs() < 1e-14);
            assert!(o.contains([0.5, 0.5]) && !o.contains([1.5, 1.5]) && !o.contains([5.0, 1.0]));
        }
    }

    #[test]
    fn rounded_polygon_with_concave_corner_area() {
        // An L-shape: 5 convex corners of 90 degrees and one concave. Rounding a convex right
        // angle removes (1 - pi/4) r^2, rounding a concave one adds the same (common practice).
        let l = vec![
            [0.0, 0.0],
            [2.0, 0.0],
            [2.0, 1.0],
            [1.0, 1.0],
            [1.0, 2.0],
            [0.0, 2.0],
        ];
        let r = 0.2;
        let o = outline(&Shape::Polygon {
            outer: l,
            holes: vec![],
            round: r,
            corners: None,
        })
        .unwrap();
        assert!(closes(&o) && monotone_arcs(&o));
        let exact = 3.0 - 4.0 * (1.0 - PI / 4.0) * r * r;
        assert!((o.area() - exact).abs() < 1e-14, "{} vs {exact}", o.area());
    }

    #[test]
    fn rounded_triangle_area() {
        // A fillet of radius r in a corner of interior angle alpha removes
        // r^2 (cot(alpha/2) - (pi - alpha)/2) (the kite minus the sector, common practice).
        let v = vec![[0.0, 0.0], [4.0, 0.0], [1.0, 3.0]];
        let r = 0.3;
        let o = outline(&Shape::Polygon {
            outer: v.clone(),
            holes: vec![],
            round: r,
            corners: None,
        })
        .unwrap();
        assert!(closes(&o) && monotone_arcs(&o));
        let mut exact = 6.0;
        for k in 0..3 {
            let p = v[(k + 2) % 3];
            let q = v[k];
            let s = v[(k + 1) % 3];
            let (d1, d2) = (sub(p, q), sub(s, q));
            let alpha = (d1[0] * d2[1] - d1[1] * d2[0])
                .abs()
                .atan2(d1[0] * d2[0] + d1[1] * d2[1]);
            exact -= r * r * (1.0 / (alpha / 2.0).tan() - (PI - alpha) / 2.0);
        }
        assert!((o.area() - exact).abs() < 1e-13, "{} vs {exact}", o.area());
    }

    #[test]
    fn crossings_count_a_vertex_on_the_line_once() {
        let o = outline(&Shape::Polygon {
            outer: vec![[0.0, 0.0], [2.0, 1.0], [0.0, 2.0], [1.0, 1.0]],
            holes: vec![],
            round: 0.0,
            corners: None,
        })
        .unwrap();
        // x = 1 passes through the vertex (1, 1) and crosses two edges.
        assert_eq!(o.vertical_crossings(1.0), vec![0.5, 1.0, 1.0, 1.5]);
        assert_eq!(o.vertical_crossings(2.0), vec![1.0, 1.0]);
        assert!(o.vertical_crossings(0.0).is_empty());
        let c = o.horizontal_crossings(1.0);
        assert_eq!(c, vec![1.0, 2.0]);
    }

    #[test]
    fn circle_crossings_lie_on_the_circle() {
        let (c, r) = ([0.1, 0.2], 0.7);
        let o = outline(&Shape::Circle {
            center: c,
            radius: r,
        })
        .unwrap();
        for k in 0..50 {
            let x = c[0] - r + 1.4 * r * (k as f64 + 0.37) / 50.0;
            let ys = o.vertical_crossings(x);
            assert_eq!(ys.len(), 2);
            for y in ys {
                assert!(((x - c[0]).hypot(y - c[1]) - r).abs() < 1e-15);
            }
        }
    }

    #[test]
    fn moment_of_disc_and_segment_formula() {
        // ∫∫ x dA of a disc is area * centre x.
        let o = outline(&Shape::Circle {
            center: [2.0, 1.0],
            radius: 0.5,
        })
        .unwrap();
        assert!((o.moment_x() - 2.0 * PI * 0.25).abs() < 1e-14);
        let o = outline(&rect([1.0, 3.0], [0.0, 1.0], 0.3)).unwrap();
        assert!((o.moment_x() - 2.0 * o.area()).abs() < 1e-13);
    }
}
