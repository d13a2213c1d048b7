//! The model's cross-section as exact curves: outlines of straight lines and circular arcs,
//! painted in order into regions.
//!
//! A [`Geometry`] is what the model file describes, before any discretisation: a list of
//! [`Shape`]s whose closed [`Outline`]s are made of [`Curve`]s (straight segments and circular
//! arcs). The first shape is the *domain*; every later shape paints over the earlier ones
//! inside its area. A shape is filled either with a dielectric (a region of the mesh) or by a
//! conductor (removed from the mesh; its outline becomes an electrode boundary).
//!
//! Coordinates are in metres. Exact curves are kept so that arc discretisation, corner
//! angles (true tangents, not chords) and curved P2 edges can all be derived from them.
//!
//! # References
//! - K. Hormann, A. Agathos, "The point in polygon problem for arbitrary polygons",
//!   Comput. Geom. 20 (2001) 131–144, doi:10.1016/S0925-7721(01)00012-8 (the crossing
//!   count, here on exact lines and arcs).

use crate::error::MeshError;
use std::f64::consts::{PI, TAU};

/// A point or vector in the cross-section plane, `[x, y]` in metres (`[r, z]` in axisymmetry).
pub type Xy = [f64; 2];

/// Planar (per metre of depth) or axisymmetric (x = r ≥ 0, y = z) cross-section.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Symmetry {
    /// A planar cross-section; results are per metre of depth.
    Planar,
    /// A meridian half-plane of a body of revolution; x is the radius, the line x = 0 the axis.
    Axisymmetric,
}

/// What the outer boundary of the domain is, as far as corner analysis is concerned.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum OuterBoundary {
    /// Zero normal flux (a symmetry plane or a far boundary); the default.
    ZeroFlux,
    /// The outer boundary is held at a fixed potential (it acts as an electrode).
    FixedPotential,
    /// Open: the unbounded space beyond the domain is included by the Kelvin mapping. The
    /// domain must be a circle (planar) or a half disc centred on the axis (axisymmetric).
    Open,
}

/// One piece of an outline: a straight segment or a circular arc, from `from` to `to`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Curve {
    /// Straight segment.
    Line {
        /// Start point.
        from: Xy,
        /// End point.
        to: Xy,
    },
    /// Circular arc around `center`, from angle `start` sweeping by `sweep` radians
    /// (positive = counter-clockwise). `|sweep| ≤ 2π`.
    Arc {
        /// Centre of the circle.
        center: Xy,
        /// Radius (> 0).
        radius: f64,
        /// Polar angle of the start point, radians.
        start: f64,
        /// Signed swept angle, radians.
        sweep: f64,
    },
}

impl Curve {
    /// Builds the arc from `from` to `to` with the given radius.
    ///
    /// `ccw` chooses the turning direction; `large` picks the arc longer than a half circle.
    ///
    /// # Errors
    /// [`MeshError::ArcTooShort`] if the radius is shorter than half the chord (no such arc),
    /// [`MeshError::BadNumber`] for a non-positive or non-finite radius.
    pub fn arc_through(shape: &str, from: Xy, to: Xy, radius: f64, ccw: bool, large: bool) -> Result<Curve, MeshError> {
        if !(radius.is_finite() && radius > 0.0) {
            return Err(MeshError::BadNumber { shape: shape.to_string(), what: "arc radius".into(), value: radius });
        }
        let d = sub(to, from);
        let chord = norm(d);
        if chord == 0.0 {
            return Err(MeshError::DegenerateCurve { shape: shape.to_string(), at: from });
        }
        let half = chord / 2.0;
        // Allow round-off: a radius equal to half the chord (a half circle) written with
        // decimals in the model file may come out a few ulps short.
        if radius < half * (1.0 - 1e-9) {
            return Err(MeshError::ArcTooShort { shape: shape.to_string(), from, to, radius, min_radius: half });
        }
        let h = (radius * radius - half * half).max(0.0).sqrt();
        let mid = [from[0] + d[0] / 2.0, from[1] + d[1] / 2.0];
        // Unit normal to the left of the chord.
        let left = [-d[1] / chord, d[0] / chord];
        // A counter-clockwise minor arc has its centre on the left of the chord.
        let side = if ccw != large { 1.0 } else { -1.0 };
        let center = [mid[0] + side * h * left[0], mid[1] + side * h * left[1]];
        let a0 = (from[1] - center[1]).atan2(from[0] - center[0]);
        let a1 = (to[1] - center[1]).atan2(to[0] - center[0]);
        let mut sweep = a1 - a0;
        if ccw {
            while sweep <= 0.0 {
                sweep += TAU;
            }
        } else {
            while sweep >= 0.0 {
                sweep -= TAU;
            }
        }
        Ok(Curve::Arc { center, radius, start: a0, sweep })
    }

