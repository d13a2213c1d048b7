//! Meshing throughput: fieldgrade's graded, size-field driven mesher against spade's plain
//! uniform refinement of the same domain, at about 10⁵ and 10⁶ triangles.
//!
//! Run: `cargo bench -p mesher --bench mesh` (add `-- quick` for 10⁵ only). The table is
//! printed and written to `bench-results/mesh.md`. Figures are single-process wall times
//! on one core; quote the ratios, which are measured in the same run.

use mesher::{generate, Fill, Geometry, OuterBoundary, Outline, RefineParams, Shape, Symmetry};
use spade::{AngleLimit, ConstrainedDelaunayTriangulation, Point2, RefinementParameters, Triangulation};
use std::fmt::Write as _;
use std::time::Instant;

/// The L-shaped electrode demo (fixtures/models/l-electrode.toml) in metres.
fn geometry() -> Geometry {
    let l = [[-0.04, -0.04], [0.04, -0.04], [0.04, 0.0], [0.0, 0.0], [0.0, 0.04], [-0.04, 0.04]];
    Geometry {
        symmetry: Symmetry::Planar,
        shapes: vec![
            Shape {
                name: "box".into(),
                outline: Outline::rectangle("box", [-0.1, -0.1], [0.2, 0.2], 0.0).unwrap(),
                fill: Fill::Dielectric { permittivity: 1.0 },
                max_size_m: None,
            },
            Shape {
                name: "electrode".into(),
                outline: Outline::polygon("electrode", &l).unwrap(),
                fill: Fill::Conductor { conductor: 0 },
                max_size_m: None,
            },
        ],
        conductors: vec!["hv".into()],
        outer: OuterBoundary::FixedPotential,
        size_points: vec![],
        thin: vec![],
        boundary_pieces: vec![],
    }
}

/// spade alone: the same outlines as constraints, refined to a uniform maximum area.
fn spade_uniform(max_area: f64) -> (usize, f64, f64) {
    let pts = [
        [-0.1, -0.1],
        [0.1, -0.1],
        [0.1, 0.1],
        [-0.1, 0.1],
        [-0.04, -0.04],
        [0.04, -0.04],
        [0.04, 0.0],
        [0.0, 0.0],
        [0.0, 0.04],
        [-0.04, 0.04],
    ];
    let edges = vec![[0, 1], [1, 2], [2, 3], [3, 0], [4, 5], [5, 6], [6, 7], [7, 8], [8, 9], [9, 4]];
    let t0 = Instant::now();
    let v: Vec<Point2<f64>> = pts.iter().map(|p| Point2::new(p[0], p[1])).collect();
    let mut cdt = ConstrainedDelaunayTriangulation::<Point2<f64>>::bulk_load_cdt(v, edges).unwrap();
    let r = cdt.refine(
        RefinementParameters::new()
            .with_angle_limit(AngleLimit::from_deg(30.0))
            .with_max_allowed_area(max_area)
            .with_max_additional_vertices(20_000_000),
    );
    assert!(r.refinement_complete);
    let secs = t0.elapsed().as_secs_f64();
    // Count triangles in the dielectric only (outside the electrode), as fieldgrade does.
    let inside_l = |x: f64, y: f64| (-0.04..=0.04).contains(&x) && (-0.04..=0.04).contains(&y) && !(x > 0.0 && y > 0.0);
    let n = cdt
        .inner_faces()
        .filter(|f| {
            let c = f.center();
            !inside_l(c.x, c.y)
        })
        .count();
    (n, secs, cdt.num_inner_faces() as f64)
}

