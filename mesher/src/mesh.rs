//! The mesh handed to the solver: plain arrays and `u32` ids, tags on every boundary and
//! interface edge, optional P2 mid-edge nodes (on the true arc for curved boundaries).

use crate::error::MeshError;
use crate::geometry::{norm, sub, Symmetry, Xy};
use crate::singular_point::SingularPoint;
use rayon::prelude::*;
use std::collections::HashMap;

/// Two of the points `ids` (positions by `point`) closer than `tol` (in the same `family`, when the points fall
/// into families compared only within themselves), if any: sorted by coordinates as
/// order-preserving integer keys (far faster than comparing floats through the point
/// array), then neighbours compared.
pub(crate) fn first_coincident(
    point: impl Fn(u32) -> Xy + Sync,
    ids: &[u32],
    family: impl Fn(u32) -> bool + Sync,
    tol: f64,
) -> Option<(u32, u32)> {
    let ordered = |v: f64| {
        let b = v.to_bits();
        if b >> 63 == 1 {
            !b
        } else {
            b | (1 << 63)
        }
    };
    let mut order: Vec<(bool, u64, u64, u32)> = ids
        .par_iter()
        .map(|&i| {
            let p = point(i);
            (family(i), ordered(p[0]), ordered(p[1]), i)
        })
        .collect();
    order.par_sort_unstable();
    order.windows(2).find_map(|w| {
        let (p, q) = (point(w[0].3), point(w[1].3));
        (w[0].0 == w[1].0 && norm(sub(p, q)) <= tol).then_some((w[0].3, w[1].3))
    })
}

/// Key of the undirected edge a–b: smaller id in the high half.
pub(crate) fn edge_key(a: u32, b: u32) -> u64 {
    ((a.min(b) as u64) << 32) | a.max(b) as u64
}

/// What a tagged edge bounds.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum EdgeTag {
    /// The outer boundary of the domain.
    Outer,
    /// The symmetry axis x = 0 of an axisymmetric model.
    Axis,
    /// The surface of conductor `c` (index into [`Mesh::conductor_names`]).
    Conductor(u32),
    /// An interface between two dielectric regions (shape indices, smaller first; the first
    /// region lies on the left of the edge's node order).
    Interface(u32, u32),
}

/// A boundary or interface edge.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct TaggedEdge {
    /// End nodes, ordered so that the (first) dielectric region lies on the left.
    pub nodes: [u32; 2],
    /// What the edge bounds.
    pub tag: EdgeTag,
    /// Index into [`Mesh::arcs`] when the edge lies on a circular arc of the geometry.
    pub arc: Option<u32>,
}

/// A circle of the geometry that boundary edges follow.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct ArcGeom {
    /// Centre, metres.
    pub center: Xy,
    /// Radius, metres.
    pub radius: f64,
}

/// The open-boundary exterior: the space outside the circle (centre, radius) mapped by
/// inversion into a disc meshed as region `region` (see the `exterior` module).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Exterior {
    /// Region (shape index) of the mapped exterior; its name is "open-space exterior".
    pub region: u32,
    /// Centre of the inversion circle, metres.
    pub center: Xy,
    /// Radius of the inversion circle, metres.
    pub radius: f64,
}

/// The fans of triangles around the vertices of thin electrodes ([`Mesh::corner_fans`]).
#[derive(Clone, Debug, Default)]
pub struct CornerFans {
    /// Per triangle, the fan of each corner; empty when the mesh has no thin electrode.
    fans: Vec<[u8; 3]>,
    /// Keys of the thin electrodes' edges, sorted.
    thin: Vec<u64>,
}

impl CornerFans {
    /// The fan of corner `k` of triangle `t` around its vertex (0 away from thin
    /// electrodes).
    pub fn of(&self, t: usize, k: usize) -> u8 {
        self.fans.get(t).map_or(0, |f| f[k])
    }

    /// True when the mesh has a thin electrode.
    pub fn any(&self) -> bool {
        !self.thin.is_empty()
    }

    /// True when a–b is an edge of a thin electrode.
    pub fn is_thin_edge(&self, a: u32, b: u32) -> bool {
        self.thin.binary_search(&edge_key(a, b)).is_ok()
    }
}

