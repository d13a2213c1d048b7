//! From geometry to a graded, quality triangular mesh.
//!
//! # Algorithm
//! 1. Build the arrangement of all outlines (see `arrangement`) and find the singular
//!    points on it (see `corners`).
//! 2. Build the [`SizeField`]: global and per-shape sizes, point sizes, small-radius arcs
//!    (chords no longer than 8·c·R for chord tolerance c, so the sagitta stays below c times
//!    the chord), and the grading h₀·(r/R)^(1−μ) towards singular points.
//! 3. Split every arc and every horizontal or vertical piece of the arrangement so that the
//!    spacing follows the size field: points are placed at equal increments of ∫ ds/h(s)
//!    along the piece (exactly on it: arcs' points lie on the circle). Inclined straight
//!    pieces go in whole; refinement splits them.
//! 4. Seed the interior from a quadtree whose leaves are at most four times the local size:
//!    each leaf gets a small shifted-row lattice of points (spacing at most the local
//!    size); points inside the dielectric and clear of the boundary become vertices.
//! 5. Bulk-load the boundary and a frame of four free vertices around it into a
//!    constrained Delaunay triangulation (spade), insert the seeds in quadtree order, and
//!    run Delaunay refinement (Ruppert, with Shewchuk's concentric shells) for the minimum
//!    angle on the dielectric triangles only (see `delaunay_refine`), with the node budget
//!    as a stop.
//! 6. Flood-fill the triangles across non-constraint edges into components, label each by
//!    the paint order at one interior point, drop conductor interiors and the outside, tag
//!    every boundary and interface edge, and move the nodes that refinement inserted on arc
//!    chords onto their arcs (reverted if that would invert a triangle).
//! 7. Smooth (optionally), attach the open boundary's exterior, add the P2 nodes, validate,
//!    and record at every singular point the grading law it was given and the size of the
//!    finished mesh's elements there (see `grading`).
//!
//! # References
//! - J. Ruppert, "A Delaunay refinement algorithm for quality 2-dimensional mesh
//!   generation", J. Algorithms 18 (1995) 548–585, doi:10.1006/jagm.1995.1021.
//! - L. P. Chew, "Guaranteed-quality mesh generation for curved surfaces", Proc. 9th ACM
//!   Symposium on Computational Geometry (1993) 274–280.
//! - J. R. Shewchuk, "Delaunay refinement algorithms for triangular mesh generation",
//!   Comput. Geom. 22 (2002) 21–74 (small input angles: concentric-shell splitting, splits
//!   rounded to powers of two).
//!
//! # Complexity
//! O(N log N) for N triangles: the quadtree and the spatially ordered insertion of its seeds dominate; refinement only
//! repairs the transitions between quadtree levels and near the boundary.

use crate::arrangement::{side_at, Arrangement, Side};
use crate::corners::{self, SingularPoint};
use crate::delaunay_refine::{vertex_positions, Cdt, Limits};
use crate::error::MeshError;
use crate::geometry::{norm, sub, Curve, Geometry, OuterBoundary, Symmetry, Xy};
use crate::grading::{audit, grading_radius, AuditInput, GradingLaw};
use crate::grid::{point_segment_distance, segment_grid, BucketGrid};
use crate::mesh::{ArcGeom, EdgeTag, Mesh, TaggedEdge};
use crate::refine::{MeshOutcome, RefineParams};
use crate::size_field::{BackgroundSize, SizeField, SizeSource};
use spade::{Point2, Triangulation};

