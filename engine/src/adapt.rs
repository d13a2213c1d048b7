//! The adaptive loop: mesh → solve → estimate → new sizes → remesh, until the estimated
//! error and every quantity the caller watches have settled, or a budget is reached.
//!
//! # Algorithm
//! After each solve the recovery estimate gives ηₜ per triangle (see [`crate::estimate_error`]).
//! Marking is by bulk (Dörfler 1996): the smallest set M of triangles, largest indicators
//! first, with Σ_M ηₜ² ≥ θ·Σηₜ² (θ = `bulk_fraction`, default 0.5) is refined; the others
//! are not, and may coarsen. How much comes from equidistribution: on a smooth solution
//! ηₜ ≈ C·hₜ^(p+1) for elements of order p, so the size at which a triangle would carry the
//! error ε is hₜ·(ε/ηₜ)^(1/(p+1)); at a singular point of exponent λ < p the error goes like
//! h^λ instead and the size follows with exponent 1/λ. One ε for all triangles is the
//! equidistributed (optimal) mesh; it is chosen, by bisection, so that the predicted
//! triangle count is the one the optimal rate N^(−p/2) says reaches the tolerance, grown at
//! least 1.5× and at most 2× per step. The error that rate is applied to is what decides:
//! each open watched quantity's own estimate where it has one (else its bar), and the
//! energy-norm estimate only when nothing is watched. A quantity whose own estimate is
//! already within the tolerance but whose sequence has not yet confirmed it asks for the
//! smallest step: its bar is held up by the changes of earlier, coarser meshes, which only
//! further meshes clear, whatever their size (measured on the rounded bushing: 0.1 % at
//! 214 708 unknowns instead of 290 029, 0.79× the wall time, `bench-results/check.md`).
//! A marked triangle's size is clamped to [¼, ¾]·hₜ ([1/32, ¾]·hₜ at a singular point,
//! which needs many halvings), an unmarked one's to [1, 2]·hₜ. When the marked set is too
//! small to reach the count even at its finest (the error sits in a handful of triangles at
//! singular points, which grading makes cheap), the count is reached by letting every
//! triangle refine to the same ε. The sizes go to the mesher as a background size field on
//! the old mesh
//! (continuous, graded; see `mesher::BackgroundSize`) and the geometry is meshed afresh
//! (arcs, tags and the corner analysis stay exact). If the new mesh has fewer than 1.3×
//! the triangles, the loop asks again for more: successive meshes form a refinement
//! sequence, which the convergence study of the watched quantities needs.
//!
//! A mesh with no geometry behind it (an imported one, [`MeshSource::Given`]) is refined
//! inside instead: the same sizes, spread as the same graded background field, drive
//! newest-vertex bisection (`mesher::bisect_to_sizes`), which keeps its regions, tags, arcs
//! and singular points. Bisection cannot coarsen, so the size plan lets no triangle grow.
//!
//! The loop's meshes use their own angle bound, gradation, smoothing and smallest size
//! ([`AdaptiveMesh`]), measured to need fewer unknowns for the same error.
//!
//! Marking refines for what is watched, not only for the energy: each triangle's
//! indicator is w·(ηₜ/(tol·‖V_h‖))² plus, for every watched quantity whose error bar is
//! not yet within the tolerance, its goal-oriented indicator ζ_q,ₜ (see `goal`) divided
//! by tol·|q|, so that a triangle counts by how far it keeps each open quantity from the
//! tolerance. The energy-norm weight w is 1 for a loop that watches nothing or while an
//! open quantity has no indicators of its own (the energy norm stands in for it), and tol
//! otherwise: the term is then the energy functional's own share ηₜ²/(tol·‖V_h‖²), which
//! keeps the whole domain resolved while the goals concentrate the refinement (measured on
//! the rounded bushing at 0.1 %: about half the unknowns of weight 1 for the same bars,
//! `bench-results/check.md`).
//!
//! # Stop rule
//! After every mesh each watched quantity gets an error bar and a verdict from its values
//! on the meshes so far and its own a-posteriori estimate ([`certify`]: the larger of the
//! estimate and the grid convergence index, the latter only when the sequence is monotone
//! with an observed order in [p_th/2, 2·p_th] around the theoretical order — 2p for the
//! energy, charges and floating potentials, p for field values — or faster; an oscillating,
//! growing or pre-asymptotic sequence, or one small change after a large one, is not
//! converged whatever its last change). The loop stops with `converged = true` when, after
//! at least `min_meshes` meshes, every deciding watched quantity's verdict is converged (its bar at
//! most the tolerance times max(|value|, floor)); with nothing watched, when the estimated
//! relative energy-norm error η/‖V_h‖ is at most the tolerance. (The energy-norm error of a
//! mesh graded towards singular points settles far above the errors of the energy, charges
//! and peaks away from the points: it is reported, not required.) Reaching the step or
//! unknown budget is an outcome,
//! not an error: `converged = false`, the reason naming what is still open, and the verdict
//! of every quantity in [`AdaptOutcome::bars`].
//!
//! # References
//! - W. Dörfler, "A convergent adaptive algorithm for Poisson's equation", SIAM J. Numer.
//!   Anal. 33 (1996) 1106–1124, doi:10.1137/0733054.
//! - O. C. Zienkiewicz, J. Z. Zhu, "The superconvergent patch recovery and a posteriori
//!   error estimates. Part 2: Error estimates and adaptivity", Int. J. Numer. Methods Eng.
//!   33 (1992) 1365–1382, doi:10.1002/nme.1620330703.

