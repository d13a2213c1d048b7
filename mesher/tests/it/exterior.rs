//! The Kelvin-mapped exterior of an open boundary keeps the mesh's angle bound even where
//! the nodes on the circle are unevenly spaced (a size point next to the circle).

use crate::common::{conductor, dielectric};
use mesher::{generate, Geometry, OuterBoundary, Outline, RefineParams, SizePoint, Symmetry};

/// Smallest angle, in degrees, of the triangles of `region`.
fn min_angle_in(m: &mesher::Mesh, region: u32) -> f64 {
    let mut worst = 180.0f64;
    for (t, tri) in m.triangles.iter().enumerate() {
        if m.regions[t] != region {
            continue;
        }
        let p = tri.map(|i| m.nodes[i as usize]);
        for k in 0..3 {
            let (a, b, c) = (p[k], p[(k + 1) % 3], p[(k + 2) % 3]);
            let (u, v) = ([b[0] - a[0], b[1] - a[1]], [c[0] - a[0], c[1] - a[1]]);
            let cos = (u[0] * v[0] + u[1] * v[1]) / (u[0].hypot(u[1]) * v[0].hypot(v[1]));
            worst = worst.min(cos.clamp(-1.0, 1.0).acos().to_degrees());
        }
    }
    worst
}

fn open_model(symmetry: Symmetry, domain: Outline, electrode: Outline, near_circle: [f64; 2]) -> Geometry {
    Geometry {
        symmetry,
        shapes: vec![dielectric("air", domain, 1.0), conductor("hv", electrode, 0)],
        conductors: vec!["hv".into()],
        outer: OuterBoundary::Open,
        size_points: vec![SizePoint { at: near_circle, size_m: 0.005 }],
        thin: vec![],
        boundary_pieces: vec![],
    }
}

#[test]
fn exterior_keeps_the_angle_bound_next_to_a_fine_patch_of_the_circle() {
    use mesher::Curve;
    use std::f64::consts::PI;
    let planar = open_model(
        Symmetry::Planar,
        Outline::circle("air", [0.0, 0.0], 1.0).unwrap(),
        Outline::circle("hv", [0.0, 0.0], 0.2).unwrap(),
        [0.97, 0.1],
    );
    let half_disc = |name: &str, r: f64| {
        Outline::new(
            name,
            vec![
                Curve::Arc { center: [0.0, 0.0], radius: r, start: -PI / 2.0, sweep: PI },
                Curve::Line { from: [0.0, r], to: [0.0, -r] },
            ],
        )
        .unwrap()
    };
    let axisym = open_model(Symmetry::Axisymmetric, half_disc("air", 1.0), half_disc("hv", 0.2), [0.6, 0.77]);
    for geo in [planar, axisym] {
        let out = generate(&geo, &RefineParams::new().with_max_size_m(0.08)).unwrap();
        let m = &out.mesh;
        let ext = m.exterior.expect("an exterior region");
        // The circle's node spacing runs from about 0.005 to 0.08 (the size point).
        let a = min_angle_in(m, ext.region);
        eprintln!("{:?}: smallest exterior angle {a:.1}°", geo.symmetry);
        assert!(a >= 30.0 - 1e-6, "{a}");
    }
}
