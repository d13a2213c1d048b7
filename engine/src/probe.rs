//! Field samples along a polyline and along a tagged interface or conductor surface.
//!
//! # Algorithm
//! A polyline is sampled at equal arc-length steps. Each sample is located in the mesh with
//! a uniform bucket grid of triangle bounding boxes, then mapped to reference coordinates
//! (barycentric for straight elements, refined by Newton's method on the isoparametric map
//! for curved P2 ones) where V and E = −∇V are evaluated.
//!
//! A named point gets V and E on each side: the triangles containing it are grouped by
//! region, and V and E are averaged over the triangles of each region (a point on an edge or
//! at a vertex lies in several). E is the recovered field (the patch fits of the error
//! estimate, more accurate than the element's own −∇V_h, which jumps between elements). A
//! point on an interface thus gets one value per side; a point outside the dielectric mesh
//! (inside a conductor, or outside the domain) gets none.
//!
//! An interface (two regions, or a region and a conductor) is sampled at the midpoint of
//! every mesh edge on it, chained end to end; on each side E is evaluated in the adjacent
//! element and split into the normal component Eₙ = E·n (n the unit normal pointing from
//! the first region into the second) and the tangential component Eₜ = E·t (t along the
//! chain). Across a charge-free dielectric interface Eₜ is continuous and εEₙ is
//! continuous; the tool reports both sides as computed, without averaging.
//!
//! # References
//! - M. de Berg, O. Cheong, M. van Kreveld, M. Overmars, *Computational Geometry: Algorithms
//!   and Applications*, 3rd ed., Springer 2008, doi:10.1007/978-3-540-77974-2, ch. 6 (point
//!   location; the bucket grid used here is the simplest structure for it).
//! - O. C. Zienkiewicz, R. L. Taylor, J. Z. Zhu, *The Finite Element Method: Its Basis and
//!   Fundamentals*, 7th ed., Butterworth-Heinemann 2013, ch. 5 (the isoparametric map
//!   inverted by Newton's method).

use crate::fields::eval_point;
use crate::solve::Solution;
use crate::space::{Element, P2};
use mesher::{BucketGrid, EdgeTag, Mesh, Xy};

/// One sample along a polyline.
#[derive(Clone, Debug, PartialEq)]
pub struct LineSample {
    /// Arc length from the polyline's start, metres.
    pub s: f64,
    /// Position, metres.
    pub at: Xy,
    /// Region (shape index) the point is in, or `None` outside the mesh (inside a
    /// conductor or outside the domain).
    pub region: Option<u32>,
    /// Potential, V (NaN outside the mesh).
    pub potential: f64,
    /// E, V/m (NaN outside the mesh).
    pub e: [f64; 2],
}

/// The field on one side of an interface sample.
#[derive(Clone, Debug, PartialEq)]
pub struct SideField {
    /// Region (shape index) on this side.
    pub region: u32,
    /// Normal component, V/m (normal from the first side into the second).
    pub e_n: f64,
    /// Tangential component, V/m (along the chain).
    pub e_t: f64,
}

/// One sample of an interface or conductor surface.
#[derive(Clone, Debug, PartialEq)]
pub struct InterfaceSample {
    /// Arc length along the chained edges, metres.
    pub s: f64,
    /// Position (edge midpoint), metres.
    pub at: Xy,
    /// Potential there, V.
    pub potential: f64,
    /// Field on the first side.
    pub first: SideField,
    /// Field on the second side (None on a conductor surface or the outer boundary).
    pub second: Option<SideField>,
    /// The sampled edge's length, metres.
    pub edge_length: f64,
    /// The potentials at the edge's start and end vertices (nodal values), V.
    pub ends: [f64; 2],
}

/// The field at a point in one region.
#[derive(Clone, Debug, PartialEq)]
pub struct PointSide {
    /// Region (shape index).
    pub region: u32,
    /// Potential, V.
    pub potential: f64,
    /// E, V/m.
    pub e: [f64; 2],
}

/// The regions whose triangles contain each point, in region order (two on an interface,
/// none outside the dielectric mesh): the sides on which
/// [`crate::FactoredSolution::point_values`] reports V and E.
pub fn point_regions(mesh: &Mesh, points: &[Xy]) -> Vec<Vec<u32>> {
    let grid = TriangleGrid::new(mesh);
    points.iter().map(|&p| containing(mesh, &grid, p).into_iter().map(|(r, _)| r).collect()).collect()
}

