//! A posteriori error estimate by superconvergent patch recovery of the gradient, for linear
//! and quadratic elements.
//!
//! # Algorithm
//! For every vertex v and every region r around it, the *patch* is the set of elements of
//! region r that share v. The finite-element gradient ∇V_h is sampled in each patch element
//! (at the centroid for P1, at the three points of the degree-2 rule for P2) and each of its
//! two components is fitted by least squares with a polynomial one degree higher than the
//! gradient itself (linear for P1, quadratic for P2), in coordinates centred on v and scaled
//! by the patch size. A patch with too few samples for a well-posed fit (a corner of the
//! boundary, an element alone in its region at v) is grown by one ring of elements of the
//! same region; if even that fails the fit drops to the mean of the samples.
//!
//! The recovered gradient G is then interpolated in the element's own space: at a vertex
//! it is the vertex patch's fit, at a P2 mid-edge node the mean of the fits of the edge's
//! two end vertices evaluated there. Patches never cross an interface, so each material
//! recovers its own flux ε∇V (with ε constant per region, fitting ∇V is the same thing).
//! The element indicator is
//!
//! ```text
//! ηₜ² = ∫ₜ (G − ∇V_h)ᵀ ε (G − ∇V_h) w dA,   w = 1 planar, 2πr axisymmetric,
//! ```
//!
//! with the degree-4 rule on the isoparametric element, and η = (Σηₜ²)^(1/2) approximates
//! the energy norm of the error ‖V − V_h‖. The energy and, for one electrode at a fixed
//! potential, the capacitance then have relative error ≈ (η/‖V_h‖)² (the error of the
//! energy equals the squared energy norm of the error for the Galerkin solution).
//!
//! At a vertex on a singular point (λ < 1) the gradient is unbounded and no polynomial fits
//! it: that patch is fitted with the local expansion instead, G = a·∇(r^λ cos λψ) +
//! b·∇(r^λ sin λψ) + c, and on the elements touching the point G is this fit itself (not an
//! interpolation), integrated with the rule graded towards the point. Without this the
//! corner elements, which hold most of the error of a graded P2 mesh, are overestimated
//! and the effectivity of P2 on the graded L-shape was 1.7.
//!
//! Plain averaging of element gradients at the vertices is enough for P1 but underestimates
//! the error of P2 (effectivity near 0.7): the fit one degree higher is what keeps the
//! effectivity index η/‖e‖ near 1 for both orders. Measured effectivities are listed in
//! `README.md` ("Accuracy, measured").
//!
//! In the mapped exterior of an open boundary the estimate is taken in the mapped
//! coordinates; in the planar case the Kelvin map is conformal and keeps the energy, so
//! the figure is the physical one.
//!
//! # References
//! - O. C. Zienkiewicz, J. Z. Zhu, "The superconvergent patch recovery and a posteriori
//!   error estimates. Part 1: The recovery technique", Int. J. Numer. Methods Eng. 33 (1992)
//!   1331–1364, doi:10.1002/nme.1620330702.
//! - O. C. Zienkiewicz, J. Z. Zhu, "A simple error estimator and adaptive procedure for
//!   practical engineering analysis", Int. J. Numer. Methods Eng. 24 (1987) 337–357,
//!   doi:10.1002/nme.1620240206.

use crate::fields::{eval_point, PointValue, SingularQuadrature};
use crate::problem::Problem;
use crate::solve::{Solution, EPSILON_0};
use crate::space::{Element, P1, P2, QUAD_DEG2};
use mesher::{CornerFans, Mesh, Symmetry, Xy};
use rayon::prelude::*;
use std::borrow::Cow;
use std::sync::Arc;

/// Per-element indicators and the global estimate.
#[derive(Clone, Debug)]
pub struct ErrorEstimate {
    /// ηₜ per triangle (energy-norm units: √J planar per metre, √J axisymmetric).
    pub indicators: Vec<f64>,
    /// Global estimate η.
    pub global: f64,
    /// Energy norm of the solution ‖V_h‖ = (∫∇V_hᵀε∇V_h w dA)^(1/2), for relative figures.
    pub solution_norm: f64,
}

