//! A posteriori error estimate by gradient recovery (linear elements).
//!
//! # Algorithm
//! The recovered field G is the area-weighted mean, at every vertex, of the gradients of
//! the elements of one region around it (never averaged across an interface, so each
//! side keeps its own flux), interpolated linearly over each element. The element
//! indicator is ηₜ² = ∫ₜ ε|G − ∇V_h|² w dA (w = 1 planar, 2πr axisymmetric) and the
//! global estimate η = (Σηₜ²)^(1/2) approximates the energy norm of the error. On smooth
//! problems G is superconvergent and the effectivity index η/‖e‖ tends to 1.
//!
//! This is the linear-element estimator only; quadratic elements need a patch fit one
//! degree higher (plain averaging underestimates their error), which is not done here.
//!
//! # References
//! - O. C. Zienkiewicz, J. Z. Zhu, "A simple error estimator and adaptive procedure for
//!   practical engineering analysis", Int. J. Numer. Methods Eng. 24 (1987) 337–357,
//!   doi:10.1002/nme.1620240206.

use crate::fields::{gradient_at, region_vertex_means};
use crate::problem::Problem;
use crate::solve::{Solution, EPSILON_0};
use crate::space::{Element, P1, QUAD_DEG4};
use mesher::{Mesh, Symmetry};

/// Per-element indicators and the global estimate.
#[derive(Clone, Debug)]
pub struct ErrorEstimate {
    /// ηₜ per triangle (energy-norm units, √J or √(J/m)·√2).
    pub indicators: Vec<f64>,
    /// Global estimate η.
    pub global: f64,
    /// Energy norm of the solution ‖V_h‖ = (∫ε|∇V_h|² w dA)^(1/2), for relative figures.
    pub solution_norm: f64,
}

impl ErrorEstimate {
    /// η / ‖V_h‖: relative energy-norm error estimate. The relative capacitance (energy)
    /// error of a one-electrode problem is about its square.
    pub fn relative(&self) -> f64 {
        self.global / self.solution_norm
    }
}

/// Recovery-based estimate for a linear-element solution.
///
/// # Panics
/// If the mesh is of order 2 (not supported yet) or the solution does not belong to it.
#[track_caller]
pub fn estimate_error(mesh: &Mesh, problem: &Problem, solution: &Solution) -> ErrorEstimate {
    assert!(mesh.mid_nodes.is_empty(), "the recovery estimator is implemented for linear elements only");
    assert_eq!(solution.potential.len(), mesh.nodes.len(), "solution and mesh do not match");
    let nt = mesh.triangles.len();
    let grad: Vec<[f64; 2]> =
        (0..nt).map(|t| gradient_at(mesh, &solution.potential, t, 1.0 / 3.0, 1.0 / 3.0)).collect();
    // Region-wise vertex averages of the element gradients, weighted by area.
    let mut entries: Vec<(u32, u32, [f64; 2], f64)> = Vec::with_capacity(3 * nt);
    for (t, tri) in mesh.triangles.iter().enumerate() {
        let a = mesh.triangle_area(t).abs();
        for &v in tri {
            entries.push((v, mesh.regions[t], grad[t], a));
        }
    }
    let recovered = region_vertex_means(entries);
    let lookup = |v: u32, r: u32| -> [f64; 2] {
        let k = recovered
            .binary_search_by_key(&(v, r), |g| (g.node, g.region))
            .expect("every vertex of the region was averaged");
        recovered[k].mean
    };
    let axisym = mesh.symmetry == Symmetry::Axisymmetric;
    let mut indicators = Vec::with_capacity(nt);
    let (mut total, mut norm) = (0.0, 0.0);
    for (t, tri) in mesh.triangles.iter().enumerate() {
        let eps = EPSILON_0 * problem.permittivity[mesh.regions[t] as usize];
        let gv = tri.map(|v| lookup(v, mesh.regions[t]));
        let x = tri.map(|v| mesh.nodes[v as usize]);
        let area = mesh.triangle_area(t).abs();
        let (mut eta2, mut n2) = (0.0, 0.0);
        for &(xi, eta, w) in &QUAD_DEG4 {
            let phi = P1::values(xi, eta);
            let mut weight = 2.0 * area * w * eps;
            if axisym {
                let r: f64 = (0..3).map(|k| phi[k] * x[k][0]).sum();
                weight *= 2.0 * std::f64::consts::PI * r;
            }
            let g = [(0..3).map(|k| phi[k] * gv[k][0]).sum::<f64>(), (0..3).map(|k| phi[k] * gv[k][1]).sum::<f64>()];
            let d = [g[0] - grad[t][0], g[1] - grad[t][1]];
            eta2 += weight * (d[0] * d[0] + d[1] * d[1]);
            n2 += weight * (grad[t][0] * grad[t][0] + grad[t][1] * grad[t][1]);
        }
        indicators.push(eta2.sqrt());
        total += eta2;
        norm += n2;
    }
    ErrorEstimate { indicators, global: total.sqrt(), solution_norm: norm.sqrt() }
}
