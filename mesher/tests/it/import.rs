//! The grid readers on files written by meshio 5.3.5 (a general-purpose mesh I/O library,
//! `scripts/make-import-fixtures.py`) in four encodings, and on files of our own writer
//! (appended raw, zlib and ascii): the same grid from every encoding, the geometry the
//! script built (boundary nodes on their circles), located errors for damaged files.

use crate::common::{conductor, dielectric, planar};
use mesher::{generate, read_grid, write_vtu, GridFile, Outline, RefineParams, VtuEncoding};
use std::path::Path;

fn fixture(name: &str) -> Vec<u8> {
    std::fs::read(Path::new(env!("CARGO_MANIFEST_DIR")).join("../fixtures/import").join(name)).unwrap()
}

/// The two grids hold the same cells and arrays and points equal to the 11 significant digits
/// meshio writes in ascii.
fn assert_same(a: &GridFile, b: &GridFile, what: &str) {
    assert_eq!(a.types, b.types, "{what}: cell types");
    assert_eq!(a.offsets, b.offsets, "{what}: offsets");
    assert_eq!(a.connectivity, b.connectivity, "{what}: connectivity");
    assert_eq!(a.cell_array("region"), b.cell_array("region"), "{what}: region array");
    assert_eq!(a.points.len(), b.points.len());
    for (p, q) in a.points.iter().zip(&b.points) {
        for k in 0..3 {
            assert!((p[k] - q[k]).abs() <= 1e-10 * 30.0, "{what}: point {p:?} vs {q:?}");
        }
    }
}

#[test]
fn every_encoding_of_the_meshio_fixtures_reads_to_the_same_grid() {
    for (order, tri, line, nodes) in [(1, 5u8, 3u8, 3usize), (2, 22, 21, 6)] {
        let stem = format!("coax-p{order}");
        let grids: Vec<(String, GridFile)> = ["ascii.vtu", "base64.vtu", "zlib.vtu", "legacy.vtk"]
            .iter()
            .map(|e| {
                let name = format!("{stem}-{e}");
                let g = read_grid(&fixture(&name)).unwrap_or_else(|e| panic!("{name}: {e}"));
                (name, g)
            })
            .collect();
        for (name, g) in &grids[1..] {
            assert_same(&grids[0].1, g, name);
        }
        let g = &grids[0].1;
        // What the script built: 6 × 48 cells of two triangles, 2 × 48 boundary lines.
        assert_eq!(g.types.iter().filter(|&&t| t == tri).count(), 576, "{stem}");
        assert_eq!(g.types.iter().filter(|&&t| t == line).count(), 96, "{stem}");
        let region = g.cell_array("region").unwrap();
        for (c, &ty) in g.types.iter().enumerate() {
            let ids = g.cell(c);
            if ty == tri {
                assert_eq!(ids.len(), nodes);
                assert_eq!(region[c], 1.0);
            } else {
                // Tag 10: inner circle r = 10 mm; 20: outer circle r = 30 mm (every node of
                // a boundary line, the P2 mid node included, lies on its circle).
                let r = if region[c] == 10.0 { 10.0 } else { 30.0 };
                assert!(region[c] == 10.0 || region[c] == 20.0);
                for &v in ids {
                    let p = g.points[v as usize];
                    assert!((p[0].hypot(p[1]) - r).abs() < 1e-9, "{stem}: line node at r = {}", p[0].hypot(p[1]));
                }
            }
        }
    }
}

#[test]
fn our_own_files_read_back_in_both_encodings() {
    let geo = planar(
        vec![
            dielectric("box", Outline::rectangle("box", [-1.0, -1.0], [2.0, 2.0], 0.0).unwrap(), 2.0),
            conductor("rod", Outline::circle("rod", [0.0, 0.0], 0.25).unwrap(), 0),
        ],
        &["hv"],
    );
    let m = generate(&geo, &RefineParams::new().with_order(2).with_max_size_m(0.2)).unwrap().mesh;
    let mut grids = Vec::new();
    for enc in [VtuEncoding::Compressed, VtuEncoding::Ascii] {
        let mut bytes = Vec::new();
        write_vtu(&m, &[], &[], enc, &mut bytes).unwrap();
        grids.push(read_grid(&bytes).unwrap());
    }
    assert_same(&grids[0], &grids[1], "compressed vs ascii");
    let g = &grids[0];
    assert_eq!(g.points.len(), m.nodes.len());
    for (t, tri) in m.triangles.iter().enumerate() {
        let mut want: Vec<u32> = tri.to_vec();
        want.extend_from_slice(&m.mid_nodes[t]);
        assert_eq!(g.cell(t), want.as_slice());
        assert_eq!(g.types[t], 22);
    }
    assert_eq!(g.types.len(), m.triangles.len() + m.edges.len());
}

