//! The mesh size predicted before meshing (the integral of 1/h² over the domain, module
//! `budget`) against the meshes the mesher delivers, the refusal of sizes over the node
//! budget, and the node budget's stop when a prediction was low.

use crate::common::{conductor, dielectric, planar};
use mesher::{generate, predict, MeshError, Outline, RefineParams, SizeSource};

/// An L-shaped electrode in a 2 m box (re-entrant corner λ = 2/3, graded).
fn l_shape() -> mesher::Geometry {
    planar(
        vec![
            dielectric("air", Outline::rectangle("air", [-1.0, -1.0], [2.0, 2.0], 0.0).unwrap(), 1.0),
            conductor("hv", Outline::polygon("hv", &[[-0.5, -0.5], [0.0, -0.5], [0.0, 0.0], [-0.5, 0.0]]).unwrap(), 0),
        ],
        &["hv"],
    )
}

#[test]
fn prediction_follows_the_delivered_mesh() {
    // Within ±40 % of the delivered vertices over a factor 16 in size, graded and not
    // (the calibration of `mesher::DELIVERY` measured 0.75–1.1 on the demo models).
    for h in [0.2, 0.05, 0.0125] {
        for graded in [true, false] {
            let params = RefineParams::new().with_order(1).with_max_size_m(h).with_grade_corners(graded);
            let out = generate(&l_shape(), &params).unwrap();
            let p = predict(&l_shape(), &out.size_field, f64::INFINITY);
            let ratio = out.mesh.num_vertices as f64 / p.vertices;
            assert!((0.6..1.4).contains(&ratio), "h = {h}, graded {graded}: delivered/predicted {ratio:.3}");
            assert!(!p.at_least);
        }
    }
}

#[test]
fn sizes_over_the_budget_are_refused_before_meshing() {
    let t0 = std::time::Instant::now();
    let e = generate(&l_shape(), &RefineParams::new().with_max_size_m(1e-9)).unwrap_err();
    match &e {
        MeshError::OverBudget { vertices, at_least, max_nodes, cause, .. } => {
            assert!(*vertices > 1e17 && *at_least && *max_nodes == RefineParams::new().max_nodes, "{e}");
            assert_eq!(cause.0, SizeSource::MaxSize);
        }
        other => panic!("{other}"),
    }
    assert!(e.to_string().contains("raise max_size"), "{e}");
    assert!(t0.elapsed().as_secs_f64() < 2.0);
    // A tiny size point is named as the cause (its graded neighbourhood costs only
    // logarithmically many triangles: 2π/(a·(g−1)²)·ln(h_max/h_point) ≈ 4·10³ here).
    let mut geo = l_shape();
    geo.size_points.push(mesher::SizePoint { at: [0.5, 0.5], size_m: 1e-12 });
    let params = RefineParams::new().with_max_size_m(0.1).with_min_size_m(1e-13).with_max_nodes(1_000);
    let e = generate(&geo, &params).unwrap_err();
    assert!(matches!(&e, MeshError::OverBudget { cause, .. } if cause.0 == SizeSource::Point(0)), "{e}");
    assert!(e.to_string().contains("size point #1"), "{e}");
}

#[test]
fn node_budget_stops_meshing_when_the_prediction_was_low() {
    // Two slabs 0.1 mm apart over 0.5 m in a 1 m box: the size field asks for 0.1 m
    // everywhere (a few hundred vertices predicted), but the triangles in the gap must be
    // as small as the gap to keep their angles, which only the refinement finds out. It
    // stops at the node budget and says so.
    let rect = |n: &str, y: f64| Outline::rectangle(n, [0.1, y], [0.5, 0.3], 0.0).unwrap();
    let geo = planar(
        vec![
            dielectric("box", Outline::rectangle("box", [0.0, 0.0], [1.0, 1.0], 0.0).unwrap(), 1.0),
            dielectric("lower", rect("lower", 0.1), 3.0),
            dielectric("upper", rect("upper", 0.4001), 3.0),
        ],
        &[],
    );
    let params = RefineParams::new().with_order(1).with_max_size_m(0.1).with_max_nodes(3_000);
    let out = generate(&geo, &params).unwrap();
    let p = predict(&geo, &out.size_field, f64::INFINITY);
    assert!(p.vertices < 1_000.0, "{p:?}");
    assert!(!out.complete);
    assert!(out.reason.as_deref().unwrap_or("").contains("node budget"), "{:?}", out.reason);
    assert!(out.mesh.num_vertices <= 3_000 + 64, "{}", out.mesh.num_vertices);
    out.mesh.validate().unwrap();
}
