//! Warnings: what a result's user should know about it, as typed data.
//!
//! Every warning is a variant carrying the numbers it is about; its `Display` gives the
//! sentence for a report and [`Warning::code`] a short, stable identifier (lower case words
//! joined by `-`) that scripts and tests can match. Codes are never renamed or reused once
//! published; a new kind of warning gets a new variant and a new code.
//!
//! Invariant: the library produces these values and never the sentences themselves in its
//! results; the text exists only through `Display`.

use crate::forces::NoBand;
use crate::solvers::StopReason;
use std::fmt;

/// Something a user should know about a result.
#[derive(Clone, Debug, PartialEq)]
#[non_exhaustive]
pub enum Warning {
    /// A capacitance entry's estimated discretisation error is above 1 % of its value.
    CapacitanceError {
        /// Row conductor.
        row: String,
        /// Column conductor.
        column: String,
        /// Estimated error as a percentage of the entry's magnitude.
        percent: f64,
    },
    /// A linear solve did not reach the tolerance, or the results are not finite.
    NotConverged(SolveFailure),
    /// A planar design with open sides and no fixed side: the capacitance matrix refers to
    /// infinity, and its row sums depend on the size of the box.
    ReferenceAtInfinity {
        /// Rows whose sum is above 1 % of their diagonal.
        rows: usize,
        /// Rows of the matrix.
        of: usize,
    },
    /// A planar design with open sides and no fixed side carries a net charge.
    NetChargeOpenSides {
        /// Net charge, C/m.
        net: f64,
    },
    /// A symmetry side mirrors some signals (that do not touch it) into in-phase images.
    SymmetryImage {
        /// The side: "left", "right", "bottom" or "top".
        side: &'static str,
        /// The signals that do not touch it.
        signals: Vec<String>,
    },
    /// The pair of signals is not symmetric: the odd and even impedances are not modes.
    AsymmetricPair,
    /// A warning of the study with every permittivity 1 (a line study's second study).
    VacuumStudy(Box<Warning>),
    /// A circuit's capacitance from a conductor to the reference node is negative.
    NegativeGroundCapacitance {
        /// The conductor.
        conductor: String,
        /// The value, F.
        value: f64,
    },
    /// A circuit's mutual capacitance between two conductors is negative.
    NegativeMutualCapacitance {
        /// The first conductor.
        a: String,
        /// The second conductor.
        b: String,
        /// The value, F.
        value: f64,
    },
    /// The fixed potentials differ by little against their size: rounding them to doubles
    /// (half a unit in the last place of the largest) limits the relative accuracy of every
    /// field, charge and energy, however the study solves.
    PotentialRounding {
        /// Highest minus lowest fixed potential, V.
        spread: f64,
        /// The largest fixed potential in magnitude, V.
        largest: f64,
        /// The relative accuracy left to fields and charges (to one).
        relative: f64,
    },
    /// An accuracy was asked for and a limit stopped the refinement first.
    AccuracyNotMet {
        /// The quantity farthest beyond the target, by its short name.
        quantity: String,
        /// Its estimated relative error.
        relative: f64,
        /// The relative target.
        target: f64,
        /// What stopped the refinement.
        limit: AccuracyLimit,
    },
    /// The force on a conductor is not resolved: the path the force is integrated over sees
    /// only part of the conductor's field (a layer thinner than a cell lies between the
    /// conductor and a fixed potential, with no free node in it), so the force may be wrong
    /// in size and even in sign while the capacitance is right.
    ForceUnresolved {
        /// The conductor.
        conductor: String,
        /// Share of the conductor's field flux (its charge) that the path sees, to one.
        seen: f64,
    },
    /// A force's estimated discretisation error exceeds its magnitude: not even its direction
    /// is known.
    ForceUncertain {
        /// The conductor.
        conductor: String,
        /// Estimated error over magnitude, to one (the larger of the components').
        ratio: f64,
    },
    /// An accuracy was asked for, and a conductor's force is estimated and reported but not
    /// refined for: it is integrated on the path at its surface, which meets the singular
    /// field of the corners and junctions there, for the reason given.
    ForceNotHeld {
        /// The conductor.
        conductor: String,
        /// Why no band around the conductor carries its force.
        reason: NoBand,
        /// The force's estimated relative error on the last grid (infinite when unknown).
        relative: f64,
    },
}

/// What stopped a refinement before the accuracy asked for was reached.
#[derive(Clone, Debug, PartialEq)]
#[non_exhaustive]
pub enum AccuracyLimit {
    /// The next lattice would need more memory than allowed.
    Memory {
        /// Estimated memory of the next lattice, MiB.
        needed_mib: f64,
        /// The limit, MiB.
        limit_mib: f64,
    },
    /// The lattice has been refined as often as allowed.
    Refinements,
    /// The truncation of the far field beyond the open sides is above the target.
    Truncation,
}

