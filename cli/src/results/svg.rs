//! SVG drawing of a mesh: regions coloured, conductor surfaces and interfaces drawn heavy,
//! singular points marked with their exponent.

use mesher::{EdgeTag, Mesh};
use std::io::{self, Write};

const PALETTE: [&str; 10] =
    ["#cfe3f5", "#f6dcb3", "#d5ecc2", "#e8d1ef", "#f9f0b0", "#c9ece6", "#f4c9c9", "#dcdcdc", "#e0e8b8", "#f1d8e4"];

/// Draws the mesh. `unit_m` and `unit` label the axes extent in the model's unit.
///
/// # Errors
/// Errors of the writer.
pub fn write_mesh_svg(mesh: &Mesh, title: &str, unit_m: f64, unit: &str, w: &mut dyn Write) -> io::Result<()> {
    let mut bb = [f64::INFINITY, f64::INFINITY, f64::NEG_INFINITY, f64::NEG_INFINITY];
    // The mapped open-boundary exterior is drawn nowhere: its coordinates are not physical.
    let physical = |t: usize| mesh.exterior.is_none_or(|e| mesh.regions[t] != e.region);
    for &v in mesh.triangles.iter().enumerate().filter(|(t, _)| physical(*t)).flat_map(|(_, tri)| tri.iter()) {
        let p = mesh.nodes[v as usize];
        bb = [bb[0].min(p[0]), bb[1].min(p[1]), bb[2].max(p[0]), bb[3].max(p[1])];
    }
    let (wd, ht) = ((bb[2] - bb[0]).max(1e-300), (bb[3] - bb[1]).max(1e-300));
    let margin = 20.0;
    // Fit the drawing into 900 × 900 px, keeping the aspect ratio.
    let k = ((900.0 - 2.0 * margin) / wd).min((900.0 - 2.0 * margin) / ht);
    let width = (wd * k + 2.0 * margin).max(900.0);
    let height = ht * k + 2.0 * margin + 40.0;
    let x = |p: [f64; 2]| margin + (p[0] - bb[0]) * k;
    let y = |p: [f64; 2]| margin + 30.0 + (bb[3] - p[1]) * k;
    writeln!(
        w,
        r##"<svg xmlns="http://www.w3.org/2000/svg" width="{width:.0}" height="{height:.0}" viewBox="0 0 {width:.0} {height:.0}" font-family="sans-serif" font-size="12">"##
    )?;
    writeln!(w, r##"<rect width="100%" height="100%" fill="white"/>"##)?;
    writeln!(
        w,
        r##"<text x="{margin}" y="18">{} — {} triangles, {} nodes, extent {:.4} × {:.4} {unit}</text>"##,
        esc(title),
        mesh.num_triangles(),
        mesh.num_nodes(),
        wd / unit_m,
        ht / unit_m
    )?;
    // One path per region keeps the file compact.
    let thin = 0.35;
    let mut regions: Vec<u32> = mesh.regions.clone();
    regions.sort();
    regions.dedup();
    regions.retain(|&r| mesh.exterior.is_none_or(|e| e.region != r));
    for r in regions {
        let color = PALETTE[r as usize % PALETTE.len()];
        write!(w, r##"<path fill="{color}" stroke="#4a6a8a" stroke-width="{thin:.3}" stroke-linejoin="round" d=""##)?;
        for (t, tri) in mesh.triangles.iter().enumerate() {
            if mesh.regions[t] != r {
                continue;
            }
            let p = tri.map(|v| mesh.nodes[v as usize]);
            write!(w, "M{:.2} {:.2}L{:.2} {:.2}L{:.2} {:.2}Z", x(p[0]), y(p[0]), x(p[1]), y(p[1]), x(p[2]), y(p[2]))?;
        }
        writeln!(w, r##""/>"##)?;
    }
    for (tag_kind, color, wdt) in [(0, "#000", 2.0), (1, "#b03030", 1.5), (2, "#3050b0", 1.0)] {
        write!(w, r##"<path fill="none" stroke="{color}" stroke-width="{wdt}" d=""##)?;
        for e in &mesh.edges {
            let kind = match e.tag {
                EdgeTag::Conductor(_) => 0,
                EdgeTag::Interface(..) => 1,
                EdgeTag::Outer | EdgeTag::Axis => 2,
            };
            if kind != tag_kind {
                continue;
            }
            let (a, b) = (mesh.nodes[e.nodes[0] as usize], mesh.nodes[e.nodes[1] as usize]);
            write!(w, "M{:.2} {:.2}L{:.2} {:.2}", x(a), y(a), x(b), y(b))?;
        }
        writeln!(w, r##""/>"##)?;
    }
    let mut labelled: Vec<(f64, f64)> = Vec::new();
    for (i, s) in mesh.singular_points.iter().enumerate() {
        let (cx, cy) = (x(s.at), y(s.at));
        let color = if s.is_field_singular() { "#d00000" } else { "#d08000" };
        writeln!(w, r##"<circle cx="{cx:.2}" cy="{cy:.2}" r="5" fill="none" stroke="{color}" stroke-width="1.5"/>"##)?;
        // Label only points that are not on top of an already labelled one.
        if labelled.iter().all(|&(lx, ly)| (lx - cx).hypot(ly - cy) > 14.0) {
            writeln!(
                w,
                r##"<text x="{:.2}" y="{:.2}" fill="{color}">S{} λ={:.3}</text>"##,
                cx + 6.0,
                cy - 6.0,
                i + 1,
                s.lambda
            )?;
            labelled.push((cx, cy));
        }
    }
    // Legend.
    let ly = height - 8.0;
    writeln!(
        w,
        r##"<text x="{margin}" y="{ly:.0}"><tspan fill="#000">━ conductor</tspan>  <tspan fill="#b03030">━ interface</tspan>  <tspan fill="#3050b0">━ outer/axis</tspan>  <tspan fill="#d00000">○ singular field (λ&lt;1)</tspan>  <tspan fill="#d08000">○ singular gradient</tspan></text>"##
    )?;
    writeln!(w, "</svg>")
}

fn esc(s: &str) -> String {
    s.replace('&', "&amp;").replace('<', "&lt;").replace('>', "&gt;")
}
