use engine::{solve, ConductorSpec, Problem, Solution};
use mesher::{generate, Curve, Fill, Geometry, OuterBoundary, Outline, RefineParams, Shape, Symmetry};
use std::f64::consts::PI;

pub fn shape(name: &str, outline: Outline, fill: Fill) -> Shape {
    Shape { name: name.into(), outline, fill, max_size_m: None }
}

pub fn diel(eps: f64) -> Fill {
    Fill::Dielectric { permittivity: eps }
}

pub fn cond(c: u32) -> Fill {
    Fill::Conductor { conductor: c }
}

/// Half disc of radius r on the axis (x ≥ 0), centred at the origin.
pub fn half_disc(name: &str, r: f64) -> Outline {
    let arc = Curve::Arc { center: [0.0, 0.0], radius: r, start: -PI / 2.0, sweep: PI };
    // The straight side joins the arc's computed end points exactly.
    Outline::new(name, vec![arc, Curve::Line { from: arc.to(), to: arc.from() }]).unwrap()
}

/// Relative permittivity per shape (NaN for conductors), as a `Problem` takes it.
pub fn permittivities(shapes: &[Shape]) -> Vec<f64> {
    shapes
        .iter()
        .map(|s| match s.fill {
            Fill::Dielectric { permittivity } => permittivity,
            Fill::Conductor { .. } => f64::NAN,
        })
        .collect()
}

pub fn run(
    symmetry: Symmetry,
    shapes: Vec<Shape>,
    conductors: &[(&str, ConductorSpec)],
    outer: Option<f64>,
    h: f64,
    order: u8,
) -> (mesher::Mesh, Solution) {
    let permittivity = permittivities(&shapes);
    let geo = Geometry {
        symmetry,
        shapes,
        conductors: conductors.iter().map(|c| c.0.to_string()).collect(),
        outer: if outer.is_some() { OuterBoundary::FixedPotential } else { OuterBoundary::ZeroFlux },
        size_points: vec![],
        thin: vec![],
        boundary_pieces: vec![],
    };
    let mesh = generate(&geo, &RefineParams::new().with_order(order).with_max_size_m(h)).unwrap().mesh;
    let problem = Problem {
        permittivity,
        conductors: conductors.iter().map(|c| c.1).collect(),
        outer_potential_v: outer,
        ..Default::default()
    };
    let sol = solve(&mesh, &problem).unwrap();
    (mesh, sol)
}