    /// Start point.
    pub fn from(&self) -> Xy {
        self.point_at(0.0)
    }

    /// End point.
    pub fn to(&self) -> Xy {
        self.point_at(1.0)
    }

    /// The point at curve parameter `t ∈ [0, 1]` (proportional to arc length).
    pub fn point_at(&self, t: f64) -> Xy {
        match *self {
            Curve::Line { from, to } => {
                if t == 1.0 {
                    to
                } else {
                    [from[0] + t * (to[0] - from[0]), from[1] + t * (to[1] - from[1])]
                }
            }
            Curve::Arc { center, radius, start, sweep } => {
                let a = start + t * sweep;
                [center[0] + radius * a.cos(), center[1] + radius * a.sin()]
            }
        }
    }

    /// Unit tangent in the direction of travel at parameter `t`.
    pub fn tangent_at(&self, t: f64) -> Xy {
        match *self {
            Curve::Line { from, to } => {
                let d = sub(to, from);
                let n = norm(d);
                [d[0] / n, d[1] / n]
            }
            Curve::Arc { start, sweep, .. } => {
                let a = start + t * sweep;
                let s = sweep.signum();
                [-s * a.sin(), s * a.cos()]
            }
        }
    }

    /// Length of the curve.
    pub fn length(&self) -> f64 {
        match *self {
            Curve::Line { from, to } => norm(sub(to, from)),
            Curve::Arc { radius, sweep, .. } => radius * sweep.abs(),
        }
    }

    /// The part of the curve between parameters `t0 < t1`.
    pub fn sub_curve(&self, t0: f64, t1: f64) -> Curve {
        match *self {
            Curve::Line { .. } => Curve::Line { from: self.point_at(t0), to: self.point_at(t1) },
            Curve::Arc { center, radius, start, sweep } => {
                Curve::Arc { center, radius, start: start + t0 * sweep, sweep: (t1 - t0) * sweep }
            }
        }
    }

    /// The same curve travelled backwards.
    pub fn reversed(&self) -> Curve {
        match *self {
            Curve::Line { from, to } => Curve::Line { from: to, to: from },
            Curve::Arc { center, radius, start, sweep } => {
                Curve::Arc { center, radius, start: start + sweep, sweep: -sweep }
            }
        }
    }

    /// Distance from `p` to the curve and the parameter of the nearest point.
    pub fn distance(&self, p: Xy) -> (f64, f64) {
        match *self {
            Curve::Line { from, to } => {
                let d = sub(to, from);
                let l2 = dot(d, d);
                let t = if l2 > 0.0 { (dot(sub(p, from), d) / l2).clamp(0.0, 1.0) } else { 0.0 };
                (norm(sub(p, self.point_at(t))), t)
            }
            Curve::Arc { center, radius, start, sweep } => {
                let v = sub(p, center);
                let a = v[1].atan2(v[0]);
                // Parameter of the polar angle of p, if it falls inside the sweep.
                let mut rel = (a - start) * sweep.signum();
                rel = rel.rem_euclid(TAU);
                if rel <= sweep.abs() {
                    let t = rel / sweep.abs();
                    ((norm(v) - radius).abs(), t)
                } else {
                    let d0 = norm(sub(p, self.point_at(0.0)));
                    let d1 = norm(sub(p, self.point_at(1.0)));
                    if d0 <= d1 {
                        (d0, 0.0)
                    } else {
                        (d1, 1.0)
                    }
                }
            }
        }
    }

    /// Axis-aligned bounding box `[xmin, ymin, xmax, ymax]`.
    pub fn bbox(&self) -> [f64; 4] {
        let a = self.from();
        let b = self.to();
        let mut bb = [a[0].min(b[0]), a[1].min(b[1]), a[0].max(b[0]), a[1].max(b[1])];
        if let Curve::Arc { center, radius, .. } = *self {
            // Include the extreme points of the circle that the arc passes through.
            for k in 0..4 {
                let ang = k as f64 * PI / 2.0;
                if self.contains_angle(ang) {
                    let q = [center[0] + radius * ang.cos(), center[1] + radius * ang.sin()];
                    bb = [bb[0].min(q[0]), bb[1].min(q[1]), bb[2].max(q[0]), bb[3].max(q[1])];
                }
            }
        }
        bb
    }

    /// True if the polar angle `ang` (about the arc centre) lies within the arc's sweep.
    /// Always false for lines.
    pub fn contains_angle(&self, ang: f64) -> bool {
        match *self {
            Curve::Line { .. } => false,
            Curve::Arc { start, sweep, .. } => {
                let rel = ((ang - start) * sweep.signum()).rem_euclid(TAU);
                rel <= sweep.abs()
            }
        }
    }

