//! Arcs are discretised so that the chord error stays below the tolerance, and every node
//! on an arc lies on the true circle.

use crate::common::{conductor, dielectric, planar};
use mesher::{generate, Outline, RefineParams};

fn check(radius: f64, h: f64, chord_tol: f64, order: u8) {
    let geo = planar(
        vec![
            dielectric("box", Outline::rectangle("box", [-1.0, -1.0], [2.0, 2.0], 0.0).unwrap(), 1.0),
            conductor("rod", Outline::circle("rod", [0.1, -0.05], radius).unwrap(), 0),
            conductor("bar", Outline::rectangle("bar", [0.4, 0.4], [0.4, 0.3], 0.08).unwrap(), 0),
        ],
        &["hv"],
    );
    let p = RefineParams::new().with_order(order).with_max_size_m(h).with_chord_tolerance(chord_tol);
    let out = generate(&geo, &p).unwrap();
    let m = &out.mesh;
    let scale = 2.0 * 2f64.sqrt();
    let mut arc_edges = 0;
    for e in &m.edges {
        let Some(a) = e.arc else { continue };
        arc_edges += 1;
        let g = m.arcs[a as usize];
        let (p, q) = (m.nodes[e.nodes[0] as usize], m.nodes[e.nodes[1] as usize]);
        for v in [p, q] {
            let d = ((v[0] - g.center[0]).hypot(v[1] - g.center[1]) - g.radius).abs();
            assert!(d <= 1e-12 * scale, "node {v:?} is {d:e} off its arc");
        }
        // Sagitta of the chord: R·(1 − cos(Δθ/2)) with Δθ/2 = asin(chord/2R).
        let chord = (p[0] - q[0]).hypot(p[1] - q[1]);
        let half = (chord / (2.0 * g.radius)).min(1.0).asin();
        let sagitta = g.radius * (1.0 - half.cos());
        assert!(
            sagitta <= chord_tol * chord * (1.0 + 1e-9),
            "chord {chord} of radius {} has sagitta {sagitta}",
            g.radius
        );
    }
    // Both circles are present: the rod (two halves, one record) and the four fillets.
    assert!(arc_edges >= 16);
    assert_eq!(m.arcs.len(), 5);
}

#[test]
fn arc_nodes_on_circle_and_chord_error_bounded() {
    check(0.2, 0.1, 0.025, 1);
    check(0.2, 0.1, 0.025, 2);
    check(0.05, 0.2, 0.01, 2);
    check(0.3, 0.02, 0.1, 1);
}

#[test]
fn p2_mid_nodes_lie_on_the_arc() {
    // validate() checks mid-node placement; here the check is independent: every mid node
    // of an arc edge is at the circle's radius from its centre.
    let geo = planar(
        vec![
            dielectric("box", Outline::rectangle("box", [-1.0, -1.0], [2.0, 2.0], 0.0).unwrap(), 1.0),
            conductor("rod", Outline::circle("rod", [0.0, 0.0], 0.25).unwrap(), 0),
        ],
        &["hv"],
    );
    let m = generate(&geo, &RefineParams::new().with_order(2).with_max_size_m(0.1)).unwrap().mesh;
    let mut checked = 0;
    for (tri, mids) in m.triangles.iter().zip(&m.mid_nodes) {
        for k in 0..3 {
            let (a, b) = (tri[k], tri[(k + 1) % 3]);
            let on = m.edges.iter().any(|e| e.arc.is_some() && ((e.nodes == [a, b]) || (e.nodes == [b, a])));
            if on {
                let p = m.nodes[mids[k] as usize];
                assert!((p[0].hypot(p[1]) - 0.25).abs() < 1e-14);
                checked += 1;
            }
        }
    }
    assert!(checked >= 16, "{checked}");
}
