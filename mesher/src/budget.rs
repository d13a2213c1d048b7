//! How large a mesh will be, predicted from the size field before any point is placed, so
//! that a size setting that would exhaust the machine is refused in milliseconds instead of
//! being found out by the operating system.
//!
//! # Algorithm
//! A mesh that follows the size field h(x) with near-equilateral triangles of edge h has
//! about
//!
//! ```text
//! T ≈ C · ∫_Ω dA / (a·h(x)²),   a = √3/4 (the area of the equilateral triangle of edge 1),
//! ```
//!
//! triangles over the meshed area Ω (the dielectric regions), and about V ≈ T/2 + B/2
//! vertices, with B ≈ ∫_∂ ds/h the points on the boundaries and interfaces (Euler's
//! formula for a triangulation). The constant C accounts for what the mesher actually
//! delivers: its lattice seeds are spaced at 0.67–1 times the asked size and Delaunay
//! refinement adds points where angles ask for them. C = [`DELIVERY`] was measured on the
//! demo models (see `bench-results/mesh.md`); the grading towards singular points is in
//! h(x) itself, so its share of the count comes out of the same integral.
//!
//! The integral is taken over a quadtree of the domain's bounding box, breadth first: a
//! cell is a leaf once its side is at most twice the size at its centre (the size field
//! grows by at most the gradation slope per unit distance, so the size varies by a
//! bounded factor over a leaf), at most four sizes where the whole cell is at the global
//! size, and is dropped when its centre lies outside the meshed area and no outline comes
//! within its half-diagonal. A leaf counts its area if its centre is in a dielectric. After
//! each level a lower bound — the leaves so far, and the cells still to split counted at
//! the global size, which no size exceeds, with the smallest delivery measured — is
//! compared with the limit the caller gives, and the walk stops as soon as it exceeds the
//! limit, or when the cells still to visit outnumber twice the limit (each of them holds
//! more than one vertex's worth of triangles): an absurd global size (10⁻¹⁵ m on a 0.2 m
//! box) is refused after one cell, an absurd local size after about twice the limit in
//! cells. The prediction is then that lower bound, marked `at_least`. (A cell's centre is
//! no guide to the count of a cell still to split: at a graded corner it can be 10⁵ times
//! too high.)
//! The open boundary's exterior disc is not included (its few rings are a small share).
//!
//! Each leaf also records which source of the size field asked for its size
//! ([`SizeSource`]), so a refusal can name the setting to change.
//!
//! # References
//! - J. Peraire, M. Vahdati, K. Morgan, O. C. Zienkiewicz, "Adaptive remeshing for
//!   compressible flow computations", J. Comput. Phys. 72 (1987) 449–466,
//!   doi:10.1016/0021-9991(87)90093-3 (meshes that follow a spacing function; the element
//!   count as the integral of the spacing's inverse square).
//! - H. Samet, "The quadtree and related hierarchical data structures", ACM Comput. Surv.
//!   16 (1984) 187–260, doi:10.1145/356924.356930.

use crate::arrangement::{side_at, Side};
use crate::geometry::{Geometry, Xy};
use crate::size_field::{SizeField, SizeSource};

/// Delivered triangles per triangle of the ideal count ∫dA/(a·h²): measured 1.34–1.65 on
/// the six demo models' first meshes (graded towards their singular points) and 0.90–0.96
/// on the bushing meshed uniformly at 1 and 2 mm (`bench-results/mesh.md`); a value in the
/// middle, so that the prediction is within about ±35 % of the mesh.
pub const DELIVERY: f64 = 1.4;

/// The smallest delivery measured (uniform meshes; see [`DELIVERY`]): what a lower bound
/// on the count uses.
const LEAST_DELIVERY: f64 = 0.9;

/// Area of the equilateral triangle of unit edge.
const EQUILATERAL: f64 = 0.433_012_701_892_219_3;

