//! The engineer's report: one self-contained HTML page (`report.html`) built from a results
//! folder — `results.json` and the CSV files beside it — with its plots as SVG files beside
//! it (`plot-*.svg`, drawn by the plotters crate) and inline. It reads only what `solve` or
//! `check` wrote, so `fieldgrade report DIR` rebuilds it without solving.
//!
//! Contents, in this order: model summary (regions, conductors, load cases); the breakdown
//! checks per load case with their verdicts; the field-strength map with equipotentials and
//! the peaks marked, and zoomed views around the singular points and the top peaks; the mesh
//! picture with every singular point labelled, and their table (pictures in [`picture`],
//! drawn from `fields.vtu`); the convergence table and plot; the stress along each creepage
//! path and line probe; the cautions.

use crate::results::esc;
use crate::results::picture::{self, Mark, Part};
use crate::results::write::write_atomic;
use crate::{CliError, Result};
use plotters::prelude::*;
use serde_json::Value;
use std::fmt::Write as _;
use std::path::Path;

/// A number of a JSON value in a short form, "-" when absent.
fn num(v: &Value, digits: usize) -> String {
    match v.as_f64() {
        Some(x) if x != 0.0 && (x.abs() < 1e-2 || x.abs() >= 1e5) => format!("{x:.digits$e}"),
        Some(x) => format!("{x:.digits$}"),
        None => "-".into(),
    }
}

/// A JSON number divided by `per` (a unit: 1e3 for kV, 1e6 for kV/mm, metres per model
/// unit), in the short form of [`num`].
fn scaled(v: &Value, per: f64, digits: usize) -> String {
    num(&v.as_f64().map(|x| x / per).into(), digits)
}

/// A point given in metres (a JSON pair) in the model unit, "(x, y)".
fn point(v: &Value, unit_m: f64) -> String {
    format!("({}, {})", scaled(&v[0], unit_m, 4), scaled(&v[1], unit_m, 4))
}

/// One table row per element of a JSON array (none when it is absent).
fn rows_of(list: &Value, row: impl Fn(&Value) -> Vec<String>) -> Vec<Vec<String>> {
    list.as_array().into_iter().flatten().map(row).collect()
}

/// A table from a header row and body rows (already escaped).
fn table(html: &mut String, head: &[&str], rows: &[Vec<String>]) {
    html.push_str("<table>\n<tr>");
    for h in head {
        let _ = write!(html, "<th>{}</th>", esc(h));
    }
    html.push_str("</tr>\n");
    for r in rows {
        html.push_str("<tr>");
        for c in r {
            let _ = write!(html, "<td>{c}</td>");
        }
        html.push_str("</tr>\n");
    }
    html.push_str("</table>\n");
}

/// Reads a CSV file the run wrote: header names and numeric columns (non-numbers as NaN).
fn read_csv(path: &Path) -> Option<(Vec<String>, Vec<Vec<f64>>)> {
    let text = std::fs::read_to_string(path).ok()?;
    let mut lines = text.lines();
    let head: Vec<String> = lines.next()?.split(',').map(str::to_string).collect();
    let mut cols = vec![Vec::new(); head.len()];
    for l in lines {
        for (k, v) in l.split(',').enumerate().take(head.len()) {
            cols[k].push(v.parse::<f64>().unwrap_or(f64::NAN));
        }
    }
    Some((head, cols))
}

/// A line plot of series (name, points) into an SVG string.
fn line_plot(title: &str, x_label: &str, y_label: &str, series: &[(String, Vec<(f64, f64)>)], log: bool) -> String {
    let mut svg = String::new();
    let names: Vec<String> = series.iter().map(|s| s.0.clone()).collect();
    let extra = if log { legend_height(names.len()) } else { 0 };
    {
        let root = SVGBackend::with_string(&mut svg, (760, 420 + extra)).into_drawing_area();
        let _ = root.fill(&WHITE);
        let (root, below) = root.split_vertically(420);
        let pts = series.iter().flat_map(|s| s.1.iter()).filter(|p| p.0.is_finite() && p.1.is_finite());
        let (mut x0, mut x1, mut y0, mut y1) = (f64::INFINITY, f64::NEG_INFINITY, f64::INFINITY, f64::NEG_INFINITY);
        for &(x, y) in pts.filter(|p| !log || (p.0 > 0.0 && p.1 > 0.0)) {
            (x0, x1, y0, y1) = (x0.min(x), x1.max(x), y0.min(y), y1.max(y));
        }
        if !x0.is_finite() {
            (x0, x1, y0, y1) = (1.0, 10.0, 1.0, 10.0);
        }
        if x1 <= x0 {
            x1 = x0 * 1.1 + 1.0;
        }
        if y1 <= y0 {
            y1 = y0.abs() * 1.1 + 1e-30;
        }
        let palette = okabe_ito();
        // The same drawing on a linear or a logarithmic chart (a macro: the two charts'
        // coordinate types differ).
        macro_rules! draw {
            ($chart:expr) => {
                for (k, (name, p)) in series.iter().enumerate() {
                    let c = palette[k % palette.len()];
                    let p: Vec<(f64, f64)> = p
                        .iter()
                        .copied()
                        .filter(|q| q.0.is_finite() && q.1.is_finite() && (!log || q.1 > 0.0))
                        .collect();
                    if let Ok(s) = $chart.draw_series(LineSeries::new(p.clone(), c.stroke_width(2))) {
                        s.label(name.clone()).legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 16, y)], c));
                    }
                    if log && k < palette.len() {
                        let _ = $chart.draw_series(p.iter().map(|q| Circle::new(*q, 3, c.filled())));
                    } else if log {
                        let _ = $chart.draw_series(p.iter().map(|q| TriangleMarker::new(*q, 5, c.filled())));
                    }
                }
            };
        }
        let caption = (title, ("sans-serif", 18));
        if log {
            if let Ok(mut chart) = ChartBuilder::on(&root)
                .caption(caption.0, caption.1)
                .margin(10)
                .x_label_area_size(40)
                .y_label_area_size(70)
                .build_cartesian_2d((x0 * 0.9..x1 * 1.1).log_scale(), (y0 * 0.5..y1 * 2.0).log_scale())
            {
                let _ = chart
                    .configure_mesh()
                    .x_desc(x_label)
                    .y_desc(y_label)
                    .x_label_formatter(&|v| format!("{v:.0e}"))
                    .y_label_formatter(&|v| format!("{v:.0e}"))
                    .draw();
                draw!(chart);
                legend_below(&below, &names);
            }
        } else if let Ok(mut chart) = ChartBuilder::on(&root)
            .caption(caption.0, caption.1)
            .margin(10)
            .x_label_area_size(40)
            .y_label_area_size(70)
            .build_cartesian_2d(x0..x1, y0.min(0.0)..y1 * 1.05)
        {
            let _ = chart.configure_mesh().x_desc(x_label).y_desc(y_label).draw();
            draw!(chart);
            let _ = chart.configure_series_labels().background_style(WHITE.mix(0.8)).border_style(BLACK).draw();
        }
        let _ = root.present();
    }
    svg
}

