//! Pictures of the part, for the report and `mesh --svg`: the mesh coloured by region, and
//! the field-strength map |E| with equipotential lines. Every picture has its canvas fitted
//! to the part (or to the zoomed window), axes in the model unit, a key (materials, or a
//! colour bar in kV/mm), the axis of symmetry marked, and every singular point and peak
//! labelled: labels that would overlap are moved aside on leader lines, never dropped.
//!
//! The frame (axes, ticks, caption) is drawn by plotters' SVG backend. Inside it the picture
//! is a PNG raster embedded as a data URI (region fill and mesh lines, or |E|), with the
//! outlines, equipotentials and marks on top as SVG.
//!
//! |E| is evaluated at each pixel centre inside its triangle: on P2 meshes as |∇φ_h| of the
//! quadratic potential (the finite-element field itself, linear within a triangle and
//! discontinuous across material interfaces as it should be); on P1 meshes from the recovered
//! nodal field interpolated linearly (the gradient of a P1 potential is flat per triangle).
//! The colour scale is viridis (Nuñez, Anderton & Renslow 2018, PLoS ONE 13(7) e0199239,
//! doi:10.1371/journal.pone.0199239, as plotters' `ViridisRGB`): perceptually uniform and
//! readable with the common colour-vision deficiencies. Equipotentials are contoured on the
//! four straight sub-triangles of each P2 triangle (the usual linear sub-division).

use crate::results::esc;
use crate::results::mesh::RegionReport;
use base64::Engine as _;
use plotters::prelude::*;
use plotters::style::colors::colormaps::ViridisRGB;
use serde_json::Value;
use std::fmt::Write as _;

/// What a boundary edge of the mesh is.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum EdgeKind {
    /// Outer boundary of the domain.
    Outer,
    /// Axis of symmetry (axisymmetric models).
    Axis,
    /// Conductor surface.
    Conductor,
    /// Interface between two dielectrics.
    Interface,
}

/// The key entry of one region.
#[derive(Clone, Debug)]
pub struct RegionKey {
    /// Shape name.
    pub name: String,
    /// Material name.
    pub material: String,
    /// Relative permittivity.
    pub permittivity: f64,
    /// False for the mapped open-boundary exterior (its coordinates are not physical).
    pub drawn: bool,
}

/// The mesh and potentials a picture is drawn from (coordinates in metres).
#[derive(Clone, Debug, Default)]
pub struct Part {
    /// Node coordinates.
    pub nodes: Vec<[f64; 2]>,
    /// Corner nodes of each triangle.
    pub tris: Vec<[u32; 3]>,
    /// Mid-side nodes of each triangle (edges 0–1, 1–2, 2–0); empty on P1 meshes.
    pub mids: Vec<[u32; 3]>,
    /// Region id of each triangle.
    pub region: Vec<u32>,
    /// Key entries by region id.
    pub keys: Vec<RegionKey>,
    /// Boundary and interface edges.
    pub edges: Vec<([u32; 2], EdgeKind)>,
    /// Potential per node, V (empty for a mesh picture).
    pub potential: Vec<f64>,
    /// Recovered field per node, V/m (used on P1 meshes; may be empty).
    pub recovered: Vec<[f64; 2]>,
    /// Axisymmetric (r, z) rather than planar (x, y).
    pub axisymmetric: bool,
    /// Metres per model unit.
    pub unit_m: f64,
    /// Model unit name.
    pub unit: String,
}

/// A labelled point on a picture.
#[derive(Clone, Debug)]
pub struct Mark {
    /// Label ("S1", "P2").
    pub label: String,
    /// Position, m.
    pub at: [f64; 2],
    /// A singular point (circle) rather than a peak (diamond).
    pub singular: bool,
}

/// A rectangle of the model plane, m.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Window {
    /// Left.
    pub x0: f64,
    /// Right.
    pub x1: f64,
    /// Bottom.
    pub y0: f64,
    /// Top.
    pub y1: f64,
}

impl Window {
    /// Width, m.
    pub fn width(&self) -> f64 {
        self.x1 - self.x0
    }
    /// Height, m.
    pub fn height(&self) -> f64 {
        self.y1 - self.y0
    }
    fn contains(&self, p: [f64; 2]) -> bool {
        (self.x0..=self.x1).contains(&p[0]) && (self.y0..=self.y1).contains(&p[1])
    }
}

/// Region fill colours of the mesh picture (light, distinct; the key names them).
const PALETTE: [(u8, u8, u8); 10] = [
    (207, 227, 245),
    (246, 220, 179),
    (213, 236, 194),
    (232, 209, 239),
    (249, 240, 176),
    (201, 236, 230),
    (244, 201, 201),
    (220, 220, 220),
    (224, 232, 184),
    (241, 216, 228),
];

fn hex((r, g, b): (u8, u8, u8)) -> String {
    format!("#{r:02x}{g:02x}{b:02x}")
}

