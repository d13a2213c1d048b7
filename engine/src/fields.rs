//! Field recovery: E = −∇V per element, and the largest |E| in each region.
//!
//! # Algorithm
//! Within a straight P1 element E is constant; within a straight P2 element E is linear, so
//! |E|² is a convex quadratic whose maximum over the triangle lies at a vertex. The element
//! field is therefore evaluated at the three vertices (reference coordinates (0,0), (1,0),
//! (0,1)) through the isoparametric map, and at the centroid for the element's
//! representative value. The region peaks use the vertex values averaged (area-weighted)
//! over the elements of that region around each vertex: a vertex is where a single
//! element's gradient is least accurate, and the one-sided errors of the elements around it
//! largely cancel. Values are never averaged across an interface, so each side of an
//! interface keeps its own field. At a singular point (λ < 1) the largest one-sided value
//! is kept instead of the average, so that the unbounded peak is not hidden.
//!
//! # References
//! - E. Hinton, J. S. Campbell, "Local and global smoothing of discontinuous finite element
//!   functions using a least squares method", Int. J. Numer. Methods Eng. 8 (1974) 461–480,
//!   doi:10.1002/nme.1620080303 (nodal averaging of element gradients).
//! - O. C. Zienkiewicz, J. Z. Zhu, "The superconvergent patch recovery and a posteriori
//!   error estimates. Part 1", Int. J. Numer. Methods Eng. 33 (1992) 1331–1364,
//!   doi:10.1002/nme.1620330702 (why averaged gradients at vertices beat single-element ones).

use crate::estimate::{PrimalRecovery, VertexSide};
use crate::problem::Problem;
use crate::solve::Solution;
use crate::space::{corner_graded_rule, Element, QuadPoint, P1, P2, QUAD_DEG4};
use mesher::{CornerFans, Mesh, Xy};

/// The largest field strength in one region.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct RegionPeak {
    /// Region (shape index).
    pub region: u32,
    /// Largest |E|, V/m.
    pub e_max_v_per_m: f64,
    /// Where it occurs.
    pub at: Xy,
    /// The mesh vertex it occurs at (for a peak on the rim of an exclusion disc, the
    /// nearest corner of the triangle there).
    pub node: u32,
}

/// Field per element.
#[derive(Clone, Debug)]
pub struct ElementFields {
    /// E at each element's centroid, V/m.
    pub centroid: Vec<[f64; 2]>,
    /// Largest |E| over each element's own vertices and centroid (not averaged), V/m.
    pub max_magnitude: Vec<f64>,
    /// E at every node, V/m: the area-weighted mean of the centroid fields of the elements
    /// around it (for display; at an interface it mixes both sides, whose normal fields
    /// differ — use the element values or an interface probe for figures).
    pub nodal: Vec<[f64; 2]>,
    /// Peak per region present in the mesh, in region order (the mapped open-boundary
    /// exterior, whose coordinates are not physical, is left out).
    pub region_peaks: Vec<RegionPeak>,
}

/// The solution at one reference point of one element.
#[derive(Clone, Copy, Debug)]
pub(crate) struct PointValue {
    /// Potential, V.
    pub v: f64,
    /// E = −∇V, V/m.
    pub e: [f64; 2],
    /// Physical position, metres.
    pub at: Xy,
    /// Jacobian determinant of the isoparametric map there.
    pub det: f64,
}

/// V, E, position and Jacobian at reference point (ξ, η) of triangle `t` (isoparametric
/// for P2) — the one evaluator behind fields, probes, the estimator and energy errors.
/// The isoparametric map of an element with nodes `x` at reference point (ξ, η): the
/// shape functions' reference gradients and values, the Jacobian, the physical point and the
/// Jacobian's determinant.
#[allow(clippy::type_complexity)]
pub(crate) fn isoparametric<const N: usize, E: Element<N>>(
    x: &[Xy; N],
    xi: f64,
    eta: f64,
) -> ([[f64; 2]; N], [f64; N], [[f64; 2]; 2], Xy, f64) {
    let g = E::gradients(xi, eta);
    let s = E::values(xi, eta);
    let mut j = [[0.0; 2]; 2];
    let mut p = [0.0; 2];
    for k in 0..N {
        j[0][0] += x[k][0] * g[k][0];
        j[0][1] += x[k][0] * g[k][1];
        j[1][0] += x[k][1] * g[k][0];
        j[1][1] += x[k][1] * g[k][1];
        p[0] += x[k][0] * s[k];
        p[1] += x[k][1] * s[k];
    }
    let det = j[0][0] * j[1][1] - j[0][1] * j[1][0];
    (g, s, j, p, det)
}

