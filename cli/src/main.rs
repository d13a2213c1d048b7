//! `fieldgrade`: electrostatic stress analysis of 2-D high-voltage insulation
//! cross-sections.
//!
//! This is the user's world: command-line arguments, the model file and its diagnostics,
//! and writing results. The numerics live in the `mesher` and `engine` crates. Errors become
//! text and exit codes here and only here: 0 success, 1 a run that failed (I/O, meshing),
//! 2 a model file or argument the user must fix, 3 a `check` that did not converge within
//! its budget (its results are written, with the verdict of every quantity).
#![forbid(unsafe_code)]
#![warn(missing_debug_implementations)]

use fieldgrade::commands::{args, check, debug, mesh, solve};
use fieldgrade::plan::budget;
use fieldgrade::CliError;

use clap::{Parser, Subcommand};
use std::path::PathBuf;
use std::process::ExitCode;

/// Electrostatic stress analysis of 2-D high-voltage insulation cross-sections.
#[derive(Parser, Debug)]
#[command(name = "fieldgrade", version, about, long_about = None)]
struct Args {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand, Debug)]
enum Command {
    /// Mesh a model: print node and triangle counts, quality and the singular points found;
    /// optionally write the mesh (VTU) and a drawing (SVG).
    Mesh {
        /// The model file (TOML).
        model: PathBuf,
        /// Write the mesh as a VTK XML unstructured grid.
        #[arg(long, value_name = "FILE.vtu")]
        out: Option<PathBuf>,
        /// Draw the mesh with regions coloured and singular points marked.
        #[arg(long, value_name = "FILE.svg")]
        svg: Option<PathBuf>,
        /// Element order, overriding the model's `[mesh] order`.
        #[arg(long, value_parser = clap::value_parser!(u8).range(1..=2))]
        order: Option<u8>,
        /// Memory the run may plan to use ("8GiB", "500MB"); the node budget is lowered to
        /// fit it. Default: half of the machine's memory (at most 80 % of `ulimit -v`).
        #[arg(long, value_name = "SIZE", value_parser = budget::parse_memory)]
        memory_limit: Option<f64>,
        /// Print the statistics as JSON instead of a table.
        #[arg(long)]
        json: bool,
        /// Write the VTU file's arrays as decimal text instead of zlib-compressed binary.
        #[arg(long)]
        ascii_vtu: bool,
    },
    /// Mesh and solve a model: conductor potentials and charges, capacitance matrix,
    /// stored energy and the peak field in every region; writes results.json and
    /// fields.vtu into the output folder.
    Solve {
        /// The model file (TOML).
        model: PathBuf,
        /// Output folder (created if missing).
        #[arg(long, value_name = "DIR")]
        out: PathBuf,
        /// Element order, overriding the model's `[mesh] order`.
        #[arg(long, value_parser = clap::value_parser!(u8).range(1..=2))]
        order: Option<u8>,
        /// Memory the run may plan to use ("8GiB", "500MB"); the node budget is lowered to
        /// fit it. Default: half of the machine's memory (at most 80 % of `ulimit -v`).
        #[arg(long, value_name = "SIZE", value_parser = budget::parse_memory)]
        memory_limit: Option<f64>,
        /// Print results.json on stdout instead of the summary.
        #[arg(long)]
        json: bool,
        /// Write the VTU file's arrays as decimal text instead of zlib-compressed binary.
        #[arg(long)]
        ascii_vtu: bool,
    },
    /// The whole job: mesh, solve, estimate the error, refine adaptively until the energy,
    /// charges, floating potentials and peak fields away from singular points settle within
    /// the tolerance, extract the singular points' coefficients and study the convergence
    /// of every quantity; writes everything `solve` writes plus convergence.csv and the
    /// convergence and singular-point sections of results.json.
    Check {
        /// The model file (TOML).
        model: PathBuf,
        /// Output folder (created if missing).
        #[arg(long, value_name = "DIR")]
        out: PathBuf,
        /// Relative tolerance, as a percentage ("0.5%") or a fraction ("0.005").
        #[arg(long, default_value = "0.5%", allow_hyphen_values = true, value_parser = args::parse_tolerance)]
        tol: f64,
        /// Element order, overriding the model's `[mesh] order`.
        #[arg(long, value_parser = clap::value_parser!(u8).range(1..=2))]
        order: Option<u8>,
        /// Most meshes the adaptive loop may solve.
        #[arg(long, default_value_t = 12, value_parser = clap::value_parser!(u64).range(1..=100))]
        max_meshes: u64,
        /// Most unknowns a mesh may have (at least 1000; the memory budget may lower it).
        #[arg(long, default_value_t = 2_000_000, value_parser = clap::value_parser!(u64).range(1000..))]
        max_unknowns: u64,
        /// Memory the run may plan to use ("8GiB", "500MB"); the node budget is lowered to
        /// fit it. Default: half of the machine's memory (at most 80 % of `ulimit -v`).
        #[arg(long, value_name = "SIZE", value_parser = budget::parse_memory)]
        memory_limit: Option<f64>,
        /// Print results.json on stdout instead of the summary.
        #[arg(long)]
        json: bool,
        /// Write the VTU file's arrays as decimal text instead of zlib-compressed binary.
        #[arg(long)]
        ascii_vtu: bool,
    },
    /// Build the report (report.html and its SVG plots) of a results folder that `solve` or
    /// `check` wrote, without solving (`check` writes it itself).
    Report {
        /// The results folder.
        dir: PathBuf,
    },
    /// Dump an intermediate stage for inspection.
    Debug {
        #[command(subcommand)]
        what: DebugCommand,
    },
}