/// Builds `DIR/report.html` and its `plot-*.svg` files from the results in `dir`.
///
/// # Errors
/// A missing or unreadable `results.json`, or a file that cannot be written.
pub fn write_report(dir: &Path) -> Result<()> {
    let path = dir.join("results.json");
    let text = std::fs::read_to_string(&path)
        .map_err(|e| CliError::io(format!("cannot read '{}' (run `fieldgrade check` first)", path.display()), e))?;
    let r: Value = serde_json::from_str(&text)?;
    let mut plots: Vec<(String, String)> = Vec::new();
    let mut h = String::new();
    let model = r["mesh"]["model"].as_str().unwrap_or("model");
    let _ = write!(
        h,
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\"/>\n<title>fieldgrade report: {}</title>\n<style>\nbody {{ font-family: sans-serif; max-width: 1100px; margin: 2em auto; color: #222; }}\ntable {{ border-collapse: collapse; margin: 0.5em 0 1.5em; }}\nth, td {{ border: 1px solid #bbb; padding: 0.2em 0.5em; text-align: right; }}\nth {{ background: #eee; }}\nth:first-child, td:first-child {{ text-align: left; }}\n.fail {{ background: #f4c7b8; font-weight: bold; }} .pass {{ background: #cfe8d5; }} .undecided {{ background: #fbe6a2; }}\np.verdict {{ font-size: 1.15em; padding: 0.4em 0.6em; }}\nfigure {{ margin: 1em 0; }}\n</style>\n</head>\n<body>\n<h1>{}</h1>\n",
        esc(model),
        esc(model)
    );
    h.push_str(&overall_verdict(&r["checks"]));
    // Summary.
    h.push_str("<h2>Model</h2>\n");
    let m = &r["mesh"];
    let _ = writeln!(
        h,
        "<p>{} model, length unit {}; mesh of {} nodes and {} triangles (order {}), {} unknowns.</p>",
        esc(m["symmetry"].as_str().unwrap_or("")),
        esc(m["length_unit"].as_str().unwrap_or("")),
        m["nodes"],
        m["triangles"],
        m["order"],
        r["unknowns"]
    );
    let regions = rows_of(&m["regions"], |g| {
        vec![
            esc(g["name"].as_str().unwrap_or("")),
            esc(g["material"].as_str().unwrap_or("")),
            num(&g["permittivity"], 3),
            num(&g["allowable_stress_kv_per_mm"], 2),
        ]
    });
    table(&mut h, &["region", "material", "relative permittivity", "allowable kV/mm"], &regions);
    let conductors = rows_of(&r["conductors"], |c| {
        vec![
            esc(c["name"].as_str().unwrap_or("")),
            if c["floating"].as_bool() == Some(true) { "floating".into() } else { "fixed".into() },
            num(&c["potential_v"], 4),
            num(&c["charge_c"], 4),
        ]
    });
    table(&mut h, &["conductor", "held", "potential V", "charge C"], &conductors);
    let cases = rows_of(&r["checks"]["load_cases"], |c| {
        vec![
            esc(c["name"].as_str().unwrap_or("")),
            esc(c["kind"].as_str().unwrap_or("")),
            esc(c["basis"].as_str().unwrap_or("")),
            scaled(&c["voltage_v"], 1e3, 3),
            esc(c["reference"].as_str().unwrap_or("")),
            num(&c["scale"], 4),
        ]
    });
    table(&mut h, &["load case", "kind", "basis", "voltage kV", "on", "scale of the model's stresses"], &cases);
    // Pictures: the mesh, the field-strength map, zoomed views.
    let mut picture_files: Vec<(String, String)> = Vec::new();
    let (mesh_html, field_html) = pictures(dir, &r, &mut picture_files);
    // Checks per load case.
    let checks = &r["checks"];
    h.push_str("<h2>Breakdown checks</h2>\n");
    for case in checks["load_cases"].as_array().into_iter().flatten() {
        let _ = writeln!(
            h,
            "<h3>Load case {} ({}, {})</h3>\n<p>{} kV on {}; stresses × {}.</p>",
            esc(case["name"].as_str().unwrap_or("")),
            esc(case["kind"].as_str().unwrap_or("")),
            esc(case["basis"].as_str().unwrap_or("")),
            scaled(&case["voltage_v"], 1e3, 3),
            esc(case["reference"].as_str().unwrap_or("")),
            num(&case["scale"], 4)
        );
        let kv = |v: &Value| scaled(v, 1e6, 4);
        let verdict = |p: &Value| {
            let v = p["verdict"].as_str().unwrap_or("");
            let cert =
                if p["certified"].as_bool() == Some(true) || v == "no allowable" { "" } else { " (uncertified)" };
            format!("{v}{cert}")
        };
        // A checked stress: label, value, bar, allowable, utilisation, margin, verdict.
        let row = |label: String, p: &Value| {
            vec![
                label,
                kv(&p["e_v_per_m"]),
                kv(&p["error_bar_v_per_m"]),
                num(&p["allowable_kv_per_mm"], 2),
                num(&p["utilisation"], 3),
                num(&p["margin"], 3),
                verdict(p),
            ]
        };
        let mut rows: Vec<Vec<String>> = case_checks(case)
            .into_iter()
            .map(|(label, p, gas)| {
                if !gas {
                    return row(esc(&label), p);
                }
                vec![
                    esc(&label),
                    format!("{} kV peak", scaled(&p["peak_voltage_v"], 1e3, 3)),
                    "-".into(),
                    format!("{} kV", scaled(&p["inception_voltage_v"], 1e3, 3)),
                    "-".into(),
                    num(&p["margin"], 3),
                    esc(p["verdict"].as_str().unwrap_or("")),
                ]
            })
            .collect();
        for row in &mut rows {
            let v = row[6].split(' ').next().unwrap_or("").to_string();
            row[6] = format!("<span class=\"{v}\">{}</span>", row[6]);
        }
        table(&mut h, &["check", "E kV/mm", "± kV/mm", "allowable", "utilisation", "margin", "verdict"], &rows);
    }
    h.push_str(&other_checks(checks, unit_metres_of(&r)));
    // The pictures after the verdicts: the stress map, then the mesh and its singular points.
    h.push_str(&field_html);
    h.push_str(&mesh_html);
    // Values at the named points, one row per side.
    let (unit_m, unit) = unit_metres_of(&r);
    let sides: Vec<Vec<String>> = r["points"]
        .as_array()
        .into_iter()
        .flatten()
        .flat_map(|p| {
            let name = esc(p["name"].as_str().unwrap_or(""));
            let at = point(&p["at_m"], unit_m);
            let note = p["note"].as_str().unwrap_or("").to_string();
            let list = p["sides"].as_array().cloned().unwrap_or_default();
            if list.is_empty() {
                return vec![vec![
                    name,
                    at,
                    "-".into(),
                    "-".into(),
                    String::new(),
                    "-".into(),
                    String::new(),
                    esc(&note),
                ]];
            }
            list.iter()
                .map(|s| {
                    let status = match (s["potential_status"].as_str(), s["e_status"].as_str()) {
                        (Some(a), Some(b)) => format!("V {a}; |E| {b}"),
                        _ => String::new(),
                    };
                    vec![
                        name.clone(),
                        at.clone(),
                        esc(s["region"].as_str().unwrap_or("")),
                        num(&s["potential_v"], 6),
                        num(&s["potential_error_bar_v"], 2),
                        scaled(&s["e_abs_v_per_m"], 1e6, 5),
                        scaled(&s["e_error_bar_v_per_m"], 1e6, 2),
                        esc(&[status, note.clone()]
                            .iter()
                            .filter(|x| !x.is_empty())
                            .cloned()
                            .collect::<Vec<_>>()
                            .join("; ")),
                    ]
                })
                .collect()
        })
        .collect();
    if !sides.is_empty() {
        h.push_str("<h2>Named points</h2>\n<p>V and the recovered |E| at the model's potentials; one row per side on an interface.</p>\n");
        table(
            &mut h,
            &["point", &format!("at ({unit})"), "region", "V", "± V", "|E| kV/mm", "± kV/mm", "verdict / note"],
            &sides,
        );
    }
    // Convergence.
    if let Some(conv) = r["convergence"].as_array() {
        h.push_str("<h2>Convergence</h2>\n");
        let rows: Vec<Vec<String>> = conv
            .iter()
            .map(|q| {
                let b = &q["error_bar"];
                vec![
                    esc(q["quantity"].as_str().unwrap_or("")),
                    esc(q["unit"].as_str().unwrap_or("")),
                    num(&b["value"], 6),
                    num(&b["absolute"], 2),
                    num(&b["relative"], 2),
                    num(&q["observed_order"], 2),
                    esc(b["status"].as_str().unwrap_or("")),
                ]
            })
            .collect();
        table(&mut h, &["quantity", "unit", "value", "± bar", "relative bar", "order", "verdict"], &rows);
        // Relative bar of every quantity against the unknowns.
        let series: Vec<(String, Vec<(f64, f64)>)> = conv
            .iter()
            .map(|q| {
                let pts = q["sequence"]
                    .as_array()
                    .into_iter()
                    .flatten()
                    .filter_map(|s| {
                        let n = s["unknowns"].as_f64()?;
                        let v = s["value"].as_f64()?.abs();
                        Some((n, s["error_bar"].as_f64()? / v.max(f64::MIN_POSITIVE)))
                    })
                    .collect();
                (q["quantity"].as_str().unwrap_or("").to_string(), pts)
            })
            .collect();
        let svg =
            line_plot("relative error bar of every watched quantity", "unknowns", "relative error bar", &series, true);
        plots.push(("plot-convergence.svg".into(), svg));
        plots.push(("plot-convergence-values.svg".into(), values_plot(conv)));
    }
    // Paths: creepage files and line probes.
    for c in checks["creepage"].as_array().into_iter().flatten() {
        let file = c["file"].as_str().unwrap_or("");
        if let Some((head, cols)) = read_csv(&dir.join(file)) {
            let col = |n: &str| head.iter().position(|h| h == n).map(|k| &cols[k]);
            if let (Some(ch), Some(s), Some(et), Some(en)) =
                (col("chain"), col("s_m"), col("et_v_per_m"), col("en_1_v_per_m"))
            {
                // One plot per chain of the interface (its flanks), each from its own start:
                // |E| and |E_n| on side 1, |E_n| on side 2 (where the path has one), |E_t|.
                let chains = ch.iter().fold(0.0f64, |m, &c| m.max(c)) as usize + 1;
                let (e1, en2) = (col("e_1_v_per_m"), col("en_2_v_per_m"));
                for k in 0..chains {
                    let pts = |y: &Vec<f64>| {
                        (0..s.len())
                            .filter(|&i| ch[i] as usize == k && y[i].is_finite())
                            .map(|i| (s[i] * 1e3, y[i].abs() / 1e6))
                            .collect::<Vec<_>>()
                    };
                    let mut series = Vec::new();
                    if let Some(e1) = e1 {
                        series.push(("|E| side 1".to_string(), pts(e1)));
                    }
                    series.push(("|E_n| side 1".to_string(), pts(en)));
                    if let Some(en2) = en2.map(pts).filter(|p| !p.is_empty()) {
                        series.push(("|E_n| side 2".to_string(), en2));
                    }
                    series.push(("|E_t|".to_string(), pts(et)));
                    let svg = line_plot(
                        &format!(
                            "field along {}, chain {} (model potentials)",
                            c["probe"].as_str().unwrap_or(""),
                            k + 1
                        ),
                        "s along the chain, mm",
                        "kV/mm",
                        &series,
                        false,
                    );
                    let stem = file.trim_end_matches(".csv");
                    let name = if chains == 1 {
                        format!("plot-{stem}.svg")
                    } else {
                        format!("plot-{stem}-chain{}.svg", k + 1)
                    };
                    plots.push((name, svg));
                }
            }
        }
    }
    for p in r["probes"].as_array().into_iter().flatten().filter(|p| p["kind"] == "line") {
        let file = p["file"].as_str().unwrap_or("");
        if let Some((head, cols)) = read_csv(&dir.join(file)) {
            let col = |n: &str| head.iter().position(|h| h == n).map(|k| &cols[k]);
            if let (Some(s), Some(e)) = (col("s_m"), col("e_v_per_m")) {
                let pts: Vec<(f64, f64)> = s.iter().zip(e).map(|(a, b)| (a * 1e3, b / 1e6)).collect();
                let svg = line_plot(
                    &format!("|E| along {} (model potentials)", p["name"].as_str().unwrap_or("")),
                    "s, mm",
                    "kV/mm",
                    &[("|E|".into(), pts)],
                    false,
                );
                plots.push((format!("plot-{}.svg", file.trim_end_matches(".csv")), svg));
            }
        }
    }
    if !plots.is_empty() {
        h.push_str("<h2>Plots</h2>\n");
        for (name, svg) in &plots {
            // Inline (the page is self-contained) and beside it as a file.
            let body = svg.find("<svg").map_or(svg.as_str(), |k| &svg[k..]);
            let _ = writeln!(
                h,
                "<figure id=\"{}\">\n{body}\n<figcaption>{}</figcaption>\n</figure>",
                esc(name),
                esc(&plot_caption(name))
            );
        }
    }
    h.push_str("<h2>Cautions</h2>\n<ul>\n");
    for c in r["cautions"].as_array().into_iter().flatten().chain(checks["cautions"].as_array().into_iter().flatten()) {
        let _ = writeln!(h, "<li>{}</li>", esc(c.as_str().unwrap_or("")));
    }
    h.push_str("<li>A 2-D model: planar results are per metre of depth, axisymmetric ones assume rotational symmetry; three-dimensional features are not represented.</li>\n");
    h.push_str("</ul>\n</body>\n</html>\n");
    // A rebuilt report leaves no picture of an earlier run beside it.
    let written: Vec<&str> = plots.iter().chain(&picture_files).map(|(n, _)| n.as_str()).collect();
    for e in std::fs::read_dir(dir).into_iter().flatten().flatten() {
        let name = e.file_name().to_string_lossy().into_owned();
        let ours = (name.starts_with("plot-") || name.starts_with("picture-")) && name.ends_with(".svg");
        if ours && !written.contains(&name.as_str()) {
            let _ = std::fs::remove_file(e.path());
        }
    }
    for (name, svg) in plots.iter().chain(&picture_files) {
        write_atomic(&dir.join(name), |w| w.write_all(svg.as_bytes()))?;
    }
    write_atomic(&dir.join("report.html"), |w| w.write_all(h.as_bytes()))
}