pub(crate) fn eval_point(mesh: &Mesh, potential: &[f64], t: usize, xi: f64, eta: f64) -> PointValue {
    fn eval<const N: usize, E: Element<N>>(x: &[Xy; N], u: &[f64; N], xi: f64, eta: f64) -> PointValue {
        let (g, s, j, p, det) = isoparametric::<N, E>(x, xi, eta);
        let (mut v, mut gr) = (0.0, [0.0; 2]);
        for k in 0..N {
            v += u[k] * s[k];
            gr[0] += u[k] * g[k][0];
            gr[1] += u[k] * g[k][1];
        }
        // ∇V = J⁻ᵀ ∇̂V.
        let gx = (j[1][1] * gr[0] - j[1][0] * gr[1]) / det;
        let gy = (-j[0][1] * gr[0] + j[0][0] * gr[1]) / det;
        PointValue { v, e: [-gx, -gy], at: p, det }
    }
    let tri = mesh.triangles[t];
    if mesh.mid_nodes.is_empty() {
        eval::<3, P1>(&tri.map(|i| mesh.nodes[i as usize]), &tri.map(|i| potential[i as usize]), xi, eta)
    } else {
        let m = mesh.mid_nodes[t];
        let ids = [tri[0], tri[1], tri[2], m[0], m[1], m[2]];
        eval::<6, P2>(&ids.map(|i| mesh.nodes[i as usize]), &ids.map(|i| potential[i as usize]), xi, eta)
    }
}

/// The weighted mean of vector values at one vertex over the elements of one region.
#[derive(Clone, Copy, Debug)]
pub(crate) struct VertexMean {
    pub node: u32,
    pub region: u32,
    /// The fan of the region's triangles at the vertex (a face of a thin electrode; 0
    /// elsewhere).
    pub fan: u8,
    /// Weighted mean of the values.
    pub mean: [f64; 2],
    /// Largest single (one-sided) value's norm.
    pub max_norm: f64,
}

/// Groups (vertex, side, value, weight) entries by vertex and side (region and fan) and
/// returns the weighted means, sorted by (vertex, side): the region-wise averaging used for
/// field peaks and for gradient recovery (values are never mixed across an interface, nor
/// across a thin electrode). Groups of zero total weight are left out.
pub(crate) fn region_vertex_means(mut entries: Vec<(u32, VertexSide, [f64; 2], f64)>) -> Vec<VertexMean> {
    entries.sort_unstable_by_key(|e| (e.0, e.1));
    let mut out = Vec::new();
    let mut i = 0;
    while i < entries.len() {
        let (node, side) = (entries[i].0, entries[i].1);
        let (mut sum, mut w, mut max_norm) = ([0.0; 2], 0.0, 0.0f64);
        while i < entries.len() && entries[i].0 == node && entries[i].1 == side {
            let (v, a) = (entries[i].2, entries[i].3);
            sum[0] += a * v[0];
            sum[1] += a * v[1];
            w += a;
            if a > 0.0 {
                max_norm = max_norm.max(v[0].hypot(v[1]));
            }
            i += 1;
        }
        if w > 0.0 {
            out.push(VertexMean { node, region: side.0, fan: side.1, mean: [sum[0] / w, sum[1] / w], max_norm });
        }
    }
    out
}

