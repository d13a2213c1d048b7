//! Lagrange triangles of order 1 and 2 on the reference triangle, and quadrature rules.
//!
//! # Algorithm
//! Reference triangle (0,0), (1,0), (0,1) with barycentric coordinates L₀ = 1 − ξ − η,
//! L₁ = ξ, L₂ = η. P1: φₖ = Lₖ. P2 (node order: the three vertices, then the mid-points of
//! the edges 0–1, 1–2, 2–0): φₖ = Lₖ(2Lₖ − 1) at vertices and 4·Lₖ·Lₖ₊₁ at mid-edges.
//! P2 elements are isoparametric: the geometry is mapped with the same six functions, so an
//! edge whose mid node sits on an arc follows the arc to third order.
//!
//! # References
//! - O. C. Zienkiewicz, R. L. Taylor, J. Z. Zhu, *The Finite Element Method: Its Basis and
//!   Fundamentals*, 7th ed., Butterworth-Heinemann 2013, ch. 6 (triangle shape functions).
//! - D. A. Dunavant, "High degree efficient symmetrical Gaussian quadrature rules for the
//!   triangle", Int. J. Numer. Methods Eng. 21 (1985) 1129–1148, doi:10.1002/nme.1620210612
//!   (the 3-point degree-2 and 6-point degree-4 rules below).

/// A quadrature point on the reference triangle: (ξ, η, weight), weights summing to ½
/// (the reference area).
pub type QuadPoint = (f64, f64, f64);

/// Dunavant's 3-point rule, exact for polynomials of degree 2.
pub const QUAD_DEG2: [QuadPoint; 3] =
    [(1.0 / 6.0, 1.0 / 6.0, 1.0 / 6.0), (2.0 / 3.0, 1.0 / 6.0, 1.0 / 6.0), (1.0 / 6.0, 2.0 / 3.0, 1.0 / 6.0)];

const A1: f64 = 0.445_948_490_915_965;
const B1: f64 = 1.0 - 2.0 * A1;
const W1: f64 = 0.223_381_589_678_011 / 2.0;
const A2: f64 = 0.091_576_213_509_771;
const B2: f64 = 1.0 - 2.0 * A2;
const W2: f64 = 0.109_951_743_655_322 / 2.0;

/// Dunavant's 6-point rule, exact for polynomials of degree 4.
pub const QUAD_DEG4: [QuadPoint; 6] =
    [(A1, A1, W1), (B1, A1, W1), (A1, B1, W1), (A2, A2, W2), (B2, A2, W2), (A2, B2, W2)];

/// A composite rule on the reference triangle graded towards its vertex `corner` (0, 1 or
/// 2), for integrands that are singular there like r^(2λ−2) (the energy density next to a
/// sharp edge): the triangle is split at its edge midpoints, the three sub-triangles away
/// from the corner get the degree-4 rule and the corner sub-triangle is split again, `levels`
/// times; the last corner triangle gets the degree-4 rule too. The weights still sum to ½.
pub fn corner_graded_rule(corner: usize, levels: usize) -> Vec<QuadPoint> {
    let v = [[0.0, 0.0], [1.0, 0.0], [0.0, 1.0]];
    let (c, mut a, mut b) = (v[corner], v[(corner + 1) % 3], v[(corner + 2) % 3]);
    let mut out = Vec::with_capacity(6 * (3 * levels + 1));
    let push = |p: [[f64; 2]; 3], out: &mut Vec<QuadPoint>| {
        let det = ((p[1][0] - p[0][0]) * (p[2][1] - p[0][1]) - (p[2][0] - p[0][0]) * (p[1][1] - p[0][1])).abs();
        for &(x, y, w) in &QUAD_DEG4 {
            let l = [1.0 - x - y, x, y];
            let xi = l[0] * p[0][0] + l[1] * p[1][0] + l[2] * p[2][0];
            let eta = l[0] * p[0][1] + l[1] * p[1][1] + l[2] * p[2][1];
            out.push((xi, eta, w * det));
        }
    };
    let mid = |p: [f64; 2], q: [f64; 2]| [0.5 * (p[0] + q[0]), 0.5 * (p[1] + q[1])];
    for _ in 0..levels {
        let (ca, cb, ab) = (mid(c, a), mid(c, b), mid(a, b));
        push([ca, a, ab], &mut out);
        push([cb, ab, b], &mut out);
        push([ca, ab, cb], &mut out);
        (a, b) = (ca, cb);
    }
    push([c, a, b], &mut out);
    out
}

/// Values and reference gradients of the `N` shape functions at (ξ, η).
pub trait Element<const N: usize> {
    /// φᵢ(ξ, η).
    fn values(xi: f64, eta: f64) -> [f64; N];
    /// ∂φᵢ/∂ξ and ∂φᵢ/∂η.
    fn gradients(xi: f64, eta: f64) -> [[f64; 2]; N];
}

/// Linear triangle.
#[derive(Debug)]
pub struct P1;
/// Quadratic triangle.
#[derive(Debug)]
pub struct P2;

