//! The element size wanted at every point: global, per shape, at points, along small-radius
//! arcs, and graded towards singular points.
//!
//! # Algorithm
//! The size field is the minimum over *sources*, each growing away from where it applies at
//! a bounded rate, so that neighbouring elements differ in size by at most the gradation
//! factor g (default 1.3):
//!
//! ```text
//! h(x) = max(h_floor, min( h_max, min_s [h_s + (g − 1)·d_s(x)] , min_c h_c(x) ))
//! ```
//!
//! where `d_s(x)` is the distance from x to source s (a shape's area, a point, an arc).
//! A singular point c of exponent λ, for elements of order p, is graded as
//!
//! ```text
//! h_c(r) = max(h₀·(r/R)^(1−μ), r₀)  for r < R,   h₀ + (g − 1)(r − R)  beyond,   μ = f·λ/p,
//! ```
//!
//! with r the distance to the point, h₀ the size the other sources ask for there, R the
//! grading radius (half the shortest piece meeting at the point, so it stays fixed under
//! refinement, but at least four sizes h₀, so that the law takes effect next to short
//! pieces; see the `grading` module), and f < 1 the grading fraction (default 0.85). The innermost size
//! r₀ = R·(h₀/R)^(1/μ) is where the law meets h = r: the graded meshes of the theory keep
//! the elements within r₀ of the point at size r₀ (Apel, Sändig & Whiteman 1996), and
//! without it the law would drive the size at the point down to the floor, whose tiny
//! elements cost unknowns and then limit the accuracy (quadratic elements on the
//! L-shaped benchmark levelled off near 3·10⁻⁵). Babuška, Kellogg and
//! Pitkäranta showed that meshes graded with μ < λ/p restore the optimal convergence rate
//! O(N^(−p/2)) of the energy error for a singularity r^λ; with a uniform mesh the rate drops to
//! O(N^(−λ/2)).
//!
//! # References
//! - I. Babuška, R. B. Kellogg, J. Pitkäranta, "Direct and inverse error estimates for finite
//!   elements with mesh refinement", Numer. Math. 33 (1979) 447–471,
//!   doi:10.1007/BF01399326.
//! - T. Apel, A.-M. Sändig, J. R. Whiteman, "Graded mesh refinement and error estimates for
//!   finite element solutions of elliptic boundary value problems in non-smooth domains",
//!   Math. Methods Appl. Sci. 19 (1996) 63–85.

pub use crate::error::SizeSource;
use crate::geometry::{norm, sub, Curve, Outline, Xy};

/// One contribution to the size field.
#[derive(Clone, Debug)]
enum Source {
    Inside { outline: Outline, bbox: [f64; 4], h: f64 },
    Point { at: Xy, h: f64 },
    Curve { curve: Curve, bbox: [f64; 4], h: f64 },
    Corner { at: Xy, h0: f64, radius: f64, mu: f64 },
    Background(std::sync::Arc<BackgroundSize>),
}

/// Element sizes given on the triangles of an earlier mesh (what an error estimate asks
/// for); points outside every triangle get no size from it.
///
/// The sizes are turned into a continuous field: each vertex takes the geometric mean of
/// the sizes of its triangles (the smallest of them refined a ring of triangles around
/// every request and cost about twice the unknowns on the adaptive L-shape benchmark), the
/// vertex sizes are limited so that along every edge they grow by at
/// most the field's gradation slope (a shortest-path pass over the edges, run by
/// [`SizeField::add_background`]), and a point takes the linear interpolation of its
/// triangle's vertex sizes, or the size of one of its vertices grown at the gradation slope
/// over the distance to it, whichever is smaller. A size per triangle sampled as it stands would be
/// discontinuous, depend on which triangle answers at shared edges and vertices, and let
/// a small request on a small triangle (the one at a singular corner) slip between the
/// sample points of the seeding and of the boundary spacing.
#[derive(Clone, Debug)]
pub struct BackgroundSize {
    nodes: Vec<Xy>,
    triangles: Vec<[u32; 3]>,
    /// Size per vertex.
    vertex_sizes: Vec<f64>,
    /// Growth of the size per metre away from a vertex (the gradation slope).
    slope: f64,
    /// Triangles around each vertex (`Mesh::vertex_triangles`).
    star: (Vec<u32>, Vec<u32>),
    grid: crate::grid::BucketGrid,
}