/// Evaluates the field of a solution on every element.
///
/// # Panics
/// If the solution does not belong to the mesh (potential length differs from the node
/// count).
#[track_caller]
pub fn element_fields(mesh: &Mesh, _problem: &Problem, solution: &Solution) -> ElementFields {
    assert_eq!(solution.potential.len(), mesh.nodes.len(), "solution and mesh do not match");
    let nt = mesh.triangles.len();
    let mut centroid = Vec::with_capacity(nt);
    let mut max_magnitude = Vec::with_capacity(nt);
    let primal = PrimalRecovery::new(mesh, &solution.potential);
    let rec = primal.field(&solution.potential);
    let at_vertex = vertex_fields(mesh, &solution.potential, rec.fans());
    for (t, own) in at_vertex.chunks_exact(3).enumerate() {
        let ec = eval_point(mesh, &solution.potential, t, 1.0 / 3.0, 1.0 / 3.0).e;
        centroid.push(ec);
        max_magnitude.push(own.iter().map(|v| v.2[0].hypot(v.2[1])).fold(ec[0].hypot(ec[1]), f64::max));
    }
    let region_peaks = peaks_of(mesh, recovered_means(&primal.quad, &rec, region_vertex_means(at_vertex)), &[]);
    let mut nodal = vec![[0.0; 2]; mesh.nodes.len()];
    let mut weight = vec![0.0; mesh.nodes.len()];
    for (t, tri) in mesh.triangles.iter().enumerate() {
        let a = mesh.triangle_area(t).abs();
        let mids = if mesh.mid_nodes.is_empty() { [u32::MAX; 3] } else { mesh.mid_nodes[t] };
        for &v in tri.iter().chain(mids.iter()).filter(|&&v| v != u32::MAX) {
            nodal[v as usize][0] += a * centroid[t][0];
            nodal[v as usize][1] += a * centroid[t][1];
            weight[v as usize] += a;
        }
    }
    for (e, w) in nodal.iter_mut().zip(&weight) {
        if *w > 0.0 {
            *e = [e[0] / w, e[1] / w];
        }
    }
    ElementFields { centroid, max_magnitude, nodal, region_peaks }
}

/// The energy norm of the error against a known exact field, and of the exact field:
/// (√∫ε|∇V − ∇V_h|² w dA, √∫ε|∇V|² w dA), w = 1 planar or 2πr axisymmetric, with the
/// degree-4 rule of `space` on every element (isoparametric), graded towards the vertex on
/// elements that touch a singular point, where the integrand is unbounded. For verification against
/// exact solutions; `exact_gradient` returns ∇V (V/m) at a point (metres).
///
/// # Panics
/// If the solution does not belong to the mesh.
#[track_caller]
pub fn energy_error(
    mesh: &Mesh,
    problem: &Problem,
    solution: &Solution,
    exact_gradient: impl Fn(Xy) -> [f64; 2],
) -> (f64, f64) {
    assert_eq!(solution.potential.len(), mesh.nodes.len(), "solution and mesh do not match");
    let axisym = mesh.symmetry == mesher::Symmetry::Axisymmetric;
    let quad = SingularQuadrature::new(mesh);
    let (mut err, mut norm) = (0.0, 0.0);
    for t in 0..mesh.triangles.len() {
        let eps = crate::solve::EPSILON_0 * problem.permittivity[mesh.regions[t] as usize];
        for &(xi, eta, w) in quad.rule(quad.corner(mesh, t)) {
            let PointValue { e, at: p, det, .. } = eval_point(mesh, &solution.potential, t, xi, eta);
            let mut weight = w * det.abs() * eps;
            if axisym {
                weight *= 2.0 * std::f64::consts::PI * p[0];
            }
            let g = exact_gradient(p);
            // E_h = −∇V_h.
            let d = [g[0] + e[0], g[1] + e[1]];
            err += weight * (d[0] * d[0] + d[1] * d[1]);
            norm += weight * (g[0] * g[0] + g[1] * g[1]);
        }
    }
    (err.sqrt(), norm.sqrt())
}

/// The vertices that sit on a point whose field is unbounded (λ < 1), and the quadrature
/// that integrates the unbounded energy density of the elements touching them: built once
/// per mesh, shared by the estimator, the energy error and the field peaks.
pub(crate) struct SingularQuadrature {
    /// (vertex, λ), sorted by vertex.
    singular: Vec<(u32, f64)>,
    /// The degree-4 rule graded towards reference vertex 0, 1 and 2.
    graded: [Vec<QuadPoint>; 3],
}

impl SingularQuadrature {
    pub(crate) fn new(mesh: &Mesh) -> SingularQuadrature {
        let tol = 1e-9 * mesh.scale();
        let mut singular: Vec<(u32, f64)> = (0..mesh.num_vertices)
            .filter_map(|v| {
                let p = mesh.nodes[v as usize];
                mesh.singular_points
                    .iter()
                    .find(|s| s.is_field_singular() && (s.at[0] - p[0]).hypot(s.at[1] - p[1]) <= tol)
                    .map(|s| (v, s.lambda))
            })
            .collect();
        singular.sort_unstable_by_key(|x| x.0);
        SingularQuadrature { singular, graded: corner_graded_rules() }
    }