    /// Parameter `t` of a point known to lie on the curve (projection).
    pub fn param_of(&self, p: Xy) -> f64 {
        self.distance(p).1
    }

    /// Number of crossings of the ray from `p` towards +x, counted with the half-open rule
    /// (an endpoint counts when the curve leaves or enters the half plane `y > p.y`), so that
    /// crossings through shared vertices of a closed outline are counted exactly once.
    /// `ends_y` are the heights taken for the curve's two ends: the joints' heights shared
    /// with the neighbouring curves, so that round-off in where an arc ends (sin 2π ≠ 0)
    /// cannot count a crossing at a joint twice or not at all.
    fn ray_crossings(&self, p: Xy, ends_y: [f64; 2]) -> u32 {
        match *self {
            Curve::Line { from, to } => crossing_line([from[0], ends_y[0]], [to[0], ends_y[1]], p) as u32,
            Curve::Arc { center, radius, start, sweep } => {
                // Split the arc into y-monotone pieces at the top and bottom of the circle.
                let mut cuts = vec![0.0, 1.0];
                for ang in [PI / 2.0, 3.0 * PI / 2.0] {
                    let rel = ((ang - start) * sweep.signum()).rem_euclid(TAU);
                    let t = rel / sweep.abs();
                    if t > 0.0 && t < 1.0 {
                        cuts.push(t);
                    }
                }
                cuts.sort_by(f64::total_cmp);
                let mut n = 0;
                for w in cuts.windows(2) {
                    let mut a = self.point_at(w[0]);
                    let mut b = self.point_at(w[1]);
                    if w[0] == 0.0 {
                        a[1] = ends_y[0];
                    }
                    if w[1] == 1.0 {
                        b[1] = ends_y[1];
                    }
                    if (a[1] > p[1]) != (b[1] > p[1]) {
                        // x of the monotone piece at height p.y.
                        let dy = p[1] - center[1];
                        let dx = (radius * radius - dy * dy).max(0.0).sqrt();
                        let xm = (a[0] + b[0]) / 2.0;
                        let x = if xm >= center[0] { center[0] + dx } else { center[0] - dx };
                        if x > p[0] {
                            n += 1;
                        }
                    }
                }
                n
            }
        }
    }
}

fn crossing_line(a: Xy, b: Xy, p: Xy) -> bool {
    if (a[1] > p[1]) != (b[1] > p[1]) {
        let x = a[0] + (p[1] - a[1]) / (b[1] - a[1]) * (b[0] - a[0]);
        x > p[0]
    } else {
        false
    }
}

/// A closed outline: curves joined end to end, the last ending where the first starts.
#[derive(Clone, Debug, PartialEq)]
pub struct Outline {
    curves: Vec<Curve>,
}

impl Outline {
    /// Builds an outline from curves that must join end to end and close.
    ///
    /// # Errors
    /// [`MeshError::NotClosed`] when consecutive curves do not meet or the last does not
    /// return to the start (tolerance: 1e-9 of the outline's size).
    pub fn new(shape: &str, curves: Vec<Curve>) -> Result<Outline, MeshError> {
        if curves.is_empty() {
            return Err(MeshError::EmptyShape { shape: shape.to_string() });
        }
        for c in &curves {
            let (nums, what): (Vec<f64>, &str) = match *c {
                Curve::Line { from, to } => (vec![from[0], from[1], to[0], to[1]], "coordinate"),
                Curve::Arc { center, radius, start, sweep } => {
                    (vec![center[0], center[1], radius, start, sweep], "arc centre, radius or angle")
                }
            };
            if let Some(&v) = nums.iter().find(|v| !v.is_finite()) {
                return Err(MeshError::BadNumber { shape: shape.to_string(), what: what.into(), value: v });
            }
        }
        let mut bb = curves[0].bbox();
        for c in &curves {
            let b = c.bbox();
            bb = [bb[0].min(b[0]), bb[1].min(b[1]), bb[2].max(b[2]), bb[3].max(b[3])];
        }
        let size = (bb[2] - bb[0]).hypot(bb[3] - bb[1]);
        let tol = 1e-9 * size.max(f64::MIN_POSITIVE);
        for k in 0..curves.len() {
            let end = curves[k].to();
            let next = curves[(k + 1) % curves.len()].from();
            if norm(sub(end, next)) > tol {
                return Err(MeshError::NotClosed { shape: shape.to_string(), gap_from: end, gap_to: next });
            }
        }
        Ok(Outline { curves })
    }