impl Warning {
    /// The stable code of this kind of warning. A warning of the study with every
    /// permittivity 1 keeps the code of what it warns about.
    pub fn code(&self) -> &'static str {
        match self {
            Warning::CapacitanceError { .. } => "capacitance-error",
            Warning::NotConverged(_) => "not-converged",
            Warning::ReferenceAtInfinity { .. } => "reference-at-infinity",
            Warning::NetChargeOpenSides { .. } => "net-charge-open-sides",
            Warning::SymmetryImage { .. } => "symmetry-image",
            Warning::AsymmetricPair => "asymmetric-pair",
            Warning::VacuumStudy(w) => w.code(),
            Warning::NegativeGroundCapacitance { .. } => "negative-ground-capacitance",
            Warning::NegativeMutualCapacitance { .. } => "negative-mutual-capacitance",
            Warning::PotentialRounding { .. } => "potential-rounding",
            Warning::AccuracyNotMet { .. } => "accuracy-not-met",
            Warning::ForceUnresolved { .. } => "force-unresolved",
            Warning::ForceUncertain { .. } => "force-uncertain",
            Warning::ForceNotHeld { .. } => "force-not-held",
        }
    }
}

impl fmt::Display for Warning {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Warning::CapacitanceError {
                row,
                column,
                percent,
            } => write!(
                f,
                "capacitance ({row}, {column}) has an estimated discretisation error of \
                 {percent:.1} %: refine the cell"
            ),
            Warning::NotConverged(why) => write!(f, "the solver did not converge: {why}"),
            Warning::ReferenceAtInfinity { rows, of } => write!(
                f,
                "no side is grounded: the capacitance matrix refers to infinity beyond the open \
                 sides, and its row sums (charge to infinity) shrink like 1/ln(box size) in a \
                 planar design; only excitations with zero net charge are independent of the box \
                 ({rows} of {of} rows have row sums above 1 % of their diagonal)"
            ),
            Warning::NetChargeOpenSides { net } => write!(
                f,
                "no side is grounded and the design carries a net charge of {net:.3e} C/m: its \
                 potential grows logarithmically with distance, so the charges at this operating \
                 point depend on how far the open sides are"
            ),
            Warning::SymmetryImage { side, signals } => write!(
                f,
                "the symmetry side `{side}` mirrors {} into a second conductor driven in phase: \
                 the results describe the line together with that image",
                signals.join(", ")
            ),
            Warning::AsymmetricPair => f.write_str(
                "the pair is not symmetric: z_odd and z_even are half the impedance seen by a \
                 differential current (I, -I) and twice that seen by a common current (I, I); \
                 they are not propagation modes (see eps_eff_modes)",
            ),
            Warning::VacuumStudy(w) => write!(f, "study with every permittivity 1: {w}"),
            Warning::NegativeGroundCapacitance { conductor, value } => write!(
                f,
                "the capacitance of {conductor} to the reference is negative ({value:e} F): the \
                 matrix is not diagonally dominant there (refine the cell or check the sides)"
            ),
            Warning::NegativeMutualCapacitance { a, b, value } => write!(
                f,
                "the mutual capacitance of {a} and {b} is negative ({value:e} F): they are \
                 shielded from each other and the value is at the level of the discretisation \
                 error"
            ),
            Warning::PotentialRounding {
                spread,
                largest,
                relative,
            } => write!(
                f,
                "the fixed potentials differ by {spread:.3e} V at {largest:.6e} V: their rounding \
                 to double precision alone leaves fields, charges and energy a relative \
                 uncertainty of {relative:.1e} (state potentials relative to a nearer reference)"
            ),
            Warning::AccuracyNotMet {
                quantity,
                relative,
                target,
                limit,
            } => {
                write!(
                    f,
                    "accuracy {target:e} not met: {quantity} is known to {relative:.1e} ({:.1} \
                     times the target) when ",
                    relative / target
                )?;
                match limit {
                    AccuracyLimit::Memory {
                        needed_mib,
                        limit_mib,
                    } => write!(
                        f,
                        "the next grid would need about {needed_mib:.0} MiB, more than the \
                         {limit_mib:.0} MiB allowed (--max-memory)"
                    ),
                    AccuracyLimit::Refinements => {
                        f.write_str("the grid is refined as far as allowed")
                    }
                    AccuracyLimit::Truncation => f.write_str(
                        "the open sides cannot move farther out: their truncation of the far \
                         field is above the target",
                    ),
                }?;
                f.write_str("; the results are those of the last grid")
            }
            Warning::ForceUnresolved { conductor, seen } => write!(
                f,
                "the force on {conductor} is not resolved: the path it is integrated over sees \
                 {:.1} % of the conductor's field, the rest crosses a layer thinner than a cell \
                 between it and a fixed potential; the force may be wrong in size and sign \
                 (refine the cell until that layer holds free nodes)",
                100.0 * seen
            ),
            Warning::ForceUncertain { conductor, ratio } => write!(
                f,
                "the force on {conductor} has an estimated discretisation error of {:.0} % of \
                 its magnitude: its direction is not known (refine the cell)",
                100.0 * ratio
            ),
            Warning::ForceNotHeld {
                conductor,
                reason,
                relative,
            } => {
                write!(
                    f,
                    "the force on {conductor} is not held to the accuracy target (estimated \
                     error {relative:.1e} relative): "
                )?;
                f.write_str(match reason {
                    NoBand::Interface => "the conductor touches more than one material",
                    NoBand::NoGap => "another body, a side or free charge touches the conductor",
                    NoBand::Narrow => {
                        "the gap to the nearest other body, side or material is too narrow for \
                         a band of cells around the conductor"
                    }
                })?;
                f.write_str(
                    ", so the force is taken on a path at its surface, which meets the singular \
                     field of its corners and junctions and does not settle as the grid is \
                     refined",
                )
            }
        }
    }
}

