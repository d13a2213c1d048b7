//! `fieldgrade check`: the whole job — mesh, solve, estimate, adapt until the watched
//! quantities settle, extract the singular points' coefficients, study the convergence of
//! every quantity — and write everything `solve` writes plus the convergence and
//! singular-point sections (results.json, convergence.csv).
//!
//! The watched quantities: the stored energy, the charge of every conductor at a fixed
//! potential, the potential of every floating conductor, the peak field of every region
//! away from singular points, and the largest field of every probe away from singular
//! points. "Away" means outside a disc around every point whose field is singular (λ < 1):
//! radius 2 % of the model's size, or a quarter of the distance to the nearest other flagged
//! point if that is smaller. Inside such a disc the field has no converged value (it grows
//! like r^(λ−1)); the singular-point section describes it instead by the coefficient of
//! the singular term.

use crate::plan;
use crate::plan::problem::problem_of;
use crate::results::check::{
    convergence_csv, render_check, Adaptivity, CheckResults, MeshStep, MeshStepTimings, QuantityStudy,
};
use crate::results::checks::breakdown_checks;
use crate::results::mesh::report_of;
use crate::results::solve::{analyse, render_text, solve_error, write_outputs};
use crate::CliError;
use crate::Result;
use engine::{adapt_from, AdaptParams, MeshSource};
use mesher::Xy;
use std::path::PathBuf;
use std::time::Instant;

mod sections;
mod watch;

use sections::{annotate_regions, singular_section, study};
use watch::{quantity_list, watch, Watchlist};

/// A validated `check` run.
#[derive(Debug)]
pub struct CheckRun {
    /// Model file.
    pub model: PathBuf,
    /// Output folder.
    pub out: PathBuf,
    /// Relative tolerance (0.005 for "0.5%").
    pub tolerance: f64,
    /// Element order override.
    pub order: Option<u8>,
    /// Most meshes.
    pub max_meshes: usize,
    /// Most unknowns.
    pub max_unknowns: usize,
    /// JSON to stdout instead of the summary.
    pub json: bool,
    /// Memory budget, bytes (`--memory-limit`; default: see `budget`).
    pub memory_limit: Option<f64>,
    /// How `fields.vtu` (or the mesh VTU) is encoded.
    pub vtu: mesher::VtuEncoding,
}

