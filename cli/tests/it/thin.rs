//! `[[thin_electrode]]`: conductors of zero thickness, against closed forms, and their
//! misuse.

use crate::common::{run, stderr};
use serde_json::Value;
use std::f64::consts::PI;

const EPS0: f64 = 8.8541878128e-12;

fn results(text: &str, command: &str, extra: &[&str]) -> (Value, String) {
    let (_dir, r, out) = crate::common::run_model(text, command, extra);
    (r, out)
}

/// The absolute error bar `check` gives the charge of `conductor`.
fn charge_bar(r: &Value, conductor: &str) -> f64 {
    let watched = r["convergence"].as_array().unwrap();
    let q =
        watched.iter().find(|q| q["quantity"] == format!("charge of {conductor}").as_str()).expect("charge watched");
    q["error_bar"]["absolute"].as_f64().unwrap()
}

/// K(k), the complete elliptic integral of the first kind (modulus k), by the
/// arithmetic–geometric mean: K = π / (2·AGM(1, √(1 − k²))) (Abramowitz & Stegun 1964,
/// 17.6).
fn ellip_k(k: f64) -> f64 {
    let (mut a, mut b) = (1.0, (1.0 - k * k).sqrt());
    for _ in 0..40 {
        (a, b) = ((a + b) / 2.0, (a * b).sqrt());
    }
    PI / (2.0 * a)
}

/// A strip 10 mm wide midway between earthed planes 10 mm apart, 50 mm of channel beyond
/// each edge (the field there decays like e^(−πx/b): 1.5e-7 at the ends).
const STRIP: &str = r#"
[model]
symmetry = "planar"
length_unit = "mm"

[[material]]
name = "air"
permittivity = 1.0

[[conductor]]
name = "strip"
potential_v = 1000.0

[[shape]]
name = "channel"
material = "air"
rectangle = { corner = [-55.0, -5.0], size = [110.0, 10.0] }

[[thin_electrode]]
name = "foil"
conductor = "strip"
along = [[-5.0, 0.0], [5.0, 0.0]]

[boundary]
outer = "potential"
potential_v = 0.0

[mesh]
order = 2
"#;

#[test]
fn a_thin_strip_between_earthed_planes_has_the_conformal_map_capacitance() {
    // The zero-thickness strip line: C = 4ε·K(k′)/K(k), k = sech(πW/(2b)), W the strip's
    // width and b the planes' spacing (S. B. Cohn, "Characteristic impedance of the
    // shielded-strip transmission line", IRE Trans. MTT 2 (1954) 52–57, by conformal
    // mapping; Z₀ = (30π/√εᵣ)·K(k)/K(k′) with C = √εᵣ/(c·Z₀)).
    let (r, text) = results(STRIP, "check", &["--tol", "0.1%"]);
    assert_eq!(r["adaptivity"]["converged"], true, "{}", r["adaptivity"]["reason"]);
    let k = 1.0 / (PI * 10.0 / (2.0 * 10.0)).cosh();
    let exact = 4.0 * EPS0 * ellip_k((1.0 - k * k).sqrt()) / ellip_k(k);
    let c = r["capacitance_matrix_f"]["values"][0][0].as_f64().unwrap();
    let bar = charge_bar(&r, "strip") / 1000.0;
    assert!((c - exact).abs() <= bar.max(1e-6 * exact), "C = {c} ± {bar} vs {exact}");
    assert!(bar <= 1e-3 * exact);
    // Both ends found: square-root edges (λ = ½), named as thin electrode edges.
    let sp = r["singular_points"].as_array().unwrap();
    assert_eq!(sp.len(), 2, "{sp:?}");
    for s in sp {
        assert!((s["lambda"].as_f64().unwrap() - 0.5).abs() < 1e-9);
        assert_eq!(s["kind"], "thin electrode edge");
    }
    assert!(text.contains("thin electrode edge"));
}