impl ErrorEstimate {
    /// η / ‖V_h‖: relative energy-norm error estimate.
    pub fn relative(&self) -> f64 {
        self.global / self.solution_norm
    }

    /// (η / ‖V_h‖)²: the estimated relative error of the stored energy, and of the
    /// capacitance of a single electrode at a fixed potential.
    pub fn relative_energy(&self) -> f64 {
        self.relative().powi(2)
    }
}

/// A side of a vertex: a region, and the fan of that region's triangles around the
/// vertex (more than one only on a thin electrode, whose faces are not averaged together;
/// `Mesh::corner_fans`).
pub(crate) type VertexSide = (u32, u8);

/// One patch fit of the gradient around a vertex, on one side of it.
#[derive(Clone, Copy, Debug)]
struct PatchFit {
    side: VertexSide,
    center: Xy,
    scale: f64,
    kind: FitKind,
}

#[derive(Clone, Copy, Debug)]
enum FitKind {
    /// G(x) = Σ cₖ·bₖ((x − centre)/scale) per component over the basis 1, s, t, s², st, t²
    /// (the first three for a linear fit).
    Polynomial([[f64; 6]; 2]),
    /// G = a·∇(ρ^λ cos λψ) + b·∇(ρ^λ sin λψ) + (c₀, c₁), ρ = r/scale, ψ the polar angle
    /// from `cut`: the local expansion of the potential at a singular point within one
    /// dielectric.
    Singular { lambda: f64, cut: f64, coef: [f64; 4] },
}

impl PatchFit {
    fn eval(&self, p: Xy) -> [f64; 2] {
        let (s, t) = ((p[0] - self.center[0]) / self.scale, (p[1] - self.center[1]) / self.scale);
        match self.kind {
            FitKind::Polynomial(coef) => {
                let b = basis(s, t);
                let dot = |c: &[f64; 6]| (0..6).map(|k| c[k] * b[k]).sum::<f64>();
                [dot(&coef[0]), dot(&coef[1])]
            }
            FitKind::Singular { lambda, cut, coef } => {
                let [u, v] = singular_gradients(s, t, lambda, cut);
                [coef[0] * u[0] + coef[1] * v[0] + coef[2], coef[0] * u[1] + coef[1] * v[1] + coef[3]]
            }
        }
    }

    /// The value at the patch's own vertex (the polynomial's constant term).
    fn at_center(&self) -> [f64; 2] {
        match self.kind {
            FitKind::Polynomial(coef) => [coef[0][0], coef[1][0]],
            FitKind::Singular { coef, .. } => [coef[2], coef[3]],
        }
    }
}

/// ∇(ρ^λ cos λψ) and ∇(ρ^λ sin λψ) in the scaled coordinates (s, t), ψ = atan2(t, s) − cut
/// taken in (0, 2π): the real and imaginary parts of the analytic function (e^(−i·cut)z)^λ,
/// whose derivative is λ(e^(−i·cut)z)^(λ−1)·e^(−i·cut).
fn singular_gradients(s: f64, t: f64, lambda: f64, cut: f64) -> [[f64; 2]; 2] {
    let rho = s.hypot(t).max(1e-300);
    let psi = (t.atan2(s) - cut).rem_euclid(std::f64::consts::TAU);
    // f'(z) = λ ρ^(λ−1) e^{i((λ−1)ψ − cut)}; ∇Re f = (Re f', −Im f'), ∇Im f = (Im f', Re f').
    let mag = lambda * rho.powf(lambda - 1.0);
    let (im, re) = ((lambda - 1.0) * psi - cut).sin_cos();
    let (re, im) = (mag * re, mag * im);
    [[re, -im], [im, re]]
}

fn basis(s: f64, t: f64) -> [f64; 6] {
    [1.0, s, t, s * s, s * t, t * t]
}

/// One gradient sample: position and ∇V_h.
type Sample = (Xy, [f64; 2]);

/// The largest distance of a sample point from `center` (the patch scale), if positive.
fn patch_scale_of(points: &[Xy], center: Xy) -> Option<f64> {
    let scale2 = points.iter().map(|p| (p[0] - center[0]).powi(2) + (p[1] - center[1]).powi(2)).fold(0.0, f64::max);
    (scale2 > 0.0).then(|| scale2.sqrt())
}

