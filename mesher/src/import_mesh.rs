//! An imported grid ([`GridFile`]) made into a [`Mesh`]: regions mapped to dielectrics or
//! conductors (conductor cells are dropped, their boundary becomes the conductor's surface),
//! boundary line cells mapped to conductors, the outer boundary or the axis, and everything
//! checked before anything is solved, each error naming the cell or node id as the file
//! numbers it, its coordinates and the fix.
//!
//! Checks: cell types (linear or quadratic triangles and lines only, one order), region ids
//! present and mapped, degenerate cells (clockwise ones are reoriented, with a warning),
//! z = 0, r ≥ 0 in axisymmetric models, duplicate nodes, edges shared by more than two cells,
//! hanging nodes (a vertex inside another cell's edge: a non-conforming mesh), P2 mid-side
//! nodes shared by both cells of an edge, boundary tags on triangle edges; then
//! [`Mesh::validate`] for the invariants every mesh has.
//!
//! Curved P2 edges: a boundary or interface edge whose mid-side node is off its chord gets the
//! circle through its three nodes as its arc (the quadratic curve's osculating circle at the
//! mid node, to second order), so refinement can place new nodes on it; an interior edge's
//! mid-side node is moved to its chord midpoint (interior edges are straight here), counted
//! in a warning.

use crate::geometry::{Symmetry, Xy};
use crate::import::GridFile;
use crate::mesh::{ArcGeom, EdgeTag, Mesh, TaggedEdge};

/// What an imported region id becomes.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum RegionUse {
    /// A dielectric region: index into [`ImportSpec::region_names`].
    Dielectric(u32),
    /// A conductor (its cells are dropped): index into [`ImportSpec::conductor_names`].
    Conductor(u32),
}

/// What an imported boundary tag (on line cells) becomes.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum BoundaryUse {
    /// The surface of a conductor (held at its potential or floating).
    Conductor(u32),
    /// The outer boundary (the model's outer condition).
    Outer,
}

/// How to read an imported grid.
#[derive(Clone, Debug)]
pub struct ImportSpec {
    /// Planar or axisymmetric (x is the radius).
    pub symmetry: Symmetry,
    /// Metres per file unit.
    pub unit_m: f64,
    /// Name of the integer cell array holding region ids (and boundary tags, unless
    /// `boundary_array` names another).
    pub id_array: String,
    /// Name of the cell array holding the boundary tags of line cells, when not `id_array`.
    pub boundary_array: Option<String>,
    /// Region ids of triangles.
    pub regions: Vec<(i64, RegionUse)>,
    /// Tags of boundary line cells.
    pub boundaries: Vec<(i64, BoundaryUse)>,
    /// Dielectric region names.
    pub region_names: Vec<String>,
    /// Conductor names.
    pub conductor_names: Vec<String>,
}

/// A located import error.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct ImportError(pub String);

impl std::fmt::Display for ImportError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(&self.0)
    }
}

impl std::error::Error for ImportError {}

/// The mesh of an imported grid and the warnings of what was repaired.
#[derive(Clone, Debug)]
pub struct Imported {
    /// The mesh, validated.
    pub mesh: Mesh,
    /// What was accepted with a change (reoriented cells, straightened interior edges).
    pub warnings: Vec<String>,
}

fn fail<T>(msg: String) -> Result<T, ImportError> {
    Err(ImportError(msg))
}

/// A triangle of the file: cell id, corners, mid-side nodes (P2), what its region is.
type FileTriangle = (usize, [u32; 3], Option<[u32; 3]>, RegionUse);