/// Runs `fieldgrade check`.
///
/// # Errors
/// Model, meshing and solve errors (as [`CliError::Model`]), I/O errors.
/// Returns whether the loop converged (the caller turns "not converged" into its own exit
/// code, after everything is written).
pub fn run(run: &CheckRun) -> Result<bool> {
    let t0 = Instant::now();
    let mut model = plan::load(&run.model).map_err(CliError::from)?;
    crate::plan::budget::prepare(&mut model, run.order, run.memory_limit, true);
    // A drawn model is remeshed on every step; an imported mesh, which has no geometry
    // behind it, is the first mesh and is refined inside by bisection.
    let (source, import_warnings) = match &model.import {
        None => (MeshSource::Drawn { geometry: &model.geometry, params: &model.params }, Vec::new()),
        Some(_) => {
            let first = crate::commands::first_mesh(&model)?;
            (MeshSource::Given(Box::new(first.mesh)), first.warnings)
        }
    };
    let problem = problem_of(&model);
    let bar = indicatif::ProgressBar::new_spinner();
    bar.set_style(
        indicatif::ProgressStyle::with_template("{spinner} {elapsed:>4} {msg}")
            .unwrap_or_else(|_| indicatif::ProgressStyle::default_spinner()),
    );
    bar.enable_steady_tick(std::time::Duration::from_millis(200));
    bar.set_message("mesh 1: meshing and solving");
    let mut ap = AdaptParams {
        tolerance: run.tolerance,
        max_iterations: run.max_meshes,
        // The memory budget may allow fewer.
        max_unknowns: run
            .max_unknowns
            .min(engine::unknowns_within(model.memory_budget_bytes, model.params.order, true) as usize),
        ..Default::default()
    };
    if model.sets_min_angle {
        ap.mesh.min_angle_deg = None;
    }
    if model.sets_gradation {
        ap.mesh.gradation = None;
    }
    let mut meshes_done = 0usize;
    // The discs around singular points and the list of quantities come from the first mesh
    // (the singular points and regions are the geometry's, the same on every mesh).
    let mut setup: Option<(Vec<(Xy, f64)>, Watchlist)> = None;
    let outcome = adapt_from(
        source,
        &problem,
        &ap,
        |mesh, solved, est| {
            let (discs, quantities) = setup.get_or_insert_with(|| {
                (engine::exclusion_discs(mesh, model.singular_exclusion_radius_m), quantity_list(&model, mesh))
            });
            Ok(watch(&model, &problem, mesh, solved, est, quantities, discs))
        },
        |step| {
            meshes_done += 1;
            bar.set_message(format!(
                "mesh {}: {} unknowns, estimated error {:.3} %, largest change {} — refining",
                meshes_done,
                step.unknowns,
                100.0 * step.estimate,
                if step.max_change.is_nan() { "-".into() } else { format!("{:.3} %", 100.0 * step.max_change) }
            ));
        },
    );
    bar.finish_and_clear();
    let outcome = outcome.map_err(|e| match e {
        engine::SolveError::Mesh(m) => CliError::from(model.mesh_error(&m)),
        e => solve_error(&model, e),
    })?;
    let (discs, quantities) = setup.expect("the adaptive loop watches every mesh it solves");
    let t_adapt = t0.elapsed().as_secs_f64();
    let engine::AdaptOutcome { converged, reason, history, mesh, solved, estimate, bars } = outcome;
    let (solution, (fixed, cmat)) = (solved.solution.clone(), solved.capacitance.clone());
    let mut mesh_report = report_of(&model, &mesh, true, None);
    mesh_report.warnings.extend(import_warnings);
    let (mut solve, analysis) = analyse(&model, &mesh, mesh_report, &problem, solution, &fixed, cmat);
    solve.points = crate::results::solve::point_results(&model, &mesh, &solved);
    crate::results::solve::finite_or_error(&model, &solve)?;
    let mut singular = singular_section(&model, &mesh, &analysis.sol, &discs);
    let t_post = t0.elapsed().as_secs_f64() - t_adapt;
    solve.timings_s = vec![("adaptive loop".into(), t_adapt), ("final analysis".into(), t_post)];
    let convergence: Vec<QuantityStudy> = quantities
        .iter()
        .enumerate()
        .map(|(i, (name, unit, _))| {
            let seq: Vec<(usize, f64)> = history.iter().map(|s| (s.unknowns, s.watched[i].value)).collect();
            let per_mesh: Vec<(&engine::ErrorBar, Option<f64>)> =
                history.iter().map(|s| (&s.bars[i], s.watched[i].estimate)).collect();
            study(name.clone(), unit, &seq, &per_mesh, &bars[i], run.tolerance)
        })
        .collect();
    for p in &mut singular {
        let name = format!("singular coefficient A at {}", p.id);
        if let Some(q) = convergence.iter().find(|q| q.quantity == name) {
            p.coefficient_error_bar = Some(q.error_bar.clone());
        }
    }
    annotate_regions(&mut solve.regions, &convergence);
    sections::annotate_points(&mut solve.points, &convergence, &discs);
    // The breakdown checks on the final solution, with the certified value and bar of every
    // watched peak (a bar that is not finite is no bar).
    let bar_of = |name: &str| {
        convergence
            .iter()
            .find(|q| q.quantity == name)
            .and_then(|q| q.error_bar.absolute.filter(|b| b.is_finite()).map(|b| (q.error_bar.value, b)))
    };
    let (checks, mut files) = breakdown_checks(&model, &mesh, &problem, &solved, &discs, &bar_of);
    solve.checks = Some(checks);
    crate::results::solve::finite_or_error(&model, &solve)?;
    let t_checks = t0.elapsed().as_secs_f64() - t_adapt - t_post;
    solve.timings_s.push(("breakdown checks".into(), t_checks));
    let results = CheckResults {
        adaptivity: Adaptivity {
            tolerance: run.tolerance,
            converged,
            reason,
            estimated_energy_norm_error: estimate.relative(),
            estimated_energy_error: estimate.relative_energy(),
            meshes: history
                .iter()
                .map(|s| MeshStep {
                    unknowns: s.unknowns,
                    triangles: s.triangles,
                    estimated_error: s.estimate,
                    max_change: s.max_change.is_finite().then_some(s.max_change),
                    timings_s: MeshStepTimings {
                        mesh: s.timings.mesh_s,
                        solve: s.timings.solve_s,
                        estimate: s.timings.estimate_s,
                        watch: s.timings.watch_s,
                    },
                })
                .collect(),
            singular_exclusion_radius_m: discs.iter().map(|d| d.1).collect(),
        },
        convergence,
        singular_points: singular,
        solve,
    };
    let json = serde_json::to_string_pretty(&results)?;
    files.push(("convergence.csv".into(), convergence_csv(&results.convergence)));
    if !results.solve.points.is_empty() {
        files.push(("points.csv".into(), crate::results::solve::points_csv(&results.solve.points)));
    }
    files.push(("results.json".into(), json.clone()));
    write_outputs(&run.out, &mesh, &problem, &analysis, &files, run.vtu)?;
    crate::results::report::write_report(&run.out)?;
    if run.json {
        for w in &results.solve.mesh.warnings {
            eprintln!("warning: {w}");
        }
        println!("{json}");
    } else {
        let mut text = render_text(&results.solve, model.unit_m, model.unit);
        text.push_str(&render_check(&results, model.unit));
        print!("{text}");
    }
    Ok(results.adaptivity.converged)
}