/// The branch cut of the singular basis' angle: opposite the patch's mean direction from
/// the singular point, outside the region's sector.
fn branch_cut(points: &[Xy], center: Xy) -> f64 {
    let (mx, my) = points.iter().fold((0.0, 0.0), |a, p| {
        let (dx, dy) = (p[0] - center[0], p[1] - center[1]);
        let d = dx.hypot(dy).max(1e-300);
        (a.0 + dx / d, a.1 + dy / d)
    });
    my.atan2(mx) + std::f64::consts::PI
}

/// The recovered gradient of a solution.
#[derive(Clone)]
struct Recovery {
    /// The fits around every vertex, one per side there.
    fits: Vec<Vec<PatchFit>>,
    /// The fans of the corners (thin electrodes' faces).
    fans: Arc<CornerFans>,
    /// G at the nodes of every element (3 values for P1, 6 for P2, in the element's node
    /// order).
    nodes: Vec<[[f64; 2]; 6]>,
}

impl Recovery {
    fn fit_of(&self, v: u32, side: VertexSide) -> &PatchFit {
        self.fits[v as usize].iter().find(|f| f.side == side).expect("every side of a vertex has a fit")
    }

    /// The fit of corner `k` of triangle `t`: its vertex's, on the triangle's side.
    fn corner_fit(&self, mesh: &Mesh, t: usize, k: usize) -> &PatchFit {
        self.fit_of(mesh.triangles[t][k], (mesh.regions[t], self.fans.of(t, k)))
    }

    /// G at reference point (ξ, η) of triangle `t`, physical position `x`: interpolated
    /// from the element's nodes, or, on an element whose corner `singular_corner` touches a
    /// singular point, the singular fit of that point evaluated directly (it is unbounded
    /// there).
    fn at(&self, mesh: &Mesh, t: usize, singular_corner: Option<usize>, xi: f64, eta: f64, x: Xy) -> [f64; 2] {
        if let Some(k) = singular_corner {
            return self.corner_fit(mesh, t, k).eval(x);
        }
        let phi = if mesh.mid_nodes.is_empty() {
            let l = P1::values(xi, eta);
            [l[0], l[1], l[2], 0.0, 0.0, 0.0]
        } else {
            P2::values(xi, eta)
        };
        let g = &self.nodes[t];
        let mut out = [0.0; 2];
        for (k, f) in phi.iter().enumerate() {
            out[0] += f * g[k][0];
            out[1] += f * g[k][1];
        }
        out
    }
}

/// How each vertex patch is fitted: everything about the least-squares fits that depends on
/// the mesh only (patch, centre, scale, basis and the inverse of its normal matrix), so that
/// the gradients of several fields on one mesh (a solution and its dual problems) are
/// recovered by a matrix–vector product per patch.
pub(crate) struct RecoveryPlan {
    p2: bool,
    /// Sample points per element (reference coordinates).
    points: Vec<(f64, f64)>,
    /// Per vertex, one plan per side there.
    patches: Vec<Vec<PatchPlan>>,
    /// The fans of the corners (thin electrodes' faces).
    fans: Arc<CornerFans>,
}

struct PatchPlan {
    side: VertexSide,
    center: Xy,
    scale: f64,
    triangles: Vec<u32>,
    solver: Solver,
}

enum Solver {
    /// Polynomial basis of `m` terms (see `basis`), normal matrix inverted.
    Poly { m: usize, inv: [[f64; 6]; 6] },
    /// Singular basis with a constant, both components jointly (four unknowns).
    Singular { lambda: f64, cut: f64, inv: [[f64; 6]; 6] },
    /// The mean of the samples (a patch too small for a fit).
    Mean,
}

