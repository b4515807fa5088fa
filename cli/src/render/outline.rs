//! Outlines to draw: named sets of closed rings and open polylines, in metres.
//!
//! Invariants: rings are implicitly closed (the last point is not repeated) and filled by the
//! even-odd rule, so a hole is simply one more ring; flattened arcs deviate from the true
//! curve by at most the tolerance given (and use at least 8 segments per full turn).

use fieldgrid_solver::design::{Point, Shape};

/// A named outline in metres.
#[derive(Clone, Debug, PartialEq, Default)]
pub struct Outline {
    /// Name written beside it (empty: no label).
    pub name: String,
    /// Closed rings; together they bound the filled area (even-odd rule).
    pub rings: Vec<Vec<Point>>,
    /// Open polylines (thin conductors).
    pub lines: Vec<Vec<Point>>,
}

impl Outline {
    /// A filled polygon.
    pub fn polygon(name: impl Into<String>, ring: Vec<Point>) -> Outline {
        Outline {
            name: name.into(),
            rings: vec![ring],
            lines: Vec::new(),
        }
    }

    /// A thin (zero-thickness) polyline.
    pub fn polyline(name: impl Into<String>, line: Vec<Point>) -> Outline {
        Outline {
            name: name.into(),
            rings: Vec::new(),
            lines: vec![line],
        }
    }

    /// The outline of a design shape, arcs flattened to within `tol` metres.
    pub fn from_shape(name: impl Into<String>, shape: &Shape, tol: f64) -> Outline {
        let name = name.into();
        match shape {
            Shape::Rect { x, y, round } => {
                let corners = vec![[x[0], y[0]], [x[1], y[0]], [x[1], y[1]], [x[0], y[1]]];
                Outline::polygon(name, fillet(&corners, *round, tol))
            }
            Shape::Circle { center, radius } => {
                Outline::polygon(name, circle(*center, *radius, tol))
            }
            Shape::Ring {
                center,
                inner,
                outer,
            } => {
                let mut rings = vec![circle(*center, *outer, tol)];
                if *inner > 0.0 {
                    rings.push(circle(*center, *inner, tol));
                }
                Outline {
                    name,
                    rings,
                    lines: Vec::new(),
                }
            }
            Shape::Polygon {
                outer,
                holes,
                round,
            } => {
                let mut rings = vec![fillet(outer, *round, tol)];
                rings.extend(holes.iter().map(|h| fillet(h, *round, tol)));
                Outline {
                    name,
                    rings,
                    lines: Vec::new(),
                }
            }
            Shape::Polyline(pts) => Outline::polyline(name, pts.clone()),
        }
    }

    /// A flattening tolerance for pictures of a domain `x` by `y` (m): a ten-thousandth of its
    /// larger side, about a tenth of a pixel at the default picture width.
    pub fn picture_tolerance(x: [f64; 2], y: [f64; 2]) -> f64 {
        (x[1] - x[0]).abs().max((y[1] - y[0]).abs()) * 1e-4
    }

    /// Bounding box [x0, y0, x1, y1] of every point, or `None` when empty.
    pub fn bounds(&self) -> Option<[f64; 4]> {
        let mut b = [
            f64::INFINITY,
            f64::INFINITY,
            f64::NEG_INFINITY,
            f64::NEG_INFINITY,
        ];
        for p in self.rings.iter().chain(self.lines.iter()).flatten() {
            b = [
                b[0].min(p[0]),
                b[1].min(p[1]),
                b[2].max(p[0]),
                b[3].max(p[1]),
            ];
        }
        (b[0] <= b[2]).then_some(b)
    }
}

/// Segments for an arc of `sweep` radians and radius `r` so the chord error stays below `tol`.
fn arc_segments(r: f64, sweep: f64, tol: f64) -> usize {
    let tol = if tol > 0.0 && tol.is_finite() {
        tol
    } else {
        r * 1e-3
    };
    // Chord error of a segment of angle a: r (1 - cos(a/2)).
    let a = if tol >= r {
        std::f64::consts::PI
    } else {
        2.0 * (1.0 - tol / r).acos()
    };
    let full = std::f64::consts::TAU;
    let n = (sweep.abs() / a.max(1e-6)).ceil() as usize;
    n.max((8.0 * sweep.abs() / full).ceil() as usize)
        .clamp(1, 100_000)
}

/// A circle as a ring.
pub fn circle(c: Point, r: f64, tol: f64) -> Vec<Point> {
    let n = arc_segments(r, std::f64::consts::TAU, tol).max(8);
    (0..n)
        .map(|k| {
            let t = std::f64::consts::TAU * k as f64 / n as f64;
            [c[0] + r * t.cos(), c[1] + r * t.sin()]
        })
        .collect()
}

