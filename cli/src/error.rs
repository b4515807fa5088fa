//! The outcome of a command: an exit code and, for failures, one message for the user.

use std::fmt;

/// A failure with its exit code.
#[derive(Debug)]
pub struct Failure {
    /// Exit code (2 bad input or usage, 3 not converged, 1 change beyond tolerance).
    pub code: u8,
    /// The message printed to standard error.
    pub message: String,
    /// The place in the design file, for a bad design (its message is `message`).
    pub location: Option<Box<crate::design_file::InputError>>,
}

impl Failure {
    /// Bad input or usage (exit 2).
    pub fn input(message: impl Into<String>) -> Self {
        Failure {
            code: crate::EXIT_BAD_INPUT,
            message: message.into(),
            location: None,
        }
    }

    /// An I/O or internal failure while writing results (exit 2: nothing usable was written).
    pub fn io(context: impl fmt::Display, err: impl fmt::Display) -> Self {
        Failure {
            code: crate::EXIT_BAD_INPUT,
            message: format!("{context}: {err}"),
            location: None,
        }
    }
}

impl fmt::Display for Failure {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.message)
    }
}

impl From<crate::design_file::InputError> for Failure {
    fn from(e: crate::design_file::InputError) -> Self {
        Failure {
            location: Some(Box::new(e.clone())),
            ..Failure::input(e.to_string())
        }
    }
}
