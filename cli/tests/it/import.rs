//! `[import]`: a mesh written by meshio (`scripts/make-import-fixtures.py`) solved through the
//! binary against the coaxial closed form, and the located errors of bad `[import]` tables
//! and of files that do not fit the model.

use crate::common::{run, stderr, stdout};
use serde_json::Value;
use std::path::{Path, PathBuf};

fn import_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../fixtures/import")
}

/// The shipped coaxial import model with `from` replaced by `to`, written beside a copy of
/// the mesh files in a fresh folder.
fn variant(from: &str, to: &str) -> (tempfile::TempDir, PathBuf) {
    let dir = tempfile::tempdir().unwrap();
    let text = std::fs::read_to_string(import_dir().join("coax-import.toml")).unwrap();
    assert!(from.is_empty() || text.contains(from), "{from}");
    let text = if from.is_empty() { text } else { text.replace(from, to) };
    for f in ["coax-p2-zlib.vtu", "coax-p1-legacy.vtk"] {
        std::fs::copy(import_dir().join(f), dir.path().join(f)).unwrap();
    }
    let model = dir.path().join("model.toml");
    std::fs::write(&model, text).unwrap();
    (dir, model)
}

#[test]
fn solve_on_the_imported_annulus_matches_the_coaxial_closed_form() {
    // C' = 2πε₀εr / ln(b/a) per metre (D. J. Griffiths, Introduction to Electrodynamics,
    // 4th ed., problem 2.43); Q' = C'·V at 10 kV.
    let exact = 2.0 * std::f64::consts::PI * engine::EPSILON_0 * 2.2 / 3f64.ln() * 1e4;
    for (file, order, tol) in [("coax-p2-zlib.vtu", "2", 1e-3), ("coax-p1-legacy.vtk", "1", 1e-2)] {
        let (dir, model) = variant("coax-p2-zlib.vtu", file);
        let out = dir.path().join("out");
        let o = run(&["solve", model.to_str().unwrap(), "--out", out.to_str().unwrap(), "--order", order]);
        assert!(o.status.success(), "{}", stderr(&o));
        let r: Value = serde_json::from_str(&std::fs::read_to_string(out.join("results.json")).unwrap()).unwrap();
        let q = r["conductors"][0]["charge_c"].as_f64().unwrap();
        assert!((q - exact).abs() < tol * exact, "{file}: {q:e} vs {exact:e}");
        assert!(stdout(&o).contains("singular points are not detected"), "the limitation is said");
        assert!(out.join("report.html").exists());
    }
    // A linear file solved at order 2 is raised to P2 (mid nodes on the chords).
    let (dir, model) = variant("coax-p2-zlib.vtu", "coax-p1-legacy.vtk");
    let out = dir.path().join("out");
    let o = run(&["solve", model.to_str().unwrap(), "--out", out.to_str().unwrap(), "--order", "2"]);
    assert!(o.status.success(), "{}", stderr(&o));
}

/// Runs `solve` on a variant and returns its stderr, asserting exit code 2 and no output.
fn refused(from: &str, to: &str, args: &[&str]) -> String {
    let (dir, model) = variant(from, to);
    let out = dir.path().join("out");
    let mut a = vec!["solve", model.to_str().unwrap(), "--out", out.to_str().unwrap()];
    a.extend_from_slice(args);
    let o = run(&a);
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(!out.join("results.json").exists(), "nothing written");
    stderr(&o)
}

#[test]
fn bad_import_tables_and_files_are_located_errors() {
    let e = refused("id = 1\nname", "id = 10\nname", &[]);
    assert!(e.contains("id 10 is mapped twice") && e.contains("import.boundary"), "{e}");
    let e = refused("material = \"oil\"\n\n[[import.boundary]]", "material = \"resin\"\n\n[[import.boundary]]", &[]);
    assert!(e.contains("material 'resin' is not defined"), "{e}");
    let e = refused("file = \"coax-p2-zlib.vtu\"", "file = \"missing.vtu\"", &[]);
    assert!(e.contains("cannot read the mesh file") && e.contains("missing.vtu") && e.contains("import.file"), "{e}");
    // The file's region id 1 left unmapped: the first triangle cell is named.
    let e = refused("id = 1\n", "id = 3\n", &[]);
    assert!(e.contains("cell 0") && e.contains("region id 1") && e.contains("mapped: 3"), "{e}");
    let e = refused("tag = 20\nconductor = \"sheath\"", "tag = 20\nconductor = \"ground\"", &[]);
    assert!(e.contains("conductor 'ground' is not defined"), "{e}");
    // A quadratic file at order 1.
    let e = refused("", "", &["--order", "1"]);
    assert!(e.contains("quadratic cells") && e.contains("--order 2"), "{e}");
    // Shapes and an import together.
    let e = refused(
        "[import]",
        "[[shape]]\nname = \"x\"\nmaterial = \"oil\"\ncircle = { center = [0.0, 0.0], radius = 1.0 }\n\n[import]",
        &[],
    );
    assert!(e.contains("either draws its shapes or imports a mesh"), "{e}");
}

#[test]
fn check_on_an_imported_mesh_is_refused_with_the_way_forward() {
    let (dir, model) = variant("", "");
    let out = dir.path().join("out");
    let o = run(&["check", model.to_str().unwrap(), "--out", out.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(stderr(&o).contains("fieldgrade solve"), "{}", stderr(&o));
    assert!(!out.join("results.json").exists());
}
