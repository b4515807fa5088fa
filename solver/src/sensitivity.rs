//! Derivatives of results with respect to design parameters by central differences of
//! paired solves, and the step each parameter takes.
//!
//! A parameter that moves geometry is stepped so that the bodies move by [`STEP_CELLS`]
//! cells: a smaller move would change the cut-cell fractions by amounts comparable to the
//! solver tolerance and the rasterisation's round-off, a larger one would add the curvature
//! of the result to the derivative (common practice for differences of discretised
//! models: the step well above the noise, well below the scale of the geometry). How far the
//! bodies move per unit of the parameter is measured on the designs themselves
//! ([`displacement`]), so a parameter used as `w/2` or in millimetres is handled alike. A
//! parameter that moves no body (a permittivity, a potential) is stepped by [`REL_STEP`] of
//! its value.
//!
//! Steps are rounded to two significant digits and the stepped values to twelve: a design's
//! values are decimal, and a body the nominal design puts exactly on a grid line should sit
//! exactly on one (not a rounding error beside it) at the stepped values too, or the two
//! solves see different rasterisations (measured: a microstrip's Z0 moved 1 % between
//! h = 0.64 and h = 0.6 + 0.04 = 0.6399999999999918 mm on a 0.02 mm grid).
//!
//! Each derivative is taken with the step h and again with 2h: for a smooth result the two
//! differ by 3/4 of the second one's O(h^2) error, and where the discretisation jumps (a
//! thin trace crossing a node line moves an impedance by up to a percent) they differ by
//! the jump's share. Their difference is the derivative's error estimate, so that spreads
//! built on derivatives can widen by it rather than be optimistic.
//!
//! Invariants: a central difference (f(p + h) - f(p - h)) / 2h has error O(h^2) for a smooth
//! result; the step is positive and finite.

use crate::design::{Charge, Design, Shape};

/// Cells the bodies move in one step of a geometric parameter.
pub const STEP_CELLS: f64 = 2.0;

/// Relative step of a parameter that moves no body.
pub const REL_STEP: f64 = 0.01;

/// The step of a parameter of value `value` whose bodies move `per_unit` metres per unit of
/// the parameter (zero when it moves none), on a uniform lattice of spacing `cell` metres
/// (zero on a lattice whose node lines follow the bodies: the step is then [`REL_STEP`] of
/// the value, as for a parameter that moves no body).
pub fn step(value: f64, per_unit: f64, cell: f64) -> f64 {
    let h = if per_unit > 0.0 && per_unit.is_finite() && cell > 0.0 {
        STEP_CELLS * cell / per_unit
    } else if value != 0.0 {
        REL_STEP * value.abs()
    } else {
        REL_STEP
    };
    significant(h, 2)
}

/// `value + h` to twelve significant digits: the stepped value as a designer would write it.
pub fn stepped(value: f64, h: f64) -> f64 {
    significant(value + h, 12)
}

/// `v` rounded to `digits` significant decimal digits.
fn significant(v: f64, digits: usize) -> f64 {
    format!("{v:.*e}", digits - 1).parse().unwrap_or(v)
}

/// The central difference of paired results at p + h and p - h, per unit of p.
pub fn central(plus: &[f64], minus: &[f64], h: f64) -> Vec<f64> {
    assert_eq!(plus.len(), minus.len(), "paired results");
    plus.iter()
        .zip(minus)
        .map(|(a, b)| (a - b) / (2.0 * h))
        .collect()
}

/// The derivative from the step h, and its error estimate |d(h) - d(2h)|, from central
/// differences with steps h and 2h (NaN in, NaN out).
pub fn with_error(d_h: f64, d_2h: f64) -> (f64, f64) {
    (d_h, (d_h - d_2h).abs())
}