use crate::certify::{certify, BarStatus, ErrorBar, QuantityClass};
use crate::error::SolveError;
use crate::estimate::{estimate_error_with, ErrorEstimate};
use crate::problem::Problem;
use crate::solve::{solve_factored, FactoredSolution};
use mesher::{generate_with, BackgroundSize, Geometry, Mesh, RefineParams};

/// Settings of the adaptive loop, with documented defaults.
#[derive(Clone, Debug, PartialEq)]
pub struct AdaptParams {
    /// The largest relative error bar allowed of every watched quantity (with nothing
    /// watched: the target relative energy-norm error η/‖V_h‖). Default 0.01.
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
    /// How the loop's meshes are made. Default [`AdaptiveMesh::default`].
    pub mesh: AdaptiveMesh,
}

impl Default for AdaptParams {
    fn default() -> Self {
        AdaptParams {
            tolerance: 0.01,
            max_iterations: 12,
            max_unknowns: 2_000_000,
            min_meshes: 3,
            bulk_fraction: 0.5,
            mesh: AdaptiveMesh::default(),
        }
    }
}

/// Mesh settings the adaptive loop puts in place of the caller's, chosen by the unknowns
/// needed for a given error on the L-shaped benchmark (`bench-results/adaptivity.md`,
/// quadratic elements, relative energy error 1e-4, interpolated): with the 30° angle bound
/// of plain meshing 3.9·10⁴ unknowns, with 25° 2.9·10⁴ (the 30° bound spends many
/// triangles on every size transition); 22° and 20° gave the same within 1 %, as did a
/// gradation of 1.3 instead of 1.6 and no smoothing instead of three sweeps (1–3 %, within
/// the variation from one mesh sequence to the next). `None` keeps the caller's value (a
/// model that sets its own angle or gradation keeps it).
#[derive(Clone, Debug, PartialEq)]
pub struct AdaptiveMesh {
    /// Minimum angle of the refinement, degrees. Default 25.
    pub min_angle_deg: Option<f64>,
    /// Largest size ratio of neighbouring elements. Default 1.6.
    pub gradation: Option<f64>,
    /// Smoothing sweeps after refinement. Default 3.
    pub smoothing_passes: usize,
    /// Smallest element size as a fraction of the domain's diagonal, used when the caller
    /// sets none: deep enough for the loop to resolve a singular point to a relative
    /// energy error of 1e-5 and beyond. Default 1e-9.
    pub min_size_fraction: f64,
}

impl Default for AdaptiveMesh {
    fn default() -> Self {
        AdaptiveMesh { min_angle_deg: Some(25.0), gradation: Some(1.6), smoothing_passes: 3, min_size_fraction: 1e-9 }
    }
}