#[test]
fn damaged_files_are_refused_with_the_array_named() {
    // Truncated inside the appended block.
    let bytes = fixture("coax-p2-zlib.vtu");
    let cut = &bytes[..bytes.len() * 2 / 3];
    assert!(read_grid(cut).is_err());
    // An appended raw file of our own cut short.
    let geo =
        planar(vec![dielectric("box", Outline::rectangle("box", [0.0, 0.0], [1.0, 1.0], 0.0).unwrap(), 2.0)], &[]);
    let m = generate(&geo, &RefineParams::new().with_max_size_m(0.2)).unwrap().mesh;
    let mut full = Vec::new();
    write_vtu(&m, &[], &[], VtuEncoding::Compressed, &mut full).unwrap();
    let e = read_grid(&full[..full.len() - 40]).unwrap_err().0;
    assert!(e.contains("data array") && e.contains("truncated"), "{e}");
    // A points array of the wrong length (an ascii file edited by hand).
    let text = String::from_utf8(fixture("coax-p1-ascii.vtu")).unwrap();
    let k = text.find("NumberOfPoints=\"").unwrap() + "NumberOfPoints=\"".len();
    let edited = format!("{}337{}", &text[..k], &text[k + 3..]);
    let e = read_grid(edited.as_bytes()).unwrap_err().0;
    assert!(e.contains("points array") && e.contains("337"), "{e}");
}

fn coax_spec() -> mesher::ImportSpec {
    use mesher::{BoundaryUse, RegionUse};
    mesher::ImportSpec {
        symmetry: mesher::Symmetry::Planar,
        unit_m: 1e-3,
        id_array: "region".into(),
        boundary_array: None,
        regions: vec![(1, RegionUse::Dielectric(0))],
        boundaries: vec![(10, BoundaryUse::Conductor(0)), (20, BoundaryUse::Conductor(1))],
        region_names: vec!["oil".into()],
        conductor_names: vec!["inner".into(), "outer".into()],
    }
}

#[test]
fn the_meshio_annulus_imports_with_its_circles_as_arcs() {
    for order in [1, 2] {
        let g = read_grid(&fixture(&format!("coax-p{order}-zlib.vtu"))).unwrap();
        let imp = mesher::import_mesh(&g, &coax_spec()).unwrap();
        let m = &imp.mesh;
        assert_eq!(m.triangles.len(), 576);
        assert_eq!(m.order(), order);
        let on = |c: u32| m.edges.iter().filter(|e| e.tag == mesher::EdgeTag::Conductor(c)).count();
        assert_eq!((on(0), on(1)), (48, 48));
        if order == 2 {
            // Every boundary edge follows its circle: r = 10 mm and 30 mm about the origin.
            for e in &m.edges {
                let a = m.arcs[e.arc.expect("a curved boundary edge has its arc") as usize];
                let r = if e.tag == mesher::EdgeTag::Conductor(0) { 0.010 } else { 0.030 };
                assert!((a.radius - r).abs() < 1e-12 && a.center[0].hypot(a.center[1]) < 1e-12, "{a:?}");
            }
            assert!(imp.warnings.iter().any(|w| w.contains("interior edges")), "{:?}", imp.warnings);
        }
        // Area of the annulus π(b² − a²), to the polygonal (P1) or exact-corner (P2) area.
        let area: f64 = (0..m.num_triangles()).map(|t| m.triangle_area(t)).sum();
        let exact = std::f64::consts::PI * (0.03f64.powi(2) - 0.01f64.powi(2));
        assert!((area / exact - 1.0).abs() < 0.01, "{area} vs {exact}");
    }
}