/// A triangular mesh of the dielectric regions of a cross-section.
///
/// Invariants (checked by [`Mesh::validate`]): triangles are counter-clockwise with positive
/// area; every edge belongs to one or two triangles; every edge with one triangle and every
/// edge between two regions is tagged, and tags agree with the regions on both sides; no two
/// vertices coincide (a conductor edge may have triangles on both sides: a thin electrode);
/// for order 2, mid-edge nodes are shared between neighbours and lie at the
/// chord midpoint, or on the arc for curved boundary edges.
#[derive(Clone, Debug)]
pub struct Mesh {
    /// Planar or axisymmetric.
    pub symmetry: Symmetry,
    /// Node coordinates, metres. For order 2 the mid-edge nodes follow the vertices.
    pub nodes: Vec<Xy>,
    /// Number of vertex nodes (the first `num_vertices` entries of `nodes`).
    pub num_vertices: u32,
    /// Triangles as counter-clockwise vertex triples.
    pub triangles: Vec<[u32; 3]>,
    /// Region (shape index) of each triangle.
    pub regions: Vec<u32>,
    /// For order 2: the node in the middle of local edge k (from vertex k to vertex k+1).
    /// Empty for order 1.
    pub mid_nodes: Vec<[u32; 3]>,
    /// Boundary and interface edges with their tags.
    pub edges: Vec<TaggedEdge>,
    /// Circles that curved edges follow.
    pub arcs: Vec<ArcGeom>,
    /// Names of all shapes, by shape index (regions index into this).
    pub shape_names: Vec<String>,
    /// Names of the conductors, by conductor index.
    pub conductor_names: Vec<String>,
    /// Points where the field or its gradient is singular.
    pub singular_points: Vec<SingularPoint>,
    /// The mapped open-boundary exterior, if the model has an open boundary. Its triangles
    /// are in mapped (inverted) coordinates, not physical ones.
    pub exterior: Option<Exterior>,
}

/// Quality and size figures of a mesh.
#[derive(Clone, Debug, PartialEq)]
pub struct MeshStats {
    /// Number of nodes (vertices plus mid-edge nodes).
    pub num_nodes: usize,
    /// Number of triangles.
    pub num_triangles: usize,
    /// Smallest interior angle, degrees.
    pub min_angle_deg: f64,
    /// Largest circumradius to shortest edge ratio (1/(2 sin θ_min) per triangle).
    pub max_radius_edge_ratio: f64,
    /// Smallest and largest edge length, metres.
    pub edge_length_range_m: [f64; 2],
    /// (shape index, triangles, area in m²) per region, in shape order.
    pub per_region: Vec<(u32, usize, f64)>,
}

impl Mesh {
    /// Element order: 1 (linear) or 2 (quadratic).
    pub fn order(&self) -> u8 {
        if self.mid_nodes.is_empty() {
            1
        } else {
            2
        }
    }

    /// Number of nodes.
    pub fn num_nodes(&self) -> usize {
        self.nodes.len()
    }

    /// Number of triangles.
    pub fn num_triangles(&self) -> usize {
        self.triangles.len()
    }

    /// Signed area of triangle `t`.
    pub fn triangle_area(&self, t: usize) -> f64 {
        let [a, b, c] = self.triangles[t].map(|i| self.nodes[i as usize]);
        0.5 * ((b[0] - a[0]) * (c[1] - a[1]) - (c[0] - a[0]) * (b[1] - a[1]))
    }

    /// Size of the model (diagonal of the nodes' bounding box), for relative tolerances.
    pub fn scale(&self) -> f64 {
        let mut bb = [f64::INFINITY, f64::INFINITY, f64::NEG_INFINITY, f64::NEG_INFINITY];
        for p in &self.nodes {
            bb = [bb[0].min(p[0]), bb[1].min(p[1]), bb[2].max(p[0]), bb[3].max(p[1])];
        }
        (bb[2] - bb[0]).hypot(bb[3] - bb[1])
    }