/// A triangle and the reference coordinates (ξ, η) of a point in it.
type Located = (usize, f64, f64);

/// The triangles containing `p` (with their reference coordinates there), grouped by
/// region in region order. Triangles of the mapped open-boundary exterior are left out
/// (their coordinates are not physical).
fn containing(mesh: &Mesh, grid: &TriangleGrid, p: Xy) -> Vec<(u32, Vec<Located>)> {
    let exterior = mesh.exterior.map(|x| x.region);
    let mut found: Vec<(u32, Vec<Located>)> = Vec::new();
    grid.grid.for_each_near(p, 0.0, |t| {
        let t = t as usize;
        let region = mesh.regions[t];
        if Some(region) == exterior {
            return;
        }
        // A point given on an interface lies on an element edge only to round-off (a
        // curved edge's point is found by Newton's method): a looser tolerance finds the
        // elements of both sides.
        if let Some((xi, eta)) = locate_within(mesh, t, p, 1e-7) {
            match found.iter_mut().find(|f| f.0 == region) {
                Some(f) => f.1.push((t, xi, eta)),
                None => found.push((region, vec![(t, xi, eta)])),
            }
        }
    });
    found.sort_by_key(|f| f.0);
    found
}

/// V and E = `field(t, ξ, η)` at each point, one [`PointSide`] per region containing it,
/// averaged over the region's triangles there.
pub(crate) fn point_values_with(
    mesh: &Mesh,
    potential: &[f64],
    points: &[Xy],
    field: impl Fn(usize, f64, f64) -> [f64; 2],
) -> Vec<Vec<PointSide>> {
    let grid = TriangleGrid::new(mesh);
    points
        .iter()
        .map(|&p| {
            containing(mesh, &grid, p)
                .into_iter()
                .map(|(region, tris)| {
                    let n = tris.len() as f64;
                    let (mut v, mut e) = (0.0, [0.0; 2]);
                    for &(t, xi, eta) in &tris {
                        v += evaluate(mesh, potential, t, xi, eta).0;
                        let f = field(t, xi, eta);
                        e = [e[0] + f[0], e[1] + f[1]];
                    }
                    PointSide { region, potential: v / n, e: [e[0] / n, e[1] / n] }
                })
                .collect()
        })
        .collect()
}

/// Which interface to sample.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum InterfaceSelector {
    /// Between two dielectric regions (shape indices).
    Regions(u32, u32),
    /// The surface of a conductor (its index), seen from every region touching it.
    Conductor(u32),
}

/// Reference coordinates (ξ, η) of point `p` in triangle `t`, if it lies inside (with a
/// small tolerance).
fn locate_in(mesh: &Mesh, t: usize, p: Xy) -> Option<(f64, f64)> {
    locate_within(mesh, t, p, 1e-10)
}

/// [`locate_in`] with the tolerance `tol` on the reference coordinates.
fn locate_within(mesh: &Mesh, t: usize, p: Xy, tol: f64) -> Option<(f64, f64)> {
    let tri = mesh.triangles[t];
    let [a, b, c] = tri.map(|i| mesh.nodes[i as usize]);
    let det = (b[0] - a[0]) * (c[1] - a[1]) - (c[0] - a[0]) * (b[1] - a[1]);
    let mut xi = ((p[0] - a[0]) * (c[1] - a[1]) - (c[0] - a[0]) * (p[1] - a[1])) / det;
    let mut eta = ((b[0] - a[0]) * (p[1] - a[1]) - (p[0] - a[0]) * (b[1] - a[1])) / det;
    // Far outside the straight triangle: a curved edge bulges by a few per cent of the
    // element at most, so no Newton iteration can bring the point in.
    if xi < -0.25 || eta < -0.25 || xi + eta > 1.25 {
        return None;
    }
    if !mesh.mid_nodes.is_empty() {
        // Newton on the isoparametric map x(ξ, η) = p (curved edges move points a little).
        let m = mesh.mid_nodes[t];
        let ids = [tri[0], tri[1], tri[2], m[0], m[1], m[2]];
        let x = ids.map(|i| mesh.nodes[i as usize]);
        for _ in 0..8 {
            let v = P2::values(xi, eta);
            let g = P2::gradients(xi, eta);
            let (mut fx, mut fy) = (-p[0], -p[1]);
            let mut j = [[0.0; 2]; 2];
            for k in 0..6 {
                fx += x[k][0] * v[k];
                fy += x[k][1] * v[k];
                j[0][0] += x[k][0] * g[k][0];
                j[0][1] += x[k][0] * g[k][1];
                j[1][0] += x[k][1] * g[k][0];
                j[1][1] += x[k][1] * g[k][1];
            }
            let d = j[0][0] * j[1][1] - j[0][1] * j[1][0];
            let dxi = (j[1][1] * fx - j[0][1] * fy) / d;
            let deta = (-j[1][0] * fx + j[0][0] * fy) / d;
            xi -= dxi;
            eta -= deta;
            if dxi.abs() + deta.abs() < 1e-14 {
                break;
            }
        }
    }
    (xi >= -tol && eta >= -tol && xi + eta <= 1.0 + tol).then_some((xi, eta))
}