impl AdaptiveMesh {
    /// The caller's parameters with these settings in place.
    fn apply(&self, geo: &Geometry, params: &RefineParams) -> RefineParams {
        let mut p = params.clone();
        if let Some(a) = self.min_angle_deg {
            p.min_angle_deg = a;
        }
        if let Some(g) = self.gradation {
            p.gradation = g;
        }
        p.smoothing_passes = self.smoothing_passes;
        if p.min_size_m.is_none() {
            // Never above the global size (a model asking for tiny elements everywhere is
            // then refused by the mesher's budget, not by a floor it did not set).
            p.min_size_m = Some((self.min_size_fraction * geo.scale()).min(p.max_size_for(geo)));
        }
        p
    }
}

/// A value the loop watches for convergence.
#[derive(Clone, Debug, PartialEq)]
pub struct Watched {
    /// Value.
    pub value: f64,
    /// Changes and error bars are taken relative to max(|value|, floor): a floor keeps a
    /// quantity that is near zero (a coupling capacitance, a floating potential near 0 V)
    /// from demanding a meaningless relative accuracy.
    pub floor: f64,
    /// What kind of quantity it is (sets the order theory predicts; see [`certify`]).
    pub class: QuantityClass,
    /// Its own a-posteriori estimate of |exact − value| on this mesh, if it has one.
    pub estimate: Option<f64>,
    /// Per-triangle indicators of its error, in its unit, to refine towards it (a goal's
    /// [`crate::GoalEstimate::indicators`]), if any.
    pub indicators: Option<Vec<f64>>,
    /// Its verdict holds the loop (true), or it is only reported with its bar.
    pub decides: bool,
}

impl Watched {
    /// A watched value without an estimate of its own.
    pub fn new(value: f64, floor: f64, class: QuantityClass) -> Watched {
        Watched { value, floor, class, estimate: None, indicators: None, decides: true }
    }

    /// The same, reported with its bar and verdict but not holding the loop.
    pub fn reported_only(mut self) -> Watched {
        self.decides = false;
        self
    }

    /// The scale its relative figures are taken against: max(|value|, floor).
    pub fn scale(&self) -> f64 {
        self.value.abs().max(self.floor).max(f64::MIN_POSITIVE)
    }

    /// The same with its own estimate and its indicators.
    pub fn with_estimate(mut self, estimate: f64, indicators: Option<Vec<f64>>) -> Watched {
        self.estimate = Some(estimate.abs());
        self.indicators = indicators;
        self
    }
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
    /// The error bar and verdict of every watched quantity on the sequence up to this mesh.
    pub bars: Vec<ErrorBar>,
    /// Wall time of this step's stages.
    pub timings: StepTimings,
}

/// Wall seconds of one step of the loop, stage by stage.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct StepTimings {
    /// Making the mesh (for every mesh after the first: the size plan and the remeshings
    /// asked for by the previous step).
    pub mesh_s: f64,
    /// Assembly, factorisation and the solves of the load case and capacitance columns.
    pub solve_s: f64,
    /// The recovery-based energy estimate.
    pub estimate_s: f64,
    /// The watched quantities and their goal-oriented estimates.
    pub watch_s: f64,
}

/// The result of the loop.
#[derive(Debug)]
pub struct AdaptOutcome {
    /// The estimate and the watched quantities reached the tolerance.
    pub converged: bool,
    /// Why the loop stopped.
    pub reason: String,
    /// Every step, first to last.
    pub history: Vec<AdaptStep>,
    /// The last mesh.
    pub mesh: Mesh,
    /// The last solution with its capacitance matrix and its factorised system (further
    /// right-hand sides on the last mesh cost a substitution each).
    pub solved: FactoredSolution,
    /// The estimate on the last mesh.
    pub estimate: ErrorEstimate,
    /// The error bar and verdict of every watched quantity on the whole sequence.
    pub bars: Vec<ErrorBar>,
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
    adapt_watching(geo, params, problem, ap, |_, _, _| Ok(Vec::new()), |_| {})
}

