//! `fieldgrade solve` end to end: files written, figures consistent, errors clean.

use crate::common::{fixture, run, stderr, stdout};

#[test]
fn solve_writes_consistent_results() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("res");
    let o = run(&["solve", fixture("busbar-support.toml").to_str().unwrap(), "--out", out.to_str().unwrap()]);
    assert!(o.status.success(), "{}", stderr(&o));
    let text = stdout(&o);
    assert!(text.contains("cautions") && text.contains("indicative"));
    let j: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("results.json")).unwrap()).unwrap();
    assert_eq!(j["schema"], "fieldgrade-results/1");
    // Closed system (every conductor field line ends on a conductor or the zero-flux
    // boundary): charges sum to zero; Q = C·V with the capacitance matrix; W = ½ΣQV.
    let q: Vec<f64> = j["conductors"].as_array().unwrap().iter().map(|c| c["charge_c"].as_f64().unwrap()).collect();
    let v: Vec<f64> = j["conductors"].as_array().unwrap().iter().map(|c| c["potential_v"].as_f64().unwrap()).collect();
    assert!((q[0] + q[1]).abs() < 1e-9 * q[0].abs());
    let c = &j["capacitance_matrix_f"]["values"];
    let qc = c[0][0].as_f64().unwrap() * v[0] + c[0][1].as_f64().unwrap() * v[1];
    assert!((qc - q[0]).abs() < 1e-9 * q[0].abs());
    let w = j["energy_j"].as_f64().unwrap();
    assert!((w - 0.5 * (q[0] * v[0] + q[1] * v[1])).abs() < 1e-9 * w);
    // Peak fields: every dielectric region reported, with a location inside the model.
    let regions = j["regions"].as_array().unwrap();
    assert_eq!(regions.len(), 2);
    // The air's peak is either the genuine one on the busbar's 4 mm fillet (centre
    // (36, −4) mm) or, depending on how deep the default grading goes, the mesh-dependent
    // value at a 270° corner of the neutral bar; the latter must then be flagged with
    // that singular point's label.
    let at = regions[0]["at_m"].as_array().unwrap().iter().map(|v| v.as_f64().unwrap()).collect::<Vec<_>>();
    let sp = j["mesh"]["singular_points"].as_array().unwrap();
    let s1 = sp.iter().position(|p| p["x"].as_f64() == Some(70.0) && p["y"].as_f64() == Some(10.0));
    assert!(s1.is_some(), "{sp:?}");
    let on_fillet = ((at[0] - 0.036).hypot(at[1] + 0.004) - 0.004).abs() < 1e-4;
    if on_fillet {
        assert!(regions[0]["near_singular_point"].is_null());
    } else {
        let k = sp
            .iter()
            .position(|p| {
                (p["x"].as_f64().unwrap() * 1e-3 - at[0]).hypot(p["y"].as_f64().unwrap() * 1e-3 - at[1]) < 1e-9
            })
            .unwrap_or_else(|| panic!("air peak at {at:?} is neither on the fillet nor at a singular point"));
        assert_eq!(regions[0]["near_singular_point"], format!("S{}", k + 1));
    }
    let vtu = String::from_utf8_lossy(&std::fs::read(out.join("fields.vtu")).unwrap()).into_owned();
    assert!(vtu.contains("Name=\"potential_V\"") && vtu.trim_end().ends_with("</VTKFile>"));
}

