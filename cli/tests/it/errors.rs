//! Each bad input returns a clear message naming file, line, column and key, exit code 2,
//! no panic, and no output file (issue: "every bad input below returns a clear error").
//! The whole rendered message (marker, line, column, key, help) is pinned by an insta
//! snapshot per case (`snapshots/it__errors__*.snap`), the temporary folder's path replaced
//! by `[dir]`.

use crate::common::{run, stderr};
use std::path::Path;

const HEAD: &str = r#"
[model]
symmetry = "planar"
length_unit = "mm"

[[material]]
name = "air"
permittivity = 1.0

[[material]]
name = "epoxy"
permittivity = 4.5

[[conductor]]
name = "hv"
potential_v = 1000.0

[[shape]]
name = "box"
material = "air"
rectangle = { corner = [0.0, 0.0], size = [100.0, 100.0] }
"#;

/// Writes `text` as a model, runs `mesh` with VTU and SVG outputs, and checks the failure.
fn fails(text: &str, expect: &[&str]) {
    let dir = tempfile::tempdir().unwrap();
    let model = dir.path().join("bad.toml");
    std::fs::write(&model, text).unwrap();
    let vtu = dir.path().join("out.vtu");
    let svg = dir.path().join("out.svg");
    let o = run(&["mesh", model.to_str().unwrap(), "--out", vtu.to_str().unwrap(), "--svg", svg.to_str().unwrap()]);
    let err = stderr(&o);
    assert_eq!(o.status.code(), Some(2), "exit code for:\n{err}");
    assert!(!err.contains("panicked"), "{err}");
    assert!(err.contains("bad.toml"), "names the file:\n{err}");
    for e in expect {
        assert!(err.contains(e), "expected {e:?} in:\n{err}");
    }
    // No output, not even a temporary file.
    let left: Vec<_> = std::fs::read_dir(dir.path()).unwrap().map(|e| e.unwrap().file_name()).collect();
    assert_eq!(left.len(), 1, "files left behind: {left:?}");
    assert!(!Path::new(&vtu).exists() && !Path::new(&svg).exists());
    let shown = err.replace(&dir.path().display().to_string(), "[dir]");
    insta::assert_snapshot!(snapshot_name(), shown);
}

/// The snapshot's name: the test's name, with a count when a test checks several inputs.
fn snapshot_name() -> String {
    thread_local!(static CALLS: std::cell::Cell<usize> = const { std::cell::Cell::new(0) });
    let k = CALLS.with(|c| {
        c.set(c.get() + 1);
        c.get()
    });
    let thread = std::thread::current();
    let test = thread.name().unwrap_or("main").rsplit("::").next().unwrap_or("main").to_string();
    if k == 1 {
        test
    } else {
        format!("{test}-{k}")
    }
}

/// Line of the first occurrence of `needle` in `text` (1-based), to check located messages.
fn line_of(text: &str, needle: &str) -> String {
    let off = text.find(needle).unwrap();
    format!(":{}:", text[..off].matches('\n').count() + 1)
}

#[test]
fn unclosed_path() {
    let t = format!("{HEAD}\n[[shape]]\nname = \"u\"\nconductor = \"hv\"\npath = {{ start = [10.0, 10.0], steps = [ {{ line_to = [20.0, 10.0] }}, {{ line_to = [20.0, 20.0] }} ] }}\n");
    fails(&t, &["not closed", "stops at (20, 20) mm", "shape 'u'", &line_of(&t, "path = ")]);
}

#[test]
fn self_intersecting_outline() {
    let t = format!("{HEAD}\n[[shape]]\nname = \"bow\"\nmaterial = \"epoxy\"\npolygon = [[10.0, 10.0], [40.0, 40.0], [40.0, 10.0], [10.0, 40.0]]\n");
    fails(&t, &["crosses itself", "bow"]);
}

#[test]
fn zero_area_shape() {
    let t = format!("{HEAD}\n[[shape]]\nname = \"flat\"\nmaterial = \"epoxy\"\nrectangle = {{ corner = [10.0, 10.0], size = [0.0, 5.0] }}\n");
    fails(&t, &["width", "greater than zero", "shape[1].rectangle.size"]);
}

#[test]
fn unknown_material() {
    let t = format!("{HEAD}\n[[shape]]\nname = \"post\"\nmaterial = \"epoxi\"\ncircle = {{ center = [50.0, 50.0], radius = 5.0 }}\n");
    fails(&t, &["unknown material 'epoxi'", "known materials: air, epoxy", &line_of(&t, "\"epoxi\"")]);
}

#[test]
fn duplicate_names() {
    let t = format!(
        "{HEAD}\n[[shape]]\nname = \"box\"\nmaterial = \"epoxy\"\ncircle = {{ center = [50.0, 50.0], radius = 5.0 }}\n"
    );
    fails(&t, &["shape 'box' is defined twice"]);
    let t = HEAD.replace("name = \"epoxy\"", "name = \"air\"");
    fails(&t, &["material 'air' is defined twice"]);
}