/// V and E at reference point (ξ, η) of triangle `t`.
fn evaluate(mesh: &Mesh, potential: &[f64], t: usize, xi: f64, eta: f64) -> (f64, [f64; 2]) {
    let p = eval_point(mesh, potential, t, xi, eta);
    (p.v, p.e)
}

/// Point location over the triangles' bounding boxes (padded for curved P2 edges).
pub(crate) struct TriangleGrid {
    grid: BucketGrid,
}

impl TriangleGrid {
    pub(crate) fn new(mesh: &Mesh) -> TriangleGrid {
        // Curved P2 edges bulge by at most a few per cent of the element: pad a little.
        TriangleGrid { grid: mesher::triangle_grid(mesh, 0.1) }
    }

    pub(crate) fn locate(&self, mesh: &Mesh, p: Xy) -> Option<(usize, f64, f64)> {
        self.locate_where(mesh, p, |_| true)
    }

    /// The first triangle `keep` accepts that contains `p` (a point on an interface lies in
    /// a triangle of each side: `keep` chooses the side).
    pub(crate) fn locate_where(&self, mesh: &Mesh, p: Xy, keep: impl Fn(usize) -> bool) -> Option<(usize, f64, f64)> {
        let mut found = None;
        self.grid.for_each_near(p, 0.0, |t| {
            if found.is_none() && keep(t as usize) {
                found = locate_in(mesh, t as usize, p).map(|(xi, eta)| (t as usize, xi, eta));
            }
        });
        found
    }
}

/// V at each point (None outside the mesh).
pub(crate) fn sample_potential(mesh: &Mesh, solution: &Solution, points: &[Xy]) -> Vec<Option<f64>> {
    let grid = TriangleGrid::new(mesh);
    points
        .iter()
        .map(|&p| grid.locate(mesh, p).map(|(t, xi, eta)| evaluate(mesh, &solution.potential, t, xi, eta).0))
        .collect()
}

/// Samples V and E at `samples` points equally spaced along the polyline `path`
/// (at least two points).
///
/// # Panics
/// If `path` has fewer than two points, `samples < 2`, or the solution does not belong to
/// the mesh.
#[track_caller]
pub fn probe_line(mesh: &Mesh, solution: &Solution, path: &[Xy], samples: usize) -> Vec<LineSample> {
    assert!(path.len() >= 2 && samples >= 2, "a probe line needs two points and two samples");
    assert_eq!(solution.potential.len(), mesh.nodes.len(), "solution and mesh do not match");
    probe_line_with(&TriangleGrid::new(mesh), mesh, solution, path, samples)
}

/// [`probe_line`] with the point-location grid already built.
pub(crate) fn probe_line_with(
    grid: &TriangleGrid,
    mesh: &Mesh,
    solution: &Solution,
    path: &[Xy],
    samples: usize,
) -> Vec<LineSample> {
    let seg: Vec<f64> = path.windows(2).map(|w| (w[1][0] - w[0][0]).hypot(w[1][1] - w[0][1])).collect();
    let total: f64 = seg.iter().sum();
    let mut out = Vec::with_capacity(samples);
    for k in 0..samples {
        let s = total * k as f64 / (samples - 1) as f64;
        let (mut i, mut acc) = (0, 0.0);
        while i + 1 < seg.len() && acc + seg[i] < s {
            acc += seg[i];
            i += 1;
        }
        let f = if seg[i] > 0.0 { ((s - acc) / seg[i]).clamp(0.0, 1.0) } else { 0.0 };
        let at = [path[i][0] + f * (path[i + 1][0] - path[i][0]), path[i][1] + f * (path[i + 1][1] - path[i][1])];
        out.push(match grid.locate(mesh, at) {
            Some((t, xi, eta)) => {
                let (v, e) = evaluate(mesh, &solution.potential, t, xi, eta);
                LineSample { s, at, region: Some(mesh.regions[t]), potential: v, e }
            }
            None => LineSample { s, at, region: None, potential: f64::NAN, e: [f64::NAN; 2] },
        });
    }
    out
}

