//! Goal-oriented error estimates: the error of one quantity of interest, not of the whole
//! solution, by dual-weighted recovered errors.
//!
//! # Algorithm
//! For a quantity J(V) and the Galerkin solution V_h, the error is J(V) − J(V_h) =
//! a(V − V_h, Z − Z_h) (plus a quadratic remainder for a nonlinear J), where Z is the
//! solution of the dual problem a(v, Z) = J′(v) for every admissible v and a the energy
//! bilinear form ∫∇vᵀε∇Z w dA (w = 2πr in axisymmetry). Both errors are replaced by the
//! recovered ones of the module `estimate` (gradient recovery one degree higher):
//!
//! ```text
//! J(V) − J(V_h) ≈ Σₜ ∫ₜ (G_V − ∇V_h)ᵀ ε (G_Z − ∇Z_h) w dA,
//! ```
//!
//! whose terms, in absolute value, are the triangles' indicators for refining towards the
//! quantity. The quantities and their dual problems:
//! - the charge Q_k of a conductor at a fixed potential: Z is the potential with conductor
//!   k at 1 V and the other fixed conductors at 0 (the capacitance column, already solved);
//!   Q_k is the reaction a(V, Z) − ℓ(Z), so Q_k − Q_k,h = −a(V − V_h, Z − Z_h);
//! - the potential of a floating conductor: Z is the potential of a unit charge on it with
//!   every fixed conductor at 0 V;
//! - the mean square field over a disc, J = ∫ω|∇V|² w dA / ∫ω w dA with the bump
//!   ω = (1 − |x − c|²/ρ²)² inside the disc (and inside one region): the load of the dual
//!   problem is J′(v) = 2∫ω∇V_h·∇v w dA / ∫ω w dA, and the remainder ∫ω|∇(V − V_h)|² w dA /
//!   ∫ω w dA is added, recovered. This stands in for a peak field, which is not a
//!   functional of V: centred at the peak, with ρ a few elements, its relative error is
//!   twice the relative error of the field there;
//! - the mean potential over a disc, J = ∫ω V w dA / ∫ω w dA with the same bump: linear, its
//!   dual load is J(v) itself. Centred at a point, with ρ a few elements, it stands in for
//!   the potential at the point (whose own dual, a point load, has no finite energy).
//!
//! Every dual problem reuses the factorisation of the solution ([`FactoredSolution`]): one
//! forward and back substitution each.
//!
//! # References
//! - R. Becker, R. Rannacher, "An optimal control approach to a posteriori error
//!   estimation in finite element methods", Acta Numerica 10 (2001) 1–102,
//!   doi:10.1017/S0962492901000010.
//! - S. Prudhomme, J. T. Oden, "On goal-oriented error estimation for elliptic problems:
//!   application to the control of pointwise errors", Comput. Methods Appl. Mech. Eng. 176
//!   (1999) 313–331, doi:10.1016/S0045-7825(98)00343-0.
//! - O. C. Zienkiewicz, J. Z. Zhu, "The superconvergent patch recovery and a posteriori
//!   error estimates. Part 1", Int. J. Numer. Methods Eng. 33 (1992) 1331–1364 (the
//!   recovered gradients).

use crate::estimate::{error_products, primal_samples, recover_field_with};
use crate::problem::Problem;
use crate::solve::{DualCase, FactoredSolution};
use crate::space::{Element, P1, P2};
use mesher::{Mesh, Symmetry, Xy};

/// A quantity of interest whose error is estimated.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Goal {
    /// The charge of conductor `k` (a conductor at a fixed potential).
    Charge(usize),
    /// The potential of floating conductor `k`.
    FloatingPotential(usize),
    /// The root-mean-square field over a disc, weighted by the bump (1 − |x − c|²/ρ²)²,
    /// within `region` only if one is given: the stand-in for a peak field at `center`.
    LocalField {
        /// Centre c, metres.
        center: Xy,
        /// Radius ρ, metres.
        radius_m: f64,
        /// Only the triangles of this region count.
        region: Option<u32>,
    },
    /// The mean potential over a disc, weighted by the same bump, within `region` if one is
    /// given: the stand-in for the potential at `center`.
    LocalPotential {
        /// Centre c, metres.
        center: Xy,
        /// Radius ρ, metres.
        radius_m: f64,
        /// Only the triangles of this region count.
        region: Option<u32>,
    },
    /// The potential at `at`: estimated by the local potential over a disc three times the
    /// longest edge at the point (as for a peak).
    PointPotential {
        /// The point, metres.
        at: Xy,
        /// The region whose side is meant (a point on an interface).
        region: Option<u32>,
    },
    /// A peak field |E| = `value` at `at` (a mesh node): estimated by the local field over
    /// a disc three times the longest edge ending at the point (at least one ring of
    /// elements), its relative error applied to the peak, or, if larger, by the distance
    /// between the peak and the recovered field at the point.
    PeakField {
        /// Where the peak is, metres.
        at: Xy,
        /// The peak value, V/m.
        value: f64,
        /// The region whose field it is.
        region: Option<u32>,
    },
}

