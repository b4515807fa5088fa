//! The quantities an accuracy target covers and their estimated errors, read from a study
//! (every capacitance entry, every conductor's force, the peak field at every hot spot) or a
//! line study (its scalar line parameters).
//!
//! An estimate has three parts, each an absolute error in the quantity's own units: the
//! discretisation (the study's Richardson estimate; infinite where none could be made), the
//! linear solver (the asymmetry of the computed capacitance matrix, which an exact solve of
//! the symmetric operator makes symmetric) and the truncation of the far field beyond open
//! sides (from two box sizes, added by the loop). A quantity at a singular point (a hot spot
//! at a sharp corner) has no finite value and is never held against the target; nor is a
//! kind of quantity the caller leaves out ([`Quantities`]), which is still estimated and
//! reported.
//!
//! Invariant: every error is finite and >= 0, or infinite when unknown; never NaN.

use crate::forces::{ForceMethod, NoBand};
use crate::line_study::LineStudy;
pub use crate::quantity::Quantity;
use crate::study::{worst_relative_asymmetry, Solution};

/// A quantity's value and its estimated error, by source (absolute, in its units).
#[derive(Clone, Debug, PartialEq)]
pub struct Estimate {
    /// What is estimated.
    pub quantity: Quantity,
    /// Its value, SI.
    pub value: f64,
    /// Estimated discretisation error (infinite when no estimate could be made).
    pub discretisation: f64,
    /// Estimated error of the linear solves.
    pub solver: f64,
    /// Estimated error of truncating the far field beyond open sides.
    pub truncation: f64,
    /// True at a singular point: the value grows with refinement and is not a result.
    pub singular: bool,
    /// True when the target covers this quantity (its kind is asked for and it is not
    /// singular).
    pub held: bool,
    /// Why a quantity of a kind the target covers is nonetheless not held (none for a
    /// singular point, which is flagged as such, or a kind not asked for).
    pub not_held: Option<NotHeld>,
}

/// Why a quantity whose kind the target covers is estimated but not refined for.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[non_exhaustive]
pub enum NotHeld {
    /// A force integrated on the path at its conductor's surface, for the reason given: it
    /// meets the singular field of the corners and junctions there and does not settle at
    /// the rate the target's refinements assume.
    Force(NoBand),
}

impl Estimate {
    fn new(quantity: Quantity, value: f64, discretisation: Option<f64>) -> Estimate {
        Estimate {
            quantity,
            value,
            discretisation: discretisation
                .filter(|e| e.is_finite())
                .map_or(f64::INFINITY, f64::abs),
            solver: 0.0,
            truncation: 0.0,
            singular: false,
            held: true,
            not_held: None,
        }
    }

    /// The whole estimated error, the sum of its parts.
    pub fn error(&self) -> f64 {
        self.discretisation + self.solver + self.truncation
    }

    /// The estimated error relative to the value's magnitude (infinite for a zero value
    /// with any error).
    pub fn relative(&self) -> f64 {
        let e = self.error();
        if e == 0.0 {
            0.0
        } else {
            e / self.value.abs()
        }
    }
}

/// Which kinds of quantity a study's target covers (every kind is estimated and reported).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[non_exhaustive]
pub struct Quantities {
    /// Each conductor's force.
    pub forces: bool,
    /// The peak field at every hot spot.
    pub hotspots: bool,
}

impl Default for Quantities {
    fn default() -> Self {
        Quantities {
            forces: true,
            hotspots: true,
        }
    }
}

/// Forces below this share of the largest force of the design are not held against the
/// target: they are round-off of a balance (a conductor in a symmetric field), whose
/// relative error has no meaning.
const NEGLIGIBLE_FORCE: f64 = 1e-6;

/// The estimates of a study's quantities.
pub fn of_study(sol: &Solution, which: Quantities) -> Vec<Estimate> {
    let c = &sol.capacitance;
    let n = c.names.len();
    let mut out = Vec::new();
    for i in 0..n {
        for j in 0..n {
            // The study's estimate holds the solver's part too.
            let solver = c.solver_error[i][j];
            let e = c
                .error_estimate
                .as_ref()
                .map(|e| (e[i][j] - solver).max(0.0));
            let mut est = Estimate::new(
                Quantity::Capacitance {
                    row: c.names[i].clone(),
                    column: c.names[j].clone(),
                },
                c.matrix[i][j],
                e,
            );
            est.solver = solver;
            out.push(est);
        }
    }
    {
        let norm = |f: [f64; 2]| f[0].hypot(f[1]);
        let largest = sol
            .conductors
            .iter()
            .map(|k| norm(k.force))
            .fold(0.0, f64::max);
        for k in &sol.conductors {
            let f = norm(k.force);
            if f <= NEGLIGIBLE_FORCE * largest || f == 0.0 {
                continue;
            }
            // The error of the magnitude is at most that of the vector.
            let e = k.force_error.map(norm);
            let mut est = Estimate::new(
                Quantity::Force {
                    conductor: k.name.clone(),
                },
                f,
                e,
            );
            // Forces are superpositions of the same solves as the charges.
            est.solver = f * worst_relative_asymmetry(&c.matrix);
            // A force integrated on a path at its conductor's surface (the conductor touches
            // a dielectric, another body or a side) meets the singular field of its corners
            // and junctions and converges too slowly to be refined for: listed, not held.
            est.held = which.forces && k.force_method == ForceMethod::Volume;
            est.not_held = match k.force_method {
                ForceMethod::Path(why) if which.forces => Some(NotHeld::Force(why)),
                _ => None,
            };
            out.push(est);
        }
    }
    {
        for h in &sol.hotspots {
            let mut est = Estimate::new(
                Quantity::Field {
                    at: [h.x, h.y],
                    material: h.material.clone(),
                },
                h.magnitude,
                h.error_estimate,
            );
            est.singular = h.singular;
            est.held = which.hotspots && !h.singular;
            out.push(est);
        }
    }
    out
}

