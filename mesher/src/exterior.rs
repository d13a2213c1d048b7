//! The open boundary: the unbounded space outside a circular domain, mapped by the Kelvin
//! transformation into a disc and meshed there.
//!
//! # Algorithm
//! Inversion in the domain's bounding circle (centre c, radius R), x′ = c + R²(x − c)/|x − c|²,
//! maps the exterior |x − c| > R onto the disc |x′ − c| < R, the circle onto itself (point by
//! point) and infinity onto the centre. In a planar problem the map is conformal, so the
//! exterior is a Laplace problem in the disc with the same permittivity. In an
//! axisymmetric problem (centre on the axis) the stored energy ½∫ε|∇V|²dV keeps its form
//! with the mapped permittivity ε′ = ε·R²/|x′ − c|² (the engine applies it), and the centre,
//! being infinity, is held at 0 V.
//!
//! The disc (a half disc in axisymmetry) is meshed by constrained Delaunay refinement to
//! the mesh's angle bound: the circle's chords (and the axis) are constraints, the centre
//! is a vertex, and the domain's vertices next to the circle (the third corner of every
//! triangle on a chord) are copied in, so that the exterior starts with the domain's own
//! spacing along the circle, however uneven (a size point or adaptive refinement near the
//! circle), and no chord is encroached; refinement grades the disc towards the centre. If
//! refinement split a chord anyway, the disc falls back to rings of nodes whose spacing
//! starts from the circle's median node spacing and grows by the gradation factor towards
//! the centre (conforming, but thin triangles where the circle's spacing is uneven). The
//! circle's nodes are the interior mesh's own, so the two meshes are conforming along the
//! circle; its edges become an interface between the domain and the "open-space exterior"
//! region.
//!
//! # References
//! - W. Thomson (Lord Kelvin), "Extrait d'une lettre de M. William Thomson à M. Liouville",
//!   J. Math. Pures Appl. 10 (1845) 364–367 (the inversion).
//! - E. M. Freeman, D. A. Lowther, "A novel mapping technique for open boundary finite
//!   element solutions to Poisson's equation", IEEE Trans. Magn. 24 (1988) 2934–2936
//!   (the mapped-exterior method for open-boundary problems, planar and axisymmetric).

use crate::error::MeshError;
use crate::geometry::{Symmetry, Xy};
use crate::mesh::{EdgeTag, Exterior, Mesh, TaggedEdge};
use spade::{DelaunayTriangulation, Point2, Triangulation};
use std::f64::consts::PI;