/// Wall-clock laps of the meshing stages.
struct Stopwatch {
    last: std::time::Instant,
    laps: Vec<(&'static str, f64)>,
}

impl Stopwatch {
    fn new() -> Self {
        Stopwatch { last: std::time::Instant::now(), laps: Vec::new() }
    }
    fn lap(&mut self, name: &'static str) {
        let now = std::time::Instant::now();
        self.laps.push((name, (now - self.last).as_secs_f64()));
        self.last = now;
    }
}

/// The boundary as straight segments, each remembering the arrangement piece it lies on.
pub(crate) struct Pslg {
    pub points: Vec<Xy>,
    pub segments: Vec<[u32; 2]>,
    pub piece_of: Vec<u32>,
}

/// Meshes a geometry.
///
/// # Errors
/// Any [`MeshError`] from geometry validation, parameter validation, the arrangement
/// (conductors touching) or, for inputs below the resolution limit, the triangulation.
pub fn generate(geo: &Geometry, params: &RefineParams) -> Result<MeshOutcome, MeshError> {
    generate_with(geo, params, None)
}

/// [`generate`] with element sizes requested on an earlier mesh (from an error estimate),
/// combined with the geometry's own size field (the smaller size wins).
///
/// # Errors
/// As [`generate`].
pub fn generate_with(
    geo: &Geometry,
    params: &RefineParams,
    background: Option<BackgroundSize>,
) -> Result<MeshOutcome, MeshError> {
    let mut clock = Stopwatch::new();
    geo.validate()?;
    params.validate()?;
    if let Some(min) = params.min_size_m {
        if min > params.max_size_for(geo) {
            return Err(MeshError::BadParameter {
                name: "min_size_m",
                value: min,
                allowed: "at most max_size (by default 1/25 of the domain's diagonal)",
            });
        }
    }
    let arr = Arrangement::build(geo)?;
    let singular = corners::find(geo, &arr, params.order)?;
    let (mut field, laws) = size_field(geo, &arr, &singular, params);
    if let Some(bg) = background {
        field.add_background(bg);
    }
    clock.lap("geometry");
    // The adaptive loop sizes its requests itself (and stops at its own budget); a mesh
    // from the model's settings is predicted first, so that sizes the machine cannot hold
    // are refused before the boundary is split.
    if !field.has_background() {
        let p = crate::budget::predict(geo, &field, 2.0 * params.max_nodes as f64);
        clock.lap("prediction");
        if p.vertices > params.max_nodes as f64 {
            return Err(over_budget(geo, &field, params, p.vertices, p.at_least, p.main_source));
        }
    }
    let pslg = discretise(&arr, &field);
    let grid = segment_grid(&pslg.points, &pslg.segments, geo.bbox());
    clock.lap("boundary");
    let seeds = seed(geo, &field, &pslg, &grid);
    clock.lap("seeding");
    // A frame of four free vertices just outside the domain (2 % of its diagonal; see
    // `triangulate`).
    let b = geo.bbox();
    let m = 0.02 * geo.scale();
    let frame = [[b[0] - m, b[1] - m], [b[2] + m, b[1] - m], [b[2] + m, b[3] + m], [b[0] - m, b[3] + m]];
    let (cdt, complete) = triangulate(geo, &pslg, &seeds, &frame, &field, params, &mut clock)?;
    let mut mesh = extract(geo, &arr, &pslg, &grid, &cdt, singular.into_iter().map(|(_, s)| s).collect())?;
    crate::smooth::smooth(&mut mesh, params.smoothing_passes);
    if geo.outer == OuterBoundary::Open {
        let (c, r) = crate::geometry::domain_circle(geo)?;
        crate::exterior::attach(&mut mesh, c, r, params.gradation, params.min_angle_deg)?;
    }
    // The edge list serves the P2 nodes and the validation; for linear meshes it is only
    // needed by the validation, and is timed there.
    let edges = (params.order == 2).then(|| mesh.sorted_edges());
    if let Some(e) = &edges {
        mesh.make_order2_with(e);
    }
    clock.lap("extract");
    let edges = edges.unwrap_or_else(|| mesh.sorted_edges());
    mesh.validate_with(Some(&edges))?;
    audit(&mut mesh, &AuditInput { laws: &laws, applied: params.grade_corners, floor: field.floor(), complete });
    clock.lap("validate");
    let reason = if complete {
        None
    } else {
        Some(format!("the node budget of {} was reached before every triangle met the size and angle limits; raise max_nodes or coarsen the sizes", params.max_nodes))
    };
    Ok(MeshOutcome { mesh, complete, reason, size_field: field, timings: clock.laps })
}

/// The refusal of a mesh over the node budget, naming what asks for most of it.
fn over_budget(
    geo: &Geometry,
    field: &SizeField,
    params: &RefineParams,
    vertices: f64,
    at_least: bool,
    (source, share): (SizeSource, f64),
) -> MeshError {
    let (name, size_m) = match source {
        SizeSource::MaxSize => (String::new(), field.max()),
        SizeSource::MinSize => (String::new(), field.floor()),
        SizeSource::Shape(i) => (geo.shapes[i].name.clone(), geo.shapes[i].max_size_m.unwrap_or(field.max())),
        SizeSource::Point(i) => (format!("#{} ([[mesh.point]] entry {})", i + 1, i + 1), geo.size_points[i].size_m),
        SizeSource::Corner(k) => (format!("S{}", k + 1), field.floor()),
        SizeSource::Arc | SizeSource::Background => (String::new(), params.chord_tolerance),
    };
    MeshError::OverBudget { vertices, at_least, max_nodes: params.max_nodes, cause: (source, share, name), size_m }
}

/// The size field, and the grading law of each singular point (added to the field only
/// with grading on).
fn size_field(
    geo: &Geometry,
    arr: &Arrangement,
    singular: &[(usize, SingularPoint)],
    params: &RefineParams,
) -> (SizeField, Vec<GradingLaw>) {
    let scale = geo.scale();
    let h_max = params.max_size_for(geo);
    // `generate_with` refuses a min_size above max_size; the adaptive loop's own floor
    // (1e-9 of the diagonal) never is.
    let floor = params.min_size_m.unwrap_or(1e-6 * scale).min(h_max);
    let mut f = SizeField::uniform(h_max, params.gradation, floor);
    for (i, s) in geo.shapes.iter().enumerate() {
        if let Some(h) = s.max_size_m {
            if h < h_max {
                f.add_inside(i, &s.outline, h);
            }
        }
    }
    for (i, p) in geo.size_points.iter().enumerate() {
        f.add_point(i, p.at, p.size_m);
    }
    for pc in &arr.pieces {
        if let Curve::Arc { radius, .. } = pc.curve {
            let h_arc = 8.0 * params.chord_tolerance * radius;
            if h_arc < h_max {
                f.add_curve(pc.curve, h_arc);
            }
        }
    }
    let mut shortest = vec![f64::INFINITY; arr.vertices.len()];
    for pc in &arr.pieces {
        let l = pc.curve.length();
        for v in pc.v {
            shortest[v] = shortest[v].min(l);
        }
    }
    // Every law is set from the field without corners, so the order of the points does
    // not matter.
    let laws: Vec<GradingLaw> = singular
        .iter()
        .map(|(v, s)| {
            let h0 = f.size_at(s.at);
            GradingLaw {
                h0,
                radius: grading_radius(shortest[*v], h0),
                mu: params.grading_fraction * s.lambda / params.order as f64,
            }
        })
        .collect();
    if params.grade_corners {
        for (k, ((_, s), l)) in singular.iter().zip(&laws).enumerate() {
            f.add_corner(k, s.at, l.h0, l.radius, l.mu);
        }
    }
    (f, laws)
}

/// Splits every piece so that the spacing follows the size field.
fn discretise(arr: &Arrangement, field: &SizeField) -> Pslg {
    let mut points = arr.vertices.clone();
    let mut segments = Vec::new();
    let mut piece_of = Vec::new();
    let mut samples: Vec<(f64, f64)> = Vec::new();
    for (pi, pc) in arr.pieces.iter().enumerate() {
        if let Curve::Line { from, to } = pc.curve {
            if from[0] != to[0] && from[1] != to[1] {
                // Inclined straight pieces go in whole: points computed along an inclined
                // line are off it by round-off, which leaves zero-area slivers between
                // consecutive sub-segments. Delaunay refinement splits the segment instead
                // (exactly on it, topologically), wherever the graded interior seeds
                // encroach upon it, which makes the boundary spacing follow the size
                // field. Points on a horizontal or vertical piece are exact, and it is
                // split here like an arc, so that its spacing follows the size field
                // from the start (refinement's splits near a corner halve towards the
                // corner and may split the piece across the corner too).
                segments.push([pc.v[0] as u32, pc.v[1] as u32]);
                piece_of.push(pi as u32);
                continue;
            }
        }
        let len = pc.curve.length();
        // Cumulative ∫ ds/h by the midpoint rule (no evaluation at the ends, where a
        // singular point makes h tiny), with steps of a quarter of the local size that
        // shrink wherever h drops quickly ahead.
        samples.clear();
        let mut s = 0.0;
        let mut acc = 0.0;
        let size = |s: f64| field.size_at(pc.curve.point_at((s / len).clamp(0.0, 1.0)));
        let mut h_here = size(0.0);
        samples.push((0.0, 0.0));
        while s < len {
            let mut ds = (0.25 * h_here).min(len / 4.0).min(len - s);
            let mut h_mid = size(s + 0.5 * ds);
            for _ in 0..60 {
                if h_mid >= 0.7 * h_here || ds <= 1e-12 * len {
                    break;
                }
                ds = (0.25 * h_mid).min(0.5 * ds);
                h_mid = size(s + 0.5 * ds);
            }
            acc += ds / h_mid;
            s = if len - (s + ds) <= 1e-12 * len { len } else { s + ds };
            h_here = size(s);
            samples.push((s, acc));
        }
        // Round up, so that no chord exceeds the size (for arcs: the chord-tolerance
        // length 8·c·R).
        let n = (acc * (1.0 - 1e-9)).ceil().max(1.0) as usize;
        let mut prev = pc.v[0] as u32;
        let mut j = 0;
        for k in 1..n {
            let target = acc * k as f64 / n as f64;
            while samples[j + 1].1 < target {
                j += 1;
            }
            let (s0, a0) = samples[j];
            let (s1, a1) = samples[j + 1];
            let sk = if a1 > a0 { s0 + (target - a0) / (a1 - a0) * (s1 - s0) } else { s0 };
            points.push(pc.curve.point_at(sk / len));
            let id = (points.len() - 1) as u32;
            segments.push([prev, id]);
            piece_of.push(pi as u32);
            prev = id;
        }
        segments.push([prev, pc.v[1] as u32]);
        piece_of.push(pi as u32);
    }
    Pslg { points, segments, piece_of }
}

/// Largest leaf side of the seeding quadtree, in local sizes. Larger leaves follow the size
/// field more closely (their spacing s/k takes more values: d/h within about 0.67–1 for
/// 4, 0.5–1 for 2) and cost fewer size and region queries; the size varies little across
/// a leaf because the field's gradation is bounded.
const LEAF_SIZES: f64 = 4.0;

/// Largest side, in global sizes, of a leaf wholly in the uniform zone and away from the
/// boundary.
const UNIFORM_LEAF_SIZES: f64 = 16.0;

/// Interior vertices from a quadtree whose leaves are at most four times the local size.
///
/// A leaf of side s at local size h receives k × k points (k = ⌈s/h⌉ ≥ 1) on rows of
/// spacing d = s/k, alternate rows shifted by ±d/4, which triangulates into isosceles
/// triangles with angles of about 53° and 63°. Points outside the dielectric (outside the
/// domain or inside a conductor) or closer than d/2 to a boundary segment are dropped;
/// Delaunay refinement repairs the seams between leaves of different sizes and the layer
/// along the boundary. The uniform zone is seeded too: a spatially ordered insertion of a
/// regular lattice costs about a third of what refinement pays per vertex it creates.
fn seed(geo: &Geometry, field: &SizeField, pslg: &Pslg, grid: &BucketGrid) -> Vec<Xy> {
    use rayon::prelude::*;
    let bb = geo.bbox();
    let side = (bb[2] - bb[0]).max(bb[3] - bb[1]);
    let seeder = Seeder { geo, field, pslg, grid, bb };
    // The tree is walked depth first (a stack, children pushed in a fixed order), which
    // puts the seeds in a spatial order. Down to depth SPLIT_DEPTH the walk is serial and
    // collects the cells there (and the leaves met earlier, already seeded) in walk
    // order; their subtrees are then walked in parallel, and the outputs concatenated in
    // that order are exactly the serial walk's.
    const SPLIT_DEPTH: u32 = 4;
    enum Task {
        Done(Vec<Xy>),
        Walk(Cell),
    }
    let mut tasks = Vec::new();
    let mut stack = vec![([bb[0] + side / 2.0, bb[1] + side / 2.0], side, 0u32)];
    while let Some(cell) = stack.pop() {
        if cell.2 == SPLIT_DEPTH {
            tasks.push(Task::Walk(cell));
            continue;
        }
        let mut out = Vec::new();
        match seeder.visit(cell, &mut out) {
            Some(children) => stack.extend(children),
            None => tasks.push(Task::Done(out)),
        }
    }
    let parts: Vec<Vec<Xy>> = tasks
        .into_par_iter()
        .map(|t| match t {
            Task::Done(v) => v,
            Task::Walk(cell) => {
                let mut out = Vec::new();
                let mut stack = vec![cell];
                while let Some(cell) = stack.pop() {
                    if let Some(children) = seeder.visit(cell, &mut out) {
                        stack.extend(children);
                    }
                }
                out
            }
        })
        .collect();
    parts.concat()
}

/// A quadtree cell: centre, side, depth.
type Cell = (Xy, f64, u32);

/// What the seeding reads.
struct Seeder<'a> {
    geo: &'a Geometry,
    field: &'a SizeField,
    pslg: &'a Pslg,
    grid: &'a BucketGrid,
    bb: [f64; 4],
}

