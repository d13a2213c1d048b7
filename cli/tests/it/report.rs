//! The report `check` writes (and `fieldgrade report DIR` rebuilds): self-contained HTML with
//! every check and singular point of results.json in it and the plots beside it; the page
//! and every picture parse as XML; the plotted points are the results' numbers; the
//! pictures label every singular point and peak and carry a readable raster.

use crate::common::{fixture, run, stderr};
use serde_json::Value;
use std::path::Path;

/// Runs `check` on a demo model into a fresh folder; returns the folder and results.json.
fn checked(model: &str) -> (tempfile::TempDir, std::path::PathBuf, Value) {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    let o = run(&["check", fixture(model).to_str().unwrap(), "--out", out.to_str().unwrap()]);
    assert!(o.status.success(), "{}", stderr(&o));
    let r: Value = serde_json::from_str(&std::fs::read_to_string(out.join("results.json")).unwrap()).unwrap();
    (dir, out, r)
}

/// The page's text as an engineer reads it: one line per heading, paragraph, list item,
/// caption and table row (cells joined by " | "); the pictures' own text left out.
fn text_content(html: &str) -> String {
    let doc = roxmltree::Document::parse_with_options(
        html,
        roxmltree::ParsingOptions { allow_dtd: true, ..roxmltree::ParsingOptions::default() },
    )
    .expect("report.html is well-formed");
    let mut lines = Vec::new();
    fn text(n: roxmltree::Node) -> String {
        n.descendants().filter(|d| d.is_text()).filter_map(|d| d.text()).collect::<String>()
    }
    for n in doc.descendants().filter(|n| n.is_element()) {
        if n.ancestors().any(|a| a.has_tag_name("svg")) {
            continue;
        }
        match n.tag_name().name() {
            "h1" | "h2" | "h3" | "p" | "li" | "figcaption" => lines.push(text(n).trim().to_string()),
            "tr" => lines.push(
                n.children()
                    .filter(|c| c.is_element())
                    .map(|c| text(c).trim().to_string())
                    .collect::<Vec<_>>()
                    .join(" | "),
            ),
            _ => {}
        }
    }
    lines.join("\n")
}

/// The (x, y) pixel points of every `<polyline>` of an SVG of `stroke-width` `w`.
fn polylines(svg: &str, w: &str) -> Vec<Vec<(f64, f64)>> {
    let doc = roxmltree::Document::parse(svg).expect("the plot is well-formed XML");
    doc.descendants()
        .filter(|n| n.has_tag_name("polyline") && n.attribute("stroke-width") == Some(w))
        .map(|n| {
            n.attribute("points")
                .unwrap_or("")
                .split_whitespace()
                .map(|p| {
                    let (x, y) = p.split_once(',').unwrap();
                    (x.parse().unwrap(), y.parse().unwrap())
                })
                .collect()
        })
        .collect()
}

/// Asserts that pixel coordinates are one affine map of the data (each axis on its own),
/// to within the one-pixel rounding of the drawing: the plot draws these numbers.
fn assert_affine(data: &[(f64, f64)], px: &[(f64, f64)], what: &str) {
    assert_eq!(data.len(), px.len(), "{what}: point count");
    for axis in 0..2 {
        let d: Vec<f64> = data.iter().map(|p| if axis == 0 { p.0 } else { p.1 }).collect();
        let q: Vec<f64> = px.iter().map(|p| if axis == 0 { p.0 } else { p.1 }).collect();
        let (i, j) = (0..d.len())
            .flat_map(|i| (0..d.len()).map(move |j| (i, j)))
            .max_by(|a, b| (d[a.0] - d[a.1]).abs().total_cmp(&(d[b.0] - d[b.1]).abs()))
            .unwrap();
        if (d[i] - d[j]).abs() < 1e-12 * d[i].abs().max(1e-300) {
            assert!(q.iter().all(|v| (v - q[0]).abs() <= 1.0), "{what}: constant data, one pixel line");
            continue;
        }
        let b = (q[i] - q[j]) / (d[i] - d[j]);
        for k in 0..d.len() {
            let predicted = q[i] + b * (d[k] - d[i]);
            assert!((predicted - q[k]).abs() <= 1.5, "{what}, axis {axis}, point {k}: {} px off", predicted - q[k]);
        }
    }
}

