//! Workspace-level end-to-end cases: every file in `fixtures/cases/` (schema in
//! `fixtures/README.md`) is meshed and solved for P1 and P2, and the computed capacitance
//! is compared with the case's closed-form reference value and tolerance.
#![forbid(unsafe_code)]

use engine::{solve, ConductorSpec, Problem};
use mesher::{generate, Curve, Fill, Geometry, OuterBoundary, Outline, RefineParams, Shape, Symmetry};
use serde::Deserialize;
use std::f64::consts::PI;
use std::path::{Path, PathBuf};

/// One reference case (see `fixtures/README.md`).
#[derive(Deserialize, Debug, Clone)]
#[serde(deny_unknown_fields)]
pub struct Case {
    /// What the case is.
    pub name: String,
    /// Where the reference value comes from.
    pub source: String,
    /// "coaxial" or "spheres".
    pub kind: String,
    /// Inner conductor radius, then each layer's outer radius.
    pub radii_m: Vec<f64>,
    /// Relative permittivity per layer.
    pub permittivity: Vec<f64>,
    /// Inner conductor potential.
    pub potential_v: f64,
    /// Exact capacitance.
    pub reference_capacitance: f64,
    /// Default element size.
    pub max_size_m: f64,
    /// Accepted relative errors.
    pub tolerance: Tolerance,
}

/// Accepted relative error per element order.
#[derive(Deserialize, Debug, Clone, Copy)]
#[serde(deny_unknown_fields)]
pub struct Tolerance {
    /// Linear elements.
    pub p1: f64,
    /// Quadratic elements.
    pub p2: f64,
}

/// The folder of reference cases.
pub fn cases_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../fixtures/cases")
}

/// Every case, sorted by file name.
///
/// # Panics
/// If a case file is unreadable or does not follow the schema (a broken fixture).
pub fn load_cases() -> Vec<(String, Case)> {
    let mut files: Vec<PathBuf> = std::fs::read_dir(cases_dir())
        .expect("fixtures/cases exists")
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|e| e == "toml"))
        .collect();
    files.sort();
    files
        .into_iter()
        .map(|p| {
            let text = std::fs::read_to_string(&p).unwrap();
            let case: Case = toml::from_str(&text).unwrap_or_else(|e| panic!("{}: {e}", p.display()));
            (p.file_name().unwrap().to_string_lossy().into_owned(), case)
        })
        .collect()
}

/// Closed outline of a circle (coaxial) or a half disc on the axis (spheres).
fn round(kind: &str, name: &str, r: f64) -> Outline {
    match kind {
        "coaxial" => Outline::circle(name, [0.0, 0.0], r).unwrap(),
        _ => {
            let arc = Curve::Arc { center: [0.0, 0.0], radius: r, start: -PI / 2.0, sweep: PI };
            Outline::new(name, vec![arc, Curve::Line { from: arc.to(), to: arc.from() }]).unwrap()
        }
    }
}

/// Meshes and solves a case; returns the computed capacitance and the number of unknowns.
///
/// # Panics
/// If meshing or solving fails (a case must always run).
pub fn run_case(case: &Case, order: u8, max_size_m: f64) -> (f64, usize) {
    let (_, _, sol) = solve_case(case, order, max_size_m);
    (sol.conductor_charges[0] / case.potential_v, sol.num_unknowns)
}

/// The mesh, problem and solution of a case (region 0 is the outermost layer).
///
/// # Panics
/// If meshing or solving fails (a case must always run).
pub fn solve_case(case: &Case, order: u8, max_size_m: f64) -> (mesher::Mesh, Problem, engine::Solution) {
    let symmetry = if case.kind == "coaxial" { Symmetry::Planar } else { Symmetry::Axisymmetric };
    let n = case.permittivity.len();
    // Paint order: outermost layer first (it is the domain), inner layers over it, then
    // the inner conductor.
    let mut shapes = Vec::new();
    let mut permittivity = Vec::new();
    for k in (0..n).rev() {
        let name = format!("layer{k}");
        shapes.push(Shape {
            name: name.clone(),
            outline: round(&case.kind, &name, case.radii_m[k + 1]),
            fill: Fill::Dielectric { permittivity: case.permittivity[k] },
            max_size_m: None,
        });
        permittivity.push(case.permittivity[k]);
    }
    shapes.push(Shape {
        name: "inner".into(),
        outline: round(&case.kind, "inner", case.radii_m[0]),
        fill: Fill::Conductor { conductor: 0 },
        max_size_m: None,
    });
    permittivity.push(f64::NAN);
    let geo = Geometry {
        symmetry,
        shapes,
        conductors: vec!["inner".into()],
        outer: OuterBoundary::FixedPotential,
        size_points: vec![],
        thin: vec![],
        boundary_pieces: vec![],
    };
    let mesh = generate(&geo, &RefineParams::new().with_order(order).with_max_size_m(max_size_m)).unwrap().mesh;
    let problem = Problem {
        permittivity,
        conductors: vec![ConductorSpec::Fixed { potential_v: case.potential_v }],
        outer_potential_v: Some(0.0),
        ..Default::default()
    };
    let sol = solve(&mesh, &problem).unwrap();
    (mesh, problem, sol)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_case_within_tolerance_for_p1_and_p2() {
        let cases = load_cases();
        assert!(cases.len() >= 4, "the corpus has {} cases", cases.len());
        for (file, case) in &cases {
            for (order, tol) in [(1u8, case.tolerance.p1), (2, case.tolerance.p2)] {
                let (c, dofs) = run_case(case, order, case.max_size_m);
                let err = (c - case.reference_capacitance) / case.reference_capacitance;
                eprintln!("{file} P{order}: relative error {err:.2e} with {dofs} unknowns");
                assert!(err.abs() <= tol, "{file} ({}; {}): P{order} error {err:e} > {tol}", case.name, case.source);
            }
        }
    }

    #[test]
    fn energy_error_converges_at_order_2p() {
        // Capacitance error = relative energy error for a one-electrode problem, which
        // converges as h^(2p) on smooth problems (Strang & Fix, An Analysis of the Finite
        // Element Method, 1973, ch. 3); with exact arcs the P2 geometry error is of the
        // same order. Halving h must cut the error by about 2^(2p).
        let cases = load_cases();
        let (_, case) = cases.iter().find(|(f, _)| f == "coax-two-layer.toml").unwrap();
        for (order, want) in [(1u8, 2.0), (2, 4.0)] {
            let e = |h: f64| {
                let (c, n) = run_case(case, order, h);
                ((c - case.reference_capacitance).abs() / case.reference_capacitance, n)
            };
            // Sizes below the arcs' chord limit (0.2·R for the 1 cm core), so that the whole
            // mesh, boundary included, scales with h.
            let (e1, n1) = e(0.002);
            let (e2, n2) = e(0.001);
            // Observed order in h from the DOF ratio (unstructured meshes: h ∝ N^(-1/2)).
            let p = (e1 / e2).ln() / (0.5 * (n2 as f64 / n1 as f64).ln());
            eprintln!("P{order}: errors {e1:.2e} → {e2:.2e}, observed order {p:.2} (expected {want})");
            assert!((p - want).abs() < 0.5, "P{order}: observed order {p}");
        }
    }
}