impl Seeder<'_> {
    /// Seeds cell `(c, s, depth)` into `out` if it is a leaf, or returns its four children
    /// (in the order the depth-first walk pushes them).
    fn visit(&self, (c, s, depth): Cell, out: &mut Vec<Xy>) -> Option<[Cell; 4]> {
        let Seeder { geo, field, pslg, grid, bb } = *self;
        // Cells wholly outside the bounding box of the domain.
        if c[0] - s / 2.0 > bb[2] || c[1] - s / 2.0 > bb[3] {
            return None;
        }
        // A cell away from the boundary that lies wholly in the uniform zone (the field's
        // growth bound says so from its centre) may be a leaf of up to 16 sizes: its
        // spacing s/⌈s/h⌉ is then within 6 % of the global size, and follows it without
        // the steps of a small leaf's quantised spacing.
        let h_max = field.max();
        let whole_leaf_uniform = h_max + field.slope() * std::f64::consts::FRAC_1_SQRT_2 * s;
        let raw = field.size_below(c, whole_leaf_uniform);
        if raw >= whole_leaf_uniform
            && s <= UNIFORM_LEAF_SIZES * h_max
            && !near_segment(pslg, grid, c, 0.71 * s + 1.6 * h_max)
        {
            if matches!(side_at(geo, c), Side::Region(_)) {
                lattice(c, s, h_max, bb, out, |_| true);
            }
            return None;
        }
        let mut h = raw.min(h_max).max(field.floor());
        // A leaf must not be larger than four times the size anywhere in it, and its centre
        // stands for it, unless a boundary crosses the cell and the centre lies inside a
        // conductor or outside the domain: there a size requested on an earlier mesh is not
        // defined, while a singular corner in the cell may ask for much less. The cell's
        // corners are sampled then.
        if s <= LEAF_SIZES * h && near_segment(pslg, grid, c, 0.75 * s) && !matches!(side_at(geo, c), Side::Region(_)) {
            for (dx, dy) in [(-0.5, -0.5), (0.5, -0.5), (-0.5, 0.5), (0.5, 0.5)] {
                h = h.min(field.size_at([c[0] + dx * s, c[1] + dy * s]));
            }
        }
        if s > LEAF_SIZES * h && depth < 40 {
            let q = s / 4.0;
            return Some(
                [(-q, -q), (q, -q), (-q, q), (q, q)].map(|(dx, dy)| ([c[0] + dx, c[1] + dy], s / 2.0, depth + 1)),
            );
        }
        let d = s / lattice_count(s, h) as f64;
        // Seeds inside a conductor would only be meshed to be thrown away. A leaf that no
        // boundary segment comes near (within its half-diagonal plus 1.6·d) lies in one region,
        // classified once at its centre, and all its seeds keep clear of the boundary; the
        // others classify and check each seed.
        let near_boundary = near_segment(pslg, grid, c, 0.71 * s + 1.6 * d);
        if !near_boundary {
            if matches!(side_at(geo, c), Side::Region(_)) {
                lattice(c, s, h, bb, out, |_| true);
            }
            return None;
        }
        lattice(c, s, h, bb, out, |p| {
            matches!(side_at(geo, p), Side::Region(_)) && clear_of_boundary(pslg, grid, p, d)
        });
        None
    }
}