/// Inverts the leading `m`×`m` block of the normal matrix `a` (Gauss–Jordan with partial
/// pivoting); None when it is singular to working precision (a pivot at most 1e-10 of the
/// largest diagonal entry): the fit then falls back to a larger patch or the mean.
fn invert(mut a: [[f64; 6]; 6], m: usize) -> Option<[[f64; 6]; 6]> {
    let big = (0..m).map(|i| a[i][i]).fold(0.0, f64::max);
    let mut inv = [[0.0; 6]; 6];
    for (i, row) in inv.iter_mut().enumerate().take(m) {
        row[i] = 1.0;
    }
    for col in 0..m {
        let piv = (col..m).max_by(|&i, &j| a[i][col].abs().total_cmp(&a[j][col].abs()))?;
        if a[piv][col].abs().partial_cmp(&(1e-10 * big)) != Some(std::cmp::Ordering::Greater) {
            return None;
        }
        a.swap(col, piv);
        inv.swap(col, piv);
        let d = a[col][col];
        for k in 0..m {
            a[col][k] /= d;
            inv[col][k] /= d;
        }
        for row in 0..m {
            if row != col {
                let f = a[row][col];
                if f != 0.0 {
                    for k in 0..m {
                        a[row][k] -= f * a[col][k];
                        inv[row][k] -= f * inv[col][k];
                    }
                }
            }
        }
    }
    Some(inv)
}

impl RecoveryPlan {
    /// Chooses every patch and its fit from the mesh (module docs).
    pub(crate) fn new(mesh: &Mesh, quad: &SingularQuadrature) -> RecoveryPlan {
        let p2 = !mesh.mid_nodes.is_empty();
        let (m, points): (usize, Vec<(f64, f64)>) =
            if p2 { (6, QUAD_DEG2.iter().map(|q| (q.0, q.1)).collect()) } else { (3, vec![(1.0 / 3.0, 1.0 / 3.0)]) };
        let nt = mesh.triangles.len();
        let k = points.len();
        let zero = vec![0.0; mesh.nodes.len()];
        let positions: Vec<Xy> = (0..nt * k)
            .into_par_iter()
            .map(|i| eval_point(mesh, &zero, i / k, points[i % k].0, points[i % k].1).at)
            .collect();
        let nv = mesh.num_vertices as usize;
        let (start, around) = mesh.vertex_triangles();
        let star = |v: u32| &around[start[v as usize] as usize..start[v as usize + 1] as usize];
        let fans = Arc::new(mesh.corner_fans((&start, &around)));
        // The side of triangle t at its vertex w.
        let side_at = |t: u32, w: u32| -> VertexSide {
            let k = mesh.triangles[t as usize].iter().position(|&x| x == w).expect("star triangle holds w");
            (mesh.regions[t as usize], fans.of(t as usize, k))
        };
        let patches: Vec<Vec<PatchPlan>> = (0..nv as u32)
            .into_par_iter()
            .map(|v| {
                let center = mesh.nodes[v as usize];
                let mut sides: Vec<VertexSide> = star(v).iter().map(|&t| side_at(t, v)).collect();
                sides.sort_unstable();
                sides.dedup();
                // At a free end of a thin electrode the one fan goes all the way round: the
                // singular fit's branch cut lies along the electrode.
                let thin_cut = if fans.any() {
                    let mut ends: Vec<u32> = star(v)
                        .iter()
                        .flat_map(|&t| mesh.triangles[t as usize])
                        .filter(|&w| w != v && fans.is_thin_edge(v, w))
                        .collect();
                    ends.sort_unstable();
                    ends.dedup();
                    match ends[..] {
                        [w] => {
                            let q = mesh.nodes[w as usize];
                            Some((q[1] - center[1]).atan2(q[0] - center[0]))
                        }
                        _ => None,
                    }
                } else {
                    None
                };
                sides
                    .into_iter()
                    .map(|side| {
                        let region = side.0;
                        let mut patch: Vec<u32> = star(v).iter().copied().filter(|&t| side_at(t, v) == side).collect();
                        let pts = |patch: &[u32]| -> Vec<Xy> {
                            patch
                                .iter()
                                .flat_map(|&t| &positions[t as usize * k..(t as usize + 1) * k])
                                .copied()
                                .collect()
                        };
                        // At a singular point the gradient is unbounded and no polynomial fits
                        // it: the patch is fitted with the singular basis instead.
                        let lambda = quad.lambda_at(v);
                        let unknowns = if lambda.is_some() { 2 } else { m };
                        let mut found = None;
                        for grow in 0..2 {
                            if grow == 1 {
                                // One more ring of elements of the same region, on the
                                // same face of a thin electrode.
                                let mut more: Vec<u32> = patch
                                    .iter()
                                    .flat_map(|&t| mesh.triangles[t as usize].map(move |w| (t, w)))
                                    .flat_map(|(t, w)| {
                                        let own = side_at(t, w);
                                        star(w).iter().copied().filter(move |&o| side_at(o, w) == own)
                                    })
                                    .filter(|&t| mesh.regions[t as usize] == region)
                                    .collect();
                                more.sort_unstable();
                                more.dedup();
                                patch = more;
                            }
                            let p = pts(&patch);
                            // Ask for a margin of samples over unknowns so the fit is not an
                            // interpolation of a few points.
                            if p.len() <= unknowns {
                                continue;
                            }
                            let Some(scale) = patch_scale_of(&p, center) else { continue };
                            let mut a = [[0.0; 6]; 6];
                            let solver = match lambda {
                                Some(l) => {
                                    let cut = thin_cut.unwrap_or_else(|| branch_cut(&p, center));
                                    for q in &p {
                                        let [uu, vv] = singular_gradients(
                                            (q[0] - center[0]) / scale,
                                            (q[1] - center[1]) / scale,
                                            l,
                                            cut,
                                        );
                                        for row in [[uu[0], vv[0], 1.0, 0.0], [uu[1], vv[1], 0.0, 1.0]] {
                                            for i in 0..4 {
                                                for j in 0..4 {
                                                    a[i][j] += row[i] * row[j];
                                                }
                                            }
                                        }
                                    }
                                    invert(a, 4).map(|inv| Solver::Singular { lambda: l, cut, inv })
                                }
                                None => {
                                    for q in &p {
                                        let b = basis((q[0] - center[0]) / scale, (q[1] - center[1]) / scale);
                                        for i in 0..m {
                                            for j in 0..m {
                                                a[i][j] += b[i] * b[j];
                                            }
                                        }
                                    }
                                    invert(a, m).map(|inv| Solver::Poly { m, inv })
                                }
                            };
                            if let Some(solver) = solver {
                                found = Some((scale, solver));
                                break;
                            }
                        }
                        let (scale, solver) = found.unwrap_or((1.0, Solver::Mean));
                        PatchPlan { side, center, scale, triangles: patch, solver }
                    })
                    .collect()
            })
            .collect();
        RecoveryPlan { p2, points, patches, fans }
    }

