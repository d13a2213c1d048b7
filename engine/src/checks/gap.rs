//! The shortest distance between two electrodes, and the field utilisation factor.

use mesher::{BucketGrid, EdgeTag, Mesh, Xy};

/// An electrode of the mesh.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Electrode {
    /// A conductor (index into `Mesh::conductor_names`).
    Conductor(u32),
    /// The outer boundary (when it is held at a potential).
    Outer,
}

/// The shortest distance between two electrodes and where it is.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct GapDistance {
    /// Distance, metres.
    pub distance: f64,
    /// The end on the first electrode, metres.
    pub from: Xy,
    /// The end on the second electrode, metres.
    pub to: Xy,
}

/// A piece of an electrode's surface: a straight segment, or the part of a circle between
/// its ends (the geometry's exact arc, when the mesh edge lies on one).
#[derive(Clone, Copy, Debug)]
struct Piece {
    ends: [Xy; 2],
    arc: Option<(Xy, f64)>,
}

/// The surface of `e`: every tagged edge as a piece, on its true circle where the geometry
/// has one. Points of the surface: the edges' ends (and the mid-edge nodes for P2, which lie
/// on the true arc).
fn surface(mesh: &Mesh, e: Electrode) -> (Vec<Piece>, Vec<Xy>) {
    let on = |tag: EdgeTag| match (tag, e) {
        (EdgeTag::Conductor(c), Electrode::Conductor(k)) => c == k,
        (EdgeTag::Outer, Electrode::Outer) => true,
        _ => false,
    };
    // Mid-edge nodes of the surface's edges only (one scan of the triangles, a lookup each).
    let mut mid: std::collections::HashMap<(u32, u32), u32> = mesh
        .edges
        .iter()
        .filter(|edge| on(edge.tag))
        .map(|edge| ((edge.nodes[0].min(edge.nodes[1]), edge.nodes[0].max(edge.nodes[1])), u32::MAX))
        .collect();
    if !mesh.mid_nodes.is_empty() {
        for (t, tri) in mesh.triangles.iter().enumerate() {
            for k in 0..3 {
                let (a, b) = (tri[k], tri[(k + 1) % 3]);
                if let Some(m) = mid.get_mut(&(a.min(b), a.max(b))) {
                    *m = mesh.mid_nodes[t][k];
                }
            }
        }
    }
    let (mut pieces, mut points) = (Vec::new(), Vec::new());
    for edge in mesh.edges.iter().filter(|edge| on(edge.tag)) {
        let [a, b] = edge.nodes;
        let ends = [mesh.nodes[a as usize], mesh.nodes[b as usize]];
        let arc = edge.arc.map(|k| (mesh.arcs[k as usize].center, mesh.arcs[k as usize].radius));
        pieces.push(Piece { ends, arc });
        points.extend(ends);
        if let Some(&m) = mid.get(&(a.min(b), a.max(b))).filter(|&&m| m != u32::MAX) {
            points.push(mesh.nodes[m as usize]);
        }
    }
    (pieces, points)
}

/// The nearest point of `piece` to `p`.
fn nearest_on(p: Xy, piece: &Piece) -> Xy {
    let [a, b] = piece.ends;
    if let Some((c, r)) = piece.arc {
        // The projection onto the circle, if it falls between the ends (pieces are short
        // arcs, well under a half turn); otherwise the nearer end.
        let (dx, dy) = (p[0] - c[0], p[1] - c[1]);
        let len = dx.hypot(dy);
        if len > 0.0 {
            let q = [c[0] + r * dx / len, c[1] + r * dy / len];
            let cross = |u: Xy, v: Xy| (u[0] - c[0]) * (v[1] - c[1]) - (u[1] - c[1]) * (v[0] - c[0]);
            let turn = cross(a, b);
            if cross(a, q) * turn >= 0.0 && cross(q, b) * turn >= 0.0 {
                return q;
            }
        }
        let da = (p[0] - a[0]).hypot(p[1] - a[1]);
        let db = (p[0] - b[0]).hypot(p[1] - b[1]);
        return if da <= db { a } else { b };
    }
    let d = [b[0] - a[0], b[1] - a[1]];
    let l2 = d[0] * d[0] + d[1] * d[1];
    let t = if l2 > 0.0 { (((p[0] - a[0]) * d[0] + (p[1] - a[1]) * d[1]) / l2).clamp(0.0, 1.0) } else { 0.0 };
    [a[0] + t * d[0], a[1] + t * d[1]]
}

/// The shortest straight distance between the surfaces of electrodes `a` and `b`: the least
/// distance from a surface point of either (the mesh's nodes on it) to a piece of the other
/// (its mesh edges, on the geometry's true arcs where the surface is curved). None if either has no
/// surface in the mesh. For the utilisation factor d is "the shortest electrode distance"
/// (Schwaiger's definition); the straight line is assumed to cross only dielectric, as it
/// does in a gap.
pub fn electrode_distance(mesh: &Mesh, a: Electrode, b: Electrode) -> Option<GapDistance> {
    let ((sa, pa), (sb, pb)) = (surface(mesh, a), surface(mesh, b));
    if sa.is_empty() || sb.is_empty() {
        return None;
    }
    let mut best = GapDistance { distance: f64::INFINITY, from: [0.0; 2], to: [0.0; 2] };
    for (from, to, flip) in [(&pa, &sb, false), (&pb, &sa, true)] {
        // A short arc bulges beyond its chord by at most a quarter of the chord: pad the box.
        let boxes: Vec<[f64; 4]> = to
            .iter()
            .map(|s| {
                let [u, v] = s.ends;
                let pad = if s.arc.is_some() { 0.25 * (u[0] - v[0]).hypot(u[1] - v[1]) } else { 0.0 };
                [u[0].min(v[0]) - pad, u[1].min(v[1]) - pad, u[0].max(v[0]) + pad, u[1].max(v[1]) + pad]
            })
            .collect();
        let bb = boxes.iter().fold([f64::INFINITY, f64::INFINITY, f64::NEG_INFINITY, f64::NEG_INFINITY], |m, b| {
            [m[0].min(b[0]), m[1].min(b[1]), m[2].max(b[2]), m[3].max(b[3])]
        });
        let grid = BucketGrid::new(&boxes, bb);
        let consider = |p: Xy, k: usize, best: &mut GapDistance| {
            let q = nearest_on(p, &to[k]);
            let d = (p[0] - q[0]).hypot(p[1] - q[1]);
            if d < best.distance {
                *best = if flip {
                    GapDistance { distance: d, from: q, to: p }
                } else {
                    GapDistance { distance: d, from: p, to: q }
                };
            }
        };
        // An upper bound from the first point against every piece, then bucket queries
        // within the best distance so far.
        if best.distance.is_infinite() {
            for k in 0..to.len() {
                consider(from[0], k, &mut best);
            }
        }
        for &p in from.iter() {
            let r = best.distance;
            grid.for_each_near(p, r, |k| consider(p, k as usize, &mut best));
        }
    }
    Some(best)
}

/// The field utilisation factor η = U/(d·E_max): the mean field U/d of a gap of shortest
/// electrode distance d at voltage U, over the largest field E_max (0 < η ≤ 1; η = 1 in a
/// uniform field). Schwaiger 1922, as given in Kuffel, Zaengl & Kuffel 2000 (both recalled
/// from memory); closed forms for coaxial cylinders, r·ln(R/r)/(R − r), and concentric
/// spheres, r/R (`../shared/TRADE.md` §1.4).
pub fn field_utilisation(voltage: f64, distance: f64, e_max: f64) -> f64 {
    voltage.abs() / (distance * e_max)
}
