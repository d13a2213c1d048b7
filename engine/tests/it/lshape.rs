//! The re-entrant corner benchmark's data: exact solution V = r^(2/3)·sin(2θ/3) on the
//! L-shaped domain (−1, 1)² minus the fourth quadrant (W. F. Mitchell, Appl. Math. Comput.
//! 220 (2013) 350–364), the two edges at the corner an electrode at 0 V, the rest of the
//! boundary at the exact potential. Shared by the corner tests and the adaptivity bench.

use engine::{ConductorSpec, Problem};
use mesher::{Fill, Geometry, OuterBoundary, Outline, Shape, Symmetry};
use std::f64::consts::PI;

/// Polar angle in [0, 2π).
pub fn theta(p: [f64; 2]) -> f64 {
    let t = p[1].atan2(p[0]);
    if t < 0.0 {
        t + 2.0 * PI
    } else {
        t
    }
}

/// The exact potential.
pub fn exact(p: [f64; 2]) -> f64 {
    let r = p[0].hypot(p[1]);
    r.powf(2.0 / 3.0) * (2.0 * theta(p) / 3.0).sin()
}

/// ∇ of the exact potential.
pub fn exact_gradient(p: [f64; 2]) -> [f64; 2] {
    let r = p[0].hypot(p[1]).max(1e-300);
    let t = theta(p);
    let ur = (2.0 / 3.0) * r.powf(-1.0 / 3.0) * (2.0 * t / 3.0).sin();
    let ut = (2.0 / 3.0) * r.powf(-1.0 / 3.0) * (2.0 * t / 3.0).cos();
    [ur * t.cos() - ut * t.sin(), ur * t.sin() + ut * t.cos()]
}

/// The L-shaped domain with the corner electrode.
pub fn l_shape() -> Geometry {
    Geometry {
        symmetry: Symmetry::Planar,
        shapes: vec![
            Shape {
                name: "domain".into(),
                outline: Outline::rectangle("domain", [-1.0, -1.0], [2.0, 2.0], 0.0).unwrap(),
                fill: Fill::Dielectric { permittivity: 1.0 },
                max_size_m: None,
            },
            Shape {
                name: "corner".into(),
                outline: Outline::rectangle("corner", [0.0, -1.0], [1.0, 1.0], 0.0).unwrap(),
                fill: Fill::Conductor { conductor: 0 },
                max_size_m: None,
            },
        ],
        conductors: vec!["zero".into()],
        outer: OuterBoundary::FixedPotential,
        size_points: vec![],
        thin: vec![],
        boundary_pieces: vec![],
    }
}

/// Exact boundary data, electrode at 0 V.
pub fn l_problem() -> Problem {
    Problem {
        permittivity: vec![1.0, f64::NAN],
        conductors: vec![ConductorSpec::Fixed { potential_v: 0.0 }],
        outer_potential_v: Some(0.0),
        outer_potential_fn: Some(exact),
        ..Default::default()
    }
}