#[cfg(test)]
mod convergence_report {
    use super::*;
    use engine::{grid_convergence, ConvergenceKind};

    #[test]
    fn richardson_extrapolation_beats_the_finest_mesh() {
        // Issue 4's check on a closed form: the extrapolated capacitance of the two-layer
        // coaxial case (reference: series layers, fixtures/cases/coax-two-layer.toml) is
        // closer to the exact value than the finest mesh's, for P1 and P2.
        let cases = load_cases();
        let (_, case) = cases.iter().find(|(f, _)| f == "coax-two-layer.toml").unwrap();
        for order in [1u8, 2] {
            // Sizes below the arcs' chord limit (0.2·R of the 1 cm core), so that the whole
            // mesh scales with h.
            let seq: Vec<(usize, f64)> = [0.002, 0.0014, 0.001]
                .iter()
                .map(|&h| {
                    let (c, n) = run_case(case, order, h);
                    (n, c)
                })
                .collect();
            let st = grid_convergence(&seq);
            let exact = case.reference_capacitance;
            let fine_err = (seq[2].1 - exact).abs() / exact;
            let ext_err = (st.extrapolated - exact).abs() / exact;
            eprintln!(
                "P{order}: order {:.2}, finest error {fine_err:.2e}, extrapolated error {ext_err:.2e}, GCI {:.2e}",
                st.observed_order, st.gci_fine
            );
            assert_eq!(st.kind, ConvergenceKind::Monotone);
            assert!(ext_err < fine_err, "P{order}: extrapolation {ext_err:e} vs finest {fine_err:e}");
            // The GCI is an error estimate with a 1.25 safety factor, not a bound (Roache 1994
            // calls it a ~95 % band): it must be of the size of the true error.
            assert!(
                st.gci_fine > 0.5 * fine_err && st.gci_fine < 4.0 * fine_err,
                "P{order}: GCI {} vs error {fine_err}",
                st.gci_fine
            );
        }
    }
}

#[cfg(test)]
mod peak_field {
    use super::*;

    #[test]
    fn coaxial_peak_field_at_the_inner_conductor() {
        // E(a) = V/(a·ln(b/a)) on the inner conductor of a coaxial line (Griffiths 2017,
        // §2.3): the element peak of P2 on the default mesh within 0.5 %, and tighter on a
        // mesh twice as fine.
        let cases = load_cases();
        let (_, case) = cases.iter().find(|(f, _)| f == "coax-air.toml").unwrap();
        let (a, b) = (case.radii_m[0], case.radii_m[1]);
        let exact = case.potential_v / (a * (b / a).ln());
        let mut last = f64::INFINITY;
        for h in [case.max_size_m, case.max_size_m / 2.0] {
            let (peak, _) = peak_of(case, 2, h);
            let err = (peak - exact).abs() / exact;
            eprintln!("h {h}: peak {peak:.6e} vs {exact:.6e}, relative error {err:.2e}");
            assert!(err < 5e-3, "h {h}: {err}");
            assert!(err < last);
            last = err;
        }
    }

    /// Largest |E| in the dielectric (its peak region value), and the unknowns.
    fn peak_of(case: &Case, order: u8, h: f64) -> (f64, usize) {
        let (mesh, problem, sol) = solve_case(case, order, h);
        let f = engine::element_fields(&mesh, &problem, &sol);
        (f.region_peaks[0].e_max_v_per_m, sol.num_unknowns)
    }
}
