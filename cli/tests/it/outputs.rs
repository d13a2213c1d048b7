//! The files `mesh` writes are complete and agree with the printed statistics.

use crate::common::{fixture, run};

#[test]
fn vtu_svg_and_json_agree() {
    let dir = tempfile::tempdir().unwrap();
    let vtu = dir.path().join("m.vtu");
    let svg = dir.path().join("m.svg");
    let o = run(&[
        "mesh",
        fixture("busbar-support.toml").to_str().unwrap(),
        "--json",
        "--out",
        vtu.to_str().unwrap(),
        "--svg",
        svg.to_str().unwrap(),
    ]);
    assert!(o.status.success());
    let j: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let nodes = j["nodes"].as_u64().unwrap();
    let tris = j["triangles"].as_u64().unwrap();
    let bytes = std::fs::read(&vtu).unwrap();
    let v = String::from_utf8_lossy(&bytes);
    assert!(v.contains(&format!("NumberOfPoints=\"{nodes}\"")));
    assert!(v.trim_end().ends_with("</VTKFile>"));
    // One quadratic triangle (VTK type 22) per triangle of the order-2 demo, then
    // quadratic edges (type 21) for the tagged edges.
    let types = crate::common::data_array(&bytes, Some("types"));
    let n22 = types.iter().filter(|&&t| t == 22.0).count() as u64;
    let n21 = types.iter().filter(|&&t| t == 21.0).count();
    assert_eq!(n22, tris);
    assert!(n21 > 0);
    assert!(v.contains("Name=\"region\"") && v.contains("Name=\"edge_kind\""));
    let s = std::fs::read_to_string(&svg).unwrap();
    assert!(s.starts_with("<svg") && s.trim_end().ends_with("</svg>"));
    assert_eq!(j["order"], 2);
    assert!(j["min_angle_deg"].as_f64().unwrap() >= 29.9);
}

#[test]
fn an_output_folder_that_cannot_be_made_is_a_run_failure() {
    // Not the user's model: exit code 1, with the folder and the system's reason.
    let o = crate::common::run(&[
        "solve",
        crate::common::fixture("l-electrode.toml").to_str().unwrap(),
        "--out",
        "/proc/no-such-folder/out",
    ]);
    let e = crate::common::stderr(&o);
    assert_eq!(o.status.code(), Some(1), "{e}");
    assert!(e.contains("cannot create the output folder '/proc/no-such-folder/out'"), "{e}");
}

#[test]
fn compressed_and_ascii_vtu_hold_the_same_fields() {
    // `solve` writes fields.vtu zlib-compressed by default and as text with --ascii-vtu: the
    // same arrays either way (read by the project's reader; the fields to Float32's seven
    // digits), the compressed file more than four times smaller.
    let dir = tempfile::tempdir().unwrap();
    let (a, b) = (dir.path().join("a"), dir.path().join("b"));
    let model = fixture("busbar-support.toml");
    for (out, extra) in [(&a, None), (&b, Some("--ascii-vtu"))] {
        let mut args = vec!["solve", model.to_str().unwrap(), "--out", out.to_str().unwrap()];
        args.extend(extra);
        assert!(run(&args).status.success());
    }
    let packed = std::fs::read(a.join("fields.vtu")).unwrap();
    let text = std::fs::read(b.join("fields.vtu")).unwrap();
    let has = |f: &[u8], s: &str| String::from_utf8_lossy(f).contains(s);
    assert!(has(&packed, "vtkZLibDataCompressor") && !has(&text, "vtkZLibDataCompressor"));
    assert!(packed.len() * 4 < text.len(), "{} vs {} bytes", packed.len(), text.len());
    for name in [None, Some("connectivity"), Some("region"), Some("potential_V"), Some("E_centroid_V_per_m")] {
        let (x, y) = (crate::common::data_array(&packed, name), crate::common::data_array(&text, name));
        assert_eq!(x.len(), y.len());
        // Coordinates and ids exact; the fields are Float32 in the compressed file.
        let field = matches!(name, Some("potential_V") | Some("E_centroid_V_per_m"));
        let ok =
            |p: f64, q: f64| (p - q).abs() <= if field { 1e-7 * q.abs() } else { 0.0 } || (p.is_nan() && q.is_nan());
        assert!(x.iter().zip(&y).all(|(p, q)| ok(*p, *q)), "{name:?} differs");
    }
}