/// Runs the adaptive loop; after each solve `watch` returns the quantities to converge
/// (the same number, in the same order, every time; it sees the factorised solution, on
/// which [`crate::goal_estimates`] estimates their errors, and the energy estimate) and
/// `progress` sees each step.
///
/// ```
/// use engine::{adapt_watching, AdaptParams, ConductorSpec, Problem, QuantityClass, Watched};
/// use mesher::{Fill, Geometry, OuterBoundary, Outline, RefineParams, Shape, Symmetry};
/// // Coaxial cylinders 1 cm / 3 cm in air, core at 1 V: watch the core's charge.
/// let shapes = vec![
///     Shape { name: "gap".into(), fill: Fill::Dielectric { permittivity: 1.0 }, max_size_m: None,
///             outline: Outline::circle("gap", [0.0, 0.0], 0.03)? },
///     Shape { name: "core".into(), fill: Fill::Conductor { conductor: 0 }, max_size_m: None,
///             outline: Outline::circle("core", [0.0, 0.0], 0.01)? },
/// ];
/// let geo = Geometry { symmetry: Symmetry::Planar, shapes, conductors: vec!["core".into()],
///                      outer: OuterBoundary::FixedPotential, size_points: vec![], thin: vec![], boundary_pieces: vec![] };
/// let problem = Problem { permittivity: vec![1.0, 1.0], conductors: vec![ConductorSpec::Fixed { potential_v: 1.0 }],
///                         outer_potential_v: Some(0.0), ..Default::default() };
/// let ap = AdaptParams { tolerance: 1e-3, ..Default::default() };
/// let out = adapt_watching(&geo, &RefineParams::new().with_order(2), &problem, &ap,
///     |_, solved, _| Ok(vec![Watched::new(solved.solution.conductor_charges[0], 0.0, QuantityClass::Functional)]),
///     |_| {}).unwrap();
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
    watch: impl FnMut(&Mesh, &FactoredSolution, &ErrorEstimate) -> Result<Vec<Watched>, SolveError>,
    progress: impl FnMut(&AdaptStep),
) -> Result<AdaptOutcome, SolveError> {
    adapt_from(MeshSource::Drawn { geometry: geo, params }, problem, ap, watch, progress)
}

/// Where the loop's meshes come from.
#[derive(Debug)]
pub enum MeshSource<'a> {
    /// The drawn geometry, meshed afresh for every step on a background size field (arcs,
    /// tags and the corner analysis stay exact; the mesh may coarsen where the error is
    /// small).
    Drawn {
        /// The geometry.
        geometry: &'a Geometry,
        /// The caller's meshing parameters (the loop puts [`AdaptiveMesh`] in place).
        params: &'a RefineParams,
    },
    /// A mesh with no geometry behind it (an imported one): the first mesh of the loop,
    /// refined inside by newest-vertex bisection ([`mesher::bisect_to_sizes`]), which keeps
    /// its regions, tags, arcs and singular points and never coarsens it. The element
    /// order is the mesh's.
    Given(Box<Mesh>),
}