impl Part {
    /// The part of a mesh (no potentials), keyed by the mesh report's regions.
    pub fn from_mesh(mesh: &mesher::Mesh, regions: &[RegionReport], unit_m: f64, unit: &str) -> Part {
        let mut keys =
            vec![
                RegionKey { name: String::new(), material: String::new(), permittivity: f64::NAN, drawn: true };
                mesh.shape_names.len() + 1
            ];
        for g in regions {
            if let Some(k) = keys.get_mut(g.id as usize) {
                *k = RegionKey {
                    name: g.name.clone(),
                    material: g.material.clone(),
                    permittivity: g.permittivity,
                    drawn: !g.exterior,
                };
            }
        }
        let edges = mesh
            .edges
            .iter()
            .map(|e| {
                let kind = match e.tag {
                    mesher::EdgeTag::Outer => EdgeKind::Outer,
                    mesher::EdgeTag::Axis => EdgeKind::Axis,
                    mesher::EdgeTag::Conductor(_) => EdgeKind::Conductor,
                    mesher::EdgeTag::Interface(..) => EdgeKind::Interface,
                };
                (e.nodes, kind)
            })
            .collect();
        Part {
            nodes: mesh.nodes.clone(),
            tris: mesh.triangles.clone(),
            mids: if mesh.order() == 2 { mesh.mid_nodes.clone() } else { Vec::new() },
            region: mesh.regions.clone(),
            keys,
            edges,
            potential: Vec::new(),
            recovered: Vec::new(),
            axisymmetric: mesh.symmetry == mesher::Symmetry::Axisymmetric,
            unit_m,
            unit: unit.to_string(),
        }
    }

    /// The part as a results folder holds it: `fields.vtu` (mesh, potentials, recovered
    /// field) and `results.json` (region names, symmetry, unit).
    ///
    /// # Errors
    /// A message naming what is missing or inconsistent.
    pub fn from_results(vtu: &[u8], results: &Value) -> Result<Part, String> {
        let m = &results["mesh"];
        let unit = m["length_unit"].as_str().unwrap_or("m").to_string();
        let unit_m = crate::plan::units(&unit).ok_or(format!("unknown length unit '{unit}' in results.json"))?.0;
        // The grid through the import reader (every length and node id checked there), the
        // point fields through the array reader (the grid reader keeps cell data only).
        let grid = mesher::read_grid(vtu).map_err(|e| format!("fields.vtu: {e}"))?;
        let cell = |name: &str| grid.cell_array(name).ok_or(format!("fields.vtu: no cell array '{name}'"));
        let (region, kind) = (cell("region")?, cell("edge_kind")?);
        let n = grid.points.len();
        let potential = mesher::read_vtu_array(vtu, Some("potential_V")).unwrap_or_default();
        let recovered = mesher::read_vtu_array(vtu, Some("E_recovered_V_per_m")).unwrap_or_default();
        let mut part = Part {
            nodes: grid.points.iter().map(|p| [p[0], p[1]]).collect(),
            potential: if potential.len() == n { potential } else { Vec::new() },
            recovered: if recovered.len() == 3 * n {
                recovered.chunks_exact(3).map(|e| [e[0], e[1]]).collect()
            } else {
                Vec::new()
            },
            axisymmetric: m["symmetry"].as_str() == Some("axisymmetric"),
            unit_m,
            unit,
            ..Part::default()
        };
        for (c, &ty) in grid.types.iter().enumerate() {
            let ids = grid.cell(c);
            match (ty, ids.len()) {
                (5, 3) | (22, 6) => {
                    part.tris.push([ids[0], ids[1], ids[2]]);
                    if ids.len() == 6 {
                        part.mids.push([ids[3], ids[4], ids[5]]);
                    }
                    part.region.push(region[c].max(0.0) as u32);
                }
                (3, 2) | (21, 3) => {
                    let k = match kind[c] as i64 {
                        2 => EdgeKind::Axis,
                        3 => EdgeKind::Conductor,
                        4 => EdgeKind::Interface,
                        _ => EdgeKind::Outer,
                    };
                    part.edges.push(([ids[0], ids[1]], k));
                }
                _ => {
                    return Err(format!("fields.vtu: cell {c} of type {ty} with {} nodes is not drawn here", ids.len()))
                }
            }
        }
        if !part.mids.is_empty() && part.mids.len() != part.tris.len() {
            return Err("fields.vtu: mixed linear and quadratic triangles".into());
        }
        let top = part.region.iter().copied().max().map_or(0, |r| r as usize + 1);
        part.keys =
            vec![RegionKey { name: String::new(), material: String::new(), permittivity: f64::NAN, drawn: true }; top];
        for g in m["regions"].as_array().into_iter().flatten() {
            let Some(i) = g["id"].as_u64().map(|i| i as usize).filter(|&i| i < top) else { continue };
            part.keys[i] = RegionKey {
                name: g["name"].as_str().unwrap_or("").to_string(),
                material: g["material"].as_str().unwrap_or("").to_string(),
                permittivity: g["permittivity"].as_f64().unwrap_or(f64::NAN),
                drawn: g["exterior"].as_bool() != Some(true),
            };
        }
        Ok(part)
    }

    fn drawn(&self, t: usize) -> bool {
        self.keys.get(self.region[t] as usize).is_none_or(|k| k.drawn)
    }

    /// The bounding box of the drawn triangles, m.
    pub fn extent(&self) -> Window {
        let mut w = Window { x0: f64::INFINITY, x1: f64::NEG_INFINITY, y0: f64::INFINITY, y1: f64::NEG_INFINITY };
        for (t, tri) in self.tris.iter().enumerate() {
            if !self.drawn(t) {
                continue;
            }
            for &v in tri {
                let p = self.nodes[v as usize];
                (w.x0, w.x1, w.y0, w.y1) = (w.x0.min(p[0]), w.x1.max(p[0]), w.y0.min(p[1]), w.y1.max(p[1]));
            }
        }
        if !w.x0.is_finite() {
            return Window { x0: 0.0, x1: 1.0, y0: 0.0, y1: 1.0 };
        }
        w
    }

