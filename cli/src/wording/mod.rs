//! The sentences for the library's typed errors and warnings: the library reports what went
//! wrong as data with a stable `code()`, and these functions give what a user reads (the
//! design-rule errors, which need the design file's unit, are worded by
//! `design_file/wording.rs`; warnings by [`warnings`]).
//!
//! Invariants: every variant the library can report has a sentence here (each match covers
//! the variants known, with the library's plain rendering of code and data for any added
//! later); the text of a variant never depends on the library's `Display`, so the library may
//! render its values for logs as it likes; lengths the library gives in metres are stated in
//! metres.

pub mod warnings;

use fieldgrid_solver::accuracy::{AccuracyError, Quantity};
use fieldgrid_solver::grid::GridError;
use fieldgrid_solver::line::LineError;
use fieldgrid_solver::line_study::{LineStudyError, SignalError};
use fieldgrid_solver::newton::NewtonError;
use fieldgrid_solver::operator::OperatorError;
use fieldgrid_solver::root::RootError;
use fieldgrid_solver::study::StudyError;

pub use warnings::warning;

/// The sentence for a lattice that cannot be fitted.
pub fn grid(e: &GridError) -> String {
    match e {
        GridError::Cell(cell) => format!("cell size must be a positive number, got {cell}"),
        GridError::Domain => "the domain must have positive width and height".to_string(),
        GridError::TooManyCells { x, y } => format!("{x} x {y} cells is far too many"),
        GridError::Lines { axis } => format!(
            "the grid lines along {axis} must be at least 3 finite, strictly increasing \
             coordinates"
        ),
        other => other.to_string(),
    }
}

/// The sentence for a design whose operator has no reference potential somewhere.
pub fn operator(e: &OperatorError) -> String {
    match e {
        OperatorError::NoReference { x, y } => format!(
            "the region around ({x:.6e} m, {y:.6e} m) touches no fixed potential: ground a side \
             or add a conductor"
        ),
        other => other.to_string(),
    }
}

/// The sentence for a study that could not run (a design-rule error in its plain form: the
/// design reader words those, placed at their key).
pub fn study(e: &StudyError) -> String {
    match e {
        StudyError::Grid(e) => grid(e),
        StudyError::Operator(e) => operator(e),
        other => other.to_string(),
    }
}

/// The sentence for signals that cannot make a line.
pub fn signal(e: &SignalError) -> String {
    match e {
        SignalError::NotPlanar => "a line study needs a planar cross-section".to_string(),
        SignalError::NoSignal => "no signal conductor named".to_string(),
        SignalError::Unknown(s) => format!("the design has no conductor named {s}"),
        SignalError::Floating(s) => {
            format!("the conductor {s} is floating; a signal needs a fixed potential")
        }
        SignalError::Repeated(s) => format!("the signal {s} is named twice"),
        other => other.to_string(),
    }
}

/// The sentence for capacitance matrices that cannot describe a line.
pub fn line(e: &LineError) -> String {
    match e {
        LineError::Shape => {
            "capacitance matrices must be square, non-empty and of the same size".to_string()
        }
        LineError::NotPositiveDefinite(which) => {
            format!("the {which} capacitance matrix is not positive definite")
        }
        other => other.to_string(),
    }
}

/// The sentence for a line study that could not run.
pub fn line_study(e: &LineStudyError) -> String {
    match e {
        LineStudyError::Signals(e) => signal(e),
        LineStudyError::Study(e) => study(e),
        LineStudyError::Line(e) => line(e),
        other => other.to_string(),
    }
}

/// A quantity's short name: `C[a,b]`, `F[a]`, `field at (x m, y m)`, or the line key (`Z0`
/// for `z0`), as the report, summary.json and the warnings name it.
pub fn quantity(q: &Quantity) -> String {
    match q {
        Quantity::Capacitance { row, column } => format!("C[{row},{column}]"),
        Quantity::Force { conductor } => format!("F[{conductor}]"),
        Quantity::Field { at, .. } => format!("field at ({:.4e} m, {:.4e} m)", at[0], at[1]),
        Quantity::Line("z0") => "Z0".to_string(),
        Quantity::Line(k) => k.to_string(),
        other => format!("{other:?}"),
    }
}

