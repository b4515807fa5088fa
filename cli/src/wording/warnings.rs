//! The sentences for the library's typed warnings ([`Warning`]): each variant's data become
//! the line a report prints and summary.json's `warnings` hold.
//!
//! Invariants: every warning the library can give has a sentence here (the match covers the
//! variants known, with the library's plain rendering for any added later); numbers are
//! formatted as the report has always printed them (SI units, the precision each sentence
//! names), so scripts reading the text see no change when a warning gains data.

use fieldgrid_solver::forces::NoBand;
use fieldgrid_solver::solvers::StopReason;
use fieldgrid_solver::warning::{AccuracyLimit, NonFiniteIn, SolveFailure, Warning};
use std::fmt;

/// The sentence for `w`.
pub fn warning(w: &Warning) -> String {
    Sentence(w).to_string()
}

/// Why a study's solves are not converged, in words (summary.json's `solver.failure`).
pub fn solve_failure(why: &SolveFailure) -> String {
    Failure(why).to_string()
}

/// Why a linear solve stopped, in words.
pub fn stop_reason(reason: StopReason) -> &'static str {
    match reason {
        StopReason::Converged => "converged",
        StopReason::ZeroRhs => "zero right-hand side",
        StopReason::MaxIterations => "iteration limit reached",
        StopReason::Stagnated => "residual stagnated",
        StopReason::Diverged => "residual diverged",
        StopReason::NonFinite => "non-finite values appeared",
        _ => "stopped",
    }
}

/// The kind of result that first held a NaN or an infinity, in words.
fn non_finite_in(what: NonFiniteIn) -> &'static str {
    match what {
        NonFiniteIn::Potential => "potential",
        NonFiniteIn::Capacitance => "capacitance matrix",
        NonFiniteIn::Conductors => "conductor charges, potentials or forces",
        NonFiniteIn::Energy => "energy",
        _ => "results",
    }
}

/// A warning, displayed as its sentence.
struct Sentence<'a>(&'a Warning);

/// Why a study's solves are not converged, displayed as the end of a sentence.
struct Failure<'a>(&'a SolveFailure);

impl fmt::Display for Sentence<'_> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.0 {
            Warning::CapacitanceError {
                row,
                column,
                percent,
            } => write!(
                f,
                "capacitance ({row}, {column}) has an estimated discretisation error of \
                 {percent:.1} %: refine the cell"
            ),
            Warning::NotConverged(why) => {
                write!(f, "the solver did not converge: {}", Failure(why))
            }
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
            Warning::VacuumStudy(w) => {
                write!(f, "study with every permittivity 1: {}", Sentence(w))
            }
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
                    "accuracy {target:e} not met: {} is known to {relative:.1e} ({:.1} times \
                     the target) when ",
                    super::quantity(quantity),
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
                    other => write!(f, "{other:?} stopped it"),
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
                    _ => "no band of cells around the conductor carries its force",
                })?;
                f.write_str(
                    ", so the force is taken on a path at its surface, which meets the singular \
                     field of its corners and junctions and does not settle as the grid is \
                     refined",
                )
            }
            w => write!(f, "{w}"),
        }
    }
}

impl fmt::Display for Failure<'_> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.0 {
            SolveFailure::Stopped {
                reason,
                iterations,
                relative_residual,
            } => write!(
                f,
                "{} after {iterations} iterations (relative residual {relative_residual:.3e})",
                stop_reason(*reason)
            ),
            SolveFailure::NonFinite(what) => write!(
                f,
                "{} in the {} (numbers beyond the range of double precision: check the \
                 design for absurd potentials, permittivities or charges)",
                stop_reason(StopReason::NonFinite),
                non_finite_in(*what)
            ),
            other => write!(f, "{other:?}"),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use fieldgrid_solver::accuracy::Quantity;

    #[test]
    fn sentences_carry_the_numbers() {
        let w = Warning::CapacitanceError {
            row: "pad".into(),
            column: "trace".into(),
            percent: 2.34,
        };
        assert_eq!(
            warning(&w),
            "capacitance (pad, trace) has an estimated discretisation error of 2.3 %: refine the cell"
        );
        assert_eq!(
            warning(&Warning::AccuracyNotMet {
                quantity: Quantity::Force {
                    conductor: "rod".into()
                },
                relative: 2.5e-3,
                target: 1e-3,
                limit: AccuracyLimit::Refinements,
            }),
            "accuracy 1e-3 not met: F[rod] is known to 2.5e-3 (2.5 times the target) when the \
             grid is refined as far as allowed; the results are those of the last grid"
        );
        let v = Warning::VacuumStudy(Box::new(w.clone()));
        assert_eq!(
            warning(&v),
            format!("study with every permittivity 1: {}", warning(&w))
        );
        let f = SolveFailure::Stopped {
            reason: StopReason::Stagnated,
            iterations: 12,
            relative_residual: 2.5e-3,
        };
        assert_eq!(
            warning(&Warning::NotConverged(f)),
            "the solver did not converge: residual stagnated after 12 iterations (relative \
             residual 2.500e-3)"
        );
        assert_eq!(
            warning(&Warning::NotConverged(SolveFailure::NonFinite(
                NonFiniteIn::Capacitance
            ))),
            "the solver did not converge: non-finite values appeared in the capacitance matrix \
             (numbers beyond the range of double precision: check the design for absurd \
             potentials, permittivities or charges)"
        );
    }
}