/// Safety factor on the distance between a peak's two estimates (recovered and the
/// elements' own field), as the grid convergence index puts on the distance between two
/// meshes' values (Roache 1994: 1.25): the distance bounds the error of the worse of the
/// two only roughly. Without it the bar missed the true error by 9 % on one of seven meshes
/// of the coaxial test (bench-results/error-bars.md).
const SECOND_OPINION_SAFETY: f64 = 1.25;

/// The area-weighted mean of the elements' own fields at vertex `v` over the triangles of
/// its side `(region, fan)` there.
fn vertex_mean_field(
    mesh: &Mesh,
    potential: &[f64],
    v: u32,
    (r, fan): (u32, u8),
    fans: &mesher::CornerFans,
) -> [f64; 2] {
    let (mut acc, mut w) = ([0.0; 2], 0.0);
    for (t, tri) in mesh.triangles.iter().enumerate() {
        if mesh.regions[t] != r {
            continue;
        }
        let Some(k) = tri.iter().position(|&x| x == v) else { continue };
        if fans.of(t, k) != fan {
            continue;
        }
        let (xi, eta) = [(0.0, 0.0), (1.0, 0.0), (0.0, 1.0)][k];
        let e = crate::fields::eval_point(mesh, potential, t, xi, eta).e;
        let a = mesh.triangle_area(t).abs();
        acc[0] += a * e[0];
        acc[1] += a * e[1];
        w += a;
    }
    if w > 0.0 {
        [acc[0] / w, acc[1] / w]
    } else {
        acc
    }
}

/// Radius of the disc of a peak's local field: three times the longest edge of the
/// triangles at `at` (of the nearest triangle if no vertex sits there).
fn peak_radius(mesh: &Mesh, at: Xy) -> f64 {
    let d2 = |q: Xy| (q[0] - at[0]).powi(2) + (q[1] - at[1]).powi(2);
    let edges = |t: usize| {
        let p = mesh.triangles[t].map(|v| mesh.nodes[v as usize]);
        (0..3).map(|k| (p[k][0] - p[(k + 1) % 3][0]).hypot(p[k][1] - p[(k + 1) % 3][1])).fold(0.0, f64::max)
    };
    let tol2 = (1e-12 * mesh.scale()).powi(2);
    let mut longest: f64 = 0.0;
    let mut nearest = (f64::INFINITY, 0usize);
    for (t, tri) in mesh.triangles.iter().enumerate() {
        let mut touches = false;
        for &v in tri {
            let d = d2(mesh.nodes[v as usize]);
            touches |= d <= tol2;
            if d < nearest.0 {
                nearest = (d, t);
            }
        }
        if touches {
            longest = longest.max(edges(t));
        }
    }
    if longest == 0.0 && !mesh.triangles.is_empty() {
        longest = edges(nearest.1);
    }
    3.0 * longest
}

/// The estimated error of one goal.
#[derive(Clone, Debug, PartialEq)]
pub struct GoalEstimate {
    /// The quantity on this mesh: C (C/m planar) for a charge, V for a potential, V/m for
    /// a local field (its root-mean-square value over the disc).
    pub value: f64,
    /// Estimated exact − computed value, in the quantity's unit.
    pub estimate: f64,
    /// |contribution| per triangle, in the unit of the quantity (for a local field, of
    /// its mean square), for marking.
    pub indicators: Vec<f64>,
}

/// Shape functions of triangle `t` at reference point (ξ, η).
struct Basis {
    /// Node ids (the first `n` count).
    ids: [u32; 6],
    /// 3 (P1) or 6 (P2).
    n: usize,
    /// Physical gradients.
    grads: [[f64; 2]; 6],
    /// Values.
    values: [f64; 6],
    /// The physical point.
    at: Xy,
    /// Jacobian determinant.
    det: f64,
}