#[test]
fn report_lists_every_check_and_singular_point_and_its_plots_exist() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    let o = run(&["check", fixture("gis-spacer.toml").to_str().unwrap(), "--out", out.to_str().unwrap()]);
    assert!(o.status.success(), "{}", stderr(&o));
    let html = std::fs::read_to_string(out.join("report.html")).unwrap();
    assert!(html.starts_with("<!DOCTYPE html>") && html.trim_end().ends_with("</html>"));
    // Nothing fetched: no external stylesheet, image or script (SVG namespaces aside).
    assert!(!html.contains("src=\"http") && !html.contains("href=\"http"), "no network use");
    assert!(!html.contains("<script"), "readable without scripts");
    let r: Value = serde_json::from_str(&std::fs::read_to_string(out.join("results.json")).unwrap()).unwrap();
    for case in r["checks"]["load_cases"].as_array().unwrap() {
        assert!(html.contains(&format!("Load case {}", case["name"].as_str().unwrap())));
        for g in case["regions"].as_array().unwrap() {
            assert!(html.contains(&format!("<td>{}</td>", g["region"].as_str().unwrap())));
        }
        for t in case["interfaces"].as_array().unwrap() {
            assert!(html.contains(&format!("tangential on {}", t["probe"].as_str().unwrap())));
        }
    }
    for s in r["singular_points"].as_array().unwrap() {
        assert!(html.contains(&format!("<td>{}</td>", s["id"].as_str().unwrap())));
    }
    for q in r["convergence"].as_array().unwrap() {
        assert!(html.contains(q["quantity"].as_str().unwrap()));
    }
    // Every figure is inline and its file is beside the page, a complete SVG document.
    let figures: Vec<&str> = html.split("<figure id=\"").skip(1).map(|f| &f[..f.find('"').unwrap()]).collect();
    assert!(figures.len() >= 3, "{figures:?}");
    for f in figures {
        let svg = std::fs::read_to_string(out.join(f)).unwrap();
        assert!(svg.trim_start().starts_with("<svg") && svg.trim_end().ends_with("</svg>"), "{f}");
    }
    // Rebuilt from the folder without solving: the same page.
    std::fs::remove_file(out.join("report.html")).unwrap();
    let o = run(&["report", out.to_str().unwrap()]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert_eq!(std::fs::read_to_string(out.join("report.html")).unwrap(), html);
}