impl BackgroundSize {
    /// Sizes `sizes_m[t]` on the triangles of `mesh` (its vertex triangles; curved edges are
    /// taken straight).
    ///
    /// # Panics
    /// If `sizes_m` does not have one entry per triangle.
    #[track_caller]
    pub fn new(mesh: &crate::Mesh, sizes_m: Vec<f64>) -> BackgroundSize {
        assert_eq!(sizes_m.len(), mesh.triangles.len(), "one size per triangle");
        let nv = mesh.num_vertices as usize;
        let nodes = mesh.nodes[..nv].to_vec();
        // Geometric mean of the sizes of the vertex's triangles.
        let mut log_sum = vec![0.0; nv];
        let mut count = vec![0u32; nv];
        for (tri, &h) in mesh.triangles.iter().zip(&sizes_m) {
            for &v in tri {
                log_sum[v as usize] += h.ln();
                count[v as usize] += 1;
            }
        }
        let vertex_sizes: Vec<f64> = log_sum
            .iter()
            .zip(&count)
            .map(|(&l, &c)| if c == 0 { f64::INFINITY } else { (l / c as f64).exp() })
            .collect();
        let grid = crate::grid::triangle_grid(mesh, 0.0);
        BackgroundSize {
            nodes,
            triangles: mesh.triangles.clone(),
            vertex_sizes,
            slope: f64::INFINITY,
            star: mesh.vertex_triangles(),
            grid,
        }
    }

    /// Limits the vertex sizes so that they grow by at most `slope` per metre along every
    /// edge: Dijkstra's shortest paths from every vertex at once, with h(v) = min over u of
    /// h(u) + slope·|uv|.
    pub(crate) fn limit_gradation(&mut self, slope: f64) {
        self.slope = slope;
        use std::cmp::Reverse;
        use std::collections::BinaryHeap;
        let nv = self.nodes.len();
        // Sizes are positive, so their bit patterns order like the values.
        let mut heap: BinaryHeap<Reverse<(u64, u32)>> =
            (0..nv).map(|v| Reverse((self.vertex_sizes[v].to_bits(), v as u32))).collect();
        while let Some(Reverse((bits, u))) = heap.pop() {
            let hu = f64::from_bits(bits);
            if hu > self.vertex_sizes[u as usize] {
                continue;
            }
            let pu = self.nodes[u as usize];
            let (start, around) = &self.star;
            for &t in &around[start[u as usize] as usize..start[u as usize + 1] as usize] {
                for w in self.triangles[t as usize] {
                    let cand = hu + slope * norm(sub(self.nodes[w as usize], pu));
                    if cand < self.vertex_sizes[w as usize] {
                        self.vertex_sizes[w as usize] = cand;
                        heap.push(Reverse((cand.to_bits(), w)));
                    }
                }
            }
        }
    }

    /// The size at `p`, interpolated in the triangle containing it, if any.
    pub fn size_at(&self, p: Xy) -> Option<f64> {
        let mut found = None;
        self.grid.for_each_near(p, 0.0, |t| {
            if found.is_some() {
                return;
            }
            let tri = self.triangles[t as usize];
            let [a, b, c] = tri.map(|i| self.nodes[i as usize]);
            let d = (b[0] - a[0]) * (c[1] - a[1]) - (c[0] - a[0]) * (b[1] - a[1]);
            let l1 = ((b[0] - p[0]) * (c[1] - p[1]) - (c[0] - p[0]) * (b[1] - p[1])) / d;
            let l2 = ((c[0] - p[0]) * (a[1] - p[1]) - (a[0] - p[0]) * (c[1] - p[1])) / d;
            let l3 = 1.0 - l1 - l2;
            if l1 >= -1e-9 && l2 >= -1e-9 && l3 >= -1e-9 {
                let h = tri.map(|i| self.vertex_sizes[i as usize]);
                let (l1, l2, l3) = (l1.clamp(0.0, 1.0), l2.clamp(0.0, 1.0), l3.clamp(0.0, 1.0));
                let linear = (l1 * h[0] + l2 * h[1] + l3 * h[2]) / (l1 + l2 + l3);
                // The cone of each vertex: a small size at a vertex (a singular point) grows
                // at the gradation slope, not across the whole triangle as the linear
                // interpolation would, which the seeding could not follow.
                let cone = (0..3).map(|k| h[k] + self.slope * norm(sub(p, [a, b, c][k]))).fold(f64::INFINITY, f64::min);
                found = Some(linear.min(cone));
            }
        });
        found
    }
}