    /// The recovered gradient of `potential` (module docs).
    fn apply(&self, mesh: &Mesh, potential: &[f64]) -> Recovery {
        let k = self.points.len();
        let nt = mesh.triangles.len();
        let samples: Vec<Sample> = (0..nt * k)
            .into_par_iter()
            .map(|i| {
                let (xi, eta) = self.points[i % k];
                let PointValue { e, at, .. } = eval_point(mesh, potential, i / k, xi, eta);
                (at, [-e[0], -e[1]])
            })
            .collect();
        let fits: Vec<Vec<PatchFit>> = self
            .patches
            .par_iter()
            .map(|plans| {
                plans
                    .iter()
                    .map(|pl| {
                        let samples = pl.triangles.iter().flat_map(|&t| &samples[t as usize * k..(t as usize + 1) * k]);
                        let (c, s) = (pl.center, pl.scale);
                        let kind = match &pl.solver {
                            Solver::Poly { m, inv } => {
                                let mut rhs = [[0.0; 6]; 2];
                                for (q, g) in samples {
                                    let b = basis((q[0] - c[0]) / s, (q[1] - c[1]) / s);
                                    for i in 0..*m {
                                        rhs[0][i] += b[i] * g[0];
                                        rhs[1][i] += b[i] * g[1];
                                    }
                                }
                                let mut coef = [[0.0; 6]; 2];
                                for comp in 0..2 {
                                    for i in 0..*m {
                                        coef[comp][i] = (0..*m).map(|j| inv[i][j] * rhs[comp][j]).sum();
                                    }
                                }
                                FitKind::Polynomial(coef)
                            }
                            Solver::Singular { lambda, cut, inv } => {
                                let mut rhs = [0.0; 4];
                                for (q, g) in samples {
                                    let [uu, vv] =
                                        singular_gradients((q[0] - c[0]) / s, (q[1] - c[1]) / s, *lambda, *cut);
                                    for (row, y) in [([uu[0], vv[0], 1.0, 0.0], g[0]), ([uu[1], vv[1], 0.0, 1.0], g[1])]
                                    {
                                        for i in 0..4 {
                                            rhs[i] += row[i] * y;
                                        }
                                    }
                                }
                                let mut coef = [0.0; 4];
                                for i in 0..4 {
                                    coef[i] = (0..4).map(|j| inv[i][j] * rhs[j]).sum();
                                }
                                FitKind::Singular { lambda: *lambda, cut: *cut, coef }
                            }
                            Solver::Mean => {
                                let (mut sum, mut n) = ([0.0; 2], 0.0);
                                for (_, g) in samples {
                                    sum[0] += g[0];
                                    sum[1] += g[1];
                                    n += 1.0;
                                }
                                let n = f64::max(n, 1.0);
                                let mut c = [[0.0; 6]; 2];
                                c[0][0] = sum[0] / n;
                                c[1][0] = sum[1] / n;
                                FitKind::Polynomial(c)
                            }
                        };
                        PatchFit { side: pl.side, center: c, scale: s, kind }
                    })
                    .collect()
            })
            .collect();
        let p2 = self.p2;
        let mut rec = Recovery { fits, fans: Arc::clone(&self.fans), nodes: Vec::new() };
        rec.nodes = (0..nt)
            .into_par_iter()
            .map(|t| {
                let mut g = [[0.0; 2]; 6];
                for (k, gk) in g.iter_mut().enumerate().take(3) {
                    *gk = rec.corner_fit(mesh, t, k).at_center();
                }
                if p2 {
                    let mids = mesh.mid_nodes[t];
                    for (k, (a, b)) in [(0, 1), (1, 2), (2, 0)].into_iter().enumerate() {
                        let x = mesh.nodes[mids[k] as usize];
                        let (ga, gb) = (rec.corner_fit(mesh, t, a).eval(x), rec.corner_fit(mesh, t, b).eval(x));
                        g[3 + k] = [0.5 * (ga[0] + gb[0]), 0.5 * (ga[1] + gb[1])];
                    }
                }
                g
            })
            .collect();
        rec
    }
}

