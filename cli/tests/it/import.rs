//! `[import]`: a mesh written by meshio (`scripts/make-import-fixtures.py`) solved through the
//! binary against the coaxial closed form, and the located errors of bad `[import]` tables
//! and of files that do not fit the model.

use crate::common::{run, stderr};
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
        // Circles drawn by arcs (P2) or by 7.5° chords (P1): no singular point.
        assert_eq!(r["mesh"]["singular_points"].as_array().map(Vec::len), Some(0), "{file}");
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

/// The certified value, absolute bar and status of a watched quantity in `check`'s results.
fn certified(r: &Value, quantity: &str) -> (f64, f64, String) {
    let q = r["convergence"].as_array().unwrap().iter().find(|q| q["quantity"] == quantity).expect(quantity);
    let b = &q["error_bar"];
    (b["value"].as_f64().unwrap(), b["absolute"].as_f64().unwrap(), b["status"].as_str().unwrap().to_string())
}

#[test]
fn check_on_the_imported_annulus_certifies_the_coaxial_closed_form() {
    // `check` refines the imported mesh inside (bisection, the circles kept as arcs) until
    // every bar is within 0.1 %; the closed forms lie inside the bars: Q' = 2πε₀εr·V / ln(b/a)
    // (Griffiths, Introduction to Electrodynamics, 4th ed., problem 2.43) and the peak field
    // at the core E(a) = V / (a ln(b/a)), by Gauss's law from the same line charge (ibid., ch. 2).
    let (dir, model) = variant("[import]", "[[point]]\nname = \"mid\"\nat = [0.0, 20.0]\n\n[import]");
    let out = dir.path().join("out");
    let o = run(&["check", model.to_str().unwrap(), "--out", out.to_str().unwrap(), "--tol", "0.1%"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let r: Value = serde_json::from_str(&std::fs::read_to_string(out.join("results.json")).unwrap()).unwrap();
    assert_eq!(r["adaptivity"]["converged"], true, "{}", r["adaptivity"]["reason"]);
    let meshes = r["adaptivity"]["meshes"].as_array().unwrap();
    assert!(meshes.len() >= 3);
    // The first mesh is the file's 576 triangles; every later one refines it.
    assert_eq!(meshes[0]["triangles"], 576);
    assert!(meshes.windows(2).all(|w| w[1]["triangles"].as_u64() > w[0]["triangles"].as_u64()));
    let exact_q = 2.0 * std::f64::consts::PI * engine::EPSILON_0 * 2.2 / 3f64.ln() * 1e4;
    let (q, bar, status) = certified(&r, "charge of core");
    assert_eq!(status, "converged");
    assert!((q - exact_q).abs() <= bar && bar <= 1e-3 * q, "{q:e} ± {bar:e} vs {exact_q:e}");
    let exact_e = 1e4 / (0.010 * 3f64.ln());
    let (e, bar, status) = certified(&r, "peak field in gap away from singular points");
    assert_eq!(status, "converged");
    assert!((e - exact_e).abs() <= bar && bar <= 1e-3 * e, "{e} ± {bar} vs {exact_e}");
    // A named point on the imported mesh, r = 20 mm: V = V₀·ln(b/r)/ln(b/a), E = V₀/(r ln(b/a)).
    let side = &r["points"][0]["sides"][0];
    let (v, ev) = (side["potential_v"].as_f64().unwrap(), side["e_abs_v_per_m"].as_f64().unwrap());
    let (vb, eb) = (side["potential_error_bar_v"].as_f64().unwrap(), side["e_error_bar_v_per_m"].as_f64().unwrap());
    let (v_exact, e_exact) = (1e4 * 1.5f64.ln() / 3f64.ln(), 1e4 / (0.020 * 3f64.ln()));
    assert!((v - v_exact).abs() <= vb.max(1e-6 * 1e4), "V {v} ± {vb} vs {v_exact}");
    assert!((ev - e_exact).abs() <= eb, "|E| {ev} ± {eb} vs {e_exact}");
    assert!(out.join("report.html").exists());
}

/// The drawn two-layer coaxial model in metres, so that its VTU reads back in the same unit.
fn drawn_coax() -> String {
    crate::common::two_layer_coax("m", 0.003)
}

#[test]
fn a_mesh_written_by_mesh_out_reads_back_and_solves_identically() {
    let dir = tempfile::tempdir().unwrap();
    let drawn = dir.path().join("drawn.toml");
    std::fs::write(&drawn, drawn_coax()).unwrap();
    let vtu = dir.path().join("drawn.vtu");
    let o = run(&["mesh", drawn.to_str().unwrap(), "--out", vtu.to_str().unwrap()]);
    assert!(o.status.success(), "{}", stderr(&o));
    // Our files: region = shape index on triangles; edge_ref = conductor index on conductor
    // edges, -1 on the outer boundary.
    let imported = dir.path().join("imported.toml");
    let text = drawn_coax();
    let head = text.split("[[shape]]").next().unwrap();
    let tail = r#"
[boundary]
outer = "potential"
potential_v = 0.0

[mesh]
order = 2

[import]
file = "drawn.vtu"
boundary_array = "edge_ref"

[[import.region]]
id = 0
name = "oil"
material = "oil"

[[import.region]]
id = 1
name = "paper"
material = "paper"

[[import.boundary]]
tag = 0
conductor = "core"

[[import.boundary]]
tag = -1
outer = true
"#;
    std::fs::write(&imported, format!("{head}{tail}")).unwrap();
    let solve = |model: &Path, out: &str| -> Value {
        let out = dir.path().join(out);
        let o = run(&["solve", model.to_str().unwrap(), "--out", out.to_str().unwrap()]);
        assert!(o.status.success(), "{}", stderr(&o));
        serde_json::from_str(&std::fs::read_to_string(out.join("results.json")).unwrap()).unwrap()
    };
    let (a, b) = (solve(&drawn, "a"), solve(&imported, "b"));
    assert_eq!(a["mesh"]["nodes"], b["mesh"]["nodes"]);
    assert_eq!(a["mesh"]["triangles"], b["mesh"]["triangles"]);
    for key in ["energy_j", "unknowns"] {
        assert_eq!(a[key], b[key], "{key}");
    }
    assert_eq!(a["conductors"][0]["charge_c"], b["conductors"][0]["charge_c"]);
    // And both match the two-layer closed form C' = 2πε₀ / (ln 2 / 4 + ln 1.5 / 2.2).
    let exact = 2.0 * std::f64::consts::PI * engine::EPSILON_0 / (2f64.ln() / 4.0 + 1.5f64.ln() / 2.2) * 1e3;
    let q = b["conductors"][0]["charge_c"].as_f64().unwrap();
    assert!((q - exact).abs() < 1e-3 * exact, "{q:e} vs {exact:e}");
}

#[test]
fn singular_points_of_an_imported_mesh_are_those_of_the_drawn_part() {
    // An L-shaped electrode in an earthed box (lengths in m): its singular corners (the wedge
    // exponent π/θ₀ of the air's opening θ₀) found from the imported mesh's boundary angles
    // exactly where, and as, the mesher finds them on the outline.
    let drawn_text = r#"
[model]
symmetry = "planar"
length_unit = "m"

[[material]]
name = "air"
permittivity = 1.0

[[conductor]]
name = "hv"
potential_v = 1000.0

[[shape]]
name = "box"
material = "air"
polygon = [[-0.1, -0.1], [0.1, -0.1], [0.1, 0.1], [-0.1, 0.1]]

[[shape]]
name = "L"
conductor = "hv"
polygon = [[-0.04, -0.04], [0.04, -0.04], [0.04, 0.0], [0.0, 0.0], [0.0, 0.04], [-0.04, 0.04]]

[boundary]
outer = "potential"
potential_v = 0.0

[mesh]
order = 2
"#;
    let dir = tempfile::tempdir().unwrap();
    let drawn = dir.path().join("drawn.toml");
    std::fs::write(&drawn, drawn_text).unwrap();
    let vtu = dir.path().join("l.vtu");
    let mesh_json = |model: &Path, extra: &[&str]| -> Value {
        let mut a = vec!["mesh", model.to_str().unwrap(), "--json"];
        a.extend_from_slice(extra);
        let o = run(&a);
        assert!(o.status.success(), "{}", stderr(&o));
        serde_json::from_slice(&o.stdout).unwrap()
    };
    let a = mesh_json(&drawn, &["--out", vtu.to_str().unwrap()]);
    let head = drawn_text.split("[[shape]]").next().unwrap();
    let imported = dir.path().join("imported.toml");
    std::fs::write(
        &imported,
        format!(
            "{head}[boundary]\nouter = \"potential\"\npotential_v = 0.0\n\n[mesh]\norder = 2\n\n[import]\nfile = \"l.vtu\"\n\
             boundary_array = \"edge_ref\"\n\n[[import.region]]\nid = 0\nname = \"box\"\nmaterial = \"air\"\n\n\
             [[import.boundary]]\ntag = 0\nconductor = \"hv\"\n\n[[import.boundary]]\ntag = -1\nouter = true\n"
        ),
    )
    .unwrap();
    let b = mesh_json(&imported, &[]);
    let points = |r: &Value| -> Vec<(f64, f64, f64, String)> {
        let mut v: Vec<_> = r["singular_points"]
            .as_array()
            .unwrap()
            .iter()
            .map(|s| {
                (
                    s["x"].as_f64().unwrap(),
                    s["y"].as_f64().unwrap(),
                    s["lambda"].as_f64().unwrap(),
                    s["kind"].as_str().unwrap().to_string(),
                )
            })
            .collect();
        v.sort_by(|p, q| p.0.total_cmp(&q.0).then(p.1.total_cmp(&q.1)));
        v
    };
    let (pa, pb) = (points(&a), points(&b));
    assert!(!pa.is_empty());
    assert_eq!(pa.len(), pb.len(), "{pa:?} vs {pb:?}");
    for (p, q) in pa.iter().zip(&pb) {
        assert!((p.0 - q.0).abs() < 1e-12 && (p.1 - q.1).abs() < 1e-12, "{p:?} vs {q:?}");
        assert!((p.2 - q.2).abs() < 1e-9 && p.3 == q.3, "{p:?} vs {q:?}");
    }
    // The five convex corners of the conductor face 3π/2 of air: λ = π / (3π/2) = 2/3. The
    // conductor's re-entrant corner at the origin faces π/2 of air (λ = 2, regular for P2).
    assert_eq!(pb.len(), 5);
    assert!(pb.iter().all(|p| (p.2 - 2.0 / 3.0).abs() < 1e-9 && p.3 == "conductor corner"), "{pb:?}");
    assert!(!pb.iter().any(|p| p.0.abs() < 1e-12 && p.1.abs() < 1e-12), "{pb:?}");
    // `check` on the imported mesh (refined inside, towards its five corners) and on the
    // drawn part (remeshed) certify the same electrode charge: the two values agree within
    // the sum of their bars.
    let charge = |model: &Path| -> (f64, f64) {
        let out = dir.path().join(format!("out-{}", model.file_stem().unwrap().to_str().unwrap()));
        let o = run(&["check", model.to_str().unwrap(), "--out", out.to_str().unwrap()]);
        assert!(o.status.success(), "{}", stderr(&o));
        let r: Value = serde_json::from_str(&std::fs::read_to_string(out.join("results.json")).unwrap()).unwrap();
        assert_eq!(r["adaptivity"]["converged"], true, "{}", r["adaptivity"]["reason"]);
        let (q, bar, status) = certified(&r, "charge of hv");
        assert_eq!(status, "converged");
        (q, bar)
    };
    let ((qa, ba), (qb, bb)) = (charge(&drawn), charge(&imported));
    assert!((qa - qb).abs() <= ba + bb, "drawn {qa:e} ± {ba:e}, imported {qb:e} ± {bb:e}");
}
