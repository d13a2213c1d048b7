//! Are the error bars honest? On cases with known answers the adaptive loop watches a
//! peak field (or a charge) with its goal-oriented estimate, and on every mesh the printed
//! bar (engine::certify) is compared with the true error: it must hold it, and not be
//! wildly larger once the sequence is asymptotic.

use crate::common::{cond, diel, shape};
use crate::lshape::{l_problem, l_shape};
use engine::{
    adapt_watching, goal_estimates, region_peaks_away_from, AdaptParams, BarStatus, ConductorSpec, Goal, Problem,
    QuantityClass, Watched, EPSILON_0,
};
use mesher::{Geometry, OuterBoundary, Outline, RefineParams, Symmetry, Xy};
use std::f64::consts::PI;

/// What one mesh of a sequence gave for one quantity.
#[derive(Debug, Clone, Copy)]
struct Row {
    unknowns: usize,
    value: f64,
    bar: f64,
    converged: bool,
}

/// How the watched quantity is read off a solution: its value, where it is (for a peak's
/// local estimate) and its region, or None for a charge (goal `Charge(0)`).
type Reader<'a> = dyn Fn(&mesher::Mesh, &engine::Solution) -> Reading + 'a;

/// A value and, for a peak, where it is and its region.
type Reading = (f64, Option<(Xy, Option<u32>)>);

/// Runs the adaptive loop watching one quantity, up to `max_unknowns`, and returns its
/// rows.
#[allow(clippy::too_many_arguments)]
fn sequence(
    geo: &Geometry,
    problem: &Problem,
    order: u8,
    h: f64,
    tol: f64,
    meshes: usize,
    max_unknowns: usize,
    read: &Reader<'_>,
) -> Vec<Row> {
    let params = RefineParams::new().with_order(order).with_max_size_m(h);
    let ap = AdaptParams { tolerance: tol, max_iterations: meshes, max_unknowns, ..Default::default() };
    let mut rows = Vec::new();
    adapt_watching(
        geo,
        &params,
        problem,
        &ap,
        |mesh, solved, _| {
            let (value, at) = read(mesh, &solved.solution);
            let (goal, class) = match at {
                Some((at, region)) => (Goal::PeakField { at, value, region }, QuantityClass::Field),
                None => (Goal::Charge(0), QuantityClass::Functional),
            };
            let e = goal_estimates(mesh, problem, solved, &[goal]).remove(0);
            Ok(vec![Watched::new(value, 0.0, class).with_estimate(e.estimate, Some(e.indicators))])
        },
        |step| {
            let b = &step.bars[0];
            rows.push(Row {
                unknowns: step.unknowns,
                value: step.watched[0].value,
                bar: b.absolute,
                converged: b.status == BarStatus::Converged,
            })
        },
    )
    .unwrap();
    rows
}

/// The unknowns a test sequence may reach.
const BUDGET: usize = 250_000;

/// Air (region 0) between an electrode at 1 V (conductor 0) and an earthed plane.
fn electrode_over_earth() -> Problem {
    Problem {
        permittivity: vec![1.0, f64::NAN, f64::NAN],
        conductors: vec![ConductorSpec::Fixed { potential_v: 1.0 }, ConductorSpec::Fixed { potential_v: 0.0 }],
        ..Default::default()
    }
}

/// Reads the peak of `region` (no exclusion discs) with its place for the local estimate.
fn peak_of(region: u32) -> impl Fn(&mesher::Mesh, &engine::Solution) -> Reading {
    move |mesh, sol| {
        let p = region_peaks_away_from(mesh, sol, &[]).into_iter().find(|p| p.region == region).unwrap();
        (p.e_max_v_per_m, Some((p.at, Some(region))))
    }
}

