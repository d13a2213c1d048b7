use mesher::{Fill, Geometry, Mesh, OuterBoundary, Outline, Shape, Symmetry};

pub fn dielectric(name: &str, outline: Outline, eps: f64) -> Shape {
    Shape { name: name.into(), outline, fill: Fill::Dielectric { permittivity: eps }, max_size_m: None }
}

pub fn conductor(name: &str, outline: Outline, c: u32) -> Shape {
    Shape { name: name.into(), outline, fill: Fill::Conductor { conductor: c }, max_size_m: None }
}

pub fn planar(shapes: Vec<Shape>, conductors: &[&str]) -> Geometry {
    Geometry {
        symmetry: Symmetry::Planar,
        shapes,
        conductors: conductors.iter().map(|s| s.to_string()).collect(),
        outer: OuterBoundary::ZeroFlux,
        size_points: vec![],
        thin: vec![],
        boundary_pieces: vec![],
    }
}

/// Sum of triangle areas.
pub fn total_area(m: &Mesh) -> f64 {
    (0..m.num_triangles()).map(|t| m.triangle_area(t)).sum()
}

/// Length of tagged edges lying on the segment a–b (both end nodes within `tol` of it).
pub fn covered_length(m: &Mesh, a: [f64; 2], b: [f64; 2], tol: f64) -> f64 {
    let d = [b[0] - a[0], b[1] - a[1]];
    let l = d[0].hypot(d[1]);
    let dist = |p: [f64; 2]| {
        let t = (((p[0] - a[0]) * d[0] + (p[1] - a[1]) * d[1]) / (l * l)).clamp(0.0, 1.0);
        (p[0] - a[0] - t * d[0]).hypot(p[1] - a[1] - t * d[1])
    };
    m.edges
        .iter()
        .filter(|e| dist(m.nodes[e.nodes[0] as usize]) <= tol && dist(m.nodes[e.nodes[1] as usize]) <= tol)
        .map(|e| {
            let (p, q) = (m.nodes[e.nodes[0] as usize], m.nodes[e.nodes[1] as usize]);
            (p[0] - q[0]).hypot(p[1] - q[1])
        })
        .sum()
}
