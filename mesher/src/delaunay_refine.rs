//! Delaunay refinement of the dielectric triangles only.
//!
//! # Algorithm
//! Ruppert's algorithm on the constrained Delaunay triangulation, restricted to the
//! triangles that will be meshed: those inside dielectric regions. Triangles inside
//! conductors and outside the domain are never refined and never encroach a segment, so a
//! thin conductor (a grading foil 0.5 mm thick in 6 mm elements) does not fill with
//! triangles of its own thickness and does not split its faces into pieces that small.
//!
//! 1. A segment (constraint edge) is *encroached* when the vertex opposite it in an
//!    adjacent dielectric triangle lies strictly inside its diametral circle. It is split:
//!    at its midpoint if it is a whole input segment, otherwise at a power of two from the
//!    input segment's original end (concentric shells), so that the pieces next to a small
//!    input angle end at equal distances from its apex and stop encroaching each other.
//! 2. A dielectric triangle is *bad* when its area exceeds the area bound, or when its
//!    circumradius-to-shortest-edge ratio exceeds 1/(2·sin θ_min) and its area is above the
//!    least area. Its circumcentre c is found by a straight walk from the triangle; if the
//!    walk meets a segment, or c lies inside the diametral circle of a segment on the
//!    boundary of its Delaunay cavity, that segment is split instead and the triangle is
//!    visited again; otherwise c is inserted.
//! 3. A triangle whose shortest edge joins two split points of segments that share an
//!    input vertex sits at a small input angle and cannot be improved: it is left.
//!
//! Segments are split exactly on them where the point is exactly on the line (horizontal
//! and vertical pieces) and otherwise topologically: the point (off the line by round-off)
//! is inserted in a triangle next to the segment and the segment is replaced by its two
//! halves, so that no sliver is left between them.
//!
//! Every step pops a queue entry or adds a vertex, and the vertex budget bounds the
//! additions, so the loop terminates.
//!
//! # References
//! - J. Ruppert, "A Delaunay refinement algorithm for quality 2-dimensional mesh
//!   generation", J. Algorithms 18 (1995) 548–585, doi:10.1006/jagm.1995.1021.
//! - J. R. Shewchuk, "Delaunay refinement algorithms for triangular mesh generation",
//!   Comput. Geom. 22 (2002) 21–74, doi:10.1016/S0925-7721(01)00047-5.
//! - G. L. Miller, S. E. Pav, N. J. Walkington, "When and why Delaunay refinement
//!   algorithms work", Int. J. Comput. Geom. Appl. 15 (2005) 25–54.
//!
//! # Complexity
//! Each insertion costs a point location from a nearby vertex and a local cavity; the
//! quadtree seeds leave refinement only the seams between leaves and the layer along the
//! boundary, so the whole run is close to linear in the number of vertices added.

use crate::geometry::Xy;
use spade::handles::{FixedFaceHandle, FixedUndirectedEdgeHandle, FixedVertexHandle, InnerTag};
use spade::{ConstrainedDelaunayTriangulation, Point2, PositionInTriangulation, Triangulation};
use std::collections::{HashMap, VecDeque};

/// The constrained Delaunay triangulation the mesher builds and refines.
pub(crate) type Cdt = ConstrainedDelaunayTriangulation<Point2<f64>>;

/// Positions of all vertices of a triangulation, by vertex index.
pub(crate) fn vertex_positions(cdt: &Cdt) -> Vec<Xy> {
    cdt.vertices()
        .map(|v| {
            let p = v.position();
            [p.x, p.y]
        })
        .collect()
}

/// The limits of a refinement run.
#[derive(Clone, Copy, Debug)]
pub(crate) struct Limits {
    /// Smallest angle wanted, degrees.
    pub min_angle_deg: f64,
    /// Triangles larger than this are split whatever their shape, m².
    pub max_area: f64,
    /// Triangles smaller than this are left whatever their shape, m².
    pub min_area: f64,
    /// The run stops when the triangulation holds this many vertices.
    pub max_vertices: usize,
}

/// Exact orientation: positive when `c` is left of the line from `a` to `b`.
fn orient(a: Point2<f64>, b: Point2<f64>, c: Point2<f64>) -> f64 {
    robust::orient2d(
        robust::Coord { x: a.x, y: a.y },
        robust::Coord { x: b.x, y: b.y },
        robust::Coord { x: c.x, y: c.y },
    )
}

/// Exact in-circle test: positive when `d` is inside the circle through the
/// counter-clockwise `a`, `b`, `c`.
fn in_circle(a: Point2<f64>, b: Point2<f64>, c: Point2<f64>, d: Point2<f64>) -> bool {
    robust::incircle(
        robust::Coord { x: a.x, y: a.y },
        robust::Coord { x: b.x, y: b.y },
        robust::Coord { x: c.x, y: c.y },
        robust::Coord { x: d.x, y: d.y },
    ) > 0.0
}