#[test]
fn bisection_inside_the_imported_annulus_keeps_the_circles() {
    // Refine the meshio annulus (P2) by newest-vertex bisection towards the inner circle:
    // every vertex and P2 mid node on a tagged boundary edge stays on its circle (r = 10 mm
    // or 30 mm about the origin), the tags are kept, and the area approaches π(b² − a²).
    let g = read_grid(&fixture("coax-p2-zlib.vtu")).unwrap();
    let m = mesher::import_mesh(&g, &coax_spec()).unwrap().mesh;
    let sizes: Vec<f64> = (0..m.num_triangles())
        .map(|t| {
            let p = m.nodes[m.triangles[t][0] as usize];
            if p[0].hypot(p[1]) < 0.015 {
                2e-4
            } else {
                1.0
            }
        })
        .collect();
    let out = mesher::bisect_to_sizes(&m, &sizes, 1.6, 1_000_000).unwrap();
    assert!(out.complete);
    let r = &out.mesh;
    assert!(r.num_triangles() > 10 * m.num_triangles(), "{}", r.num_triangles());
    assert_eq!(r.order(), 2);
    let on = |c: u32| r.edges.iter().filter(|e| e.tag == mesher::EdgeTag::Conductor(c)).count();
    assert!(on(0) >= 48 * 8, "{}", on(0));
    assert_eq!(on(1), 48, "the outer circle is not refined");
    let mids: std::collections::HashMap<(u32, u32), u32> = (0..r.num_triangles())
        .flat_map(|t| {
            (0..3).map(move |k| {
                let (a, b) = (r.triangles[t][k], r.triangles[t][(k + 1) % 3]);
                ((a.min(b), a.max(b)), r.mid_nodes[t][k])
            })
        })
        .collect();
    for e in &r.edges {
        let radius = if e.tag == mesher::EdgeTag::Conductor(0) { 0.010 } else { 0.030 };
        let (a, b) = (e.nodes[0], e.nodes[1]);
        for n in [a, b, mids[&(a.min(b), a.max(b))]] {
            let p = r.nodes[n as usize];
            assert!((p[0].hypot(p[1]) - radius).abs() < 1e-15, "node {n} at {p:?} off the circle {radius}");
        }
    }
    // The boundary edges keep the dielectric on their left: the shoelace sum over them is
    // the triangles' area. The inner polygon (the conductor's hole) approaches πa².
    let shoelace = |mesh: &mesher::Mesh, only: Option<mesher::EdgeTag>| -> f64 {
        mesh.edges
            .iter()
            .filter(|e| only.is_none_or(|t| e.tag == t))
            .map(|e| {
                let (p, q) = (mesh.nodes[e.nodes[0] as usize], mesh.nodes[e.nodes[1] as usize]);
                0.5 * (p[0] * q[1] - q[0] * p[1])
            })
            .sum()
    };
    let area: f64 = (0..r.num_triangles()).map(|t| r.triangle_area(t)).sum();
    assert!((shoelace(r, None) - area).abs() < 1e-12 * area, "{} vs {area}", shoelace(r, None));
    let hole = |mesh: &mesher::Mesh| -shoelace(mesh, Some(mesher::EdgeTag::Conductor(0)));
    let exact = std::f64::consts::PI * 0.01f64.powi(2);
    assert!(
        (hole(r) - exact).abs() < 0.02 * (hole(&m) - exact).abs(),
        "{} vs {exact}, first mesh {}",
        hole(r),
        hole(&m)
    );
}

/// A 2 × 1 grid of unit squares split into four triangles, region 1, lines tagged 7 on the
/// left side; `edit` changes it before import.
fn squares(edit: impl FnOnce(&mut GridFile)) -> Result<mesher::Imported, String> {
    let points = vec![[0., 0., 0.], [1., 0., 0.], [2., 0., 0.], [0., 1., 0.], [1., 1., 0.], [2., 1., 0.]];
    let cells: Vec<(u8, Vec<u32>, f64)> = vec![
        (5, vec![0, 1, 4], 1.0),
        (5, vec![0, 4, 3], 1.0),
        (5, vec![1, 2, 5], 1.0),
        (5, vec![1, 5, 4], 1.0),
        (3, vec![0, 3], 7.0),
    ];
    let mut g = GridFile { points, ..GridFile::default() };
    for (t, n, id) in cells {
        g.types.push(t);
        g.connectivity.extend(n);
        g.offsets.push(g.connectivity.len());
        if g.cell_arrays.is_empty() {
            g.cell_arrays.push(("region".into(), Vec::new()));
        }
        g.cell_arrays[0].1.push(id);
    }
    edit(&mut g);
    let spec = mesher::ImportSpec {
        regions: vec![(1, mesher::RegionUse::Dielectric(0))],
        boundaries: vec![(7, mesher::BoundaryUse::Conductor(0))],
        region_names: vec!["a".into()],
        conductor_names: vec!["hv".into()],
        ..coax_spec()
    };
    mesher::import_mesh(&g, &spec).map_err(|e| e.0)
}