/// Points per row of a leaf of side `s` at local size `h`: ⌈s/h⌉ (capped at the largest leaf).
fn lattice_count(s: f64, h: f64) -> usize {
    ((s / h).ceil() as usize).clamp(1, UNIFORM_LEAF_SIZES as usize)
}

/// Pushes the seeds of a leaf (centre `c`, side `s`, local size `h`) that `keep` accepts:
/// k × k points, k = ⌈s/h⌉, on rows of spacing d = s/k ≤ h, alternate rows shifted by
/// ±d/4. The lattice's longest edges are 1.12·d, and its triangles (base d, height d)
/// stay well inside the area bound of the Delaunay refinement.
fn lattice(c: Xy, s: f64, h: f64, bb: [f64; 4], out: &mut Vec<Xy>, keep: impl Fn(Xy) -> bool) {
    let k = lattice_count(s, h);
    let d = s / k as f64;
    // Rows alternate their shift by their index counted from the bottom of the box, so
    // that the alternation carries on across leaves of the same size (with a per-leaf
    // count, k = 1 would stack equal shifts into a square grid: every square's four
    // corners on one circle, which costs the Delaunay insertion exact arithmetic).
    let first_row = ((c[1] - s / 2.0 - bb[1]) / d).round() as i64;
    for j in 0..k {
        let shift = if (first_row + j as i64) % 2 == 0 { 0.25 * d } else { -0.25 * d };
        for i in 0..k {
            let p = [c[0] - s / 2.0 + (i as f64 + 0.5) * d + shift, c[1] - s / 2.0 + (j as f64 + 0.5) * d];
            if p[0] <= bb[2] && p[1] <= bb[3] && keep(p) {
                out.push(p);
            }
        }
    }
}

