//! Stressed volume and the Weibull effective volume of a region.

use crate::fields::eval_point;
use crate::solve::Solution;
use crate::space::QUAD_DEG4;
use mesher::{Mesh, Symmetry, Xy};
use rayon::prelude::*;

/// The Weibull effective volume of a region.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct WeibullVolume {
    /// The Weibull shape parameter m (in field).
    pub shape: f64,
    /// V_eff = ∫(E/E_ref)^m dV, m³ (m³ per metre of depth planar); None when the integral
    /// diverges at a singular point.
    pub effective_volume: Option<f64>,
    /// The singular point (index into `Mesh::singular_points`) where it diverges:
    /// |E| ~ r^(λ−1) makes ∫(E/E_ref)^m dA diverge when m·(1 − λ) ≥ 2.
    pub diverges_at: Option<usize>,
    /// The same integral outside the exclusion discs around singular points, m³ (finite
    /// whatever λ; it leaves out what the discs hold).
    pub outside_discs: f64,
}

/// The stressed volume of one region.
#[derive(Clone, Debug, PartialEq)]
pub struct StressedVolume {
    /// Region (shape index).
    pub region: u32,
    /// The reference field E_ref (the region's peak away from singular points), V/m.
    pub e_ref_v_per_m: f64,
    /// The region's volume, m³ (m³ per metre of depth planar).
    pub volume_m3: f64,
    /// (x, volume where |E| ≥ x·E_ref) for each fraction asked.
    pub above: Vec<(f64, f64)>,
    /// The Weibull effective volume, when a shape parameter is given.
    pub weibull: Option<WeibullVolume>,
}

/// Sub-triangles per side where an element reaches the lowest threshold: the indicator
/// |E| ≥ x·E_ref is integrated by the centroid rule on SUBDIVISION² sub-triangles there
/// (error of the order of a sub-triangle along the level curve), elsewhere by the degree-4
/// rule.
const SUBDIVISION: usize = 12;

