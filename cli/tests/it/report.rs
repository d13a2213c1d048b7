//! The report `check` writes (and `fieldgrade report DIR` rebuilds): self-contained HTML with
//! every check and singular point of results.json in it and the plots beside it.

use crate::common::{fixture, run, stderr};
use serde_json::Value;

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
