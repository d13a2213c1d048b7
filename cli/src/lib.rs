//! The `fieldgrade` command's library, in three stages a run passes through in order:
//!
//! ```text
//!  model file (TOML)
//!        │  plan::load — every check of the file's meaning, one function per table
//!        ▼
//!  plan::Plan ── plan::budget (memory budget → node / unknown limits)
//!        │        plan::problem (the engine's Problem: materials, conductors, boundary)
//!        ▼
//!  commands::{mesh, solve, check}  — thin: plan → mesher / engine → results type
//!        │                            (none imports another)
//!        ▼
//!  results::{mesh, solve, check}   — one results type per command and its renderers
//!        │  (terminal text, JSON, CSV, VTU; results::svg; results::write for atomic files)
//!        ▼
//!  main.rs — arguments, error text and exit codes
//! ```
//!
//! The binary (`main.rs`) parses the arguments and turns errors into text and exit codes;
//! the library is also what the fuzz targets (`fuzz/`) drive.
#![forbid(unsafe_code)]
#![warn(missing_debug_implementations)]

pub mod commands;
pub mod plan;
pub mod results;

/// Why a command failed: something the user must fix in the model or the arguments (exit
/// code 2), or a file that could not be written (exit code 1). `main.rs` turns it into text.
#[derive(Debug, thiserror::Error)]
pub enum CliError {
    /// A located model-file diagnostic (file, line, column, key, help).
    #[error("{0}")]
    Model(crate::plan::diag::ModelError),
    /// A file or folder could not be written.
    #[error("{what}: {source}")]
    Io {
        /// What was being done, with the path.
        what: String,
        /// The operating system's error.
        #[source]
        source: std::io::Error,
    },
    /// The results could not be serialised.
    #[error("cannot serialise the results: {0}")]
    Json(#[from] serde_json::Error),
}

impl From<crate::plan::diag::ModelError> for CliError {
    fn from(e: crate::plan::diag::ModelError) -> Self {
        CliError::Model(e)
    }
}

impl CliError {
    /// An I/O failure while doing `what`.
    pub fn io(what: impl Into<String>, source: std::io::Error) -> CliError {
        CliError::Io { what: what.into(), source }
    }
}

/// The result of a command.
pub type Result<T> = std::result::Result<T, CliError>;