/// The volume of `region` where |E| ≥ x·E_ref for each `fractions` x, and the Weibull
/// effective volume V_eff = ∫(E/E_ref)^m dV when `weibull_shape` m is given (also outside the
/// `discs` around singular points, see [`crate::exclusion_discs`]).
///
/// V(x) = ∫ 1[|E| ≥ x·E_ref] dV and V_eff = ∫ (|E|/E_ref)^m dV, with dV = 2πr dA in
/// axisymmetry and dA (per metre of depth) planar. The stressed-volume definition (oil
/// volume above 0.9·E_max) is common practice after Wilson 1953 and Weber & Endicott 1956;
/// the effective volume is the Weibull weakest-link form P_f = 1 − exp[−(V_eff/V₀)(E/E₀)^m]
/// (IEC 62539:2007 / IEEE Std 930-2004; both recalled from memory, `../shared/TRADE.md`
/// §1.5). |E| is the element's own field at quadrature points (not an interpolation of
/// nodal values). Elements whose vertex and centroid fields all lie below 0.7 of the lowest
/// threshold take the degree-4 rule (|E| of a straight P2 element is convex, so its largest
/// value is at a vertex; the factor leaves room for curved ones); the others are subdivided.
///
/// Next to a field-singular point of the region (λ < 1) V(x) converges (the singularity is
/// integrable) but V_eff diverges when m·(1 − λ) ≥ 2: it is then reported as diverging, with
/// the point.
///
/// # Panics
/// If the solution does not belong to the mesh, or `e_ref` is not positive.
#[track_caller]
pub fn stressed_volume(
    mesh: &Mesh,
    solution: &Solution,
    region: u32,
    e_ref: f64,
    fractions: &[f64],
    weibull_shape: Option<f64>,
    discs: &[(Xy, f64)],
) -> StressedVolume {
    assert_eq!(solution.potential.len(), mesh.nodes.len(), "solution and mesh do not match");
    assert!(e_ref > 0.0 && e_ref.is_finite(), "reference field {e_ref}");
    let axisym = mesh.symmetry == Symmetry::Axisymmetric;
    let lowest = fractions.iter().copied().fold(f64::INFINITY, f64::min);
    let n = fractions.len();
    // Per element: [volume, V(x₁) … V(xₙ), V_eff, V_eff outside the discs].
    let sums = (0..mesh.triangles.len())
        .into_par_iter()
        .filter(|&t| mesh.regions[t] == region)
        .map(|t| {
            let mut acc = vec![0.0; n + 3];
            // The discs that can reach this element (its vertices' box, padded by a fifth
            // of its size for curved edges): usually none.
            let corners = mesh.triangles[t].map(|v| mesh.nodes[v as usize]);
            let (lo, hi) = corners.iter().fold(([f64::INFINITY; 2], [f64::NEG_INFINITY; 2]), |(lo, hi), p| {
                ([lo[0].min(p[0]), lo[1].min(p[1])], [hi[0].max(p[0]), hi[1].max(p[1])])
            });
            let pad = 0.2 * (hi[0] - lo[0]).max(hi[1] - lo[1]);
            let near: Vec<(Xy, f64)> = discs
                .iter()
                .filter(|(c, r)| {
                    c[0] + r >= lo[0] - pad
                        && c[0] - r <= hi[0] + pad
                        && c[1] + r >= lo[1] - pad
                        && c[1] - r <= hi[1] + pad
                })
                .copied()
                .collect();
            let field = |xi: f64, eta: f64| {
                let p = eval_point(mesh, &solution.potential, t, xi, eta);
                let w = p.det.abs() * if axisym { 2.0 * std::f64::consts::PI * p.at[0] } else { 1.0 };
                let out = near.iter().all(|(c, r)| (p.at[0] - c[0]).powi(2) + (p.at[1] - c[1]).powi(2) >= r * r);
                // |E| below 1e150 V/m (the input ranges keep it far below): no overflow.
                ((p.e[0] * p.e[0] + p.e[1] * p.e[1]).sqrt(), w, out)
            };
            let add = |(e, w, out): (f64, f64, bool), acc: &mut Vec<f64>| {
                acc[0] += w;
                for (k, &x) in fractions.iter().enumerate() {
                    if e >= x * e_ref {
                        acc[1 + k] += w;
                    }
                }
                if let Some(m) = weibull_shape {
                    let v = w * (e / e_ref).powf(m);
                    acc[n + 1] += v;
                    if out {
                        acc[n + 2] += v;
                    }
                }
            };
            let probe = [(0.0, 0.0), (1.0, 0.0), (0.0, 1.0), (1.0 / 3.0, 1.0 / 3.0)];
            let high = probe.iter().map(|&(a, b)| field(a, b).0).fold(0.0, f64::max);
            if high < 0.7 * lowest * e_ref {
                for &(xi, eta, w) in &QUAD_DEG4 {
                    let (e, j, out) = field(xi, eta);
                    add((e, w * j, out), &mut acc);
                }
            } else {
                let s = SUBDIVISION as f64;
                let w = 0.5 / (s * s);
                for i in 0..SUBDIVISION {
                    for j in 0..SUBDIVISION - i {
                        let (fi, fj) = (i as f64, j as f64);
                        // The upward sub-triangle (i, j), (i+1, j), (i, j+1) …
                        let (e, jac, out) = field((fi + 1.0 / 3.0) / s, (fj + 1.0 / 3.0) / s);
                        add((e, w * jac, out), &mut acc);
                        // … and the downward one (i+1, j), (i+1, j+1), (i, j+1).
                        if i + j + 1 < SUBDIVISION {
                            let (e, jac, out) = field((fi + 2.0 / 3.0) / s, (fj + 2.0 / 3.0) / s);
                            add((e, w * jac, out), &mut acc);
                        }
                    }
                }
            }
            acc
        })
        .collect::<Vec<_>>()
        // Summed in element order, so the figures do not depend on the thread count.
        .into_iter()
        .fold(vec![0.0; n + 3], |mut a, b| {
            for (x, y) in a.iter_mut().zip(&b) {
                *x += y;
            }
            a
        });
    let weibull = weibull_shape.map(|m| {
        let diverges_at = mesh
            .singular_points
            .iter()
            .position(|s| s.is_field_singular() && s.regions.contains(&region) && m * (1.0 - s.lambda) >= 2.0);
        WeibullVolume {
            shape: m,
            effective_volume: diverges_at.is_none().then_some(sums[n + 1]),
            diverges_at,
            outside_discs: sums[n + 2],
        }
    });
    StressedVolume {
        region,
        e_ref_v_per_m: e_ref,
        volume_m3: sums[0],
        above: fractions.iter().enumerate().map(|(k, &x)| (x, sums[1 + k])).collect(),
        weibull,
    }
}