    /// Axis-aligned rectangle from its lower-left corner and size, with optional
    /// corner fillets of radius `fillet` (0 for sharp corners).
    ///
    /// # Errors
    /// Non-positive size, or a fillet larger than half the shorter side.
    pub fn rectangle(shape: &str, min: Xy, size: Xy, fillet: f64) -> Result<Outline, MeshError> {
        for (what, v) in [("width", size[0]), ("height", size[1])] {
            if !(v.is_finite() && v > 0.0) {
                return Err(MeshError::BadNumber { shape: shape.to_string(), what: what.into(), value: v });
            }
        }
        let [x0, y0] = min;
        let [x1, y1] = [x0 + size[0], y0 + size[1]];
        if !(fillet.is_finite() && fillet >= 0.0) || fillet > 0.5 * size[0].min(size[1]) {
            return Err(MeshError::BadNumber {
                shape: shape.to_string(),
                what: "fillet radius (must be ≥ 0 and at most half the shorter side)".into(),
                value: fillet,
            });
        }
        let r = fillet;
        if r == 0.0 {
            return Outline::polygon(shape, &[[x0, y0], [x1, y0], [x1, y1], [x0, y1]]);
        }
        let mut c = Vec::new();
        let corners = [
            ([x1 - r, y0 + r], -PI / 2.0),
            ([x1 - r, y1 - r], 0.0),
            ([x0 + r, y1 - r], PI / 2.0),
            ([x0 + r, y0 + r], PI),
        ];
        for (k, (center, a0)) in corners.iter().enumerate() {
            let arc = Curve::Arc { center: *center, radius: r, start: *a0, sweep: PI / 2.0 };
            let next_start = corners[(k + 1) % 4];
            let nxt = Curve::Arc { center: next_start.0, radius: r, start: next_start.1, sweep: PI / 2.0 };
            c.push(arc);
            let a = arc.to();
            let b = nxt.from();
            // With the fillet at half a side the arcs meet (a half-round end): no line
            // between them, only the round-off gap that `snap_joints` closes.
            if norm(sub(a, b)) > 1e-12 * size[0].max(size[1]) {
                c.push(Curve::Line { from: a, to: b });
            }
        }
        // Close exactly: rounding of cos/sin leaves ulp-sized gaps between lines and arcs.
        Outline::new(shape, snap_joints(c))
    }

    /// Full circle.
    ///
    /// # Errors
    /// Non-positive or non-finite radius.
    pub fn circle(shape: &str, center: Xy, radius: f64) -> Result<Outline, MeshError> {
        if !(radius.is_finite() && radius > 0.0) {
            return Err(MeshError::BadNumber { shape: shape.to_string(), what: "radius".into(), value: radius });
        }
        // Two half circles, so that every curve has distinct end points.
        Outline::new(
            shape,
            vec![
                Curve::Arc { center, radius, start: 0.0, sweep: PI },
                Curve::Arc { center, radius, start: PI, sweep: PI },
            ],
        )
    }

    /// Closed polygon through `points` (the closing edge is implied).
    ///
    /// # Errors
    /// Fewer than three points, or two consecutive points equal.
    pub fn polygon(shape: &str, points: &[Xy]) -> Result<Outline, MeshError> {
        if points.len() < 3 {
            return Err(MeshError::EmptyShape { shape: shape.to_string() });
        }
        let mut c = Vec::with_capacity(points.len());
        for k in 0..points.len() {
            let a = points[k];
            let b = points[(k + 1) % points.len()];
            if a == b {
                return Err(MeshError::DegenerateCurve { shape: shape.to_string(), at: a });
            }
            c.push(Curve::Line { from: a, to: b });
        }
        Outline::new(shape, c)
    }

    /// The curves, in order.
    pub fn curves(&self) -> &[Curve] {
        &self.curves
    }

    /// Signed area (positive for a counter-clockwise outline), exact for arcs.
    pub fn signed_area(&self) -> f64 {
        let mut a = 0.0;
        for c in &self.curves {
            let p = c.from();
            let q = c.to();
            a += 0.5 * (p[0] * q[1] - q[0] * p[1]);
            if let Curve::Arc { radius, sweep, .. } = *c {
                // Circular segment between the chord and the arc.
                a += 0.5 * radius * radius * (sweep - sweep.sin());
            }
        }
        a
    }

    /// Bounding box `[xmin, ymin, xmax, ymax]`.
    pub fn bbox(&self) -> [f64; 4] {
        let mut bb = [f64::INFINITY, f64::INFINITY, f64::NEG_INFINITY, f64::NEG_INFINITY];
        for c in &self.curves {
            let b = c.bbox();
            bb = [bb[0].min(b[0]), bb[1].min(b[1]), bb[2].max(b[2]), bb[3].max(b[3])];
        }
        bb
    }