#[derive(Subcommand, Debug)]
enum DebugCommand {
    /// Write the reduced stiffness matrix (lower triangle, Matrix Market "symmetric") and
    /// its right-hand side (FILE_rhs.mtx, Matrix Market "array"), so that other sparse
    /// solvers can be compared on the very same system.
    Matrix {
        /// The model file (TOML).
        model: PathBuf,
        /// The matrix file to write.
        #[arg(long, value_name = "FILE.mtx")]
        out: PathBuf,
        /// Element order, overriding the model's `[mesh] order`.
        #[arg(long, value_parser = clap::value_parser!(u8).range(1..=2))]
        order: Option<u8>,
        /// Memory the run may plan to use ("8GiB", "500MB"); the node budget is lowered to
        /// fit it. Default: half of the machine's memory (at most 80 % of `ulimit -v`).
        #[arg(long, value_name = "SIZE", value_parser = budget::parse_memory)]
        memory_limit: Option<f64>,
    },
}

/// Exit code of a `check` whose quantities did not all converge within the budget.
const NOT_CONVERGED: u8 = 3;

/// The VTU encoding the flags ask for.
fn vtu_encoding(ascii: bool) -> mesher::VtuEncoding {
    if ascii {
        mesher::VtuEncoding::Ascii
    } else {
        mesher::VtuEncoding::Compressed
    }
}

fn main() -> ExitCode {
    let args = Args::parse();
    let result = match args.command {
        Command::Mesh { model, out, svg, order, memory_limit, json, ascii_vtu } => {
            mesh::run(&mesh::MeshRun { model, out, svg, order, json, memory_limit, vtu: vtu_encoding(ascii_vtu) })
        }
        Command::Solve { model, out, order, memory_limit, json, ascii_vtu } => {
            solve::run(&solve::SolveRun { model, out, order, json, memory_limit, vtu: vtu_encoding(ascii_vtu) })
        }
        Command::Check { model, out, tol, order, max_meshes, max_unknowns, memory_limit, json, ascii_vtu } => {
            let converged = check::run(&check::CheckRun {
                model,
                out,
                tolerance: tol,
                order,
                max_meshes: max_meshes as usize,
                max_unknowns: max_unknowns as usize,
                json,
                memory_limit,
                vtu: vtu_encoding(ascii_vtu),
            });
            match converged {
                Ok(false) => return ExitCode::from(NOT_CONVERGED),
                other => other.map(|_| ()),
            }
        }
        Command::Report { dir } => fieldgrade::results::report::write_report(&dir),
        Command::Debug { what: DebugCommand::Matrix { model, out, order, memory_limit } } => {
            debug::dump_matrix(&model, &out, order, memory_limit)
        }
    };
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(CliError::Model(e)) => {
            eprint!("{e}");
            ExitCode::from(2)
        }
        Err(e) => {
            eprintln!("error: {e}");
            ExitCode::from(1)
        }
    }
}