/// The sentence for an accuracy loop that could not run.
pub fn accuracy(e: &AccuracyError) -> String {
    match e {
        AccuracyError::Target(t) => {
            format!("the accuracy target must lie between 0 and 1, got {t}")
        }
        AccuracyError::Study(e) => study(e),
        AccuracyError::Line(e) => line_study(e),
        other => other.to_string(),
    }
}

/// The sentence for a root search (one design target) that found no root.
pub fn root<E: std::fmt::Debug>(e: &RootError<E>) -> String {
    match e {
        RootError::NotBracketed { a, fa, b, fb } => {
            format!("f({a}) = {fa} and f({b}) = {fb} have the same sign: no root between them")
        }
        RootError::NonFinite { x } => format!("f({x}) is not a finite number"),
        RootError::MaxEvaluations(i) => format!(
            "no root within {} evaluations; the best point is x = {}, f = {}",
            i.evaluations, i.x, i.f
        ),
        RootError::Evaluation(_) => "the function failed".to_string(),
        other => other.to_string(),
    }
}

/// The sentence for a Newton search (several design targets) that stopped without a result.
pub fn newton<E: std::fmt::Debug>(e: &NewtonError<E>) -> String {
    match e {
        NewtonError::Singular { x } => format!(
            "the sensitivities are singular at the point {x:?}: the parameters cannot move the \
             quantities independently"
        ),
        NewtonError::NonFinite { x } => format!("a residual at {x:?} is not a finite number"),
        NewtonError::Evaluation(_) => "the function failed".to_string(),
        other => other.to_string(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sentences_carry_the_data() {
        assert_eq!(
            quantity(&Quantity::Field {
                at: [1.5e-3, -2e-4],
                material: "air".into()
            }),
            "field at (1.5000e-3 m, -2.0000e-4 m)"
        );
        assert_eq!(quantity(&Quantity::Line("z0")), "Z0");
        assert_eq!(quantity(&Quantity::Line("eps_eff")), "eps_eff");
        assert_eq!(
            quantity(&Quantity::Capacitance {
                row: "a".into(),
                column: "b".into()
            }),
            "C[a,b]"
        );
        assert_eq!(
            accuracy(&AccuracyError::Target(2.0)),
            "the accuracy target must lie between 0 and 1, got 2"
        );
        assert_eq!(
            grid(&GridError::TooManyCells { x: 2e8, y: 3.0 }),
            "200000000 x 3 cells is far too many"
        );
        assert_eq!(
            grid(&GridError::Lines { axis: 'y' }),
            "the grid lines along y must be at least 3 finite, strictly increasing coordinates"
        );
        assert_eq!(
            study(&StudyError::Operator(OperatorError::NoReference {
                x: 1e-3,
                y: 0.0
            })),
            "the region around (1.000000e-3 m, 0.000000e0 m) touches no fixed potential: ground \
             a side or add a conductor"
        );
        assert_eq!(
            line_study(&LineStudyError::Line(LineError::NotPositiveDefinite(
                "vacuum"
            ))),
            "the vacuum capacitance matrix is not positive definite"
        );
        assert_eq!(
            signal(&SignalError::Floating("s".into())),
            "the conductor s is floating; a signal needs a fixed potential"
        );
        let e: RootError<()> = RootError::NotBracketed {
            a: 1.0,
            fa: 2.0,
            b: 3.0,
            fb: 4.5,
        };
        assert_eq!(
            root(&e),
            "f(1) = 2 and f(3) = 4.5 have the same sign: no root between them"
        );
        let e: NewtonError<()> = NewtonError::NonFinite { x: vec![1.0, 0.5] };
        assert_eq!(
            newton(&e),
            "a residual at [1.0, 0.5] is not a finite number"
        );
    }
}
