//! Warnings the tool reports: the library's typed warnings (worded by
//! [`crate::wording::warnings`]) and the few the tool makes itself, each with a stable code
//! beside its text (see `fieldgrid_solver::warning`).
//!
//! Invariant: codes are short lower-case words joined by `-`, never renamed or reused, and
//! distinct from every library code.

use crate::wording;
use fieldgrid_solver::warning::Warning;
use std::fmt;

/// A warning with a stable code and a sentence.
pub trait Coded {
    /// The stable code of this kind of warning.
    fn code(&self) -> &'static str;

    /// The sentence the report prints and summary.json holds.
    fn text(&self) -> String;
}

impl Coded for Warning {
    fn code(&self) -> &'static str {
        Warning::code(self)
    }

    fn text(&self) -> String {
        wording::warning(self)
    }
}

/// The report's warning lines: a failure to converge first (the only warning of an
/// unconverged study), capacitance entries with large estimated errors grouped on one line,
/// every line with its stable code.
pub fn report_lines(warnings: &[Warning]) -> Vec<String> {
    let mut lines = Vec::new();
    let mut ordered: Vec<&Warning> = warnings
        .iter()
        .filter(|w| w.code() == "not-converged")
        .collect();
    ordered.extend(warnings.iter().filter(|w| w.code() != "not-converged"));
    let mut grouped = false;
    for w in &ordered {
        match w {
            Warning::CapacitanceError { .. } if grouped => {}
            Warning::CapacitanceError { .. } => {
                grouped = true;
                let entries: Vec<String> = warnings
                    .iter()
                    .filter_map(|w| match w {
                        Warning::CapacitanceError {
                            row,
                            column,
                            percent,
                        } => Some(format!("({row}, {column}) {percent:.1} %")),
                        _ => None,
                    })
                    .collect();
                if entries.len() == 1 {
                    lines.push(format!("warning [{}]: {}", w.code(), w.text()));
                } else {
                    lines.push(format!(
                        "warning [{}]: estimated discretisation errors above 1 % in capacitance \
                         {}: refine the cell",
                        w.code(),
                        entries.join(", ")
                    ));
                }
            }
            _ => lines.push(format!("warning [{}]: {}", w.code(), w.text())),
        }
    }
    lines
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

    fn text(&self) -> String {
        self.to_string()
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
    fn non_convergence_comes_first_and_capacitance_errors_are_grouped() {
        let ce = |row: &str, column: &str| Warning::CapacitanceError {
            row: row.into(),
            column: column.into(),
            percent: 2.0,
        };
        let lines = report_lines(&[
            ce("a", "b"),
            Warning::AsymmetricPair,
            ce("a", "c"),
            Warning::NotConverged(fieldgrid_solver::warning::SolveFailure::NonFinite(
                fieldgrid_solver::warning::NonFiniteIn::Energy,
            )),
        ]);
        assert_eq!(lines.len(), 3, "{lines:?}");
        assert!(lines[0].starts_with("warning [not-converged]"));
        assert!(lines[1].starts_with("warning [capacitance-error]"));
        assert!(lines[1].contains("(a, b) 2.0 %, (a, c) 2.0 %"));
        assert!(lines[2].starts_with("warning [asymmetric-pair]"));
    }

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
