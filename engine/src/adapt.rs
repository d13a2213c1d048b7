//! The adaptive loop (linear elements): mesh → solve → estimate → new sizes → remesh, until
//! the estimated relative energy-norm error is below the tolerance or a budget is reached.
//!
//! # Algorithm
//! After each solve the recovery estimate gives ηₜ per triangle. With N triangles and
//! ‖V_h‖ the solution's energy norm, the error allowed per triangle is
//! ē = tol·‖V_h‖/√N (equidistribution), and each triangle's new size is
//! hₜ·(ē/ηₜ)^(1/p), p = 1 for linear elements, clamped to [¼, 2]× per step; the sizes go to
//! the mesher as a background size field on the old mesh and the geometry is meshed
//! afresh (so arcs, tags and corner analysis stay exact). Reaching the budget is an
//! outcome, not an error: `converged = false` with the reason.
//!
//! # References
//! - O. C. Zienkiewicz, J. Z. Zhu, "The superconvergent patch recovery and a posteriori
//!   error estimates. Part 2: Error estimates and adaptivity", Int. J. Numer. Methods Eng.
//!   33 (1992) 1365–1382, doi:10.1002/nme.1620330703.

use crate::error::SolveError;
use crate::estimate::estimate_error;
use crate::problem::Problem;
use crate::solve::{solve, Solution};
use mesher::{generate_with, BackgroundSize, Geometry, Mesh, RefineParams};

/// Settings of the adaptive loop, with documented defaults.
#[derive(Clone, Debug, PartialEq)]
pub struct AdaptParams {
    /// Target relative energy-norm error η/‖V_h‖. Default 0.01.
    pub tolerance: f64,
    /// Most remeshing steps. Default 12.
    pub max_iterations: usize,
    /// Stop before a mesh would exceed this many unknowns. Default 2 000 000.
    pub max_unknowns: usize,
}

impl Default for AdaptParams {
    fn default() -> Self {
        AdaptParams { tolerance: 0.01, max_iterations: 12, max_unknowns: 2_000_000 }
    }
}

/// One step of the loop.
#[derive(Clone, Debug, PartialEq)]
pub struct AdaptStep {
    /// Unknowns of the solve.
    pub unknowns: usize,
    /// Estimated relative energy-norm error.
    pub estimate: f64,
    /// Stored energy of the solution.
    pub energy: f64,
}

/// The result of the loop.
#[derive(Clone, Debug)]
pub struct AdaptOutcome {
    /// The estimate reached the tolerance.
    pub converged: bool,
    /// Why the loop stopped.
    pub reason: String,
    /// Every step, first to last.
    pub history: Vec<AdaptStep>,
    /// The last mesh.
    pub mesh: Mesh,
    /// The last solution.
    pub solution: Solution,
}

/// Runs the adaptive loop with linear elements (the order in `params` is overridden).
///
/// # Errors
/// A meshing error (as [`SolveError::Mesh`]) or any solve error.
pub fn adapt(
    geo: &Geometry,
    params: &RefineParams,
    problem: &Problem,
    ap: &AdaptParams,
) -> Result<AdaptOutcome, SolveError> {
    let params = params.clone().with_order(1);
    let mut background: Option<BackgroundSize> = None;
    let mut history = Vec::new();
    loop {
        let mesh = generate_with(geo, &params, background.take()).map_err(SolveError::Mesh)?.mesh;
        let solution = solve(&mesh, problem)?;
        let est = estimate_error(&mesh, problem, &solution);
        let rel = est.relative();
        history.push(AdaptStep { unknowns: solution.num_unknowns, estimate: rel, energy: solution.energy });
        let stop = if rel <= ap.tolerance {
            Some((true, format!("estimated relative energy error {rel:.3e} ≤ tolerance {:.3e}", ap.tolerance)))
        } else if history.len() > ap.max_iterations {
            Some((false, format!("{} remeshing steps reached with estimated error {rel:.3e}", ap.max_iterations)))
        } else {
            None
        };
        // New sizes by equidistribution of the error over the triangles.
        let nt = mesh.triangles.len() as f64;
        let allowed = ap.tolerance * est.solution_norm / nt.sqrt();
        let sizes: Vec<f64> = (0..mesh.triangles.len())
            .map(|t| {
                let h = (4.0 * mesh.triangle_area(t).abs() / 3f64.sqrt()).sqrt();
                let eta = est.indicators[t].max(1e-300);
                h * (allowed / eta).clamp(0.25, 2.0)
            })
            .collect();
        // Predicted triangle count of the next mesh: Σ (h/h_new)².
        let predicted: f64 = (0..mesh.triangles.len())
            .map(|t| {
                let h = (4.0 * mesh.triangle_area(t).abs() / 3f64.sqrt()).sqrt();
                (h / sizes[t]).powi(2)
            })
            .sum();
        let stop = stop.or_else(|| {
            (predicted * solution.num_unknowns as f64 / nt > ap.max_unknowns as f64).then(|| {
                (false, format!("the next mesh would exceed {} unknowns; estimated error {rel:.3e}", ap.max_unknowns))
            })
        });
        if let Some((converged, reason)) = stop {
            return Ok(AdaptOutcome { converged, reason, history, mesh, solution });
        }
        background = Some(BackgroundSize::new(&mesh, sizes));
    }
}