/// True when a seed at `p` of spacing `d` keeps clear of the boundary: at least d/2 from
/// every segment, and at least 0.8·L from every segment of length L ≤ 2d. Inclined
/// straight pieces are inserted whole and get their spacing from Delaunay refinement
/// splitting them wherever a vertex lies inside their diametral circle (Ruppert 1995).
/// Segments already at the local size (arc chords, split horizontal and vertical pieces,
/// short pieces): a seed that close would leave a thin
/// triangle on the segment whose circumcentre encroaches it, and the split would leave the
/// boundary spacing uneven. At 0.8·L above a segment end the thinnest such triangle has
/// an angle of atan 0.8 ≈ 39° (above the 30° limit).
fn clear_of_boundary(pslg: &Pslg, grid: &BucketGrid, p: Xy, d: f64) -> bool {
    let mut clear = true;
    grid.for_each_near(p, 1.6 * d, |si| {
        if clear {
            let [a, b] = pslg.segments[si as usize];
            let (pa, pb) = (pslg.points[a as usize], pslg.points[b as usize]);
            let len = norm(sub(pb, pa));
            let need = if len <= 2.0 * d { (0.8 * len).max(0.5 * d) } else { 0.5 * d };
            clear = point_segment_distance(p, pa, pb) >= need;
        }
    });
    clear
}

/// True when a boundary segment passes within `r` of `c`.
fn near_segment(pslg: &Pslg, grid: &BucketGrid, c: Xy, r: f64) -> bool {
    let mut near = false;
    grid.for_each_near(c, r, |si| {
        if !near {
            let [a, b] = pslg.segments[si as usize];
            near = point_segment_distance(c, pslg.points[a as usize], pslg.points[b as usize]) < r;
        }
    });
    near
}