/// Adds the mapped exterior to `mesh` (before P2 nodes are made).
pub(crate) fn attach(
    mesh: &mut Mesh,
    center: Xy,
    radius: f64,
    gradation: f64,
    min_angle_deg: f64,
) -> Result<(), MeshError> {
    let axisym = mesh.symmetry == Symmetry::Axisymmetric;
    // The circle's chords (the outer-boundary edges) and its nodes, by angle.
    let chords: Vec<[u32; 2]> = mesh.edges.iter().filter(|e| e.tag == EdgeTag::Outer).map(|e| e.nodes).collect();
    let mut on_circle: Vec<u32> = chords.iter().flatten().copied().collect();
    on_circle.sort_unstable();
    on_circle.dedup();
    if on_circle.len() < 3 {
        return Err(MeshError::Triangulation { detail: "the open boundary has fewer than three nodes".into() });
    }
    let angle = |p: Xy| (p[1] - center[1]).atan2(p[0] - center[0]);
    on_circle.sort_by(|&a, &b| angle(mesh.nodes[a as usize]).total_cmp(&angle(mesh.nodes[b as usize])));
    let n_circle = on_circle.len();
    // The domain triangle on each chord (outer edges run with the domain on their left):
    // its region and its third corner, from one pass over the triangles with two corners
    // on the circle.
    let chord_index: std::collections::HashMap<(u32, u32), usize> =
        chords.iter().enumerate().map(|(i, c)| ((c[0], c[1]), i)).collect();
    let mut circle = vec![false; mesh.nodes.len()];
    for &v in &on_circle {
        circle[v as usize] = true;
    }
    let mut beside = vec![(u32::MAX, u32::MAX); chords.len()];
    for (t, tri) in mesh.triangles.iter().enumerate() {
        for k in 0..3 {
            let (a, b) = (tri[k], tri[(k + 1) % 3]);
            if circle[a as usize] && circle[b as usize] {
                if let Some(&i) = chord_index.get(&(a, b)) {
                    beside[i] = (mesh.regions[t], tri[(k + 2) % 3]);
                }
            }
        }
    }
    if let Some(i) = beside.iter().position(|b| b.0 == u32::MAX) {
        return Err(MeshError::Triangulation {
            detail: format!(
                "open-boundary edge at {:?} has no domain triangle on it",
                mesh.nodes[chords[i][0] as usize]
            ),
        });
    }
    let thirds: Vec<u32> = beside.iter().map(|b| b.1).collect();
    let (pts, local_tris) = match refined_disc(mesh, center, radius, &on_circle, &chords, &thirds, min_angle_deg) {
        Some(disc) => disc,
        None => ring_disc(mesh, center, radius, &on_circle, &chords, gradation)?,
    };
    // Local → mesh node ids.
    let base = mesh.nodes.len() as u32;
    let id = |k: usize| if k < n_circle { on_circle[k] } else { base + (k - n_circle) as u32 };
    let region = mesh.shape_names.len() as u32;
    let new_tris: Vec<[u32; 3]> = local_tris.iter().map(|v| [id(v[0]), id(v[1]), id(v[2])]).collect();
    // Every circle chord must be an edge of the disc triangulation, or the meshes would
    // not conform.
    let mut disc_edges: std::collections::HashSet<(u32, u32)> = std::collections::HashSet::new();
    for t in &new_tris {
        for k in 0..3 {
            let (a, b) = (t[k], t[(k + 1) % 3]);
            disc_edges.insert((a.min(b), a.max(b)));
        }
    }
    for e in mesh.edges.iter_mut().filter(|e| e.tag == EdgeTag::Outer) {
        let [a, b] = e.nodes;
        if !disc_edges.contains(&(a.min(b), a.max(b))) {
            return Err(MeshError::Triangulation {
                detail: format!(
                    "open-boundary disc does not conform to the domain along the circle near {:?}",
                    mesh.nodes[a as usize]
                ),
            });
        }
    }
    // The circle becomes an interface between the domain's region and the exterior.
    for (e, &(inside, _)) in mesh.edges.iter_mut().filter(|e| e.tag == EdgeTag::Outer).zip(&beside) {
        e.tag = EdgeTag::Interface(inside, region);
    }
    // Axis edges of the exterior half disc, oriented with the region on their left.
    if axisym {
        let mut axis: Vec<u32> = (0..pts.len()).filter(|&k| pts[k][0].abs() <= 1e-12 * radius).map(id).collect();
        axis.sort_by(|&a, &b| {
            let pa = if a < base { mesh.nodes[a as usize] } else { pts[(a - base) as usize + n_circle] };
            let pb = if b < base { mesh.nodes[b as usize] } else { pts[(b - base) as usize + n_circle] };
            pb[1].total_cmp(&pa[1])
        });
        for w in axis.windows(2) {
            if disc_edges.contains(&(w[0].min(w[1]), w[0].max(w[1]))) {
                mesh.edges.push(TaggedEdge { nodes: [w[0], w[1]], tag: EdgeTag::Axis, arc: None });
            }
        }
    }
    mesh.nodes.extend_from_slice(&pts[n_circle..]);
    mesh.num_vertices = mesh.nodes.len() as u32;
    mesh.regions.extend(std::iter::repeat_n(region, new_tris.len()));
    mesh.triangles.extend(new_tris);
    mesh.shape_names.push("open-space exterior".into());
    mesh.exterior = Some(Exterior { region, center, radius });
    Ok(())
}

/// The disc meshed by rings of nodes inside the circle, their spacing starting from the
/// circle's median node spacing and growing by the gradation factor towards the centre,
/// and a Delaunay triangulation of the circle nodes and the rings. Points: the circle
/// nodes first, in `on_circle` order; triangles by index into the points.
fn ring_disc(
    mesh: &Mesh,
    center: Xy,
    radius: f64,
    on_circle: &[u32],
    chords: &[[u32; 2]],
    gradation: f64,
) -> Result<(Vec<Xy>, Vec<[usize; 3]>), MeshError> {
    let axisym = mesh.symmetry == Symmetry::Axisymmetric;
    let mut spacing: Vec<f64> = chords
        .iter()
        .map(|c| {
            let (p, q) = (mesh.nodes[c[0] as usize], mesh.nodes[c[1] as usize]);
            (p[0] - q[0]).hypot(p[1] - q[1])
        })
        .collect();
    spacing.sort_by(f64::total_cmp);
    let h0 = spacing[spacing.len() / 2];
    // Rings towards the centre.
    let span = if axisym { PI } else { 2.0 * PI };
    let mut pts: Vec<Xy> = on_circle.iter().map(|&i| mesh.nodes[i as usize]).collect();
    let (mut r, mut h) = (radius, h0);
    loop {
        // Spacing grows by the gradation factor; stop once the next ring would come closer
        // to the centre than about its own spacing (the centre node closes the disc).
        let h_next = h * gradation;
        let r_next = r - 0.866 * h_next;
        if r_next < 1.2 * h_next {
            break;
        }
        let n = ((span * r_next / h_next).round() as usize).max(if axisym { 3 } else { 6 });
        // Alternate rings are offset by half a step, which makes near-equilateral triangles.
        let phase = if pts.len().is_multiple_of(2) { 0.0 } else { 0.5 };
        if axisym {
            for k in 0..=n {
                let a = -PI / 2.0 + span * k as f64 / n as f64;
                // Ring ends sit exactly on the axis.
                let x = if k == 0 || k == n { 0.0 } else { center[0] + r_next * a.cos() };
                pts.push([x, center[1] + r_next * a.sin()]);
            }
        } else {
            for k in 0..n {
                let a = span * (k as f64 + phase) / n as f64;
                pts.push([center[0] + r_next * a.cos(), center[1] + r_next * a.sin()]);
            }
        }
        r = r_next;
        h = h_next;
    }
    // The centre stands for infinity.
    pts.push(if axisym { [0.0, center[1]] } else { center });
    let dt =
        DelaunayTriangulation::<Point2<f64>>::bulk_load_stable(pts.iter().map(|p| Point2::new(p[0], p[1])).collect())
            .map_err(|e| MeshError::Triangulation { detail: format!("open-boundary disc: {e:?}") })?;
    if dt.num_vertices() != pts.len() {
        return Err(MeshError::Triangulation { detail: "open-boundary disc: coincident ring points".into() });
    }
    Ok((pts, dt.inner_faces().map(|f| f.vertices().map(|v| v.fix().index())).collect()))
}