/// Every corner of a closed ring rounded with radius `r` (reduced where an edge is too short
/// to hold the tangent points of both its corners).
pub fn fillet(ring: &[Point], r: f64, tol: f64) -> Vec<Point> {
    let n = ring.len();
    if r.partial_cmp(&0.0) != Some(std::cmp::Ordering::Greater) || n < 3 {
        return ring.to_vec();
    }
    let mut out = Vec::new();
    for k in 0..n {
        let p = ring[k];
        let a = ring[(k + n - 1) % n];
        let b = ring[(k + 1) % n];
        let (la, lb) = (dist(a, p), dist(b, p));
        if la == 0.0 || lb == 0.0 {
            out.push(p);
            continue;
        }
        let u = [(a[0] - p[0]) / la, (a[1] - p[1]) / la];
        let v = [(b[0] - p[0]) / lb, (b[1] - p[1]) / lb];
        let theta = (u[0] * v[0] + u[1] * v[1]).clamp(-1.0, 1.0).acos(); // corner angle
        if !(1e-9..=std::f64::consts::PI - 1e-9).contains(&theta) {
            out.push(p);
            continue;
        }
        let half = theta / 2.0;
        let d = (r / half.tan()).min(la / 2.0).min(lb / 2.0); // tangent distance
        let rr = d * half.tan(); // radius actually used
        let bis = [u[0] + v[0], u[1] + v[1]];
        let bl = (bis[0] * bis[0] + bis[1] * bis[1]).sqrt();
        let c = [
            p[0] + bis[0] / bl * rr / half.sin(),
            p[1] + bis[1] / bl * rr / half.sin(),
        ];
        let t1 = [p[0] + u[0] * d, p[1] + u[1] * d];
        let t2 = [p[0] + v[0] * d, p[1] + v[1] * d];
        let a1 = (t1[1] - c[1]).atan2(t1[0] - c[0]);
        let a2 = (t2[1] - c[1]).atan2(t2[0] - c[0]);
        let mut sweep = a2 - a1;
        while sweep > std::f64::consts::PI {
            sweep -= std::f64::consts::TAU;
        }
        while sweep < -std::f64::consts::PI {
            sweep += std::f64::consts::TAU;
        }
        let m = arc_segments(rr, sweep, tol);
        for s in 0..=m {
            let t = a1 + sweep * s as f64 / m as f64;
            out.push([c[0] + rr * t.cos(), c[1] + rr * t.sin()]);
        }
    }
    out
}

fn dist(a: Point, b: Point) -> f64 {
    ((a[0] - b[0]).powi(2) + (a[1] - b[1]).powi(2)).sqrt()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn area(r: &[Point]) -> f64 {
        let n = r.len();
        (0..n)
            .map(|k| r[k][0] * r[(k + 1) % n][1] - r[(k + 1) % n][0] * r[k][1])
            .sum::<f64>()
            .abs()
            / 2.0
    }

    #[test]
    fn circle_is_within_tolerance() {
        let c = circle([1.0, 2.0], 0.5, 1e-4);
        for p in &c {
            assert!(((p[0] - 1.0).hypot(p[1] - 2.0) - 0.5).abs() < 1e-12);
        }
        // Inscribed polygon: area short of pi r^2 by at most the chord error times the perimeter.
        let a = area(&c);
        let exact = std::f64::consts::PI * 0.25;
        assert!(a < exact && exact - a < 1e-4 * std::f64::consts::TAU * 0.5);
    }

    #[test]
    fn rounded_rect_has_the_filleted_area() {
        // Area of a w x h rectangle with corner radius r: w h - (4 - pi) r^2 (plane geometry).
        let s = Shape::Rect {
            x: [0.0, 4.0],
            y: [0.0, 2.0],
            round: 0.5,
        };
        let o = Outline::from_shape("pad", &s, 1e-6);
        let exact = 8.0 - (4.0 - std::f64::consts::PI) * 0.25;
        assert!(
            (area(&o.rings[0]) - exact).abs() < 1e-5,
            "{}",
            area(&o.rings[0])
        );
        assert_eq!(o.bounds(), Some([0.0, 0.0, 4.0, 2.0]));
    }

    #[test]
    fn fillet_works_at_reflex_corners_too() {
        // An L shape (area 3) with every corner rounded stays close to 3 and keeps its bounds.
        let l = vec![
            [0.0, 0.0],
            [2.0, 0.0],
            [2.0, 1.0],
            [1.0, 1.0],
            [1.0, 2.0],
            [0.0, 2.0],
        ];
        let f = fillet(&l, 0.1, 1e-6);
        // Five convex corners lose (1 - pi/4) r^2 each, the reflex corner gains the same.
        let exact = 3.0 - 4.0 * (1.0 - std::f64::consts::FRAC_PI_4) * 0.01;
        assert!((area(&f) - exact).abs() < 1e-5, "{}", area(&f));
    }
}