    /// Quality statistics.
    pub fn stats(&self) -> MeshStats {
        let mut min_angle = f64::INFINITY;
        let mut max_ratio: f64 = 0.0;
        let mut emin = f64::INFINITY;
        let mut emax: f64 = 0.0;
        let mut per: HashMap<u32, (usize, f64)> = HashMap::new();
        for (t, tri) in self.triangles.iter().enumerate() {
            let p = tri.map(|i| self.nodes[i as usize]);
            let l = [norm(sub(p[1], p[2])), norm(sub(p[2], p[0])), norm(sub(p[0], p[1]))];
            let area = self.triangle_area(t);
            for k in 0..3 {
                // Angle opposite edge k by the law of cosines (clamped for round-off).
                let (a, b, c) = (l[k], l[(k + 1) % 3], l[(k + 2) % 3]);
                let cosv = ((b * b + c * c - a * a) / (2.0 * b * c)).clamp(-1.0, 1.0);
                min_angle = min_angle.min(cosv.acos().to_degrees());
                emin = emin.min(a);
                emax = emax.max(a);
            }
            let circum = l[0] * l[1] * l[2] / (4.0 * area);
            let shortest = l[0].min(l[1]).min(l[2]);
            max_ratio = max_ratio.max(circum / shortest);
            let e = per.entry(self.regions[t]).or_insert((0, 0.0));
            e.0 += 1;
            e.1 += area;
        }
        let mut per_region: Vec<(u32, usize, f64)> = per.into_iter().map(|(k, (n, a))| (k, n, a)).collect();
        per_region.sort_by_key(|e| e.0);
        MeshStats {
            num_nodes: self.nodes.len(),
            num_triangles: self.triangles.len(),
            min_angle_deg: min_angle,
            max_radius_edge_ratio: max_ratio,
            edge_length_range_m: [emin, emax],
            per_region,
        }
    }

    /// Checks the invariants listed on [`Mesh`].
    ///
    /// # Errors
    /// [`MeshError::InvalidMesh`] naming the first element, edge or node that fails, with
    /// its coordinates.
    pub fn validate(&self) -> Result<(), MeshError> {
        self.validate_with(None)
    }