/// The peak away from singular points of each region at the model's potentials
/// (`checks.peaks_away`: region, e_v_per_m, error_bar_v_per_m, at_m).
fn peak_rows(r: &Value) -> Vec<&Value> {
    r["checks"]["peaks_away"].as_array().into_iter().flatten().collect()
}

/// The marks of the results: every singular point the mesher lists (S1…, in its order) and
/// the peak away from singular points of each region (P1…, in the regions' order).
fn result_marks(r: &Value, unit_m: f64) -> (Vec<Mark>, Vec<Mark>) {
    let singular = r["mesh"]["singular_points"]
        .as_array()
        .into_iter()
        .flatten()
        .enumerate()
        .filter_map(|(i, s)| {
            Some(Mark {
                label: format!("S{}", i + 1),
                at: [s["x"].as_f64()? * unit_m, s["y"].as_f64()? * unit_m],
                singular: true,
            })
        })
        .collect();
    let peaks = peak_rows(r)
        .iter()
        .enumerate()
        .filter_map(|(i, g)| {
            let at = g["at_m"].as_array()?;
            Some(Mark {
                label: format!("P{}", i + 1),
                at: [at.first()?.as_f64()?, at.get(1)?.as_f64()?],
                singular: false,
            })
        })
        .collect();
    (singular, peaks)
}

