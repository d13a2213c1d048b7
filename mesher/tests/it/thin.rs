//! Thin electrodes: conductor curves of zero thickness inside the domain.

use super::common::{covered_length, dielectric, planar, total_area};
use mesher::{generate, Curve, EdgeTag, MeshError, Outline, RefineParams, ThinElectrode};

fn foil(name: &str, curves: Vec<Curve>, conductor: u32) -> ThinElectrode {
    ThinElectrode { name: name.into(), curves, conductor }
}

#[test]
fn a_straight_foil_is_meshed_with_both_faces_and_its_ends_are_square_root_edges() {
    // A 1 m strip in a 4 × 2 box of one dielectric, and an interface crossing it.
    let mut geo = planar(
        vec![
            dielectric("box", Outline::rectangle("box", [0.0, 0.0], [4.0, 2.0], 0.0).unwrap(), 1.0),
            dielectric("slab", Outline::rectangle("slab", [2.0, 0.0], [2.0, 2.0], 0.0).unwrap(), 3.0),
        ],
        &["foil"],
    );
    geo.thin = vec![foil("strip", vec![Curve::Line { from: [1.5, 1.0], to: [2.5, 1.0] }], 0)];
    let out = generate(&geo, &RefineParams::new().with_order(2).with_max_size_m(0.2)).unwrap();
    let m = &out.mesh;
    // The domain is all meshed (the foil removes no area) and the foil is covered by
    // conductor edges, each with triangles on both sides.
    assert!((total_area(m) - 8.0).abs() < 1e-9);
    assert!((covered_length(m, [1.5, 1.0], [2.5, 1.0], 1e-9) - 1.0).abs() < 1e-9);
    let (start, around) = m.vertex_triangles();
    let fans = m.corner_fans((&start, &around));
    assert!(fans.any());
    let thin: Vec<_> = m.edges.iter().filter(|e| matches!(e.tag, EdgeTag::Conductor(0))).collect();
    assert!(!thin.is_empty());
    assert!(thin.iter().all(|e| fans.is_thin_edge(e.nodes[0], e.nodes[1])));
    // The two free ends are singular points of exponent ½: a conductor wall on both sides
    // of a full turn of dielectric (λ = π/θ₀ with θ₀ = 2π; Jackson 1999, §2.11). On the
    // straight interface the exponent stays ½ for any permittivity ratio: Φ = sin(φ/2) on
    // one side has zero normal flux at φ = π and continues as cos((φ − π)/2) on the other.
    let ends: Vec<_> = m.singular_points.iter().filter(|s| s.lambda < 0.9).collect();
    assert_eq!(ends.len(), 2, "{:?}", m.singular_points);
    for s in &ends {
        assert!((s.lambda - 0.5).abs() < 1e-9, "{s:?}");
        assert!((s.opening - std::f64::consts::TAU).abs() < 1e-9);
        assert_eq!(s.kind, mesher::SingularKind::ThinEdge);
    }
    // Where the foil crosses the interface the field is not singular for P2 (λ = 1 on
    // each side of a straight conductor crossing a straight interface at a right angle).
    assert!(!m.singular_points.iter().any(|s| (s.at[0] - 2.0).abs() < 1e-9 && (s.at[1] - 1.0).abs() < 1e-9));
    // Around an inner vertex of the foil the triangles of one region fall into two fans.
    let inner = thin.iter().flat_map(|e| e.nodes).find(|&v| (m.nodes[v as usize][0] - 1.75).abs() < 0.2).unwrap();
    let mut seen = std::collections::BTreeSet::new();
    for (t, tri) in m.triangles.iter().enumerate() {
        if let Some(k) = tri.iter().position(|&w| w == inner) {
            seen.insert(fans.of(t, k));
        }
    }
    assert_eq!(seen.len(), 2);
}