fn basis_at(mesh: &Mesh, t: usize, xi: f64, eta: f64) -> Basis {
    fn build<const N: usize, E: Element<N>>(ids: [u32; 6], x: &[Xy; N], xi: f64, eta: f64) -> Basis {
        let (g, v, j, at, det) = crate::fields::isoparametric::<N, E>(x, xi, eta);
        let mut grads = [[0.0; 2]; 6];
        let mut values = [0.0; 6];
        for k in 0..N {
            // ∇φ = J⁻ᵀ ∇̂φ.
            grads[k] = [(j[1][1] * g[k][0] - j[1][0] * g[k][1]) / det, (-j[0][1] * g[k][0] + j[0][0] * g[k][1]) / det];
            values[k] = v[k];
        }
        Basis { ids, n: N, grads, values, at, det }
    }
    let tri = mesh.triangles[t];
    if mesh.mid_nodes.is_empty() {
        build::<3, P1>([tri[0], tri[1], tri[2], 0, 0, 0], &tri.map(|i| mesh.nodes[i as usize]), xi, eta)
    } else {
        let m = mesh.mid_nodes[t];
        let ids = [tri[0], tri[1], tri[2], m[0], m[1], m[2]];
        build::<6, P2>(ids, &ids.map(|i| mesh.nodes[i as usize]), xi, eta)
    }
}

/// The triangles that reach into the disc (centre, radius): their corners' bounding box,
/// widened by a tenth for curved P2 edges, comes within the radius of the centre.
fn near_disc(mesh: &Mesh, center: Xy, radius: f64) -> impl Iterator<Item = usize> + '_ {
    (0..mesh.triangles.len()).filter(move |&t| {
        let p = mesh.triangles[t].map(|v| mesh.nodes[v as usize]);
        let (x0, x1) = (p[0][0].min(p[1][0]).min(p[2][0]), p[0][0].max(p[1][0]).max(p[2][0]));
        let (y0, y1) = (p[0][1].min(p[1][1]).min(p[2][1]), p[0][1].max(p[1][1]).max(p[2][1]));
        let pad = 0.1 * (x1 - x0).max(y1 - y0);
        let dx = (x0 - pad - center[0]).max(center[0] - x1 - pad).max(0.0);
        let dy = (y0 - pad - center[1]).max(center[1] - y1 - pad).max(0.0);
        dx.hypot(dy) < radius
    })
}

/// A disc goal's load per node, ∫ω f w dA / ∫ω w dA: `add(basis, weight, load)` adds one
/// quadrature point's terms, weighted by ω·w·|J| (w = 2πr in axisymmetry), over the
/// triangles of the disc (centre, radius, and only those of the region, if one is given).
fn disc_load(
    mesh: &Mesh,
    quad: &crate::fields::SingularQuadrature,
    (center, radius, region): (Xy, f64, Option<u32>),
    mut add: impl FnMut(&Basis, f64, &mut [f64]),
) -> Vec<f64> {
    let axisym = mesh.symmetry == Symmetry::Axisymmetric;
    let mut load = vec![0.0; mesh.nodes.len()];
    let mut total = 0.0;
    for t in near_disc(mesh, center, radius) {
        if region.is_some_and(|r| r != mesh.regions[t]) {
            continue;
        }
        for &(xi, eta, w) in quad.rule(quad.corner(mesh, t)) {
            let b = basis_at(mesh, t, xi, eta);
            let o = bump(center, radius, b.at);
            if o == 0.0 {
                continue;
            }
            let mut weight = w * b.det.abs() * o;
            if axisym {
                weight *= 2.0 * std::f64::consts::PI * b.at[0];
            }
            add(&b, weight, &mut load);
            total += weight;
        }
    }
    if total > 0.0 {
        for l in &mut load {
            *l /= total;
        }
    }
    load
}

/// The bump weight of a local-field goal at `x`.
fn bump(center: Xy, radius: f64, x: Xy) -> f64 {
    let q = ((x[0] - center[0]).powi(2) + (x[1] - center[1]).powi(2)) / (radius * radius);
    if q < 1.0 {
        (1.0 - q).powi(2)
    } else {
        0.0
    }
}

