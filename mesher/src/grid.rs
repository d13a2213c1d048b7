//! A uniform bucket grid over axis-aligned boxes, for nearest-item and point-location
//! queries (boundary segments in the mesher, triangles in the engine's probes).
//!
//! # References
//! - M. de Berg, O. Cheong, M. van Kreveld, M. Overmars, *Computational Geometry: Algorithms
//!   and Applications*, 3rd ed., Springer 2008, doi:10.1007/978-3-540-77974-2, ch. 5 and 14
//!   (range searching and spatial subdivisions; a uniform grid suits items of similar size,
//!   as a graded mesh's are within a few cells).

use crate::geometry::{dot, norm, sub, Xy};

/// Items (by index) bucketed by the grid cells their bounding boxes overlap.
#[derive(Clone, Debug)]
pub struct BucketGrid {
    x0: f64,
    y0: f64,
    cell: f64,
    nx: usize,
    ny: usize,
    start: Vec<u32>,
    items: Vec<u32>,
}

pub(crate) fn point_segment_distance(p: Xy, a: Xy, b: Xy) -> f64 {
    let d = sub(b, a);
    let l2 = dot(d, d);
    let t = if l2 > 0.0 { (dot(sub(p, a), d) / l2).clamp(0.0, 1.0) } else { 0.0 };
    norm(sub(p, [a[0] + t * d[0], a[1] + t * d[1]]))
}

impl BucketGrid {
    /// Buckets items given by their bounding boxes `[xmin, ymin, xmax, ymax]` over the
    /// region `bbox`, with about one item per cell (at most 4096 cells a side).
    pub fn new(boxes: &[[f64; 4]], bbox: [f64; 4]) -> BucketGrid {
        let w = (bbox[2] - bbox[0]).max(1e-300);
        let h = (bbox[3] - bbox[1]).max(1e-300);
        let n = boxes.len().max(1) as f64;
        let cell = ((w * h) / n).sqrt().max(w.max(h) / 4096.0);
        let nx = ((w / cell).ceil() as usize).max(1);
        let ny = ((h / cell).ceil() as usize).max(1);
        let index = |v: f64, o: f64, n: usize| (((v - o) / cell).floor().max(0.0) as usize).min(n - 1);
        let range = |b: &[f64; 4]| {
            (index(b[0], bbox[0], nx), index(b[2], bbox[0], nx), index(b[1], bbox[1], ny), index(b[3], bbox[1], ny))
        };
        let mut count = vec![0u32; nx * ny + 1];
        for b in boxes {
            let (ix0, ix1, iy0, iy1) = range(b);
            for iy in iy0..=iy1 {
                for ix in ix0..=ix1 {
                    count[iy * nx + ix + 1] += 1;
                }
            }
        }
        for k in 1..count.len() {
            count[k] += count[k - 1];
        }
        let mut fill = count.clone();
        let mut items = vec![0u32; *count.last().unwrap() as usize];
        for (i, b) in boxes.iter().enumerate() {
            let (ix0, ix1, iy0, iy1) = range(b);
            for iy in iy0..=iy1 {
                for ix in ix0..=ix1 {
                    let c = iy * nx + ix;
                    items[fill[c] as usize] = i as u32;
                    fill[c] += 1;
                }
            }
        }
        BucketGrid { x0: bbox[0], y0: bbox[1], cell, nx, ny, start: count, items }
    }

    /// Calls `f(item index)` for every item bucketed in a cell that overlaps the square
    /// of half-width `r` around `p` (an item may be reported more than once). Points
    /// outside the region are clamped to its border cells.
    pub fn for_each_near(&self, p: Xy, r: f64, mut f: impl FnMut(u32)) {
        let lo = |v: f64, o: f64, n: usize| (((v - o) / self.cell).floor().max(0.0) as usize).min(n - 1);
        let ix0 = lo(p[0] - r, self.x0, self.nx);
        let ix1 = lo(p[0] + r, self.x0, self.nx);
        let iy0 = lo(p[1] - r, self.y0, self.ny);
        let iy1 = lo(p[1] + r, self.y0, self.ny);
        for iy in iy0..=iy1 {
            for ix in ix0..=ix1 {
                let c = iy * self.nx + ix;
                for &s in &self.items[self.start[c] as usize..self.start[c + 1] as usize] {
                    f(s);
                }
            }
        }
    }
}

/// Bucket grid over straight segments (pairs of point indices).
pub(crate) fn segment_grid(pts: &[Xy], segs: &[[u32; 2]], bbox: [f64; 4]) -> BucketGrid {
    let boxes: Vec<[f64; 4]> = segs
        .iter()
        .map(|s| {
            let (a, b) = (pts[s[0] as usize], pts[s[1] as usize]);
            [a[0].min(b[0]), a[1].min(b[1]), a[0].max(b[0]), a[1].max(b[1])]
        })
        .collect();
    BucketGrid::new(&boxes, bbox)
}

/// Bucket grid over the vertex triangles of `mesh`, each bounding box padded by `pad` times
/// its larger side (curved P2 edges bulge a few per cent beyond their vertices), over the
/// union of the boxes: point location for size lookups and field probes.
pub fn triangle_grid(mesh: &crate::Mesh, pad: f64) -> BucketGrid {
    let mut bb = [f64::INFINITY, f64::INFINITY, f64::NEG_INFINITY, f64::NEG_INFINITY];
    let boxes: Vec<[f64; 4]> = mesh
        .triangles
        .iter()
        .map(|t| {
            let p = t.map(|i| mesh.nodes[i as usize]);
            let (xmin, xmax) = (p[0][0].min(p[1][0]).min(p[2][0]), p[0][0].max(p[1][0]).max(p[2][0]));
            let (ymin, ymax) = (p[0][1].min(p[1][1]).min(p[2][1]), p[0][1].max(p[1][1]).max(p[2][1]));
            let d = pad * (xmax - xmin).max(ymax - ymin);
            let b = [xmin - d, ymin - d, xmax + d, ymax + d];
            bb = [bb[0].min(b[0]), bb[1].min(b[1]), bb[2].max(b[2]), bb[3].max(b[3])];
            b
        })
        .collect();
    BucketGrid::new(&boxes, bb)
}