/// A semi-infinite plate at 1 kV along y = 0, x < 0, midway between earthed planes at
/// y = ±10 mm (the channel's far left end is zero flux, where the field is uniform to
/// e^(−5π)).
const HALF_PLANE: &str = r#"
[model]
symmetry = "planar"
length_unit = "mm"

[[material]]
name = "air"
permittivity = 1.0

[[conductor]]
name = "plate"
potential_v = 1000.0

[[shape]]
name = "channel"
material = "air"
rectangle = { corner = [-50.0, -10.0], size = [100.0, 20.0] }

[[thin_electrode]]
name = "plate"
conductor = "plate"
along = [[-50.0, 0.0], [0.0, 0.0]]

[[boundary.piece]]
name = "top"
along = [[-50.0, 10.0], [50.0, 10.0]]
potential_v = 0.0

[[boundary.piece]]
name = "bottom"
along = [[-50.0, -10.0], [50.0, -10.0]]
potential_v = 0.0

[mesh]
order = 2

[[point]]
name = "ahead"
at = [5.0, 0.0]

[[point]]
name = "above"
at = [-5.0, 5.0]
"#;

/// The semi-infinite plate's exact V and |E| at (x, y) mm: each half of the channel is the
/// half-covered slab of `pieces.rs` (its conformal map, Smythe 1968, ch. 4) with the plate
/// as the electrode, at y′ = d − |y|.
fn half_plane_exact(x: f64, y: f64) -> (f64, f64) {
    crate::pieces::slab_exact(x, 10.0 - y.abs())
}

#[test]
fn a_thin_plates_edge_has_the_square_root_term_of_the_half_plane() {
    // Near the edge η ≈ i·√(πr/d) ahead of it, so V ≈ V₀ − (2V₀/π)·√(πr/d)·sin(φ/2)
    // with φ from the plate: λ = ½ and A = −2V₀/√(πd) (the square-root edge of a
    // conducting half-plane; Jackson 1999, §2.11, θ₀ = 2π), here −11 283.79 V/m^½.
    let (r, _) = results(HALF_PLANE, "check", &["--tol", "0.1%"]);
    assert_eq!(r["adaptivity"]["converged"], true, "{}", r["adaptivity"]["reason"]);
    let sp = r["singular_points"].as_array().unwrap();
    let edge = sp.iter().find(|s| s["at"][0].as_f64() == Some(0.0)).expect("the plate's edge");
    assert!((edge["lambda"].as_f64().unwrap() - 0.5).abs() < 1e-9, "{edge}");
    let exact = -2.0 * 1000.0 / (PI * 0.010).sqrt();
    let a = edge["coefficient"].as_f64().unwrap();
    let bar = edge["coefficient_error_bar"]["absolute"].as_f64().unwrap();
    assert!((a - exact).abs() <= bar.max(1e-6 * exact.abs()), "A = {a} ± {bar} vs {exact}");
    assert!(bar <= 1e-3 * exact.abs());
    // |E| ≈ λ·|A|·r^(λ−1): the factor is λ for one dielectric.
    assert!((edge["field_factor"].as_f64().unwrap() - 0.5).abs() < 1e-9);
    // The ring fit agrees (a cross-check, not a bound).
    assert!((edge["coefficient_ring_fit"].as_f64().unwrap() / exact - 1.0).abs() < 1e-3);
    // The plate's far end rests on the zero-flux side: λ = 1 there, not singular.
    assert_eq!(sp.len(), 1, "{sp:?}");
    // Point values on the axis ahead of the edge and above the plate.
    for (name, x, y) in [("ahead", 5.0, 0.0), ("above", -5.0, 5.0)] {
        let p = r["points"].as_array().unwrap().iter().find(|p| p["name"] == name).unwrap();
        let s = &p["sides"][0];
        let (v, e) = half_plane_exact(x, y);
        let (vh, vb) = (s["potential_v"].as_f64().unwrap(), s["potential_error_bar_v"].as_f64().unwrap());
        let (eh, eb) = (s["e_abs_v_per_m"].as_f64().unwrap(), s["e_error_bar_v_per_m"].as_f64().unwrap());
        assert!((vh - v).abs() <= vb.max(1e-6 * 1000.0), "{name}: V {vh} ± {vb} vs {v}");
        assert!((eh - e).abs() <= eb.max(1e-6 * e), "{name}: |E| {eh} ± {eb} vs {e}");
    }
}