fn main() {
    let quick = std::env::args().any(|a| a == "quick");
    let geo = geometry();
    let mut out = String::new();
    let _ = writeln!(out, "# Meshing benchmark (`cargo bench -p mesher --bench mesh`)\n");
    let _ =
        writeln!(out, "Domain: the L-shaped electrode demo (0.2 m box, 5 singular corners graded, P2 grading law).");
    let _ = writeln!(out, "fieldgrade = graded, size-field driven mesh (seeding + spade bulk load and insertion + own Delaunay refinement of the dielectric for angles + tagging + validation).");
    let _ = writeln!(
        out,
        "spade = spade's own uniform refine (30°, one global max area chosen to give a similar triangle count).\n"
    );
    let _ = writeln!(out, "| target | fieldgrade triangles | fieldgrade s | fieldgrade Mtri/s | in spade (bulk load + insertion) | spade triangles | spade s | spade Mtri/s | ratio fieldgrade/spade tri/s | same, fieldgrade on 1 thread |");
    let _ = writeln!(out, "|---|---|---|---|---|---|---|---|---|---|");
    let targets: &[f64] = if quick { &[1e5] } else { &[1e5, 1e6] };
    let one_thread = rayon::ThreadPoolBuilder::new().num_threads(1).build().unwrap();
    let mut stage_lines = Vec::new();
    let mut p1_lines = Vec::new();
    for &target in targets {
        // Area 0.04 m² minus the electrode 0.0048 m²; equilateral-ish triangles of size h.
        let area = 0.04 - 0.0048;
        let mut h = (area / (target * 0.433)).sqrt();
        let mut best = None;
        let mut h_used = h;
        let mut stages = Vec::new();
        for _ in 0..8 {
            let params = RefineParams::new().with_order(2).with_max_size_m(h).with_max_nodes(20_000_000);
            let t0 = Instant::now();
            let o = generate(&geo, &params).unwrap();
            let secs = t0.elapsed().as_secs_f64();
            let n = o.mesh.num_triangles();
            let spade_s: f64 = o.timings.iter().filter(|(k, _)| k.starts_with("spade")).map(|(_, t)| t).sum();
            best = Some((n, secs, spade_s));
            h_used = h;
            eprintln!("h {h:.2e}: {n} triangles in {secs:.3} s: {:?}", o.timings);
            stages = o.timings.clone();
            // Steer h towards the target count (the count is nearly, not exactly, continuous
            // in h: the seeding lattices of small quadtree leaves take quantised spacings).
            let ratio = n as f64 / target;
            if (ratio - 1.0).abs() < 0.1 {
                break;
            }
            h *= ratio.sqrt();
        }
        let (n, _, _) = best.unwrap();
        // spade alone with a max area giving about the same count.
        let mut max_area = area / n as f64 * 1.6;
        let mut sp = spade_uniform(max_area);
        for _ in 0..4 {
            let ratio = sp.0 as f64 / n as f64;
            if (ratio - 1.0).abs() < 0.1 {
                break;
            }
            max_area *= ratio;
            sp = spade_uniform(max_area);
        }
        // Three interleaved repetitions of both at the settled sizes; medians are quoted.
        let params = RefineParams::new().with_order(2).with_max_size_m(h_used).with_max_nodes(20_000_000);
        let (mut ours_s, mut spade_share, mut theirs_s, mut ratios) = (Vec::new(), Vec::new(), Vec::new(), Vec::new());
        let mut ratios_1 = Vec::new();
        for _ in 0..3 {
            let t0 = Instant::now();
            let o = generate(&geo, &params).unwrap();
            let secs = t0.elapsed().as_secs_f64();
            let in_spade: f64 = o.timings.iter().filter(|(k, _)| k.starts_with("spade")).map(|(_, t)| t).sum();
            stages = o.timings.clone();
            let s2 = spade_uniform(max_area);
            ratios.push((n as f64 / secs) / (s2.2 / s2.1));
            // The same with fieldgrade's own parallel stages on one thread.
            let t1 = Instant::now();
            one_thread.install(|| generate(&geo, &params)).unwrap();
            ratios_1.push((n as f64 / t1.elapsed().as_secs_f64()) / (s2.2 / s2.1));
            ours_s.push(secs);
            spade_share.push(in_spade / secs);
            theirs_s.push(s2.1);
            sp = s2;
        }
        let med = |v: &mut Vec<f64>| {
            v.sort_by(f64::total_cmp);
            v[v.len() / 2]
        };
        let (secs, spade_s, ratio) = (med(&mut ours_s), med(&mut spade_share), med(&mut ratios));
        let ratio_1 = med(&mut ratios_1);
        sp.1 = med(&mut theirs_s);
        let spade_s = spade_s * secs;
        let ours = n as f64 / secs / 1e6;
        let theirs = sp.2 / sp.1 / 1e6;
        let _ = writeln!(
            out,
            "| {target:.0e} | {n} | {secs:.3} | {ours:.3} | {:.0} % | {} | {:.3} | {theirs:.3} | {:.2} | {ratio_1:.2} |",
            100.0 * spade_s / secs,
            sp.2,
            sp.1,
            ratio
        );
        // The same size field meshed with linear elements, timed without the final
        // validation pass (the part comparable to what spade's refine alone delivers).
        let p1 = generate(&geo, &RefineParams::new().with_order(1).with_max_size_m(h_used).with_max_nodes(20_000_000))
            .unwrap();
        let p1_secs: f64 = p1.timings.iter().filter(|(k, _)| *k != "validate").map(|(_, t)| t).sum();
        let p1_rate = p1.mesh.num_triangles() as f64 / p1_secs / 1e6;
        p1_lines.push(format!(
            "| {target:.0e} | {} | {p1_secs:.3} | {p1_rate:.3} | {:.2} |",
            p1.mesh.num_triangles(),
            p1_rate / theirs
        ));
        let total: f64 = stages.iter().map(|(_, t)| t).sum();
        stage_lines.push(format!(
            "- {target:.0e}: {}",
            stages.iter().map(|(k, t)| format!("{k} {:.0} %", 100.0 * t / total)).collect::<Vec<_>>().join(", ")
        ));
    }
    let _ = writeln!(out, "\nTimes and the ratio are medians of three interleaved repetitions (fieldgrade, spade, fieldgrade, ...); the ratio is the median of the per-pair ratios.");
    let _ = writeln!(
        out,
        "fieldgrade's seeding and validation run on rayon's threads ({} here); spade's insertion and refinement, and the rest, on one. The last column runs fieldgrade inside a one-thread pool, timed in the same repetitions.",
        rayon::current_num_threads()
    );
    let _ = writeln!(out, "spade's triangle rate counts every triangle it made (also inside the electrode); fieldgrade's counts the dielectric mesh it returns, with P2 mid-edge nodes, tags and validation included in its time.");
    let _ = writeln!(out, "\nThe same size field with linear elements, excluding the final validation pass:\n");
    let _ = writeln!(
        out,
        "| target | triangles | s | Mtri/s | ratio to spade uniform (same run, row above) |\n|---|---|---|---|---|\n{}",
        p1_lines.join("\n")
    );
    let _ = writeln!(out, "\nfieldgrade time by stage (shares of the last repetition):\n{}", stage_lines.join("\n"));
    print!("{out}");
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("../bench-results/mesh.md");
    std::fs::write(&path, &out).unwrap();
    eprintln!("written to {}", path.display());
}