    /// A square window of half-side `h` around `c`, moved (not shrunk) to stay inside the
    /// part's extent where the extent is large enough.
    pub fn zoom(&self, c: [f64; 2], h: f64) -> Window {
        let e = self.extent();
        let fit = |lo: f64, hi: f64, c: f64| {
            let (mut a, mut b) = (c - h, c + h);
            if b - a < hi - lo {
                if a < lo {
                    (a, b) = (lo, lo + 2.0 * h);
                } else if b > hi {
                    (a, b) = (hi - 2.0 * h, hi);
                }
            }
            (a, b)
        };
        let (x0, x1) = fit(e.x0, e.x1, c[0]);
        let (y0, y1) = fit(e.y0, e.y1, c[1]);
        Window { x0, x1, y0, y1 }
    }

    /// |E| at a point of triangle `t` with barycentric coordinates `l`.
    fn field_at(&self, t: usize, l: [f64; 3]) -> f64 {
        let p = self.tris[t].map(|v| self.nodes[v as usize]);
        if self.mids.is_empty() && !self.recovered.is_empty() {
            let e = self.tris[t].map(|v| self.recovered[v as usize]);
            let ex = l[0] * e[0][0] + l[1] * e[1][0] + l[2] * e[2][0];
            let ey = l[0] * e[0][1] + l[1] * e[1][1] + l[2] * e[2][1];
            return ex.hypot(ey);
        }
        let a2 = (p[1][0] - p[0][0]) * (p[2][1] - p[0][1]) - (p[2][0] - p[0][0]) * (p[1][1] - p[0][1]);
        // Gradients of the barycentric coordinates (constant on the triangle).
        let g = [0, 1, 2].map(|k| {
            let (b, c) = (p[(k + 1) % 3], p[(k + 2) % 3]);
            [(b[1] - c[1]) / a2, (c[0] - b[0]) / a2]
        });
        let phi = |v: u32| self.potential[v as usize];
        let mut e = [0.0; 2];
        for k in 0..3 {
            for d in 0..2 {
                if self.mids.is_empty() {
                    e[d] += phi(self.tris[t][k]) * g[k][d];
                } else {
                    let j = (k + 1) % 3;
                    e[d] += phi(self.tris[t][k]) * (4.0 * l[k] - 1.0) * g[k][d];
                    e[d] += phi(self.mids[t][k]) * 4.0 * (l[k] * g[j][d] + l[j] * g[k][d]);
                }
            }
        }
        e[0].hypot(e[1])
    }
}

/// Pixel geometry of a picture: the window and the plot area it maps to.
#[derive(Clone, Copy, Debug)]
struct Frame {
    win: Window,
    left: f64,
    top: f64,
    w: usize,
    h: usize,
}

impl Frame {
    fn px(&self, p: [f64; 2]) -> (f64, f64) {
        (
            self.left + (p[0] - self.win.x0) / self.win.width() * self.w as f64,
            self.top + (self.win.y1 - p[1]) / self.win.height() * self.h as f64,
        )
    }

    /// Calls `f(pixel index, barycentric coordinates)` for every pixel centre inside
    /// triangle `t` of the part.
    fn pixels_of(&self, part: &Part, t: usize, mut f: impl FnMut(usize, [f64; 3])) {
        let p = part.tris[t].map(|v| {
            let q = part.nodes[v as usize];
            (
                (q[0] - self.win.x0) / self.win.width() * self.w as f64,
                (self.win.y1 - q[1]) / self.win.height() * self.h as f64,
            )
        });
        let (u0, u1) = (p[0].0.min(p[1].0).min(p[2].0), p[0].0.max(p[1].0).max(p[2].0));
        let (v0, v1) = (p[0].1.min(p[1].1).min(p[2].1), p[0].1.max(p[1].1).max(p[2].1));
        let i0 = (u0 - 0.5).ceil().max(0.0) as usize;
        let i1 = ((u1 - 0.5).floor()).min(self.w as f64 - 1.0);
        let j0 = (v0 - 0.5).ceil().max(0.0) as usize;
        let j1 = ((v1 - 0.5).floor()).min(self.h as f64 - 1.0);
        if i1 < 0.0 || j1 < 0.0 {
            return;
        }
        let a2 = (p[1].0 - p[0].0) * (p[2].1 - p[0].1) - (p[2].0 - p[0].0) * (p[1].1 - p[0].1);
        if a2 == 0.0 || !a2.is_finite() {
            return;
        }
        let tol = -1e-9;
        for j in j0..=j1 as usize {
            let y = j as f64 + 0.5;
            for i in i0..=i1 as usize {
                let x = i as f64 + 0.5;
                let l1 = ((x - p[0].0) * (p[2].1 - p[0].1) - (p[2].0 - p[0].0) * (y - p[0].1)) / a2;
                let l2 = ((p[1].0 - p[0].0) * (y - p[0].1) - (x - p[0].0) * (p[1].1 - p[0].1)) / a2;
                let l0 = 1.0 - l1 - l2;
                if l0 >= tol && l1 >= tol && l2 >= tol {
                    f(j * self.w + i, [l0, l1, l2]);
                }
            }
        }
    }
}

