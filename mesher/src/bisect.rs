//! Local refinement of a given mesh by newest-vertex bisection, for meshes that have no
//! drawn geometry to remesh (imported ones).
//!
//! # Algorithm
//! Every triangle has a refinement edge; a triangle is stored rotated so that it is local
//! edge 1 (vertex 1 → vertex 2), opposite vertex 0, its "newest" vertex. Bisecting it joins
//! vertex 0 to the refinement edge's midpoint m and gives the children (m, v0, v1) and
//! (m, v2, v0), whose refinement edges are the parent's other two edges: this is the
//! newest-vertex rule (Mitchell 1989), under which the angles of all descendants stay
//! bounded below by a constant of the first mesh (Sewell 1972). On the first mesh the
//! refinement edge is the longest edge.
//!
//! The sizes asked per triangle of the first mesh become a continuous, graded field (the
//! [`BackgroundSize`] the mesher uses for remeshing, limited to grow by at most the
//! gradation slope): a tiny size at a singular point's triangles then asks for rings of
//! triangles growing away from it, not for the whole triangle at that size. One round marks
//! the triangles larger than the field at their centroid (size as the edge of the
//! equilateral triangle of the same area), marks their refinement edges, and closes the
//! marking: a triangle with a marked edge gets its refinement edge marked too, until no
//! triangle changes. Each triangle is then bisected at its refinement edge and each child
//! again at its own when that is marked (one, two or three bisections), so every marked
//! edge is split at the same new vertex from both sides and the mesh stays conforming.
//! Children inherit their parent's region; rounds repeat until no triangle
//! is larger than its size, or the vertex budget would be passed.
//!
//! Boundary and interface edges keep their tags and orientation (a split edge becomes two
//! edges with the tag and arc of the parent). The new vertex of an edge on a circular arc
//! lies on the arc, halfway in angle, so the refined boundary follows the curve the first
//! mesh described, and the P2 mid-edge nodes, rebuilt for the refined mesh, lie on it too.
//! The first mesh's vertices keep their ids; new vertices follow them.
//!
//! # References
//! - W. F. Mitchell, "A comparison of adaptive refinement techniques for elliptic
//!   problems", ACM Trans. Math. Softw. 15 (1989) 326–347, doi:10.1145/76909.76912.
//! - E. G. Sewell, "Automatic generation of triangulations for piecewise polynomial
//!   approximation", PhD thesis, Purdue University, 1972.
//! - R. Stevenson, "The completion of locally refined simplicial partitions created by
//!   bisection", Math. Comp. 77 (2008) 227–241, doi:10.1090/S0025-5718-07-01959-X.

use crate::error::MeshError;
use crate::geometry::{norm, sub, Xy};
use crate::mesh::{arc_midpoint, edge_key as key, Mesh, TaggedEdge};
use crate::size_field::BackgroundSize;
use std::collections::HashMap;

/// No neighbour across an edge (a boundary edge).
const NONE: u32 = u32::MAX;

/// Most rounds of one call: each halves the area of the triangles it refines, so 60
/// rounds shrink a size by 2³⁰.
const MAX_ROUNDS: usize = 60;

/// The outcome of [`bisect_to_sizes`].
#[derive(Clone, Debug)]
pub struct Bisected {
    /// The refined mesh, of the order of the given one.
    pub mesh: Mesh,
    /// False when the vertex budget stopped the refinement before every triangle reached
    /// its size.
    pub complete: bool,
}