/// The pictures section (HTML) and its SVG files (pushed onto `files`): the mesh with the
/// singular points and their table, the field-strength map with the peaks and their table,
/// zoomed views around the field-singular points and the top peaks.
fn pictures(dir: &Path, r: &Value, files: &mut Vec<(String, String)>) -> (String, String) {
    let mut h = String::new();
    let part = std::fs::read(dir.join("fields.vtu"))
        .map_err(|e| e.to_string())
        .and_then(|bytes| Part::from_results(&bytes, r));
    let part = match part {
        Ok(p) => p,
        Err(e) => {
            let _ = writeln!(h, "<p>No pictures: fields.vtu could not be read ({}).</p>", esc(&e));
            return (h, String::new());
        }
    };
    let unit = part.unit.clone();
    let k = part.unit_m;
    let (singular, peaks) = result_marks(r, k);
    let extent = part.extent();
    let mut figure = |h: &mut String, name: &str, pic: picture::Picture, caption: &str| {
        let _ =
            writeln!(h, "<figure id=\"{}\">\n{}<figcaption>{}</figcaption>\n</figure>", esc(name), pic.svg, caption);
        files.push((name.to_string(), pic.svg));
    };
    h.push_str("<h2>Mesh and singular points</h2>\n");
    let pic = picture::mesh_picture(&part, "mesh", extent, "picture-mesh", &singular);
    let caption = format!(
        "The final mesh ({} triangles), coloured by region; every singular point the mesher lists is labelled \
         (S1–S{}).",
        part.tris.len(),
        singular.len()
    );
    figure(&mut h, "picture-mesh.svg", pic, &esc(&caption));
    // The singular points: the mesher's list joined with the analysis of each.
    let analysed: Vec<&Value> = r["singular_points"].as_array().into_iter().flatten().collect();
    let rows: Vec<Vec<String>> = r["mesh"]["singular_points"]
        .as_array()
        .into_iter()
        .flatten()
        .enumerate()
        .map(|(i, s)| {
            let id = format!("S{}", i + 1);
            let a = analysed.iter().find(|a| a["id"].as_str() == Some(id.as_str()));
            vec![
                id.clone(),
                esc(s["kind"].as_str().unwrap_or("")),
                format!("({}, {})", num(&s["x"], 4), num(&s["y"], 4)),
                num(&s["opening_deg"], 1),
                num(&s["lambda"], 4),
                a.map_or("-".into(), |a| num(&a["coefficient"], 4)),
                esc(a.and_then(|a| a["note"].as_str()).unwrap_or("not analysed (field not singular)")),
            ]
        })
        .collect();
    let at = format!("at, {unit}");
    table(&mut h, &["point", "kind", &at, "opening °", "λ", "coefficient A", "note"], &rows);
    // The field map: 0 to the largest peak away from singular points.
    let mesh_html = std::mem::take(&mut h);
    if part.potential.is_empty() {
        return (mesh_html, h);
    }
    let cap =
        peak_rows(r).iter().filter_map(|g| g["e_v_per_m"].as_f64()).filter(|e| e.is_finite()).fold(0.0f64, f64::max);
    let cap = if cap > 0.0 {
        cap
    } else {
        part.recovered.iter().map(|e| e[0].hypot(e[1])).filter(|e| e.is_finite()).fold(0.0, f64::max)
    };
    h.push_str("<h2>Field strength</h2>\n");
    let all: Vec<Mark> = singular.iter().chain(&peaks).cloned().collect();
    let pic = picture::stress_map(
        &part,
        "|E| at the model potentials",
        extent,
        "picture-field",
        Some(cap),
        &all,
        (700.0, 820.0),
    );
    let caption = "|E| at the model's own potentials (each load case scales it), from 0 to the largest peak away \
                   from singular points; larger values, near singular points, show in the top colour. Lines: \
                   equipotentials. S: singular points; P: the peak away from singular points of each region (table \
                   below).";
    figure(&mut h, "picture-field.svg", pic, caption);
    let rows: Vec<Vec<String>> = peak_rows(r)
        .iter()
        .enumerate()
        .map(|(i, g)| {
            vec![
                format!("P{}", i + 1),
                esc(g["region"].as_str().unwrap_or("")),
                scaled(&g["e_v_per_m"], 1e6, 4),
                scaled(&g["error_bar_v_per_m"], 1e6, 4),
                point(&g["at_m"], k),
            ]
        })
        .collect();
    table(&mut h, &["peak", "region", "|E| kV/mm", "± kV/mm", &at], &rows);
    // Zoomed views: field-singular points first, then the peaks from the largest; a
    // candidate inside a view already chosen is shown by that view.
    let half = 0.02 * extent.width().max(extent.height());
    let mut centres: Vec<(String, [f64; 2], f64)> = Vec::new();
    let singular_ids: Vec<&str> = analysed
        .iter()
        .filter(|a| a["field_singular"].as_bool() == Some(true))
        .filter_map(|a| a["id"].as_str())
        .collect();
    let disc = |id: &str| {
        analysed.iter().find(|a| a["id"].as_str() == Some(id)).and_then(|a| a["extraction_radius_m"].as_f64())
    };
    let mut candidates: Vec<(String, [f64; 2], f64)> = singular
        .iter()
        .filter(|m| singular_ids.contains(&m.label.as_str()))
        .map(|m| (m.label.clone(), m.at, half.max(1.5 * disc(&m.label).unwrap_or(0.0))))
        .collect();
    let mut by_size: Vec<(f64, &Mark)> =
        peaks.iter().zip(peak_rows(r)).map(|(m, g)| (g["e_v_per_m"].as_f64().unwrap_or(0.0), m)).collect();
    by_size.sort_by(|a, b| b.0.total_cmp(&a.0));
    candidates.extend(by_size.into_iter().map(|(_, m)| (m.label.clone(), m.at, half)));
    for (label, at, h) in candidates {
        if centres.len() >= 4 {
            break;
        }
        if centres.iter().all(|(_, c, hc)| (c[0] - at[0]).abs() > 0.8 * hc || (c[1] - at[1]).abs() > 0.8 * hc) {
            centres.push((label, at, h));
        }
    }
    if !centres.is_empty() {
        let _ = writeln!(
            h,
            "<h3>Zoomed views</h3>\n<p>Squares around the field-singular points (at least three times the \
             radius within which their peak is left out) and the largest peaks (side {} {unit}); each on its own \
             colour scale, 0 to the 99th percentile of |E| in view.</p>\n<div style=\"display:flex;flex-wrap:wrap;gap:1em\">",
            num(&(2.0 * half / k).into(), 3)
        );
        for (i, (label, at, side)) in centres.iter().enumerate() {
            let name = format!("picture-zoom-{}.svg", i + 1);
            let win = part.zoom(*at, *side);
            let id = name.trim_end_matches(".svg").to_string();
            let pic = picture::stress_map(&part, &format!("around {label}"), win, &id, None, &all, (420.0, 420.0));
            let shown = pic.labels.join(", ");
            figure(&mut h, &name, pic, &esc(&format!("Around {label}; marks in view: {shown}.")));
        }
        h.push_str("</div>\n");
    }
    (mesh_html, h)
}