#[test]
fn a_thin_coplanar_pair_has_the_elliptic_integral_capacitance() {
    // Strips 2 < |x| < 6 mm on y = 0 at ±500 V in open space: C = ε·K(k′)/K(k), k = a/b
    // (the Schwarz–Christoffel map w = ∫dz/√((z² − a²)(z² − b²)) takes the upper
    // half-plane onto a rectangle with the strips on opposite sides, K(k′)/b long and
    // 2K(k)/b apart; both half-planes give twice ε·K(k′)/(2K(k)); e.g. K. C. Gupta et al.,
    // Microstrip Lines and Slotlines, 2nd ed., Artech House 1996, coplanar strips).
    // With ±V/2 the charges are ±C·V and infinity is at 0 V by symmetry.
    let model = r#"
[model]
symmetry = "planar"
length_unit = "mm"

[[material]]
name = "air"
permittivity = 1.0

[[conductor]]
name = "plus"
potential_v = 500.0

[[conductor]]
name = "minus"
potential_v = -500.0

[[shape]]
name = "space"
material = "air"
circle = { center = [0.0, 0.0], radius = 60.0 }

[[thin_electrode]]
name = "right"
conductor = "plus"
along = [[2.0, 0.0], [6.0, 0.0]]

[[thin_electrode]]
name = "left"
conductor = "minus"
along = [[-6.0, 0.0], [-2.0, 0.0]]

[boundary]
outer = "open"

[mesh]
order = 2
"#;
    let (r, _) = results(model, "check", &["--tol", "0.1%"]);
    assert_eq!(r["adaptivity"]["converged"], true, "{}", r["adaptivity"]["reason"]);
    let k: f64 = 2.0 / 6.0;
    let exact = EPS0 * ellip_k((1.0 - k * k).sqrt()) / ellip_k(k) * 1000.0;
    let q = r["conductors"][0]["charge_c"].as_f64().unwrap();
    let bar = charge_bar(&r, "plus");
    assert!((q - exact).abs() <= bar.max(1e-6 * exact), "Q = {q} ± {bar} vs {exact}");
    assert!((r["conductors"][1]["charge_c"].as_f64().unwrap() + q).abs() < 1e-6 * q);
    assert_eq!(r["singular_points"].as_array().unwrap().len(), 4);
}

/// A 10 mm gap between plates at 0 and 1 kV (zero-flux sides), two layers, and a floating
/// foil along an equipotential.
fn capacitor(foil_y: f64, two_layers: bool) -> String {
    let layer = if two_layers {
        "\n[[shape]]\nname = \"upper\"\nmaterial = \"resin\"\nrectangle = { corner = [0.0, 4.0], size = [40.0, 6.0] }\n"
    } else {
        ""
    };
    format!(
        r#"
[model]
symmetry = "planar"
length_unit = "mm"

[[material]]
name = "oil"
permittivity = 2.0

[[material]]
name = "resin"
permittivity = 5.0

[[conductor]]
name = "foil"
floating = true

[[shape]]
name = "gap"
material = "oil"
rectangle = {{ corner = [0.0, 0.0], size = [40.0, 10.0] }}
{layer}
[[thin_electrode]]
name = "foil"
conductor = "foil"
along = [[10.0, {foil_y:.1}], [20.0, {foil_y:.1}], [30.0, {foil_y:.1}]]

[[boundary.piece]]
name = "hv"
along = [[0.0, 10.0], [40.0, 10.0]]
potential_v = 1000.0

[[boundary.piece]]
name = "earth"
along = [[0.0, 0.0], [40.0, 0.0]]
potential_v = 0.0

[mesh]
order = 1
max_size = 2.0
"#
    )
}