/// [`adapt_watching`] on meshes from any [`MeshSource`].
///
/// # Errors
/// A meshing error (as [`SolveError::Mesh`]), any solve error, or an error from `watch`.
pub fn adapt_from(
    source: MeshSource<'_>,
    problem: &Problem,
    ap: &AdaptParams,
    mut watch: impl FnMut(&Mesh, &FactoredSolution, &ErrorEstimate) -> Result<Vec<Watched>, SolveError>,
    mut progress: impl FnMut(&AdaptStep),
) -> Result<AdaptOutcome, SolveError> {
    // The first step's meshing time counts from here.
    let mut clock = std::time::Instant::now();
    // The first mesh, and for a drawn model the geometry and settings to remesh it with.
    let (drawn, mut next_mesh, order) = match source {
        MeshSource::Drawn { geometry, params } => {
            let order = params.order;
            let params = ap.mesh.apply(geometry, params);
            let first = generate_with(geometry, &params, None).map_err(SolveError::Mesh)?.mesh;
            (Some((geometry, params)), first, order)
        }
        MeshSource::Given(mesh) => {
            let order = mesh.order();
            (None, *mesh, order)
        }
    };
    let p = order.max(1) as f64;
    let mut history: Vec<AdaptStep> = Vec::new();
    let mut lap = move || {
        let now = std::time::Instant::now();
        let s = (now - clock).as_secs_f64();
        clock = now;
        s
    };
    loop {
        let mesh = next_mesh;
        if history.is_empty() && mesh.nodes.len() > ap.max_unknowns {
            return Err(SolveError::FirstMeshOverBudget { nodes: mesh.nodes.len(), max_unknowns: ap.max_unknowns });
        }
        let mesh_s = lap();
        // The capacitance columns ride on the load case's factorisation (a few more
        // right-hand sides), so the last mesh needs no second solve for them; the kept
        // factorisation serves the dual problems of the watched quantities' estimates.
        let solved = solve_factored(&mesh, problem)?;
        let solve_s = lap();
        let est = estimate_error_with(&mesh, problem, &solved.solution, solved.recovery(&mesh));
        let rel = est.relative();
        let estimate_s = lap();
        let watched = watch(&mesh, &solved, &est)?;
        let watch_s = lap();
        let solution = &solved.solution;
        let max_change = match history.last() {
            Some(prev) => prev
                .watched
                .iter()
                .zip(&watched)
                .map(|(a, b)| (b.value - a.value).abs() / b.scale())
                .fold(0.0, f64::max),
            None => f64::NAN,
        };
        let bars: Vec<ErrorBar> = (0..watched.len())
            .map(|q| {
                let seq: Vec<(usize, f64)> = history
                    .iter()
                    .map(|s| (s.unknowns, s.watched[q].value))
                    .chain(std::iter::once((solution.num_unknowns, watched[q].value)))
                    .collect();
                let w = &watched[q];
                certify(&seq, w.estimate, w.class, order, w.floor, ap.tolerance)
            })
            .collect();
        let step = AdaptStep {
            unknowns: solution.num_unknowns,
            triangles: mesh.triangles.len(),
            estimate: rel,
            energy: solution.energy,
            watched,
            max_change,
            bars,
            timings: StepTimings { mesh_s, solve_s, estimate_s, watch_s },
        };
        progress(&step);
        history.push(step);
        let step = history.last().expect("just pushed");
        let open: Vec<usize> = (0..step.bars.len())
            .filter(|&q| step.watched[q].decides && step.bars[q].status != BarStatus::Converged)
            .collect();
        // With watched quantities, their verdicts decide (the energy among them, with its
        // own bar ½η²); without, the relative energy-norm estimate does.
        let watching = !step.bars.is_empty();
        let energy_ok = watching || rel <= ap.tolerance;
        let energy_open = (!watching).then_some(rel);
        let stop = if history.len() >= ap.min_meshes.max(1) && energy_ok && open.is_empty() {
            Some((
                true,
                if watching {
                    format!(
                        "every watched quantity's error bar within the tolerance {:.2e} (estimated relative energy-norm error {rel:.2e})",
                        ap.tolerance
                    )
                } else {
                    format!("estimated relative energy-norm error {rel:.2e} ≤ tolerance {:.2e}", ap.tolerance)
                },
            ))
        } else if history.len() >= ap.max_iterations {
            Some((
                false,
                format!(
                    "not converged: {} meshes solved (the most allowed); {}",
                    history.len(),
                    open_reason(Some(rel), ap.tolerance, &open)
                ),
            ))
        } else {
            None
        };
        if let Some((converged, reason)) = stop {
            let bars = history.last().map(|s| s.bars.clone()).unwrap_or_default();
            return Ok(AdaptOutcome { converged, reason, history, mesh, solved, estimate: est, bars });
        }
        // Unknowns per triangle of this mesh, to turn triangle counts into unknowns.
        let per = solution.num_unknowns as f64 / mesh.triangles.len() as f64;
        let nt = mesh.triangles.len() as f64;
        // Aim at the count that the optimal rate N^(−p/2) says reaches the tolerance, but
        // grow by 1.5× to 2× per step.
        // A functional's error goes like N^(−p), a field value's and the energy norm's like
        // N^(−p/2). What refinement must shrink is what decides: the energy norm only when
        // nothing is watched; an open quantity's own estimate when it has one (its bar may
        // be held up by the sequence's memory of an earlier, coarser mesh, which only the
        // next meshes of the sequence can clear, at any size: an own estimate already within
        // the tolerance asks for the smallest step), else its bar.
        let mut factor = if watching { 0.0 } else { (rel / ap.tolerance).powf(2.0 / p) };
        for (w, b) in step.watched.iter().zip(&step.bars) {
            if w.decides && b.status != BarStatus::Converged {
                let e = match w.class {
                    QuantityClass::Functional => 1.0 / p,
                    QuantityClass::Field => 2.0 / p,
                };
                let need = match b.estimate {
                    Some(est) => w.class.estimate_safety() * est / w.scale(),
                    None => b.relative,
                };
                if need.is_finite() {
                    factor = factor.max((need / ap.tolerance).powf(e));
                }
            }
        }
        let target = (nt * factor * 1.1).clamp(1.5 * nt, 2.0 * nt);
        if target * per > ap.max_unknowns as f64 {
            let reason = format!(
                "not converged: the next mesh would exceed {} unknowns; {}",
                ap.max_unknowns,
                open_reason(energy_open, ap.tolerance, &open)
            );
            let bars = step.bars.clone();
            return Ok(AdaptOutcome { converged: false, reason, history, mesh, solved, estimate: est, bars });
        }
        let indicators = combined_indicators(&est, step, ap.tolerance);
        let plan = SizePlan::new(&mesh, &indicators, ap, p, drawn.is_some());
        // The prediction is rough (the gradation spreads refinement, coarsening may not
        // happen): ask again for more if the mesh did not grow by 1.3×, so that the meshes
        // form a refinement sequence, as the convergence study needs.
        let remesh = |ask: f64| -> Result<Mesh, SolveError> {
            let sizes = plan.sizes_for_count(ask);
            Ok(match &drawn {
                Some((geo, params)) => {
                    generate_with(geo, params, Some(BackgroundSize::new(&mesh, sizes))).map_err(SolveError::Mesh)?.mesh
                }
                None => {
                    let gradation = ap.mesh.gradation.unwrap_or(RefineParams::default().gradation);
                    mesher::bisect_to_sizes(&mesh, &sizes, gradation, ap.max_unknowns).map_err(SolveError::Mesh)?.mesh
                }
            })
        };
        let mut ask = target;
        next_mesh = remesh(ask)?;
        for _ in 1..4 {
            let got = next_mesh.triangles.len() as f64;
            if got >= 1.3 * nt {
                break;
            }
            ask *= (1.5 * nt / got).max(1.2);
            next_mesh = remesh(ask)?;
        }
    }
}

