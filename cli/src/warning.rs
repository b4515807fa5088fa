//! Warnings the tool reports: the library's typed warnings and the few the tool makes itself,
//! each with a stable code beside its text (see `fieldgrid_solver::warning`).
//!
//! Invariant: codes are short lower-case words joined by `-`, never renamed or reused, and
//! distinct from every library code.

use fieldgrid_solver::warning::Warning;
use std::fmt;

/// A warning with a stable code; its `Display` is the sentence.
pub trait Coded: fmt::Display {
    /// The stable code of this kind of warning.
    fn code(&self) -> &'static str;
}

impl Coded for Warning {
    fn code(&self) -> &'static str {
        Warning::code(self)
    }
}

/// Warnings made by the tool rather than the library.
#[derive(Clone, Debug, PartialEq)]
#[non_exhaustive]
pub enum ToolWarning {
    /// Points of a sweep whose solves did not converge (flagged in the table).
    SweepNotConverged {
        /// How many.
        points: usize,
    },
}

impl Coded for ToolWarning {
    fn code(&self) -> &'static str {
        match self {
            ToolWarning::SweepNotConverged { .. } => "sweep-not-converged",
        }
    }
}

impl fmt::Display for ToolWarning {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ToolWarning::SweepNotConverged { points } => {
                write!(f, "{points} point(s) did not converge (column `converged`)")
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn tool_codes_differ_from_library_codes() {
        let tool = ToolWarning::SweepNotConverged { points: 2 };
        let lib = Warning::AsymmetricPair;
        assert_ne!(tool.code(), Coded::code(&lib));
        assert_eq!(
            tool.to_string(),
            "2 point(s) did not converge (column `converged`)"
        );
    }
}
