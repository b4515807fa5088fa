//! Outlines to draw: named sets of closed rings and open polylines, in metres.
//!
//! Invariants: rings are implicitly closed (the last point is not repeated) and filled by the
//! even-odd rule, so a hole is simply one more ring; shapes are drawn from the same exact
//! outlines the rasteriser uses (`fieldgrid_solver::geometry`), arcs flattened to the
//! tolerance given.

use fieldgrid_solver::design::{Point, Shape};
use fieldgrid_solver::geometry::outline_polylines;

/// How an outline's edge is drawn.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum Edge {
    /// A solid line (a conductor held at a potential, a dielectric's dashes).
    #[default]
    Solid,
    /// A dashed line (a floating conductor).
    Dashed,
}

/// A named outline in metres.
#[derive(Clone, Debug, PartialEq, Default)]
pub struct Outline {
    /// Name written beside it (empty: no label).
    pub name: String,
    /// Closed rings; together they bound the filled area (even-odd rule).
    pub rings: Vec<Vec<Point>>,
    /// Open polylines (thin conductors).
    pub lines: Vec<Vec<Point>>,
    /// Edge style of a conductor.
    pub edge: Edge,
}

impl Outline {
    /// A filled polygon.
    pub fn polygon(name: impl Into<String>, ring: Vec<Point>) -> Outline {
        Outline {
            name: name.into(),
            rings: vec![ring],
            lines: Vec::new(),
            edge: Edge::Solid,
        }
    }

    /// A thin (zero-thickness) polyline.
    pub fn polyline(name: impl Into<String>, line: Vec<Point>) -> Outline {
        Outline {
            name: name.into(),
            rings: Vec::new(),
            lines: vec![line],
            edge: Edge::Solid,
        }
    }

    /// The outline of a design shape (the geometry module's exact outline, arcs flattened to
    /// within `tol` metres).
    pub fn from_shape(name: impl Into<String>, shape: &Shape, tol: f64) -> Outline {
        let mut loops = outline_polylines(shape, tol);
        if let Shape::Polyline(_) = shape {
            return Outline {
                name: name.into(),
                rings: Vec::new(),
                lines: loops,
                edge: Edge::Solid,
            };
        }
        // Closed loops come with their first point repeated at the end; rings close implicitly.
        for l in &mut loops {
            if l.len() > 1 && l.first() == l.last() {
                l.pop();
            }
        }
        Outline {
            name: name.into(),
            rings: loops,
            lines: Vec::new(),
            edge: Edge::Solid,
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
        let o = Outline::from_shape(
            "wire",
            &Shape::Circle {
                center: [1.0, 2.0],
                radius: 0.5,
            },
            1e-4,
        );
        let c = &o.rings[0];
        assert!(c.len() >= 8 && c.first() != c.last());
        for p in c {
            assert!(((p[0] - 1.0).hypot(p[1] - 2.0) - 0.5).abs() < 1e-12);
        }
        // Inscribed polygon: area short of pi r^2 by at most the chord error times the perimeter.
        let a = area(c);
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
        let s = Shape::Polygon {
            outer: l,
            holes: Vec::new(),
            round: 0.1,
            corners: None,
        };
        let f = &Outline::from_shape("l", &s, 1e-6).rings[0];
        // Five convex corners lose (1 - pi/4) r^2 each, the reflex corner gains the same.
        let exact = 3.0 - 4.0 * (1.0 - std::f64::consts::FRAC_PI_4) * 0.01;
        assert!((area(f) - exact).abs() < 1e-5, "{}", area(f));
    }
}
