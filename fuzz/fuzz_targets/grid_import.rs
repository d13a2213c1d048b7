//! Arbitrary bytes as an imported mesh file (.vtu in any encoding, legacy .vtk): the reader
//! must return a grid or an error, never panic or run out of memory; a grid that reads must
//! import into a validated mesh or give an error naming what is wrong, and its singular
//! points must be found without a panic.
#![no_main]

use libfuzzer_sys::fuzz_target;
use mesher::{import_mesh, read_grid, BoundaryUse, ImportSpec, RegionUse, Symmetry};

fuzz_target!(|data: &[u8]| {
    let Ok(grid) = read_grid(data) else { return };
    for symmetry in [Symmetry::Planar, Symmetry::Axisymmetric] {
        let spec = ImportSpec {
            symmetry,
            unit_m: 1e-3,
            id_array: grid.cell_arrays.first().map(|a| a.0.clone()).unwrap_or_else(|| "region".into()),
        boundary_array: None,
            regions: vec![(0, RegionUse::Dielectric(0)), (1, RegionUse::Dielectric(1)), (2, RegionUse::Conductor(0))],
            boundaries: vec![(10, BoundaryUse::Conductor(0)), (20, BoundaryUse::Outer)],
            region_names: vec!["a".into(), "b".into()],
            conductor_names: vec!["hv".into()],
        };
        match import_mesh(&grid, &spec) {
            Ok(imp) => {
                let _ = mesher::find_singular_points(&imp.mesh, &[1.0, 4.0], true);
            }
            Err(e) => {
                let _ = e.to_string();
            }
        }
    }
});
