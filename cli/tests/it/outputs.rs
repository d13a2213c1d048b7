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
    let v = std::fs::read_to_string(&vtu).unwrap();
    assert!(v.contains(&format!("NumberOfPoints=\"{nodes}\"")));
    assert!(v.trim_end().ends_with("</VTKFile>"));
    // One quadratic triangle (VTK type 22) per triangle of the order-2 demo, then
    // quadratic edges (type 21) for the tagged edges.
    let types = v.split("Name=\"types\" format=\"ascii\">").nth(1).unwrap().split("</DataArray>").next().unwrap();
    let n22 = types.split_whitespace().filter(|t| *t == "22").count() as u64;
    let n21 = types.split_whitespace().filter(|t| *t == "21").count();
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
