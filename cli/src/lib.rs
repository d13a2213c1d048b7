//! The `fieldgrade` command's library: the model file and its diagnostics, the memory
//! budget, the `mesh`, `solve` and `check` commands and their outputs. The binary
//! (`main.rs`) parses the arguments and turns errors into text and exit codes; the library
//! is also what the fuzz targets (`fuzz/`) drive.
#![forbid(unsafe_code)]
#![warn(missing_debug_implementations)]

pub mod args;
pub mod budget;
pub mod check_cmd;
pub mod check_results;
pub mod diag;
pub mod mesh_cmd;
pub mod mesh_report;
pub mod model;
pub mod output;
pub mod problem;
pub mod solve_cmd;
pub mod solve_results;
pub mod svg;

/// Why a command failed: something the user must fix in the model or the arguments (exit
/// code 2), or a file that could not be written (exit code 1). `main.rs` turns it into text.
#[derive(Debug, thiserror::Error)]
pub enum CliError {
    /// A located model-file diagnostic (file, line, column, key, help).
    #[error("{0}")]
    Model(crate::diag::ModelError),
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

impl From<crate::diag::ModelError> for CliError {
    fn from(e: crate::diag::ModelError) -> Self {
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