/// Samples an interface or conductor surface at the midpoint of every mesh edge on it.
///
/// # Panics
/// If the solution does not belong to the mesh.
#[track_caller]
pub fn probe_interface(mesh: &Mesh, solution: &Solution, which: InterfaceSelector) -> Vec<InterfaceSample> {
    assert_eq!(solution.potential.len(), mesh.nodes.len(), "solution and mesh do not match");
    // The triangle on each side of every edge.
    let mut tri_of: std::collections::HashMap<(u32, u32), (u32, u8)> = std::collections::HashMap::new();
    for (t, tri) in mesh.triangles.iter().enumerate() {
        for k in 0..3 {
            tri_of.insert((tri[k], tri[(k + 1) % 3]), (t as u32, k as u8));
        }
    }
    let mut edges: Vec<[u32; 2]> = mesh
        .edges
        .iter()
        .filter(|e| match (which, e.tag) {
            (InterfaceSelector::Regions(a, b), EdgeTag::Interface(x, y)) => (x, y) == (a.min(b), a.max(b)),
            (InterfaceSelector::Conductor(c), EdgeTag::Conductor(d)) => c == d,
            _ => false,
        })
        .map(|e| e.nodes)
        .collect();
    // Chain the edges end to end (each chain in order; chains one after another).
    let mut ordered: Vec<[u32; 2]> = Vec::with_capacity(edges.len());
    while !edges.is_empty() {
        // Start a chain at an edge whose start is no other edge's end, if there is one.
        let start = (0..edges.len()).find(|&i| !edges.iter().any(|e| e[1] == edges[i][0])).unwrap_or(0);
        let mut cur = edges.swap_remove(start);
        ordered.push(cur);
        while let Some(i) = edges.iter().position(|e| e[0] == cur[1]) {
            cur = edges.swap_remove(i);
            ordered.push(cur);
        }
    }
    let mut out = Vec::with_capacity(ordered.len());
    let mut s = 0.0;
    let mut prev_end: Option<Xy> = None;
    for [a, b] in ordered {
        let (pa, pb) = (mesh.nodes[a as usize], mesh.nodes[b as usize]);
        let len = (pb[0] - pa[0]).hypot(pb[1] - pa[1]);
        if let Some(q) = prev_end {
            // A jump between chains counts as distance too, so s stays monotone.
            s += (pa[0] - q[0]).hypot(pa[1] - q[1]);
        }
        let t_hat = [(pb[0] - pa[0]) / len, (pb[1] - pa[1]) / len];
        // The first region lies on the left of a→b; the normal points to the right side.
        let n_hat = [t_hat[1], -t_hat[0]];
        let mid = [(pa[0] + pb[0]) / 2.0, (pa[1] + pb[1]) / 2.0];
        let side = |key: (u32, u32)| -> Option<(SideField, f64)> {
            let &(t, k) = tri_of.get(&key)?;
            // Reference coordinates of the midpoint of local edge k.
            let (xi, eta) = [(0.5, 0.0), (0.5, 0.5), (0.0, 0.5)][k as usize];
            let (v, e) = evaluate(mesh, &solution.potential, t as usize, xi, eta);
            Some((
                SideField {
                    region: mesh.regions[t as usize],
                    e_n: e[0] * n_hat[0] + e[1] * n_hat[1],
                    e_t: e[0] * t_hat[0] + e[1] * t_hat[1],
                },
                v,
            ))
        };
        // The triangle with a→b counter-clockwise is on the left (the first side).
        let left = side((a, b));
        let right = side((b, a));
        let (first, v, second) = match (left, right) {
            (Some((f, v)), r) => (f, v, r.map(|x| x.0)),
            (None, Some((f, v))) => (f, v, None),
            (None, None) => continue,
        };
        let ends = [solution.potential[a as usize], solution.potential[b as usize]];
        out.push(InterfaceSample { s: s + len / 2.0, at: mid, potential: v, first, second, edge_length: len, ends });
        s += len;
        prev_end = Some(pb);
    }
    out
}
