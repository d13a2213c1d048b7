//! The adaptive loop: mesh → solve → estimate → new sizes → remesh, until the estimated
//! error and every quantity the caller watches have settled, or a budget is reached.
//!
//! # Algorithm
//! After each solve the recovery estimate gives ηₜ per triangle (see [`estimate_error`]).
//! Marking is by bulk (Dörfler 1996): the smallest set M of triangles, largest indicators
//! first, with Σ_M ηₜ² ≥ θ·Σηₜ² (θ = `bulk_fraction`, default 0.5) is refined. Sizes come
//! from equidistribution: with N triangles and ‖V_h‖ the solution's energy norm the error
//! allowed per triangle is ē = tol·‖V_h‖/√N, and a triangle's wanted size is
//! hₜ·(ē/ηₜ)^(1/p) for elements of order p. A marked triangle takes that size clamped to
//! [¼, ¾]·hₜ (it is always refined); an unmarked one takes it clamped to [1, 2]·hₜ (it is
//! never refined, and may coarsen where the error is far below its share). If the next mesh
//! would not have at least 1.3× the unknowns of this one, all sizes shrink uniformly so
//! that it does: successive meshes form a refinement sequence, which the convergence study
//! of the watched quantities needs. The sizes go to the mesher as a background size field
//! on the old mesh and the geometry is meshed afresh (arcs, tags and the corner analysis
//! stay exact; the mesher's own corner grading stays in force).
//!
//! The loop stops with `converged = true` when, after at least `min_meshes` meshes, the
//! estimated relative energy-norm error η/‖V_h‖ is at most the tolerance and every watched
//! quantity changed by at most the tolerance (relative to its magnitude, or to its stated
//! floor) since the previous mesh. Reaching the step or unknown budget is an outcome, not
//! an error: `converged = false` with the reason.
//!
//! # References
//! - W. Dörfler, "A convergent adaptive algorithm for Poisson's equation", SIAM J. Numer.
//!   Anal. 33 (1996) 1106–1124, doi:10.1137/0733054.
//! - O. C. Zienkiewicz, J. Z. Zhu, "The superconvergent patch recovery and a posteriori
//!   error estimates. Part 2: Error estimates and adaptivity", Int. J. Numer. Methods Eng.
//!   33 (1992) 1365–1382, doi:10.1002/nme.1620330703.

use crate::error::SolveError;
use crate::estimate::{estimate_error, ErrorEstimate};
use crate::problem::Problem;
use crate::solve::{solve_with_capacitance, CapacitanceMatrix, Solution};
use mesher::{generate_with, BackgroundSize, Geometry, Mesh, RefineParams};

/// Settings of the adaptive loop, with documented defaults.
#[derive(Clone, Debug, PartialEq)]
pub struct AdaptParams {
    /// Target relative energy-norm error η/‖V_h‖, and the largest relative change allowed
    /// of every watched quantity between the last two meshes. Default 0.01.
    pub tolerance: f64,
    /// Most meshes solved. Default 12.
    pub max_iterations: usize,
    /// Stop before a mesh would exceed this many unknowns. Default 2 000 000.
    pub max_unknowns: usize,
    /// Fewest meshes before the loop may stop converged (3 gives a three-mesh convergence
    /// study). Default 3.
    pub min_meshes: usize,
    /// Dörfler bulk fraction θ of the squared estimate that the marked triangles hold.
    /// Default 0.5.
    pub bulk_fraction: f64,
}

impl Default for AdaptParams {
    fn default() -> Self {
        AdaptParams { tolerance: 0.01, max_iterations: 12, max_unknowns: 2_000_000, min_meshes: 3, bulk_fraction: 0.5 }
    }
}

/// A value the loop watches for convergence.
#[derive(Clone, Debug, PartialEq)]
pub struct Watched {
    /// Value.
    pub value: f64,
    /// Changes are taken relative to max(|value|, floor): a floor keeps a quantity that is
    /// near zero (a coupling capacitance, a floating potential near 0 V) from demanding a
    /// meaningless relative accuracy.
    pub floor: f64,
}

