//! Singular points found on whole geometries, against closed-form exponents.

use crate::common::{conductor, dielectric, planar};
use mesher::{generate, wedge_exponent, Outline, RefineParams, Sector, SingularKind, Wall};
use std::f64::consts::PI;

#[test]
fn conductor_corners_and_triple_junctions() {
    // A sharp electrode resting on a dielectric block whose top face is wider than the
    // electrode, in air. Corners of the electrode in air: θ₀ = 270°, λ = 2/3 (Jackson §2.11).
    // Where the electrode's bottom corners stand on the block's top face the dielectric run
    // is 90° of air + 180° of solid.
    let geo = planar(
        vec![
            dielectric("air", Outline::rectangle("air", [-2.0, -2.0], [4.0, 4.0], 0.0).unwrap(), 1.0),
            dielectric("block", Outline::rectangle("block", [-1.0, -1.0], [2.0, 1.0], 0.0).unwrap(), 4.0),
            conductor("hv", Outline::rectangle("hv", [-0.5, 0.0], [1.0, 0.5], 0.0).unwrap(), 0),
        ],
        &["hv"],
    );
    let m = generate(&geo, &RefineParams::new().with_order(1).with_max_size_m(0.2)).unwrap().mesh;
    let at =
        |x: f64, y: f64| m.singular_points.iter().find(|s| (s.at[0] - x).abs() < 1e-12 && (s.at[1] - y).abs() < 1e-12);
    for (x, y) in [(-0.5, 0.5), (0.5, 0.5)] {
        let s = at(x, y).expect("top corner");
        assert_eq!(s.kind, SingularKind::ConductorCorner);
        assert!((s.lambda - 2.0 / 3.0).abs() < 1e-12);
    }
    for x in [-0.5, 0.5] {
        let s = at(x, 0.0).expect("triple junction");
        assert_eq!(s.kind, SingularKind::TripleJunction);
        // Independent check of the matching equation for sectors (air 90°, solid 180°)
        // between two conductor walls, derived by hand: with Φ₁ = sin λφ in the air and
        // Φ₂ = b·sin λ(θ₀ − φ) in the solid, continuity of Φ and εΦ′ at φ = α gives
        // sin(λα)·cos(λβ)·ε₂ + cos(λα)·sin(λβ)·ε₁ = 0 (α air, β solid). Bisection on it:
        let (a, b, e1, e2) = (PI / 2.0, PI, 1.0, 4.0);
        let g = |l: f64| (l * a).sin() * (l * b).cos() * e2 + (l * a).cos() * (l * b).sin() * e1;
        let (mut lo, mut hi) = (0.3, 0.999);
        assert!(g(lo).signum() != g(hi).signum());
        for _ in 0..100 {
            let mid = 0.5 * (lo + hi);
            if g(mid).signum() == g(lo).signum() {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        assert!((s.lambda - lo).abs() < 1e-9, "{} vs {}", s.lambda, lo);
    }
    // The block's corners in air (dielectric corners, ε 4 vs 1) are weakly singular.
    let c = at(-1.0, 0.0).expect("dielectric corner");
    assert_eq!(c.kind, SingularKind::DielectricCorner);
    assert!(c.lambda < 1.0);
}

#[test]
fn equal_permittivities_reduce_to_the_wedge() {
    // Issue 4 check, at the exponent level: π/(α+β) when the permittivities are equal.
    for (a, b) in [(0.5 * PI, PI), (0.75 * PI, 0.5 * PI), (PI, PI)] {
        let s = [Sector { angle: a, permittivity: 2.5 }, Sector { angle: b, permittivity: 2.5 }];
        let l = wedge_exponent(&s, Some((Wall::Potential, Wall::Potential)), 2.0).unwrap();
        assert!((l - PI / (a + b)).abs() < 1e-12);
    }
}

#[test]
fn interior_checkerboard_junction() {
    // Four quadrants of alternating permittivity ε₁, ε₂ meeting at a point (no wall): the
    // exponent solves tr M = 2. For this symmetric case the smallest root satisfies
    // cos(λπ/2)... derived by hand: with ratio k = ε₂/ε₁ the condition reduces to
    // |cos(λπ/2)| = |(1 − k)/(1 + k)|·... ; we only check two facts that hold for any k:
    // equal permittivities give no singular point (λ = 1), and unequal ones give λ < 1.
    let q = PI / 2.0;
    let same = [2.0, 2.0, 2.0, 2.0].map(|e| Sector { angle: q, permittivity: e });
    let l = wedge_exponent(&same, None, 2.0).unwrap();
    assert!((l - 1.0).abs() < 1e-6, "{l}");
    let mixed = [1.0, 10.0, 1.0, 10.0].map(|e| Sector { angle: q, permittivity: e });
    let l = wedge_exponent(&mixed, None, 2.0).unwrap();
    assert!(l < 1.0, "{l}");
}

#[test]
fn conical_tip_on_the_axis_uses_the_legendre_exponent() {
    // A conical electrode of half-angle α = atan(0.2/0.4) pointing down the axis: the field
    // sees the conductor at polar angle θ₀ = π − α from the axis below the tip, and the
    // exponent is the root of P_ν(cos θ₀) = 0 (Jackson §3.4), not the planar π/θ-rule.
    use mesher::{conical_exponent, Symmetry};
    let mut geo = planar(
        vec![
            dielectric("air", Outline::rectangle("air", [0.0, 0.0], [1.0, 1.0], 0.0).unwrap(), 1.0),
            conductor("tip", Outline::polygon("tip", &[[0.0, 0.4], [0.2, 0.8], [0.0, 0.8]]).unwrap(), 0),
        ],
        &["hv"],
    );
    geo.symmetry = Symmetry::Axisymmetric;
    let m = generate(&geo, &RefineParams::new().with_order(1).with_max_size_m(0.1)).unwrap().mesh;
    let s = m.singular_points.iter().find(|s| s.at == [0.0, 0.4]).expect("the tip is singular");
    assert!(s.on_axis);
    let theta0 = PI - (0.2f64 / 0.4).atan();
    let want = conical_exponent(theta0, 2.0).unwrap();
    assert!((s.lambda - want).abs() < 1e-9, "{} vs {want}", s.lambda);
    assert!(s.lambda < 1.0 && s.lambda > 0.0);
}