/// The constrained Delaunay triangulation of the boundary segments and the `frame` around
/// them.
fn bulk_load(pslg: &Pslg, frame: &[Xy]) -> Result<Cdt, MeshError> {
    let mut vertices: Vec<Point2<f64>> = pslg.points.iter().map(|p| Point2::new(p[0], p[1])).collect();
    vertices.extend(frame.iter().map(|p| Point2::new(p[0], p[1])));
    let n_in = vertices.len();
    let edges: Vec<[usize; 2]> = pslg.segments.iter().map(|s| [s[0] as usize, s[1] as usize]).collect();
    let mut conflicts = Vec::new();
    let cdt = Cdt::try_bulk_load_cdt(vertices, edges, |e| conflicts.push(e))
        .map_err(|e| MeshError::Triangulation { detail: format!("{e:?}") })?;
    if let Some(e) = conflicts.first() {
        let (a, b) = (pslg.points.get(e[0]), pslg.points.get(e[1]));
        return Err(MeshError::Triangulation {
            detail: format!("boundary segment from {a:?} to {b:?} overlaps another; features may be closer than the resolution limit (1e-9 of the model size)"),
        });
    }
    if cdt.num_vertices() != n_in {
        return Err(MeshError::Triangulation {
            detail: "coincident input points were merged; features are closer than the resolution limit".into(),
        });
    }
    Ok(cdt)
}

/// Triangulates the boundary inside a frame of four free vertices, inserts the seeds and
/// refines the dielectric triangles (see `delaunay_refine`).
///
/// The frame keeps the domain's outline off the convex hull: where the domain is not
/// convex, a hull edge spanning a notch would meet the outline at a small angle (a 1 mm
/// step on a 50 mm face: 1.1°), and nearly collinear pieces of an inclined side would
/// leave slivers on the hull. Triangles outside the domain and inside conductors are not
/// refined; they are dropped by `extract`.
fn triangulate(
    geo: &Geometry,
    pslg: &Pslg,
    seeds: &[Xy],
    frame: &[Xy],
    field: &SizeField,
    params: &RefineParams,
    clock: &mut Stopwatch,
) -> Result<(Cdt, bool), MeshError> {
    let mut cdt = bulk_load(pslg, frame)?;
    let n_in = cdt.num_vertices();
    // Seeds come in quadtree (Z-order) order, so inserting each next to the previous one is
    // cheaper than a bulk load: the point location walk is short.
    let mut hint = None;
    for p in seeds {
        let v = match hint {
            Some(h) => cdt.insert_with_hint(Point2::new(p[0], p[1]), h),
            None => cdt.insert(Point2::new(p[0], p[1])),
        }
        .map_err(|e| MeshError::Triangulation { detail: format!("{e:?}") })?;
        hint = Some(v);
    }
    let n_in = n_in + seeds.len();
    if cdt.num_vertices() != n_in {
        return Err(MeshError::Triangulation {
            detail: "coincident interior points were merged; features are closer than the resolution limit".into(),
        });
    }
    clock.lap("spade insertion");
    let (_, _, sides) = label_faces(geo, &cdt);
    let keep = sides.iter().map(|s| matches!(s, Some(Side::Region(_)))).collect();
    let h_max = field.max();
    let floor = field.floor();
    let eq = 3f64.sqrt() / 4.0;
    let limits = Limits {
        min_angle_deg: params.min_angle_deg,
        max_area: eq * (1.3 * h_max) * (1.3 * h_max),
        min_area: eq * 0.1 * floor * floor,
        max_vertices: params.max_nodes.max(n_in),
    };
    let complete = crate::delaunay_refine::refine(&mut cdt, keep, limits);
    clock.lap("refine");
    Ok((cdt, complete && n_in <= params.max_nodes))
}