    /// [`Mesh::validate`] reusing an edge list from [`Mesh::sorted_edges`] when the caller
    /// has one (the mesher does, from building the P2 nodes).
    pub(crate) fn validate_with(&self, edges: Option<&[(u64, u32, u8)]>) -> Result<(), MeshError> {
        let bad = |detail: String| Err(MeshError::InvalidMesh { detail });
        let n = self.nodes.len();
        if self.regions.len() != self.triangles.len() {
            return bad(format!("{} triangles but {} region ids", self.triangles.len(), self.regions.len()));
        }
        if self.triangles.is_empty() {
            return bad("the mesh has no triangle".into());
        }
        let scale = self.scale();
        for (i, p) in self.nodes.iter().enumerate() {
            if !(p[0].is_finite() && p[1].is_finite()) {
                return bad(format!("node {i} has a non-finite coordinate {p:?}"));
            }
            if self.symmetry == Symmetry::Axisymmetric && p[0] < -1e-12 * scale {
                return bad(format!("node {i} at {p:?} has negative radius in an axisymmetric mesh"));
            }
        }
        let nv = self.num_vertices as usize;
        // Per-triangle checks in parallel; the first failing triangle is reported.
        let first_bad = self.triangles.par_iter().enumerate().find_map_first(|(t, tri)| {
            if let Some(&v) = tri.iter().find(|&&v| v as usize >= nv) {
                return Some(format!("triangle {t} refers to vertex {v}, but there are {nv} vertices"));
            }
            if self.regions[t] as usize >= self.shape_names.len() {
                return Some(format!(
                    "triangle {t} has region {} but there are {} shapes",
                    self.regions[t],
                    self.shape_names.len()
                ));
            }
            let a = self.triangle_area(t);
            if a.is_nan() || a <= 0.0 {
                let c = tri.map(|i| self.nodes[i as usize]);
                return Some(format!("triangle {t} with corners {c:?} is not counter-clockwise (area {a:e})"));
            }
            None
        });
        if let Some(detail) = first_bad {
            return bad(detail);
        }
        let mut used = vec![false; n];
        for tri in &self.triangles {
            for &v in tri {
                used[v as usize] = true;
            }
        }
        // Every (edge, triangle, local edge) sorted by edge: runs of equal keys are the
        // triangles sharing an edge. (Sorting beats hashing here by a wide margin.)
        let owned;
        let adj: &[(u64, u32, u8)] = match edges {
            Some(e) => e,
            None => {
                owned = self.sorted_edges();
                &owned
            }
        };
        let run_of = |key: u64| -> &[(u64, u32, u8)] {
            let lo = adj.partition_point(|e| e.0 < key);
            let hi = adj.partition_point(|e| e.0 <= key);
            &adj[lo..hi]
        };
        let mut tags: Vec<(u64, u32)> =
            self.edges.iter().enumerate().map(|(i, e)| (edge_key(e.nodes[0], e.nodes[1]), i as u32)).collect();
        tags.sort_unstable();
        if let Some(w) = tags.windows(2).find(|w| w[0].0 == w[1].0) {
            let [a, b] = self.edges[w[0].1 as usize].nodes;
            return bad(format!("edge {a}–{b} is tagged twice"));
        }
        for e in &self.edges {
            let [a, b] = e.nodes;
            let tris = run_of(edge_key(a, b));
            if tris.is_empty() {
                return bad(format!(
                    "tagged edge {a}–{b} at {:?}–{:?} is not an edge of any triangle",
                    self.nodes[a as usize], self.nodes[b as usize]
                ));
            }
            match e.tag {
                EdgeTag::Interface(r1, r2) => {
                    let mut rs: Vec<u32> = tris.iter().map(|&(_, t, _)| self.regions[t as usize]).collect();
                    rs.sort();
                    if rs != [r1, r2] {
                        return bad(format!(
                            "edge {a}–{b} is tagged as the interface {r1}/{r2} but borders regions {rs:?}"
                        ));
                    }
                }
                EdgeTag::Axis if self.symmetry != Symmetry::Axisymmetric => {
                    return bad(format!("edge {a}–{b} is tagged as the axis in a planar mesh"));
                }
                // A thin electrode has dielectric on both faces.
                EdgeTag::Conductor(_) => {}
                _ => {
                    if tris.len() != 1 {
                        return bad(format!("edge {a}–{b} is tagged {:?} but has triangles on both sides", e.tag));
                    }
                }
            }
            if e.tag == EdgeTag::Axis {
                for v in [a, b] {
                    if self.nodes[v as usize][0].abs() > 1e-9 * scale {
                        return bad(format!(
                            "axis edge {a}–{b} has node {v} off the axis at {:?}",
                            self.nodes[v as usize]
                        ));
                    }
                }
            }
            if let Some(arc) = e.arc {
                let Some(g) = self.arcs.get(arc as usize) else {
                    return bad(format!("edge {a}–{b} refers to arc {arc}, which does not exist"));
                };
                for v in [a, b] {
                    let d = (norm(sub(self.nodes[v as usize], g.center)) - g.radius).abs();
                    if d > 1e-9 * scale {
                        return bad(format!(
                            "node {v} at {:?} of a curved edge is {d:e} m off its arc",
                            self.nodes[v as usize]
                        ));
                    }
                }
            }
        }
        let p2 = !self.mid_nodes.is_empty();
        if p2 && self.mid_nodes.len() != self.triangles.len() {
            return bad("order-2 mesh with a mid-node triple count different from the triangle count".into());
        }
        // Walk the edge runs and the sorted tags together.
        let mut ti = 0;
        let mut i = 0;
        while i < adj.len() {
            let key = adj[i].0;
            while ti < tags.len() && tags[ti].0 < key {
                ti += 1;
            }
            let tag = if ti < tags.len() && tags[ti].0 == key { Some(&self.edges[tags[ti].1 as usize]) } else { None };
            let mut j = i + 1;
            while j < adj.len() && adj[j].0 == key {
                j += 1;
            }
            let run = &adj[i..j];
            let (a, b) = ((key >> 32) as u32, key as u32);
            if run.len() > 2 {
                return bad(format!(
                    "edge {a}–{b} at {:?} is shared by {} triangles",
                    self.nodes[a as usize],
                    run.len()
                ));
            }
            let needs_tag = run.len() == 1 || self.regions[run[0].1 as usize] != self.regions[run[1].1 as usize];
            if needs_tag && tag.is_none() {
                return bad(format!(
                    "edge {a}–{b} from {:?} to {:?} is on a boundary or interface but has no tag",
                    self.nodes[a as usize], self.nodes[b as usize]
                ));
            }
            if p2 {
                let m = self.mid_nodes[run[0].1 as usize][run[0].2 as usize];
                if (m as usize) < nv || m as usize >= n {
                    return bad(format!("triangle {} has mid node {m}, not a mid-edge node", run[0].1));
                }
                if let Some(&(_, t, k)) = run.get(1) {
                    let other = self.mid_nodes[t as usize][k as usize];
                    if other != m {
                        return bad(format!("edge {a}–{b} has two different mid nodes {m} and {other}"));
                    }
                }
                used[m as usize] = true;
                let pm = self.nodes[m as usize];
                let d = match tag.and_then(|e| e.arc) {
                    Some(arc) => {
                        let g = self.arcs[arc as usize];
                        (norm(sub(pm, g.center)) - g.radius).abs()
                    }
                    None => {
                        let (pa, pb) = (self.nodes[a as usize], self.nodes[b as usize]);
                        norm(sub(pm, [(pa[0] + pb[0]) / 2.0, (pa[1] + pb[1]) / 2.0]))
                    }
                };
                if d > 1e-9 * scale {
                    return bad(format!("mid node {m} of edge {a}–{b} is {d:e} m from where it belongs"));
                }
            }
            i = j;
        }
        // Duplicate nodes (`first_coincident`).
        // Nodes used only by the mapped open-boundary exterior live in inverted coordinates
        // and may coincide with physical nodes: compare each family within itself.
        let mut mapped = vec![false; n];
        if let Some(ext) = self.exterior {
            let mut physical = vec![false; n];
            for (t, tri) in self.triangles.iter().enumerate() {
                let mids = if self.mid_nodes.is_empty() { [u32::MAX; 3] } else { self.mid_nodes[t] };
                for &v in tri.iter().chain(mids.iter()).filter(|&&v| v != u32::MAX) {
                    if self.regions[t] == ext.region {
                        mapped[v as usize] = true;
                    } else {
                        physical[v as usize] = true;
                    }
                }
            }
            for (m, p) in mapped.iter_mut().zip(&physical) {
                *m &= !*p;
            }
        }
        // Only the vertices: a mid-edge node sits exactly at its edge's midpoint or on its
        // arc (checked above), so it could coincide with another node only where two
        // triangles overlap, which the pairing of edges already rules out for a mesh that
        // does not fold over itself. (Sorting all P2 nodes took 70 % of this validation.)
        let ids: Vec<u32> = (0..nv as u32).collect();
        if let Some((i, j)) = first_coincident(|v| self.nodes[v as usize], &ids, |v| mapped[v as usize], 1e-13 * scale)
        {
            return bad(format!("nodes {i} and {j} coincide at {:?}", self.nodes[i as usize]));
        }
        if let Some(i) = used.iter().position(|u| !u) {
            return bad(format!("node {i} at {:?} belongs to no triangle", self.nodes[i]));
        }
        Ok(())
    }