const GRAD_L: [[f64; 2]; 3] = [[-1.0, -1.0], [1.0, 0.0], [0.0, 1.0]];

impl Element<3> for P1 {
    fn values(xi: f64, eta: f64) -> [f64; 3] {
        [1.0 - xi - eta, xi, eta]
    }
    fn gradients(_: f64, _: f64) -> [[f64; 2]; 3] {
        GRAD_L
    }
}

impl Element<6> for P2 {
    fn values(xi: f64, eta: f64) -> [f64; 6] {
        let l = [1.0 - xi - eta, xi, eta];
        [
            l[0] * (2.0 * l[0] - 1.0),
            l[1] * (2.0 * l[1] - 1.0),
            l[2] * (2.0 * l[2] - 1.0),
            4.0 * l[0] * l[1],
            4.0 * l[1] * l[2],
            4.0 * l[2] * l[0],
        ]
    }
    fn gradients(xi: f64, eta: f64) -> [[f64; 2]; 6] {
        let l = [1.0 - xi - eta, xi, eta];
        let g = GRAD_L;
        let v = |k: usize| [(4.0 * l[k] - 1.0) * g[k][0], (4.0 * l[k] - 1.0) * g[k][1]];
        let m = |a: usize, b: usize| [4.0 * (l[b] * g[a][0] + l[a] * g[b][0]), 4.0 * (l[b] * g[a][1] + l[a] * g[b][1])];
        [v(0), v(1), v(2), m(0, 1), m(1, 2), m(2, 0)]
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// ∫ ξ^a η^b over the reference triangle = a! b! / (a + b + 2)! (a textbook identity).
    fn exact(a: u32, b: u32) -> f64 {
        let f = |n: u32| (1..=n).map(|k| k as f64).product::<f64>();
        f(a) * f(b) / f(a + b + 2)
    }

    #[test]
    fn quadrature_degrees() {
        for (rule, deg) in [(&QUAD_DEG2[..], 2), (&QUAD_DEG4[..], 4)] {
            for a in 0..=deg {
                for b in 0..=(deg - a) {
                    let q: f64 = rule.iter().map(|&(x, y, w)| w * x.powi(a as i32) * y.powi(b as i32)).sum();
                    // Dunavant's tabulated weights carry 15 digits.
                    assert!((q - exact(a, b)).abs() < 1e-14, "deg {deg}: x^{a} y^{b}: {q} vs {}", exact(a, b));
                }
            }
        }
    }

    #[test]
    fn graded_rule_integrates_polynomials_and_the_corner_singularity() {
        for corner in 0..3 {
            let rule = corner_graded_rule(corner, 12);
            // Exact for polynomials of degree 4, as its pieces are.
            for (a, b) in [(0, 0), (2, 1), (0, 4), (3, 1)] {
                let q: f64 = rule.iter().map(|&(x, y, w)| w * x.powi(a) * y.powi(b)).sum();
                assert!((q - exact(a as u32, b as u32)).abs() < 1e-14, "{corner}: {a},{b}");
            }
        }
        // ∫ r^(−2/3) over the reference triangle from the origin, in polar coordinates:
        // ∫₀^{π/2} ∫₀^{1/(cos φ + sin φ)} r^(1/3) dr dφ = ¾∫₀^{π/2} (cos φ + sin φ)^(−4/3) dφ;
        // the φ integral by a 2000-point midpoint rule of a smooth integrand.
        let n = 2000;
        let exact_int: f64 = (0..n)
            .map(|k| {
                let f = (k as f64 + 0.5) * std::f64::consts::FRAC_PI_2 / n as f64;
                0.75 * (f.cos() + f.sin()).powf(-4.0 / 3.0) * std::f64::consts::FRAC_PI_2 / n as f64
            })
            .sum();
        let q: f64 = corner_graded_rule(0, 16).iter().map(|&(x, y, w)| w * x.hypot(y).powf(-2.0 / 3.0)).sum();
        // Each level carries the same small relative error of the degree-4 rule on a
        // self-similar piece, about 2e-4 in all.
        assert!((q - exact_int).abs() < 5e-4 * exact_int, "{q} vs {exact_int}");
    }

    #[test]
    fn p2_partition_of_unity_and_nodality() {
        let nodes = [(0.0, 0.0), (1.0, 0.0), (0.0, 1.0), (0.5, 0.0), (0.5, 0.5), (0.0, 0.5)];
        for (i, &(x, y)) in nodes.iter().enumerate() {
            let v = P2::values(x, y);
            for (j, vj) in v.iter().enumerate() {
                assert!((vj - if i == j { 1.0 } else { 0.0 }).abs() < 1e-15);
            }
        }
        for &(x, y, _) in &QUAD_DEG4 {
            let s: f64 = P2::values(x, y).iter().sum();
            let g = P2::gradients(x, y);
            assert!((s - 1.0).abs() < 1e-14);
            assert!(g.iter().map(|d| d[0]).sum::<f64>().abs() < 1e-13);
            assert!(g.iter().map(|d| d[1]).sum::<f64>().abs() < 1e-13);
        }
    }
}