/// Positions of all vertices, corners (vertex indices) of every face and the side each face
/// lies on (None for the outer face and unused slots), by face index.
fn label_faces(geo: &Geometry, cdt: &Cdt) -> (Vec<Xy>, Vec<[u32; 3]>, Vec<Option<Side>>) {
    let nf = cdt.num_all_faces();
    // Components: union–find over the faces, joined across every edge that is not a
    // constraint (each face visited once, in storage order, which keeps memory access
    // mostly sequential; a flood fill jumps around). A component that reaches the unbounded
    // outer face is outside the domain, whatever a point test says (a sliver between nearly
    // collinear boundary pieces has its centroid on the boundary itself).
    let mut parent: Vec<u32> = (0..nf as u32).collect();
    fn root(parent: &mut [u32], mut a: u32) -> u32 {
        while parent[a as usize] != a {
            let up = parent[parent[a as usize] as usize];
            parent[a as usize] = up;
            a = up;
        }
        a
    }
    // Positions of all CDT vertices, and each face's vertices (read from spade once: its
    // handles cost a pointer chase per step).
    let all = vertex_positions(cdt);
    let mut corners = vec![NO_FACE; nf];
    let mut touches_outer = vec![false; nf];
    for f in cdt.inner_faces() {
        let fi = f.fix().index() as u32;
        for (k, e) in f.adjacent_edges().into_iter().enumerate() {
            corners[fi as usize][k] = e.from().fix().index() as u32;
            if e.as_undirected().is_constraint_edge() {
                continue;
            }
            match e.rev().face().as_inner() {
                Some(nb) => {
                    let ni = nb.fix().index() as u32;
                    if ni < fi {
                        let (ra, rb) = (root(&mut parent, fi), root(&mut parent, ni));
                        if ra != rb {
                            parent[ra.max(rb) as usize] = ra.min(rb);
                        }
                    }
                }
                None => touches_outer[fi as usize] = true,
            }
        }
    }
    // Each component is classified once, at the centroid of its largest face among the
    // first few of it (enough to step off slivers, without an area per face).
    let mut seen = vec![0u8; nf];
    let mut best: Vec<(f64, Xy)> = vec![(f64::NEG_INFINITY, [0.0, 0.0]); nf];
    let mut outside = vec![false; nf];
    let mut roots = Vec::new();
    for fi in 0..nf {
        if corners[fi] == NO_FACE {
            continue;
        }
        let r = root(&mut parent, fi as u32) as usize;
        if r == fi {
            roots.push(r);
        }
        outside[r] |= touches_outer[fi];
        if seen[r] < 64 {
            seen[r] += 1;
            let [p0, p1, p2] = corners[fi].map(|v| all[v as usize]);
            let a = 0.5 * crate::geometry::cross(sub(p1, p0), sub(p2, p0));
            if a > best[r].0 {
                let third = 1.0 / 3.0;
                best[r] = (a, [(p0[0] + (p1[0] + p2[0])) * third, (p0[1] + (p1[1] + p2[1])) * third]);
            }
        }
    }
    let mut label: Vec<Option<Side>> = vec![None; nf];
    for &r in &roots {
        label[r] = Some(if outside[r] { Side::Outside } else { side_at(geo, best[r].1) });
    }
    for fi in 0..nf {
        if corners[fi] != NO_FACE {
            label[fi] = label[root(&mut parent, fi as u32) as usize];
        }
    }
    (all, corners, label)
}

/// Corner value of a face slot that holds no triangle.
const NO_FACE: [u32; 3] = [u32::MAX; 3];