#[test]
fn arc_radius_shorter_than_half_chord() {
    let t = format!("{HEAD}\n[[shape]]\nname = \"arc\"\nconductor = \"hv\"\npath = {{ start = [10.0, 10.0], steps = [ {{ line_to = [30.0, 10.0] }}, {{ arc_to = [10.0, 10.0], radius = 5.0 }} ] }}\n");
    fails(&t, &["shorter than half its chord", "at least 10 mm"]);
}

#[test]
fn nan_and_infinite_coordinates() {
    let t = format!(
        "{HEAD}\n[[shape]]\nname = \"p\"\nmaterial = \"epoxy\"\npolygon = [[10.0, 10.0], [nan, 20.0], [30.0, 10.0]]\n"
    );
    fails(&t, &["finite", "shape[1].polygon[1]"]);
    let t = format!(
        "{HEAD}\n[[shape]]\nname = \"c\"\nmaterial = \"epoxy\"\ncircle = {{ center = [inf, 50.0], radius = 5.0 }}\n"
    );
    fails(&t, &["finite", "shape[1].circle.center"]);
}

#[test]
fn negative_radius_in_axisymmetric_model() {
    let t = HEAD.replace("\"planar\"", "\"axisymmetric\"").replace("corner = [0.0, 0.0]", "corner = [-10.0, 0.0]");
    fails(&t, &["x = -10 mm < 0", "axisymmetric"]);
}

#[test]
fn shape_outside_the_domain() {
    let t = format!(
        "{HEAD}\n[[shape]]\nname = \"far\"\nconductor = \"hv\"\ncircle = {{ center = [150.0, 50.0], radius = 5.0 }}\n"
    );
    fails(&t, &["reaches outside the domain 'box'", &line_of(&t, "name = \"far\"")]);
}

#[test]
fn missing_domain() {
    let t = "[[material]]\nname = \"air\"\npermittivity = 1.0\n";
    fails(t, &["no shape", "first [[shape]]"]);
}

#[test]
fn non_positive_sizes() {
    let t = format!("{HEAD}\n[mesh]\nmax_size = 0.0\n");
    fails(&t, &["max_size must be a finite number greater than zero", "mesh.max_size"]);
    let t = format!("{HEAD}\n[mesh]\nmax_size = -2.0\n");
    fails(&t, &["mesh.max_size"]);
    let t = format!("{HEAD}\n[[shape]]\nname = \"c\"\nmaterial = \"epoxy\"\nmax_size = 0.0\ncircle = {{ center = [50.0, 50.0], radius = 5.0 }}\n");
    fails(&t, &["shape[1].max_size"]);
    let t = format!("{HEAD}\n[[mesh.point]]\nat = [1.0, 1.0]\nsize = -1.0\n");
    fails(&t, &["mesh.point[0].size"]);
}

#[test]
fn syntax_and_unknown_keys() {
    fails(&format!("{HEAD}\n[[shape]\n"), &["not valid"]);
    let t = format!("{HEAD}\n[mesh]\nmax_sise = 2.0\n");
    fails(&t, &["unknown field", "max_sise", &line_of(&t, "max_sise")]);
}

#[test]
fn conductors_touching() {
    let t = format!("{HEAD}\n[[conductor]]\nname = \"gnd\"\npotential_v = 0.0\n\n[[shape]]\nname = \"a\"\nconductor = \"hv\"\nrectangle = {{ corner = [10.0, 10.0], size = [10.0, 10.0] }}\n\n[[shape]]\nname = \"b\"\nconductor = \"gnd\"\nrectangle = {{ corner = [20.0, 20.0], size = [10.0, 10.0] }}\n");
    fails(&t, &["touch at (20, 20) mm", "'hv'", "'gnd'"]);
}

#[test]
fn missing_file() {
    let o = run(&["mesh", "/nonexistent/model.toml"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("cannot read the model file"));
}

#[test]
fn bad_probes() {
    let t = format!("{HEAD}\n[[probe]]\nname = \"p\"\ninterface = [\"box\", \"nothing\"]\n");
    fails(&t, &["refers to shape 'nothing'", "probe[0].interface"]);
    let t = format!("{HEAD}\n[[probe]]\nname = \"bad name\"\npath = [[1.0, 1.0], [2.0, 2.0]]\n");
    fails(&t, &["not usable in a file name", "probe[0].name"]);
    let t = format!("{HEAD}\n[[probe]]\nname = \"p\"\npath = [[1.0, 1.0]]\n");
    fails(&t, &["at least two points"]);
}

#[test]
fn open_boundary_needs_a_circular_domain() {
    let t = format!("{HEAD}\n[boundary]\nouter = \"open\"\n");
    fails(&t, &["open boundary needs a circular domain", "'box'"]);
}