/// The estimates of a line study's scalar parameters.
pub fn of_line(ls: &LineStudy) -> Vec<Estimate> {
    let asym = worst_relative_asymmetry(&ls.solution.capacitance.matrix)
        .max(worst_relative_asymmetry(&ls.vacuum.capacitance.matrix));
    crate::line::scalars(&ls.line)
        .into_iter()
        .map(|(k, v)| {
            // The line study's estimate holds the solver's part too.
            let solver = v.abs() * asym;
            let e = ls.errors.iter().find(|e| e.0 == k);
            let mut est = Estimate::new(Quantity::Line(k), v, e.map(|e| (e.1 - solver).max(0.0)));
            est.solver = solver;
            est
        })
        .collect()
}

/// Adds to every estimate of `near` the truncation error read from the same quantity on the
/// farther box (`far`): twice their difference, which bounds the nearer box's error whenever
/// the truncation error falls at least as the inverse of the box size. A quantity missing on
/// the farther box gets an infinite truncation error, a hot spot excepted (hot spots are
/// matched by position within `within` metres, and one found only on one box is a local
/// maximum that the far field does not move).
pub fn add_truncation(near: &mut [Estimate], far: &[Estimate], within: f64) {
    for e in near.iter_mut() {
        let twin = far.iter().find(|f| match (&e.quantity, &f.quantity) {
            (Quantity::Field { at: a, .. }, Quantity::Field { at: b, .. }) => {
                (a[0] - b[0]).hypot(a[1] - b[1]) <= within
            }
            (a, b) => a == b,
        });
        e.truncation = match (twin, &e.quantity) {
            (Some(f), _) => 2.0 * (e.value - f.value).abs(),
            (None, Quantity::Field { .. }) => 0.0,
            (None, _) => f64::INFINITY,
        };
    }
}

/// The truncation error of each quantity of `from` carried onto the matching quantity of
/// `to` as a share of its value (the truncation error of a finer lattice's result on the same
/// box). Hot spots are matched by position within `within` metres.
pub fn carry_truncation(to: &mut [Estimate], from: &[Estimate], within: f64) {
    for e in to.iter_mut() {
        let twin = from.iter().find(|f| match (&e.quantity, &f.quantity) {
            (Quantity::Field { at: a, .. }, Quantity::Field { at: b, .. }) => {
                (a[0] - b[0]).hypot(a[1] - b[1]) <= within
            }
            (a, b) => a == b,
        });
        e.truncation = match twin {
            Some(f) if f.truncation == 0.0 => 0.0,
            Some(f) if f.value != 0.0 => f.truncation / f.value.abs() * e.value.abs(),
            Some(_) => f64::INFINITY,
            None => match e.quantity {
                Quantity::Field { .. } => 0.0,
                _ => f64::INFINITY,
            },
        };
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn est(q: Quantity, v: f64) -> Estimate {
        Estimate::new(q, v, Some(0.0))
    }

    #[test]
    fn parts_add_up_and_unknown_is_infinite() {
        let mut e = Estimate::new(Quantity::Line("z0"), 50.0, Some(0.05));
        e.solver = 0.01;
        e.truncation = 0.04;
        assert!((e.error() - 0.1).abs() < 1e-15);
        assert!((e.relative() - 0.002).abs() < 1e-15);
        let u = Estimate::new(Quantity::Line("z0"), 50.0, None);
        assert!(u.error().is_infinite());
        let nan = Estimate::new(Quantity::Line("z0"), 50.0, Some(f64::NAN));
        assert!(nan.error().is_infinite());
    }

    #[test]
    fn truncation_is_twice_the_difference_of_the_boxes() {
        let c = Quantity::Capacitance {
            row: "a".into(),
            column: "a".into(),
        };
        let mut near = vec![
            est(c.clone(), 1.00),
            est(
                Quantity::Field {
                    at: [0.0, 0.0],
                    material: "air".into(),
                },
                5.0,
            ),
            est(Quantity::Line("z0"), 50.0),
        ];
        let far = vec![
            est(c, 1.01),
            est(
                Quantity::Field {
                    at: [1e-9, 0.0],
                    material: "air".into(),
                },
                5.5,
            ),
        ];
        add_truncation(&mut near, &far, 1e-6);
        assert!((near[0].truncation - 0.02).abs() < 1e-12);
        assert!((near[1].truncation - 1.0).abs() < 1e-12);
        assert!(near[2].truncation.is_infinite());
        let mut finer = vec![est(near[0].quantity.clone(), 2.0)];
        carry_truncation(&mut finer, &near, 1e-6);
        assert!((finer[0].truncation - 0.04).abs() < 1e-12);
    }
}
