//! The CLI's error: a code (the core's, where one applies) and one line a person can act
//! on. `mwctl` prints it to stderr and exits with status 2.

use std::fmt;

/// An error for the person at the bench.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct CliError {
    /// The core's error code, if the error came from the core.
    pub code: Option<u16>,
    /// What is wrong and what is accepted.
    pub message: String,
}

impl CliError {
    /// An error with no core code.
    pub fn new(message: impl Into<String>) -> CliError {
        CliError {
            code: None,
            message: message.into(),
        }
    }

    /// A core error with context, e.g. `--energy 0.2`.
    pub fn core(e: matterwave_core::Error, context: impl fmt::Display) -> CliError {
        CliError {
            code: Some(e.code()),
            message: format!("{context}: {}", e.message()),
        }
    }
}

impl fmt::Display for CliError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.code {
            Some(c) => write!(f, "E{c}: {}", self.message),
            None => write!(f, "{}", self.message),
        }
    }
}

impl std::error::Error for CliError {}

/// Shorthand result.
pub type CliResult<T> = Result<T, CliError>;

/// Attaches context to a core result.
pub trait Context<T> {
    /// Maps a core error to a [`CliError`] with `context`.
    fn ctx(self, context: impl fmt::Display) -> CliResult<T>;
}

impl<T> Context<T> for matterwave_core::Result<T> {
    fn ctx(self, context: impl fmt::Display) -> CliResult<T> {
        self.map_err(|e| CliError::core(e, context))
    }
}
