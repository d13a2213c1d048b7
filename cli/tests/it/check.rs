//! `fieldgrade check` end to end: the adaptive loop converges on a closed-form case, the
//! convergence and singular-point sections are written, and bad arguments fail cleanly.

use crate::common::{fixture, run, stderr, stdout};

/// Coaxial cylinders in air, a = 10 mm at 1 kV, b = 30 mm earthed (outer boundary).
const COAX: &str = r#"
[model]
symmetry = "planar"
length_unit = "mm"

[[material]]
name = "air"
permittivity = 1.0

[[conductor]]
name = "core"
potential_v = 1000.0

[[shape]]
name = "gap"
material = "air"
circle = { center = [0.0, 0.0], radius = 30.0 }

[[shape]]
name = "core"
conductor = "core"
circle = { center = [0.0, 0.0], radius = 10.0 }

[boundary]
outer = "potential"
potential_v = 0.0

[mesh]
max_size = 6.0
"#;

fn json(path: &std::path::Path) -> serde_json::Value {
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

#[test]
fn check_converges_on_the_coaxial_line() {
    // C' = 2πε₀/ln(b/a) per metre (D. J. Griffiths, Introduction to Electrodynamics, 4th
    // ed., 2017, §2.5): the charge at 1 kV converges well inside the tolerance, and the
    // estimated energy error bounds its error (the relative capacitance error equals the
    // squared relative energy-norm error).
    let dir = tempfile::tempdir().unwrap();
    let model = dir.path().join("coax.toml");
    std::fs::write(&model, COAX).unwrap();
    let out = dir.path().join("res");
    let o = run(&["check", model.to_str().unwrap(), "--out", out.to_str().unwrap(), "--tol", "0.2%"]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(stdout(&o).contains("converged after"), "{}", stdout(&o));
    let j = json(&out.join("results.json"));
    assert_eq!(j["adaptivity"]["converged"], true);
    let meshes = j["adaptivity"]["meshes"].as_array().unwrap();
    assert!(meshes.len() >= 3);
    let exact = 2.0 * std::f64::consts::PI * 8.8541878128e-12 / 3f64.ln() * 1000.0;
    let q = j["conductors"][0]["charge_c"].as_f64().unwrap();
    let err = (q - exact).abs() / exact;
    let est = j["adaptivity"]["estimated_energy_error"].as_f64().unwrap();
    eprintln!("coax check: charge error {err:.2e}, estimated energy error {est:.2e}, {} meshes", meshes.len());
    assert!(err < 1e-4, "charge error {err}");
    assert!(err < 3.0 * est + 1e-7, "error {err} vs estimate {est}");
    // The study of the charge: a sequence per mesh, relative changes below the tolerance.
    let conv = j["convergence"].as_array().unwrap();
    let charge = conv.iter().find(|c| c["quantity"] == "charge of core").expect("the charge is watched");
    let seq = charge["sequence"].as_array().unwrap();
    assert_eq!(seq.len(), meshes.len());
    assert!(seq.last().unwrap()["relative_change"].as_f64().unwrap() <= 0.002);
    let csv = std::fs::read_to_string(out.join("convergence.csv")).unwrap();
    assert!(csv.starts_with(
        "quantity,unit,mesh,unknowns,value,relative_change,observed_order,own_estimate,error_bar,status\n"
    ));
    // The charge's printed bar holds its true error (and is not absurdly loose).
    let bar = &charge["error_bar"];
    assert_eq!(bar["status"], "converged", "{bar}");
    let abs = bar["absolute"].as_f64().unwrap();
    eprintln!("coax check: charge bar {abs:.3e} for a true error {:.3e}", (q - exact).abs());
    assert!(abs >= (q - exact).abs() && abs <= 1e-3 * exact, "bar {abs:e} for error {:e}", (q - exact).abs());
    assert_eq!(csv.lines().filter(|l| l.starts_with("\"charge of core\"")).count(), seq.len());
}

#[test]
fn check_reports_the_singular_corners_of_the_l_electrode() {
    // The L electrode's five convex corners face air over 3π/2: λ = 2/3 (π/θ₀, Jackson,
    // Classical Electrodynamics, 3rd ed., 1999, §2.11); each gets a coefficient from the
    // dual singular function that agrees with the ring fit, a stress radius against the
    // air's allowable stress, and the advice to model the real radius.
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("res");
    let o = run(&["check", fixture("l-electrode.toml").to_str().unwrap(), "--out", out.to_str().unwrap()]);
    assert!(o.status.success(), "{}", stderr(&o));
    let j = json(&out.join("results.json"));
    let sp = j["singular_points"].as_array().unwrap();
    assert!(!sp.is_empty());
    for p in sp.iter().filter(|p| p["field_singular"] == true) {
        assert!((p["lambda"].as_f64().unwrap() - 2.0 / 3.0).abs() < 1e-9);
        let a = p["coefficient"].as_f64().expect("a coefficient");
        let ring = p["coefficient_ring_fit"].as_f64().expect("a ring fit");
        assert!((a - ring).abs() < 0.05 * a.abs(), "dual {a} vs ring {ring}");
        assert!(p["radius_above_allowable"].as_f64().unwrap() > 0.0);
        assert!(p["note"].as_str().unwrap().contains("real edge radius"));
    }
    // The watched peak field is taken away from the corners, so it converges.
    let conv = j["convergence"].as_array().unwrap();
    let peak = conv.iter().find(|c| c["quantity"].as_str().unwrap().starts_with("peak field in box")).unwrap();
    assert!(peak["sequence"].as_array().unwrap().last().unwrap()["relative_change"].as_f64().unwrap() <= 0.005);
}

#[test]
fn a_bad_tolerance_is_a_clean_error() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("res");
    for bad in ["fast", "0%", "80%", "-1"] {
        let o = run(&[
            "check",
            fixture("l-electrode.toml").to_str().unwrap(),
            "--out",
            out.to_str().unwrap(),
            &format!("--tol={bad}"),
        ]);
        assert_eq!(o.status.code(), Some(2), "{bad}: {}", stderr(&o));
        assert!(stderr(&o).contains("tol"), "{}", stderr(&o));
        assert!(!out.exists(), "no output for a bad argument");
    }
    // A negative tolerance written as a separate word is the tolerance's error, not taken
    // for an unknown flag.
    let o =
        run(&["check", fixture("l-electrode.toml").to_str().unwrap(), "--out", out.to_str().unwrap(), "--tol", "-1%"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("tolerance -1% is out of range"), "{}", stderr(&o));
}

#[test]
fn check_exit_codes_tell_converged_from_not_converged() {
    // docs/results-format.md: 0 converged, 3 not converged within the budget (everything
    // is written, with each quantity's verdict), 2 bad input.
    let dir = tempfile::tempdir().unwrap();
    let model = dir.path().join("coax.toml");
    std::fs::write(&model, COAX).unwrap();
    let out = dir.path().join("res");
    let o = run(&["check", model.to_str().unwrap(), "--out", out.to_str().unwrap(), "--max-meshes", "2"]);
    assert_eq!(o.status.code(), Some(3), "{}", stderr(&o));
    assert!(stdout(&o).contains("NOT CONVERGED"), "{}", stdout(&o));
    let j = json(&out.join("results.json"));
    assert_eq!(j["adaptivity"]["converged"], false);
    for q in j["convergence"].as_array().unwrap() {
        assert_eq!(q["error_bar"]["status"], "not converged", "{q}");
        assert!(q["error_bar"]["reason"].as_str().unwrap().contains("three"), "{q}");
    }
    let o = run(&["check", model.to_str().unwrap(), "--out", out.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let bad = dir.path().join("bad.toml");
    std::fs::write(&bad, COAX.replace("potential_v = 1000.0", "potential_v = \"high\"")).unwrap();
    let o = run(&["check", bad.to_str().unwrap(), "--out", dir.path().join("other").to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
}

#[test]
fn the_exclusion_radius_is_the_models_and_the_same_on_every_mesh() {
    // docs/model-format.md, [check] singular_exclusion_radius: the disc left out around
    // each field-singular point is the model's (5 mm here), not the default (2 % of the
    // 283 mm diagonal); a bad value is a located error.
    let dir = tempfile::tempdir().unwrap();
    let text = std::fs::read_to_string(fixture("l-electrode.toml")).unwrap();
    let model = dir.path().join("l.toml");
    std::fs::write(&model, format!("{text}\n[check]\nsingular_exclusion_radius = 5.0\n")).unwrap();
    let out = dir.path().join("res");
    let o = run(&["check", model.to_str().unwrap(), "--out", out.to_str().unwrap()]);
    assert!(o.status.code() == Some(0) || o.status.code() == Some(3), "{}", stderr(&o));
    let j = json(&out.join("results.json"));
    let radii = j["adaptivity"]["singular_exclusion_radius_m"].as_array().unwrap();
    assert_eq!(radii.len(), 5);
    assert!(radii.iter().all(|r| (r.as_f64().unwrap() - 5e-3).abs() < 1e-15), "{radii:?}");
    std::fs::write(&model, format!("{text}\n[check]\nsingular_exclusion_radius = -1.0\n")).unwrap();
    let o = run(&["check", model.to_str().unwrap(), "--out", dir.path().join("bad").to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("check.singular_exclusion_radius"), "{}", stderr(&o));
}