/// Prints the bar against the true error per mesh (kept in bench-results/error-bars.md)
/// and, with `strict`, checks containment (bar + the reference's own uncertainty `unc` ≥
/// true error on at least 95 % of the meshes from the third on, where the study that can
/// declare a quantity converged begins; the first two meshes' bars, from one change and the
/// own estimate, are counted in the printout only) and that the bar is at most 5× the true
/// error on the meshes where the quantity is converged and the error is well above `unc`.
fn judge(case: &str, rows: &[Row], exact: f64, unc: f64, strict: bool) {
    let (mut held, mut held_all) = (0, 0);
    for (k, r) in rows.iter().enumerate() {
        let err = (r.value - exact).abs();
        let ratio = r.bar / err;
        eprintln!(
            "{case}: mesh {} ({} unknowns): value {:.9e}, true error {:.2e}, bar {:.2e}, bar/error {:.2}{}",
            k + 1,
            r.unknowns,
            r.value,
            err / exact.abs(),
            r.bar / exact.abs(),
            ratio,
            if r.converged { ", converged" } else { "" }
        );
        if r.bar + unc * exact.abs() >= err {
            held_all += 1;
            if k >= 2 {
                held += 1;
            }
        }
        if strict && r.converged && err > 10.0 * unc * exact.abs() {
            assert!(ratio <= 5.0, "{case}, mesh {}: bar {:.2e} is {ratio:.1}× the true error", k + 1, r.bar);
        }
    }
    let studied = rows.len().saturating_sub(2);
    eprintln!(
        "{case}: the bar held the true error on {held_all} of {} meshes ({held} of {studied} from the third on)",
        rows.len()
    );
    if strict {
        assert!(studied >= 2, "{case}: only {} meshes", rows.len());
        assert!(
            held as f64 >= 0.95 * studied as f64,
            "{case}: the bar held the true error on {held} of {studied} meshes from the third on"
        );
    }
}

#[test]
fn peak_fields_on_both_sides_of_a_coaxial_interface() {
    // Two-layer coaxial line (planar): core a = 1 cm at 1 V, layers εr 4 to c = 2 cm and
    // 2.2 to the earthed b = 3 cm. |E(r)| = 1/(r·εᵢ·S), S = ln(c/a)/ε₁ + ln(b/c)/ε₂
    // (capacitors in series; any electrostatics text, e.g. Griffiths 2017 §4.4): the peak of
    // the inner layer sits on the core, of the outer layer on the interface.
    let (a, c, b, e1, e2) = (0.01f64, 0.02f64, 0.03f64, 4.0, 2.2);
    let s = (c / a).ln() / e1 + (b / c).ln() / e2;
    let geo = Geometry {
        symmetry: Symmetry::Planar,
        shapes: vec![
            shape("outer", Outline::circle("outer", [0.0, 0.0], b).unwrap(), diel(e2)),
            shape("inner", Outline::circle("inner", [0.0, 0.0], c).unwrap(), diel(e1)),
            shape("core", Outline::circle("core", [0.0, 0.0], a).unwrap(), cond(0)),
        ],
        conductors: vec!["core".into()],
        outer: OuterBoundary::FixedPotential,
        size_points: vec![],
        thin: vec![],
        boundary_pieces: vec![],
    };
    let problem = Problem {
        permittivity: vec![e2, e1, f64::NAN],
        conductors: vec![ConductorSpec::Fixed { potential_v: 1.0 }],
        outer_potential_v: Some(0.0),
        ..Default::default()
    };
    for (region, exact, name) in
        [(1u32, 1.0 / (a * e1 * s), "coax inner layer"), (0, 1.0 / (c * e2 * s), "coax outer layer")]
    {
        let read = peak_of(region);
        let rows = sequence(&geo, &problem, 2, 0.004, 1e-4, 7, BUDGET, &read);
        judge(name, &rows, exact, 0.0, true);
    }
}