/// One mesh's point of a values plot: unknowns, deviation %, bar %.
type ValueWithBar = (f64, f64, f64);

/// Every watched quantity's value on each mesh with its error bar, as a deviation from its
/// final value in percent (so quantities of any unit share one axis), against the unknowns.
fn values_plot(conv: &[Value]) -> String {
    let palette = okabe_ito();
    let series: Vec<(String, Vec<ValueWithBar>)> = conv
        .iter()
        .filter_map(|q| {
            let seq = q["sequence"].as_array()?;
            let last = seq.last()?["value"].as_f64().filter(|v| *v != 0.0 && v.is_finite())?;
            let pts = seq
                .iter()
                .filter_map(|s| {
                    let n = s["unknowns"].as_f64()?;
                    let d = (s["value"].as_f64()? / last - 1.0) * 100.0;
                    let b = s["error_bar"].as_f64().unwrap_or(0.0) / last.abs() * 100.0;
                    (d.is_finite() && b.is_finite()).then_some((n, d, b))
                })
                .collect();
            Some((q["quantity"].as_str().unwrap_or("").to_string(), pts))
        })
        .collect();
    let all = || series.iter().flat_map(|s| s.1.iter());
    let (x0, x1) = all().fold((f64::INFINITY, f64::NEG_INFINITY), |m, p| (m.0.min(p.0), m.1.max(p.0)));
    let lim = all().fold(0.0f64, |m, p| m.max(p.1.abs() + p.2)).max(1e-6) * 1.1;
    let (x0, x1) = if x0.is_finite() && x1 > x0 { (x0, x1) } else { (1.0, 10.0) };
    let mut svg = String::new();
    let names: Vec<String> = series.iter().map(|s| s.0.clone()).collect();
    {
        let root = SVGBackend::with_string(&mut svg, (760, 420 + legend_height(names.len()))).into_drawing_area();
        let _ = root.fill(&WHITE);
        let (root, below) = root.split_vertically(420);
        if let Ok(mut chart) = ChartBuilder::on(&root)
            .caption("every watched value on each mesh, with its error bar", ("sans-serif", 18))
            .margin(10)
            .x_label_area_size(40)
            .y_label_area_size(70)
            .build_cartesian_2d((x0 * 0.8..x1 * 1.25).log_scale(), -lim..lim)
        {
            let _ = chart
                .configure_mesh()
                .x_desc("unknowns")
                .y_desc("deviation from the final value, %")
                .x_label_formatter(&|v| format!("{v:.0e}"))
                .draw();
            for (k, (name, p)) in series.iter().enumerate() {
                let c = palette[k % palette.len()];
                // A small offset per quantity keeps the bars of one mesh apart.
                let dx = 1.0 + 0.02 * (k as f64 - series.len() as f64 / 2.0) / series.len().max(1) as f64;
                let line: Vec<(f64, f64)> = p.iter().map(|q| (q.0 * dx, q.1)).collect();
                if let Ok(s) = chart.draw_series(LineSeries::new(line, c.stroke_width(2))) {
                    s.label(name.clone()).legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 16, y)], c));
                }
                let _ =
                    chart
                        .draw_series(p.iter().map(|q| {
                            ErrorBar::new_vertical(q.0 * dx, q.1 - q.2, q.1, q.1 + q.2, c.stroke_width(1), 6)
                        }));
                if k < palette.len() {
                    let _ = chart.draw_series(p.iter().map(|q| Circle::new((q.0 * dx, q.1), 3, c.filled())));
                } else {
                    let _ = chart.draw_series(p.iter().map(|q| TriangleMarker::new((q.0 * dx, q.1), 5, c.filled())));
                }
            }
        }
        legend_below(&below, &names);
        let _ = root.present();
    }
    svg
}

