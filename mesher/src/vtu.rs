//! Export of a mesh (and fields on it) as a VTK XML unstructured grid (`.vtu`), and a reader
//! of the files it writes.
//!
//! Two encodings: [`VtuEncoding::Compressed`] (the default of the command line) writes every
//! data array as appended raw binary, little-endian, compressed with zlib in blocks of 32 KiB
//! (`compressor="vtkZLibDataCompressor"`, `header_type="UInt64"`: each array's block header —
//! block count, block size, size of the last block, then each block's compressed size —
//! followed by its compressed blocks, at the array's `offset` after the `_` that opens
//! `<AppendedData encoding="raw">`); its field arrays are Float32 (seven significant digits,
//! far beyond their discretisation error), the coordinates Float64 and the connectivity
//! Int32. [`VtuEncoding::Ascii`] writes decimal text, one value row a line, every float as
//! Float64 (shortest round-trip digits).
//!
//! The file holds the triangles (VTK type 5, or 22 for six-node quadratic triangles) and,
//! after them, every tagged boundary or interface edge as a line cell (type 3, or 21 for
//! three-node quadratic edges). Cell arrays: `region` (shape index, −1 on edge cells),
//! `edge_kind` (0 triangle, 1 outer boundary, 2 symmetry axis, 3 conductor surface,
//! 4 dielectric interface) and `edge_ref` (conductor index for conductor surfaces, the
//! first region for interfaces, −1 otherwise). Coordinates are written in metres.
//!
//! # References
//! Kitware, "VTK File Formats" (the XML `UnstructuredGrid` format and its binary and
//! compressed data arrays), VTK User's Guide; RFC 1950 (zlib) and RFC 4648 (base64).

use crate::mesh::{EdgeTag, Mesh};
use rayon::prelude::*;
use std::collections::HashMap;
use std::io::{self, Read, Write};

/// How the data arrays are written.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum VtuEncoding {
    /// Decimal text.
    Ascii,
    /// zlib-compressed binary, appended raw.
    Compressed,
}

/// Uncompressed bytes per zlib block (VTK's own default).
const BLOCK: usize = 32 * 1024;

/// The zlib level: the fastest. On the bushing demo's fields at 0.1 % (21 MB raw: Float64
/// points, Float32 values, Int32 connectivity) the default level 6 made the blocks only
/// 1.2 % smaller than level 1 at 2.5 times the time (reference zlib on the same blocks,
/// `bench-results/check.md`).
const COMPRESSION: flate2::Compression = flate2::Compression::fast();

/// The values of one data array.
enum Data {
    F64(Vec<f64>),
    /// A field array: Float32 when compressed, Float64 text otherwise.
    Field(Vec<f64>),
    I32(Vec<i32>),
    U8(Vec<u8>),
}

impl Data {
    fn ty(&self) -> &'static str {
        match self {
            Data::F64(_) => "Float64",
            Data::Field(_) => "Float32",
            Data::I32(_) => "Int32",
            Data::U8(_) => "UInt8",
        }
    }

    fn bytes(&self) -> Vec<u8> {
        match self {
            Data::F64(v) => v.iter().flat_map(|x| x.to_le_bytes()).collect(),
            Data::Field(v) => v.iter().flat_map(|&x| (x as f32).to_le_bytes()).collect(),
            Data::I32(v) => v.iter().flat_map(|x| x.to_le_bytes()).collect(),
            Data::U8(v) => v.clone(),
        }
    }

    fn text(&self, i: usize) -> String {
        match self {
            Data::F64(v) | Data::Field(v) => format!("{:e}", v[i]),
            Data::I32(v) => v[i].to_string(),
            Data::U8(v) => v[i].to_string(),
        }
    }

    fn len(&self) -> usize {
        match self {
            Data::F64(v) | Data::Field(v) => v.len(),
            Data::I32(v) => v.len(),
            Data::U8(v) => v.len(),
        }
    }
}

