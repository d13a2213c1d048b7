//! A uniform bucket grid over straight segments, for nearest-segment queries.

use crate::geometry::{dot, norm, sub, Xy};

/// Segments bucketed by the grid cells their bounding boxes overlap.
#[derive(Clone, Debug)]
pub(crate) struct SegmentGrid {
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

impl SegmentGrid {
    /// Builds the grid over `segs` (pairs of point indices into `pts`) inside `bbox`.
    pub fn new(pts: &[Xy], segs: &[[u32; 2]], bbox: [f64; 4]) -> SegmentGrid {
        let w = (bbox[2] - bbox[0]).max(1e-300);
        let h = (bbox[3] - bbox[1]).max(1e-300);
        // About one segment per cell, at most 4096 cells a side.
        let n = segs.len().max(1) as f64;
        let cell = ((w * h) / n).sqrt().max(w.max(h) / 4096.0);
        let nx = ((w / cell).ceil() as usize).max(1);
        let ny = ((h / cell).ceil() as usize).max(1);
        let mut count = vec![0u32; nx * ny + 1];
        let range = |s: &[u32; 2]| {
            let (a, b) = (pts[s[0] as usize], pts[s[1] as usize]);
            let ix0 = (((a[0].min(b[0]) - bbox[0]) / cell).floor().max(0.0) as usize).min(nx - 1);
            let ix1 = (((a[0].max(b[0]) - bbox[0]) / cell).floor().max(0.0) as usize).min(nx - 1);
            let iy0 = (((a[1].min(b[1]) - bbox[1]) / cell).floor().max(0.0) as usize).min(ny - 1);
            let iy1 = (((a[1].max(b[1]) - bbox[1]) / cell).floor().max(0.0) as usize).min(ny - 1);
            (ix0, ix1, iy0, iy1)
        };
        for s in segs {
            let (ix0, ix1, iy0, iy1) = range(s);
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
        for (si, s) in segs.iter().enumerate() {
            let (ix0, ix1, iy0, iy1) = range(s);
            for iy in iy0..=iy1 {
                for ix in ix0..=ix1 {
                    let c = iy * nx + ix;
                    items[fill[c] as usize] = si as u32;
                    fill[c] += 1;
                }
            }
        }
        SegmentGrid { x0: bbox[0], y0: bbox[1], cell, nx, ny, start: count, items }
    }

    /// Calls `f(segment index)` for every segment bucketed in a cell that overlaps the
    /// square of half-width `r` around `p` (a segment may be reported more than once).
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
