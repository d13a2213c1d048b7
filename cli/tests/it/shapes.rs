//! `sector` and `half_disc` shapes: models of textbook cases drawn with them solve to the
//! closed forms, and their misuse gives located errors.

use crate::common::{run, stderr};
use serde_json::Value;

/// `solve` on `model`: results.json.
fn solved(model: &str) -> Value {
    crate::common::run_model(model, "solve", &[]).1
}

const HEAD: &str = r#"
[[material]]
name = "air"
permittivity = 1.0

[[conductor]]
name = "hv"
potential_v = 1000.0
"#;

#[test]
fn concentric_spheres_from_half_discs() {
    // Axisymmetric: a sphere of radius a = 10 mm at 1 kV inside an earthed sphere of
    // radius b = 30 mm, both drawn as half discs on the axis. C = 4πε₀ab/(b − a)
    // (D. J. Griffiths, Introduction to Electrodynamics, 4th ed., 2017, §2.5, the
    // concentric spherical shells example — its number recalled from memory as 2.11; the
    // result follows from Gauss's law).
    let model = format!(
        r#"[model]
symmetry = "axisymmetric"
length_unit = "mm"
{HEAD}
[[shape]]
name = "gap"
material = "air"
half_disc = {{ center = [0.0, 0.0], radius = 30.0 }}

[[shape]]
name = "ball"
conductor = "hv"
half_disc = {{ center = [0.0, 0.0], radius = 10.0, side = "+x" }}

[boundary]
outer = "potential"
potential_v = 0.0

[mesh]
order = 2
"#
    );
    let r = solved(&model);
    let exact = 4.0 * std::f64::consts::PI * engine::EPSILON_0 * 0.01 * 0.03 / 0.02 * 1000.0;
    let q = r["conductors"][0]["charge_c"].as_f64().unwrap();
    assert!((q - exact).abs() < 1e-3 * exact, "{q:e} vs {exact:e}");
}

#[test]
fn coaxial_quarter_from_sectors() {
    // Planar: a quarter of a coaxial line, core radius a = 10 mm at 1 kV, earthed sheath
    // from b = 30 mm, the cut faces zero-flux symmetry planes. C' = (π/2)·ε₀ / ln(b/a), a
    // quarter of 2πε₀ / ln(b/a) (Griffiths 2017, problem 2.43).
    let model = format!(
        r#"[model]
symmetry = "planar"
length_unit = "mm"
{HEAD}
[[conductor]]
name = "sheath"
potential_v = 0.0

[[shape]]
name = "gap"
material = "air"
sector = {{ center = [0.0, 0.0], radius = 40.0, from_deg = 0.0, to_deg = 90.0 }}

[[shape]]
name = "core"
conductor = "hv"
sector = {{ center = [0.0, 0.0], radius = 10.0, from_deg = 0.0, to_deg = 90.0 }}

[[shape]]
name = "sheath"
conductor = "sheath"
sector = {{ center = [0.0, 0.0], radius = 40.0, inner_radius = 30.0, from_deg = 0.0, to_deg = 90.0 }}

[mesh]
order = 2
"#
    );
    let r = solved(&model);
    let exact = 0.5 * std::f64::consts::PI * engine::EPSILON_0 / 3f64.ln() * 1000.0;
    let q = r["conductors"][0]["charge_c"].as_f64().unwrap();
    assert!((q - exact).abs() < 1e-3 * exact, "{q:e} vs {exact:e}");
}

#[test]
fn misused_sectors_are_located_errors() {
    let base = |shape: &str| {
        format!(
            "[model]\nsymmetry = \"planar\"\nlength_unit = \"mm\"\n{HEAD}\n[[shape]]\nname = \"gap\"\nmaterial = \"air\"\n{shape}\n"
        )
    };
    for (shape, want) in [
        ("sector = { center = [0.0, 0.0], radius = 5.0, from_deg = 0.0, to_deg = 360.0 }", "less than 360°"),
        ("sector = { center = [0.0, 0.0], radius = 5.0, from_deg = 90.0, to_deg = 10.0 }", "more than 0°"),
        (
            "sector = { center = [0.0, 0.0], radius = 5.0, inner_radius = 5.0, from_deg = 0.0, to_deg = 90.0 }",
            "less than the radius",
        ),
        ("sector = { center = [0.0, 0.0], radius = -5.0, from_deg = 0.0, to_deg = 90.0 }", "greater than zero"),
        ("half_disc = { center = [0.0, 0.0], radius = 5.0, side = \"left\" }", "unknown side 'left'"),
        (
            "half_disc = { center = [0.0, 0.0], radius = 5.0 }\ncircle = { center = [0.0, 0.0], radius = 1.0 }",
            "exactly one of",
        ),
    ] {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("m.toml");
        std::fs::write(&path, base(shape)).unwrap();
        let o = run(&["mesh", path.to_str().unwrap()]);
        assert_eq!(o.status.code(), Some(2), "{shape}: {}", stderr(&o));
        let e = stderr(&o);
        assert!(e.contains(want) && e.contains("m.toml:"), "{shape}: {e}");
    }
}
