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

/// A mesh read back from a VTU file written by fieldgrade (ASCII data arrays).
pub struct VtuMesh {
    /// Point coordinates, metres.
    pub points: Vec<[f64; 2]>,
    /// Triangles (the corner nodes of linear and quadratic triangle cells) and their region.
    pub triangles: Vec<([usize; 3], i64)>,
}

/// The whitespace-separated values of the data array named `name` (the unnamed point
/// coordinates for `None`).
fn data_array<'a>(text: &'a str, name: Option<&str>) -> Vec<&'a str> {
    let start = match name {
        Some(n) => text.find(&format!("Name=\"{n}\"")).unwrap_or_else(|| panic!("no data array {n}")),
        None => text.find("<Points>").expect("a Points section"),
    };
    let body = &text[start..];
    let open = body.find('>').expect("data array start") + 1;
    let open = if name.is_none() { open + body[open..].find('>').expect("points data array") + 1 } else { open };
    let close = body.find("</DataArray>").expect("data array end");
    body[open..close].split_whitespace().collect()
}

/// Reads the triangles of a VTU file fieldgrade wrote (VTK cell types 5 and 22).
pub fn read_vtu(path: &Path) -> VtuMesh {
    let text = std::fs::read_to_string(path).unwrap();
    let xyz: Vec<f64> = data_array(&text, None).iter().map(|v| v.parse().unwrap()).collect();
    let points = xyz.chunks(3).map(|c| [c[0], c[1]]).collect();
    let conn: Vec<usize> = data_array(&text, Some("connectivity")).iter().map(|v| v.parse().unwrap()).collect();
    let offsets: Vec<usize> = data_array(&text, Some("offsets")).iter().map(|v| v.parse().unwrap()).collect();
    let types: Vec<u8> = data_array(&text, Some("types")).iter().map(|v| v.parse().unwrap()).collect();
    let region: Vec<i64> = data_array(&text, Some("region")).iter().map(|v| v.parse().unwrap()).collect();
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