/// The predicted size of a mesh.
#[derive(Clone, Debug, PartialEq)]
pub struct SizePrediction {
    /// Triangles.
    pub triangles: f64,
    /// Vertices (the nodes of a linear mesh).
    pub vertices: f64,
    /// Points on boundaries and interfaces.
    pub boundary_points: f64,
    /// The walk stopped early because the count passed the limit: the true prediction is
    /// larger still.
    pub at_least: bool,
    /// The source whose sizes account for most of the triangles, and its share of them
    /// (0–1).
    pub main_source: (SizeSource, f64),
}

/// Predicts the mesh of `geo` for the size field `field` (module docs), stopping once the
/// predicted vertices exceed `limit_vertices`.
pub fn predict(geo: &Geometry, field: &SizeField, limit_vertices: f64) -> SizePrediction {
    let b = geo.bbox();
    let side = (b[2] - b[0]).max(b[3] - b[1]);
    let h_max = field.max();
    // (centre, side) of the cells still to visit.
    let mut level: Vec<(Xy, f64)> = vec![([0.5 * (b[0] + b[2]), 0.5 * (b[1] + b[3])], side)];
    let mut ideal = 0.0;
    let mut by_source: Vec<(SizeSource, f64)> = Vec::new();
    fn credit(src: SizeSource, t: f64, by_source: &mut Vec<(SizeSource, f64)>) {
        match by_source.iter_mut().find(|e| e.0 == src) {
            Some(e) => e.1 += t,
            None => by_source.push((src, t)),
        }
    }
    let boundary = boundary_points(geo, field);
    let mut at_least = false;
    for _depth in 0..64 {
        if level.is_empty() {
            break;
        }
        let mut next = Vec::new();
        let mut pending = 0.0;
        for &(c, s) in &level {
            let half_diagonal = std::f64::consts::FRAC_1_SQRT_2 * s;
            // One evaluation answers both questions: with the cap raised by the growth over
            // the half-diagonal, a result at or above it means the whole cell is at h_max.
            let cap = h_max + field.slope() * half_diagonal;
            let (raw, src) = field.size_and_source_below(c, cap);
            let uniform = raw >= cap;
            let h = raw.min(h_max);
            let inside = matches!(side_at(geo, c), Side::Region(_));
            if !inside && !geo.shapes.iter().any(|sh| sh.outline.distance(c) <= half_diagonal) {
                continue;
            }
            if uniform && s <= 8.0 * h {
                // The share of the cell inside the meshed area, from its quadrants' centres.
                let q = 0.25 * s;
                let n = [(-q, -q), (q, -q), (-q, q), (q, q)]
                    .iter()
                    .filter(|(dx, dy)| matches!(side_at(geo, [c[0] + dx, c[1] + dy]), Side::Region(_)))
                    .count();
                let t = 0.25 * n as f64 * s * s / (EQUILATERAL * h * h);
                ideal += t;
                credit(SizeSource::MaxSize, t, &mut by_source);
                continue;
            }
            if s <= 2.0 * h {
                if inside {
                    let t = s * s / (EQUILATERAL * h * h);
                    ideal += t;
                    credit(src, t, &mut by_source);
                }
                continue;
            }
            if inside {
                // At least the count at the largest size (h ≤ h_max everywhere).
                pending += s * s / (EQUILATERAL * h_max * h_max);
            }
            let q = 0.25 * s;
            for (dx, dy) in [(-q, -q), (q, -q), (-q, q), (q, q)] {
                next.push(([c[0] + dx, c[1] + dy], 0.5 * s));
            }
        }
        level = next;
        // A lower bound on the vertices: the leaves so far, and the cells still to split at
        // the largest size with the smallest delivery measured; or, when the cells to visit
        // outnumber the limit, the limit itself (each such cell holds at least one vertex's
        // worth of triangles: its side is more than twice the size at its centre).
        let lower = 0.5 * LEAST_DELIVERY * (ideal + pending) + 0.5 * boundary;
        if lower > limit_vertices || level.len() as f64 > 2.0 * limit_vertices + 1e4 {
            ideal = (ideal + pending).max(2.0 * limit_vertices / LEAST_DELIVERY);
            at_least = true;
            break;
        }
    }
    let triangles = if at_least { LEAST_DELIVERY * ideal } else { DELIVERY * ideal };
    let total: f64 = by_source.iter().map(|e| e.1).sum();
    let main_source = by_source
        .iter()
        .copied()
        .max_by(|a, b| a.1.total_cmp(&b.1))
        .map(|(s, t)| (s, if total > 0.0 { t / total } else { 0.0 }))
        .unwrap_or((SizeSource::MaxSize, 1.0));
    SizePrediction {
        triangles,
        vertices: 0.5 * (triangles + boundary),
        boundary_points: boundary,
        at_least,
        main_source,
    }
}