fn extract(
    geo: &Geometry,
    arr: &Arrangement,
    pslg: &Pslg,
    grid: &BucketGrid,
    cdt: &Cdt,
    singular_points: Vec<SingularPoint>,
) -> Result<Mesh, MeshError> {
    let scale = geo.scale();
    let nf = cdt.num_all_faces();
    let (all, corners, label) = label_faces(geo, cdt);
    // Nodes: compacted to the ones dielectric triangles use, numbered in face order.
    let mut map = vec![u32::MAX; all.len()];
    let mut nodes: Vec<Xy> = Vec::new();
    let mut triangles = Vec::new();
    let mut regions = Vec::new();
    for fi in 0..nf {
        if corners[fi] == NO_FACE {
            continue;
        }
        let Some(Side::Region(r)) = label[fi] else { continue };
        let tri = corners[fi].map(|i| {
            let i = i as usize;
            if map[i] == u32::MAX {
                map[i] = nodes.len() as u32;
                nodes.push(all[i]);
            }
            map[i]
        });
        triangles.push(tri);
        regions.push(r);
    }
    let face_side = |fi: usize| label[fi].unwrap_or(Side::Outside);
    // Tagged edges.
    let axisym = geo.symmetry == Symmetry::Axisymmetric;
    let mut edges = Vec::new();
    let mut arc_index = vec![u32::MAX; arr.pieces.len()];
    let mut arcs: Vec<ArcGeom> = Vec::new();
    let mut on_arc: Vec<Option<u32>> = vec![None; all.len()];
    for e in cdt.undirected_edges() {
        // Only constraint edges separate components, hence labels: a face next to a
        // non-constraint edge is in the same component as the face across it.
        if !e.is_constraint_edge() {
            continue;
        }
        let d = e.as_directed();
        let (fl, fr) = (d.face(), d.rev().face());
        let sl = if fl.is_outer() { Side::Outside } else { face_side(fl.fix().index()) };
        let sr = if fr.is_outer() { Side::Outside } else { face_side(fr.fix().index()) };
        let (from, to) = (d.from().fix(), d.to().fix());
        // Which piece of the arrangement the edge lies on.
        let (pa, pb) = (all[from.index()], all[to.index()]);
        let mid = [(pa[0] + pb[0]) / 2.0, (pa[1] + pb[1]) / 2.0];
        let len = norm(sub(pa, pb));
        let mut best = (f64::INFINITY, u32::MAX);
        grid.for_each_near(mid, 1e-6 * scale, |si| {
            let [s0, s1] = pslg.segments[si as usize];
            let d = point_segment_distance(mid, pslg.points[s0 as usize], pslg.points[s1 as usize]);
            if d < best.0 {
                best = (d, si);
            }
        });
        let piece = (best.0 <= 1e-6 * len.max(1e-9 * scale)).then(|| pslg.piece_of[best.1 as usize] as usize);
        let thin = piece.and_then(|p| arr.pieces[p].thin);
        if sl == sr && thin.is_none() {
            continue;
        }
        // Orient so that a dielectric region is on the left (the smaller one for interfaces).
        let (a, b, tag) = match (sl, sr, thin) {
            // A thin electrode: dielectric on both faces.
            (Side::Region(_), Side::Region(_), Some(c)) => (from, to, EdgeTag::Conductor(c)),
            (Side::Region(x), Side::Region(y), None) => {
                if x < y {
                    (from, to, EdgeTag::Interface(x, y))
                } else {
                    (to, from, EdgeTag::Interface(y, x))
                }
            }
            (Side::Region(_), other, _) => {
                (from, to, boundary_tag(other, axisym, all[from.index()], all[to.index()], scale))
            }
            (other, Side::Region(_), _) => {
                (to, from, boundary_tag(other, axisym, all[from.index()], all[to.index()], scale))
            }
            _ => continue,
        };
        let mut arc = None;
        if let Some(piece) = piece {
            if let Curve::Arc { center, radius, .. } = arr.pieces[piece].curve {
                if arc_index[piece] == u32::MAX {
                    // Share one record between pieces of the same circle.
                    let found = arcs.iter().position(|g| {
                        norm(sub(g.center, center)) <= 1e-12 * scale && (g.radius - radius).abs() <= 1e-12 * scale
                    });
                    arc_index[piece] = match found {
                        Some(i) => i as u32,
                        None => {
                            arcs.push(ArcGeom { center, radius });
                            (arcs.len() - 1) as u32
                        }
                    };
                }
                arc = Some(arc_index[piece]);
                on_arc[a.index()] = arc;
                on_arc[b.index()] = arc;
            }
        }
        edges.push(TaggedEdge { nodes: [map[a.index()], map[b.index()]], tag, arc });
    }
    // Move nodes that refinement put on arc chords onto their arcs. Triangles around
    // those nodes are collected first (only for them: a per-node list for the whole mesh
    // would cost an allocation per node).
    let mut slot = vec![u32::MAX; nodes.len()];
    let mut arc_nodes = 0u32;
    for (i, arc) in on_arc.iter().enumerate() {
        if arc.is_some() && map[i] != u32::MAX {
            slot[map[i] as usize] = arc_nodes;
            arc_nodes += 1;
        }
    }
    let mut incident: Vec<Vec<u32>> = vec![Vec::new(); arc_nodes as usize];
    for (t, tri) in triangles.iter().enumerate() {
        for &v in tri {
            if slot[v as usize] != u32::MAX {
                incident[slot[v as usize] as usize].push(t as u32);
            }
        }
    }
    let area = |nodes: &[Xy], tri: &[u32; 3]| {
        let [a, b, c] = tri.map(|i| nodes[i as usize]);
        (b[0] - a[0]) * (c[1] - a[1]) - (c[0] - a[0]) * (b[1] - a[1])
    };
    let mut stay_on_chord: Vec<u32> = Vec::new();
    for (i, arc) in on_arc.iter().enumerate() {
        let (Some(arc), id) = (arc, map[i]) else { continue };
        if id == u32::MAX {
            continue;
        }
        let g = arcs[*arc as usize];
        let p = nodes[id as usize];
        let v = sub(p, g.center);
        let r = norm(v);
        if r == 0.0 || (r - g.radius).abs() <= 1e-14 * scale {
            continue;
        }
        let q = [g.center[0] + g.radius * v[0] / r, g.center[1] + g.radius * v[1] / r];
        nodes[id as usize] = q;
        if incident[slot[id as usize] as usize].iter().any(|&t| area(&nodes, &triangles[t as usize]) <= 0.0) {
            nodes[id as usize] = p;
            stay_on_chord.push(id);
        }
    }
    // A node that could not move keeps its edges straight (they are no longer on the arc).
    if !stay_on_chord.is_empty() {
        for e in edges.iter_mut() {
            if stay_on_chord.contains(&e.nodes[0]) || stay_on_chord.contains(&e.nodes[1]) {
                e.arc = None;
            }
        }
    }
    Ok(Mesh {
        symmetry: geo.symmetry,
        num_vertices: nodes.len() as u32,
        nodes,
        triangles,
        regions,
        mid_nodes: Vec::new(),
        edges,
        arcs,
        shape_names: geo.shapes.iter().map(|s| s.name.clone()).collect(),
        conductor_names: geo.conductors.clone(),
        singular_points,
        exterior: None,
    })
}

fn boundary_tag(other: Side, axisym: bool, a: Xy, b: Xy, scale: f64) -> EdgeTag {
    match other {
        Side::Conductor(c) => EdgeTag::Conductor(c),
        _ => {
            if axisym && a[0].abs() <= 1e-9 * scale && b[0].abs() <= 1e-9 * scale {
                EdgeTag::Axis
            } else {
                EdgeTag::Outer
            }
        }
    }
}