/// Why the loop has not converged: the energy estimate (when it decides) and the
/// quantities still open.
fn open_reason(energy: Option<f64>, tolerance: f64, open: &[usize]) -> String {
    let mut parts = Vec::new();
    if let Some(rel) = energy.filter(|&rel| rel > tolerance) {
        parts.push(format!("estimated relative energy error {rel:.2e} above the tolerance {tolerance:.2e}"));
    }
    if !open.is_empty() {
        let list: Vec<String> = open.iter().map(|q| (q + 1).to_string()).collect();
        parts.push(format!("watched quantities {} not converged (see their verdicts)", list.join(", ")));
    }
    if parts.is_empty() {
        parts.push("too few meshes for a convergence study".into());
    }
    parts.join("; ")
}

/// The indicators that drive the next mesh: the energy estimate's, and those of every
/// watched quantity not yet converged, each scaled by its tolerance, so that a triangle
/// counts by how much it keeps its quantities from the tolerance:
/// θₜ = (ηₜ/(tol·‖V_h‖))² + Σ_q ζ_q,ₜ/(tol·max(|q|, floor_q)), returned as
/// tol·‖V_h‖·√θₜ (energy-norm units, as the size plan expects).
fn combined_indicators(est: &ErrorEstimate, step: &AdaptStep, tolerance: f64) -> Vec<f64> {
    let unit = tolerance * est.solution_norm.max(f64::MIN_POSITIVE);
    // The energy norm is a target only for a loop that watches nothing, or for an open
    // quantity without indicators of its own, for which it stands in (weight 1). Otherwise
    // it stays in as the energy functional's share (ηₜ²/(tol·‖V_h‖²), weight tol): a
    // global term that keeps the whole domain resolved while the goals' indicators
    // concentrate the refinement where the watched quantities need it.
    let own = |q: usize| step.watched[q].indicators.is_some() || !step.watched[q].decides;
    let all_own =
        !step.bars.is_empty() && (0..step.bars.len()).all(|q| step.bars[q].status == BarStatus::Converged || own(q));
    let weight = if all_own { tolerance } else { 1.0 };
    let mut theta: Vec<f64> = est.indicators.iter().map(|e| weight * (e / unit).powi(2)).collect();
    for (w, b) in step.watched.iter().zip(&step.bars) {
        let Some(ind) = &w.indicators else { continue };
        if b.status == BarStatus::Converged || ind.len() != theta.len() {
            continue;
        }
        let scale = tolerance * w.scale();
        for (t, z) in theta.iter_mut().zip(ind) {
            *t += z.abs() / scale;
        }
    }
    theta.into_iter().map(|t| unit * t.sqrt()).collect()
}

