use std::path::{Path, PathBuf};
use std::process::{Command, Output};

pub fn bin() -> Command {
    Command::new(env!("CARGO_BIN_EXE_fieldgrade"))
}

pub fn fixture(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../fixtures/models").join(name)
}

pub fn run(args: &[&str]) -> Output {
    bin().args(args).output().expect("the binary runs")
}

pub fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

pub fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).into_owned()
}

/// A mesh read back from a VTU file written by fieldgrade (either encoding).
pub struct VtuMesh {
    /// Point coordinates, metres.
    pub points: Vec<[f64; 2]>,
    /// Triangles (the corner nodes of linear and quadratic triangle cells) and their region.
    pub triangles: Vec<([usize; 3], i64)>,
}

/// The values of the data array named `name` (the point coordinates for `None`), through the
/// project's reader (either encoding).
pub fn data_array(file: &[u8], name: Option<&str>) -> Vec<f64> {
    mesher::read_vtu_array(file, name).unwrap_or_else(|e| panic!("{name:?}: {e}"))
}

/// Reads the triangles of a VTU file fieldgrade wrote (VTK cell types 5 and 22).
pub fn read_vtu(path: &Path) -> VtuMesh {
    let text = std::fs::read(path).unwrap();
    let xyz = data_array(&text, None);
    let points = xyz.chunks(3).map(|c| [c[0], c[1]]).collect();
    let conn: Vec<usize> = data_array(&text, Some("connectivity")).iter().map(|&v| v as usize).collect();
    let offsets: Vec<usize> = data_array(&text, Some("offsets")).iter().map(|&v| v as usize).collect();
    let types: Vec<u8> = data_array(&text, Some("types")).iter().map(|&v| v as u8).collect();
    let region: Vec<i64> = data_array(&text, Some("region")).iter().map(|&v| v as i64).collect();
    let mut triangles = Vec::new();
    let mut start = 0;
    for (k, (&end, &ty)) in offsets.iter().zip(&types).enumerate() {
        if ty == 5 || ty == 22 {
            triangles.push(([conn[start], conn[start + 1], conn[start + 2]], region[k]));
        }
        start = end;
    }
    VtuMesh { points, triangles }
}

/// Writes `text` as `m.toml` in a fresh folder, runs `command` on it with `--out` and
/// `extra`, and asserts success. Returns the folder (kept alive by the caller), the parsed
/// `results.json` and the terminal output.
pub fn run_model(text: &str, command: &str, extra: &[&str]) -> (tempfile::TempDir, serde_json::Value, String) {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("m.toml");
    std::fs::write(&path, text).unwrap();
    let out = dir.path().join("out");
    let mut a = vec![command, path.to_str().unwrap(), "--out", out.to_str().unwrap()];
    a.extend_from_slice(extra);
    let o = run(&a);
    assert!(o.status.success(), "{}", stderr(&o));
    let r = serde_json::from_str(&std::fs::read_to_string(out.join("results.json")).unwrap()).unwrap();
    (dir, r, stdout(&o))
}

/// The two-layer coaxial line several tests solve: core r = 10 mm at 1 kV, paper (εr 4) to
/// 20 mm, oil (εr 2.2) to the earthed outer boundary at 30 mm; lengths in `unit` ("mm" or
/// "m"), P2 elements of at most `max_size` (in `unit`).
pub fn two_layer_coax(unit: &str, max_size: f64) -> String {
    let k = match unit {
        "mm" => 1.0,
        "m" => 1e-3,
        u => panic!("unit {u}"),
    };
    let (a, c, b) = (10.0 * k, 20.0 * k, 30.0 * k);
    format!(
        r#"
[model]
symmetry = "planar"
length_unit = "{unit}"

[[material]]
name = "oil"
permittivity = 2.2

[[material]]
name = "paper"
permittivity = 4.0

[[conductor]]
name = "core"
potential_v = 1000.0

[[shape]]
name = "oil"
material = "oil"
circle = {{ center = [0.0, 0.0], radius = {b:?} }}

[[shape]]
name = "paper"
material = "paper"
circle = {{ center = [0.0, 0.0], radius = {c:?} }}

[[shape]]
name = "core"
conductor = "core"
circle = {{ center = [0.0, 0.0], radius = {a:?} }}

[boundary]
outer = "potential"
potential_v = 0.0

[mesh]
max_size = {max_size:?}
order = 2
"#
    )
}