/// Draws the frame (caption, axes in the model unit) of a picture of window `win`, with
/// `key_w` pixels on the right for the key; the plot area fits inside `max_w × max_h`
/// keeping the part's aspect ratio. Returns the SVG without its closing tag and the frame.
fn frame(part: &Part, title: &str, win: Window, key_w: u32, max_w: f64, max_h: f64) -> (String, Frame) {
    let aspect = win.width() / win.height();
    let (mut pw, mut ph) = (max_h * aspect, max_h);
    if pw > max_w {
        (pw, ph) = (max_w, max_w / aspect);
    }
    let (pw, ph) = (pw.max(40.0), ph.max(40.0));
    let (left_area, bottom_area, caption, margin) = (70u32, 48u32, 30u32, 10u32);
    let width = pw as u32 + left_area + 2 * margin + key_w;
    let height = ph as u32 + bottom_area + caption + 2 * margin;
    let k = part.unit_m;
    let (xn, yn) = if part.axisymmetric { ("r", "z") } else { ("x", "y") };
    let mut svg = String::new();
    let mut pixel_range = (0..1, 0..1);
    {
        let root = SVGBackend::with_string(&mut svg, (width, height)).into_drawing_area();
        let _ = root.fill(&WHITE);
        let (chart_area, _) = root.split_horizontally(width - key_w);
        // The title is written left-aligned below (plotters centres captions, which clips a
        // long title over a narrow part).
        if let Ok(mut chart) = ChartBuilder::on(&chart_area)
            .margin(margin)
            .margin_top(margin + caption)
            .x_label_area_size(bottom_area)
            .y_label_area_size(left_area)
            .build_cartesian_2d(win.x0 / k..win.x1 / k, win.y0 / k..win.y1 / k)
        {
            let _ = chart
                .configure_mesh()
                .disable_mesh()
                .x_labels(((pw / 70.0) as usize).clamp(2, 10))
                .y_labels(((ph / 50.0) as usize).clamp(2, 14))
                .x_desc(format!("{xn}, {}", part.unit))
                .y_desc(format!("{yn}, {}", part.unit))
                .x_label_formatter(&|v| fmt_g(*v))
                .y_label_formatter(&|v| fmt_g(*v))
                .label_style(("sans-serif", 12))
                .draw();
            pixel_range = chart.plotting_area().get_pixel_range();
        }
        let _ = root.present();
    }
    if let Some(k) = svg.rfind("</svg>") {
        svg.truncate(k);
    }
    let _ = writeln!(svg, r##"<text x="10" y="22" font-family="sans-serif" font-size="15">{}</text>"##, esc(title));
    let (xr, yr) = pixel_range;
    let f = Frame {
        win,
        left: f64::from(xr.start),
        top: f64::from(yr.start),
        w: (xr.end - xr.start).max(1) as usize,
        h: (yr.end - yr.start).max(1) as usize,
    };
    (svg, f)
}

/// PNG data URI of an RGBA raster.
fn png_uri(w: usize, h: usize, rgba: &[u8]) -> String {
    let mut bytes = Vec::new();
    {
        let mut enc = png::Encoder::new(&mut bytes, w as u32, h as u32);
        enc.set_color(png::ColorType::Rgba);
        enc.set_depth(png::BitDepth::Eight);
        enc.set_compression(png::Compression::Balanced);
        if let Ok(mut wr) = enc.write_header() {
            let _ = wr.write_image_data(rgba);
        }
    }
    format!("data:image/png;base64,{}", base64::engine::general_purpose::STANDARD.encode(&bytes))
}

/// The raster image element and the clip rectangle of the plot area.
fn raster(svg: &mut String, f: &Frame, id: &str, rgba: &[u8]) {
    let _ = writeln!(
        svg,
        r#"<defs><clipPath id="{id}-clip"><rect x="{}" y="{}" width="{}" height="{}"/></clipPath></defs>"#,
        f.left, f.top, f.w, f.h
    );
    let _ = writeln!(
        svg,
        r#"<image x="{}" y="{}" width="{}" height="{}" preserveAspectRatio="none" href="{}"/>"#,
        f.left,
        f.top,
        f.w,
        f.h,
        png_uri(f.w, f.h, rgba)
    );
}

/// The boundary and interface edges as SVG paths (clipped to the plot area).
fn outlines(svg: &mut String, part: &Part, f: &Frame, id: &str, styles: &[(EdgeKind, &str, f64)]) {
    for &(kind, colour, width) in styles {
        let mut d = String::new();
        for (e, k) in &part.edges {
            if *k != kind {
                continue;
            }
            let (a, b) = (part.nodes[e[0] as usize], part.nodes[e[1] as usize]);
            if !segment_near(f, a, b) {
                continue;
            }
            let ((ax, ay), (bx, by)) = (f.px(a), f.px(b));
            let _ = write!(d, "M{ax:.1} {ay:.1}L{bx:.1} {by:.1}");
        }
        if !d.is_empty() {
            let _ = writeln!(
                svg,
                r#"<path clip-path="url(#{id}-clip)" fill="none" stroke="{colour}" stroke-width="{width}" stroke-linecap="round" d="{d}"/>"#
            );
        }
    }
    // The axis of symmetry, dash-dotted along r = 0, named.
    if part.axisymmetric && f.win.x0 <= 0.0 && 0.0 <= f.win.x1 {
        let (x, _) = f.px([0.0, 0.0]);
        let (t, b) = (f.top, f.top + f.h as f64);
        let _ = writeln!(
            svg,
            r##"<line x1="{x:.1}" y1="{t:.1}" x2="{x:.1}" y2="{b:.1}" stroke="#000" stroke-width="1.2" stroke-dasharray="10 3 2 3"/>"##
        );
        let (lx, ly) = (x + 12.0, t + 8.0);
        let _ = writeln!(
            svg,
            r##"<text x="{lx:.1}" y="{ly:.1}" transform="rotate(90 {lx:.1} {ly:.1})" font-family="sans-serif" font-size="11" fill="#000" stroke="#fff" stroke-width="3" paint-order="stroke">axis of symmetry (r = 0)</text>"##
        );
    }
}

fn segment_near(f: &Frame, a: [f64; 2], b: [f64; 2]) -> bool {
    let w = f.win;
    let (mx, my) = (w.width() * 0.01, w.height() * 0.01);
    !(a[0].max(b[0]) < w.x0 - mx
        || a[0].min(b[0]) > w.x1 + mx
        || a[1].max(b[1]) < w.y0 - my
        || a[1].min(b[1]) > w.y1 + my)
}

/// Marks and their labels. A label goes up-right of its mark; one that would overlap a label
/// already placed moves down in steps, with a leader line back to its mark.
fn marks(svg: &mut String, f: &Frame, canvas_w: f64, marks: &[Mark]) -> Vec<String> {
    let mut placed: Vec<[f64; 4]> = Vec::new();
    let mut shown = Vec::new();
    let mut order: Vec<&Mark> = marks.iter().filter(|m| f.win.contains(m.at)).collect();
    order.sort_by(|a, b| b.at[1].total_cmp(&a.at[1]));
    for m in &order {
        let (cx, cy) = f.px(m.at);
        if m.singular {
            let _ = writeln!(
                svg,
                r##"<circle cx="{cx:.1}" cy="{cy:.1}" r="5" fill="none" stroke="#fff" stroke-width="3.5"/><circle cx="{cx:.1}" cy="{cy:.1}" r="5" fill="none" stroke="#d55e00" stroke-width="2"/>"##
            );
        } else {
            let d = 6.0;
            let _ = writeln!(
                svg,
                r##"<path d="M{:.1} {:.1}l{d} {d}l-{d} {d}l-{d} -{d}Z" fill="#cc79a7" stroke="#fff" stroke-width="1.5"/>"##,
                cx,
                cy - d
            );
        }
        let (tw, th) = (7.0 * m.label.chars().count() as f64 + 4.0, 14.0);
        let free = |b: &[f64; 4], placed: &[[f64; 4]]| {
            placed.iter().all(|q| b[2] <= q[0] || b[0] >= q[2] || b[3] <= q[1] || b[1] >= q[3])
        };
        let x = (cx + 7.0).min(canvas_w - tw - 2.0);
        let mut b = [x, cy - 7.0 - th, x + tw, cy - 7.0];
        let mut step = 0;
        while !free(&b, &placed) && step < 400 {
            step += 1;
            b[1] += th;
            b[3] += th;
        }
        placed.push(b);
        if step > 0 {
            let _ = writeln!(
                svg,
                r##"<line x1="{cx:.1}" y1="{cy:.1}" x2="{:.1}" y2="{:.1}" stroke="#000" stroke-width="0.8"/>"##,
                b[0],
                b[3] - 4.0
            );
        }
        let _ = writeln!(
            svg,
            r##"<text x="{:.1}" y="{:.1}" font-family="sans-serif" font-size="12" font-weight="bold" fill="#000" stroke="#fff" stroke-width="3" paint-order="stroke">{}</text>"##,
            b[0] + 2.0,
            b[3] - 3.0,
            esc(&m.label)
        );
        shown.push(m.label.clone());
    }
    shown
}

/// A picture and what it shows.
#[derive(Clone, Debug)]
pub struct Picture {
    /// The SVG document.
    pub svg: String,
    /// Labels of the marks inside the window.
    pub labels: Vec<String>,
}

/// The mesh picture: regions filled by material (keyed), the triangles' edges, conductor
/// surfaces, interfaces and the outer boundary, the axis of symmetry, the marks.
pub fn mesh_picture(part: &Part, title: &str, win: Window, id: &str, all: &[Mark]) -> Picture {
    let key_w = 260;
    let (mut svg, f) = frame(part, title, win, key_w, 900.0, 820.0);
    let mut rgba = vec![255u8; f.w * f.h * 4];
    for t in 0..part.tris.len() {
        if !part.drawn(t) {
            continue;
        }
        let c = PALETTE[part.region[t] as usize % PALETTE.len()];
        f.pixels_of(part, t, |k, _| rgba[4 * k..4 * k + 3].copy_from_slice(&[c.0, c.1, c.2]));
    }
    // The triangles' edges, each once, blended into the raster: dense grading shows dark.
    let mut edges: Vec<(u32, u32)> = Vec::with_capacity(3 * part.tris.len());
    for (t, tri) in part.tris.iter().enumerate() {
        if part.drawn(t) {
            for k in 0..3 {
                let (a, b) = (tri[k], tri[(k + 1) % 3]);
                edges.push((a.min(b), a.max(b)));
            }
        }
    }
    edges.sort_unstable();
    edges.dedup();
    for (a, b) in edges {
        let (pa, pb) = (part.nodes[a as usize], part.nodes[b as usize]);
        if !segment_near(&f, pa, pb) {
            continue;
        }
        let ((ax, ay), (bx, by)) = (f.px(pa), f.px(pb));
        let (ax, ay, bx, by) = (ax - f.left, ay - f.top, bx - f.left, by - f.top);
        let n = (bx - ax).abs().max((by - ay).abs()).ceil().max(1.0) as usize;
        for s in 0..=n {
            let q = s as f64 / n as f64;
            let (x, y) = (ax + q * (bx - ax), ay + q * (by - ay));
            if x < 0.0 || y < 0.0 || x >= f.w as f64 || y >= f.h as f64 {
                continue;
            }
            let k = 4 * (y as usize * f.w + x as usize);
            for c in 0..3 {
                let ink = [60.0, 80.0, 110.0][c];
                rgba[k + c] = (f64::from(rgba[k + c]) * 0.6 + ink * 0.4) as u8;
            }
        }
    }
    raster(&mut svg, &f, id, &rgba);
    outlines(
        &mut svg,
        part,
        &f,
        id,
        &[
            (EdgeKind::Outer, "#3050b0", 1.0),
            (EdgeKind::Axis, "#3050b0", 1.0),
            (EdgeKind::Interface, "#b03030", 1.6),
            (EdgeKind::Conductor, "#000", 2.2),
        ],
    );
    let canvas_w = f.left + f.w as f64 + f64::from(key_w) + 10.0;
    let labels = marks(&mut svg, &f, canvas_w, all);
    // Key: materials, then lines and marks.
    let kx = f.left + f.w as f64 + 24.0;
    let mut ky = f.top + 4.0;
    let mut seen: Vec<u32> = part.region.clone();
    seen.sort_unstable();
    seen.dedup();
    for r in seen {
        let Some(k) = part.keys.get(r as usize).filter(|k| k.drawn) else { continue };
        let c = hex(PALETTE[r as usize % PALETTE.len()]);
        let _ = writeln!(
            svg,
            r##"<rect x="{kx:.1}" y="{ky:.1}" width="18" height="12" fill="{c}" stroke="#4a6a8a"/><text x="{:.1}" y="{:.1}" font-family="sans-serif" font-size="12">{} — {}, εr {}</text>"##,
            kx + 24.0,
            ky + 10.5,
            esc(&k.name),
            esc(&k.material),
            fmt_g(k.permittivity)
        );
        ky += 18.0;
    }
    ky += 6.0;
    for (colour, w, text) in [
        ("#000", 2.2, "conductor surface"),
        ("#b03030", 1.6, "dielectric interface"),
        ("#3050b0", 1.0, "outer boundary"),
    ] {
        let _ = writeln!(
            svg,
            r##"<line x1="{kx:.1}" y1="{:.1}" x2="{:.1}" y2="{:.1}" stroke="{colour}" stroke-width="{w}"/><text x="{:.1}" y="{:.1}" font-family="sans-serif" font-size="12">{text}</text>"##,
            ky + 6.0,
            kx + 18.0,
            ky + 6.0,
            kx + 24.0,
            ky + 10.5
        );
        ky += 18.0;
    }
    mark_key(&mut svg, kx, ky, all);
    svg.push_str("</svg>\n");
    Picture { svg, labels }
}

fn mark_key(svg: &mut String, kx: f64, ky: f64, all: &[Mark]) {
    let mut y = ky;
    if all.iter().any(|m| m.singular) {
        let _ = writeln!(
            svg,
            r##"<circle cx="{:.1}" cy="{:.1}" r="5" fill="none" stroke="#d55e00" stroke-width="2"/><text x="{:.1}" y="{:.1}" font-family="sans-serif" font-size="12">S: singular point (table)</text>"##,
            kx + 9.0,
            y + 6.0,
            kx + 24.0,
            y + 10.5
        );
        y += 18.0;
    }
    if all.iter().any(|m| !m.singular) {
        let _ = writeln!(
            svg,
            r##"<path d="M{:.1} {:.1}l6 6l-6 6l-6 -6Z" fill="#cc79a7"/><text x="{:.1}" y="{:.1}" font-family="sans-serif" font-size="12">P: peak away from singular points</text>"##,
            kx + 9.0,
            y,
            kx + 24.0,
            y + 10.5
        );
    }
}

/// A number in a short general form.
fn fmt_g(x: f64) -> String {
    if !x.is_finite() {
        "-".into()
    } else if x != 0.0 && (x.abs() < 1e-2 || x.abs() >= 1e4) {
        format!("{x:.3e}")
    } else {
        let s = format!("{x:.3}");
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    }
}

/// A step of 1, 2 or 5 × 10ⁿ giving about `n` intervals over `span`.
fn nice_step(span: f64, n: f64) -> f64 {
    let raw = span / n;
    let p = 10f64.powf(raw.log10().floor());
    [1.0, 2.0, 5.0, 10.0].into_iter().map(|m| m * p).find(|&s| s >= raw).unwrap_or(10.0 * p)
}

/// The field-strength map of window `win`: |E| coloured from 0 to `cap` V/m (None: the 99th
/// percentile of |E| over the window's pixels; larger values in the top colour), equipotential lines every tenth of the potential
/// range, the outlines and the marks, with a colour bar in kV/mm.
pub fn stress_map(
    part: &Part,
    title: &str,
    win: Window,
    id: &str,
    cap: Option<f64>,
    all: &[Mark],
    max: (f64, f64),
) -> Picture {
    let key_w = 150;
    let (mut svg, f) = frame(part, title, win, key_w, max.0, max.1);
    // |E| per pixel (NaN outside the mesh: conductors, beyond the outer boundary).
    let mut field = vec![f64::NAN; f.w * f.h];
    if !part.potential.is_empty() {
        for t in (0..part.tris.len()).filter(|&t| part.drawn(t)) {
            f.pixels_of(part, t, |k, l| field[k] = part.field_at(t, l));
        }
    }
    let cap = match cap {
        Some(c) => c,
        None => {
            let mut v: Vec<f64> = field.iter().copied().filter(|e| e.is_finite()).collect();
            v.sort_unstable_by(f64::total_cmp);
            v.get((v.len() as f64 * 0.99) as usize).copied().unwrap_or(1.0)
        }
    };
    let cap = if cap.is_finite() && cap > 0.0 { cap } else { 1.0 };
    let saturated = field.iter().any(|&e| e > cap);
    let rgba: Vec<u8> = field
        .iter()
        .flat_map(|&e| {
            if e.is_finite() {
                let c: RGBColor = ViridisRGB::get_color((e / cap).clamp(0.0, 1.0));
                [c.0, c.1, c.2, 255]
            } else {
                [225, 225, 225, 255]
            }
        })
        .collect();
    raster(&mut svg, &f, id, &rgba);
    let step = equipotentials(&mut svg, part, &f, id);
    outlines(
        &mut svg,
        part,
        &f,
        id,
        &[
            (EdgeKind::Outer, "#000", 0.8),
            (EdgeKind::Axis, "#000", 0.8),
            (EdgeKind::Interface, "#fff", 1.4),
            (EdgeKind::Conductor, "#000", 2.0),
        ],
    );
    let canvas_w = f.left + f.w as f64 + f64::from(key_w) + 10.0;
    let labels = marks(&mut svg, &f, canvas_w, all);
    // Colour bar: the eight viridis anchors as a gradient (the map interpolates linearly
    // between the same anchors), 0 at the bottom.
    let (bx, by, bw, bh) = (f.left + f.w as f64 + 26.0, f.top + 18.0, 18.0, (f.h as f64 - 110.0).max(120.0));
    let _ = write!(svg, r#"<defs><linearGradient id="{id}-bar" x1="0" y1="1" x2="0" y2="0">"#);
    for k in 0..8 {
        let c: RGBColor = ViridisRGB::get_color(f64::from(k) / 7.0);
        let _ = write!(svg, r#"<stop offset="{:.4}" stop-color="{}"/>"#, f64::from(k) / 7.0, hex((c.0, c.1, c.2)));
    }
    let _ = writeln!(svg, "</linearGradient></defs>");
    let _ = writeln!(
        svg,
        r##"<text x="{:.1}" y="{:.1}" font-family="sans-serif" font-size="12">|E|, kV/mm</text><rect x="{bx:.1}" y="{by:.1}" width="{bw}" height="{bh:.1}" fill="url(#{id}-bar)" stroke="#000" stroke-width="0.6"/>"##,
        bx - 6.0,
        by - 6.0
    );
    let kv = cap / 1e6;
    let s = nice_step(kv, 5.0);
    let mut v = 0.0;
    while v <= kv * (1.0 + 1e-9) {
        let y = by + bh * (1.0 - v / kv);
        let _ = writeln!(
            svg,
            r##"<line x1="{:.1}" y1="{y:.1}" x2="{:.1}" y2="{y:.1}" stroke="#000"/><text x="{:.1}" y="{:.1}" font-family="sans-serif" font-size="11">{}</text>"##,
            bx + bw,
            bx + bw + 4.0,
            bx + bw + 6.0,
            y + 4.0,
            fmt_g(v)
        );
        v += s;
    }
    let top_note = if saturated { format!("≥ {} at the top", fmt_g(kv)) } else { format!("top {}", fmt_g(kv)) };
    let mut ky = by + bh + 18.0;
    let _ = writeln!(
        svg,
        r##"<text x="{:.1}" y="{ky:.1}" font-family="sans-serif" font-size="11">{top_note}</text>"##,
        bx - 6.0
    );
    ky += 16.0;
    if let Some(step) = step {
        let _ = writeln!(
            svg,
            r##"<line x1="{:.1}" y1="{:.1}" x2="{:.1}" y2="{:.1}" stroke="#fff" stroke-width="2.5"/><line x1="{:.1}" y1="{:.1}" x2="{:.1}" y2="{:.1}" stroke="#222" stroke-width="0.9"/><text x="{:.1}" y="{:.1}" font-family="sans-serif" font-size="11">every {} kV</text>"##,
            bx - 6.0,
            ky - 4.0,
            bx + 12.0,
            ky - 4.0,
            bx - 6.0,
            ky - 4.0,
            bx + 12.0,
            ky - 4.0,
            bx + 16.0,
            ky,
            fmt_g(step / 1e3)
        );
        ky += 16.0;
    }
    let _ = writeln!(
        svg,
        r##"<text x="{:.1}" y="{ky:.1}" font-family="sans-serif" font-size="11">grey: conductor</text>"##,
        bx - 6.0
    );
    ky += 14.0;
    let _ = writeln!(
        svg,
        r##"<text x="{:.1}" y="{ky:.1}" font-family="sans-serif" font-size="11">or outside</text>"##,
        bx - 6.0
    );
    svg.push_str("</svg>\n");
    Picture { svg, labels }
}

/// Equipotential lines every tenth of the potential range, contoured on the straight
/// sub-triangles; returns the potential step, V.
fn equipotentials(svg: &mut String, part: &Part, f: &Frame, id: &str) -> Option<f64> {
    if part.potential.is_empty() {
        return None;
    }
    let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
    for (t, tri) in part.tris.iter().enumerate() {
        if part.drawn(t) {
            for &v in tri {
                let p = part.potential[v as usize];
                (lo, hi) = (lo.min(p), hi.max(p));
            }
        }
    }
    if !lo.is_finite() || !hi.is_finite() || hi <= lo {
        return None;
    }
    let step = nice_step(hi - lo, 10.0);
    let first = (lo / step).floor() * step + step;
    let levels: Vec<f64> = (0..).map(|k| first + f64::from(k) * step).take_while(|&l| l < hi).collect();
    let mut d = String::new();
    let mut sub = |ids: [u32; 3]| {
        let v = ids.map(|i| part.potential[i as usize]);
        let p = ids.map(|i| part.nodes[i as usize]);
        let (vmin, vmax) = (v[0].min(v[1]).min(v[2]), v[0].max(v[1]).max(v[2]));
        for &l in levels.iter().filter(|&&l| l > vmin && l <= vmax) {
            let mut pts = [[0.0; 2]; 2];
            let mut n = 0;
            for k in 0..3 {
                let (a, b) = (k, (k + 1) % 3);
                if (v[a] >= l) != (v[b] >= l) && n < 2 {
                    let q = (l - v[a]) / (v[b] - v[a]);
                    pts[n] = [p[a][0] + q * (p[b][0] - p[a][0]), p[a][1] + q * (p[b][1] - p[a][1])];
                    n += 1;
                }
            }
            if n == 2 && f.win.contains(pts[0]) | f.win.contains(pts[1]) {
                let ((ax, ay), (bx, by)) = (f.px(pts[0]), f.px(pts[1]));
                if (bx - ax).hypot(by - ay) >= 0.2 {
                    let _ = write!(d, "M{ax:.1} {ay:.1}L{bx:.1} {by:.1}");
                }
            }
        }
    };
    for (t, tri) in part.tris.iter().enumerate() {
        if !part.drawn(t) {
            continue;
        }
        if part.mids.is_empty() {
            sub(*tri);
        } else {
            let [c0, c1, c2] = *tri;
            let [m0, m1, m2] = part.mids[t];
            for s in [[c0, m0, m2], [m0, c1, m1], [m2, m1, c2], [m0, m1, m2]] {
                sub(s);
            }
        }
    }
    let _ = writeln!(
        svg,
        r##"<path clip-path="url(#{id}-clip)" fill="none" stroke="#fff" stroke-width="2.2" stroke-opacity="0.55" d="{d}"/><path clip-path="url(#{id}-clip)" fill="none" stroke="#222" stroke-width="0.8" d="{d}"/>"##
    );
    Some(step)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A unit square of two P2 triangles carrying φ = x² (so |E| = 2x exactly).
    fn square() -> Part {
        let nodes = vec![
            [0.0, 0.0],
            [1.0, 0.0],
            [1.0, 1.0],
            [0.0, 1.0],
            [0.5, 0.0],
            [1.0, 0.5],
            [0.5, 0.5],
            [0.0, 0.5],
            [0.5, 1.0],
        ];
        let potential = nodes.iter().map(|p: &[f64; 2]| p[0] * p[0]).collect();
        Part {
            nodes,
            tris: vec![[0, 1, 2], [0, 2, 3]],
            mids: vec![[4, 5, 6], [6, 8, 7]],
            region: vec![0, 0],
            keys: vec![RegionKey { name: "a".into(), material: "m".into(), permittivity: 2.0, drawn: true }],
            edges: vec![([0, 1], EdgeKind::Outer)],
            potential,
            recovered: Vec::new(),
            axisymmetric: false,
            unit_m: 1e-3,
            unit: "mm".into(),
        }
    }

    #[test]
    fn p2_field_is_the_gradient_of_the_quadratic_potential() {
        // φ = x² is in the P2 space: |∇φ| = 2x at every point (calculus).
        let part = square();
        for (t, l) in [(0, [0.2, 0.3, 0.5]), (1, [0.6, 0.1, 0.3]), (0, [1.0, 0.0, 0.0])] {
            let p = part.tris[t].map(|v| part.nodes[v as usize]);
            let x = l[0] * p[0][0] + l[1] * p[1][0] + l[2] * p[2][0];
            assert!((part.field_at(t, l) - 2.0 * x).abs() < 1e-12, "t {t}, x {x}");
        }
    }

    #[test]
    fn every_pixel_of_a_covered_window_lies_in_one_triangle() {
        let part = square();
        let f = Frame { win: Window { x0: 0.0, x1: 1.0, y0: 0.0, y1: 1.0 }, left: 0.0, top: 0.0, w: 37, h: 23 };
        let mut hits = vec![0; 37 * 23];
        for t in 0..2 {
            f.pixels_of(&part, t, |k, _| hits[k] += 1);
        }
        // Pixel centres on the diagonal belong to both triangles; every other one to one.
        assert!(hits.iter().all(|h| (1..=2).contains(h)));
    }

    #[test]
    fn equipotentials_fall_on_the_exact_level_lines() {
        // φ = x (in the P2 space, and linear on every sub-triangle): the level φ = c is the
        // line x = c exactly; every drawn segment lies on one of x = 0.1 … 0.9 to within the
        // 0.1 px rounding of the path.
        let mut part = square();
        part.potential = part.nodes.iter().map(|p| p[0]).collect();
        let (svg, f) = frame(&part, "t", Window { x0: 0.0, x1: 1.0, y0: 0.0, y1: 1.0 }, 0, 400.0, 400.0);
        let mut s = svg;
        let step = equipotentials(&mut s, &part, &f, "t").unwrap();
        assert!((step - 0.1).abs() < 1e-12);
        let d = s.rsplit("d=\"").next().unwrap();
        let mut n = 0;
        for seg in d.split('M').skip(1) {
            let x: f64 = seg.split(' ').next().unwrap().parse().unwrap();
            let xm = (x - f.left) / f.w as f64;
            assert!((1..10).any(|k| (xm - f64::from(k) * 0.1).abs() < 0.2 / f.w as f64), "segment at x = {xm}");
            n += 1;
        }
        // Nine levels, each crossing the square's eight sub-triangles of its column band.
        assert!(n >= 9, "{n} segments");
    }

    #[test]
    fn overlapping_labels_are_moved_not_dropped() {
        let part = square();
        let (mut svg, f) = frame(&part, "t", Window { x0: 0.0, x1: 1.0, y0: 0.0, y1: 1.0 }, 0, 300.0, 300.0);
        let all: Vec<Mark> = (0..6)
            .map(|k| Mark { label: format!("S{}", k + 1), at: [0.5, 0.5 + 1e-4 * f64::from(k)], singular: true })
            .collect();
        let shown = marks(&mut svg, &f, 400.0, &all);
        assert_eq!(shown.len(), 6);
        for k in 1..=6 {
            assert!(svg.contains(&format!(">S{k}</text>")));
        }
        assert_eq!(svg.matches("<line").count(), 5, "five leader lines");
    }
}