    /// True if `p` is inside the outline (even-odd rule on the exact curves). Points
    /// exactly on the outline may go either way.
    pub fn contains(&self, p: Xy) -> bool {
        let bb = self.bbox();
        if p[0] < bb[0] || p[0] > bb[2] || p[1] < bb[1] || p[1] > bb[3] {
            return false;
        }
        self.contains_in_bbox(p)
    }

    /// [`Outline::contains`] for a point already known to lie in the outline's bounding box
    /// (the crossing count alone, without recomputing the box).
    pub(crate) fn contains_in_bbox(&self, p: Xy) -> bool {
        let m = self.curves.len();
        let n: u32 = (0..m)
            .map(|k| {
                let before = self.curves[(k + m - 1) % m].to()[1];
                self.curves[k].ray_crossings(p, [before, self.curves[k].to()[1]])
            })
            .sum();
        n % 2 == 1
    }

    /// Distance from `p` to the outline.
    pub fn distance(&self, p: Xy) -> f64 {
        self.curves.iter().map(|c| c.distance(p).0).fold(f64::INFINITY, f64::min)
    }

    /// Points along the outline, arcs split so that each chord turns by at most `max_turn`
    /// radians. Used for validation (self-intersection, containment), not for meshing.
    pub fn sample(&self, max_turn: f64) -> Vec<Xy> {
        let mut pts = Vec::new();
        for c in &self.curves {
            let n = match *c {
                Curve::Line { .. } => 1,
                Curve::Arc { sweep, .. } => ((sweep.abs() / max_turn).ceil() as usize).max(1),
            };
            for k in 0..n {
                pts.push(c.point_at(k as f64 / n as f64));
            }
        }
        pts
    }
}

/// Makes consecutive curves share exactly the same joint coordinates (the start of each
/// curve is moved onto the end of the previous one; the moves are ulp-sized).
fn snap_joints(mut c: Vec<Curve>) -> Vec<Curve> {
    let n = c.len();
    for k in 0..n {
        let end = c[k].to();
        let next = &mut c[(k + 1) % n];
        if let Curve::Line { from, .. } = next {
            *from = end;
        }
    }
    for k in 0..n {
        let start = c[(k + 1) % n].from();
        if let Curve::Line { to, .. } = &mut c[k] {
            *to = start;
        }
    }
    c
}

/// What fills a shape's area.
#[derive(Clone, Debug, PartialEq)]
pub enum Fill {
    /// A dielectric region of the mesh.
    Dielectric {
        /// Relative permittivity, used by the mesher only to compute the singular exponents
        /// of corners where several dielectrics meet. Finite and above zero: the caller
        /// checks it (debug assertion in [`Geometry::validate`]).
        permittivity: f64,
    },
    /// A conductor (electrode or floating conductor): its interior is not meshed.
    Conductor {
        /// Index of the conductor in [`Geometry::conductors`]. Several shapes may belong to
        /// one conductor.
        conductor: u32,
    },
}

/// A named shape of the model.
#[derive(Clone, Debug, PartialEq)]
pub struct Shape {
    /// The name the user gave it (unique).
    pub name: String,
    /// Closed outline.
    pub outline: Outline,
    /// Dielectric or conductor.
    pub fill: Fill,
    /// Largest element edge length inside the shape, metres.
    pub max_size_m: Option<f64>,
}

/// A requested element size at a point, metres.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SizePoint {
    /// Where.
    pub at: Xy,
    /// Element edge length there, metres.
    pub size_m: f64,
}

/// The whole cross-section, as the model file describes it.
#[derive(Clone, Debug, PartialEq)]
pub struct Geometry {
    /// Planar or axisymmetric.
    pub symmetry: Symmetry,
    /// Shapes in paint order; the first is the domain.
    pub shapes: Vec<Shape>,
    /// Conductor names; shapes refer to them by index.
    pub conductors: Vec<String>,
    /// What the domain's outer boundary is (for corner analysis).
    pub outer: OuterBoundary,
    /// Element sizes requested at points.
    pub size_points: Vec<SizePoint>,
    /// Stretches of the outer boundary with a condition of their own (the rest has
    /// `outer`'s): the mesh puts a vertex at each end, and the corner analysis takes each
    /// stretch's wall.
    pub boundary_pieces: Vec<BoundaryPiece>,
    /// Conductors of zero thickness (foils, plates seen edge-on): curves inside the domain
    /// with the field on both faces.
    pub thin: Vec<ThinElectrode>,
}