/// Refines `mesh` by newest-vertex bisection until every triangle is at most the size
/// asked for it (module docs: `sizes` has one per triangle of `mesh`, metres, as the edge
/// of the equilateral triangle of the same area, made a field that grows by at most
/// `gradation` − 1 per metre per metre), or until another round would pass `max_vertices`. Sizes above a triangle's own leave it as it is (bisection never
/// coarsens). Regions, tags, arcs, names, singular points and the exterior are kept; an
/// order-2 mesh gets its mid-edge nodes rebuilt (on the arcs for curved edges).
///
/// # Errors
/// [`MeshError::BadParameter`] if `sizes` has the wrong length or a size is not positive;
/// [`MeshError::InvalidMesh`] if placing a new vertex on a curved boundary would invert a
/// triangle (the first mesh is too coarse along that arc), naming the edge, or if the
/// result fails [`Mesh::validate`].
pub fn bisect_to_sizes(mesh: &Mesh, sizes: &[f64], gradation: f64, max_vertices: usize) -> Result<Bisected, MeshError> {
    if sizes.len() != mesh.triangles.len() {
        return Err(MeshError::BadParameter {
            name: "sizes",
            value: sizes.len() as f64,
            allowed: "one size per triangle of the mesh",
        });
    }
    if let Some(&s) = sizes.iter().find(|s| !(s.is_finite() && **s > 0.0)) {
        return Err(MeshError::BadParameter { name: "sizes", value: s, allowed: "finite and > 0" });
    }
    if !(gradation > 1.0 && gradation.is_finite()) {
        return Err(MeshError::BadParameter { name: "gradation", value: gradation, allowed: "finite and > 1" });
    }
    let mut field = BackgroundSize::new(mesh, sizes.to_vec());
    field.limit_gradation(gradation - 1.0);
    let nv = mesh.num_vertices as usize;
    let mut work = Work {
        nodes: mesh.nodes[..nv].to_vec(),
        tris: mesh.triangles.iter().map(|&t| longest_edge_first(&mesh.nodes, t)).collect(),
        regions: mesh.regions.clone(),
        sizes: sizes.to_vec(),
        edges: mesh.edges.clone(),
    };
    let mut complete = true;
    // Only triangles made in the last round can be too large: the others were checked and
    // have not changed.
    let mut fresh = vec![true; work.tris.len()];
    for _ in 0..MAX_ROUNDS {
        let marked: Vec<bool> = (0..work.tris.len())
            .map(|t| {
                if !fresh[t] {
                    return false;
                }
                let c = work.tris[t].map(|i| work.nodes[i as usize]);
                let centroid = [(c[0][0] + c[1][0] + c[2][0]) / 3.0, (c[0][1] + c[1][1] + c[2][1]) / 3.0];
                // A centroid moved off the first mesh by a vertex on an arc keeps the
                // size asked for its first-mesh triangle.
                let want = field.size_at(centroid).unwrap_or(work.sizes[t]);
                work.size(t) > want * (1.0 + 1e-9)
            })
            .collect();
        if !marked.iter().any(|&m| m) {
            break;
        }
        match work.round(&marked, mesh, max_vertices)? {
            Some(changed) => fresh = changed,
            None => {
                complete = false;
                break;
            }
        }
    }
    let mut out = Mesh {
        symmetry: mesh.symmetry,
        num_vertices: work.nodes.len() as u32,
        nodes: work.nodes,
        triangles: work.tris,
        regions: work.regions,
        mid_nodes: Vec::new(),
        edges: work.edges,
        arcs: mesh.arcs.clone(),
        shape_names: mesh.shape_names.clone(),
        conductor_names: mesh.conductor_names.clone(),
        singular_points: mesh.singular_points.clone(),
        exterior: mesh.exterior,
    };
    // One edge list serves the P2 nodes and the validation.
    let adj = out.sorted_edges();
    if mesh.order() == 2 {
        out.make_order2_with(&adj);
    }
    out.validate_with(Some(&adj))?;
    Ok(Bisected { mesh: out, complete })
}

/// The triangle rotated (orientation kept) so that its longest edge is local edge 1.
fn longest_edge_first(nodes: &[Xy], t: [u32; 3]) -> [u32; 3] {
    let len = |a: u32, b: u32| norm(sub(nodes[a as usize], nodes[b as usize]));
    // Edge k runs from vertex k to vertex k+1; edge 1 is opposite vertex 0.
    let l = [len(t[0], t[1]), len(t[1], t[2]), len(t[2], t[0])];
    let k = (0..3).max_by(|&a, &b| l[a].total_cmp(&l[b]).then(b.cmp(&a))).unwrap_or(1);
    // Rotate so that edge k becomes edge 1: new vertex 0 is old vertex k+2.
    let s = (k + 2) % 3;
    [t[s], t[(s + 1) % 3], t[(s + 2) % 3]]
}

/// The refinement state: vertices, triangles (refinement edge = local edge 1), regions,
/// asked sizes and tagged edges.
struct Work {
    nodes: Vec<Xy>,
    tris: Vec<[u32; 3]>,
    regions: Vec<u32>,
    sizes: Vec<f64>,
    edges: Vec<TaggedEdge>,
}

impl Work {
    fn area(&self, t: [u32; 3]) -> f64 {
        let [a, b, c] = t.map(|i| self.nodes[i as usize]);
        0.5 * ((b[0] - a[0]) * (c[1] - a[1]) - (c[0] - a[0]) * (b[1] - a[1]))
    }

    /// Edge of the equilateral triangle with the area of triangle `t`.
    fn size(&self, t: usize) -> f64 {
        (4.0 * self.area(self.tris[t]).abs() / 3f64.sqrt()).sqrt()
    }