/// The absolute permittivity tensor ε₀·εᵣ of region `r`.
fn absolute_permittivity(problem: &Problem, r: usize) -> [[f64; 2]; 2] {
    match problem.tensor.get(r).copied().flatten() {
        Some(e) => e.map(|row| row.map(|x| EPSILON_0 * x)),
        None => {
            let e = EPSILON_0 * problem.permittivity[r];
            [[e, 0.0], [0.0, e]]
        }
    }
}

/// Recovery-based estimate for a linear or quadratic solution.
///
/// # Panics
/// If the solution does not belong to the mesh.
#[track_caller]
pub fn estimate_error(mesh: &Mesh, problem: &Problem, solution: &Solution) -> ErrorEstimate {
    assert_eq!(solution.potential.len(), mesh.nodes.len(), "solution and mesh do not match");
    estimate_error_with(mesh, problem, solution, &PrimalRecovery::new(mesh, &solution.potential))
}

/// [`estimate_error`] with the solution's recovery already made.
pub(crate) fn estimate_error_with(
    mesh: &Mesh,
    problem: &Problem,
    solution: &Solution,
    primal: &PrimalRecovery,
) -> ErrorEstimate {
    let (quad, recovered) = (&primal.quad, &primal.recovery);
    let axisym = mesh.symmetry == Symmetry::Axisymmetric;
    let per_element: Vec<(f64, f64)> = (0..mesh.triangles.len())
        .into_par_iter()
        .map(|t| {
            let eps = absolute_permittivity(problem, mesh.regions[t] as usize);
            let energy = |d: [f64; 2]| {
                d[0] * (eps[0][0] * d[0] + eps[0][1] * d[1]) + d[1] * (eps[1][0] * d[0] + eps[1][1] * d[1])
            };
            let (mut eta2, mut n2) = (0.0, 0.0);
            let corner = quad.corner(mesh, t);
            for &(xi, eta, w) in quad.rule(corner) {
                let PointValue { e, at, det, .. } = eval_point(mesh, &solution.potential, t, xi, eta);
                let mut weight = w * det.abs();
                if axisym {
                    weight *= 2.0 * std::f64::consts::PI * at[0];
                }
                let g = recovered.at(mesh, t, corner, xi, eta, at);
                // ∇V_h = −E.
                eta2 += weight * energy([g[0] + e[0], g[1] + e[1]]);
                n2 += weight * energy(e);
            }
            (eta2, n2)
        })
        .collect();
    let total: f64 = per_element.iter().map(|x| x.0).sum();
    let norm: f64 = per_element.iter().map(|x| x.1).sum();
    ErrorEstimate {
        indicators: per_element.iter().map(|x| x.0.sqrt()).collect(),
        global: total.sqrt(),
        solution_norm: norm.sqrt(),
    }
}