#[test]
fn misplaced_foils_are_refused() {
    let base = || {
        planar(
            vec![
                dielectric("box", Outline::rectangle("box", [0.0, 0.0], [4.0, 2.0], 0.0).unwrap(), 1.0),
                super::common::conductor("rod", Outline::rectangle("rod", [3.0, 0.5], [0.5, 0.5], 0.0).unwrap(), 1),
            ],
            &["foil", "rod"],
        )
    };
    let p = RefineParams::new().with_order(1).with_max_size_m(0.2);
    let mut g = base();
    g.thin = vec![foil("f", vec![Curve::Line { from: [1.0, 1.0], to: [5.0, 1.0] }], 0)];
    assert!(matches!(generate(&g, &p), Err(MeshError::OutsideDomain { .. })));
    let mut g = base();
    g.thin = vec![foil("f", vec![Curve::Line { from: [0.0, 2.0], to: [1.0, 2.0] }], 0)];
    assert!(matches!(generate(&g, &p), Err(MeshError::ThinOnBoundary { .. })));
    let mut g = base();
    g.thin = vec![foil("f", vec![Curve::Line { from: [1.0, 0.75], to: [3.0, 0.75] }], 0)];
    assert!(matches!(generate(&g, &p), Err(MeshError::ConductorsTouch { .. })));
    // Along its own conductor it is accepted (and adds nothing).
    let mut g = base();
    g.thin = vec![foil("f", vec![Curve::Line { from: [1.0, 0.75], to: [3.0, 0.75] }], 1)];
    assert!(generate(&g, &p).is_ok());
}

#[test]
fn a_foil_ending_where_an_interface_bends_takes_the_two_dielectric_root() {
    // Region B = [0, 2] × [0, 1] (εB) in A (εA), the foil along B's top edge from x = 0.5
    // to its corner (2, 1). Round the tip from the foil: B over π/2, then A over 3π/2,
    // conductor walls at both ends. With Φ = sin λφ in B and c·sin λ(2π − φ) in A,
    // continuity of Φ and of εΦ′ at φ = π/2 gives
    // εB·sin(3x)·cos(x) + εA·sin(x)·cos(3x) = 0, x = λπ/2 (derived for this test, the
    // transfer condition of Grisvard 1985 for two sectors); for εA = εB, λ = ½.
    for (eps_a, eps_b) in [(1.0, 1.0), (1.0, 4.0), (4.0, 1.0)] {
        let mut geo = planar(
            vec![
                dielectric("a", Outline::rectangle("a", [-1.0, -1.0], [4.0, 3.0], 0.0).unwrap(), eps_a),
                dielectric("b", Outline::rectangle("b", [0.0, 0.0], [2.0, 1.0], 0.0).unwrap(), eps_b),
            ],
            &["foil"],
        );
        geo.thin = vec![foil("f", vec![Curve::Line { from: [0.5, 1.0], to: [2.0, 1.0] }], 0)];
        let out = generate(&geo, &RefineParams::new().with_order(2).with_max_size_m(0.3)).unwrap();
        let tip = out
            .mesh
            .singular_points
            .iter()
            .find(|s| (s.at[0] - 2.0).abs() < 1e-12 && (s.at[1] - 1.0).abs() < 1e-12)
            .expect("the tip");
        let g = |lam: f64| {
            let x = lam * std::f64::consts::PI / 2.0;
            eps_b * (3.0 * x).sin() * x.cos() + eps_a * x.sin() * (3.0 * x).cos()
        };
        // The smallest root in (0, 1) by a scan and bisection.
        let (mut lo, mut hi) = (1e-6, 1e-6);
        for k in 1..10_000 {
            let l = k as f64 * 1e-4;
            if g(l).signum() != g(lo).signum() {
                hi = l;
                break;
            }
            lo = l;
        }
        for _ in 0..100 {
            let m = 0.5 * (lo + hi);
            if g(m).signum() == g(lo).signum() {
                lo = m;
            } else {
                hi = m;
            }
        }
        assert!((tip.lambda - lo).abs() < 1e-6, "εA {eps_a} εB {eps_b}: λ = {} vs {lo}", tip.lambda);
        if eps_a == eps_b {
            assert!((tip.lambda - 0.5).abs() < 1e-9);
            assert_eq!(tip.kind, mesher::SingularKind::ThinEdge);
        } else {
            assert!((tip.lambda - 0.5).abs() > 1e-3, "the interface moves the root");
        }
    }
}