#[test]
fn solve_coaxial_gap_matches_the_closed_form() {
    // The spacer demo far from the spacer is a coaxial line: at the inner conductor
    // (r = 40 mm, outer 120 mm, 100 kV) E = V/(a·ln(b/a)) = 2.2756 kV/mm
    // (D. J. Griffiths, Introduction to Electrodynamics, 4th ed., 2017, §2.3). The gas peak
    // is on the conductor at the model's end, far from the spacer.
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("res");
    let o = run(&["solve", fixture("gis-spacer.toml").to_str().unwrap(), "--out", out.to_str().unwrap(), "--json"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let j: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let gas = j["regions"].as_array().unwrap().iter().find(|r| r["name"] == "gas").unwrap();
    let e = gas["e_max_kv_per_mm"].as_f64().unwrap();
    let exact = 100e3 / (0.04 * 3f64.ln()) / 1e6;
    assert!((e - exact).abs() < 1e-2 * exact, "{e} vs {exact}");
}

#[test]
fn no_potential_reference_is_a_user_error_and_writes_nothing() {
    let dir = tempfile::tempdir().unwrap();
    let model = dir.path().join("float.toml");
    std::fs::write(
        &model,
        "[[material]]\nname = \"air\"\npermittivity = 1.0\n\n[[conductor]]\nname = \"f\"\nfloating = true\n\n[[shape]]\nname = \"box\"\nmaterial = \"air\"\nrectangle = { corner = [0.0, 0.0], size = [10.0, 10.0] }\n\n[[shape]]\nname = \"c\"\nconductor = \"f\"\ncircle = { center = [5.0, 5.0], radius = 1.0 }\n",
    )
    .unwrap();
    let out = dir.path().join("res");
    let o = run(&["solve", model.to_str().unwrap(), "--out", out.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("no potential reference"), "{}", stderr(&o));
    assert!(!out.exists());
}

#[test]
fn interface_probe_obeys_the_interface_conditions() {
    // Across a charge-free dielectric interface the tangential field is continuous and the
    // normal flux density εEₙ is continuous (Griffiths 2017, §4.4.2). On the spacer surface
    // of the gas-insulated demo: Eₜ equal on both sides to round-off (both sides share the
    // edge's nodal values); εEₙ equal within 2 % except in the two elements at each triple
    // junction, where the field is singular.
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("res");
    let o = run(&["solve", fixture("gis-spacer.toml").to_str().unwrap(), "--out", out.to_str().unwrap()]);
    assert!(o.status.success(), "{}", stderr(&o));
    let text = std::fs::read_to_string(out.join("probe-spacer-surface.csv")).unwrap();
    let rows: Vec<Vec<String>> = text.lines().skip(1).map(|l| l.split(',').map(String::from).collect()).collect();
    assert!(rows.len() > 40);
    let eps = |name: &str| if name == "spacer" { 4.5 } else { 1.002 };
    let junctions = [[0.12, -0.01], [0.12, 0.01], [0.04, -0.02], [0.04, 0.02]];
    let mut checked = 0;
    for r in &rows {
        let f = |k: usize| r[k].parse::<f64>().unwrap();
        let (x, y) = (f(1), f(2));
        let (et1, et2) = (f(6), f(10));
        assert!((et1 - et2).abs() <= 1e-9 * et1.abs().max(1.0), "Et {et1} vs {et2}");
        let near = junctions.iter().any(|j| (j[0] - x).hypot(j[1] - y) < 3e-3);
        if !near {
            let (d1, d2) = (eps(&r[4]) * f(5), eps(&r[8]) * f(9));
            assert!((d1 - d2).abs() <= 0.02 * d1.abs().max(d2.abs()), "at ({x}, {y}): εEn {d1} vs {d2}");
            checked += 1;
        }
    }
    assert!(checked > 30);
    // The radial line through the gas follows the coaxial field E = V/(r·ln(b/a))
    // (Griffiths 2017, §2.3) within 2 % (the spacer 12 cm away perturbs it slightly).
    let text = std::fs::read_to_string(out.join("probe-radial-gas.csv")).unwrap();
    for l in text.lines().skip(1) {
        let c: Vec<f64> = l.split(',').filter_map(|t| t.parse().ok()).collect();
        let (x, e) = (c[1], c[6]);
        if x > 0.041 && x < 0.119 {
            let exact = 1e5 / (x * 3f64.ln());
            assert!((e - exact).abs() < 0.02 * exact, "r = {x}: {e} vs {exact}");
        }
    }
}

#[test]
fn open_boundary_demo_solves_and_keeps_the_exterior_out_of_the_peaks() {
    // In open space (3-D, axisymmetric) the flux ends partly at infinity: the charges of
    // the two electrodes do not cancel, and the capacitance matrix rows do not sum to zero
    // (the row sum is the capacitance to infinity, positive for the electrode).
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("res");
    let o = run(&["solve", fixture("grading-ring.toml").to_str().unwrap(), "--out", out.to_str().unwrap(), "--json"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let j: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let names: Vec<&str> = j["regions"].as_array().unwrap().iter().map(|r| r["name"].as_str().unwrap()).collect();
    assert_eq!(names, ["air", "post"]);
    let c = &j["capacitance_matrix_f"]["values"];
    let row0 = c[0][0].as_f64().unwrap() + c[0][1].as_f64().unwrap();
    assert!(row0 > 0.0 && (c[0][1].as_f64().unwrap() - c[1][0].as_f64().unwrap()).abs() < 1e-9 * row0);
}

#[test]
fn a_conductor_touching_the_held_outer_boundary_at_another_potential_is_refused() {
    // A busbar resting on the earthed enclosure wall: at 1 kV it would short the wall (the
    // shared nodes cannot hold both potentials), so solve and check refuse it, naming the
    // conductor, the place and the fix; at 0 V, or on a zero-flux (symmetry) boundary, it
    // is a legitimate model. A floating conductor touching the wall is refused as well.
    // `mesh` refuses it too, before writing anything.
    let model = |potential: &str, outer: &str| {
        format!(
            r#"[model]
symmetry = "planar"
length_unit = "mm"

[[material]]
name = "air"
permittivity = 1.0

[[conductor]]
name = "bar"
{potential}

[[conductor]]
name = "rod"
potential_v = 500.0

[[shape]]
name = "box"
material = "air"
rectangle = {{ corner = [0.0, 0.0], size = [100.0, 100.0] }}

[[shape]]
name = "bar"
conductor = "bar"
rectangle = {{ corner = [0.0, 40.0], size = [20.0, 20.0] }}

[[shape]]
name = "rod"
conductor = "rod"
circle = {{ center = [60.0, 50.0], radius = 5.0 }}

[boundary]
{outer}
"#
        )
    };
    let earthed = "outer = \"potential\"\npotential_v = 0.0";
    let attempt = |text: String, command: &str| {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("m.toml");
        std::fs::write(&path, text).unwrap();
        let out = dir.path().join("out");
        let o = run(&[command, path.to_str().unwrap(), "--out", out.to_str().unwrap()]);
        (o.status.code(), stderr(&o), out.join("results.json").exists())
    };
    for command in ["mesh", "solve", "check"] {
        let (code, e, written) = attempt(model("potential_v = 1000.0", earthed), command);
        assert_eq!(code, Some(2), "{command}: {e}");
        assert!(!written);
        assert!(e.contains("conductor 'bar' touches the outer boundary") && e.contains("held at 0 V"), "{e}");
        assert!(e.contains("is at 1000 V") && e.contains("zero_flux") && e.contains("m.toml:"), "{e}");
    }
    let (code, e, _) = attempt(model("floating = true", earthed), "solve");
    assert_eq!(code, Some(2), "{e}");
    assert!(e.contains("conductor 'bar'") && e.contains("floats"), "{e}");
    for (potential, outer) in [("potential_v = 0.0", earthed), ("potential_v = 1000.0", "outer = \"zero_flux\"")] {
        let (code, e, written) = attempt(model(potential, outer), "solve");
        assert_eq!(code, Some(0), "{potential}, {outer}: {e}");
        assert!(written);
    }
}
