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

use crate::check_results::{
    convergence_csv, field_with_bar, length_text, render_check, status_word, Adaptivity, BarReport, CheckResults,
    MeshStep, MeshStepTimings, QuantityStudy, SequencePoint, SingularResult,
};
use crate::mesh_report::report_of;
use crate::model::{self, ConductorKind, Model, ProbeKind};
use crate::problem::problem_of;
use crate::solve_results::{
    analyse, interface_peak, interface_selector, line_peak, render_text, solve_error, write_outputs,
};
use crate::CliError;
use crate::Result;
use engine::{
    adapt_watching, grid_convergence, singular_coefficient, singular_coefficient_dual, singular_field_factor,
    singular_radius_above, AdaptParams, ConvergenceKind, Goal, QuantityClass, Solution, Watched,
};
use mesher::{Mesh, Xy};
use std::path::PathBuf;
use std::time::Instant;

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
}

/// The watched quantities: (name, SI unit, what).
type Watchlist = Vec<(String, &'static str, Quantity)>;

/// What each watched value is.
enum Quantity {
    Energy,
    Charge(usize),
    FloatingPotential(usize),
    RegionPeak(u32),
    ProbePeak(usize),
    /// The largest tangential field of an interface or conductor-surface probe.
    ProbeTangential(usize),
    /// The coefficient A of the singular term at singular point k (one a conductor bounds).
    Singular(usize),
}

/// Runs `fieldgrade check`.
///
/// # Errors
/// Model, meshing and solve errors (as [`CliError::Model`]), I/O errors.
/// Returns whether the loop converged (the caller turns "not converged" into its own exit
/// code, after everything is written).
pub fn run(run: &CheckRun) -> Result<bool> {
    let t0 = Instant::now();
    let mut model = model::load(&run.model).map_err(CliError::from)?;
    crate::budget::prepare(&mut model, run.order, run.memory_limit, true);
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
    let outcome = adapt_watching(
        &model.geometry,
        &model.params,
        &problem,
        &ap,
        |mesh, solved, est| {
            let (discs, quantities) = setup.get_or_insert_with(|| {
                (exclusion_discs(mesh, model.singular_exclusion_radius_m), quantity_list(&model, mesh))
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
    let engine::AdaptOutcome { converged, reason, history, mesh, solution, capacitance: (fixed, cmat), estimate, bars } =
        outcome;
    let mesh_report = report_of(&model, &mesh, true, None);
    let (mut solve, analysis) = analyse(&model, &mesh, mesh_report, &problem, solution, &fixed, cmat);
    crate::solve_results::finite_or_error(&model, &solve)?;
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
    // Each region's peak with the bar of the watched peak away from singular points, where
    // it is that peak.
    for g in &mut solve.regions {
        let name = format!("peak field in {} away from singular points", g.name);
        let watched = convergence.iter().find(|q| q.quantity == name);
        if g.near_singular_point.is_some() {
            g.status = Some(match watched {
                Some(q) => format!(
                    "singular — mesh-dependent; away from singular points {} ({})",
                    field_with_bar(&q.error_bar),
                    q.error_bar.status
                ),
                None => "singular — mesh-dependent".into(),
            });
            continue;
        }
        if let Some(q) = watched {
            let same = (q.error_bar.value - g.e_max_v_per_m).abs() <= 1e-9 * g.e_max_v_per_m.abs();
            if same {
                g.error_bar_v_per_m = q.error_bar.absolute;
                g.status = Some(q.error_bar.status.to_string());
            } else {
                g.status = Some(format!("the peak away from singular points is {}", field_with_bar(&q.error_bar)));
            }
        }
    }
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
    let csv = convergence_csv(&results.convergence);
    write_outputs(
        &run.out,
        &mesh,
        &problem,
        &analysis,
        &[("convergence.csv".into(), csv), ("results.json".into(), json.clone())],
    )?;
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

/// A disc (centre, radius) around every point whose field is singular: the radius the
/// model gives (`[check] singular_exclusion_radius`), or 2 % of the model's size, or a
/// quarter of the distance to the nearest other singular point if that is smaller. It is
/// set once, from the first mesh, so every mesh of the loop leaves out the same region and
/// the watched peaks have a limit.
fn exclusion_discs(mesh: &Mesh, given: Option<f64>) -> Vec<(Xy, f64)> {
    let scale = mesh.scale();
    let pts = &mesh.singular_points;
    pts.iter()
        .filter(|s| s.is_field_singular())
        .map(|s| {
            let nearest = pts
                .iter()
                .map(|o| (o.at[0] - s.at[0]).hypot(o.at[1] - s.at[1]))
                .filter(|&d| d > 1e-9 * scale)
                .fold(f64::INFINITY, f64::min);
            (s.at, given.unwrap_or((0.02 * scale).min(0.25 * nearest)))
        })
        .collect()
}

/// The watched quantities: (name, unit, what).
fn quantity_list(model: &Model, mesh: &Mesh) -> Watchlist {
    let depth = mesh.symmetry == mesher::Symmetry::Planar;
    let mut q = vec![("energy".to_string(), if depth { "J/m" } else { "J" }, Quantity::Energy)];
    for (i, c) in model.conductors.iter().enumerate() {
        match c.kind {
            ConductorKind::Fixed { .. } => {
                q.push((format!("charge of {}", c.name), if depth { "C/m" } else { "C" }, Quantity::Charge(i)))
            }
            ConductorKind::Floating { .. } => {
                q.push((format!("potential of {}", c.name), "V", Quantity::FloatingPotential(i)))
            }
        }
    }
    let mut regions: Vec<u32> = mesh.regions.clone();
    regions.sort_unstable();
    regions.dedup();
    for r in regions {
        if mesh.exterior.is_some_and(|e| e.region == r) {
            continue;
        }
        q.push((
            format!("peak field in {} away from singular points", mesh.shape_names[r as usize]),
            "V/m",
            Quantity::RegionPeak(r),
        ));
    }
    for (i, p) in model.probes.iter().enumerate() {
        q.push((format!("largest field on probe {} away from singular points", p.name), "V/m", Quantity::ProbePeak(i)));
        if interface_selector(&p.kind).is_some() {
            q.push((
                format!("largest tangential field on probe {} away from singular points", p.name),
                "V/m",
                Quantity::ProbeTangential(i),
            ));
        }
    }
    for (k, sp) in mesh.singular_points.iter().enumerate() {
        if sp.is_field_singular() && sp.conductor.is_some() && singular_field_factor(sp).is_some() {
            q.push((format!("singular coefficient A at S{}", k + 1), "V/m^λ", Quantity::Singular(k)));
        }
    }
    q
}

/// The largest |E| of a probe outside the discs: value, where, and the region there.
fn probe_peak(model: &Model, mesh: &Mesh, sol: &Solution, i: usize, discs: &[(Xy, f64)]) -> (f64, Xy, Option<u32>) {
    let outside = |p: Xy| discs.iter().all(|(c, r)| (p[0] - c[0]).hypot(p[1] - c[1]) >= *r);
    let kind = &model.probes[i].kind;
    let mut best = (0.0, [0.0; 2], None);
    match (kind, interface_selector(kind)) {
        (ProbeKind::Line { path, samples }, _) => {
            let rows = engine::probe_line(mesh, sol, path, *samples);
            let value = line_peak(&rows, outside);
            for r in &rows {
                if outside(r.at) && r.e[0].hypot(r.e[1]) == value {
                    best = (value, r.at, r.region);
                }
            }
            best.0 = value;
        }
        (_, Some((which, _))) => {
            let rows = engine::probe_interface(mesh, sol, which);
            let value = interface_peak(&rows, outside).0;
            for r in rows.iter().filter(|r| outside(r.at)) {
                for f in std::iter::once(&r.first).chain(r.second.as_ref()) {
                    if f.e_n.hypot(f.e_t) == value {
                        best = (value, r.at, Some(f.region));
                    }
                }
            }
            best.0 = value;
        }
        (_, None) => unreachable!("only line probes have no interface selector"),
    }
    best
}

/// The watched values on one mesh, with their floors, classes and own estimates (see
/// `engine::Watched`): the energy by its recovery estimate, charges and floating
/// potentials by their goal-oriented estimates, each peak by the local-field goal around
/// it (the relative error of its root-mean-square field, applied to the peak).
fn watch(
    model: &Model,
    problem: &engine::Problem,
    mesh: &Mesh,
    solved: &engine::FactoredSolution,
    est: &engine::ErrorEstimate,
    quantities: &[(String, &'static str, Quantity)],
    discs: &[(Xy, f64)],
) -> Vec<Watched> {
    let sol = &solved.solution;
    let peaks = solved.region_peaks_away_from(mesh, discs);
    let peak_max = peaks.iter().map(|p| p.e_max_v_per_m).fold(0.0, f64::max);
    let q_max = sol.conductor_charges.iter().map(|q| q.abs()).fold(0.0, f64::max);
    let v_max = sol
        .conductor_potentials
        .iter()
        .map(|v| v.abs())
        .fold(0.0, f64::max)
        .max(model.outer_potential_v.unwrap_or(0.0).abs());
    // Each quantity's value, floor, class, and the goal that estimates it (with the peak
    // value its local field stands in for).
    let mut goals = Vec::new();
    let mut rows = Vec::new();
    for (_, _, q) in quantities {
        let (value, floor, class, goal) = match *q {
            Quantity::Energy => (sol.energy, 0.0, QuantityClass::Functional, None),
            Quantity::Charge(i) => {
                (sol.conductor_charges[i], 0.01 * q_max, QuantityClass::Functional, Some(Goal::Charge(i)))
            }
            Quantity::FloatingPotential(i) => {
                (sol.conductor_potentials[i], v_max, QuantityClass::Functional, Some(Goal::FloatingPotential(i)))
            }
            Quantity::RegionPeak(r) => match peaks.iter().find(|p| p.region == r) {
                Some(p) => (
                    p.e_max_v_per_m,
                    0.01 * peak_max,
                    QuantityClass::Field,
                    Some(Goal::PeakField { at: p.at, value: p.e_max_v_per_m, region: Some(r) }),
                ),
                None => (0.0, 0.01 * peak_max, QuantityClass::Field, None),
            },
            Quantity::ProbePeak(i) => {
                let (value, at, region) = probe_peak(model, mesh, sol, i, discs);
                let goal = (value > 0.0).then_some(Goal::PeakField { at, value, region });
                (value, 0.01 * peak_max, QuantityClass::Field, goal)
            }
            Quantity::ProbeTangential(i) => {
                let outside = |p: Xy| discs.iter().all(|(c, r)| (p[0] - c[0]).hypot(p[1] - c[1]) >= *r);
                let value = match interface_selector(&model.probes[i].kind) {
                    Some((which, _)) => interface_peak(&engine::probe_interface(mesh, sol, which), outside).1,
                    None => 0.0,
                };
                (value, 0.01 * peak_max, QuantityClass::Field, None)
            }
            Quantity::Singular(k) => {
                let sp = &mesh.singular_points[k];
                let radius = discs.iter().find(|d| d.0 == sp.at).map(|d| d.1).unwrap_or(0.02 * mesh.scale());
                let v0 = sp.conductor.map(|c| sol.conductor_potentials[c as usize]).unwrap_or(0.0);
                let value = singular_coefficient_dual(mesh, sol, sp, v0, radius)
                    .or_else(|| singular_coefficient(mesh, sol, sp, v0, 0.5 * radius).map(|f| f.coefficient))
                    .unwrap_or(0.0);
                // A singular term whose field at the disc's rim is below 1 % of the largest
                // peak is not asked to be relatively exact.
                let factor = singular_field_factor(sp).unwrap_or(1.0).max(f64::MIN_POSITIVE);
                let floor = 0.01 * peak_max * radius.powf(1.0 - sp.lambda) / factor;
                (value, floor, QuantityClass::Functional, None)
                // (reported only: see the note where the rows become `Watched`)
            }
        };
        let slot = goal.map(|g| {
            goals.push(g);
            goals.len() - 1
        });
        rows.push((value, floor, class, slot));
    }
    let t0 = std::time::Instant::now();
    let estimates = engine::goal_estimates(mesh, problem, solved, &goals);
    if std::env::var_os("FIELDGRADE_TIMINGS").is_some() {
        eprintln!(
            "goal estimates ({} goals, {} unknowns): {:.3} s",
            goals.len(),
            sol.num_unknowns,
            t0.elapsed().as_secs_f64()
        );
    }
    rows.into_iter()
        .zip(quantities)
        .map(|((value, floor, class, slot), (_, _, q))| {
            let mut w = Watched::new(value, floor, class);
            // A singular coefficient is reported with its bar but does not hold the loop: it
            // describes a point whose stress is mesh-dependent anyway, and at a triple
            // junction it jitters by 1e-3 from one remeshing to the next.
            if let Quantity::Singular(_) = q {
                w = w.reported_only();
            }
            if let Quantity::Energy = q {
                // |W − W_h| = ½‖V − V_h‖², recovered: ½η² (the energy estimate's own
                // indicators already drive the marking).
                return w.with_estimate(0.5 * est.global * est.global, None);
            }
            match slot.map(|k| &estimates[k]) {
                Some(e) => w.with_estimate(e.estimate, Some(e.indicators.clone())),
                None => w,
            }
        })
        .collect()
}

/// The convergence study of one sequence, with the error bar at each mesh and at the end.
fn study(
    quantity: String,
    unit: &'static str,
    seq: &[(usize, f64)],
    per_mesh: &[(&engine::ErrorBar, Option<f64>)],
    last: &engine::ErrorBar,
    tolerance: f64,
) -> QuantityStudy {
    let increasing = |w: &[(usize, f64)]| w.windows(2).all(|p| p[1].0 > p[0].0);
    let sequence: Vec<SequencePoint> = seq
        .iter()
        .enumerate()
        .map(|(k, &(n, v))| {
            let relative_change = (k > 0).then(|| {
                let prev = seq[k - 1].1;
                if v != 0.0 {
                    ((v - prev) / v).abs()
                } else {
                    (v - prev).abs()
                }
            });
            let observed_order = (k >= 2 && increasing(&seq[k - 2..=k]))
                .then(|| grid_convergence(&seq[k - 2..=k]).observed_order)
                .filter(|p| p.is_finite());
            let (bar, own) = per_mesh[k];
            SequencePoint {
                unknowns: n,
                value: v,
                relative_change,
                observed_order,
                own_estimate: own,
                error_bar: bar.absolute.is_finite().then_some(bar.absolute),
                status: status_word(bar.status),
            }
        })
        .collect();
    let error_bar = BarReport::of(last);
    // The verdict on the sequence is the engine's (one reading of the tolerance).
    let v = engine::sequence_verdict(seq, tolerance);
    let st = v.study.as_ref();
    QuantityStudy {
        quantity,
        unit,
        sequence,
        behaviour: v.behaviour.word(),
        observed_order: st.map(|s| s.observed_order).filter(|p| p.is_finite()),
        extrapolated: st.filter(|s| s.kind == ConvergenceKind::Monotone).map(|s| s.extrapolated),
        gci: st.map(|s| s.gci_fine).filter(|g| g.is_finite()),
        flagged: v.flagged.then(|| {
            "the changes grow under refinement (negative observed order): a sign of a singularity; this value has no converged limit".to_string()
        }),
        error_bar,
    }
}

/// The singular-point section on the final mesh.
fn singular_section(model: &Model, mesh: &Mesh, sol: &Solution, discs: &[(Xy, f64)]) -> Vec<SingularResult> {
    let k = model.unit_m;
    mesh.singular_points
        .iter()
        .enumerate()
        .map(|(i, s)| {
            let id = format!("S{}", i + 1);
            let allowable = s
                .regions
                .iter()
                .filter_map(|&r| model.shape_material.get(r as usize).copied().flatten())
                .filter_map(|m| model.materials[m].allowable_stress_kv_per_mm)
                .reduce(f64::min);
            let radius = discs.iter().find(|d| d.0 == s.at).map(|d| d.1);
            let v0 = s.conductor.map(|c| sol.conductor_potentials[c as usize]);
            let (dual, ring) = match (radius, v0, s.is_field_singular()) {
                (Some(r), Some(v0), true) => (
                    singular_coefficient_dual(mesh, sol, s, v0, r),
                    singular_coefficient(mesh, sol, s, v0, 0.5 * r).map(|f| f.coefficient),
                ),
                _ => (None, None),
            };
            let factor = singular_field_factor(s);
            let radius_above = match (dual, allowable, factor) {
                (Some(c), Some(a), Some(f)) if c != 0.0 => Some(singular_radius_above(s.lambda, f, c, a * 1e6) / k),
                _ => None,
            };
            let note = if !s.is_field_singular() {
                format!("λ = {:.4} ≥ 1: the field is bounded here", s.lambda)
            } else {
                let mut n = format!(
                    "singular: λ = {:.4}, |E| ≈ {}·r^({:.4}); the peak field here is mesh-dependent and left out of the convergence criterion",
                    s.lambda,
                    match (dual, factor) {
                        (Some(c), Some(f)) => format!("{:.4e}", f * c.abs()),
                        _ => "k·|A|".into(),
                    },
                    s.lambda - 1.0
                );
                if let Some(r) = radius_above {
                    n.push_str(&format!(
                        "; |E| exceeds the allowable {} kV/mm within {} of the point",
                        allowable.unwrap_or(0.0),
                        length_text(r * k, model.unit_m, model.unit)
                    ));
                }
                if dual.is_none() {
                    n.push_str("; coefficient not extracted (it is, where a conductor bounds the field: corners, triple junctions, conical tips on the axis with one dielectric)");
                }
                n.push_str("; model the real edge radius to get a design value");
                n
            };
            SingularResult {
                id,
                at: [s.at[0] / k, s.at[1] / k],
                kind: s.kind.label(),
                lambda: s.lambda,
                field_singular: s.is_field_singular(),
                coefficient: dual,
                field_factor: factor.filter(|_| dual.is_some()),
                coefficient_ring_fit: ring,
                extraction_radius_m: radius.filter(|_| dual.is_some()),
                allowable_kv_per_mm: allowable,
                radius_above_allowable: radius_above,
                note,
                coefficient_error_bar: None,
            }
        })
        .collect()
}