    /// Neighbour across each local edge (`NONE` on the boundary), as slot t·3 + k → the
    /// neighbour's slot.
    fn neighbours(&self) -> Vec<u32> {
        let adj = crate::mesh::sorted_edges_of(self.nodes.len(), self.tris.iter().copied());
        let mut nb = vec![NONE; adj.len()];
        for w in adj.windows(2) {
            if w[0].0 == w[1].0 {
                let (s0, s1) = (3 * w[0].1 + w[0].2 as u32, 3 * w[1].1 + w[1].2 as u32);
                nb[s0 as usize] = s1;
                nb[s1 as usize] = s0;
            }
        }
        nb
    }

    /// One round: refine the `marked` triangles with the closure that keeps the mesh
    /// conforming. Returns which triangles are new or changed, or `None` (and changes
    /// nothing) if the round would pass the budget.
    fn round(&mut self, marked: &[bool], first: &Mesh, max_vertices: usize) -> Result<Option<Vec<bool>>, MeshError> {
        let nb = self.neighbours();
        let mut split = vec![false; nb.len()];
        let mut stack: Vec<u32> = (0..self.tris.len() as u32).filter(|&t| marked[t as usize]).collect();
        while let Some(t) = stack.pop() {
            let slot = 3 * t as usize + 1;
            if split[slot] {
                continue;
            }
            split[slot] = true;
            let other = nb[slot];
            if other != NONE {
                split[other as usize] = true;
                // The neighbour now has a marked edge: its refinement edge must split too.
                stack.push(other / 3);
            }
        }
        // Marked edges of a triangle other than its refinement edge have the refinement
        // edge marked as well (closure), so every triangle with a marked edge bisects.
        let new_vertices = (0..split.len()).filter(|&s| split[s] && (nb[s] == NONE || nb[s] as usize > s)).count();
        if self.nodes.len() + new_vertices > max_vertices {
            return Ok(None);
        }
        // The tagged edges by key, to place new vertices on arcs and split the tags.
        let tagged: HashMap<u64, usize> =
            self.edges.iter().enumerate().map(|(i, e)| (key(e.nodes[0], e.nodes[1]), i)).collect();
        let mut mid = vec![NONE; split.len()];
        let mut edge_splits: Vec<(usize, u32)> = Vec::new();
        for s in 0..split.len() {
            if !split[s] || mid[s] != NONE {
                continue;
            }
            let tri = self.tris[s / 3];
            let (a, b) = (tri[s % 3], tri[(s % 3 + 1) % 3]);
            let (pa, pb) = (self.nodes[a as usize], self.nodes[b as usize]);
            let mut p = [(pa[0] + pb[0]) / 2.0, (pa[1] + pb[1]) / 2.0];
            if let Some(&i) = tagged.get(&key(a, b)) {
                if let Some(arc) = self.edges[i].arc {
                    p = arc_midpoint(first.arcs[arc as usize], pa, pb);
                }
                edge_splits.push((i, self.nodes.len() as u32));
            }
            let id = self.nodes.len() as u32;
            self.nodes.push(p);
            mid[s] = id;
            if nb[s] != NONE {
                mid[nb[s] as usize] = id;
            }
        }
        for (i, m) in edge_splits {
            let e = self.edges[i];
            self.edges[i].nodes = [e.nodes[0], m];
            self.edges.push(TaggedEdge { nodes: [m, e.nodes[1]], ..e });
        }
        let n = self.tris.len();
        let mut changed = vec![false; n];
        for t in 0..n {
            let mids = [mid[3 * t], mid[3 * t + 1], mid[3 * t + 2]];
            if mids[1] == NONE {
                continue;
            }
            changed[t] = true;
            let [v0, v1, v2] = self.tris[t];
            let m = mids[1];
            let children = [([m, v0, v1], mids[0]), ([m, v2, v0], mids[2])];
            let mut slot = Some(t);
            for (child, cm) in children {
                let parts = if cm == NONE {
                    vec![child]
                } else {
                    // Bisect the child at its refinement edge (the parent's edge) too.
                    let [w0, w1, w2] = child;
                    vec![[cm, w0, w1], [cm, w2, w0]]
                };
                for part in parts {
                    if self.area(part) <= 0.0 {
                        let p = self.nodes[m as usize];
                        return Err(MeshError::InvalidMesh {
                            detail: format!(
                                "bisecting triangle {t} near ({:.6e}, {:.6e}) inverts a child: the new vertex on a \
                                 curved edge falls outside the neighbouring triangle; the first mesh is too coarse \
                                 along that arc (use more, shorter edges on it)",
                                p[0], p[1]
                            ),
                        });
                    }
                    match slot.take() {
                        Some(t) => self.tris[t] = part,
                        None => {
                            self.tris.push(part);
                            self.regions.push(self.regions[t]);
                            self.sizes.push(self.sizes[t]);
                        }
                    }
                }
            }
        }
        // The children pushed after the first n are new.
        changed.resize(self.tris.len(), true);
        Ok(Some(changed))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::{generate, Fill, Geometry, OuterBoundary, Outline, RefineParams, Shape, Symmetry};

    fn square(order: u8) -> Mesh {
        let shapes = vec![Shape {
            name: "box".into(),
            fill: Fill::Dielectric { permittivity: 1.0 },
            max_size_m: None,
            outline: Outline::rectangle("box", [0.0, 0.0], [1.0, 1.0], 0.0).unwrap(),
        }];
        let geo = Geometry {
            symmetry: Symmetry::Planar,
            shapes,
            conductors: vec![],
            outer: OuterBoundary::FixedPotential,
            size_points: vec![],
            thin: vec![],
            boundary_pieces: vec![],
        };
        generate(&geo, &RefineParams::new().with_order(order).with_max_size_m(0.3)).unwrap().mesh
    }

    #[test]
    fn refining_one_corner_stays_conforming_and_keeps_the_boundary() {
        // Ask for size 0.01 on the triangles at the corner (0, 0) only: the refinement stays
        // local and graded, the triangles at the corner reach the size (within the growth of
        // the field over their centroid's distance), the mesh validates (conforming, tags
        // agree), and the boundary length is unchanged.
        let mesh = square(1);
        let at_origin = |m: &Mesh, t: usize| m.triangles[t].iter().any(|&i| norm(m.nodes[i as usize]) < 1e-12);
        let sizes: Vec<f64> = (0..mesh.triangles.len()).map(|t| if at_origin(&mesh, t) { 0.01 } else { 1.0 }).collect();
        let out = bisect_to_sizes(&mesh, &sizes, 1.6, 1_000_000).unwrap();
        assert!(out.complete);
        let m = out.mesh;
        assert!(m.triangles.len() > 2 * mesh.triangles.len(), "{}", m.triangles.len());
        for t in (0..m.triangles.len()).filter(|&t| at_origin(&m, t)) {
            // The field at the centroid, a distance d from the corner: 0.01 + 0.6·d.
            let h = (4.0 * m.triangle_area(t) / 3f64.sqrt()).sqrt();
            let c = m.triangles[t].map(|i| m.nodes[i as usize]);
            let d = ((c[0][0] + c[1][0] + c[2][0]) / 3.0).hypot((c[0][1] + c[1][1] + c[2][1]) / 3.0);
            assert!(h <= 0.01 + 0.6 * d + 1e-12 && h < 0.02, "triangle {t} at the corner: size {h}, centroid at {d}");
        }
        let boundary: f64 =
            m.edges.iter().map(|e| norm(sub(m.nodes[e.nodes[0] as usize], m.nodes[e.nodes[1] as usize]))).sum();
        assert!((boundary - 4.0).abs() < 1e-12, "{boundary}");
        // The far corner is untouched.
        let far = m.nodes.iter().filter(|p| p[0] > 0.8 && p[1] > 0.8).count();
        let far0 = mesh.nodes.iter().filter(|p| p[0] > 0.8 && p[1] > 0.8).count();
        assert_eq!(far, far0);
        // Newest-vertex bisection keeps the angles bounded (Sewell 1972): no angle below a
        // third of the first mesh's smallest.
        assert!(m.stats().min_angle_deg > mesh.stats().min_angle_deg / 3.0, "{}", m.stats().min_angle_deg);
        let area: f64 = (0..m.triangles.len()).map(|t| m.triangle_area(t)).sum();
        assert!((area - 1.0).abs() < 1e-12);
    }

    #[test]
    fn uniform_sizes_halve_every_triangle() {
        // A size just below the smallest triangle's splits each once or more; the P2 mesh
        // is rebuilt and validates.
        let mesh = square(2);
        let smallest =
            (0..mesh.triangles.len()).map(|t| (4.0 * mesh.triangle_area(t) / 3f64.sqrt()).sqrt()).fold(1.0, f64::min);
        let sizes = vec![0.99 * smallest; mesh.triangles.len()];
        let out = bisect_to_sizes(&mesh, &sizes, 1.6, 1_000_000).unwrap();
        assert_eq!(out.mesh.order(), 2);
        assert!(out.mesh.triangles.len() >= 2 * mesh.triangles.len());
        // The budget stops a round before it is passed.
        let capped =
            bisect_to_sizes(&mesh, &vec![1e-4; mesh.triangles.len()], 1.6, 2 * mesh.num_vertices as usize).unwrap();
        assert!(!capped.complete);
        assert!(capped.mesh.num_vertices as usize <= 2 * mesh.num_vertices as usize);
        assert!(bisect_to_sizes(&mesh, &[1.0], 1.6, 10).is_err());
    }
}