    /// Adds mid-edge nodes (order 2). Edges on arcs get their mid node on the arc, halfway
    /// in angle between the end nodes. Does nothing if the mesh is already of order 2.
    pub fn make_order2(&mut self) {
        let adj = self.sorted_edges();
        self.make_order2_with(&adj);
    }

    /// [`Mesh::make_order2`] with the edge list from [`Mesh::sorted_edges`].
    pub(crate) fn make_order2_with(&mut self, adj: &[(u64, u32, u8)]) {
        if !self.mid_nodes.is_empty() {
            return;
        }
        let mut arc_of: Vec<(u64, u32)> =
            self.edges.iter().filter_map(|e| e.arc.map(|a| (edge_key(e.nodes[0], e.nodes[1]), a))).collect();
        arc_of.sort_unstable();
        let mut mids = vec![[0u32; 3]; self.triangles.len()];
        self.nodes.reserve(adj.len() / 2 + 1);
        let mut i = 0;
        while i < adj.len() {
            let key = adj[i].0;
            let (a, b) = ((key >> 32) as usize, (key & 0xffff_ffff) as usize);
            let (pa, pb) = (self.nodes[a], self.nodes[b]);
            let p = match arc_of.binary_search_by_key(&key, |t| t.0) {
                Ok(k) => arc_midpoint(self.arcs[arc_of[k].1 as usize], pa, pb),
                Err(_) => [(pa[0] + pb[0]) / 2.0, (pa[1] + pb[1]) / 2.0],
            };
            let id = self.nodes.len() as u32;
            self.nodes.push(p);
            while i < adj.len() && adj[i].0 == key {
                mids[adj[i].1 as usize][adj[i].2 as usize] = id;
                i += 1;
            }
        }
        self.mid_nodes = mids;
    }

