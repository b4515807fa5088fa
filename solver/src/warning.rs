//! Warnings: what a result's user should know about it, as typed data.
//!
//! Every warning is a variant carrying the numbers it is about, and [`Warning::code`] gives a
//! short, stable identifier (lower case words joined by `-`) that scripts and tests can match.
//! Codes are never renamed or reused once published; a new kind of warning gets a new variant
//! and a new code.
//!
//! Invariant: the library builds no sentences here; `Display` is a plain rendering of the
//! code and the data for logs, and the command line words each warning for its users.

use crate::forces::NoBand;
use crate::quantity::Quantity;
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
        /// The quantity farthest beyond the target.
        quantity: Quantity,
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
        write!(f, "{}: {self:?}", self.code())
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
                quantity: Quantity::Capacitance {
                    row: "a".into(),
                    column: "b".into(),
                },
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
    fn display_renders_the_code_and_the_data() {
        let w = Warning::CapacitanceError {
            row: "pad".into(),
            column: "trace".into(),
            percent: 2.34,
        };
        assert_eq!(
            w.to_string(),
            "capacitance-error: CapacitanceError { row: \"pad\", column: \"trace\", percent: 2.34 }"
        );
        let v = Warning::VacuumStudy(Box::new(w.clone()));
        assert_eq!(v.code(), w.code());
    }
}