/// A conductor of zero thickness: a chain of lines and arcs inside the domain (in one
/// dielectric or along an interface), part of a conductor's surface on both faces. Its free
/// ends are singular points (λ = ½ in one dielectric).
#[derive(Clone, Debug, PartialEq)]
pub struct ThinElectrode {
    /// The name the user gave it (for messages).
    pub name: String,
    /// The curves, metres; consecutive curves need not join.
    pub curves: Vec<Curve>,
    /// Index of the conductor in [`Geometry::conductors`].
    pub conductor: u32,
}

/// A stretch of the domain's outer boundary with its own condition.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct BoundaryPiece {
    /// The stretch: a line or arc lying on the domain's outline, metres.
    pub curve: Curve,
    /// Held at a potential (fixed, varying along it, or a conductor's) or zero flux.
    pub wall: crate::Wall,
}

impl Geometry {
    /// Bounding box of the domain (first shape).
    ///
    /// # Panics
    /// If the geometry has no shape (call [`Geometry::validate`] first).
    #[track_caller]
    pub fn bbox(&self) -> [f64; 4] {
        assert!(!self.shapes.is_empty(), "geometry has no shape");
        self.shapes[0].outline.bbox()
    }

    /// Length of the domain's bounding-box diagonal, the scale of every relative tolerance.
    pub fn scale(&self) -> f64 {
        let b = self.bbox();
        (b[2] - b[0]).hypot(b[3] - b[1])
    }

    /// Which shape's fill is at `p`: the last shape in paint order that contains it, or
    /// `None` outside the domain.
    pub fn paint_at(&self, p: Xy) -> Option<usize> {
        if self.shapes.is_empty() || !self.shapes[0].outline.contains(p) {
            return None;
        }
        (0..self.shapes.len()).rev().find(|&k| self.shapes[k].outline.contains(p))
    }