    /// The vertex on each singular point, in the order of `singular_points` (the mesher
    /// puts a vertex exactly at every point; None only for a mesh built otherwise).
    pub fn singular_vertices(&self) -> Vec<Option<u32>> {
        let key = |p: Xy| (p[0].to_bits(), p[1].to_bits());
        let mut found = vec![None; self.singular_points.len()];
        if self.singular_points.is_empty() {
            return found;
        }
        let index: std::collections::HashMap<(u64, u64), usize> =
            self.singular_points.iter().enumerate().map(|(k, s)| (key(s.at), k)).collect();
        for v in 0..self.num_vertices {
            if let Some(&k) = index.get(&key(self.nodes[v as usize])) {
                found[k].get_or_insert(v);
            }
        }
        found
    }

    /// The triangles around each vertex, compressed: those of vertex v are
    /// `around[start[v]..start[v + 1]]`, in triangle order. Returns (start, around).
    ///
    /// # Panics
    /// If a triangle refers to a node beyond `num_vertices`.
    pub fn vertex_triangles(&self) -> (Vec<u32>, Vec<u32>) {
        let nv = self.num_vertices as usize;
        let mut start = vec![0u32; nv + 1];
        for tri in &self.triangles {
            for &v in tri {
                start[v as usize + 1] += 1;
            }
        }
        for i in 0..nv {
            start[i + 1] += start[i];
        }
        let mut fill = start.clone();
        let mut around = vec![0u32; start[nv] as usize];
        for (t, tri) in self.triangles.iter().enumerate() {
            for &v in tri {
                around[fill[v as usize] as usize] = t as u32;
                fill[v as usize] += 1;
            }
        }
        (start, around)
    }