    /// λ of the singular point at vertex `v`, if it is one.
    pub(crate) fn lambda_at(&self, v: u32) -> Option<f64> {
        self.singular.binary_search_by_key(&v, |s| s.0).ok().map(|k| self.singular[k].1)
    }

    /// The corner of triangle `t` that sits on a singular vertex, if any.
    pub(crate) fn corner(&self, mesh: &Mesh, t: usize) -> Option<usize> {
        mesh.triangles[t].iter().position(|&v| self.lambda_at(v).is_some())
    }

    /// The rule for an element with that singular corner: degree 4, or graded towards it.
    pub(crate) fn rule(&self, corner: Option<usize>) -> &[QuadPoint] {
        match corner {
            Some(k) => &self.graded[k],
            None => &QUAD_DEG4,
        }
    }
}

/// Levels of the corner-graded rule: the innermost piece is 2⁻¹⁶ of the element.
const GRADED_LEVELS: usize = 16;

/// The degree-4 rule graded towards reference vertex 0, 1 and 2 (see
/// [`corner_graded_rule`]), with the levels used throughout the crate.
pub(crate) fn corner_graded_rules() -> [Vec<QuadPoint>; 3] {
    std::array::from_fn(|k| corner_graded_rule(k, GRADED_LEVELS))
}

/// (vertex, region, E, element area) for the three vertices of every element, in element
/// order: the element's own field at its vertices, which the region-wise vertex means
/// turn into peak values (the one-sided element errors at a vertex largely cancel in the
/// area-weighted mean; values are never averaged across an interface).
fn vertex_fields(mesh: &Mesh, potential: &[f64], fans: &CornerFans) -> Vec<(u32, VertexSide, [f64; 2], f64)> {
    let mut out = Vec::with_capacity(3 * mesh.triangles.len());
    for t in 0..mesh.triangles.len() {
        let area = mesh.triangle_area(t).abs();
        for (k, (xi, eta)) in [(0.0, 0.0), (1.0, 0.0), (0.0, 1.0)].into_iter().enumerate() {
            let e = eval_point(mesh, potential, t, xi, eta).e;
            out.push((mesh.triangles[t][k], (mesh.regions[t], fans.of(t, k)), e, area));
        }
    }
    out
}

/// The peak per region from region-wise vertex means, vertices inside any of the `discs`
/// (centre, radius) left out, the mapped exterior left out. At a point where the field is
/// singular the average would hide the (mesh-dependent, unbounded) peak: there the largest
/// one-sided value is kept instead.
fn peaks_of(mesh: &Mesh, means: Vec<VertexMean>, discs: &[(Xy, f64)]) -> Vec<RegionPeak> {
    let singular = SingularQuadrature::new(mesh);
    let mut peaks: Vec<Option<RegionPeak>> = vec![None; mesh.shape_names.len()];
    for g in means {
        let r = g.region as usize;
        // The mapped open-boundary exterior is in inverted coordinates: no physical peak.
        if mesh.exterior.is_some_and(|e| e.region as usize == r) {
            continue;
        }
        let at = mesh.nodes[g.node as usize];
        if in_exclusion_disc(discs, at) {
            continue;
        }
        let m = if singular.lambda_at(g.node).is_some() { g.max_norm } else { g.mean[0].hypot(g.mean[1]) };
        if peaks[r].as_ref().is_none_or(|p| m > p.e_max_v_per_m) {
            peaks[r] = Some(RegionPeak { region: g.region, e_max_v_per_m: m, at, node: g.node });
        }
    }
    peaks.into_iter().flatten().collect()
}

/// The peak |E| per region leaving out the inside of the given discs (centre, radius in
/// metres) — the peaks *away from* singular points, which converge under refinement while
/// the peaks at them do not: the largest vertex value outside the discs (same recovery as
/// [`element_fields`]) or the largest recovered field sampled on the discs' rims (256
/// points each).
///
/// # Panics
/// If the solution does not belong to the mesh.
#[track_caller]
pub fn region_peaks_away_from(mesh: &Mesh, solution: &Solution, discs: &[(Xy, f64)]) -> Vec<RegionPeak> {
    assert_eq!(solution.potential.len(), mesh.nodes.len(), "solution and mesh do not match");
    peaks_away_from_with(mesh, solution, &PrimalRecovery::new(mesh, &solution.potential), discs)
}

