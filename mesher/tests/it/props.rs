//! Property tests on random simple polygons with holes (STYLE: inputs valid by
//! construction). A star-shaped polygon (sorted angles, random radii) is simple; holes are
//! small star-shaped conductors placed on a ring where they cannot touch each other or the
//! outline.

use crate::common::{conductor, covered_length, dielectric, planar, total_area};
use mesher::{generate, Outline, RefineParams};
use proptest::prelude::*;
use std::f64::consts::TAU;

fn star(center: [f64; 2], radii: &[f64], phase: f64, jitter: &[f64]) -> Vec<[f64; 2]> {
    let n = radii.len();
    (0..n)
        .map(|k| {
            let a = phase + TAU * (k as f64 + 0.4 * jitter[k]) / n as f64;
            [center[0] + radii[k] * a.cos(), center[1] + radii[k] * a.sin()]
        })
        .collect()
}

/// Outer radii in [0.7, 1.0] at n ≥ 8 angles (gaps ≤ 1.8·2π/n) keep every edge at least
/// 0.7·cos(0.9π/8) ≈ 0.53 from the origin, clear of the holes,
/// which stay within 0.45 of the origin.
fn case() -> impl Strategy<Value = (Vec<f64>, Vec<f64>, usize, Vec<f64>, f64, u8)> {
    (8usize..14).prop_flat_map(|n| {
        (
            prop::collection::vec(0.7f64..1.0, n),
            prop::collection::vec(-1.0f64..1.0, n),
            0usize..3,
            prop::collection::vec(0.05f64..0.12, 5),
            0.04f64..0.3,
            1u8..3,
        )
    })
}

proptest! {
    // 48 cases per run; raise PROPTEST_CASES for a longer one.
    #![proptest_config(ProptestConfig {
        cases: std::env::var("PROPTEST_CASES").ok().and_then(|v| v.parse().ok()).unwrap_or(48),
        ..ProptestConfig::default()
    })]

    #[test]
    fn random_polygons_with_holes_mesh_validly((radii, jitter, holes, hole_r, h, order) in case()) {
        let outer = star([0.0, 0.0], &radii, 0.1, &jitter);
        let mut shapes = vec![dielectric("domain", Outline::polygon("domain", &outer).unwrap(), 1.0)];
        let mut hole_area = 0.0;
        let mut hole_polys = Vec::new();
        for k in 0..holes {
            let a = TAU * k as f64 / holes.max(1) as f64;
            let c = [0.3 * a.cos(), 0.3 * a.sin()];
            let pts = star(c, &hole_r, 0.3 * k as f64, &[0.0; 5]);
            let o = Outline::polygon("hole", &pts).unwrap();
            hole_area += o.signed_area().abs();
            shapes.push(conductor(&format!("hole{k}"), o, 0));
            hole_polys.push(pts);
        }
        let geo = planar(shapes, &["c"]);
        let params = RefineParams::new().with_order(order).with_max_size_m(h);
        let out = generate(&geo, &params).expect("meshing a valid polygon must succeed");
        prop_assert!(out.complete);
        let m = &out.mesh;
        m.validate().unwrap();
        // Areas: the mesh covers the domain minus the holes, to round-off.
        let want = Outline::polygon("d", &outer).unwrap().signed_area().abs() - hole_area;
        prop_assert!((total_area(m) - want).abs() <= 1e-9 * want, "area {} vs {}", total_area(m), want);
        // Every input segment is covered by tagged mesh edges.
        for poly in std::iter::once(&outer).chain(hole_polys.iter()) {
            for k in 0..poly.len() {
                let (a, b) = (poly[k], poly[(k + 1) % poly.len()]);
                let l = (b[0] - a[0]).hypot(b[1] - a[1]);
                let c = covered_length(m, a, b, 1e-12);
                prop_assert!((c - l).abs() <= 1e-9 * l, "segment {a:?}-{b:?}: covered {c} of {l}");
            }
        }
        // Quality: the refinement angle wherever input angles allow it; the star's smallest
        // input angle can be sharp, so only a loose floor applies everywhere.
        prop_assert!(m.stats().min_angle_deg > 1.0);
    }
}

/// A star polygon with one spike (a vertex pushed out at a small angle: the two edges
/// meeting there enclose `spike_deg`) and one vertex split into two points `gap` apart
/// (relative to the size of the part): the inputs that strain Delaunay refinement.
fn hostile_case() -> impl Strategy<Value = (Vec<f64>, f64, f64, f64, u8)> {
    (prop::collection::vec(0.7f64..1.0, 10), 1.0f64..12.0, -9.0f64..-2.0, 0.02f64..0.3, 1u8..3)
}

proptest! {
    #![proptest_config(ProptestConfig {
        cases: std::env::var("PROPTEST_CASES").ok().and_then(|v| v.parse().ok()).unwrap_or(24),
        ..ProptestConfig::default()
    })]

    /// Sharp spikes and near-coincident points: the mesher ends within seconds and within
    /// its node budget, with a valid mesh or a meshing error, never a hang or a panic.
    #[test]
    fn small_angles_and_near_coincident_points_terminate((radii, spike_deg, log_gap, h, order) in hostile_case()) {
        let n = radii.len();
        let mut pts: Vec<[f64; 2]> =
            (0..n).map(|k| { let a = TAU * k as f64 / n as f64; [radii[k] * a.cos(), radii[k] * a.sin()] }).collect();
        // The spike: vertex 0 pushed out so that its neighbours see it under spike_deg.
        let (p1, pn) = (pts[1], pts[n - 1]);
        let mid = [(p1[0] + pn[0]) / 2.0, (p1[1] + pn[1]) / 2.0];
        let half = (p1[0] - pn[0]).hypot(p1[1] - pn[1]) / 2.0;
        let dir = [mid[0] / mid[0].hypot(mid[1]), mid[1] / mid[0].hypot(mid[1])];
        let reach = half / (spike_deg.to_radians() / 2.0).tan();
        pts[0] = [mid[0] + dir[0] * reach, mid[1] + dir[1] * reach];
        // The near-coincident pair: vertex 5 split along its edge to vertex 6.
        let gap = 10f64.powf(log_gap);
        let (a, b) = (pts[5], pts[6]);
        let l = (b[0] - a[0]).hypot(b[1] - a[1]);
        pts.insert(6, [a[0] + (b[0] - a[0]) * gap / l, a[1] + (b[1] - a[1]) * gap / l]);
        let Ok(outline) = Outline::polygon("domain", &pts) else { return Ok(()) };
        let geo = planar(vec![dielectric("domain", outline, 1.0)], &[]);
        let budget = 60_000;
        let params = RefineParams::new().with_order(order).with_max_size_m(h).with_max_nodes(budget);
        let t0 = std::time::Instant::now();
        let out = generate(&geo, &params);
        let secs = t0.elapsed().as_secs_f64();
        prop_assert!(secs < 20.0, "took {secs} s");
        if let Ok(out) = out {
            out.mesh.validate().unwrap();
            prop_assert!(out.mesh.num_vertices as usize <= budget + 4096, "{} vertices", out.mesh.num_vertices);
        }
    }
}