/// Estimates the error of every goal on the solution's mesh (module docs).
///
/// # Panics
/// If a goal names a conductor that is not fixed (a charge) or not floating (a
/// potential), or the solution does not belong to the mesh.
#[track_caller]
pub fn goal_estimates(mesh: &Mesh, problem: &Problem, solved: &FactoredSolution, goals: &[Goal]) -> Vec<GoalEstimate> {
    let sol = &solved.solution;
    assert_eq!(sol.potential.len(), mesh.nodes.len(), "solution and mesh do not match");
    // A peak is estimated through the local field around it.
    let asked = goals;
    let local: Vec<Goal> = goals
        .iter()
        .map(|g| match *g {
            Goal::PeakField { at, region, .. } => {
                Goal::LocalField { center: at, radius_m: peak_radius(mesh, at), region }
            }
            Goal::PointPotential { at, region } => {
                Goal::LocalPotential { center: at, radius_m: peak_radius(mesh, at), region }
            }
            other => other,
        })
        .collect();
    let goals = &local[..];
    let recovered = solved.recovery(mesh);
    let (quad, plan) = (&recovered.quad, &recovered.plan);
    let u = recovered.field(&sol.potential);
    let primal = primal_samples(mesh, quad, &u);
    // The dual problems that need a solve, in goal order.
    let mut cases = Vec::new();
    for g in goals {
        match *g {
            Goal::Charge(_) | Goal::PeakField { .. } | Goal::PointPotential { .. } => {}
            Goal::LocalPotential { center, radius_m, region } => {
                // J(v) = ∫ω v w / ∫ω w, linear: its load per node is ∫ω φ_k w / ∫ω w.
                let load = disc_load(mesh, quad, (center, radius_m, region), |b, weight, load| {
                    for k in 0..b.n {
                        load[b.ids[k] as usize] += weight * b.values[k];
                    }
                });
                cases.push(DualCase { unit_charge: None, node_load: Some(load) });
            }
            Goal::FloatingPotential(k) => cases.push(DualCase { unit_charge: Some(k), node_load: None }),
            Goal::LocalField { center, radius_m, region } => {
                // J′(v) = 2∫ω∇V_h·∇v w / ∫ω w as a load per node.
                let load = disc_load(mesh, quad, (center, radius_m, region), |b, weight, load| {
                    let mut gv = [0.0; 2];
                    for k in 0..b.n {
                        let v = sol.potential[b.ids[k] as usize];
                        gv[0] += v * b.grads[k][0];
                        gv[1] += v * b.grads[k][1];
                    }
                    for k in 0..b.n {
                        load[b.ids[k] as usize] += 2.0 * weight * (gv[0] * b.grads[k][0] + gv[1] * b.grads[k][1]);
                    }
                });
                cases.push(DualCase { unit_charge: None, node_load: Some(load) });
            }
        }
    }
    let mut duals = solved.solve_duals(problem, &cases).into_iter();
    let grid = crate::probe::TriangleGrid::new(mesh);
    let estimates: Vec<GoalEstimate> = goals
        .iter()
        .map(|g| match *g {
            Goal::Charge(k) => {
                let col = solved
                    .capacitance
                    .0
                    .iter()
                    .position(|&c| c == k)
                    .expect("a charge goal names a conductor at a fixed potential");
                let z = recover_field_with(plan, mesh, &solved.columns[col]);
                let p = error_products(mesh, problem, quad, &primal, &z, None);
                let sum: f64 = p.iter().map(|x| x[0]).sum();
                GoalEstimate {
                    value: sol.conductor_charges[k],
                    estimate: -sum,
                    indicators: p.iter().map(|x| x[0].abs()).collect(),
                }
            }
            Goal::FloatingPotential(k) => {
                let zp = duals.next().expect("one dual per floating potential");
                let z = recover_field_with(plan, mesh, &zp);
                let p = error_products(mesh, problem, quad, &primal, &z, None);
                GoalEstimate {
                    value: sol.conductor_potentials[k],
                    estimate: p.iter().map(|x| x[0]).sum(),
                    indicators: p.iter().map(|x| x[0].abs()).collect(),
                }
            }
            Goal::LocalField { center, radius_m, region } => {
                let zp = duals.next().expect("one dual per local field");
                let z = recover_field_with(plan, mesh, &zp);
                let omega = move |x: Xy| bump(center, radius_m, x);
                let mut p = error_products(mesh, problem, quad, &primal, &z, Some(&omega));
                if let Some(r) = region {
                    for (t, x) in p.iter_mut().enumerate() {
                        if mesh.regions[t] != r {
                            x[1] = 0.0;
                            x[2] = 0.0;
                            x[3] = 0.0;
                        }
                    }
                }
                let total: f64 = p.iter().map(|x| x[3]).sum();
                let mean_square = if total > 0.0 { p.iter().map(|x| x[2]).sum::<f64>() / total } else { 0.0 };
                let remainder = if total > 0.0 { p.iter().map(|x| x[1]).sum::<f64>() / total } else { 0.0 };
                let linear: f64 = p.iter().map(|x| x[0]).sum();
                let rms = mean_square.sqrt();
                // J = E_rms²: δE ≈ δJ/(2E).
                let d_ms = linear + remainder;
                GoalEstimate {
                    value: rms,
                    estimate: if rms > 0.0 { d_ms / (2.0 * rms) } else { 0.0 },
                    indicators: p.iter().map(|x| x[0].abs() + if total > 0.0 { x[1] / total } else { 0.0 }).collect(),
                }
            }
            Goal::LocalPotential { center, .. } => {
                let zp = duals.next().expect("one dual per local potential");
                let z = recover_field_with(plan, mesh, &zp);
                let p = error_products(mesh, problem, quad, &primal, &z, None);
                let value = grid
                    .locate(mesh, center)
                    .map_or(0.0, |(t, xi, eta)| crate::fields::eval_point(mesh, &sol.potential, t, xi, eta).v);
                GoalEstimate {
                    value,
                    estimate: p.iter().map(|x| x[0]).sum(),
                    indicators: p.iter().map(|x| x[0].abs()).collect(),
                }
            }
            Goal::PeakField { .. } | Goal::PointPotential { .. } => {
                unreachable!("peaks and point potentials were turned into local goals")
            }
        })
        .collect();
    // Peaks: the local field's relative error applied to the peak value; its indicators
    // (in units of the mean square field) turned into the peak's unit.
    // At a vertex the recovered field is a second opinion: the distance between it and the
    // peak (a mean of the elements' own fields) bounds the peak's error where the
    // recovered field is the better of the two, as it is on a smooth solution.
    let tol2 = (1e-12 * mesh.scale()).powi(2);
    let vertex_at = |at: Xy| {
        (0..mesh.num_vertices).find(|&v| {
            let q = mesh.nodes[v as usize];
            (q[0] - at[0]).powi(2) + (q[1] - at[1]).powi(2) <= tol2
        })
    };
    asked
        .iter()
        .zip(estimates)
        .map(|(g, e)| match *g {
            Goal::PeakField { value, at, region } if e.value > 0.0 => {
                let scale = value / (2.0 * e.value * e.value);
                let dwr = e.estimate / e.value * value;
                // The face with the stronger field on a thin electrode; the region itself
                // elsewhere.
                let side = vertex_at(at).zip(region).and_then(|(v, r)| Some((v, u.strongest_side(v, r)?)));
                let second = match side {
                    Some((v, side)) => {
                        // The recovered field there against the mean of the elements' own
                        // fields at the vertex: whichever of the two the peak is, their
                        // distance bounds its error where the other is the better.
                        let f = u.field_at_vertex(v, side);
                        let mean = vertex_mean_field(mesh, &sol.potential, v, side, u.fans());
                        let other = if (f[0].hypot(f[1]) - value).abs() <= 1e-12 * value { mean } else { f };
                        SECOND_OPINION_SAFETY * (other[0].hypot(other[1]) - value).abs()
                    }
                    // Between vertices (a rim or probe sample): the recovered against the
                    // element's own field there.
                    _ => match grid.locate(mesh, at) {
                        Some((t, xi, eta)) => {
                            let (rec, own) = u.fields_at(mesh, quad, t, xi, eta);
                            SECOND_OPINION_SAFETY * (rec[0].hypot(rec[1]) - own[0].hypot(own[1])).abs()
                        }
                        None => 0.0,
                    },
                };
                GoalEstimate {
                    value,
                    estimate: dwr.signum() * dwr.abs().max(second),
                    indicators: e.indicators.iter().map(|z| z * scale).collect(),
                }
            }
            Goal::PeakField { value, .. } => GoalEstimate { value, estimate: 0.0, indicators: e.indicators },
            _ => e,
        })
        .collect()
}
