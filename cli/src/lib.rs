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

/// An error whose message is complete as it stands (a model-file diagnostic).
#[derive(Debug)]
pub struct UserError(pub String);
impl std::fmt::Display for UserError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(&self.0)
    }
}
impl std::error::Error for UserError {}