/// One step of the loop.
#[derive(Clone, Debug, PartialEq)]
pub struct AdaptStep {
    /// Unknowns of the solve.
    pub unknowns: usize,
    /// Triangles of the mesh.
    pub triangles: usize,
    /// Estimated relative energy-norm error.
    pub estimate: f64,
    /// Stored energy of the solution.
    pub energy: f64,
    /// The watched quantities on this mesh.
    pub watched: Vec<Watched>,
    /// Largest relative change of a watched quantity since the previous mesh (NaN on the
    /// first).
    pub max_change: f64,
}

/// The result of the loop.
#[derive(Clone, Debug)]
pub struct AdaptOutcome {
    /// The estimate and the watched quantities reached the tolerance.
    pub converged: bool,
    /// Why the loop stopped.
    pub reason: String,
    /// Every step, first to last.
    pub history: Vec<AdaptStep>,
    /// The last mesh.
    pub mesh: Mesh,
    /// The last solution.
    pub solution: Solution,
    /// The Maxwell capacitance matrix on the last mesh (as [`crate::solve_with_capacitance`]
    /// gives it).
    pub capacitance: CapacitanceMatrix,
    /// The estimate on the last mesh.
    pub estimate: ErrorEstimate,
}

/// Runs the adaptive loop with the element order of `params`, watching nothing but the
/// estimate (and the energy).
///
/// # Errors
/// A meshing error (as [`SolveError::Mesh`]) or any solve error.
pub fn adapt(
    geo: &Geometry,
    params: &RefineParams,
    problem: &Problem,
    ap: &AdaptParams,
) -> Result<AdaptOutcome, SolveError> {
    adapt_watching(geo, params, problem, ap, |_, _| Ok(Vec::new()), |_| {})
}

/// Runs the adaptive loop; after each solve `watch` returns the quantities to converge
/// (the same number, in the same order, every time) and `progress` sees each step.
///
/// ```
/// use engine::{adapt_watching, AdaptParams, ConductorSpec, Problem, Watched};
/// use mesher::{Fill, Geometry, OuterBoundary, Outline, RefineParams, Shape, Symmetry};
/// // Coaxial cylinders 1 cm / 3 cm in air, core at 1 V: watch the core's charge.
/// let shapes = vec![
///     Shape { name: "gap".into(), fill: Fill::Dielectric { permittivity: 1.0 }, max_size_m: None,
///             outline: Outline::circle("gap", [0.0, 0.0], 0.03)? },
///     Shape { name: "core".into(), fill: Fill::Conductor { conductor: 0 }, max_size_m: None,
///             outline: Outline::circle("core", [0.0, 0.0], 0.01)? },
/// ];
/// let geo = Geometry { symmetry: Symmetry::Planar, shapes, conductors: vec!["core".into()],
///                      outer: OuterBoundary::FixedPotential, size_points: vec![] };
/// let problem = Problem { permittivity: vec![1.0, 1.0], conductors: vec![ConductorSpec::Fixed { potential_v: 1.0 }],
///                         outer_potential_v: Some(0.0), ..Default::default() };
/// let ap = AdaptParams { tolerance: 1e-3, ..Default::default() };
/// let out = adapt_watching(&geo, &RefineParams::new().with_order(2), &problem, &ap,
///     |_, sol| Ok(vec![Watched { value: sol.conductor_charges[0], floor: 0.0 }]), |_| {}).unwrap();
/// assert!(out.converged, "{}", out.reason);
/// assert!(out.history.len() >= 3);
/// # Ok::<(), mesher::MeshError>(())
/// ```
///
/// # Errors
/// A meshing error (as [`SolveError::Mesh`]), any solve error, or an error from `watch`.
pub fn adapt_watching(
    geo: &Geometry,
    params: &RefineParams,
    problem: &Problem,
    ap: &AdaptParams,
    mut watch: impl FnMut(&Mesh, &Solution) -> Result<Vec<Watched>, SolveError>,
    mut progress: impl FnMut(&AdaptStep),
) -> Result<AdaptOutcome, SolveError> {
    let p = params.order.max(1) as f64;
    let mut background: Option<BackgroundSize> = None;
    let mut history: Vec<AdaptStep> = Vec::new();
    loop {
        let mesh = generate_with(geo, params, background.take()).map_err(SolveError::Mesh)?.mesh;
        // The capacitance columns ride on the load case's factorisation (a few more
        // right-hand sides), so the last mesh needs no second solve for them.
        let (solution, capacitance) = solve_with_capacitance(&mesh, problem)?;
        let est = estimate_error(&mesh, problem, &solution);
        let rel = est.relative();
        let watched = watch(&mesh, &solution)?;
        let max_change = match history.last() {
            Some(prev) => prev
                .watched
                .iter()
                .zip(&watched)
                .map(|(a, b)| (b.value - a.value).abs() / b.value.abs().max(b.floor).max(f64::MIN_POSITIVE))
                .fold(0.0, f64::max),
            None => f64::NAN,
        };
        let step = AdaptStep {
            unknowns: solution.num_unknowns,
            triangles: mesh.triangles.len(),
            estimate: rel,
            energy: solution.energy,
            watched,
            max_change,
        };
        progress(&step);
        history.push(step);
        // On the first mesh there is nothing to compare with (that only matters for
        // min_meshes = 1).
        let settled = history.len() == 1 || max_change <= ap.tolerance;
        let stop = if history.len() >= ap.min_meshes.max(1) && rel <= ap.tolerance && settled {
            Some((
                true,
                format!(
                    "estimated relative energy error {rel:.2e} and largest change {:.2e} ≤ tolerance {:.2e}",
                    if max_change.is_nan() { 0.0 } else { max_change },
                    ap.tolerance
                ),
            ))
        } else if history.len() >= ap.max_iterations {
            Some((
                false,
                format!(
                    "not converged: {} meshes solved; estimated error {rel:.2e}, last change {max_change:.2e}, tolerance {:.2e}",
                    history.len(),
                    ap.tolerance
                ),
            ))
        } else {
            None
        };
        if let Some((converged, reason)) = stop {
            return Ok(AdaptOutcome { converged, reason, history, mesh, solution, capacitance, estimate: est });
        }
        let (sizes, predicted) = new_sizes(&mesh, &est, ap, p);
        if predicted * solution.num_unknowns as f64 / mesh.triangles.len() as f64 > ap.max_unknowns as f64 {
            let reason = format!(
                "not converged: the next mesh would exceed {} unknowns; estimated error {rel:.2e}, last change {max_change:.2e}",
                ap.max_unknowns
            );
            return Ok(AdaptOutcome { converged: false, reason, history, mesh, solution, capacitance, estimate: est });
        }
        background = Some(BackgroundSize::new(&mesh, sizes));
    }
}