/// What the next mesh should look like, from the estimate on this one (module docs).
struct SizePlan {
    /// Equivalent equilateral edge length of each triangle.
    h: Vec<f64>,
    /// The size at which each triangle would carry the error ε = 1 (a scale-free shape of
    /// the optimal size field: the wanted size is this times ε^(1/(p+1))).
    unit: Vec<f64>,
    /// For a triangle touching a singular point of exponent λ < p: that point's index in
    /// `corners`.
    corner_of: Vec<Option<u32>>,
    /// Per singular point: λ, the largest size of its triangles, the root-mean-square
    /// indicator of its triangles, whether any of them is marked.
    corners: Vec<Corner>,
    /// Dörfler's marked set.
    marked: Vec<bool>,
    p: f64,
    /// Largest size factor of an unmarked triangle: [`MOST_COARSENED`] when the next mesh
    /// is made afresh, 1 when it is refined by bisection (which cannot coarsen).
    coarsest: f64,
}

#[derive(Clone, Copy, Debug)]
struct Corner {
    lambda: f64,
    h: f64,
    eta: f64,
    marked: bool,
    triangles: usize,
}

impl SizePlan {
    fn new(mesh: &Mesh, ind: &[f64], ap: &AdaptParams, p: f64, can_coarsen: bool) -> SizePlan {
        let nt = mesh.triangles.len();
        let h: Vec<f64> = (0..nt).map(|t| (4.0 * mesh.triangle_area(t).abs() / 3f64.sqrt()).sqrt()).collect();
        // Dörfler marking: largest indicators first until θ of the squared total.
        let mut order: Vec<u32> = (0..nt as u32).collect();
        order.sort_unstable_by(|&a, &b| ind[b as usize].total_cmp(&ind[a as usize]).then(a.cmp(&b)));
        let total: f64 = ind.iter().map(|e| e * e).sum();
        let mut marked = vec![false; nt];
        let mut acc = 0.0;
        for &t in &order {
            if acc >= ap.bulk_fraction * total {
                break;
            }
            acc += ind[t as usize].powi(2);
            marked[t as usize] = true;
        }
        // ηₜ ≈ C·h^(p+1) on a smooth solution, so the size carrying the error ε is
        // h·(ε/ηₜ)^(1/(p+1)).
        let unit = (0..nt).map(|t| h[t] * ind[t].max(1e-300).powf(-1.0 / (p + 1.0))).collect();
        // The triangles around a singular point are sized together: one size for the
        // whole patch, so that the corner vertex gets it (the background field averages
        // the sizes of a vertex's triangles).
        let vertices = mesh.singular_vertices();
        let watched: Vec<(&mesher::SingularPoint, Option<u32>)> =
            mesh.singular_points.iter().zip(vertices).filter(|(sp, _)| sp.lambda < p).collect();
        let mut corners: Vec<Corner> = watched
            .iter()
            .map(|(sp, _)| Corner { lambda: sp.lambda, h: 0.0, eta: 0.0, marked: false, triangles: 0 })
            .collect();
        let mut corner_of = vec![None; nt];
        // A triangle is at a point when one of its corners is the point's vertex.
        let vertex_point: std::collections::HashMap<u32, usize> =
            watched.iter().enumerate().filter_map(|(k, (_, v))| v.map(|v| (v, k))).collect();
        for (t, tri) in mesh.triangles.iter().enumerate() {
            if let Some(k) = tri.iter().find_map(|v| vertex_point.get(v).copied()) {
                let c = &mut corners[k];
                c.h = c.h.max(h[t]);
                c.eta += ind[t] * ind[t];
                c.marked |= marked[t];
                c.triangles += 1;
                corner_of[t] = Some(k as u32);
            }
        }
        for c in &mut corners {
            c.eta = (c.eta / c.triangles.max(1) as f64).sqrt();
        }
        SizePlan { h, unit, corner_of, corners, marked, p, coarsest: if can_coarsen { MOST_COARSENED } else { 1.0 } }
    }