    /// The faces of the thin electrodes: per triangle corner, which fan of triangles around
    /// that vertex it belongs to. Around a vertex on a thin electrode (a conductor edge
    /// with triangles on both sides) the triangles of one region split into fans on either
    /// face, which must not be averaged together (the normal field changes sign across
    /// the electrode); elsewhere every corner is in fan 0. `(start, around)` is
    /// [`Mesh::vertex_triangles`], which callers that have it pass in.
    pub fn corner_fans(&self, (start, around): (&[u32], &[u32])) -> CornerFans {
        let star = |v: u32| &around[start[v as usize] as usize..start[v as usize + 1] as usize];
        // A thin edge a→b (region on the left) also has a triangle with the edge b→a.
        let has_directed = |a: u32, b: u32| {
            star(a).iter().any(|&t| {
                let tri = self.triangles[t as usize];
                (0..3).any(|k| tri[k] == a && tri[(k + 1) % 3] == b)
            })
        };
        let mut thin: Vec<u64> = self
            .edges
            .iter()
            .filter(|e| matches!(e.tag, EdgeTag::Conductor(_)))
            .filter(|e| {
                let [a, b] = e.nodes;
                has_directed(a, b) && has_directed(b, a)
            })
            .map(|e| edge_key(e.nodes[0], e.nodes[1]))
            .collect();
        if thin.is_empty() {
            return CornerFans { fans: Vec::new(), thin: Vec::new() };
        }
        thin.sort_unstable();
        let is_thin = |a: u32, b: u32| thin.binary_search(&edge_key(a, b)).is_ok();
        let mut fans = vec![[0u8; 3]; self.triangles.len()];
        let mut verts: Vec<u32> = thin.iter().flat_map(|&k| [(k >> 32) as u32, k as u32]).collect();
        verts.sort_unstable();
        verts.dedup();
        for &v in &verts {
            let tris = star(v);
            // Union–find over the star: triangles sharing an edge from v that is not thin,
            // in one region, are in one fan.
            let mut parent: Vec<usize> = (0..tris.len()).collect();
            fn root(p: &mut [usize], mut i: usize) -> usize {
                while p[i] != i {
                    p[i] = p[p[i]];
                    i = p[i];
                }
                i
            }
            let others = |t: u32| {
                let tri = self.triangles[t as usize];
                let k = tri.iter().position(|&w| w == v).expect("star triangle holds v");
                [tri[(k + 1) % 3], tri[(k + 2) % 3]]
            };
            for i in 0..tris.len() {
                for j in (i + 1)..tris.len() {
                    let (ti, tj) = (tris[i], tris[j]);
                    if self.regions[ti as usize] != self.regions[tj as usize] {
                        continue;
                    }
                    let (oi, oj) = (others(ti), others(tj));
                    if let Some(&w) = oi.iter().find(|w| oj.contains(w)) {
                        if !is_thin(v, w) {
                            let (ri, rj) = (root(&mut parent, i), root(&mut parent, j));
                            parent[ri.max(rj)] = ri.min(rj);
                        }
                    }
                }
            }
            // Number the fans of each region in the order of their first triangle.
            let mut seen: Vec<(u32, usize)> = Vec::new();
            for (i, &ti) in tris.iter().enumerate() {
                let r = root(&mut parent, i);
                let region = self.regions[ti as usize];
                if !seen.iter().any(|&(_, q)| q == r) {
                    seen.push((region, r));
                }
                let fan = seen.iter().filter(|&&(g, _)| g == region).position(|&(_, q)| q == r).unwrap_or(0);
                let t = ti as usize;
                let k = self.triangles[t].iter().position(|&w| w == v).expect("star triangle holds v");
                fans[t][k] = fan.min(u8::MAX as usize) as u8;
            }
        }
        CornerFans { fans, thin }
    }

    /// (edge key, triangle, local edge) for every triangle edge, sorted by key
    /// ([`sorted_edges_of`]).
    ///
    /// # Panics
    /// If a triangle refers to a node beyond `num_vertices` (checked by `validate` first).
    pub(crate) fn sorted_edges(&self) -> Vec<(u64, u32, u8)> {
        sorted_edges_of(self.num_vertices as usize, self.triangles.iter().copied())
    }
}

/// The point of the arc's circle halfway in angle between `a` and `b` (the short way
/// round): on the bisector of their radii.
pub(crate) fn arc_midpoint(g: ArcGeom, a: Xy, b: Xy) -> Xy {
    let (ua, ub) = (sub(a, g.center), sub(b, g.center));
    let s = [ua[0] / norm(ua) + ub[0] / norm(ub), ua[1] / norm(ua) + ub[1] / norm(ub)];
    let ns = norm(s);
    [g.center[0] + g.radius * s[0] / ns, g.center[1] + g.radius * s[1] / ns]
}