#[test]
fn report_of_a_folder_without_results_is_a_run_failure() {
    let dir = tempfile::tempdir().unwrap();
    let o = run(&["report", dir.path().to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(1));
    assert!(stderr(&o).contains("results.json"), "{}", stderr(&o));
}

#[test]
fn report_text_and_pictures_of_the_gis_spacer() {
    let (_dir, out, r) = checked("gis-spacer.toml");
    let html = std::fs::read_to_string(out.join("report.html")).unwrap();
    let text = text_content(&html);
    // Every row of the checks and singular-point tables of results.json is in the page.
    for (i, _) in r["mesh"]["singular_points"].as_array().unwrap().iter().enumerate() {
        assert!(text.contains(&format!("\nS{} | ", i + 1)), "S{} row", i + 1);
    }
    for (i, g) in r["checks"]["peaks_away"].as_array().unwrap().iter().enumerate() {
        assert!(text.contains(&format!("\nP{} | {} | ", i + 1, g["region"].as_str().unwrap())), "P{} row", i + 1);
    }
    insta::assert_snapshot!("report_text_gis_spacer", text);
    // Every picture: well-formed SVG, its raster a PNG of the drawn size, every singular
    // point (mesh picture) and peak (field map) labelled.
    let mesh_svg = std::fs::read_to_string(out.join("picture-mesh.svg")).unwrap();
    let doc = roxmltree::Document::parse(&mesh_svg).unwrap();
    let labels: Vec<&str> = doc.descendants().filter(|n| n.has_tag_name("text")).filter_map(|n| n.text()).collect();
    for i in 0..r["mesh"]["singular_points"].as_array().unwrap().len() {
        assert!(labels.contains(&format!("S{}", i + 1).as_str()), "S{} labelled", i + 1);
    }
    let field = std::fs::read_to_string(out.join("picture-field.svg")).unwrap();
    let doc = roxmltree::Document::parse(&field).unwrap();
    let labels: Vec<&str> = doc.descendants().filter(|n| n.has_tag_name("text")).filter_map(|n| n.text()).collect();
    for i in 0..r["checks"]["peaks_away"].as_array().unwrap().len() {
        assert!(labels.contains(&format!("P{}", i + 1).as_str()), "P{} labelled", i + 1);
    }
    assert!(labels.contains(&"|E|, kV/mm"), "a colour bar in kV/mm");
    let image = doc.descendants().find(|n| n.has_tag_name("image")).expect("a raster");
    let href = image.attribute("href").unwrap();
    let png = base64::Engine::decode(
        &base64::engine::general_purpose::STANDARD,
        href.strip_prefix("data:image/png;base64,").unwrap(),
    )
    .unwrap();
    let reader = png::Decoder::new(std::io::Cursor::new(png)).read_info().unwrap();
    let (w, h) = (reader.info().width, reader.info().height);
    assert_eq!(image.attribute("width").unwrap().parse::<u32>().unwrap(), w);
    assert_eq!(image.attribute("height").unwrap().parse::<u32>().unwrap(), h);
    // The canvas fits the part: the raster's aspect is that of the meshed part (within a
    // pixel), the open-boundary exterior left out.
    let exterior: Vec<i64> = r["mesh"]["regions"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|g| g["exterior"] == true)
        .map(|g| g["id"].as_i64().unwrap())
        .collect();
    let vtu = crate::common::read_vtu(&out.join("fields.vtu"));
    let mut bb = [f64::INFINITY, f64::INFINITY, f64::NEG_INFINITY, f64::NEG_INFINITY];
    for (t, reg) in &vtu.triangles {
        if !exterior.contains(reg) {
            for &v in t {
                let p = vtu.points[v];
                bb = [bb[0].min(p[0]), bb[1].min(p[1]), bb[2].max(p[0]), bb[3].max(p[1])];
            }
        }
    }
    let aspect = (bb[2] - bb[0]) / (bb[3] - bb[1]);
    assert!((f64::from(w) - aspect * f64::from(h)).abs() <= 2.0, "raster {w}×{h}, part aspect {aspect}");
    for f in std::fs::read_dir(&out).unwrap() {
        let p = f.unwrap().path();
        if p.extension().is_some_and(|x| x == "svg") {
            roxmltree::Document::parse(&std::fs::read_to_string(&p).unwrap())
                .unwrap_or_else(|e| panic!("{}: {e}", p.display()));
        }
    }
}

#[test]
fn plotted_points_are_the_results_numbers() {
    let (_dir, out, r) = checked("busbar-support.toml");
    // Convergence plot: relative error bar against unknowns, both on log axes.
    let svg = std::fs::read_to_string(out.join("plot-convergence.svg")).unwrap();
    let lines = polylines(&svg, "2");
    let mut data = Vec::new();
    let mut px = Vec::new();
    let mut k = 0;
    for q in r["convergence"].as_array().unwrap() {
        let pts: Vec<(f64, f64)> = q["sequence"]
            .as_array()
            .unwrap()
            .iter()
            .filter_map(|s| {
                let v = s["value"].as_f64()?.abs();
                Some((s["unknowns"].as_f64()?.log10(), (s["error_bar"].as_f64()? / v).log10()))
            })
            .filter(|p| p.1.is_finite())
            .collect();
        if pts.is_empty() {
            continue;
        }
        assert_eq!(lines[k].len(), pts.len(), "{}", q["quantity"]);
        data.extend(pts);
        px.extend(lines[k].iter().copied());
        k += 1;
    }
    assert_affine(&data, &px, "convergence plot");
    // Line probe plot: |E| in kV/mm against s in mm, from the probe's CSV.
    let probe = r["probes"].as_array().unwrap().iter().find(|p| p["kind"] == "line").expect("a line probe");
    let file = probe["file"].as_str().unwrap();
    let csv = std::fs::read_to_string(out.join(file)).unwrap();
    let mut rows = csv.lines();
    let head: Vec<&str> = rows.next().unwrap().split(',').collect();
    let (is, ie) =
        (head.iter().position(|h| *h == "s_m").unwrap(), head.iter().position(|h| *h == "e_v_per_m").unwrap());
    let data: Vec<(f64, f64)> = rows
        .map(|l| {
            let c: Vec<f64> = l.split(',').map(|v| v.parse().unwrap_or(f64::NAN)).collect();
            (c[is] * 1e3, c[ie] / 1e6)
        })
        .collect();
    let plot = Path::new(&out).join(format!("plot-{}.svg", file.trim_end_matches(".csv")));
    let lines = polylines(&std::fs::read_to_string(plot).unwrap(), "2");
    assert_affine(&data, &lines[0], "probe plot");
    // Its largest |E| is the probe's maximum in results.json.
    let top = data.iter().fold(0.0f64, |m, p| m.max(p.1));
    assert!((top - probe["e_max_v_per_m"].as_f64().unwrap() / 1e6).abs() <= 1e-9 * top);
}
