//! The command's exit codes, fixed by the contract. They live apart from the dispatch in the
//! crate root so that the commands, which return them, do not depend on the module that calls
//! them.

/// Exit code: done.
pub const EXIT_OK: u8 = 0;
/// Exit code: `compare` found a change beyond tolerance (or a margin below `--min-margin`).
pub const EXIT_CHANGED: u8 = 1;
/// Exit code: bad input or usage.
pub const EXIT_BAD_INPUT: u8 = 2;
/// Exit code: the solver did not converge (results written and flagged).
pub const EXIT_NOT_CONVERGED: u8 = 3;
