//! Arbitrary small models, written as model-file text and taken through the whole path
//! the commands take: parse, memory budget, mesh. Every run must end in a valid mesh or a
//! diagnostic, within the node budget, never in a panic or a hang.
#![no_main]

use arbitrary::Arbitrary;
use libfuzzer_sys::fuzz_target;
use std::fmt::Write;
use std::path::Path;

#[derive(Arbitrary, Debug)]
struct Part {
    /// Vertices on a 1/8 mm grid within the box (3 to 8 of them).
    points: Vec<(i8, i8)>,
    conductor: bool,
    /// A circle instead of a polygon (centre = first point, radius from `size`).
    circle: bool,
    size: u8,
}

#[derive(Arbitrary, Debug)]
struct Case {
    parts: Vec<Part>,
    axisymmetric: bool,
    order2: bool,
    /// max_size in 1/4 mm (0 means the default).
    max_size: u8,
    outer: u8,
}

fuzz_target!(|case: Case| {
    let mut t = String::new();
    let sym = if case.axisymmetric { "axisymmetric" } else { "planar" };
    let _ = writeln!(t, "[model]\nsymmetry = \"{sym}\"\nlength_unit = \"mm\"\n");
    let _ = writeln!(t, "[[material]]\nname = \"air\"\npermittivity = 1.0\n");
    let _ = writeln!(t, "[[material]]\nname = \"epoxy\"\npermittivity = 4.0\n");
    let _ = writeln!(t, "[[conductor]]\nname = \"hv\"\npotential_v = 1000.0\n");
    let _ = writeln!(t, "[[conductor]]\nname = \"f\"\nfloating = true\n");
    let _ = writeln!(t, "[[shape]]\nname = \"box\"\nmaterial = \"air\"\nrectangle = {{ corner = [0.0, -20.0], size = [40.0, 40.0] }}\n");
    for (i, p) in case.parts.iter().take(4).enumerate() {
        let pts: Vec<(f64, f64)> =
            p.points.iter().take(8).map(|&(x, y)| (20.0 + x as f64 / 8.0, y as f64 / 8.0)).collect();
        let fill = if p.conductor {
            format!("conductor = \"{}\"", if i % 2 == 0 { "hv" } else { "f" })
        } else {
            "material = \"epoxy\"".to_string()
        };
        if p.circle && !pts.is_empty() {
            let r = 0.25 + p.size as f64 / 16.0;
            let _ = writeln!(t, "[[shape]]\nname = \"p{i}\"\n{fill}\ncircle = {{ center = [{}, {}], radius = {r} }}\n", pts[0].0, pts[0].1);
        } else if pts.len() >= 3 {
            let list: Vec<String> = pts.iter().map(|(x, y)| format!("[{x}, {y}]")).collect();
            let _ = writeln!(t, "[[shape]]\nname = \"p{i}\"\n{fill}\npolygon = [{}]\n", list.join(", "));
        }
    }
    match case.outer % 3 {
        0 => t.push_str("[boundary]\nouter = \"potential\"\npotential_v = 0.0\n"),
        1 => t.push_str("[boundary]\nouter = \"zero_flux\"\n"),
        _ => {}
    }
    let _ = writeln!(t, "\n[mesh]\norder = {}\nmax_nodes = 20000", if case.order2 { 2 } else { 1 });
    if case.max_size > 0 {
        let _ = writeln!(t, "max_size = {}", case.max_size as f64 / 4.0);
    }
    let Ok(mut model) = fieldgrade::plan::parse(Path::new("fuzz.toml"), &t) else { return };
    fieldgrade::plan::budget::prepare(&mut model, None, Some(2e9), false);
    match mesher::generate(&model.geometry, &model.params) {
        Ok(out) => {
            out.mesh.validate().expect("generate returns valid meshes");
            assert!(out.mesh.num_vertices as usize <= model.params.max_nodes + 4096, "budget overrun");
        }
        Err(e) => {
            let _ = model.mesh_error(&e).to_string();
        }
    }
});