/// The disc meshed by Delaunay refinement (spade): the circle's chords are constraints
/// (with the axis in an axisymmetric half disc), the centre is a vertex, and the domain's
/// own vertices next to the circle (the third corner of each triangle on a chord) are
/// copied in, so that near the circle the exterior starts with the interior's spacing,
/// however uneven, and no chord is encroached. Refinement to the angle bound then grades
/// the disc towards its centre. `None` if a chord was split (the meshes would not
/// conform) or the refinement did not finish; the caller falls back to rings.
/// `chords` are the circle's edges and `thirds` the third corner of the domain triangle on
/// each.
fn refined_disc(
    mesh: &Mesh,
    center: Xy,
    radius: f64,
    on_circle: &[u32],
    chords: &[[u32; 2]],
    thirds: &[u32],
    min_angle_deg: f64,
) -> Option<(Vec<Xy>, Vec<[usize; 3]>)> {
    use spade::{AngleLimit, RefinementParameters};
    let axisym = mesh.symmetry == Symmetry::Axisymmetric;
    let mut local = vec![usize::MAX; mesh.nodes.len()];
    let mut pts: Vec<Xy> = Vec::with_capacity(2 * on_circle.len() + 1);
    for &v in on_circle {
        local[v as usize] = pts.len();
        pts.push(mesh.nodes[v as usize]);
    }
    for &c in thirds {
        if local[c as usize] == usize::MAX {
            local[c as usize] = pts.len();
            pts.push(mesh.nodes[c as usize]);
        }
    }
    // The centre stands for infinity.
    let centre = if axisym { [0.0, center[1]] } else { center };
    if pts.iter().any(|p| (p[0] - centre[0]).hypot(p[1] - centre[1]) < 1e-9 * radius) {
        return None;
    }
    pts.push(centre);
    let mut edges: Vec<[usize; 2]> = chords.iter().map(|c| c.map(|v| local[v as usize])).collect();
    if axisym {
        // The axis: consecutive points on it, bottom to top, through the centre.
        let mut axis: Vec<usize> = (0..pts.len()).filter(|&k| pts[k][0].abs() <= 1e-12 * radius).collect();
        axis.sort_by(|&a, &b| pts[a][1].total_cmp(&pts[b][1]));
        edges.extend(axis.windows(2).map(|w| [w[0], w[1]]));
    }
    let n_in = pts.len();
    let vertices: Vec<Point2<f64>> = pts.iter().map(|p| Point2::new(p[0], p[1])).collect();
    let mut conflicts = 0;
    let mut cdt = crate::delaunay_refine::Cdt::try_bulk_load_cdt(vertices, edges, |_| conflicts += 1).ok()?;
    if conflicts > 0 || cdt.num_vertices() != n_in {
        return None;
    }
    let eq = 3f64.sqrt() / 4.0;
    let result = cdt.refine(
        RefinementParameters::<f64>::new()
            .with_angle_limit(AngleLimit::from_deg(min_angle_deg))
            .with_max_allowed_area(eq * (0.5 * radius) * (0.5 * radius))
            .with_max_additional_vertices(20 * n_in + 1000),
    );
    if !result.refinement_complete {
        return None;
    }
    // Every chord must have survived whole.
    let handle = spade::handles::FixedVertexHandle::from_index;
    for c in chords {
        let [a, b] = c.map(|v| handle(local[v as usize]));
        cdt.get_edge_from_neighbors(a, b)?;
    }
    let pts = crate::delaunay_refine::vertex_positions(&cdt);
    let tris = cdt.inner_faces().map(|f| f.vertices().map(|v| v.fix().index())).collect();
    Some((pts, tris))
}