/// Makes the mesh of an imported grid.
///
/// # Errors
/// An [`ImportError`] naming the first cell, edge or node (file ids) that fails, with its
/// coordinates in the file's unit and what to change.
pub fn import_mesh(grid: &GridFile, spec: &ImportSpec) -> Result<Imported, ImportError> {
    let ids = grid.cell_array(&spec.id_array).ok_or_else(|| {
        let have: Vec<&str> = grid.cell_arrays.iter().map(|(n, _)| n.as_str()).collect();
        ImportError(format!(
            "the file has no cell array '{}' with region ids (it has: {}): name the array holding them",
            spec.id_array,
            if have.is_empty() { "none".to_string() } else { have.join(", ") }
        ))
    })?;
    let at = |v: u32| {
        let p = grid.points[v as usize];
        format!("({}, {})", p[0], p[1])
    };
    let centre = |c: usize| {
        let n = grid.cell(c);
        let (x, y) =
            n.iter().fold((0.0, 0.0), |s, &v| (s.0 + grid.points[v as usize][0], s.1 + grid.points[v as usize][1]));
        format!("({}, {})", x / n.len() as f64, y / n.len() as f64)
    };
    // Sizes for tolerances: the bounding box of all points.
    let (mut lo, mut hi) = ([f64::INFINITY; 2], [f64::NEG_INFINITY; 2]);
    for p in &grid.points {
        for k in 0..2 {
            lo[k] = lo[k].min(p[k]);
            hi[k] = hi[k].max(p[k]);
        }
    }
    let scale = (hi[0] - lo[0]).hypot(hi[1] - lo[1]).max(f64::MIN_POSITIVE);
    if let Some(v) = grid.points.iter().position(|p| p[2].abs() > 1e-9 * scale) {
        return fail(format!(
            "node {v} has z = {}: a 2-D mesh lies in the plane z = 0 (x, y; x is the radius r when axisymmetric)",
            grid.points[v][2]
        ));
    }
    let tags = match &spec.boundary_array {
        None => ids,
        Some(name) => grid.cell_array(name).ok_or_else(|| {
            ImportError(format!("the file has no cell array '{name}' with boundary tags: name the array holding them"))
        })?,
    };
    // Cells: triangles with their use, lines with their tag (None: unmapped, an error only
    // where the line is needed, on the boundary).
    let mut order = None;
    let mut tris: Vec<FileTriangle> = Vec::new();
    let mut lines: Vec<(usize, [u32; 2], i64, Option<BoundaryUse>)> = Vec::new();
    for (c, ((&ty, &id), &tag)) in grid.types.iter().zip(ids).zip(tags).enumerate() {
        let n = grid.cell(c);
        let o = match (ty, n.len()) {
            (5, 3) | (3, 2) => 1,
            (22, 6) | (21, 3) => 2,
            (1, _) => continue, // vertex cells carry nothing for the field
            _ => {
                return fail(format!(
                    "cell {c} at {} is of VTK type {ty} with {} nodes: only triangles (5, 22) and lines (3, 21) \
                     are read; split other cells into triangles",
                    centre(c),
                    n.len()
                ))
            }
        };
        if *order.get_or_insert(o) != o {
            return fail(format!(
                "cell {c} at {} is of order {o} but earlier cells are of order {}: mixed element orders; \
                 write every cell linear or every cell quadratic",
                centre(c),
                3 - o
            ));
        }
        let id = if ty == 3 || ty == 21 { tag } else { id };
        if !id.is_finite() || id.fract() != 0.0 {
            return fail(format!(
                "cell {c} at {} has no integer id in '{}' ({id}): give every cell a region id or boundary tag",
                centre(c),
                spec.id_array
            ));
        }
        let id = id as i64;
        if ty == 5 || ty == 22 {
            let Some(&(_, u)) = spec.regions.iter().find(|r| r.0 == id) else {
                let known: Vec<String> = spec.regions.iter().map(|r| r.0.to_string()).collect();
                return fail(format!(
                    "cell {c} at {} has region id {id}, which the model does not map (mapped: {}): map it to a \
                     material or a conductor",
                    centre(c),
                    if known.is_empty() { "none".to_string() } else { known.join(", ") }
                ));
            };
            let mids = (n.len() == 6).then(|| [n[3], n[4], n[5]]);
            tris.push((c, [n[0], n[1], n[2]], mids, u));
        } else {
            let u = spec.boundaries.iter().find(|b| b.0 == id).map(|b| b.1);
            lines.push((c, [n[0], n[1]], id, u));
        }
    }
    if !tris.iter().any(|t| matches!(t.3, RegionUse::Dielectric(_))) {
        return fail("the file has no triangle of a dielectric region: there is nothing to solve".into());
    }
    let p2 = order == Some(2);
    // Geometry checks on every triangle (conductor ones included: they define surfaces).
    let mut flipped = 0usize;
    let h2 = |t: &[u32; 3]| {
        let p = t.map(|v| grid.points[v as usize]);
        let l2 = |a: [f64; 3], b: [f64; 3]| (a[0] - b[0]).powi(2) + (a[1] - b[1]).powi(2);
        l2(p[0], p[1]).max(l2(p[1], p[2])).max(l2(p[2], p[0]))
    };
    for (c, t, m, _) in &mut tris {
        let p = t.map(|v| grid.points[v as usize]);
        let a2 = (p[1][0] - p[0][0]) * (p[2][1] - p[0][1]) - (p[2][0] - p[0][0]) * (p[1][1] - p[0][1]);
        if a2.abs() <= 1e-12 * h2(t) || t[0] == t[1] || t[1] == t[2] || t[2] == t[0] {
            return fail(format!(
                "cell {c} with corners {} {} {} (nodes {}, {}, {}) is degenerate (zero area): remove it or fix its nodes",
                at(t[0]),
                at(t[1]),
                at(t[2]),
                t[0],
                t[1],
                t[2]
            ));
        }
        if a2 < 0.0 {
            flipped += 1;
            t.swap(1, 2);
            if let Some(m) = m {
                *m = [m[2], m[1], m[0]];
            }
        }
    }
    if spec.symmetry == Symmetry::Axisymmetric {
        for (_, t, m, _) in &tris {
            for &v in t.iter().chain(m.iter().flatten()) {
                if grid.points[v as usize][0] < -1e-12 * scale {
                    return fail(format!(
                        "node {v} at {} has r < 0 in an axisymmetric model: the mesh must lie at r ≥ 0 (x is the radius)",
                        at(v)
                    ));
                }
            }
        }
    }
    // Edges of all triangles, sorted: runs are the cells sharing an edge.
    let key = crate::mesh::edge_key;
    let adj = crate::mesh::sorted_edges_of(grid.points.len(), tris.iter().map(|t| t.1));
    let mut runs: Vec<(usize, usize)> = Vec::new();
    let mut i = 0;
    while i < adj.len() {
        let mut j = i + 1;
        while j < adj.len() && adj[j].0 == adj[i].0 {
            j += 1;
        }
        if j - i > 2 {
            let (a, b) = ((adj[i].0 >> 32) as u32, adj[i].0 as u32);
            let cells: Vec<String> = adj[i..j].iter().map(|e| tris[e.1 as usize].0.to_string()).collect();
            return fail(format!(
                "edge {a}–{b} from {} to {} is shared by {} cells ({}): overlapping or folded cells; each edge \
                 may belong to two cells at most",
                at(a),
                at(b),
                j - i,
                cells.join(", ")
            ));
        }
        runs.push((i, j));
        i = j;
    }
    // Duplicate vertices: sort by coordinates, compare neighbours.
    let mut is_vertex = vec![false; grid.points.len()];
    for t in &tris {
        for v in t.1 {
            is_vertex[v as usize] = true;
        }
    }
    let vertices: Vec<u32> = (0..grid.points.len() as u32).filter(|&v| is_vertex[v as usize]).collect();
    let xy_of = |v: u32| [grid.points[v as usize][0], grid.points[v as usize][1]];
    if let Some((a, b)) = crate::mesh::first_coincident(xy_of, &vertices, |_| false, 1e-13 * scale) {
        return fail(format!(
            "nodes {} and {} coincide at {}: merge duplicate nodes (the cells on either side are not joined)",
            a.min(b),
            a.max(b),
            at(a.min(b))
        ));
    }
    // Hanging nodes: a vertex inside an edge that only one cell has (the other side of a
    // non-conforming edge was split). Boundary edges are few; a uniform bucket grid of their
    // vertices finds candidates.
    let boundary: Vec<(u32, u32)> =
        runs.iter().filter(|r| r.1 - r.0 == 1).map(|r| ((adj[r.0].0 >> 32) as u32, adj[r.0].0 as u32)).collect();
    {
        let mut bverts: Vec<u32> = boundary.iter().flat_map(|e| [e.0, e.1]).collect();
        bverts.sort_unstable();
        bverts.dedup();
        // The boundary vertices in the project's bucket grid (as point boxes); each edge asks
        // for the vertices within the square around it.
        let xy = |v: u32| [grid.points[v as usize][0], grid.points[v as usize][1]];
        let boxes: Vec<[f64; 4]> = bverts.iter().map(|&v| [xy(v)[0], xy(v)[1], xy(v)[0], xy(v)[1]]).collect();
        let buckets = crate::BucketGrid::new(&boxes, [lo[0], lo[1], hi[0], hi[1]]);
        for &(a, b) in &boundary {
            let (p, q) = (xy(a), xy(b));
            let len2 = (q[0] - p[0]).powi(2) + (q[1] - p[1]).powi(2);
            let mid = [(p[0] + q[0]) / 2.0, (p[1] + q[1]) / 2.0];
            let half = (q[0] - p[0]).abs().max((q[1] - p[1]).abs()) / 2.0;
            let mut hanging = None;
            buckets.for_each_near(mid, half, |k| {
                let v = bverts[k as usize];
                if v == a || v == b || hanging.is_some() {
                    return;
                }
                let r = xy(v);
                let s = ((r[0] - p[0]) * (q[0] - p[0]) + (r[1] - p[1]) * (q[1] - p[1])) / len2;
                let cross = (r[0] - p[0]) * (q[1] - p[1]) - (r[1] - p[1]) * (q[0] - p[0]);
                if s > 1e-9 && s < 1.0 - 1e-9 && cross.abs() <= 1e-9 * len2 {
                    hanging = Some(v);
                }
            });
            if let Some(v) = hanging {
                return fail(format!(
                    "node {v} at {} lies inside edge {a}–{b} from {} to {} of another cell: a hanging node \
                     (non-conforming mesh); split the neighbouring cell at it",
                    at(v),
                    at(a),
                    at(b)
                ));
            }
        }
    }
    // P2: both cells of an edge share its mid node.
    if p2 {
        for &(s, e) in &runs {
            if e - s == 2 {
                let m = |x: (u64, u32, u8)| tris[x.1 as usize].2.map(|m| m[x.2 as usize]);
                let (m0, m1) = (m(adj[s]), m(adj[s + 1]));
                if m0 != m1 {
                    let (a, b) = ((adj[s].0 >> 32) as u32, adj[s].0 as u32);
                    return fail(format!(
                        "edge {a}–{b} from {} to {} has different mid-side nodes in cells {} and {} ({:?} and {:?}): \
                         a non-conforming quadratic mesh; share one mid-side node",
                        at(a),
                        at(b),
                        tris[adj[s].1 as usize].0,
                        tris[adj[s + 1].1 as usize].0,
                        m0.unwrap_or(0),
                        m1.unwrap_or(0)
                    ));
                }
            }
        }
    }
    // Renumber: dielectric triangles' vertices first, then their mid nodes.
    let kept: Vec<usize> = (0..tris.len()).filter(|&i| matches!(tris[i].3, RegionUse::Dielectric(_))).collect();
    // New ids follow the file's order (corners first, then mid-side nodes), so a file whose
    // nodes are already numbered that way keeps its numbering.
    let mut new_id = vec![u32::MAX; grid.points.len()];
    // Marks instead of a sort: ids in ascending order, each once.
    let ascending = |used: &dyn Fn(&mut Vec<bool>)| -> Vec<u32> {
        let mut mark = vec![false; grid.points.len()];
        used(&mut mark);
        (0..grid.points.len() as u32).filter(|&v| mark[v as usize]).collect()
    };
    let corners = ascending(&|mark| {
        for &i in &kept {
            for v in tris[i].1 {
                mark[v as usize] = true;
            }
        }
    });
    let k = spec.unit_m;
    let mut nodes: Vec<Xy> = Vec::with_capacity(corners.len());
    for &v in &corners {
        new_id[v as usize] = nodes.len() as u32;
        let p = grid.points[v as usize];
        nodes.push([p[0] * k, p[1] * k]);
    }
    let num_vertices = nodes.len() as u32;
    let mut mid_nodes = Vec::new();
    if p2 {
        let mids = ascending(&|mark| {
            for &i in &kept {
                for v in tris[i].2.into_iter().flatten() {
                    mark[v as usize] = true;
                }
            }
        });
        for &v in &mids {
            if new_id[v as usize] != u32::MAX {
                let cell = kept.iter().find(|&&i| tris[i].2.is_some_and(|m| m.contains(&v))).map_or(0, |&i| tris[i].0);
                return fail(format!(
                    "node {v} at {} is a corner of one cell and the mid-side node of cell {cell}: fix the cell's node order",
                    at(v)
                ));
            }
            new_id[v as usize] = nodes.len() as u32;
            let p = grid.points[v as usize];
            nodes.push([p[0] * k, p[1] * k]);
        }
        mid_nodes = kept.iter().map(|&i| tris[i].2.unwrap_or([0; 3]).map(|v| new_id[v as usize])).collect();
    }
    let triangles: Vec<[u32; 3]> = kept.iter().map(|&i| tris[i].1.map(|v| new_id[v as usize])).collect();
    let regions: Vec<u32> = kept
        .iter()
        .map(|&i| match tris[i].3 {
            RegionUse::Dielectric(r) => r,
            RegionUse::Conductor(_) => unreachable!("only dielectric triangles are kept"),
        })
        .collect();
    // Position of each kept triangle among the kept ones.
    let mut kept_at = vec![u32::MAX; tris.len()];
    for (k, &i) in kept.iter().enumerate() {
        kept_at[i] = k as u32;
    }
    // Tags from the line cells, by edge.
    let mut line_tag: std::collections::HashMap<u64, (usize, i64, Option<BoundaryUse>)> =
        std::collections::HashMap::new();
    for &(c, [a, b], tag, u) in &lines {
        let pos = adj.partition_point(|e| e.0 < key(a, b));
        if pos >= adj.len() || adj[pos].0 != key(a, b) {
            return fail(format!(
                "line cell {c} from {} to {} (nodes {a}, {b}) is not an edge of any triangle: boundary lines must \
                 follow cell edges",
                at(a),
                at(b)
            ));
        }
        line_tag.insert(key(a, b), (c, tag, u));
    }
    // Tagged edges of the dielectric mesh.
    let mut edges: Vec<TaggedEdge> = Vec::new();
    let mut arcs: Vec<ArcGeom> = Vec::new();
    let mut straightened = 0usize;
    for &(s, e) in &runs {
        // One or two cells (three were refused above).
        let cells = &adj[s..e];
        let is_dielectric = |x: &&(u64, u32, u8)| matches!(tris[x.1 as usize].3, RegionUse::Dielectric(_));
        let Some(&(_, t0, k0)) = cells.iter().find(is_dielectric) else { continue };
        let region_of = |t: u32| match tris[t as usize].3 {
            RegionUse::Dielectric(r) => r,
            RegionUse::Conductor(_) => u32::MAX,
        };
        // The first dielectric cell's edge runs counter-clockwise: its region is on the left.
        let tri = tris[t0 as usize].1;
        let (a, b) = (tri[k0 as usize], tri[(k0 as usize + 1) % 3]);
        let other = cells.iter().find(|x| x.1 != t0).map(|x| x.1);
        let tag = match other.map(|t| tris[t as usize].3) {
            Some(RegionUse::Conductor(c)) => Some(EdgeTag::Conductor(c)),
            Some(RegionUse::Dielectric(r)) => {
                let r0 = region_of(t0);
                (r != r0).then_some(EdgeTag::Interface(r0.min(r), r0.max(r)))
            }
            None => Some(match line_tag.get(&key(a, b)) {
                Some(&(_, _, Some(BoundaryUse::Conductor(c)))) => EdgeTag::Conductor(c),
                Some(&(_, _, Some(BoundaryUse::Outer))) => EdgeTag::Outer,
                Some(&(c, tag, None)) => {
                    return fail(format!(
                        "line cell {c} from {} to {} has boundary tag {tag}, which the model does not map: map it \
                         to a conductor or to the outer boundary",
                        at(a),
                        at(b)
                    ))
                }
                None if spec.symmetry == Symmetry::Axisymmetric
                    && grid.points[a as usize][0].abs() <= 1e-9 * scale
                    && grid.points[b as usize][0].abs() <= 1e-9 * scale =>
                {
                    EdgeTag::Axis
                }
                None => EdgeTag::Outer,
            }),
        };
        // An interface edge lists the smaller region on its left.
        let (na, nb) = match tag {
            Some(EdgeTag::Interface(r1, _)) if region_of(t0) != r1 => (new_id[b as usize], new_id[a as usize]),
            _ => (new_id[a as usize], new_id[b as usize]),
        };
        let mut arc = None;
        if p2 {
            let m = mid_nodes[kept_at[t0 as usize] as usize][k0 as usize];
            let (pa, pb, pm) = (nodes[na as usize], nodes[nb as usize], nodes[m as usize]);
            let mid = [(pa[0] + pb[0]) / 2.0, (pa[1] + pb[1]) / 2.0];
            // Squared lengths: this runs on every edge of the mesh.
            let off2 = (pm[0] - mid[0]).powi(2) + (pm[1] - mid[1]).powi(2);
            let len2 = (pb[0] - pa[0]).powi(2) + (pb[1] - pa[1]).powi(2);
            if off2 > 1e-18 * len2 {
                if tag.is_some() && !matches!(tag, Some(EdgeTag::Axis)) {
                    // The circle through the three nodes.
                    match circle_through(pa, pm, pb) {
                        Some((center, radius)) => {
                            arcs.push(ArcGeom { center, radius });
                            arc = Some(arcs.len() as u32 - 1);
                        }
                        None => nodes[m as usize] = mid,
                    }
                } else {
                    nodes[m as usize] = mid;
                    straightened += 1;
                }
            }
        }
        if let Some(tag) = tag {
            edges.push(TaggedEdge { nodes: [na, nb], tag, arc });
        }
    }
    let mut warnings = Vec::new();
    if flipped > 0 {
        warnings.push(format!("{flipped} clockwise cells were reoriented counter-clockwise"));
    }
    if straightened > 0 {
        warnings.push(format!(
            "{straightened} interior edges had curved mid-side nodes; they were moved to the edge midpoints \
             (interior edges are straight here; boundary and interface edges keep their curve)"
        ));
    }
    let mesh = Mesh {
        symmetry: spec.symmetry,
        nodes,
        num_vertices,
        triangles,
        regions,
        mid_nodes,
        edges,
        arcs,
        shape_names: spec.region_names.clone(),
        conductor_names: spec.conductor_names.clone(),
        singular_points: Vec::new(),
        exterior: None,
    };
    // The validation's edge list comes from the file's, not from a second sort: vertices
    // keep their order under the renumbering (new ids ascend with the file's), so edge keys
    // do too, and so do the kept triangles' positions.
    let edges: Vec<(u64, u32, u8)> = adj
        .iter()
        .filter(|e| kept_at[e.1 as usize] != u32::MAX)
        .map(|&(k, t, l)| (key(new_id[(k >> 32) as usize], new_id[k as u32 as usize]), kept_at[t as usize], l))
        .collect();
    debug_assert_eq!(edges, mesh.sorted_edges(), "the renumbering keeps the edge order");
    mesh.validate_with(Some(&edges)).map_err(|e| ImportError(format!("the imported mesh fails validation: {e}")))?;
    Ok(Imported { mesh, warnings })
}

