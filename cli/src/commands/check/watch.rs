//! What `check` watches on every mesh of the adaptive loop: the list of quantities (from the
//! first mesh) and each quantity's value, floor, class and own goal-oriented estimate on a
//! mesh, outside the discs around singular points (`engine::exclusion_discs`).

use crate::plan::{ConductorKind, Plan, ProbeKind};
use crate::results::solve::{interface_peak, interface_selector, line_peak};
use engine::{
    singular_coefficient, singular_coefficient_dual, singular_field_factor, Goal, QuantityClass, Solution, Watched,
};
use mesher::{Mesh, Xy};

/// The watched quantities: (name, SI unit, what).
pub(super) type Watchlist = Vec<(String, &'static str, Quantity)>;

/// What each watched value is.
pub(super) enum Quantity {
    Energy,
    Charge(usize),
    FloatingPotential(usize),
    RegionPeak(u32),
    ProbePeak(usize),
    /// The largest tangential field of an interface or conductor-surface probe.
    ProbeTangential(usize),
    /// The coefficient A of the singular term at singular point k (one a conductor bounds).
    Singular(usize),
    /// V at named point i, on the side of region r.
    PointPotential(usize, u32),
    /// |E| at named point i, on the side of region r.
    PointField(usize, u32),
}

/// The names of the watched potential and field at point `name` in `region` (the region
/// is named only when the point lies on an interface, `sides` > 1).
pub(super) fn point_quantity_names(name: &str, region: &str, sides: usize) -> (String, String) {
    let side = if sides > 1 { format!(" in {region}") } else { String::new() };
    (format!("potential at point {name}{side}"), format!("field at point {name}{side}"))
}

/// The watched quantities: (name, unit, what).
pub(super) fn quantity_list(model: &Plan, mesh: &Mesh) -> Watchlist {
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
    let positions: Vec<Xy> = model.points.iter().map(|p| p.at).collect();
    for (i, regions) in engine::point_regions(mesh, &positions).iter().enumerate() {
        for &r in regions {
            let (v, e) = point_quantity_names(&model.points[i].name, &mesh.shape_names[r as usize], regions.len());
            q.push((v, "V", Quantity::PointPotential(i, r)));
            q.push((e, "V/m", Quantity::PointField(i, r)));
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
fn probe_peak(model: &Plan, mesh: &Mesh, sol: &Solution, i: usize, discs: &[(Xy, f64)]) -> (f64, Xy, Option<u32>) {
    let outside = |p: Xy| !engine::in_exclusion_disc(discs, p);
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
pub(super) fn watch(
    model: &Plan,
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
    let positions: Vec<Xy> = model.points.iter().map(|p| p.at).collect();
    let at_points = if positions.is_empty() { Vec::new() } else { solved.point_values(mesh, &positions) };
    let side = |i: usize, r: u32| at_points.get(i).and_then(|s| s.iter().find(|s| s.region == r));
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
                let outside = |p: Xy| !engine::in_exclusion_disc(discs, p);
                let value = match interface_selector(&model.probes[i].kind) {
                    Some((which, _)) => interface_peak(&engine::probe_interface(mesh, sol, which), outside).1,
                    None => 0.0,
                };
                (value, 0.01 * peak_max, QuantityClass::Field, None)
            }
            // A point's potential is relative to the largest potential of the model.
            Quantity::PointPotential(i, r) => match side(i, r) {
                Some(s) => (
                    s.potential,
                    v_max,
                    QuantityClass::Field,
                    Some(Goal::PointPotential { at: positions[i], region: Some(r) }),
                ),
                None => (0.0, v_max, QuantityClass::Field, None),
            },
            // A point's field by the local-field goal around it.
            Quantity::PointField(i, r) => match side(i, r) {
                Some(s) => {
                    let value = s.e[0].hypot(s.e[1]);
                    let goal = (value > 0.0).then_some(Goal::PeakField { at: positions[i], value, region: Some(r) });
                    (value, 0.01 * peak_max, QuantityClass::Field, goal)
                }
                None => (0.0, 0.01 * peak_max, QuantityClass::Field, None),
            },
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
            // Likewise a point inside a disc around a singular point: its field grows with
            // every refinement.
            if let Quantity::PointPotential(i, _) | Quantity::PointField(i, _) = q {
                let p = positions[*i];
                if engine::in_exclusion_disc(discs, p) {
                    w = w.reported_only();
                }
            }
            if let Quantity::Energy = q {
                // |W − W_h| = ½‖V − V_h‖², recovered: ½η², triangle by triangle ½ηₜ².
                let indicators = est.indicators.iter().map(|e| 0.5 * e * e).collect();
                return w.with_estimate(0.5 * est.global * est.global, Some(indicators));
            }
            match slot.map(|k| &estimates[k]) {
                Some(e) => w.with_estimate(e.estimate, Some(e.indicators.clone())),
                None => w,
            }
        })
        .collect()
}
