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
//! h_c(r) = h₀·(r/R)^(1−μ)  for r < R,      h₀ + (g − 1)(r − R)  beyond,      μ = f·λ/p,
//! ```
//!
//! with r the distance to the point, h₀ the size the other sources ask for there, R the
//! grading radius (half the shortest piece meeting at the point, so it stays fixed under
//! refinement), and f < 1 the grading fraction (default 0.85). Babuška, Kellogg and
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

use crate::geometry::{norm, sub, Curve, Outline, Xy};

/// One contribution to the size field.
#[derive(Clone, Debug)]
enum Source {
    Inside { outline: Outline, bbox: [f64; 4], h: f64 },
    Point { at: Xy, h: f64 },
    Curve { curve: Curve, h: f64 },
    Corner { at: Xy, h0: f64, radius: f64, mu: f64 },
    Background(std::sync::Arc<BackgroundSize>),
}

/// Element sizes given on the triangles of an earlier mesh (what an error estimate asks
/// for); points outside every triangle get no size from it.
#[derive(Clone, Debug)]
pub struct BackgroundSize {
    nodes: Vec<Xy>,
    triangles: Vec<[u32; 3]>,
    sizes: Vec<f64>,
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
        let nodes = mesh.nodes.clone();
        let grid = crate::grid::triangle_grid(mesh, 0.0);
        BackgroundSize { nodes, triangles: mesh.triangles.clone(), sizes: sizes_m, grid }
    }

    /// The size of the triangle containing `p`, if any.
    pub fn size_at(&self, p: Xy) -> Option<f64> {
        let mut found = None;
        self.grid.for_each_near(p, 0.0, |t| {
            if found.is_some() {
                return;
            }
            let [a, b, c] = self.triangles[t as usize].map(|i| self.nodes[i as usize]);
            let d = (b[0] - a[0]) * (c[1] - a[1]) - (c[0] - a[0]) * (b[1] - a[1]);
            let l1 = ((b[0] - p[0]) * (c[1] - p[1]) - (c[0] - p[0]) * (b[1] - p[1])) / d;
            let l2 = ((c[0] - p[0]) * (a[1] - p[1]) - (a[0] - p[0]) * (c[1] - p[1])) / d;
            let l3 = 1.0 - l1 - l2;
            if l1 >= -1e-9 && l2 >= -1e-9 && l3 >= -1e-9 {
                found = Some(self.sizes[t as usize]);
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
    sources: Vec<Source>,
}

impl SizeField {
    /// A uniform field of size `h_max` with the given gradation factor `g` (> 1) and floor.
    ///
    /// # Panics
    /// If the sizes are not positive or `g ≤ 1`.
    #[track_caller]
    pub fn uniform(h_max: f64, gradation: f64, h_floor: f64) -> SizeField {
        assert!(h_max > 0.0 && h_floor > 0.0 && gradation > 1.0, "invalid size field parameters");
        SizeField { h_max, h_floor, slope: gradation - 1.0, sources: Vec::new() }
    }

    /// Adds a size `h` inside (and on) a closed outline.
    pub fn add_inside(&mut self, outline: &Outline, h: f64) {
        let bbox = outline.bbox();
        self.sources.push(Source::Inside { outline: outline.clone(), bbox, h });
    }

    /// Adds a size `h` at a point.
    pub fn add_point(&mut self, at: Xy, h: f64) {
        self.sources.push(Source::Point { at, h });
    }

    /// Adds a size `h` along a curve.
    pub(crate) fn add_curve(&mut self, curve: Curve, h: f64) {
        self.sources.push(Source::Curve { curve, h });
    }

    /// Adds sizes given on an earlier mesh (the adaptive loop's request).
    pub fn add_background(&mut self, bg: BackgroundSize) {
        self.sources.push(Source::Background(std::sync::Arc::new(bg)));
    }

    /// Adds grading towards a point: `h₀·(r/R)^(1−μ)` inside radius `R`.
    pub fn add_corner(&mut self, at: Xy, h0: f64, radius: f64, mu: f64) {
        self.sources.push(Source::Corner { at, h0, radius, mu });
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
        let mut h = self.h_max;
        for s in &self.sources {
            let v = match s {
                Source::Inside { outline, bbox, h: hs } => {
                    // Cheap lower bound on the distance first: the bounding box.
                    let dx = (bbox[0] - p[0]).max(p[0] - bbox[2]).max(0.0);
                    let dy = (bbox[1] - p[1]).max(p[1] - bbox[3]).max(0.0);
                    let lb = dx.hypot(dy);
                    if *hs + self.slope * lb >= h {
                        continue;
                    }
                    if lb == 0.0 && outline.contains(p) {
                        *hs
                    } else {
                        *hs + self.slope * outline.distance(p)
                    }
                }
                Source::Point { at, h } => *h + self.slope * norm(sub(p, *at)),
                Source::Curve { curve, h } => *h + self.slope * curve.distance(p).0,
                Source::Background(bg) => match bg.size_at(p) {
                    Some(v) => v,
                    None => continue,
                },
                Source::Corner { at, h0, radius, mu } => {
                    let r = norm(sub(p, *at));
                    if r < *radius {
                        h0 * (r / radius).powf(1.0 - mu)
                    } else {
                        h0 + self.slope * (r - radius)
                    }
                }
            };
            h = h.min(v);
        }
        h.max(self.h_floor)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn corner_grading_law() {
        let mut f = SizeField::uniform(1.0, 1.3, 1e-9);
        f.add_corner([0.0, 0.0], 0.1, 0.5, 0.3);
        for r in [1e-4, 1e-3, 1e-2, 0.1, 0.4] {
            let want = 0.1 * (r / 0.5_f64).powf(0.7);
            assert!((f.size_at([r, 0.0]) - want).abs() <= 4.0 * f64::EPSILON * want);
        }
        // Beyond R the size grows linearly with slope g − 1 and is capped by h_max.
        assert!((f.size_at([1.5, 0.0]) - (0.1 + 0.3 * 1.0)).abs() < 1e-12);
        assert_eq!(f.size_at([100.0, 0.0]), 1.0);
    }

    #[test]
    fn inside_and_gradation() {
        let sq = Outline::rectangle("s", [0.0, 0.0], [1.0, 1.0], 0.0).unwrap();
        let mut f = SizeField::uniform(1.0, 1.2, 1e-9);
        f.add_inside(&sq, 0.05);
        assert_eq!(f.size_at([0.5, 0.5]), 0.05);
        assert!((f.size_at([1.5, 0.5]) - (0.05 + 0.2 * 0.5)).abs() < 1e-12);
    }
}