/// The wanted size per triangle (module docs) and the predicted triangle count of the next
/// mesh.
fn new_sizes(mesh: &Mesh, est: &ErrorEstimate, ap: &AdaptParams, p: f64) -> (Vec<f64>, f64) {
    let nt = mesh.triangles.len();
    let allowed = ap.tolerance * est.solution_norm / (nt as f64).sqrt();
    // Dörfler marking: largest indicators first until θ of the squared total.
    let mut order: Vec<u32> = (0..nt as u32).collect();
    order.sort_unstable_by(|&a, &b| est.indicators[b as usize].total_cmp(&est.indicators[a as usize]));
    let total: f64 = est.indicators.iter().map(|e| e * e).sum();
    let mut marked = vec![false; nt];
    let mut acc = 0.0;
    for &t in &order {
        if acc >= ap.bulk_fraction * total {
            break;
        }
        acc += est.indicators[t as usize].powi(2);
        marked[t as usize] = true;
    }
    let h_of = |t: usize| (4.0 * mesh.triangle_area(t).abs() / 3f64.sqrt()).sqrt();
    let mut sizes: Vec<f64> = (0..nt)
        .map(|t| {
            let wanted = (allowed / est.indicators[t].max(1e-300)).powf(1.0 / p);
            let f = if marked[t] { wanted.clamp(0.25, 0.75) } else { wanted.clamp(1.0, 2.0) };
            h_of(t) * f
        })
        .collect();
    // Predicted triangle count of the next mesh: Σ (h/h_new)².
    let predict = |sizes: &[f64]| (0..nt).map(|t| (h_of(t) / sizes[t]).powi(2)).sum::<f64>();
    let mut predicted = predict(&sizes);
    let least = 1.3 * nt as f64;
    if predicted < least {
        let shrink = (predicted / least).sqrt();
        sizes.iter_mut().for_each(|h| *h *= shrink);
        predicted = predict(&sizes);
    }
    (sizes, predicted)
}