#[test]
fn peak_field_on_a_cylinder_above_a_ground_plane() {
    // Image solution (Smythe, Static and Dynamic Electricity, 3rd ed., 1968, §4.13): a
    // cylinder of radius a, axis h above an earthed plane, at V: line charges ±λ at
    // ±d = ±√(h² − a²), V = λ/(2πε₀)·acosh(h/a); the largest field, at the point nearest
    // the plane, is E = λ/(2πε₀)·(1/(d − h + a) + 1/(d + h − a)) = V·d/(a(h − a)·acosh(h/a)).
    // a = 5 mm, h = 20 mm; the plane and the zero-flux far boundary end 20 m away, where
    // the dipole field's truncation error, of order (h/L)², is 1e-6.
    let (a, h, l): (f64, f64, f64) = (0.005, 0.02, 20.0);
    let d = (h * h - a * a).sqrt();
    let exact = d / (a * (h - a) * (h / a).acosh());
    let geo = Geometry {
        symmetry: Symmetry::Planar,
        shapes: vec![
            shape("air", Outline::rectangle("air", [-l, -0.01], [2.0 * l, l + 0.01], 0.0).unwrap(), diel(1.0)),
            shape("plane", Outline::rectangle("plane", [-l, -0.01], [2.0 * l, 0.01], 0.0).unwrap(), cond(1)),
            shape("wire", Outline::circle("wire", [0.0, h], a).unwrap(), cond(0)),
        ],
        conductors: vec!["wire".into(), "plane".into()],
        outer: OuterBoundary::ZeroFlux,
        size_points: vec![],
        thin: vec![],
        boundary_pieces: vec![],
    };
    let problem = electrode_over_earth();
    let read = peak_of(0);
    let rows = sequence(&geo, &problem, 2, 0.5, 1e-4, 8, BUDGET, &read);
    judge("cylinder over plane, peak", &rows, exact, 1e-6, true);
    // The charge too: C' = 2πε₀/acosh(h/a) (same source).
    let read = |_: &mesher::Mesh, sol: &engine::Solution| (sol.conductor_charges[0], None);
    let rows = sequence(&geo, &problem, 2, 0.5, 1e-5, 6, BUDGET, &read);
    // The far boundary's truncation (about 1e-6, see above) is the reference's own
    // uncertainty.
    judge("cylinder over plane, charge", &rows, 2.0 * PI * EPSILON_0 / (h / a).acosh(), 1e-6, true);
}

/// A measurement, not yet a claim: run with `cargo test --release -p engine --test it
/// honesty -- --ignored --nocapture`. The peak away from the corner, on the rim of the
/// exclusion disc, had its bar hold the true error on 8 of 8 P1 and 6 of 8 P2 meshes when
/// this was written, and on 8 of 8 of each in the run of 2026-12-04
/// (bench-results/error-bars.md): kept a measurement until it holds over more changes.
#[test]
#[ignore]
fn field_at_a_fixed_distance_from_the_re_entrant_corner() {
    // The L-shaped benchmark V = r^(2/3)·sin(2θ/3) (Mitchell 2013): |∇V| = (2/3)·r^(−1/3)
    // whatever θ, so outside the disc r < 0.1 the largest field is (2/3)·0.1^(−1/3), on its
    // rim.
    let exact = (2.0 / 3.0) * 0.1f64.powf(-1.0 / 3.0);
    // The peak away from the corner, as `check` watches it: outside a disc of radius 0.1
    // around the corner, the field sampled on the disc's rim included.
    let read = |mesh: &mesher::Mesh, sol: &engine::Solution| {
        let p = region_peaks_away_from(mesh, sol, &[([0.0, 0.0], 0.1)]).into_iter().find(|p| p.region == 0).unwrap();
        (p.e_max_v_per_m, Some((p.at, Some(0))))
    };
    for order in [1u8, 2] {
        let rows = sequence(&l_shape(), &l_problem(), order, 0.2, 1e-4, 8, BUDGET, &read);
        judge(&format!("L-shape P{order}, |E| at r = 0.1"), &rows, exact, 0.0, false);
    }
}

