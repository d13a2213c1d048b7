//! Bad geometry and parameters come back as errors naming the shape and the place.

use crate::common::{conductor, dielectric, planar};
use mesher::{generate, Curve, MeshError, Outline, RefineParams, Symmetry};

fn square(name: &str, x: f64, y: f64, s: f64) -> Outline {
    Outline::rectangle(name, [x, y], [s, s], 0.0).unwrap()
}

#[test]
fn outline_errors() {
    assert!(matches!(
        Outline::new(
            "open",
            vec![Curve::Line { from: [0.0, 0.0], to: [1.0, 0.0] }, Curve::Line { from: [1.0, 0.0], to: [1.0, 1.0] }]
        ),
        Err(MeshError::NotClosed { .. })
    ));
    assert!(matches!(Outline::rectangle("r", [0.0, 0.0], [0.0, 1.0], 0.0), Err(MeshError::BadNumber { .. })));
    assert!(matches!(Outline::circle("c", [0.0, 0.0], -1.0), Err(MeshError::BadNumber { .. })));
    assert!(matches!(
        Outline::new("nan", vec![Curve::Line { from: [f64::NAN, 0.0], to: [1.0, 0.0] }]),
        Err(MeshError::BadNumber { .. })
    ));
    assert!(matches!(
        Curve::arc_through("a", [0.0, 0.0], [2.0, 0.0], 0.5, true, false),
        Err(MeshError::ArcTooShort { .. })
    ));
}

#[test]
fn geometry_errors() {
    let dom = || dielectric("box", square("box", 0.0, 0.0, 1.0), 1.0);
    // Self-intersecting (bow tie).
    let bow = Outline::polygon("bow", &[[0.2, 0.2], [0.8, 0.8], [0.8, 0.2], [0.2, 0.8]]).unwrap();
    let e = generate(&planar(vec![dom(), dielectric("bow", bow, 2.0)], &[]), &RefineParams::new()).unwrap_err();
    assert!(matches!(e, MeshError::SelfIntersecting { ref shape, .. } if shape == "bow"), "{e}");
    // Zero area (collinear points).
    let flat = Outline::polygon("flat", &[[0.2, 0.2], [0.5, 0.2], [0.8, 0.2]]).unwrap();
    let e = generate(&planar(vec![dom(), dielectric("flat", flat, 2.0)], &[]), &RefineParams::new()).unwrap_err();
    assert!(matches!(e, MeshError::ZeroArea { .. } | MeshError::SelfIntersecting { .. }), "{e}");
    // Outside the domain.
    let e =
        generate(&planar(vec![dom(), conductor("far", square("far", 2.0, 2.0, 0.5), 0)], &["c"]), &RefineParams::new())
            .unwrap_err();
    assert!(matches!(e, MeshError::OutsideDomain { ref shape, .. } if shape == "far"), "{e}");
    // Missing domain.
    assert!(matches!(generate(&planar(vec![], &[]), &RefineParams::new()), Err(MeshError::NoDomain)));
    // Duplicate names.
    let e =
        generate(&planar(vec![dom(), dielectric("box", square("box", 0.2, 0.2, 0.2), 2.0)], &[]), &RefineParams::new())
            .unwrap_err();
    assert!(matches!(e, MeshError::DuplicateName { .. }), "{e}");
    // Negative radius in an axisymmetric model.
    let mut g = planar(vec![dielectric("box", square("box", -0.5, 0.0, 1.0), 1.0)], &[]);
    g.symmetry = Symmetry::Axisymmetric;
    assert!(matches!(generate(&g, &RefineParams::new()), Err(MeshError::NegativeRadius { .. })));
    // Two different conductors touching at a corner.
    let e = generate(
        &planar(
            vec![dom(), conductor("a", square("a", 0.2, 0.2, 0.2), 0), conductor("b", square("b", 0.4, 0.4, 0.2), 1)],
            &["a", "b"],
        ),
        &RefineParams::new(),
    )
    .unwrap_err();
    assert!(matches!(e, MeshError::ConductorsTouch { .. }), "{e}");
}

#[test]
fn parameter_errors() {
    let g = planar(vec![dielectric("box", square("box", 0.0, 0.0, 1.0), 1.0)], &[]);
    for p in [
        RefineParams::new().with_max_size_m(0.0),
        RefineParams::new().with_max_size_m(-1.0),
        RefineParams::new().with_min_angle_deg(40.0),
        RefineParams::new().with_order(3),
        RefineParams::new().with_gradation(1.0),
    ] {
        assert!(matches!(generate(&g, &p), Err(MeshError::BadParameter { .. })), "{p:?}");
    }
}

#[test]
fn tiny_features_and_sharp_angles_terminate() {
    // A needle-like sliver of dielectric with a 2° tip and a feature 1e-5 of the model
    // size: the mesher must terminate and return a valid mesh (Shewchuk 2002: small input
    // angles are protected, the node budget is the last resort).
    let tip = 2f64.to_radians();
    let needle = Outline::polygon(
        "needle",
        &[[0.1, 0.5], [0.9, 0.5 - 0.8 * (tip / 2.0).tan()], [0.9, 0.5 + 0.8 * (tip / 2.0).tan()]],
    )
    .unwrap();
    let speck = square("speck", 0.3, 0.2, 1e-5);
    let g = planar(
        vec![
            dielectric("box", square("box", 0.0, 0.0, 1.0), 1.0),
            dielectric("needle", needle, 3.0),
            dielectric("speck", speck, 5.0),
        ],
        &[],
    );
    let out = generate(&g, &RefineParams::new().with_max_nodes(200_000)).unwrap();
    out.mesh.validate().unwrap();
}

#[test]
fn inclined_sides_split_by_touching_shapes() {
    // A rotated box whose sides are split where two rotated conductor plates touch them:
    // the split points are collinear with the side only up to round-off. The mesh must
    // come out complete, valid and of full quality (rotated plates once made the
    // refinement run to its node budget on hull slivers).
    for deg in [7.0f64, 30.0, 45.0, 61.0] {
        let (c, s) = (deg.to_radians().cos(), deg.to_radians().sin());
        let rot = |p: [f64; 2]| [c * p[0] - s * p[1], s * p[0] + c * p[1]];
        let rect = |n: &str, y0: f64, y1: f64| {
            Outline::polygon(n, &[[-0.03, y0], [0.03, y0], [0.03, y1], [-0.03, y1]].map(rot)).unwrap()
        };
        let g = planar(
            vec![
                dielectric("gap", rect("gap", 0.0, 0.06), 1.0),
                conductor("bottom", rect("bottom", 0.0, 0.01), 0),
                conductor("top", rect("top", 0.05, 0.06), 1),
            ],
            &["a", "b"],
        );
        let out = generate(&g, &RefineParams::new().with_max_size_m(0.007).with_max_nodes(100_000)).unwrap();
        assert!(out.complete, "{deg}°");
        assert!(out.mesh.stats().min_angle_deg > 29.0, "{deg}°: {}", out.mesh.stats().min_angle_deg);
        assert!(out.mesh.num_triangles() < 2_000, "{deg}°: {} triangles", out.mesh.num_triangles());
    }
}