/// The recovered gradient of one nodal potential on a mesh (see the module docs): a
/// solution (borrowed from its [`PrimalRecovery`]) or the solution of a dual problem.
pub(crate) struct RecoveredField<'a> {
    potential: &'a [f64],
    recovery: Cow<'a, Recovery>,
}

/// Recovers the gradient of `potential` with a plan made for its mesh (the plan is shared
/// by all the fields of one mesh).
pub(crate) fn recover_field_with<'a>(plan: &RecoveryPlan, mesh: &Mesh, potential: &'a [f64]) -> RecoveredField<'a> {
    RecoveredField { potential, recovery: Cow::Owned(plan.apply(mesh, potential)) }
}

/// A solution's recovered gradient with the quadrature and the recovery plan it was made
/// with: made once per mesh (see `FactoredSolution::recovery`) and shared by the error
/// estimate, the peaks away from singular points and the goal-oriented estimates, whose dual
/// fields reuse the plan.
pub(crate) struct PrimalRecovery {
    pub(crate) quad: SingularQuadrature,
    pub(crate) plan: RecoveryPlan,
    recovery: Recovery,
}

impl PrimalRecovery {
    /// Recovers the gradient of `potential`, a nodal field of `mesh`.
    pub(crate) fn new(mesh: &Mesh, potential: &[f64]) -> PrimalRecovery {
        let quad = SingularQuadrature::new(mesh);
        let plan = RecoveryPlan::new(mesh, &quad);
        let recovery = plan.apply(mesh, potential);
        PrimalRecovery { quad, plan, recovery }
    }

    /// The recovered field, read with `potential`: the one it was made from.
    pub(crate) fn field<'a>(&'a self, potential: &'a [f64]) -> RecoveredField<'a> {
        RecoveredField { potential, recovery: Cow::Borrowed(&self.recovery) }
    }
}

/// The primal solution at every quadrature point of every triangle, computed once and
/// shared by the error products of all goals of a mesh: (weight w·|J|·(2πr), x, y, E_h, G − ∇V_h).
pub(crate) struct PrimalSamples {
    start: Vec<usize>,
    data: Vec<[f64; 7]>,
}

/// Samples the recovered primal field `u` for [`error_products`].
pub(crate) fn primal_samples(mesh: &Mesh, quad: &SingularQuadrature, u: &RecoveredField<'_>) -> PrimalSamples {
    let axisym = mesh.symmetry == Symmetry::Axisymmetric;
    let per: Vec<Vec<[f64; 7]>> = (0..mesh.triangles.len())
        .into_par_iter()
        .map(|t| {
            let corner = quad.corner(mesh, t);
            quad.rule(corner)
                .iter()
                .map(|&(xi, eta, w)| {
                    let pu = eval_point(mesh, u.potential, t, xi, eta);
                    let mut weight = w * pu.det.abs();
                    if axisym {
                        weight *= 2.0 * std::f64::consts::PI * pu.at[0];
                    }
                    let gu = u.recovery.at(mesh, t, corner, xi, eta, pu.at);
                    // ∇V_h = −E.
                    [weight, pu.at[0], pu.at[1], pu.e[0], pu.e[1], gu[0] + pu.e[0], gu[1] + pu.e[1]]
                })
                .collect()
        })
        .collect();
    let mut start = Vec::with_capacity(per.len() + 1);
    start.push(0);
    for v in &per {
        start.push(start.last().copied().unwrap_or(0) + v.len());
    }
    PrimalSamples { start, data: per.concat() }
}