/// (edge key, triangle, local edge) for every edge of `triangles` (vertex ids below
/// `num_nodes`), sorted by key: the triangles sharing an edge form a run.
///
/// A counting sort on the smaller vertex id, then a sort of each short bucket: linear
/// time, and several times faster than one comparison sort of all 3·N entries.
///
/// # Panics
/// If a triangle refers to a node at or beyond `num_nodes`.
pub(crate) fn sorted_edges_of(
    num_nodes: usize,
    triangles: impl Iterator<Item = [u32; 3]> + Clone,
) -> Vec<(u64, u32, u8)> {
    let mut start = vec![0u32; num_nodes + 1];
    let mut count = 0usize;
    for tri in triangles.clone() {
        count += 1;
        for k in 0..3 {
            start[tri[k].min(tri[(k + 1) % 3]) as usize + 1] += 1;
        }
    }
    for i in 0..num_nodes {
        start[i + 1] += start[i];
    }
    let mut fill = start.clone();
    let mut adj = vec![(0u64, 0u32, 0u8); 3 * count];
    for (t, tri) in triangles.enumerate() {
        for k in 0..3 {
            let (a, b) = (tri[k], tri[(k + 1) % 3]);
            let slot = &mut fill[a.min(b) as usize];
            adj[*slot as usize] = (edge_key(a, b), t as u32, k as u8);
            *slot += 1;
        }
    }
    for i in 0..num_nodes {
        adj[start[i] as usize..start[i + 1] as usize].sort_unstable();
    }
    adj
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The unit square as two triangles, its four sides tagged as the outer boundary.
    fn square() -> Mesh {
        let outer = |a, b| TaggedEdge { nodes: [a, b], tag: EdgeTag::Outer, arc: None };
        Mesh {
            symmetry: Symmetry::Planar,
            nodes: vec![[0.0, 0.0], [1.0, 0.0], [1.0, 1.0], [0.0, 1.0]],
            num_vertices: 4,
            triangles: vec![[0, 1, 2], [0, 2, 3]],
            regions: vec![0, 0],
            mid_nodes: Vec::new(),
            edges: vec![outer(0, 1), outer(1, 2), outer(2, 3), outer(3, 0)],
            arcs: Vec::new(),
            shape_names: vec!["box".into()],
            conductor_names: Vec::new(),
            singular_points: Vec::new(),
            exterior: None,
        }
    }

    fn fails(mesh: &Mesh, what: &str) {
        match mesh.validate() {
            Err(MeshError::InvalidMesh { detail }) => assert!(detail.contains(what), "{detail}"),
            other => panic!("expected an invalid mesh ({what}), got {other:?}"),
        }
    }

    #[test]
    fn a_good_mesh_validates_in_both_orders() {
        let mut m = square();
        m.validate().unwrap();
        m.make_order2();
        m.validate().unwrap();
        assert_eq!(m.num_nodes(), 9);
    }

    #[test]
    fn each_broken_invariant_is_named() {
        let mut m = square();
        m.triangles[1] = [0, 3, 2];
        fails(&m, "not counter-clockwise");

        let mut m = square();
        m.edges.pop();
        fails(&m, "has no tag");

        let mut m = square();
        m.edges[0].tag = EdgeTag::Interface(0, 1);
        fails(&m, "interface");

        // Three triangles on one edge (0–1), every other edge on the boundary.
        let mut m = square();
        m.nodes = vec![[0.0, 0.0], [1.0, 0.0], [0.5, 1.0], [0.5, -1.0], [0.5, 2.0]];
        m.num_vertices = 5;
        m.triangles = vec![[0, 1, 2], [1, 0, 3], [0, 1, 4]];
        m.regions = vec![0; 3];
        let outer = |a, b| TaggedEdge { nodes: [a, b], tag: EdgeTag::Outer, arc: None };
        m.edges = vec![outer(1, 2), outer(2, 0), outer(0, 3), outer(3, 1), outer(1, 4), outer(4, 0)];
        fails(&m, "shared by 3 triangles");

        let mut m = square();
        m.make_order2();
        let mid = m.mid_nodes[0][0] as usize;
        m.nodes[mid][1] += 0.01;
        fails(&m, "from where it belongs");

        let mut m = square();
        m.nodes[0][0] = f64::NAN;
        fails(&m, "non-finite");
    }

    #[test]
    fn coincident_vertices_are_found() {
        // Triangle 0 uses vertex 4, a copy of vertex 1, instead of vertex 1: every edge still
        // pairs up and is tagged, only the coordinates give the duplicate away.
        let mut m = square();
        m.nodes = vec![[0.0, 0.0], [1.0, 0.0], [1.0, 1.0], [0.0, 1.0], [1.0, 0.0]];
        m.num_vertices = 5;
        m.triangles[0] = [0, 4, 2];
        m.edges[0].nodes = [0, 4];
        m.edges[1].nodes = [4, 2];
        fails(&m, "coincide");
    }
}