#[test]
fn a_floating_foil_on_an_equipotential_takes_its_potential_and_leaves_the_field_alone() {
    // A foil along an equipotential of a uniform field disturbs nothing: the linear field is
    // in the finite-element space, so the solution is exact (a patch test): the foil floats
    // at the potential of its height and carries no charge. In one dielectric V = V₀·y/d;
    // along the interface of two layers in series, V = V₀·(y/ε₁)/(y/ε₁ + (d − y)/ε₂)
    // (series capacitors; any textbook, e.g. Griffiths 2017, §4.4).
    for (two, y, want) in [(false, 3.0, 300.0), (true, 4.0, 1000.0 * (4.0 / 2.0) / (4.0 / 2.0 + 6.0 / 5.0))] {
        let (r, _) = results(&capacitor(y, two), "solve", &[]);
        let foil = &r["conductors"][0];
        assert_eq!(foil["floating"], true);
        let v = foil["potential_v"].as_f64().unwrap();
        assert!((v - want).abs() < 1e-8 * 1000.0, "two layers {two}: {v} vs {want}");
        // Its ends are square-root edges all the same (listed, graded).
        let sp = r["mesh"]["singular_points"].as_array().unwrap();
        assert_eq!(sp.iter().filter(|s| s["kind"] == "thin electrode edge").count(), 2, "{sp:?}");
        let e = r["regions"][0]["e_max_v_per_m"].as_f64().unwrap();
        let uniform = if two { want / 0.004 } else { 1e5 };
        assert!((e - uniform).abs() < 1e-7 * uniform, "two layers {two}: {e} vs {uniform}");
    }
}

#[test]
fn misused_thin_electrodes_are_located_errors() {
    let bad = |from: &str, to: &str, want: &str| {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("m.toml");
        let text = capacitor(3.0, false);
        assert!(text.contains(from), "{from}");
        std::fs::write(&path, text.replace(from, to)).unwrap();
        let o = run(&["mesh", path.to_str().unwrap(), "--out", dir.path().join("o").to_str().unwrap()]);
        let e = stderr(&o);
        assert_eq!(o.status.code(), Some(2), "{to}: {e}");
        // Located: a line of the file, or (for a contact) the tables involved.
        assert!(e.contains(want) && (e.contains("m.toml:") || e.contains("m.toml (key")), "{to}: {e}");
        assert!(!e.contains("panicked"), "{e}");
    };
    bad("[30.0, 3.0]]", "[50.0, 3.0]]", "reaches outside the domain");
    bad("along = [[10.0, 3.0], [20.0, 3.0], [30.0, 3.0]]", "along = [[10.0, 3.0]]", "at least two points");
    bad("[20.0, 3.0], [30.0", "[10.0, 3.0], [30.0", "repeats the one before");
    bad("along = [[10.0, 3.0], [20.0, 3.0], [30.0, 3.0]]", "", "exactly one of along or arc");
    bad("conductor = \"foil\"\nalong", "conductor = \"sheet\"\nalong", "unknown conductor 'sheet'");
    bad("name = \"foil\"\nconductor", "name = \"gap\"\nconductor", "used twice");
    bad(
        "along = [[10.0, 3.0], [20.0, 3.0], [30.0, 3.0]]",
        "along = [[0.0, 0.0], [0.0, 5.0]]",
        "runs along the outer boundary",
    );
    // On the held boundary at another potential: the contact check.
    bad(
        "along = [[10.0, 3.0], [20.0, 3.0], [30.0, 3.0]]",
        "along = [[10.0, 0.0], [10.0, 5.0]]",
        "touches the outer boundary",
    );
}