/// Per triangle: the error product ∫ₜ (G_u − ∇u_h)ᵀ ε (G_z − ∇z_h) w dA of the primal
/// (sampled once, [`primal_samples`]) and a recovered dual field (signed), and, for a
/// weight ω, ∫ₜ ω·(G_u − ∇u_h)ᵀ(G_u − ∇u_h) w dA and ∫ₜ ω·|∇u_h|² w dA and ∫ₜ ω w dA
/// (w = 1 planar, 2πr axisymmetric).
pub(crate) fn error_products(
    mesh: &Mesh,
    problem: &Problem,
    quad: &SingularQuadrature,
    u: &PrimalSamples,
    z: &RecoveredField<'_>,
    omega: Option<&(dyn Fn(Xy) -> f64 + Sync)>,
) -> Vec<[f64; 4]> {
    (0..mesh.triangles.len())
        .into_par_iter()
        .map(|t| {
            let eps = absolute_permittivity(problem, mesh.regions[t] as usize);
            let corner = quad.corner(mesh, t);
            let mut out = [0.0; 4];
            let samples = &u.data[u.start[t]..u.start[t + 1]];
            for (&(xi, eta, _), s) in quad.rule(corner).iter().zip(samples) {
                let [weight, x, y, ex, ey, dux, duy] = *s;
                let pz = eval_point(mesh, z.potential, t, xi, eta);
                let gz = z.recovery.at(mesh, t, corner, xi, eta, [x, y]);
                let dz = [gz[0] + pz.e[0], gz[1] + pz.e[1]];
                out[0] += weight
                    * (dux * (eps[0][0] * dz[0] + eps[0][1] * dz[1]) + duy * (eps[1][0] * dz[0] + eps[1][1] * dz[1]));
                if let Some(om) = omega {
                    let o = om([x, y]);
                    if o != 0.0 {
                        out[1] += weight * o * (dux * dux + duy * duy);
                        out[2] += weight * o * (ex * ex + ey * ey);
                        out[3] += weight * o;
                    }
                }
            }
            out
        })
        .collect()
}

impl RecoveredField<'_> {
    /// The nodal potential it was recovered from.
    pub(crate) fn potential(&self) -> &[f64] {
        self.potential
    }

    /// At point `x` (reference point (ξ, η) of triangle `t`): the recovered field E* = −G
    /// and the element's own field E_h.
    pub(crate) fn fields_at(
        &self,
        mesh: &Mesh,
        quad: &SingularQuadrature,
        t: usize,
        xi: f64,
        eta: f64,
    ) -> ([f64; 2], [f64; 2]) {
        let p = eval_point(mesh, self.potential, t, xi, eta);
        let g = self.recovery.at(mesh, t, quad.corner(mesh, t), xi, eta, p.at);
        ([-g[0], -g[1]], p.e)
    }

    /// True when vertex `v` has a patch fit on `side`.
    pub(crate) fn has_fit(&self, v: u32, side: VertexSide) -> bool {
        self.recovery.fits.get(v as usize).is_some_and(|f| f.iter().any(|f| f.side == side))
    }

    /// The recovered field E = −G at vertex `v` on `side` (the vertex patch's fit there).
    pub(crate) fn field_at_vertex(&self, v: u32, side: VertexSide) -> [f64; 2] {
        let g = self.recovery.fit_of(v, side).at_center();
        [-g[0], -g[1]]
    }

    /// The side of `region` at vertex `v` with the strongest recovered field (the face
    /// of a thin electrode a peak there is on; the region itself elsewhere), if `v` has a
    /// fit in `region`.
    pub(crate) fn strongest_side(&self, v: u32, region: u32) -> Option<VertexSide> {
        let fits = self.recovery.fits.get(v as usize)?;
        fits.iter()
            .filter(|f| f.side.0 == region)
            .max_by(|a, b| {
                let (ga, gb) = (a.at_center(), b.at_center());
                ga[0].hypot(ga[1]).total_cmp(&gb[0].hypot(gb[1]))
            })
            .map(|f| f.side)
    }

    /// The fans of the mesh's corners.
    pub(crate) fn fans(&self) -> &CornerFans {
        &self.recovery.fans
    }
}
