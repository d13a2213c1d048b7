//! The coefficient of the singular term at a conductor corner, fitted from the solution.
//!
//! # Algorithm
//! Near a conductor corner of exponent λ facing one dielectric, V ≈ V₀ + A·r^λ·sin(λφ),
//! with r the distance to the corner and φ the angle from the wall where the dielectric
//! begins. The potential is sampled on rings of radii R, 0.7R, 0.5R and 0.35R at twelve
//! angles across the dielectric; A is the least-squares amplitude over all samples, and
//! the exponent is checked by regressing the per-ring amplitudes against the radius on a
//! log–log scale. The field near the corner is then |E| ≈ λ·|A|·r^(λ−1), which gives the
//! distance inside which it exceeds a given stress.
//!
//! # References
//! - J. D. Jackson, *Classical Electrodynamics*, 3rd ed., Wiley 1999, §2.11 (the local
//!   expansion at a conducting wedge).
//! - M. Elliotis, G. Georgiou, C. Xenophontos, Appl. Math. Comput. 169 (2005) 485–499
//!   (singular-function and p/hp finite-element extraction of singular coefficients; cited
//!   as listed in the project's trade notes).

use crate::probe::sample_potential;
use crate::solve::Solution;
use mesher::{Mesh, SingularKind, SingularPoint};

/// A fitted singular term.
#[derive(Clone, Debug, PartialEq)]
pub struct SingularFit {
    /// Coefficient A of V ≈ V₀ + A·r^λ·sin(λφ), V/m^λ.
    pub coefficient: f64,
    /// Exponent from the log–log regression of the ring amplitudes (a check on λ).
    pub exponent_fit: f64,
    /// Samples used.
    pub samples: usize,
}

impl SingularFit {
    /// |E| ≈ λ·|A|·r^(λ−1) at distance `r` from the point.
    pub fn field_at(&self, lambda: f64, r: f64) -> f64 {
        lambda * self.coefficient.abs() * r.powf(lambda - 1.0)
    }

    /// The distance inside which |E| exceeds `e_v_per_m` (λ < 1).
    pub fn radius_above(&self, lambda: f64, e_v_per_m: f64) -> f64 {
        (e_v_per_m / (lambda * self.coefficient.abs())).powf(1.0 / (lambda - 1.0))
    }
}

/// Fits the singular term at a conductor corner facing one dielectric, from rings of
/// radius up to `radius` (metres; inside the region where the corner dominates, a few
/// elements or more). `v0` is the conductor's potential. Returns None for other kinds of
/// point or when too few samples fall in the mesh.
pub fn singular_coefficient(
    mesh: &Mesh,
    solution: &Solution,
    point: &SingularPoint,
    v0: f64,
    radius: f64,
) -> Option<SingularFit> {
    if point.kind != SingularKind::ConductorCorner || point.on_axis {
        return None;
    }
    let lam = point.lambda;
    let radii = [radius, 0.7 * radius, 0.5 * radius, 0.35 * radius];
    let mut pts = Vec::new();
    let mut basis = Vec::new();
    for &r in &radii {
        for i in 0..12 {
            let phi = point.opening * (i as f64 + 0.5) / 12.0;
            let a = point.start_angle + phi;
            pts.push([point.at[0] + r * a.cos(), point.at[1] + r * a.sin()]);
            basis.push((r, (lam * phi).sin()));
        }
    }
    let v = sample_potential(mesh, solution, &pts);
    let (mut num, mut den, mut used) = (0.0, 0.0, 0);
    let mut ring = vec![(0.0, 0.0); radii.len()];
    for (k, (vk, &(r, s))) in v.iter().zip(&basis).enumerate() {
        let Some(vk) = vk else { continue };
        let b = r.powf(lam) * s;
        num += (vk - v0) * b;
        den += b * b;
        ring[k / 12].0 += (vk - v0) * s;
        ring[k / 12].1 += s * s;
        used += 1;
    }
    if used < 24 || den == 0.0 {
        return None;
    }
    // Regress ln(ring amplitude) on ln r.
    let pairs: Vec<(f64, f64)> = radii
        .iter()
        .zip(&ring)
        .filter(|(_, (n, d))| *d > 0.0 && n / d != 0.0)
        .map(|(r, (n, d))| (r.ln(), (n / d).abs().ln()))
        .collect();
    let m = pairs.len() as f64;
    let (sx, sy) = pairs.iter().fold((0.0, 0.0), |a, p| (a.0 + p.0, a.1 + p.1));
    let (sxx, sxy) = pairs.iter().fold((0.0, 0.0), |a, p| (a.0 + p.0 * p.0, a.1 + p.0 * p.1));
    let exponent_fit = (m * sxy - sx * sy) / (m * sxx - sx * sx);
    Some(SingularFit { coefficient: num / den, exponent_fit, samples: used })
}
