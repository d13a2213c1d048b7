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
