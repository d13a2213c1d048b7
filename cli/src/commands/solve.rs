//! `fieldgrade solve`: mesh, solve, and write the stresses, charges, capacitances and
//! energy (results.json, fields.vtu) with a summary on stdout.

use crate::plan;
use crate::plan::problem::problem_of;
use crate::results::checks::breakdown_checks;
use crate::results::mesh::report_of;
use crate::results::solve::{analyse, finite_or_error, render_text, solve_error, write_outputs};
use crate::CliError;
use crate::Result;
use engine::solve_factored;
use std::path::PathBuf;
use std::time::Instant;

/// A validated `solve` run.
#[derive(Debug)]
pub struct SolveRun {
    /// Model file.
    pub model: PathBuf,
    /// Output folder.
    pub out: PathBuf,
    /// Element order override.
    pub order: Option<u8>,
    /// JSON to stdout instead of the summary.
    pub json: bool,
    /// Memory budget, bytes (`--memory-limit`; default: see `budget`).
    pub memory_limit: Option<f64>,
    /// How `fields.vtu` (or the mesh VTU) is encoded.
    pub vtu: mesher::VtuEncoding,
}

/// Runs `fieldgrade solve`.
///
/// # Errors
/// Model errors and solve errors the user must fix (as [`CliError::Model`]), I/O errors.
pub fn run(run: &SolveRun) -> Result<()> {
    let t0 = Instant::now();
    let mut model = plan::load(&run.model).map_err(CliError::from)?;
    crate::plan::budget::prepare(&mut model, run.order, run.memory_limit, false);
    let meshed = crate::commands::first_mesh(&model)?;
    let t_mesh = t0.elapsed().as_secs_f64();
    let mesh = &meshed.mesh;
    let problem = problem_of(&model);
    // One factorisation serves the load case, every capacitance column and the checks'
    // further right-hand sides.
    let solved = solve_factored(mesh, &problem).map_err(|e| solve_error(&model, e))?;
    let (fixed, cmat) = solved.capacitance.clone();
    let sol = solved.solution.clone();
    let t_solve = t0.elapsed().as_secs_f64() - t_mesh;
    let mut mesh_report = report_of(&model, mesh, meshed.complete, meshed.reason.clone());
    mesh_report.warnings.extend(meshed.warnings.iter().cloned());
    let (mut results, analysis) = analyse(&model, mesh, mesh_report, &problem, sol, &fixed, cmat);
    results.points = crate::results::solve::point_results(&model, mesh, &solved);
    let t_post = t0.elapsed().as_secs_f64() - t_mesh - t_solve;
    let discs = engine::exclusion_discs(mesh, model.singular_exclusion_radius_m);
    let (checks, mut files) = breakdown_checks(&model, mesh, &problem, &solved, &discs, &|_| None);
    results.checks = Some(checks);
    finite_or_error(&model, &results)?;
    let t_checks = t0.elapsed().as_secs_f64() - t_mesh - t_solve - t_post;
    results.timings_s = vec![
        ("mesh".into(), t_mesh),
        ("solve".into(), t_solve),
        ("fields and capacitance".into(), t_post),
        ("breakdown checks".into(), t_checks),
    ];
    let json = serde_json::to_string_pretty(&results)?;
    if !results.points.is_empty() {
        files.push(("points.csv".into(), crate::results::solve::points_csv(&results.points)));
    }
    files.push(("results.json".into(), json.clone()));
    write_outputs(&run.out, mesh, &problem, &analysis, &files, run.vtu)?;
    crate::results::report::write_report(&run.out)?;
    if run.json {
        // The summary carries the warnings; with JSON on stdout they go to stderr too.
        for w in &results.mesh.warnings {
            eprintln!("warning: {w}");
        }
        println!("{json}");
    } else {
        print!("{}", render_text(&results, model.unit_m, model.unit));
    }
    Ok(())
}