/// The largest distance any defining point of a body (conductor, dielectric, charge) moves
/// between two designs of the same structure, m; `None` when the structure differs (another
/// shape kind, another vertex count).
pub fn displacement(a: &Design, b: &Design) -> Option<f64> {
    let mut most = 0.0f64;
    let shapes = |d: &Design| -> Vec<Shape> {
        let mut v: Vec<Shape> = d
            .conductors
            .iter()
            .flat_map(|c| c.shapes().cloned())
            .collect();
        v.extend(d.dielectrics.iter().map(|c| c.shape.clone()));
        v.extend(d.charges.iter().map(|c| match c {
            Charge::Region { shape, .. } => shape.clone(),
            Charge::Concentrated { at, .. } => Shape::Polyline(vec![*at]),
        }));
        v
    };
    let (sa, sb) = (shapes(a), shapes(b));
    if sa.len() != sb.len() {
        return None;
    }
    for (x, y) in sa.iter().zip(&sb) {
        let (px, py) = (points(x), points(y));
        if px.len() != py.len() || std::mem::discriminant(x) != std::mem::discriminant(y) {
            return None;
        }
        for (p, q) in px.iter().zip(&py) {
            most = most.max((p[0] - q[0]).hypot(p[1] - q[1]));
        }
    }
    Some(most)
}

/// The points that define a shape, with radii as points on the shape's right (so a radius
/// change moves a point by the change).
fn points(s: &Shape) -> Vec<[f64; 2]> {
    match s {
        Shape::Rect { x, y, round } => vec![
            [x[0], y[0]],
            [x[1], y[1]],
            [x[0] + round, y[0]],
            [x[1] - round, y[1]],
        ],
        Shape::Circle { center, radius } => {
            vec![*center, [center[0] + radius, center[1]]]
        }
        Shape::Ring {
            center,
            inner,
            outer,
        } => vec![
            *center,
            [center[0] + inner, center[1]],
            [center[0] + outer, center[1]],
        ],
        Shape::Polygon {
            outer,
            holes,
            round,
            ..
        } => {
            let mut v = outer.clone();
            v.extend(holes.iter().flatten());
            v.push([*round, 0.0]);
            v
        }
        Shape::Polyline(p) => p.clone(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::design::{Conductor, Drive};

    fn with_rect(x1: f64) -> Design {
        Design {
            conductors: vec![Conductor {
                name: "a".into(),
                drive: Drive::Fixed(1.0),
                joined: Vec::new(),
                shape: Shape::Rect {
                    x: [0.1, x1],
                    y: [0.1, 0.2],
                    round: 0.0,
                },
            }],
            ..Design::default()
        }
    }

    #[test]
    fn a_geometric_step_moves_the_bodies_two_cells() {
        // The edge moves 0.5 m per unit of the parameter (x1 = p / 2).
        let per_unit = displacement(&with_rect(0.5), &with_rect(0.55)).unwrap() / 0.1;
        assert!((per_unit - 0.5).abs() < 1e-12);
        let h = step(1.0, per_unit, 0.01);
        assert!((h * per_unit - STEP_CELLS * 0.01).abs() < 1e-15);
    }

    #[test]
    fn steps_and_stepped_values_are_round_decimals() {
        assert_eq!(step(1.0, 1.0 / 3.0, 0.01), 0.06);
        assert_eq!(stepped(0.6, 0.04), 0.64);
        assert_eq!(stepped(0.6, -0.04), 0.56);
    }

    #[test]
    fn a_parameter_moving_nothing_takes_a_relative_step() {
        assert_eq!(displacement(&with_rect(0.5), &with_rect(0.5)), Some(0.0));
        assert_eq!(step(4.0, 0.0, 0.01), 0.04);
        assert_eq!(step(0.0, 0.0, 0.01), REL_STEP);
    }

    #[test]
    fn a_changed_structure_has_no_displacement() {
        let mut b = with_rect(0.5);
        b.conductors[0].shape = Shape::Circle {
            center: [0.0, 0.0],
            radius: 1.0,
        };
        assert_eq!(displacement(&with_rect(0.5), &b), None);
    }

    #[test]
    fn the_error_estimate_is_the_difference_of_the_two_steps() {
        // f = x^3 at 1: d(h) = 3 + h^2, d(2h) = 3 + 4 h^2; the estimate 3 h^2 bounds h^2.
        let f = |x: f64| x * x * x;
        let d = |h: f64| central(&[f(1.0 + h)], &[f(1.0 - h)], h)[0];
        let (v, e) = with_error(d(0.1), d(0.2));
        assert!((v - 3.01).abs() < 1e-12 && (e - 0.03).abs() < 1e-12);
        assert!(e >= (v - 3.0).abs());
    }

    #[test]
    fn central_differences_are_exact_for_quadratics() {
        let f = |x: f64| 3.0 * x * x + 2.0 * x;
        let d = central(&[f(1.1)], &[f(0.9)], 0.1);
        assert!((d[0] - 8.0).abs() < 1e-12);
    }
}
