//! The reference potential of a study: a common offset of every fixed potential, left out of
//! the solves and added back to the reported potentials.
//!
//! A potential offset common to every fixed surface changes no field, charge or energy when
//! no side is open (the constant is a solution of the homogeneous problem; floating
//! conductors follow it). Solved as given, though, a study of sides at 1 MV and a conductor a
//! fraction of a microvolt above them carries the solver's relative residual times 1 MV
//! through every superposed solve, and that noise, not the physics, sets the peak field. The
//! study therefore solves for the potential relative to [`common`] of the design and keeps
//! fields, charges and energy on that relative potential.
//!
//! Invariants: the reference is zero whenever a side is open or the fixed potentials span
//! zero (most designs are solved exactly as written); otherwise it is the fixed potential
//! nearest zero, so no relative fixed potential exceeds the spread of the fixed potentials
//! in magnitude. What the rounding of the design's potentials to doubles leaves unresolved
//! is reported by [`rounding_floor`]. With a non-zero reference the solution keeps the
//! relative potential beside the absolute one, 8 B per node more, which the plan's per-node
//! model (measured well below it, see `plan.rs`) covers.

use crate::design::{Design, Drive, Side};

/// The common offset of the fixed potentials of `design` (sides and fixed conductors), V:
/// zero when a side is open, when nothing is fixed, when the fixed potentials span zero or
/// when one is not finite; else the fixed potential nearest zero.
pub(crate) fn common(design: &Design) -> f64 {
    let sides = sides(design);
    if sides.contains(&Side::Open) {
        return 0.0;
    }
    let (lo, hi) = match span(design) {
        Some(s) => s,
        None => return 0.0,
    };
    if lo > 0.0 {
        lo
    } else if hi < 0.0 {
        hi
    } else {
        0.0
    }
}

/// `design` with `reference` subtracted from every fixed potential.
pub(crate) fn relative(design: &Design, reference: f64) -> Design {
    let mut d = design.clone();
    let shift = |s: &mut Side| {
        if let Some(v) = s.potential() {
            *s = Side::Fixed(v - reference);
        }
    };
    shift(&mut d.sides.left);
    shift(&mut d.sides.right);
    shift(&mut d.sides.bottom);
    shift(&mut d.sides.top);
    for c in &mut d.conductors {
        if let Drive::Fixed(v) = &mut c.drive {
            *v -= reference;
        }
    }
    d
}

/// The rounding floor of the design's potentials, when it matters: the spread of the fixed
/// potentials (V), their largest magnitude (V) and the relative accuracy (to one) their
/// rounding to doubles leaves to fields and charges, when that exceeds `1e-4` (a hundredth of a per cent, below any discretisation error the study reports). The floor is
/// half a unit in the last place of the largest potential over the spread.
pub(crate) fn rounding_floor(design: &Design) -> Option<(f64, f64, f64)> {
    let (lo, hi) = span(design)?;
    let spread = hi - lo;
    let largest = lo.abs().max(hi.abs());
    if spread <= 0.0 || !spread.is_finite() {
        return None;
    }
    let relative = 0.5 * f64::EPSILON * largest / spread;
    (relative > 1e-4).then_some((spread, largest, relative))
}

fn sides(design: &Design) -> [Side; 4] {
    let s = &design.sides;
    [s.left, s.right, s.bottom, s.top]
}

/// Lowest and highest fixed potential, V; `None` when nothing is fixed or a potential is not
/// finite.
fn span(design: &Design) -> Option<(f64, f64)> {
    let fixed: Vec<f64> = sides(design)
        .iter()
        .filter_map(|s| s.potential())
        .chain(design.conductors.iter().filter_map(|c| match c.drive {
            Drive::Fixed(v) => Some(v),
            Drive::Floating => None,
        }))
        .collect();
    if fixed.is_empty() || fixed.iter().any(|v| !v.is_finite()) {
        return None;
    }
    let lo = fixed.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = fixed.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    Some((lo, hi))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::design::{Conductor, Shape, Sides};

    fn design(sides: Side, pad: f64) -> Design {
        Design {
            sides: Sides {
                left: sides,
                right: sides,
                bottom: sides,
                top: sides,
            },
            conductors: vec![Conductor {
                name: "pad".into(),
                drive: Drive::Fixed(pad),
                joined: Vec::new(),
                shape: Shape::Rect {
                    x: [0.4, 0.6],
                    y: [0.4, 0.6],
                    round: 0.0,
                },
            }],
            ..Design::default()
        }
    }

    #[test]
    fn the_reference_is_zero_when_potentials_span_zero_or_a_side_is_open() {
        assert_eq!(common(&design(Side::Ground, 1.0)), 0.0);
        assert_eq!(common(&design(Side::Fixed(-5.0), 5.0)), 0.0);
        assert_eq!(common(&design(Side::Open, 7.0)), 0.0);
        assert_eq!(common(&design(Side::Fixed(f64::INFINITY), 7.0)), 0.0);
    }

    #[test]
    fn the_reference_is_the_fixed_potential_nearest_zero() {
        assert_eq!(common(&design(Side::Fixed(1e6), 2e6)), 1e6);
        assert_eq!(common(&design(Side::Fixed(-1e6), -3e6)), -1e6);
        let d = relative(&design(Side::Fixed(1e6), 1e6 + 1.0), 1e6);
        assert_eq!(d.sides.left, Side::Fixed(0.0));
        assert_eq!(d.conductors[0].drive, Drive::Fixed(1.0));
    }

    #[test]
    fn the_rounding_floor_is_reported_only_when_it_matters() {
        assert_eq!(rounding_floor(&design(Side::Ground, 1.0)), None);
        assert_eq!(rounding_floor(&design(Side::Fixed(1e6), 1e6)), None);
        let (spread, largest, rel) = rounding_floor(&design(Side::Fixed(1e6), 1e6 + 1e-9)).unwrap();
        assert!(spread > 0.0 && spread < 2e-9, "{spread}");
        assert_eq!(largest, 1e6 + 1e-9);
        assert!(rel > 0.05 && rel < 0.2, "{rel}");
    }
}