/// `p` lies inside one of the `discs` (centre, radius in metres; the rims belong outside).
pub fn in_exclusion_disc(discs: &[(Xy, f64)], p: Xy) -> bool {
    discs.iter().any(|(c, r)| (p[0] - c[0]).hypot(p[1] - c[1]) < *r)
}

/// The disc (centre, radius in metres) around every point whose field is singular
/// (λ < 1), which the peaks "away from singular points" leave out: radius `given` (the
/// model's `[check] singular_exclusion_radius`), or 2 % of the model's size, or a quarter of
/// the distance to the nearest other singular point if that is smaller. The discs are the
/// geometry's, the same on every mesh of a sequence, so the peaks outside them have a limit.
pub fn exclusion_discs(mesh: &Mesh, given: Option<f64>) -> Vec<(Xy, f64)> {
    let scale = mesh.scale();
    let pts = &mesh.singular_points;
    pts.iter()
        .filter(|s| s.is_field_singular())
        .map(|s| {
            let nearest = pts
                .iter()
                .map(|o| (o.at[0] - s.at[0]).hypot(o.at[1] - s.at[1]))
                .filter(|&d| d > 1e-9 * scale)
                .fold(f64::INFINITY, f64::min);
            (s.at, given.unwrap_or((0.02 * scale).min(0.25 * nearest)))
        })
        .collect()
}

/// The region-wise vertex values behind the peaks: per (vertex, region) the recovered
/// field (the largest one-sided element value at a singular vertex), sorted by (vertex,
/// region), with the |E| a peak takes from it. On a thin electrode, the face with the
/// larger value.
pub(crate) fn region_vertex_values(
    mesh: &Mesh,
    solution: &Solution,
    primal: &PrimalRecovery,
) -> Vec<(VertexMean, f64)> {
    let rec = primal.field(&solution.potential);
    let mut out: Vec<(VertexMean, f64)> = Vec::new();
    for g in
        recovered_means(&primal.quad, &rec, region_vertex_means(vertex_fields(mesh, &solution.potential, rec.fans())))
    {
        let m = if primal.quad.lambda_at(g.node).is_some() { g.max_norm } else { g.mean[0].hypot(g.mean[1]) };
        match out.last_mut() {
            Some(last) if last.0.node == g.node && last.0.region == g.region => {
                if m > last.1 {
                    *last = (g, m);
                }
            }
            _ => out.push((g, m)),
        }
    }
    out
}

/// [`region_peaks_away_from`] with the solution's recovery already made.
pub(crate) fn peaks_away_from_with(
    mesh: &Mesh,
    solution: &Solution,
    primal: &PrimalRecovery,
    discs: &[(Xy, f64)],
) -> Vec<RegionPeak> {
    let quad = &primal.quad;
    let rec = primal.field(&solution.potential);
    let means = recovered_means(quad, &rec, region_vertex_means(vertex_fields(mesh, &solution.potential, rec.fans())));
    let mut peaks = peaks_of(mesh, means, discs);
    polish_peaks(mesh, quad, &rec, &mut peaks, discs);
    // The rim of every disc belongs to the region left in: the field sampled there (it is
    // largest there next to a singular point), so that the peak is the same quantity on
    // every mesh, not the field at whichever vertex happens to lie nearest outside.
    let points: Vec<Xy> = discs
        .iter()
        .flat_map(|&(c, r)| {
            (0..RIM_SAMPLES).map(move |k| {
                let a = std::f64::consts::TAU * k as f64 / RIM_SAMPLES as f64;
                [c[0] + r * a.cos(), c[1] + r * a.sin()]
            })
        })
        .collect();
    let outside = |p: Xy| discs.iter().all(|(c, rad)| (p[0] - c[0]).hypot(p[1] - c[1]) >= rad * (1.0 - 1e-9));
    if points.is_empty() {
        return peaks;
    }
    // On the rim the recovered field (continuous, one degree better; see `estimate`): the
    // largest of the elements' own fields, discontinuous from one element to the next,
    // would pick whichever is most in error.
    let grid = crate::probe::TriangleGrid::new(mesh);
    for p in &points {
        if !outside(*p) {
            continue;
        }
        let Some((t, xi, eta)) = grid.locate(mesh, *p) else { continue };
        let region = mesh.regions[t];
        if mesh.exterior.is_some_and(|x| x.region == region) {
            continue;
        }
        let (e, _) = rec.fields_at(mesh, quad, t, xi, eta);
        let m = e[0].hypot(e[1]);
        let node = nearest_corner(mesh, t, *p);
        match peaks.iter_mut().find(|q| q.region == region) {
            Some(q) if m > q.e_max_v_per_m => *q = RegionPeak { region, e_max_v_per_m: m, at: *p, node },
            Some(_) => {}
            None => peaks.push(RegionPeak { region, e_max_v_per_m: m, at: *p, node }),
        }
    }
    peaks
}