/// True when `p` lies strictly inside the diametral circle of the segment `a`–`b`.
fn in_diametral_circle(a: Point2<f64>, b: Point2<f64>, p: Point2<f64>) -> bool {
    // (p − a)·(p − b) < 0 exactly when the angle apb is obtuse, i.e. p is inside the circle.
    (p.x - a.x) * (p.x - b.x) + (p.y - a.y) * (p.y - b.y) < 0.0
}

/// Where the straight walk towards a point ended.
enum Walk {
    /// The point is inside (or on the boundary of) this triangle.
    Inside(FixedFaceHandle<InnerTag>),
    /// The walk met this segment before reaching the point.
    Blocked(FixedUndirectedEdgeHandle),
    /// The walk left the triangulation or did not finish (degenerate input).
    Lost,
}

/// Steps a walk may take before it is abandoned.
const MAX_WALK_STEPS: usize = 100_000;

/// The state of one refinement run.
struct Refiner<'a> {
    cdt: &'a mut Cdt,
    /// Per face index: refine this face (a dielectric triangle).
    keep: Vec<bool>,
    /// For vertices inserted on a segment: the ends of the input segment it lies on.
    origin: HashMap<FixedVertexHandle, [FixedVertexHandle; 2]>,
    limits: Limits,
    ratio_limit_sq: f64,
    bad: VecDeque<FixedFaceHandle<InnerTag>>,
    segments: VecDeque<FixedUndirectedEdgeHandle>,
}

/// Refines the dielectric triangles (`keep[face index]`) of `cdt`. Returns true when the
/// run finished within the vertex budget.
///
/// # Panics
/// If `keep` does not have one entry per face (outer face included).
#[track_caller]
pub(crate) fn refine(cdt: &mut Cdt, keep: Vec<bool>, limits: Limits) -> bool {
    assert_eq!(keep.len(), cdt.num_all_faces(), "one flag per face");
    let sin = limits.min_angle_deg.to_radians().sin();
    let ratio_limit = if sin > 0.0 { 1.0 / (2.0 * sin) } else { f64::INFINITY };
    let segments: VecDeque<_> = cdt.undirected_edges().filter(|e| e.is_constraint_edge()).map(|e| e.fix()).collect();
    let bad: VecDeque<_> = cdt.fixed_inner_faces().filter(|f| keep[f.index()]).collect();
    let mut r =
        Refiner { cdt, keep, origin: HashMap::new(), limits, ratio_limit_sq: ratio_limit * ratio_limit, bad, segments };
    r.run()
}