/// Height of a legend of `n` entries in two columns below a chart, px.
fn legend_height(n: usize) -> u32 {
    n.div_ceil(2) as u32 * 16 + 12
}

/// The legend of a chart's series in two columns below it, in the series' colours and
/// markers (circles for the first eight, triangles after), so it hides no data.
fn legend_below<DB: DrawingBackend>(area: &DrawingArea<DB, plotters::coord::Shift>, names: &[String]) {
    let palette = okabe_ito();
    for (k, name) in names.iter().enumerate() {
        let c = palette[k % palette.len()];
        let (x, y) = (80 + 340 * (k % 2) as i32, 8 + 16 * (k / 2) as i32);
        let _ = area.draw(&PathElement::new(vec![(x, y), (x + 18, y)], c.stroke_width(2)));
        if k < palette.len() {
            let _ = area.draw(&Circle::new((x + 9, y), 3, c.filled()));
        } else {
            let _ = area.draw(&TriangleMarker::new((x + 9, y), 5, c.filled()));
        }
        let _ = area.draw(&Text::new(name.clone(), (x + 24, y - 6), ("sans-serif", 11)));
    }
}

/// Colour-blind-safe qualitative palette (Okabe & Ito 2008).
fn okabe_ito() -> [RGBColor; 8] {
    [
        RGBColor(0, 114, 178),
        RGBColor(213, 94, 0),
        RGBColor(0, 158, 115),
        RGBColor(204, 121, 167),
        RGBColor(230, 159, 0),
        RGBColor(86, 180, 233),
        RGBColor(0, 0, 0),
        RGBColor(240, 228, 66),
    ]
}