/// Element edge length wanted at every point, metres.
#[derive(Clone, Debug)]
pub struct SizeField {
    h_max: f64,
    h_floor: f64,
    slope: f64,
    /// Each source with what it stands for (the setting a refusal names).
    sources: Vec<(Source, SizeSource)>,
    /// The index of the first earlier mesh's request among the sources, looked up first.
    first_background: Option<usize>,
}

impl SizeField {
    /// A uniform field of size `h_max` with the given gradation factor `g` (> 1) and floor.
    ///
    /// # Panics
    /// If the sizes are not positive or `g ≤ 1`.
    #[track_caller]
    pub fn uniform(h_max: f64, gradation: f64, h_floor: f64) -> SizeField {
        assert!(h_max > 0.0 && h_floor > 0.0 && gradation > 1.0, "invalid size field parameters");
        SizeField { h_max, h_floor, slope: gradation - 1.0, sources: Vec::new(), first_background: None }
    }

    /// Adds a size `h` inside (and on) the closed outline of shape `shape` (its index).
    pub fn add_inside(&mut self, shape: usize, outline: &Outline, h: f64) {
        let bbox = outline.bbox();
        self.sources.push((Source::Inside { outline: outline.clone(), bbox, h }, SizeSource::Shape(shape)));
    }

    /// Adds a size `h` at a point (size point `index` of the geometry).
    pub fn add_point(&mut self, index: usize, at: Xy, h: f64) {
        self.sources.push((Source::Point { at, h }, SizeSource::Point(index)));
    }

    /// Adds a size `h` along a curve.
    pub(crate) fn add_curve(&mut self, curve: Curve, h: f64) {
        let bbox = curve.bbox();
        self.sources.push((Source::Curve { curve, bbox, h }, SizeSource::Arc));
    }

    /// Adds sizes given on an earlier mesh (the adaptive loop's request).
    pub fn add_background(&mut self, mut bg: BackgroundSize) {
        bg.limit_gradation(self.slope);
        self.first_background.get_or_insert(self.sources.len());
        self.sources.push((Source::Background(std::sync::Arc::new(bg)), SizeSource::Background));
    }

    /// Adds grading towards singular point `point` (its index among the mesh's singular
    /// points) at `at`: `h₀·(r/R)^(1−μ)` inside radius `R`, never below the innermost size
    /// `R·(h₀/R)^(1/μ)`.
    pub fn add_corner(&mut self, point: usize, at: Xy, h0: f64, radius: f64, mu: f64) {
        self.sources.push((Source::Corner { at, h0, radius, mu }, SizeSource::Corner(point)));
    }

    /// [`SizeField::size_below`] (with the floor applied) and what asks for it.
    pub(crate) fn size_and_source_below(&self, p: Xy, cap: f64) -> (f64, SizeSource) {
        let (h, source) = self.smallest_source(p, cap);
        match source {
            _ if h < self.h_floor => (self.h_floor, SizeSource::MinSize),
            Some(i) => (h, self.sources[i].1),
            None => (h, SizeSource::MaxSize),
        }
    }

    /// True when sizes from an earlier mesh are part of the field.
    pub fn has_background(&self) -> bool {
        self.first_background.is_some()
    }

    /// The smallest size the field may return.
    pub fn floor(&self) -> f64 {
        self.h_floor
    }

    /// The largest size the field may return.
    pub fn max(&self) -> f64 {
        self.h_max
    }

    /// Wanted element edge length at `p`.
    pub fn size_at(&self, p: Xy) -> f64 {
        self.size_below(p, self.h_max).max(self.h_floor)
    }

    /// Growth of the size per unit distance away from a source (gradation − 1).
    pub(crate) fn slope(&self) -> f64 {
        self.slope
    }

    /// The smallest size any source asks for at `p`, or `cap` if none asks for less (the
    /// global size and the floor do not enter). Away from singular points each source
    /// grows at most at [`SizeField::slope`] per unit distance, so where this is at least
    /// the global size plus slope·r, the whole disc of radius r around `p` is at the global
    /// size.
    pub(crate) fn size_below(&self, p: Xy, cap: f64) -> f64 {
        self.smallest_source(p, cap).0
    }