/// A named array of values per node (`components` values each).
#[derive(Clone, Copy, Debug)]
pub struct NodeArray<'a> {
    /// Array name shown by viewers.
    pub name: &'a str,
    /// Values per node (1 for scalars, 3 for vectors).
    pub components: usize,
    /// `components × num_nodes` values.
    pub values: &'a [f64],
}

/// A named array of values per triangle (edge cells get NaN).
#[derive(Clone, Copy, Debug)]
pub struct CellArray<'a> {
    /// Array name shown by viewers.
    pub name: &'a str,
    /// Values per triangle (1 for scalars, 3 for vectors).
    pub components: usize,
    /// `components × num_triangles` values.
    pub values: &'a [f64],
}

/// The XML being written and, when compressed, the appended binary block.
struct Doc {
    enc: VtuEncoding,
    xml: String,
    appended: Vec<u8>,
}

impl Doc {
    /// One `<DataArray>`: inline text (`per_row` values a line), or a reference to its
    /// compressed bytes in the appended block.
    fn array(&mut self, data: &Data, name: Option<&str>, components: Option<usize>, per_row: usize) -> io::Result<()> {
        use std::fmt::Write as _;
        let name = name.map(|n| format!(r#" Name="{n}""#)).unwrap_or_default();
        let comps = components.map(|c| format!(r#" NumberOfComponents="{c}""#)).unwrap_or_default();
        match self.enc {
            VtuEncoding::Ascii => {
                let ty = if let Data::Field(_) = data { "Float64" } else { data.ty() };
                let _ = writeln!(self.xml, r#"<DataArray type="{ty}"{name}{comps} format="ascii">"#);
                let n = data.len();
                let mut i = 0;
                while i < n {
                    let row: Vec<String> = (i..(i + per_row).min(n)).map(|k| data.text(k)).collect();
                    let _ = writeln!(self.xml, "{}", row.join(" "));
                    i += per_row;
                }
                let _ = writeln!(self.xml, "</DataArray>");
            }
            VtuEncoding::Compressed => {
                let offset = self.appended.len();
                let _ = writeln!(
                    self.xml,
                    r#"<DataArray type="{}"{name}{comps} format="appended" offset="{offset}"/>"#,
                    data.ty()
                );
                let raw = data.bytes();
                let last = match raw.len() % BLOCK {
                    0 if raw.is_empty() => 0,
                    0 => BLOCK,
                    r => r,
                };
                let mut header: Vec<u64> = vec![raw.len().div_ceil(BLOCK) as u64, BLOCK as u64, last as u64];
                // Blocks are independent zlib streams: compressed in parallel, joined in order.
                let blocks: Vec<Vec<u8>> = raw
                    .par_chunks(BLOCK)
                    .map(|chunk| {
                        let mut z = flate2::write::ZlibEncoder::new(Vec::new(), COMPRESSION);
                        z.write_all(chunk)?;
                        z.finish()
                    })
                    .collect::<io::Result<_>>()?;
                header.extend(blocks.iter().map(|c| c.len() as u64));
                self.appended.extend(header.iter().flat_map(|x| x.to_le_bytes()));
                for c in &blocks {
                    self.appended.extend_from_slice(c);
                }
            }
        }
        Ok(())
    }
}

/// Writes `mesh` with optional node and triangle arrays as a `.vtu` document in the given
/// encoding.
///
/// # Panics
/// If an array's length is not `components ×` the number of nodes (triangles).
///
/// # Errors
/// Any error of the writer.
#[track_caller]
pub fn write_vtu(
    mesh: &Mesh,
    nodes: &[NodeArray<'_>],
    cells: &[CellArray<'_>],
    encoding: VtuEncoding,
    w: &mut impl Write,
) -> io::Result<()> {
    for a in nodes {
        assert_eq!(a.values.len(), a.components * mesh.nodes.len(), "node array {} has the wrong length", a.name);
    }
    for a in cells {
        assert_eq!(a.values.len(), a.components * mesh.triangles.len(), "cell array {} has the wrong length", a.name);
    }
    let enc = encoding;
    let p2 = mesh.order() == 2;
    let nt = mesh.triangles.len();
    let ne = mesh.edges.len();
    // Mid node per edge for quadratic line cells.
    let mut mid_of: HashMap<(u32, u32), u32> = HashMap::new();
    if p2 {
        for (tri, m) in mesh.triangles.iter().zip(&mesh.mid_nodes) {
            for k in 0..3 {
                let (a, b) = (tri[k], tri[(k + 1) % 3]);
                mid_of.insert((a.min(b), a.max(b)), m[k]);
            }
        }
    }
    let mut d = Doc { enc, xml: String::new(), appended: Vec::new() };
    d.xml.push_str("<?xml version=\"1.0\"?>\n");
    let compressor = if enc == VtuEncoding::Compressed { r#" compressor="vtkZLibDataCompressor""# } else { "" };
    d.xml.push_str(&format!(
        "<VTKFile type=\"UnstructuredGrid\" version=\"1.0\" byte_order=\"LittleEndian\" header_type=\"UInt64\"{compressor}>\n"
    ));
    d.xml.push_str("<UnstructuredGrid>\n");
    d.xml.push_str(&format!("<Piece NumberOfPoints=\"{}\" NumberOfCells=\"{}\">\n", mesh.nodes.len(), nt + ne));
    d.xml.push_str("<Points>\n");
    let xyz: Vec<f64> = mesh.nodes.iter().flat_map(|p| [p[0], p[1], 0.0]).collect();
    d.array(&Data::F64(xyz), None, Some(3), 3)?;
    d.xml.push_str("</Points>\n<Cells>\n");
    let (tn, en) = if p2 { (6, 3) } else { (3, 2) };
    // Node ids and offsets fit Int32: the node budget keeps meshes far below 2³¹ entries.
    let mut conn: Vec<i32> = Vec::with_capacity(nt * tn + ne * en);
    for (t, tri) in mesh.triangles.iter().enumerate() {
        conn.extend(tri.iter().map(|&v| v as i32));
        if p2 {
            conn.extend(mesh.mid_nodes[t].iter().map(|&v| v as i32));
        }
    }
    for e in &mesh.edges {
        let [a, b] = e.nodes;
        conn.extend([a as i32, b as i32]);
        if p2 {
            conn.push(mid_of[&(a.min(b), a.max(b))] as i32);
        }
    }
    d.array(&Data::I32(conn), Some("connectivity"), None, tn)?;
    let tri_end = (nt * tn) as i32;
    let offsets = (1..=nt as i32).map(|k| k * tn as i32).chain((1..=ne as i32).map(|k| tri_end + k * en as i32));
    d.array(&Data::I32(offsets.collect()), Some("offsets"), None, 1)?;
    let (tt, et) = if p2 { (22u8, 21u8) } else { (5, 3) };
    let types = std::iter::repeat_n(tt, nt).chain(std::iter::repeat_n(et, ne));
    d.array(&Data::U8(types.collect()), Some("types"), None, 1)?;
    d.xml.push_str("</Cells>\n<CellData>\n");
    let regions = mesh.regions.iter().map(|&r| r as i32).chain(std::iter::repeat_n(-1, ne));
    d.array(&Data::I32(regions.collect()), Some("region"), None, 1)?;
    let kinds = mesh.edges.iter().map(|e| match e.tag {
        EdgeTag::Outer => 1,
        EdgeTag::Axis => 2,
        EdgeTag::Conductor(_) => 3,
        EdgeTag::Interface(..) => 4,
    });
    d.array(&Data::I32(std::iter::repeat_n(0, nt).chain(kinds).collect()), Some("edge_kind"), None, 1)?;
    let refs = mesh.edges.iter().map(|e| match e.tag {
        EdgeTag::Conductor(c) => c as i32,
        EdgeTag::Interface(a, _) => a as i32,
        _ => -1,
    });
    d.array(&Data::I32(std::iter::repeat_n(-1, nt).chain(refs).collect()), Some("edge_ref"), None, 1)?;
    for a in cells {
        // The edge cells after the triangles get NaN.
        let v: Vec<f64> = a.values.iter().copied().chain(std::iter::repeat_n(f64::NAN, a.components * ne)).collect();
        d.array(&Data::Field(v), Some(a.name), Some(a.components), a.components)?;
    }
    d.xml.push_str("</CellData>\n");
    if !nodes.is_empty() {
        d.xml.push_str("<PointData>\n");
        for a in nodes {
            d.array(&Data::Field(a.values.to_vec()), Some(a.name), Some(a.components), a.components)?;
        }
        d.xml.push_str("</PointData>\n");
    }
    d.xml.push_str("</Piece>\n</UnstructuredGrid>\n");
    w.write_all(d.xml.as_bytes())?;
    if enc == VtuEncoding::Compressed {
        w.write_all(b"<AppendedData encoding=\"raw\">\n_")?;
        w.write_all(&d.appended)?;
        w.write_all(b"\n</AppendedData>\n")?;
    }
    w.write_all(b"</VTKFile>\n")?;
    Ok(())
}

/// The values of data array `name` (None: the points) of a `.vtu` file this module wrote,
/// in either encoding, as f64 (integers and Float32 converted). Reads what [`write_vtu`]
/// writes, not every VTU: one piece, ASCII or appended raw data, UInt64 headers, zlib or no
/// compression.
///
/// # Errors
/// A message saying what is missing or malformed.
pub fn read_vtu_array(file: &[u8], name: Option<&str>) -> Result<Vec<f64>, String> {
    // The XML part: everything before the appended block (which is binary).
    let split = find(file, b"<AppendedData").unwrap_or(file.len());
    let text = std::str::from_utf8(&file[..split]).map_err(|e| format!("the XML part is not UTF-8: {e}"))?;
    let start = match name {
        Some(n) => text.find(&format!(r#"Name="{n}""#)).ok_or(format!("no data array {n}"))?,
        None => text.find("<Points>").ok_or("no Points section")?,
    };
    // The array's opening tag: the one the name is in, or the first after <Points>.
    let tag_at = if name.is_some() {
        text[..start].rfind("<DataArray").ok_or("no DataArray tag")?
    } else {
        start + text[start..].find("<DataArray").ok_or("no points array")?
    };
    let tag_end = tag_at + text[tag_at..].find('>').ok_or("unterminated tag")?;
    let tag = &text[tag_at..tag_end];
    let attr = |key: &str| {
        tag.find(&format!(r#" {key}=""#)).map(|i| {
            let v = &tag[i + key.len() + 3..];
            v[..v.find('"').unwrap_or(v.len())].to_string()
        })
    };
    let ty = attr("type").ok_or("no type")?;
    if attr("format").as_deref() == Some("ascii") {
        let close = tag_end + text[tag_end..].find("</DataArray>").ok_or("no array end")?;
        return text[tag_end + 1..close]
            .split_whitespace()
            .map(|v| v.parse::<f64>().map_err(|e| format!("{v}: {e}")))
            .collect();
    }
    let offset: usize = attr("offset").ok_or("no offset")?.parse().map_err(|_| "bad offset")?;
    let underscore = split + find(&file[split..], b"_").ok_or("no appended data")?;
    let data = &file[underscore + 1..];
    let word = |k: usize| -> Result<usize, String> {
        let b = data.get(offset + 8 * k..offset + 8 * k + 8).ok_or("truncated header")?;
        Ok(u64::from_le_bytes(b.try_into().expect("8 bytes")) as usize)
    };
    let raw = if text.contains(r#"compressor="vtkZLibDataCompressor""#) {
        let blocks = word(0)?;
        let mut at = offset + 8 * (3 + blocks);
        let mut raw = Vec::new();
        for b in 0..blocks {
            let size = word(3 + b)?;
            let chunk = data.get(at..at + size).ok_or("truncated block")?;
            flate2::read::ZlibDecoder::new(chunk).read_to_end(&mut raw).map_err(|e| format!("zlib: {e}"))?;
            at += size;
        }
        raw
    } else {
        let n = word(0)?;
        data.get(offset + 8..offset + 8 + n).ok_or("truncated array")?.to_vec()
    };
    let values = match ty.as_str() {
        "Float64" => raw.chunks_exact(8).map(|c| f64::from_le_bytes(c.try_into().expect("8"))).collect(),
        "Float32" => raw.chunks_exact(4).map(|c| f32::from_le_bytes(c.try_into().expect("4")) as f64).collect(),
        "Int64" => raw.chunks_exact(8).map(|c| i64::from_le_bytes(c.try_into().expect("8")) as f64).collect(),
        "Int32" => raw.chunks_exact(4).map(|c| i32::from_le_bytes(c.try_into().expect("4")) as f64).collect(),
        "UInt8" => raw.iter().map(|&b| b as f64).collect(),
        other => return Err(format!("unsupported type {other}")),
    };
    Ok(values)
}

/// The first position of `needle` in `hay`.
fn find(hay: &[u8], needle: &[u8]) -> Option<usize> {
    hay.windows(needle.len()).position(|w| w == needle)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::{generate, Fill, Geometry, OuterBoundary, Outline, RefineParams, Shape, Symmetry};

    #[test]
    fn both_encodings_read_back_the_same_values() {
        let shape = |name: &str, outline, fill| Shape { name: name.into(), outline, fill, max_size_m: None };
        let geo = Geometry {
            symmetry: Symmetry::Planar,
            shapes: vec![
                shape(
                    "box",
                    Outline::rectangle("box", [0.0, 0.0], [1.0, 1.0], 0.0).unwrap(),
                    Fill::Dielectric { permittivity: 1.0 },
                ),
                shape("c", Outline::circle("c", [0.5, 0.5], 0.2).unwrap(), Fill::Conductor { conductor: 0 }),
            ],
            conductors: vec!["c".into()],
            outer: OuterBoundary::FixedPotential,
            size_points: vec![],
            thin: vec![],
            boundary_pieces: vec![],
        };
        let mesh = generate(&geo, &RefineParams::new().with_order(2).with_max_size_m(0.02)).unwrap().mesh;
        let phi: Vec<f64> = mesh.nodes.iter().map(|p| p[0].sin() * 1e3 + p[1]).collect();
        let cell: Vec<f64> = (0..mesh.triangles.len()).map(|t| t as f64 * 0.5).collect();
        let write = |enc| {
            let mut out = Vec::new();
            write_vtu(
                &mesh,
                &[NodeArray { name: "phi", components: 1, values: &phi }],
                &[CellArray { name: "c", components: 1, values: &cell }],
                enc,
                &mut out,
            )
            .unwrap();
            out
        };
        let (ascii, packed) = (write(VtuEncoding::Ascii), write(VtuEncoding::Compressed));
        assert!(packed.len() * 3 < ascii.len(), "{} vs {} bytes", packed.len(), ascii.len());
        for name in [None, Some("connectivity"), Some("offsets"), Some("types"), Some("region"), Some("phi"), Some("c")]
        {
            let a = read_vtu_array(&ascii, name).unwrap();
            let b = read_vtu_array(&packed, name).unwrap();
            assert_eq!(a.len(), b.len(), "{name:?}");
            for (x, y) in a.iter().zip(&b) {
                // ASCII keeps the shortest round-trip digits; the compressed fields are
                // Float32 (relative 6e-8), the coordinates and ids exact.
                let tol = if matches!(name, Some("phi") | Some("c")) { 1e-7 * x.abs() } else { 0.0 };
                assert!((x - y).abs() <= tol || (x.is_nan() && y.is_nan()), "{name:?}: {x} vs {y}");
            }
        }
    }
}