/// Centre and radius of the circle through three points (None when they are collinear).
fn circle_through(a: Xy, b: Xy, c: Xy) -> Option<(Xy, f64)> {
    let d = 2.0 * (a[0] * (b[1] - c[1]) + b[0] * (c[1] - a[1]) + c[0] * (a[1] - b[1]));
    if d.abs() < f64::MIN_POSITIVE {
        return None;
    }
    let s = |p: Xy| p[0] * p[0] + p[1] * p[1];
    let x = (s(a) * (b[1] - c[1]) + s(b) * (c[1] - a[1]) + s(c) * (a[1] - b[1])) / d;
    let y = (s(a) * (c[0] - b[0]) + s(b) * (a[0] - c[0]) + s(c) * (b[0] - a[0])) / d;
    let r = (a[0] - x).hypot(a[1] - y);
    r.is_finite().then_some(([x, y], r))
}

/// The singular points of a mesh that has no drawn geometry (an imported one), from the
/// angles its tagged edges make at each node: the same sector analysis as for drawn
/// outlines (`corners::classify`), with the tangent of a curved edge taken from its arc.
/// Nodes where a chain of straight edges of one tag turns by less than `SMOOTH_DEG` are taken
/// as points of a smooth curve drawn by chords (a corner that blunt has λ within 10 % of 1).
/// `permittivity` is per region; `outer_fixed` says the outer boundary is an electrode.
///
/// # Errors
/// [`crate::MeshError::ConductorsTouch`] where two conductors meet at a node.
pub fn find_singular_points(
    mesh: &Mesh,
    permittivity: &[f64],
    outer_fixed: bool,
) -> Result<Vec<crate::SingularPoint>, crate::MeshError> {
    use crate::arrangement::Side;
    const SMOOTH_DEG: f64 = 15.0;
    // Region on the left of each tagged edge, in both directions (counter-clockwise
    // triangles have their region on the left of a→b): only the tagged edges are looked up,
    // so one pass over the triangles fills a small table.
    let directed = |a: u32, b: u32| ((a as u64) << 32) | b as u64;
    let mut left: std::collections::HashMap<u64, u32> = std::collections::HashMap::new();
    let tagged: std::collections::HashSet<u64> =
        mesh.edges.iter().flat_map(|e| [directed(e.nodes[0], e.nodes[1]), directed(e.nodes[1], e.nodes[0])]).collect();
    for (t, tri) in mesh.triangles.iter().enumerate() {
        for k in 0..3 {
            let key = directed(tri[k], tri[(k + 1) % 3]);
            if tagged.contains(&key) {
                left.insert(key, mesh.regions[t]);
            }
        }
    }
    let mut inc: Vec<Vec<(f64, Side, EdgeTag, bool)>> = vec![Vec::new(); mesh.num_vertices as usize];
    for e in &mesh.edges {
        let [a, b] = e.nodes;
        let l = left.get(&directed(a, b)).copied();
        let r = left.get(&directed(b, a)).copied();
        let (ls, rs) = match e.tag {
            EdgeTag::Interface(..) => (l.map(Side::Region), r.map(Side::Region)),
            EdgeTag::Conductor(c) => (l.map(Side::Region).or(Some(Side::Conductor(c))), Some(Side::Conductor(c))),
            EdgeTag::Outer | EdgeTag::Axis => {
                (l.map(Side::Region).or(Some(Side::Outside)), r.map(Side::Region).or(Some(Side::Outside)))
            }
        };
        let (Some(ls), Some(rs)) = (ls, rs) else { continue };
        let (pa, pb) = (mesh.nodes[a as usize], mesh.nodes[b as usize]);
        // Direction leaving `from` towards `to`: the chord, or the arc's tangent.
        let dir = |from: Xy, to: Xy| -> f64 {
            let chord = [to[0] - from[0], to[1] - from[1]];
            let d = match e.arc.and_then(|k| mesh.arcs.get(k as usize)) {
                Some(g) => {
                    let rad = [from[0] - g.center[0], from[1] - g.center[1]];
                    let t = [-rad[1], rad[0]];
                    if t[0] * chord[0] + t[1] * chord[1] >= 0.0 {
                        t
                    } else {
                        [-t[0], -t[1]]
                    }
                }
                None => chord,
            };
            d[1].atan2(d[0])
        };
        let curved = e.arc.is_some();
        inc[a as usize].push((dir(pa, pb), ls, e.tag, curved));
        inc[b as usize].push((dir(pb, pa), rs, e.tag, curved));
    }
    let eps = |k: u32| permittivity.get(k as usize).copied().unwrap_or(1.0);
    let cx = crate::corners::CornerCtx {
        symmetry: mesh.symmetry,
        scale: mesh.scale(),
        outer_fixed,
        lambda_max: f64::from(mesh.order().max(1)),
        eps: &eps,
        conductor_names: &mesh.conductor_names,
    };
    let mut out = Vec::new();
    for (v, d) in inc.iter().enumerate() {
        if d.len() == 2 && d[0].2 == d[1].2 && !d[0].3 && !d[1].3 {
            let turn = (d[0].0 - d[1].0).rem_euclid(std::f64::consts::TAU);
            if (turn - std::f64::consts::PI).abs() < SMOOTH_DEG.to_radians() {
                continue;
            }
        }
        let mut dirs: Vec<(f64, Side, Option<crate::Wall>)> = d.iter().map(|x| (x.0, x.1, None)).collect();
        if let Some(p) = crate::corners::classify(mesh.nodes[v], &mut dirs, &cx)? {
            out.push(p);
        }
    }
    crate::corners::sort_points(&mut out, |p| p);
    Ok(out)
}