    /// Checks everything the mesher relies on.
    ///
    /// # Errors
    /// Missing domain, duplicate shape names, a conductor index out of range, non-finite or
    /// non-positive numbers, a zero-area or self-intersecting outline, a shape that leaves the
    /// domain, negative radius in an axisymmetric model.
    pub fn validate(&self) -> Result<(), MeshError> {
        if self.shapes.is_empty() {
            return Err(MeshError::NoDomain);
        }
        if let Fill::Conductor { .. } = self.shapes[0].fill {
            return Err(MeshError::DomainIsConductor { shape: self.shapes[0].name.clone() });
        }
        for (i, s) in self.shapes.iter().enumerate() {
            if self.shapes[..i].iter().any(|o| o.name == s.name) {
                return Err(MeshError::DuplicateName { name: s.name.clone() });
            }
            match s.fill {
                Fill::Conductor { conductor } if conductor as usize >= self.conductors.len() => {
                    return Err(MeshError::UnknownConductor { shape: s.name.clone(), index: conductor });
                }
                // The permittivity is the caller's to check where it enters (the command
                // line's plan, `cli/src/plan/materials.rs`): the mesher trusts it.
                Fill::Dielectric { permittivity } => {
                    debug_assert!(permittivity.is_finite() && permittivity > 0.0, "shape '{}': {permittivity}", s.name);
                }
                _ => {}
            }
            if let Some(h) = s.max_size_m {
                if !(h.is_finite() && h > 0.0) {
                    return Err(MeshError::BadNumber { shape: s.name.clone(), what: "max_size".into(), value: h });
                }
            }
        }
        let scale = self.scale();
        if !(scale.is_finite() && scale > 0.0) {
            return Err(MeshError::ZeroArea { shape: self.shapes[0].name.clone() });
        }
        let tol = 1e-9 * scale;
        for (i, s) in self.shapes.iter().enumerate() {
            let b = s.outline.bbox();
            let diag = (b[2] - b[0]).hypot(b[3] - b[1]);
            if self.symmetry == Symmetry::Axisymmetric && b[0] < -tol {
                let at =
                    s.outline
                        .sample(PI / 64.0)
                        .into_iter()
                        .fold([f64::INFINITY, 0.0], |m, p| if p[0] < m[0] { p } else { m });
                return Err(MeshError::NegativeRadius { shape: s.name.clone(), at });
            }
            let pts = s.outline.sample(PI / 64.0);
            if diag <= tol {
                return Err(MeshError::ZeroArea { shape: s.name.clone() });
            }
            if let Some(at) = self_intersection(&pts, tol) {
                return Err(MeshError::SelfIntersecting { shape: s.name.clone(), at });
            }
            if s.outline.signed_area().abs() <= 1e-12 * diag * diag {
                return Err(MeshError::ZeroArea { shape: s.name.clone() });
            }
            if i > 0 {
                let dom = &self.shapes[0].outline;
                // Every sample point of the outline and of its chords' midpoints must lie
                // inside the domain or on its outline.
                let n = pts.len();
                for k in 0..n {
                    let a = pts[k];
                    let m = [(a[0] + pts[(k + 1) % n][0]) / 2.0, (a[1] + pts[(k + 1) % n][1]) / 2.0];
                    for q in [a, m] {
                        if !dom.contains(q) && dom.distance(q) > 1e-6 * scale {
                            return Err(MeshError::OutsideDomain {
                                shape: s.name.clone(),
                                domain: self.shapes[0].name.clone(),
                                at: q,
                            });
                        }
                    }
                }
            }
        }
        if self.outer == OuterBoundary::Open {
            domain_circle(self)?;
        }
        for t in &self.thin {
            if self.shapes.iter().any(|s| s.name == t.name) || self.thin.iter().filter(|o| o.name == t.name).count() > 1
            {
                return Err(MeshError::DuplicateName { name: t.name.clone() });
            }
            if t.conductor as usize >= self.conductors.len() {
                return Err(MeshError::UnknownConductor { shape: t.name.clone(), index: t.conductor });
            }
            if t.curves.is_empty() {
                return Err(MeshError::EmptyShape { shape: t.name.clone() });
            }
            let dom = &self.shapes[0].outline;
            for c in &t.curves {
                let pts = [c.from(), c.to()];
                if pts.iter().flatten().any(|v| !v.is_finite()) {
                    return Err(MeshError::BadNumber {
                        shape: t.name.clone(),
                        what: "a coordinate".into(),
                        value: f64::NAN,
                    });
                }
                if c.length() <= tol {
                    return Err(MeshError::DegenerateCurve { shape: t.name.clone(), at: c.from() });
                }
                let n = (c.length() / scale * 256.0).ceil().clamp(8.0, 4096.0) as usize;
                for k in 0..=n {
                    let q = c.point_at(k as f64 / n as f64);
                    if self.symmetry == Symmetry::Axisymmetric && q[0] < -tol {
                        return Err(MeshError::NegativeRadius { shape: t.name.clone(), at: q });
                    }
                    if !dom.contains(q) && dom.distance(q) > 1e-6 * scale {
                        return Err(MeshError::OutsideDomain {
                            shape: t.name.clone(),
                            domain: self.shapes[0].name.clone(),
                            at: q,
                        });
                    }
                }
            }
        }
        for (i, p) in self.size_points.iter().enumerate() {
            if !(p.size_m.is_finite() && p.size_m > 0.0 && p.at.iter().all(|v| v.is_finite())) {
                return Err(MeshError::BadNumber {
                    shape: "mesh.point".into(),
                    what: "point size".into(),
                    value: p.size_m,
                });
            }
            let dom = &self.shapes[0].outline;
            if !dom.contains(p.at) && dom.distance(p.at) > 1e-9 * scale {
                return Err(MeshError::OutsideDomain {
                    shape: format!("size point #{}", i + 1),
                    domain: self.shapes[0].name.clone(),
                    at: p.at,
                });
            }
        }
        Ok(())
    }
}

/// Centre and radius of the domain's outline if it is a circle (planar) or a half circle
/// on the axis (axisymmetric); otherwise an error naming the domain.
pub(crate) fn domain_circle(geo: &Geometry) -> Result<(Xy, f64), MeshError> {
    let dom = &geo.shapes[0];
    let bad = || MeshError::OpenBoundaryShape { shape: dom.name.clone() };
    let mut circle: Option<(Xy, f64)> = None;
    for c in dom.outline.curves() {
        match *c {
            Curve::Arc { center, radius, .. } => match circle {
                None => circle = Some((center, radius)),
                Some((c0, r0)) => {
                    let tol = 1e-9 * r0;
                    if (c0[0] - center[0]).abs() > tol || (c0[1] - center[1]).abs() > tol || (r0 - radius).abs() > tol {
                        return Err(bad());
                    }
                }
            },
            Curve::Line { from, to } => {
                // Only the axis segment of an axisymmetric half disc.
                if geo.symmetry != Symmetry::Axisymmetric || from[0].abs() > 1e-12 || to[0].abs() > 1e-12 {
                    return Err(bad());
                }
            }
        }
    }
    let (c, r) = circle.ok_or_else(bad)?;
    if geo.symmetry == Symmetry::Axisymmetric && c[0].abs() > 1e-9 * r {
        return Err(bad());
    }
    Ok((c, r))
}