impl Refiner<'_> {
    fn run(&mut self) -> bool {
        loop {
            if self.cdt.num_vertices() >= self.limits.max_vertices {
                return false;
            }
            if let Some(seg) = self.segments.pop_front() {
                if self.cdt.is_constraint_edge(seg) && self.is_encroached(seg) {
                    self.split(seg);
                }
                continue;
            }
            let Some(f) = self.bad.pop_front() else { return true };
            self.visit(f);
        }
    }

    /// True for a dielectric face (false for the outer face).
    fn keep_of(&self, face: Option<FixedFaceHandle<InnerTag>>) -> bool {
        face.is_some_and(|f| self.keep[f.index()])
    }

    /// True when the vertex opposite the segment in an adjacent dielectric triangle lies
    /// inside its diametral circle.
    fn is_encroached(&self, seg: FixedUndirectedEdgeHandle) -> bool {
        let e = self.cdt.directed_edge(seg.as_directed());
        let [a, b] = e.positions();
        [e, e.rev()].into_iter().any(|d| {
            self.keep_of(d.face().as_inner().map(|f| f.fix()))
                && d.opposite_position().is_some_and(|o| in_diametral_circle(a, b, o))
        })
    }

    /// Refines face `f` if it is a bad dielectric triangle.
    fn visit(&mut self, f: FixedFaceHandle<InnerTag>) {
        if !self.keep[f.index()] {
            return;
        }
        let face = self.cdt.face(f);
        let area = face.area();
        let must = area > self.limits.max_area;
        if !must {
            if area < self.limits.min_area {
                return;
            }
            let shortest = face
                .adjacent_edges()
                .into_iter()
                .min_by(|x, y| x.length_2().total_cmp(&y.length_2()))
                .expect("a triangle has three edges");
            let len2 = shortest.length_2();
            let (_, radius2) = face.circumcircle();
            if radius2 <= self.ratio_limit_sq * len2 {
                return;
            }
            // A triangle at a small input angle: its shortest edge joins split points of
            // two segments from one input vertex (Miller, Pav & Walkington 2005).
            if !shortest.is_constraint_edge() {
                let (o1, o2) = (self.origin.get(&shortest.from().fix()), self.origin.get(&shortest.to().fix()));
                if let (Some(o1), Some(o2)) = (o1, o2) {
                    if o1.iter().any(|v| o2.contains(v)) {
                        return;
                    }
                }
            }
        }
        let c = face.circumcenter();
        if !(c.x.is_finite() && c.y.is_finite()) {
            return;
        }
        match self.walk(f, c) {
            Walk::Lost => {}
            Walk::Blocked(seg) => {
                if self.split(seg) {
                    self.bad.push_back(f);
                }
            }
            Walk::Inside(g) => {
                let encroached = self.encroached_by(g, c);
                if encroached.is_empty() {
                    self.insert_interior(g, c);
                } else {
                    let mut any = false;
                    for seg in encroached {
                        any |= self.split(seg);
                    }
                    if any {
                        self.bad.push_back(f);
                    }
                }
            }
        }
    }

    /// A straight walk from the centroid of face `from` towards `target`, stopping at the
    /// first segment it meets.
    fn walk(&self, from: FixedFaceHandle<InnerTag>, target: Point2<f64>) -> Walk {
        let start = {
            let [a, b, c] = self.cdt.face(from).positions();
            Point2::new((a.x + b.x + c.x) / 3.0, (a.y + b.y + c.y) / 3.0)
        };
        let mut f = from;
        let mut came_over: Option<FixedUndirectedEdgeHandle> = None;
        for _ in 0..MAX_WALK_STEPS {
            let face = self.cdt.face(f);
            let edges = face.adjacent_edges();
            // Leave through an edge that has the target strictly on its far side and that the
            // line from the start to the target crosses; failing that (the line runs through
            // a vertex), through any edge with the target on its far side.
            let mut exit = None;
            let mut fallback = None;
            for e in edges {
                if Some(e.as_undirected().fix()) == came_over {
                    continue;
                }
                let [a, b] = e.positions();
                if orient(a, b, target) < 0.0 {
                    let (sa, sb) = (orient(start, target, a), orient(start, target, b));
                    if sa * sb <= 0.0 {
                        exit = Some(e);
                        break;
                    }
                    fallback.get_or_insert(e);
                }
            }
            let Some(e) = exit.or(fallback) else { return Walk::Inside(f) };
            if e.is_constraint_edge() {
                return Walk::Blocked(e.as_undirected().fix());
            }
            match e.rev().face().as_inner() {
                Some(n) => {
                    came_over = Some(e.as_undirected().fix());
                    f = n.fix();
                }
                None => return Walk::Lost,
            }
        }
        Walk::Lost
    }

    /// The segments on the boundary of the Delaunay cavity of `c` (located in face `g`)
    /// whose diametral circle contains `c`.
    fn encroached_by(&self, g: FixedFaceHandle<InnerTag>, c: Point2<f64>) -> Vec<FixedUndirectedEdgeHandle> {
        let mut out = Vec::new();
        let mut stack = vec![g];
        let mut seen = vec![g];
        while let Some(f) = stack.pop() {
            for e in self.cdt.face(f).adjacent_edges() {
                if e.is_constraint_edge() {
                    let [a, b] = e.positions();
                    if in_diametral_circle(a, b, c) {
                        out.push(e.as_undirected().fix());
                    }
                    continue;
                }
                if let Some(n) = e.rev().face().as_inner() {
                    let nf = n.fix();
                    if seen.contains(&nf) {
                        continue;
                    }
                    let [p, q, r] = n.positions();
                    if in_circle(p, q, r, c) {
                        seen.push(nf);
                        stack.push(nf);
                    }
                }
            }
        }
        out
    }

    /// Inserts `c` (inside dielectric face `g`, encroaching nothing) and queues the
    /// triangles and segments around it.
    fn insert_interior(&mut self, g: FixedFaceHandle<InnerTag>, c: Point2<f64>) {
        let hint = self.cdt.face(g).vertices()[0].fix();
        let before = self.cdt.num_vertices();
        let Ok(v) = self.cdt.insert_with_hint(c, hint) else { return };
        if self.cdt.num_vertices() == before {
            return;
        }
        self.keep.resize(self.cdt.num_all_faces(), false);
        let star: Vec<FixedFaceHandle<InnerTag>> =
            self.cdt.vertex(v).out_edges().filter_map(|e| e.face().as_inner().map(|f| f.fix())).collect();
        for &f in &star {
            self.keep[f.index()] = true;
        }
        self.queue_around(v, &star);
    }

    /// Queues the faces around a new vertex and the segments that may now be encroached.
    fn queue_around(&mut self, v: FixedVertexHandle, star: &[FixedFaceHandle<InnerTag>]) {
        self.bad.extend(star.iter().copied().filter(|f| self.keep[f.index()]));
        for e in self.cdt.vertex(v).out_edges() {
            if e.is_constraint_edge() {
                self.segments.push_back(e.as_undirected().fix());
            }
            if !e.is_outer_edge() {
                let opposite = e.next();
                if opposite.is_constraint_edge() {
                    self.segments.push_back(opposite.as_undirected().fix());
                }
            }
        }
    }

    /// Where segment `a`–`b` is split: its midpoint if it is a whole input segment,
    /// otherwise a power of two from the end that is an input vertex.
    fn split_point(&self, a: FixedVertexHandle, b: FixedVertexHandle) -> Point2<f64> {
        let (pa, pb) = (self.cdt.vertex(a).position(), self.cdt.vertex(b).position());
        let (oa, ob) = (self.origin.get(&a), self.origin.get(&b));
        if oa.is_none() && ob.is_none() {
            return Point2::new(0.5 * (pa.x + pb.x), 0.5 * (pa.y + pb.y));
        }
        let len = (pb.x - pa.x).hypot(pb.y - pa.y);
        let shell = (0.5 * len).log2().round().exp2();
        let t = shell / len;
        let (from, to) = if oa.is_none() { (pa, pb) } else { (pb, pa) };
        Point2::new(from.x + t * (to.x - from.x), from.y + t * (to.y - from.y))
    }

    /// Splits segment `seg`; false if it cannot be split cleanly (the point would not lie
    /// inside the two triangles beside it).
    fn split(&mut self, seg: FixedUndirectedEdgeHandle) -> bool {
        if !self.cdt.is_constraint_edge(seg) {
            return false;
        }
        let d = self.cdt.directed_edge(seg.as_directed());
        let (a, b) = (d.from().fix(), d.to().fix());
        let (left_face, right_face) =
            (d.face().as_inner().map(|f| f.fix()), d.rev().face().as_inner().map(|f| f.fix()));
        let (keep_left, keep_right) = (self.keep_of(left_face), self.keep_of(right_face));
        if !keep_left && !keep_right {
            return false;
        }
        let (pa, pb) = (d.from().position(), d.to().position());
        let p = self.split_point(a, b);
        // The point must keep both triangles beside the segment counter-clockwise.
        if let Some(o) = d.opposite_position() {
            if orient(pa, o, p) >= 0.0 || orient(o, pb, p) >= 0.0 {
                return false;
            }
        }
        if let Some(o) = d.rev().opposite_position() {
            if orient(o, pa, p) >= 0.0 || orient(pb, o, p) >= 0.0 {
                return false;
            }
        }
        let on_segment = match self.cdt.locate_with_hint(p, a) {
            PositionInTriangulation::OnEdge(e) => {
                if self.cdt.directed_edge(e).as_undirected().fix() != seg {
                    return false;
                }
                true
            }
            PositionInTriangulation::OnFace(f) if Some(f) == left_face || Some(f) == right_face => false,
            _ => return false,
        };
        let before = self.cdt.num_vertices();
        let Ok(v) = self.cdt.insert_with_hint(p, a) else { return false };
        if self.cdt.num_vertices() == before {
            return false;
        }
        if !on_segment {
            // The point went into a triangle beside the segment, joined to both its ends:
            // its two halves become the segments, and the segment an ordinary edge (which
            // flips away from the point).
            // The halves are marked first: the flips that restore the Delaunay property
            // after the segment is unmarked must not flip them, or faces away from the
            // point would straddle the segment.
            self.cdt.try_add_constraint(a, v);
            self.cdt.try_add_constraint(v, b);
            debug_assert!(self.cdt.exists_constraint(a, v) && self.cdt.exists_constraint(v, b));
            if let Some(e) = self.cdt.get_edge_from_neighbors(a, b) {
                let e = e.as_undirected().fix();
                self.cdt.remove_constraint_edge(e);
            }
        }
        self.keep.resize(self.cdt.num_all_faces(), false);
        let star: Vec<FixedFaceHandle<InnerTag>> =
            self.cdt.vertex(v).out_edges().filter_map(|e| e.face().as_inner().map(|f| f.fix())).collect();
        for &f in &star {
            let [x, y, z] = self.cdt.face(f).positions();
            let centroid = Point2::new((x.x + y.x + z.x) / 3.0, (x.y + y.y + z.y) / 3.0);
            self.keep[f.index()] = if orient(pa, pb, centroid) > 0.0 { keep_left } else { keep_right };
        }
        let input = self.origin.get(&a).or(self.origin.get(&b)).copied().unwrap_or([a, b]);
        self.origin.insert(v, input);
        self.queue_around(v, &star);
        true
    }
}