/// Replaces cell `c`'s nodes (same count).
fn set_cell(g: &mut GridFile, c: usize, nodes: &[u32]) {
    let start = if c == 0 { 0 } else { g.offsets[c - 1] };
    g.connectivity[start..start + nodes.len()].copy_from_slice(nodes);
}

/// Inserts a region-1 triangle before the line cell (cell 4) of `squares`.
fn insert_triangle(g: &mut GridFile, nodes: [u32; 3]) {
    g.types.insert(4, 5);
    let n = g.connectivity.len() - 2;
    g.connectivity.splice(n..n, nodes);
    let last = g.offsets[3];
    g.offsets.insert(4, last + 3);
    g.offsets[5] += 3;
    g.cell_arrays[0].1.insert(4, 1.0);
}

#[test]
fn each_import_error_names_the_cell_or_node() {
    assert!(squares(|_| {}).is_ok());
    let e = squares(|g| g.cell_arrays[0].1[2] = 9.0).unwrap_err();
    assert!(e.contains("cell 2") && e.contains("region id 9"), "{e}");
    let e = squares(|g| g.cell_arrays[0].0 = "material".into()).unwrap_err();
    assert!(e.contains("no cell array 'region'") && e.contains("material"), "{e}");
    let e = squares(|g| g.cell_arrays[0].1[1] = f64::NAN).unwrap_err();
    assert!(e.contains("cell 1") && e.contains("no integer id"), "{e}");
    let e = squares(|g| g.points[4] = [0.5, 0.0, 0.0]).unwrap_err();
    assert!(e.contains("cell 0") && e.contains("degenerate"), "{e}");
    let e = squares(|g| {
        g.points.push([1.0, 1.0, 0.0]);
        set_cell(g, 3, &[1, 5, 6]);
    })
    .unwrap_err();
    assert!(e.contains("nodes 4 and 6 coincide") && e.contains("(1, 1)"), "{e}");
    let e = squares(|g| g.types[4] = 9).unwrap_err();
    assert!(e.contains("cell 4") && e.contains("type 9"), "{e}");
    let e = squares(|g| g.points[0][2] = 0.5).unwrap_err();
    assert!(e.contains("node 0") && e.contains("z = 0.5"), "{e}");
    let e = squares(|g| set_cell(g, 4, &[0, 5])).unwrap_err();
    assert!(e.contains("line cell 4") && e.contains("not an edge"), "{e}");
    let e = squares(|g| g.cell_arrays[0].1[4] = 8.0).unwrap_err();
    assert!(e.contains("line cell 4") && e.contains("tag 8"), "{e}");
    // Clockwise cells are turned round, with a warning.
    let ok = squares(|g| set_cell(g, 0, &[0, 4, 1])).unwrap();
    assert!(ok.warnings.iter().any(|w| w.contains("1 clockwise")), "{:?}", ok.warnings);
    // A third cell on edge 1–4.
    let e = squares(|g| {
        g.points.push([0.4, 0.6, 0.0]);
        insert_triangle(g, [1, 4, 6]);
    })
    .unwrap_err();
    assert!(e.contains("edge 1–4") && e.contains("shared by 3 cells"), "{e}");
    // Hanging node: the right square split by a node 6 on its left edge 1–4.
    let e = squares(|g| {
        g.points.push([1.0, 0.5, 0.0]);
        set_cell(g, 2, &[1, 2, 6]);
        set_cell(g, 3, &[6, 2, 5]);
        insert_triangle(g, [6, 5, 4]);
    })
    .unwrap_err();
    assert!(e.contains("node 6") && e.contains("hanging"), "{e}");
    // r < 0 in an axisymmetric model.
    let g = read_grid(&fixture("coax-p1-ascii.vtu")).unwrap();
    let spec = mesher::ImportSpec { symmetry: mesher::Symmetry::Axisymmetric, ..coax_spec() };
    let e = mesher::import_mesh(&g, &spec).unwrap_err().0;
    assert!(e.contains("r < 0") && e.contains("node"), "{e}");
}

#[test]
fn mixed_orders_are_refused() {
    let mut g = read_grid(&fixture("coax-p1-ascii.vtu")).unwrap();
    // Append one quadratic line cell (ids within range).
    g.types.push(21);
    g.connectivity.extend_from_slice(&[0, 1, 2]);
    g.offsets.push(g.connectivity.len());
    g.cell_arrays[0].1.push(10.0);
    let e = mesher::import_mesh(&g, &coax_spec()).unwrap_err().0;
    assert!(e.contains("mixed element orders") && e.contains(&format!("cell {}", g.types.len() - 1)), "{e}");
}