    /// Size of triangle `t` for the per-triangle error ε, and the number of triangles it
    /// predicts in its place. With `dorfler` only marked triangles refine; without it
    /// every triangle may.
    fn size_of(&self, t: usize, eps: f64, dorfler: bool) -> (f64, f64) {
        let h = self.h[t];
        let marked = !dorfler || self.marked[t];
        let (lo, hi) =
            if marked { (MOST_REFINED, if dorfler { 0.75 } else { self.coarsest }) } else { (1.0, self.coarsest) };
        match self.corner_of[t] {
            Some(k) => {
                // At a singular point ηₜ ≈ C·h^λ: the size follows with exponent 1/λ, and
                // may shrink much further in one step. A triangle cut down to it costs a
                // few rings of triangles per halving.
                let c = self.corners[k as usize];
                let marked = !dorfler || c.marked;
                let lo = if marked { MOST_REFINED_CORNER } else { 1.0 };
                let size = (c.h * (eps / c.eta.max(1e-300)).powf(1.0 / c.lambda)).clamp(lo * c.h, hi * c.h);
                (size, 1.0 + 6.0 * (h / size).max(1.0).log2())
            }
            None => {
                let size = (self.unit[t] * eps.powf(1.0 / (self.p + 1.0))).clamp(lo * h, hi * h);
                (size, (h / size).powi(2))
            }
        }
    }

    /// Predicted triangle count for the per-triangle error ε.
    fn predicted(&self, eps: f64, dorfler: bool) -> f64 {
        (0..self.h.len()).map(|t| self.size_of(t, eps, dorfler).1).sum()
    }

    /// Sizes whose predicted triangle count is `target` (bisection on log ε), refining
    /// the marked triangles only when that can reach the target, else any triangle.
    fn sizes_for_count(&self, target: f64) -> Vec<f64> {
        let dorfler = self.predicted(0.0, true) >= target;
        let (mut lo, mut hi) = (-700.0f64, 700.0f64);
        for _ in 0..200 {
            let mid = 0.5 * (lo + hi);
            if self.predicted(mid.exp(), dorfler) > target {
                lo = mid;
            } else {
                hi = mid;
            }
            if hi - lo < 1e-3 {
                break;
            }
        }
        let eps = hi.exp();
        (0..self.h.len()).map(|t| self.size_of(t, eps, dorfler).0).collect()
    }
}

/// Smallest size factor of one step for a marked triangle, and at a singular point.
const MOST_REFINED: f64 = 0.25;
const MOST_REFINED_CORNER: f64 = 1.0 / 32.0;
/// Largest size factor of one step for an unmarked triangle.
const MOST_COARSENED: f64 = 2.0;
