//! The coaxial closed form solved on meshes made elsewhere: the annulus meshio wrote
//! (`scripts/make-import-fixtures.py`), imported through `mesher::import_mesh`, must give the
//! capacitance C' = 2πε₀εᵣ / ln(b/a) per metre (e.g. D. J. Griffiths, *Introduction to
//! Electrodynamics*, 4th ed., 2017, problem 2.43) to the same tolerance as a drawn model
//! meshed at a similar size (`closed_forms::coaxial_cylinders_one_and_two_layers`: P2 within
//! 1e-3 at h = 4 mm, P1 within 1e-2 at h = 1.5 mm).

use engine::{solve, ConductorSpec, Problem, EPSILON_0};
use mesher::{import_mesh, read_grid, BoundaryUse, ImportSpec, RegionUse, Symmetry};
use std::f64::consts::PI;
use std::path::Path;

fn imported_coax(file: &str) -> f64 {
    let bytes = std::fs::read(Path::new(env!("CARGO_MANIFEST_DIR")).join("../fixtures/import").join(file)).unwrap();
    let grid = read_grid(&bytes).unwrap();
    let spec = ImportSpec {
        symmetry: Symmetry::Planar,
        unit_m: 1e-3,
        id_array: "region".into(),
        boundary_array: None,
        regions: vec![(1, RegionUse::Dielectric(0))],
        boundaries: vec![(10, BoundaryUse::Conductor(0)), (20, BoundaryUse::Conductor(1))],
        region_names: vec!["oil".into()],
        conductor_names: vec!["core".into(), "sheath".into()],
    };
    let mesh = import_mesh(&grid, &spec).unwrap().mesh;
    let problem = Problem {
        permittivity: vec![2.2],
        conductors: vec![ConductorSpec::Fixed { potential_v: 1.0 }, ConductorSpec::Fixed { potential_v: 0.0 }],
        outer_potential_v: None,
        ..Default::default()
    };
    solve(&mesh, &problem).unwrap().conductor_charges[0]
}

#[test]
fn coaxial_capacitance_on_the_imported_annulus() {
    let exact = 2.0 * PI * EPSILON_0 * 2.2 / 3f64.ln();
    for (file, tol) in [
        ("coax-p2-zlib.vtu", 1e-3),
        ("coax-p2-legacy.vtk", 1e-3),
        ("coax-p1-base64.vtu", 1e-2),
        ("coax-p1-ascii.vtu", 1e-2),
    ] {
        let q = imported_coax(file);
        eprintln!("{file}: relative error {:.2e}", (q - exact) / exact);
        assert!((q - exact).abs() < tol * exact, "{file}: {q:e} vs {exact:e}");
    }
}