/// The caption of a plot file.
fn plot_caption(name: &str) -> String {
    let stem = name.trim_start_matches("plot-").trim_end_matches(".svg");
    if stem == "convergence-values" {
        "Every watched quantity's value on each mesh with its error bar, as the deviation from its final value in \
         percent, against the number of unknowns (bars of one mesh drawn slightly apart)."
            .into()
    } else if stem == "convergence" {
        "The relative error bar of every watched quantity against the number of unknowns, one point per mesh \
         (log-log); the loop stops when every bar is inside the tolerance."
            .into()
    } else if let Some(p) = stem.strip_prefix("creepage-") {
        let p = match p.rsplit_once("-chain") {
            Some((path, k)) if k.parse::<usize>().is_ok() => format!("{path}, chain {k}"),
            _ => p.to_string(),
        };
        format!(
            "|E|, |E_n| on both sides and |E_t| along {p}, at the model's potentials (each load case scales them); \
             sides 1 and 2 as in the probe's CSV (its region_1 and region_2 columns) ({name})."
        )
    } else if let Some(p) = stem.strip_prefix("probe-") {
        format!("|E| along the line probe {p} at the model's potentials ({name}).")
    } else {
        name.to_string()
    }
}

/// The checks of one load case as the report lists them: label (not escaped), the JSON
/// object holding the verdict, and whether it is a gas check (voltages, not a stress).
fn case_checks(case: &Value) -> Vec<(String, &Value, bool)> {
    let list = |key: &str| case[key].as_array().into_iter().flatten();
    let name = |v: &Value, key: &str| v[key].as_str().unwrap_or("").to_string();
    let regions = list("regions").map(|g| (name(g, "region"), &g["peak"], false));
    let interfaces = list("interfaces").map(|t| (format!("tangential on {}", name(t, "probe")), &t["e_t"], false));
    let gas = list("gas").map(|g| (format!("discharge inception in {}", name(g, "region")), g, true));
    regions.chain(interfaces).chain(gas).collect()
}

/// One line that answers the question first: does every check pass in every load case?
/// Names the failing and undecided checks; uncertified verdicts (a single solve) are said so.
fn overall_verdict(checks: &Value) -> String {
    let (mut n, mut fails, mut open, mut uncertified) = (0, Vec::new(), Vec::new(), false);
    for case in checks["load_cases"].as_array().into_iter().flatten() {
        let cname = case["name"].as_str().unwrap_or("");
        for (what, p, _) in case_checks(case) {
            let v = p["verdict"].as_str().unwrap_or("");
            if v == "no allowable" || v.is_empty() {
                continue;
            }
            n += 1;
            uncertified |= p["certified"].as_bool() == Some(false);
            match v {
                "fail" => fails.push(format!("{what} ({cname})")),
                "pass" => {}
                _ => open.push(format!("{what} ({cname}): {v}")),
            }
        }
    }
    let cert = if uncertified { " Some verdicts are uncertified (one solve, no error bar)." } else { "" };
    let (class, text) = if n == 0 {
        ("undecided", "No check has an allowable to compare with: give allowables in the model file.".to_string())
    } else if !fails.is_empty() {
        ("fail", format!("{} of {n} checks fail: {}.{cert}", fails.len(), fails.join("; ")))
    } else if !open.is_empty() {
        ("undecided", format!("No check fails; {} of {n} are not decided: {}.{cert}", open.len(), open.join("; ")))
    } else {
        ("pass", format!("All {n} checks pass in every load case.{cert}"))
    };
    format!(
        "<p class=\"verdict {class}\">{} Indicative: type tests, local codes and licensed practice decide.</p>\n",
        esc(&text)
    )
}

/// Metres per model unit of a results file (1 when unknown).
fn unit_metres_of(r: &Value) -> (f64, String) {
    let unit = r["mesh"]["length_unit"].as_str().unwrap_or("m").to_string();
    (crate::plan::units(&unit).map_or(1.0, |u| u.0), unit)
}