#[test]
fn energy_estimate_at_an_electrode_end_on_a_slab_face() {
    // The partially electroded slab of closed_forms.rs (an electrode end of exponent λ = ½;
    // conformal-map capacitance, derived there): on the adaptive loop's meshes the energy's
    // own estimate ½η² stays within 0.5–2× of its true error while that error is well above
    // the model's truncation (about 1.5e-7 relative).
    let (d, half_w, len, t, eps_r) = (0.01, 0.01, 0.06, 0.001, 4.0);
    let slab = Outline::polygon("slab", &[[0.0, -t], [len, -t], [len, d], [half_w, d], [half_w, d + t], [0.0, d + t]])
        .unwrap();
    let geo = Geometry {
        symmetry: Symmetry::Planar,
        shapes: vec![
            shape("slab", slab, diel(eps_r)),
            shape("electrode", Outline::rectangle("electrode", [0.0, d], [half_w, t], 0.0).unwrap(), cond(0)),
            shape("earth", Outline::rectangle("earth", [0.0, -t], [len, t], 0.0).unwrap(), cond(1)),
        ],
        conductors: vec!["electrode".into(), "earth".into()],
        outer: OuterBoundary::ZeroFlux,
        size_points: vec![],
        thin: vec![],
        boundary_pieces: vec![],
    };
    let problem = Problem {
        permittivity: vec![eps_r, f64::NAN, f64::NAN],
        conductors: vec![ConductorSpec::Fixed { potential_v: 1.0 }, ConductorSpec::Fixed { potential_v: 0.0 }],
        ..Default::default()
    };
    let exact_w = 0.5 * crate::closed_forms::electroded_slab_capacitance(2.0 * half_w, d, eps_r) / 2.0;
    let params = RefineParams::new().with_order(2).with_max_size_m(d / 10.0);
    let ap = AdaptParams { tolerance: 1e-4, max_iterations: 4, ..Default::default() };
    let mut checked = 0;
    adapt_watching(
        &geo,
        &params,
        &problem,
        &ap,
        |_, solved, est| {
            let w = solved.solution.energy;
            let own = 0.5 * est.global * est.global;
            let truth = (w - exact_w).abs();
            eprintln!("slab energy: true {:.2e}, own estimate {:.2e}", truth / exact_w, own / exact_w);
            if truth > 1e-6 * exact_w {
                let eff = own / truth;
                assert!((0.5..=2.0).contains(&eff), "effectivity {eff}");
                checked += 1;
            }
            Ok(vec![Watched::new(w, 0.0, QuantityClass::Functional).with_estimate(own, None)])
        },
        |_| {},
    )
    .unwrap();
    assert!(checked >= 2, "{checked} meshes checked");
}

#[test]
fn peak_field_on_a_sphere_above_a_ground_plane() {
    // Image series (Smythe 1968, §5.08, the construction behind the capacitance series of
    // closed_forms.rs): a sphere of radius a centred d above an earthed plane, at V. Start
    // with q₀ = 4πε₀aV at the centre; the image of a charge −q_k at −z_k (below the plane) in
    // the sphere is q_(k+1) = q_k·a/(d + z_k) at z_(k+1) = d − a²/(d + z_k), and every q_k at
    // z_k has its image −q_k at −z_k. The field at the sphere's lowest point p = d − a, the
    // peak, is Σ q_k/(4πε₀)·(1/(z_k − p)² + 1/(z_k + p)²). a = 5 mm, d = 10 mm; the model
    // reaches 2 m, where the truncation (of order (d/L)³) is about 1e-7.
    let (a, d, l): (f64, f64, f64) = (0.005, 0.01, 2.0);
    let p = d - a;
    let (mut q, mut z, mut e) = (a, d, 0.0); // q in units of 4πε₀V
    for _ in 0..200 {
        e += q * (1.0 / (z - p).powi(2) + 1.0 / (z + p).powi(2));
        let next = d - a * a / (d + z);
        q *= a / (d + z);
        z = next;
    }
    let exact = e;
    let ball = {
        let arc = mesher::Curve::Arc { center: [0.0, d], radius: a, start: -PI / 2.0, sweep: PI };
        Outline::new("ball", vec![arc, mesher::Curve::Line { from: arc.to(), to: arc.from() }]).unwrap()
    };
    let geo = Geometry {
        symmetry: Symmetry::Axisymmetric,
        shapes: vec![
            shape("air", Outline::rectangle("air", [0.0, -0.005], [l, l + 0.005], 0.0).unwrap(), diel(1.0)),
            shape("plane", Outline::rectangle("plane", [0.0, -0.005], [l, 0.005], 0.0).unwrap(), cond(1)),
            shape("ball", ball, cond(0)),
        ],
        conductors: vec!["ball".into(), "plane".into()],
        outer: OuterBoundary::ZeroFlux,
        size_points: vec![],
        thin: vec![],
        boundary_pieces: vec![],
    };
    let problem = electrode_over_earth();
    let read = peak_of(0);
    let rows = sequence(&geo, &problem, 2, 0.1, 1e-4, 7, BUDGET, &read);
    judge("sphere over plane, peak", &rows, exact, 1e-6, true);
}