/// The corner of triangle `t` nearest to `p`.
fn nearest_corner(mesh: &Mesh, t: usize, p: Xy) -> u32 {
    let d = |v: &u32| {
        let q = mesh.nodes[*v as usize];
        (q[0] - p[0]).powi(2) + (q[1] - p[1]).powi(2)
    };
    *mesh.triangles[t].iter().min_by(|a, b| d(a).total_cmp(&d(b))).expect("three corners")
}

/// The vertex values a peak is taken from: at a vertex where the field is bounded, the
/// recovered field (the patch fit one degree higher of `estimate`); the mean of the
/// elements' own fields there stops improving near 1e-4 on curved conductors (measured on
/// the coaxial line with P2: 2e-5 at 6·10⁴ nodes, 1.2e-5 at 1.9·10⁵), while the recovered
/// field goes on converging (4e-4, 6e-5). At a singular vertex the largest one-sided value.
fn recovered_means(
    quad: &SingularQuadrature,
    rec: &crate::estimate::RecoveredField<'_>,
    mut means: Vec<VertexMean>,
) -> Vec<VertexMean> {
    for g in &mut means {
        if quad.lambda_at(g.node).is_none() && rec.has_fit(g.node, (g.region, g.fan)) {
            g.mean = rec.field_at_vertex(g.node, (g.region, g.fan));
        }
    }
    means
}

/// Samples per edge when a vertex peak is polished.
const EDGE_SAMPLES: usize = 16;

/// Moves each peak found at a (non-singular) vertex to the largest recovered field along
/// the edges of the region's triangles around that vertex: the recovered field is smooth,
/// and its largest value on a curved conductor usually lies between vertices, where the
/// vertices alone would miss it by a fraction of the element's curvature — an amount that
/// changes from one mesh to the next (the demos' peaks jittered by 2–5·10⁻⁴ between
/// remeshings).
fn polish_peaks(
    mesh: &Mesh,
    quad: &SingularQuadrature,
    rec: &crate::estimate::RecoveredField<'_>,
    peaks: &mut [RegionPeak],
    discs: &[(Xy, f64)],
) {
    let outside = |p: Xy| !in_exclusion_disc(discs, p);
    for peak in peaks.iter_mut() {
        if quad.lambda_at(peak.node).is_some() || mesh.nodes[peak.node as usize] != peak.at {
            continue;
        }
        let mut best = *peak;
        for (t, tri) in mesh.triangles.iter().enumerate() {
            if mesh.regions[t] != peak.region || !tri.contains(&peak.node) {
                continue;
            }
            for edge in 0..3 {
                // Reference corners (0,0), (1,0), (0,1); edge k runs from corner k to k+1.
                let corners = [(0.0, 0.0), (1.0, 0.0), (0.0, 1.0)];
                let (a, b) = (corners[edge], corners[(edge + 1) % 3]);
                for k in 1..EDGE_SAMPLES {
                    let f = k as f64 / EDGE_SAMPLES as f64;
                    let (xi, eta) = (a.0 + f * (b.0 - a.0), a.1 + f * (b.1 - a.1));
                    let at = eval_point(mesh, rec.potential(), t, xi, eta).at;
                    if !outside(at) {
                        continue;
                    }
                    let (e, _) = rec.fields_at(mesh, quad, t, xi, eta);
                    let m = e[0].hypot(e[1]);
                    if m > best.e_max_v_per_m {
                        best = RegionPeak { region: peak.region, e_max_v_per_m: m, at, node: peak.node };
                    }
                }
            }
        }
        *peak = best;
    }
}

/// Points sampled on the rim of each exclusion disc.
const RIM_SAMPLES: usize = 256;