    /// [`SizeField::size_below`] with the index of the source that gives it (`None`: the cap).
    fn smallest_source(&self, p: Xy, cap: f64) -> (f64, Option<usize>) {
        // The earlier mesh's request first: usually the smallest size, it bounds the answer
        // from the start, so that the bounding boxes below skip most outlines and curves
        // without their distance. A source is skipped only when its lower bound exceeds
        // that bound (it can then neither win nor tie), so the answer and the source named
        // are those of the plain scan in order.
        let first_background = self.first_background;
        let background = first_background.and_then(|i| match &self.sources[i].0 {
            Source::Background(bg) => bg.size_at(p),
            _ => None,
        });
        let bound = background.map_or(cap, |b| b.min(cap));
        let mut h = cap;
        let mut which = None;
        // Cheap lower bound on the distance to a bounding box.
        let box_distance = |bbox: &[f64; 4]| {
            let dx = (bbox[0] - p[0]).max(p[0] - bbox[2]).max(0.0);
            let dy = (bbox[1] - p[1]).max(p[1] - bbox[3]).max(0.0);
            (dx * dx + dy * dy).sqrt()
        };
        for (i, (s, _)) in self.sources.iter().enumerate() {
            let v = match s {
                Source::Inside { outline, bbox, h: hs } => {
                    let lb = box_distance(bbox);
                    let least = *hs + self.slope * lb;
                    if least >= h || least > bound {
                        continue;
                    }
                    if lb == 0.0 && outline.contains_in_bbox(p) {
                        *hs
                    } else {
                        *hs + self.slope * outline.distance(p)
                    }
                }
                Source::Point { at, h } => *h + self.slope * norm(sub(p, *at)),
                Source::Curve { curve, bbox, h: hc } => {
                    let least = *hc + self.slope * box_distance(bbox);
                    if least >= h || least > bound {
                        continue;
                    }
                    *hc + self.slope * curve.distance(p).0
                }
                Source::Background(bg) => {
                    let v = if Some(i) == first_background { background } else { bg.size_at(p) };
                    match v {
                        Some(v) => v,
                        None => continue,
                    }
                }
                Source::Corner { at, h0, radius, mu } => {
                    let r = norm(sub(p, *at));
                    if r < *radius {
                        let innermost = radius * (h0 / radius).powf(1.0 / mu);
                        (h0 * (r / radius).powf(1.0 - mu)).max(innermost)
                    } else {
                        h0 + self.slope * (r - radius)
                    }
                }
            };
            if v < h {
                h = v;
                which = Some(i);
            }
        }
        (h, which)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn corner_grading_law() {
        let mut f = SizeField::uniform(1.0, 1.3, 1e-9);
        f.add_corner(0, [0.0, 0.0], 0.1, 0.5, 0.3);
        // Innermost size r₀ = R·(h₀/R)^(1/μ) = 0.5·0.2^(10/3) ≈ 2.34e-3, where the law meets h = r.
        let r0 = 0.5 * 0.2f64.powf(1.0 / 0.3);
        assert!((r0 - 0.1 * (r0 / 0.5_f64).powf(0.7)).abs() < 1e-12);
        for r in [3e-3, 1e-2, 0.1, 0.4] {
            let want = 0.1 * (r / 0.5_f64).powf(0.7);
            assert!((f.size_at([r, 0.0]) - want).abs() <= 4.0 * f64::EPSILON * want);
        }
        for r in [0.0, 1e-6, 1e-3, 2e-3] {
            assert!((f.size_at([r, 0.0]) - r0).abs() <= 1e-15, "r {r}: {}", f.size_at([r, 0.0]));
        }
        // Beyond R the size grows linearly with slope g − 1 and is capped by h_max.
        assert!((f.size_at([1.5, 0.0]) - (0.1 + 0.3 * 1.0)).abs() < 1e-12);
        assert_eq!(f.size_at([100.0, 0.0]), 1.0);
    }

    #[test]
    fn inside_and_gradation() {
        let sq = Outline::rectangle("s", [0.0, 0.0], [1.0, 1.0], 0.0).unwrap();
        let mut f = SizeField::uniform(1.0, 1.2, 1e-9);
        f.add_inside(0, &sq, 0.05);
        assert_eq!(f.size_at([0.5, 0.5]), 0.05);
        assert!((f.size_at([1.5, 0.5]) - (0.05 + 0.2 * 0.5)).abs() < 1e-12);
    }
}