/// The reference for [`peak_field_on_a_rounded_re_entrant_corner`]: this project's own run to
/// 10⁶ unknowns (run with `cargo test --release -p engine --test it honesty -- --ignored
/// --nocapture`; it gave 3.153070205 ± 1.0e-5 and, a build earlier, 3.153064358 ± 2.5e-5).
#[test]
#[ignore]
fn rounded_re_entrant_corner_reference() {
    let (geo, problem, read) = (rounded_l_shape(), l_problem(), peak_of(0));
    let reference = sequence(&geo, &problem, 2, 0.2, 1e-6, 14, 1_200_000, &read);
    let last = reference.last().unwrap();
    eprintln!("rounded corner reference: {:.9e} ± {:.1e} at {} unknowns", last.value, last.bar, last.unknowns);
    assert!((last.value - ROUNDED_CORNER_PEAK).abs() <= last.bar + ROUNDED_CORNER_UNC * ROUNDED_CORNER_PEAK);
}

/// The rounded corner's peak from [`rounded_re_entrant_corner_reference`], and its relative
/// uncertainty (the two reference runs differ by 1.9e-6; their bars are 3e-6 and 8e-6).
const ROUNDED_CORNER_PEAK: f64 = 3.153070205;
const ROUNDED_CORNER_UNC: f64 = 1e-5;

/// The L-shaped benchmark with its re-entrant corner rounded to a radius of 0.05 (the
/// electrode's corner an arc).
fn rounded_l_shape() -> Geometry {
    let rho = 0.05;
    let corner = Outline::new(
        "corner",
        vec![
            mesher::Curve::Line { from: [rho, 0.0], to: [1.0, 0.0] },
            mesher::Curve::Line { from: [1.0, 0.0], to: [1.0, -1.0] },
            mesher::Curve::Line { from: [1.0, -1.0], to: [0.0, -1.0] },
            mesher::Curve::Line { from: [0.0, -1.0], to: [0.0, -rho] },
            mesher::Curve::Arc { center: [rho, -rho], radius: rho, start: PI, sweep: -PI / 2.0 },
        ],
    )
    .unwrap();
    let mut geo = l_shape();
    geo.shapes[1].outline = corner;
    geo
}

#[test]
fn peak_field_on_a_rounded_re_entrant_corner() {
    // The field is bounded and its peak sits on the arc; no closed form: the reference is
    // this project's own run a hundred times tighter (above).
    let rows = sequence(&rounded_l_shape(), &l_problem(), 2, 0.2, 1e-4, 6, BUDGET, &peak_of(0));
    judge("rounded re-entrant corner, peak", &rows, ROUNDED_CORNER_PEAK, ROUNDED_CORNER_UNC, true);
}