/// First crossing of two non-adjacent edges of the closed polygon `pts`, if any.
fn self_intersection(pts: &[Xy], tol: f64) -> Option<Xy> {
    let n = pts.len();
    for i in 0..n {
        let a = pts[i];
        let b = pts[(i + 1) % n];
        for j in (i + 1)..n {
            if j == i + 1 || (i == 0 && j == n - 1) {
                continue;
            }
            let c = pts[j];
            let d = pts[(j + 1) % n];
            if let Some(p) = segment_intersection(a, b, c, d, tol) {
                return Some(p);
            }
        }
    }
    None
}

/// Intersection point of segments `ab` and `cd` (touching counts), if any.
pub(crate) fn segment_intersection(a: Xy, b: Xy, c: Xy, d: Xy, tol: f64) -> Option<Xy> {
    let r = sub(b, a);
    let s = sub(d, c);
    let den = cross(r, s);
    let qp = sub(c, a);
    let lr = norm(r);
    let ls = norm(s);
    if den.abs() <= 1e-14 * lr * ls {
        // Parallel: overlapping if collinear and the projections overlap.
        if cross(qp, r).abs() > tol * lr {
            return None;
        }
        let t0 = dot(qp, r) / (lr * lr);
        let t1 = dot(sub(d, a), r) / (lr * lr);
        let (lo, hi) = (t0.min(t1), t0.max(t1));
        if hi < -tol / lr || lo > 1.0 + tol / lr {
            return None;
        }
        let t = lo.max(0.0);
        return Some([a[0] + t * r[0], a[1] + t * r[1]]);
    }
    let t = cross(qp, s) / den;
    let u = cross(qp, r) / den;
    let et = tol / lr;
    let eu = tol / ls;
    if t >= -et && t <= 1.0 + et && u >= -eu && u <= 1.0 + eu {
        Some([a[0] + t * r[0], a[1] + t * r[1]])
    } else {
        None
    }
}

pub(crate) fn sub(a: Xy, b: Xy) -> Xy {
    [a[0] - b[0], a[1] - b[1]]
}
pub(crate) fn dot(a: Xy, b: Xy) -> f64 {
    a[0] * b[0] + a[1] * b[1]
}
pub(crate) fn cross(a: Xy, b: Xy) -> f64 {
    a[0] * b[1] - a[1] * b[0]
}
/// Euclidean length. A plain square root, not `hypot`: model coordinates in metres are far
/// from overflow, and the mesher calls this in its inner loops (libm's `hypot` was 5 % of a
/// `check` run's samples).
pub(crate) fn norm(a: Xy) -> f64 {
    (a[0] * a[0] + a[1] * a[1]).sqrt()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn arc_through_picks_centre_side() {
        // Quarter circle of radius 1 from (1,0) to (0,1) counter-clockwise: centre at origin.
        let c = Curve::arc_through("t", [1.0, 0.0], [0.0, 1.0], 1.0, true, false).unwrap();
        match c {
            Curve::Arc { center, sweep, .. } => {
                assert!(norm(center) < 1e-12);
                assert!((sweep - PI / 2.0).abs() < 1e-12);
            }
            _ => unreachable!(),
        }
        let big = Curve::arc_through("t", [1.0, 0.0], [0.0, 1.0], 1.0, true, true).unwrap();
        if let Curve::Arc { sweep, .. } = big {
            assert!((sweep - 1.5 * PI).abs() < 1e-12);
        }
        assert!(matches!(
            Curve::arc_through("t", [0.0, 0.0], [2.0, 0.0], 0.9, true, false),
            Err(MeshError::ArcTooShort { .. })
        ));
    }

    #[test]
    fn exact_areas() {
        // Circle area πr², rounded rectangle area w·h − (4 − π)r² (exact geometry).
        let c = Outline::circle("c", [1.0, 2.0], 0.5).unwrap();
        assert!((c.signed_area() - PI * 0.25).abs() < 8.0 * f64::EPSILON);
        let r = Outline::rectangle("r", [0.0, 0.0], [4.0, 2.0], 0.5).unwrap();
        assert!((r.signed_area() - (8.0 - (4.0 - PI) * 0.25)).abs() < 1e-13);
    }

    #[test]
    fn containment_with_arcs() {
        let r = Outline::rectangle("r", [0.0, 0.0], [4.0, 2.0], 0.5).unwrap();
        assert!(r.contains([2.0, 1.0]));
        // Just outside the fillet near the corner, inside the bounding box.
        assert!(!r.contains([0.05, 0.05]));
        assert!(r.contains([0.2, 0.2]));
        // On the height of the arc's tangent point (ray passes through a joint).
        assert!(r.contains([1.0, 0.5]));
        let c = Outline::circle("c", [0.0, 0.0], 1.0).unwrap();
        assert!(c.contains([0.0, 0.0]));
        assert!(c.contains([0.99, 0.0]));
        assert!(!c.contains([1.01, 0.0]));
    }
}