/// The checks that do not depend on the load case, at the model's potentials: field
/// utilisation factors, creepage paths, stressed volumes, condenser grading, discharge
/// inception in gas.
fn other_checks(c: &Value, (k, unit): (f64, String)) -> String {
    let mut h = String::new();
    let list = |key: &str| c[key].as_array().cloned().unwrap_or_default();
    let kv = |v: &Value| scaled(v, 1e6, 4);
    let len = |v: &Value| scaled(v, k, 4);
    let at = |v: &Value| point(v, k);
    let s = |v: &Value| esc(v.as_str().unwrap_or(""));
    let ff = list("field_factors");
    if !ff.is_empty() {
        h.push_str("<h3>Field utilisation factors (model potentials)</h3>\n");
        let rows: Vec<Vec<String>> = ff
            .iter()
            .map(|f| {
                vec![
                    s(&f["name"]),
                    format!("{} → {}", s(&f["between"][0]), s(&f["between"][1])),
                    len(&f["distance_m"]),
                    kv(&f["e_mean_v_per_m"]),
                    format!("{} in {}", kv(&f["e_max_v_per_m"]), s(&f["e_max_region"])),
                    num(&f["utilisation_factor"], 4),
                    num(&f["enhancement_factor"], 4),
                ]
            })
            .collect();
        let d = format!("gap, {unit}");
        table(
            &mut h,
            &["pair", "between", &d, "E mean kV/mm", "E max kV/mm", "η = E mean / E max", "E max / E mean"],
            &rows,
        );
    }
    let cr = list("creepage");
    if !cr.is_empty() {
        h.push_str("<h3>Creepage paths (model potentials)</h3>\n");
        let rows: Vec<Vec<String>> = cr
            .iter()
            .map(|p| {
                let chains: Vec<String> = p["chains"]
                    .as_array()
                    .into_iter()
                    .flatten()
                    .map(|ch| format!("{} {unit}, {} kV", len(&ch[0]), scaled(&ch[1], 1e3, 4)))
                    .collect();
                vec![
                    s(&p["probe"]),
                    esc(&chains.join("; ")),
                    format!("{} at {}", kv(&p["e_t_max_v_per_m"]), at(&p["e_t_max_at_m"])),
                    kv(&p["running_mean_max_v_per_m"]),
                ]
            })
            .collect();
        let a = format!("largest |E_t| kV/mm at ({unit})");
        table(&mut h, &["path", "chains: length, potential drop", &a, "largest running mean kV/mm"], &rows);
    }
    let sv = list("stressed_volumes");
    if !sv.is_empty() {
        h.push_str("<h3>Stressed volumes (model potentials)</h3>\n");
        let rows: Vec<Vec<String>> = sv
            .iter()
            .map(|v| {
                let above = |q: f64| {
                    v["above"]
                        .as_array()
                        .into_iter()
                        .flatten()
                        .find(|a| a[0].as_f64().is_some_and(|x| (x - q).abs() < 1e-9))
                        .map_or("-".into(), |a| num(&a[1], 3))
                };
                vec![
                    s(&v["region"]),
                    kv(&v["e_ref_v_per_m"]),
                    num(&v["volume_m3"], 3),
                    above(0.8),
                    above(0.9),
                    above(0.95),
                    num(&v["weibull_shape"], 2),
                    num(&v["weibull_effective_volume_m3"], 3),
                    num(&v["weibull_effective_volume_outside_discs_m3"], 3),
                    s(&v["note"]),
                ]
            })
            .collect();
        table(
            &mut h,
            &[
                "region",
                "E ref kV/mm",
                "volume m³",
                "> 80 % m³",
                "> 90 % m³",
                "> 95 % m³",
                "Weibull shape",
                "effective volume m³",
                "outside singular discs m³",
                "note",
            ],
            &rows,
        );
    }
    for g in list("grading") {
        let _ = writeln!(h, "<h3>Condenser grading {} (model potentials)</h3>", s(&g["name"]));
        let rows: Vec<Vec<String>> = g["layers"]
            .as_array()
            .into_iter()
            .flatten()
            .map(|l| {
                vec![
                    format!("{} → {}", s(&l["between"][0]), s(&l["between"][1])),
                    scaled(&l["step_v"], 1e3, 4),
                    num(&l["step_percent"], 2),
                    num(&l["ideal_step_percent"], 2),
                    num(&l["partial_capacitance_f"], 4),
                    kv(&l["mean_radial_stress_v_per_m"]),
                    kv(&l["max_radial_stress_v_per_m"]),
                    kv(&l["axial_stress_top_v_per_m"]),
                    kv(&l["axial_stress_bottom_v_per_m"]),
                ]
            })
            .collect();
        table(
            &mut h,
            &[
                "layer",
                "step kV",
                "step %",
                "equal steps %",
                "partial capacitance F",
                "radial mean kV/mm",
                "radial max kV/mm",
                "axial, top end kV/mm",
                "axial, bottom end kV/mm",
            ],
            &rows,
        );
    }
    for g in list("gas") {
        let _ = writeln!(
            h,
            "<h3>Discharge inception in {} ({}, {} bar at {} °C)</h3>\n<p>Inception at {} kV peak ({} × the model's \
             potentials); the weakest field line starts at {} {unit}; {}.</p>",
            s(&g["region"]),
            s(&g["gas"]),
            num(&g["pressure_bar"], 3),
            num(&g["temperature_c"], 1),
            scaled(&g["inception_voltage_v"], 1e3, 4),
            num(&g["inception_scale"], 4),
            at(&g["lines"][g["weakest_line"].as_u64().unwrap_or(0) as usize]["start_m"]),
            s(&g["coefficients"])
        );
        if let Some(n) = g["note"].as_str() {
            let _ = writeln!(h, "<p>{}</p>", esc(n));
        }
    }
    h
}