/// ∫ ds/h over every outline (interfaces counted once per shape that has them), by the
/// midpoint rule on 64 pieces of each curve; capped at 10³⁰.
fn boundary_points(geo: &Geometry, field: &SizeField) -> f64 {
    let mut total = 0.0;
    for sh in &geo.shapes {
        for c in sh.outline.curves() {
            let len = c.length();
            const N: usize = 64;
            for k in 0..N {
                let p = c.point_at((k as f64 + 0.5) / N as f64);
                total += len / N as f64 / field.size_at(p);
            }
        }
    }
    total.min(1e30)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::geometry::{Fill, OuterBoundary, Outline, Shape, Symmetry};

    fn square_box(side: f64) -> Geometry {
        Geometry {
            symmetry: Symmetry::Planar,
            shapes: vec![Shape {
                name: "box".into(),
                fill: Fill::Dielectric { permittivity: 1.0 },
                max_size_m: None,
                outline: Outline::rectangle("box", [0.0, 0.0], [side, side], 0.0).unwrap(),
            }],
            conductors: vec![],
            outer: OuterBoundary::FixedPotential,
            size_points: vec![],
            thin: vec![],
            boundary_pieces: vec![],
        }
    }

    /// A uniform size over a square: the ideal count is the area over the equilateral
    /// triangle's area (geometry of the equilateral triangle: a = √3/4·h²).
    #[test]
    fn uniform_square_counts_area_over_triangle_area() {
        let geo = square_box(1.0);
        let field = SizeField::uniform(0.01, 1.3, 1e-6);
        let p = predict(&geo, &field, f64::INFINITY);
        let ideal = 1.0 / (EQUILATERAL * 1e-4);
        assert!((p.triangles / (DELIVERY * ideal) - 1.0).abs() < 1e-9, "{p:?}");
        // 4 m of boundary at 0.01 m.
        assert!((p.boundary_points - 400.0).abs() < 1e-6, "{p:?}");
        assert!(!p.at_least);
        assert_eq!(p.main_source.0, SizeSource::MaxSize);
    }

    /// A size of 10⁻¹⁵ m on a 0.2 m box: refused after one cell, whatever the count.
    #[test]
    fn absurd_size_stops_at_once() {
        let geo = square_box(0.2);
        let field = SizeField::uniform(1e-15, 1.3, 1e-16);
        let t0 = std::time::Instant::now();
        let p = predict(&geo, &field, 4e6);
        assert!(p.at_least && p.vertices > 1e28, "{p:?}");
        assert!(t0.elapsed().as_secs_f64() < 1.0);
    }

    /// A small size around a point: the count grows like the integral of the graded field
    /// and is credited to the point.
    #[test]
    fn point_source_is_named() {
        let mut geo = square_box(1.0);
        geo.size_points.push(crate::geometry::SizePoint { at: [0.5, 0.5], size_m: 1e-5 });
        let mut field = SizeField::uniform(0.1, 1.3, 1e-6);
        field.add_point(0, [0.5, 0.5], 1e-5);
        let p = predict(&geo, &field, f64::INFINITY);
        // ∫ 2πr dr / (a (h₀ + 0.3 r)²) from 0 to ~0.3 m ≈ 2π/(a·0.09)·(ln(0.3·0.3/1e-5) − 1)
        // ≈ 1.3e3 ideal triangles (integral of the graded field by hand); the uniform rest
        // adds about 1/(a·0.01) ≈ 230.
        let ideal = p.triangles / DELIVERY;
        assert!((800.0..3000.0).contains(&ideal), "{p:?}");
        assert_eq!(p.main_source.0, SizeSource::Point(0), "{p:?}");
    }
}