/// Why a study's solves are not reported as converged.
#[derive(Clone, Debug, PartialEq)]
#[non_exhaustive]
pub enum SolveFailure {
    /// A linear solve stopped before reaching the tolerance.
    Stopped {
        /// Why it stopped.
        reason: StopReason,
        /// Iterations performed.
        iterations: usize,
        /// Final relative residual.
        relative_residual: f64,
    },
    /// Every solve converged, yet a result overflowed to a NaN or an infinity.
    NonFinite(NonFiniteIn),
}

/// The first kind of result found holding a NaN or an infinity.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[non_exhaustive]
pub enum NonFiniteIn {
    /// The node potentials.
    Potential,
    /// The capacitance matrix.
    Capacitance,
    /// Conductor charges, potentials or forces.
    Conductors,
    /// The stored energy.
    Energy,
}

impl fmt::Display for SolveFailure {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            SolveFailure::Stopped {
                reason,
                iterations,
                relative_residual,
            } => write!(
                f,
                "{reason} after {iterations} iterations (relative residual {relative_residual:.3e})"
            ),
            SolveFailure::NonFinite(what) => write!(
                f,
                "{} in the {what} (numbers beyond the range of double precision: check the \
                 design for absurd potentials, permittivities or charges)",
                StopReason::NonFinite
            ),
        }
    }
}

impl fmt::Display for NonFiniteIn {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            NonFiniteIn::Potential => "potential",
            NonFiniteIn::Capacitance => "capacitance matrix",
            NonFiniteIn::Conductors => "conductor charges, potentials or forces",
            NonFiniteIn::Energy => "energy",
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn codes_are_short_lower_case_words() {
        let all = [
            Warning::CapacitanceError {
                row: "a".into(),
                column: "b".into(),
                percent: 2.0,
            },
            Warning::NotConverged(SolveFailure::NonFinite(NonFiniteIn::Energy)),
            Warning::ReferenceAtInfinity { rows: 1, of: 2 },
            Warning::NetChargeOpenSides { net: 1e-9 },
            Warning::SymmetryImage {
                side: "left",
                signals: vec!["s".into()],
            },
            Warning::AsymmetricPair,
            Warning::AccuracyNotMet {
                quantity: "C[a,b]".into(),
                relative: 2e-3,
                target: 1e-3,
                limit: AccuracyLimit::Refinements,
            },
            Warning::NegativeGroundCapacitance {
                conductor: "a".into(),
                value: -1e-15,
            },
            Warning::NegativeMutualCapacitance {
                a: "a".into(),
                b: "b".into(),
                value: -1e-15,
            },
            Warning::ForceUnresolved {
                conductor: "a".into(),
                seen: 0.03,
            },
            Warning::ForceUncertain {
                conductor: "a".into(),
                ratio: 2.0,
            },
            Warning::ForceNotHeld {
                conductor: "a".into(),
                reason: NoBand::Interface,
                relative: 0.04,
            },
        ];
        let mut codes: Vec<&str> = all.iter().map(Warning::code).collect();
        for c in &codes {
            assert!(
                !c.is_empty() && c.chars().all(|ch| ch.is_ascii_lowercase() || ch == '-'),
                "{c}"
            );
        }
        codes.sort_unstable();
        codes.dedup();
        assert_eq!(codes.len(), all.len(), "codes must be distinct");
    }

    #[test]
    fn display_carries_the_numbers() {
        let w = Warning::CapacitanceError {
            row: "pad".into(),
            column: "trace".into(),
            percent: 2.34,
        };
        assert_eq!(
            w.to_string(),
            "capacitance (pad, trace) has an estimated discretisation error of 2.3 %: refine the cell"
        );
        let v = Warning::VacuumStudy(Box::new(w.clone()));
        assert_eq!(v.code(), w.code());
        assert!(v.to_string().ends_with(&w.to_string()));
        let f = SolveFailure::Stopped {
            reason: StopReason::Stagnated,
            iterations: 12,
            relative_residual: 2.5e-3,
        };
        assert_eq!(
            Warning::NotConverged(f).to_string(),
            "the solver did not converge: residual stagnated after 12 iterations (relative \
             residual 2.500e-3)"
        );
    }
}