#[test]
fn a_thin_disc_in_open_space_has_capacitance_eight_epsilon_a() {
    // A conducting disc of radius a and zero thickness, axisymmetric, in unbounded space:
    // C = 8ε₀a (the oblate-spheroid limit; W. R. Smythe, Static and Dynamic Electricity,
    // 3rd ed., 1968, §5.02; J. D. Jackson, Classical Electrodynamics, 3rd ed., 1999, §3.13).
    // The disc meets the axis at a right angle (a cone of half-angle π/2: ν = 1, smooth)
    // and its rim is a square-root edge.
    let model = r#"
[model]
symmetry = "axisymmetric"
length_unit = "mm"

[[material]]
name = "air"
permittivity = 1.0

[[conductor]]
name = "disc"
potential_v = 1000.0

[[shape]]
name = "space"
material = "air"
half_disc = { center = [0.0, 0.0], radius = 60.0 }

[[thin_electrode]]
name = "disc"
conductor = "disc"
along = [[0.0, 0.0], [10.0, 0.0]]

[boundary]
outer = "open"

[mesh]
order = 2
"#;
    let (r, _) = results(model, "check", &["--tol", "0.1%"]);
    assert_eq!(r["adaptivity"]["converged"], true, "{}", r["adaptivity"]["reason"]);
    let exact = 8.0 * EPS0 * 0.010 * 1000.0;
    let q = r["conductors"][0]["charge_c"].as_f64().unwrap();
    let bar = charge_bar(&r, "disc");
    assert!((q - exact).abs() <= bar.max(1e-6 * exact), "Q = {q} ± {bar} vs {exact}");
    let sp = r["singular_points"].as_array().unwrap();
    assert_eq!(sp.len(), 1, "{sp:?}");
    assert_eq!(sp[0]["at"][0].as_f64(), Some(10.0), "model units");
}

#[test]
fn a_floating_cylindrical_foil_of_two_arcs_floats_at_the_coaxial_potential() {
    // A closed foil at r = 20 mm (two arc electrodes of one floating conductor) between a
    // core of 10 mm at 1 kV and an earthed screen of 30 mm lies on an equipotential of the
    // coaxial field: it floats at V·ln(b/r)/ln(b/a) and the core's charge stays
    // 2πε·V/ln(b/a) (Griffiths 2017, problem 2.43).
    let model = r#"
[model]
symmetry = "planar"
length_unit = "mm"

[[material]]
name = "oil"
permittivity = 2.2

[[conductor]]
name = "core"
potential_v = 1000.0

[[conductor]]
name = "screen"
floating = true

[[shape]]
name = "gap"
material = "oil"
circle = { center = [0.0, 0.0], radius = 30.0 }

[[shape]]
name = "core"
conductor = "core"
circle = { center = [0.0, 0.0], radius = 10.0 }

[[thin_electrode]]
name = "upper"
conductor = "screen"
arc = { center = [0.0, 0.0], radius = 20.0, from_deg = 0.0, to_deg = 180.0 }

[[thin_electrode]]
name = "lower"
conductor = "screen"
arc = { center = [0.0, 0.0], radius = 20.0, from_deg = 180.0, to_deg = 360.0 }

[boundary]
outer = "potential"
potential_v = 0.0

[mesh]
order = 2
"#;
    let (r, _) = results(model, "check", &["--tol", "0.1%"]);
    assert_eq!(r["adaptivity"]["converged"], true, "{}", r["adaptivity"]["reason"]);
    let v = r["conductors"][1]["potential_v"].as_f64().unwrap();
    let want = 1000.0 * (1.5f64).ln() / 3f64.ln();
    assert!((v - want).abs() < 1e-5 * 1000.0, "{v} vs {want}");
    let q = r["conductors"][0]["charge_c"].as_f64().unwrap();
    let exact = 2.0 * PI * EPS0 * 2.2 * 1000.0 / 3f64.ln();
    let bar = charge_bar(&r, "core");
    assert!((q - exact).abs() <= bar.max(1e-6 * exact), "Q = {q} ± {bar} vs {exact}");
    assert!(r["singular_points"].as_array().unwrap().is_empty());
}
