//! Reading unstructured-grid files made elsewhere: the VTK XML format (`.vtu`: ascii,
//! inline binary base64, appended raw or base64 data, with or without zlib compression,
//! UInt32 or UInt64 headers, either byte order) and the legacy ASCII `.vtk` format
//! (`DATASET UNSTRUCTURED_GRID`, the classic `CELLS` list or the 5.x `OFFSETS` /
//! `CONNECTIVITY` sections, `CELL_DATA` as `SCALARS` or `FIELD` arrays).
//!
//! Formats: "VTK File Formats", VTK User's Guide (Kitware, 11th ed., 2010), ch. 19, and the
//! VTK XML file format description (vtk.org, "VTK XML Formats"). The XML is parsed by the
//! roxmltree crate (its skeleton: the arrays' long text runs are found with memchr and
//! left out); base64 by the base64 crate; zlib by flate2.
//!
//! What is read is the file as it stands — points, cells, integer cell arrays — with every
//! length and index checked here, so that nothing later indexes out of range. Turning it into
//! a [`crate::Mesh`] (regions, boundary tags, orientation, conformity) is the validation
//! step's job.

use base64::Engine as _;
use std::io::Read as _;

/// A file's unstructured grid as read.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct GridFile {
    /// Point coordinates (x, y, z).
    pub points: Vec<[f64; 3]>,
    /// VTK cell type of each cell (5 triangle, 22 quadratic triangle, 3 line, 21 quadratic
    /// line, others kept as read).
    pub types: Vec<u8>,
    /// End of each cell's node list in `connectivity` (the start is the previous end).
    pub offsets: Vec<usize>,
    /// Node ids of all cells, each checked to be a point of the file.
    pub connectivity: Vec<u32>,
    /// Cell arrays with one component (first component of others), by name, as f64.
    pub cell_arrays: Vec<(String, Vec<f64>)>,
}

impl GridFile {
    /// The node ids of cell `c`.
    pub fn cell(&self, c: usize) -> &[u32] {
        let start = if c == 0 { 0 } else { self.offsets[c - 1] };
        &self.connectivity[start..self.offsets[c]]
    }

    /// The cell array named `name`.
    pub fn cell_array(&self, name: &str) -> Option<&[f64]> {
        self.cell_arrays.iter().find(|(n, _)| n == name).map(|(_, v)| v.as_slice())
    }
}

/// A reading error: what is wrong, where.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct ReadError(pub String);

impl std::fmt::Display for ReadError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(&self.0)
    }
}

impl std::error::Error for ReadError {}

fn err<T>(msg: impl Into<String>) -> Result<T, ReadError> {
    Err(ReadError(msg.into()))
}

/// Reads a `.vtu` or legacy `.vtk` file's bytes, telling them apart by their first line.
///
/// # Errors
/// A [`ReadError`] naming the array, cell or line that is wrong.
pub fn read_grid(bytes: &[u8]) -> Result<GridFile, ReadError> {
    let head = &bytes[..bytes.len().min(256)];
    if head.starts_with(b"# vtk DataFile") {
        read_legacy(bytes)
    } else if find(head, b"<?xml").is_some() || find(head, b"<VTKFile").is_some() {
        read_vtu(bytes)
    } else {
        err("neither a VTK XML file (.vtu) nor a legacy VTK file (.vtk): the first line is not recognised")
    }
}

fn find(hay: &[u8], needle: &[u8]) -> Option<usize> {
    // Candidates by their first byte (a fast scan), then the whole needle.
    let (&first, _) = needle.split_first()?;
    let mut at = 0;
    while let Some(k) = hay.get(at..)?.iter().position(|&c| c == first) {
        let i = at + k;
        if hay.get(i..i + needle.len()) == Some(needle) {
            return Some(i);
        }
        at = i + 1;
    }
    None
}

/// Scalar types of VTK data arrays.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Scalar {
    I8,
    U8,
    I16,
    U16,
    I32,
    U32,
    I64,
    U64,
    F32,
    F64,
}

impl Scalar {
    fn parse(name: &str) -> Option<Scalar> {
        Some(match name.to_ascii_lowercase().as_str() {
            "int8" | "char" => Scalar::I8,
            "uint8" | "unsigned_char" => Scalar::U8,
            "int16" | "short" => Scalar::I16,
            "uint16" | "unsigned_short" => Scalar::U16,
            "int32" | "int" => Scalar::I32,
            "uint32" | "unsigned_int" => Scalar::U32,
            "int64" | "long" | "vtktypeint64" | "vtkidtype" => Scalar::I64,
            "uint64" | "unsigned_long" | "vtktypeuint64" => Scalar::U64,
            "float32" | "float" => Scalar::F32,
            "float64" | "double" => Scalar::F64,
            _ => return None,
        })
    }

    fn size(self) -> usize {
        match self {
            Scalar::I8 | Scalar::U8 => 1,
            Scalar::I16 | Scalar::U16 => 2,
            Scalar::I32 | Scalar::U32 | Scalar::F32 => 4,
            Scalar::I64 | Scalar::U64 | Scalar::F64 => 8,
        }
    }

    /// The values of raw bytes of this type.
    fn decode(self, b: &[u8], little: bool) -> Vec<f64> {
        use rayon::prelude::*;
        macro_rules! conv {
            ($t:ty, $n:expr) => {
                b.par_chunks_exact($n)
                    .map(|c| {
                        let a: [u8; $n] = c.try_into().unwrap_or([0; $n]);
                        (if little { <$t>::from_le_bytes(a) } else { <$t>::from_be_bytes(a) }) as f64
                    })
                    .collect()
            };
        }
        match self {
            Scalar::I8 => b.par_iter().map(|&x| f64::from(x as i8)).collect(),
            Scalar::U8 => b.par_iter().map(|&x| f64::from(x)).collect(),
            Scalar::I16 => conv!(i16, 2),
            Scalar::U16 => conv!(u16, 2),
            Scalar::I32 => conv!(i32, 4),
            Scalar::U32 => conv!(u32, 4),
            Scalar::I64 => conv!(i64, 8),
            Scalar::U64 => conv!(u64, 8),
            Scalar::F32 => conv!(f32, 4),
            Scalar::F64 => conv!(f64, 8),
        }
    }
}

/// How the binary blocks of a `.vtu` are laid out.
#[derive(Clone, Copy, Debug)]
struct Layout {
    little: bool,
    header: Scalar,
    zlib: bool,
}

impl Layout {
    fn header_ints(&self, b: &[u8]) -> Vec<u64> {
        self.header.decode(b, self.little).into_iter().map(|x| x as u64).collect()
    }

    /// Bytes of one binary array from `data` (header first): returns the payload (where it
    /// lies in `data`, or inflated) and how many bytes of `data` the array took.
    fn payload(&self, data: &[u8], name: &str) -> Result<(Body, usize), ReadError> {
        let h = self.header.size();
        let short =
            || ReadError(format!("data array '{name}': the binary data ends inside the array (file truncated?)"));
        if !self.zlib {
            let n = *self.header_ints(data.get(..h).ok_or_else(short)?).first().ok_or_else(short)? as usize;
            let end = h.checked_add(n).ok_or_else(short)?;
            if end > data.len() {
                return Err(short());
            }
            return Ok((Body::Within(h..end), end));
        }
        let first = self.header_ints(data.get(..3 * h).ok_or_else(short)?);
        let blocks = first[0] as usize;
        if blocks > data.len() / h.max(1) {
            return err(format!("data array '{name}': a compressed header of {blocks} blocks is longer than the file"));
        }
        let sizes = self.header_ints(data.get(3 * h..(3 + blocks) * h).ok_or_else(short)?);
        let mut at = (3 + blocks) * h;
        let (block, last) = (first[1] as usize, first[2] as usize);
        let expected = if blocks == 0 {
            Some(0)
        } else {
            block.checked_mul(blocks - 1).and_then(|x| x.checked_add(if last == 0 { block } else { last }))
        };
        let Some(expected) = expected else {
            return err(format!("data array '{name}': the compressed header's sizes overflow"));
        };
        // zlib expands at most about 1032-fold: a header claiming more is not trusted for the
        // allocation (the length check below refuses it).
        let packed: usize = sizes.iter().map(|&c| c as usize).sum();
        let mut out = Vec::with_capacity(expected.min(packed.saturating_mul(1032)));
        for &c in &sizes {
            let c = c as usize;
            let chunk = data.get(at..at.checked_add(c).ok_or_else(short)?).ok_or_else(short)?;
            flate2::read::ZlibDecoder::new(chunk)
                .take(block.max(last) as u64 + 1)
                .read_to_end(&mut out)
                .map_err(|e| ReadError(format!("data array '{name}': zlib data does not decompress ({e})")))?;
            at += c;
        }
        if out.len() != expected {
            return err(format!("data array '{name}': {} bytes decompressed, the header says {expected}", out.len()));
        }
        Ok((Body::Inflated(out), at))
    }

    /// Bytes of an inline or appended base64 array, as a buffer and the payload's range in
    /// it: the header and data may be encoded as one stream or (VTK's way, and for
    /// compressed data) as separate ones.
    fn payload_base64(&self, text: &[u8], name: &str) -> Result<(Vec<u8>, std::ops::Range<usize>), ReadError> {
        let text = text.trim_ascii();
        let owned: Vec<u8>;
        // Writers put line breaks around the data at most: the scan runs on both cores.
        let inner_space = {
            use rayon::prelude::*;
            text.par_chunks(1 << 20).any(|c| c.iter().any(u8::is_ascii_whitespace))
        };
        let text = if inner_space {
            owned = text.iter().copied().filter(|c| !c.is_ascii_whitespace()).collect();
            &owned[..]
        } else {
            text
        };
        let b64 = base64::engine::general_purpose::STANDARD;
        let bad = |e: String| ReadError(format!("data array '{name}': bad base64 ({e})"));
        let h = self.header.size();
        let head_len = |bytes: usize| bytes.div_ceil(3) * 4;
        let joint = || -> Result<(Vec<u8>, std::ops::Range<usize>), ReadError> {
            let all = decode_base64(text, Vec::new()).map_err(bad)?;
            let (body, _) = self.payload(&all, name)?;
            Ok(body.in_buffer(all))
        };
        // Uncompressed: the header is encoded on its own when its encoded length ends in
        // padding (a 4- or 8-byte header never fills its last group of three bytes), which
        // cannot occur inside one joint stream. Compressed: writers encode the header on its
        // own; a joint stream is the fallback.
        let first = head_len(if self.zlib { 3 * h } else { h });
        if !self.zlib && text.get(first - 1) != Some(&b'=') {
            return joint();
        }
        let Ok(head) = b64.decode(text.get(..first).unwrap_or(text)) else { return joint() };
        let head_bytes = if self.zlib {
            let blocks = self
                .header_ints(head.get(..h).unwrap_or(&[]))
                .first()
                .copied()
                .ok_or_else(|| ReadError(format!("data array '{name}': no compression header")))?;
            (blocks as usize).saturating_add(3).saturating_mul(h)
        } else {
            h
        };
        let k = head_len(head_bytes);
        let separate = || -> Option<Vec<u8>> {
            let mut all = if k == first { head.clone() } else { b64.decode(text.get(..k)?).ok()? };
            all.truncate(head_bytes);
            decode_base64(text.get(k..)?, all).ok()
        };
        match separate().map(|all| self.payload(&all, name).map(|(body, _)| body.in_buffer(all))) {
            Some(Ok(found)) => Ok(found),
            _ => joint(),
        }
    }
}

/// Where a binary array's payload is.
enum Body {
    /// This range of the bytes it was read from (uncompressed data).
    Within(std::ops::Range<usize>),
    /// Inflated from zlib blocks.
    Inflated(Vec<u8>),
}

impl Body {
    /// The buffer holding the payload and its range there: `data` itself for a range of it.
    fn in_buffer(self, data: Vec<u8>) -> (Vec<u8>, std::ops::Range<usize>) {
        match self {
            Body::Within(r) => (data, r),
            Body::Inflated(v) => {
                let n = v.len();
                (v, 0..n)
            }
        }
    }
}

/// Decodes standard base64 (no whitespace) after the bytes of `prefix`, in parallel pieces
/// of whole four-character groups for long texts.
fn decode_base64(text: &[u8], mut prefix: Vec<u8>) -> Result<Vec<u8>, String> {
    use base64::Engine;
    use rayon::prelude::*;
    /// Characters per piece: a multiple of 4 (4 MiB of text, 3 MiB of bytes).
    const PIECE: usize = 1 << 22;
    let b64 = base64::engine::general_purpose::STANDARD;
    if text.len() <= 2 * PIECE || !text.len().is_multiple_of(4) {
        b64.decode_vec(text, &mut prefix).map_err(|e| e.to_string())?;
        return Ok(prefix);
    }
    let pad = text.iter().rev().take(2).take_while(|&&c| c == b'=').count();
    let start = prefix.len();
    prefix.resize(start + text.len() / 4 * 3 - pad, 0);
    let pieces = text.len().div_ceil(PIECE);
    prefix[start..].par_chunks_mut(PIECE / 4 * 3).zip(text.par_chunks(PIECE)).enumerate().try_for_each(
        |(i, (out, t))| {
            if i + 1 < pieces {
                // A whole piece fills its three quarters exactly; padding inside the text
                // would leave it short.
                match b64.decode_slice(t, out) {
                    Ok(n) if n == out.len() => Ok(()),
                    Ok(_) => Err("padding inside the data".to_string()),
                    Err(e) => Err(e.to_string()),
                }
            } else {
                let v = b64.decode(t).map_err(|e| e.to_string())?;
                if v.len() != out.len() {
                    return Err("padding inside the data".to_string());
                }
                out.copy_from_slice(&v);
                Ok(())
            }
        },
    )?;
    Ok(prefix)
}

/// Text runs between tags longer than this many bytes are kept out of the XML parser.
const LONG_TEXT: usize = 1 << 16;

/// `xml` with every text run longer than [`LONG_TEXT`] between a tag's end and the next tag
/// replaced by one character, and for each such run (sorted) where its stand-in lies in the
/// result and where the run lies in `xml`. Only ASCII runs without entity references (`&`)
/// are left out (an array's data: numbers or base64); others stay, for the parser to check
/// and resolve.
fn elide_long_text(xml: &[u8]) -> (Vec<u8>, Vec<(usize, std::ops::Range<usize>)>) {
    let mut out = Vec::new();
    let mut runs = Vec::new();
    let (mut copied, mut pos) = (0, 0);
    while let Some(g) = memchr::memchr(b'>', &xml[pos..]).map(|k| pos + k + 1) {
        let Some(l) = memchr::memchr(b'<', &xml[g..]).map(|k| g + k) else { break };
        let run = &xml[g..l];
        if run.len() > LONG_TEXT && run.is_ascii() && memchr::memchr(b'&', run).is_none() {
            out.extend_from_slice(&xml[copied..g]);
            runs.push((out.len(), g..l));
            out.push(b'0');
            copied = l;
        }
        pos = l;
    }
    out.extend_from_slice(&xml[copied..]);
    (out, runs)
}

/// Reads a VTK XML unstructured grid.
fn read_vtu(bytes: &[u8]) -> Result<GridFile, ReadError> {
    // The XML part is everything before the appended block, which is binary.
    let split = find(bytes, b"<AppendedData").unwrap_or(bytes.len());
    // The XML parser sees the document with its long text runs (the arrays' data) left
    // out, which it would otherwise scan character by character (a fifth of the whole read
    // of a 180 MB base64 file); only that skeleton is checked to be UTF-8 (checking the
    // whole took as long again), the runs being ASCII.
    let xml = &bytes[..split];
    let (skeleton, runs) = elide_long_text(xml);
    let mut skeleton = String::from_utf8(skeleton)
        .map_err(|e| ReadError(format!("the XML part of the file is not UTF-8 text ({})", e.utf8_error())))?;
    let mut appended: Option<(&[u8], bool)> = None;
    if split < bytes.len() {
        let tag_end =
            split + find(&bytes[split..], b">").ok_or(ReadError("the <AppendedData> tag is not closed".into()))?;
        let tag = String::from_utf8_lossy(&bytes[split..tag_end]).to_string();
        let base64 = tag.contains("encoding=\"base64\"");
        let mut at = tag_end + 1;
        while at < bytes.len() && bytes[at].is_ascii_whitespace() {
            at += 1;
        }
        if bytes.get(at) != Some(&b'_') {
            return err("the appended data does not start with '_' after <AppendedData>");
        }
        appended = Some((&bytes[at + 1..], base64));
        skeleton.push_str("</VTKFile>");
    }
    let doc = roxmltree::Document::parse(&skeleton).map_err(|e| ReadError(format!("malformed XML: {e}")))?;
    // A node's text: the elided run it stands for, or its own.
    fn node_text<'a>(
        node: roxmltree::Node<'a, 'a>,
        xml: &'a [u8],
        runs: &[(usize, std::ops::Range<usize>)],
    ) -> &'a [u8] {
        match node.first_child().filter(|c| c.is_text()) {
            Some(t) => match runs.binary_search_by_key(&t.range().start, |r| r.0) {
                Ok(k) => &xml[runs[k].1.clone()],
                Err(_) => node.text().unwrap_or("").as_bytes(),
            },
            None => b"",
        }
    }
    let root = doc.root_element();
    if !root.has_tag_name("VTKFile") {
        return err("the root element is not <VTKFile>");
    }
    if root.attribute("type") != Some("UnstructuredGrid") {
        return err(format!(
            "VTKFile type '{}' is not an unstructured grid (UnstructuredGrid)",
            root.attribute("type").unwrap_or("")
        ));
    }
    let little = root.attribute("byte_order") != Some("BigEndian");
    let header = match root.attribute("header_type") {
        None => Scalar::U32,
        Some(t) => match Scalar::parse(t) {
            Some(s @ (Scalar::U32 | Scalar::U64)) => s,
            _ => return err(format!("header_type '{t}' is neither UInt32 nor UInt64")),
        },
    };
    let zlib = match root.attribute("compressor") {
        None | Some("") => false,
        Some("vtkZLibDataCompressor") => true,
        Some(c) => return err(format!("compressor '{c}' is not supported: write the file uncompressed or with zlib")),
    };
    let layout = Layout { little, header, zlib };
    let pieces: Vec<_> = root.descendants().filter(|n| n.has_tag_name("Piece")).collect();
    let piece = match pieces.as_slice() {
        [p] => *p,
        [] => return err("no <Piece> in the file"),
        _ => return err(format!("{} pieces: write the grid as one piece", pieces.len())),
    };
    let count = |key: &str| -> Result<usize, ReadError> {
        piece.attribute(key).and_then(|v| v.trim().parse().ok()).ok_or(ReadError(format!("<Piece> has no valid {key}")))
    };
    let (np, nc) = (count("NumberOfPoints")?, count("NumberOfCells")?);
    let array = |node: roxmltree::Node, what: &str| -> Result<Vec<f64>, ReadError> {
        let name = node.attribute("Name").unwrap_or(what);
        let ty = node.attribute("type").and_then(Scalar::parse).ok_or(ReadError(format!(
            "data array '{name}': unknown type '{}'",
            node.attribute("type").unwrap_or("")
        )))?;
        let fmt = node.attribute("format").unwrap_or("ascii");
        match fmt {
            "ascii" => node_text(node, xml, &runs)
                .split(u8::is_ascii_whitespace)
                .filter(|t| !t.is_empty())
                .map(|t| {
                    let t = std::str::from_utf8(t).unwrap_or("?");
                    t.parse::<f64>().map_err(|_| ReadError(format!("data array '{name}': '{t}' is not a number")))
                })
                .collect(),
            "binary" => {
                let (bytes, range) = layout.payload_base64(node_text(node, xml, &runs), name)?;
                Ok(ty.decode(&bytes[range], little))
            }
            "appended" => {
                let (data, base64) = appended
                    .ok_or(ReadError(format!("data array '{name}' is appended but the file has no <AppendedData>")))?;
                let off: usize = node
                    .attribute("offset")
                    .and_then(|o| o.trim().parse().ok())
                    .ok_or(ReadError(format!("data array '{name}': no valid offset")))?;
                let rest = data.get(off..).ok_or(ReadError(format!(
                    "data array '{name}': offset {off} lies beyond the appended data (file truncated?)"
                )))?;
                if base64 {
                    let end = rest.iter().position(|&c| c == b'<' || c == b'_').unwrap_or(rest.len());
                    let (bytes, range) = layout.payload_base64(&rest[..end], name)?;
                    Ok(ty.decode(&bytes[range], little))
                } else {
                    match layout.payload(rest, name)?.0 {
                        Body::Within(range) => Ok(ty.decode(&rest[range], little)),
                        Body::Inflated(bytes) => Ok(ty.decode(&bytes, little)),
                    }
                }
            }
            f => err(format!("data array '{name}': format '{f}' is not ascii, binary or appended")),
        }
    };
    let section = |tag: &str| piece.children().find(|n| n.has_tag_name(tag));
    let arrays_of = |tag: &str| -> Vec<roxmltree::Node> {
        section(tag).map(|s| s.children().filter(|n| n.has_tag_name("DataArray")).collect()).unwrap_or_default()
    };
    let pts = arrays_of("Points");
    let pts = pts.first().ok_or(ReadError("no points array in <Points>".into()))?;
    let comps = pts.attribute("NumberOfComponents").and_then(|c| c.parse::<usize>().ok()).unwrap_or(1);
    if comps != 3 {
        return err(format!("the points array has {comps} components; VTK points have 3"));
    }
    let xyz = array(*pts, "Points")?;
    if Some(xyz.len()) != np.checked_mul(3) {
        return err(format!("the points array holds {} values for {np} points (3 each)", xyz.len()));
    }
    let cells = arrays_of("Cells");
    let named = |n: &str| cells.iter().find(|a| a.attribute("Name") == Some(n)).copied();
    let get = |n: &str| named(n).ok_or(ReadError(format!("<Cells> has no '{n}' array"))).and_then(|a| array(a, n));
    let (conn, offsets, types) = (get("connectivity")?, get("offsets")?, get("types")?);
    let mut cell_arrays = Vec::new();
    for a in arrays_of("CellData") {
        let name = a.attribute("Name").unwrap_or("").to_string();
        let comps = a.attribute("NumberOfComponents").and_then(|c| c.parse::<usize>().ok()).unwrap_or(1).max(1);
        let v = array(a, &name)?;
        if Some(v.len()) != comps.checked_mul(nc) {
            return err(format!("cell array '{name}' holds {} values for {nc} cells × {comps}", v.len()));
        }
        cell_arrays.push((name, v.into_iter().step_by(comps).collect()));
    }
    assemble(xyz, conn, offsets, types, cell_arrays, nc)
}

/// Checks the lengths and indices of what a reader found and builds the grid.
fn assemble(
    xyz: Vec<f64>,
    conn: Vec<f64>,
    offsets: Vec<f64>,
    types: Vec<f64>,
    cell_arrays: Vec<(String, Vec<f64>)>,
    nc: usize,
) -> Result<GridFile, ReadError> {
    if offsets.len() != nc || types.len() != nc {
        return err(format!(
            "{nc} cells, but {} offsets and {} cell types: the cell arrays differ in length",
            offsets.len(),
            types.len()
        ));
    }
    use rayon::prelude::*;
    if let Some(k) = xyz.par_iter().position_first(|v| !v.is_finite()) {
        return err(format!("point {} has a coordinate that is not a finite number", k / 3));
    }
    let points: Vec<[f64; 3]> = xyz.par_chunks_exact(3).map(|p| [p[0], p[1], p[2]]).collect();
    let np = points.len();
    let mut prev = 0usize;
    let mut ends = Vec::with_capacity(nc);
    for (c, &o) in offsets.iter().enumerate() {
        if !(o >= 0.0 && o.fract() == 0.0 && o as usize >= prev && o as usize <= conn.len()) {
            return err(format!(
                "cell {c}: offset {o} is not between the previous offset {prev} and the connectivity length {}",
                conn.len()
            ));
        }
        prev = o as usize;
        ends.push(prev);
    }
    if prev != conn.len() {
        return err(format!("the last offset {prev} is not the connectivity length {}", conn.len()));
    }
    let valid = |v: f64| v >= 0.0 && v.fract() == 0.0 && (v as usize) < np;
    if let Some(k) = conn.par_iter().position_first(|&v| !valid(v)) {
        // The cell holding entry k: the first whose end lies beyond it.
        let cell = ends.partition_point(|&e| e <= k);
        return err(format!(
            "cell {cell}: node id {} is out of range (the file has {np} points, ids 0–{})",
            conn[k],
            np.saturating_sub(1)
        ));
    }
    let connectivity: Vec<u32> = conn.par_iter().map(|&v| v as u32).collect();
    let types = types
        .iter()
        .enumerate()
        .map(|(c, &t)| {
            if (0.0..=255.0).contains(&t) && t.fract() == 0.0 {
                Ok(t as u8)
            } else {
                err(format!("cell {c}: cell type {t} is not a VTK cell type"))
            }
        })
        .collect::<Result<Vec<u8>, _>>()?;
    Ok(GridFile { points, types, offsets: ends, connectivity, cell_arrays })
}

/// Reads a legacy ASCII `.vtk` unstructured grid.
fn read_legacy(bytes: &[u8]) -> Result<GridFile, ReadError> {
    let text = std::str::from_utf8(bytes)
        .map_err(|_| ReadError("a binary legacy .vtk file: write it as ASCII or as a .vtu (any encoding)".into()))?;
    let mut lines = text.lines();
    lines.next();
    lines.next(); // title
    match lines.next().map(str::trim) {
        Some(f) if f.eq_ignore_ascii_case("ascii") => {}
        Some(f) if f.eq_ignore_ascii_case("binary") => {
            return err("a binary legacy .vtk file: write it as ASCII or as a .vtu (any encoding)")
        }
        f => return err(format!("line 3 should say ASCII, it says '{}'", f.unwrap_or(""))),
    }
    let rest: Vec<&str> = lines.collect::<Vec<_>>();
    // No section can hold more values than the text has pairs of bytes: allocations follow
    // the file's size, not the counts it claims.
    let cap = bytes.len() / 2 + 1;
    let mut tok = rest.iter().flat_map(|l| l.split_ascii_whitespace()).peekable();
    macro_rules! next {
        ($what:expr) => {
            tok.next().ok_or_else(|| ReadError(format!("the file ends where {} was expected", $what)))
        };
    }
    let num = |t: &str, what: &str| t.parse::<f64>().map_err(|_| ReadError(format!("{what}: '{t}' is not a number")));
    let count =
        |t: &str, what: &str| t.parse::<usize>().map_err(|_| ReadError(format!("{what}: '{t}' is not a count")));
    let (mut xyz, mut conn, mut offsets, mut types) = (Vec::new(), Vec::new(), Vec::new(), Vec::new());
    let mut cell_arrays: Vec<(String, Vec<f64>)> = Vec::new();
    let mut nc = None;
    let mut seen_dataset = false;
    // The keyword-driven sections, in any order the format allows.
    let mut t = next!("DATASET");
    while let Ok(word) = t {
        match word.to_ascii_uppercase().as_str() {
            "DATASET" => {
                let kind = next!("the dataset type")?;
                if !kind.eq_ignore_ascii_case("UNSTRUCTURED_GRID") {
                    return err(format!("DATASET {kind} is not an unstructured grid (UNSTRUCTURED_GRID)"));
                }
                seen_dataset = true;
            }
            "POINTS" => {
                let n = count(next!("the point count")?, "POINTS")?;
                next!("the point type")?;
                xyz.reserve(n.saturating_mul(3).min(cap));
                for _ in 0..n.saturating_mul(3) {
                    xyz.push(num(next!("a point coordinate")?, "POINTS")?);
                }
            }
            "CELLS" => {
                let a = count(next!("the cell count")?, "CELLS")?;
                let b = count(next!("the cell list size")?, "CELLS")?;
                // 5.x: OFFSETS and CONNECTIVITY sections follow; classic: a list of
                // (count, ids…) of total length b.
                let peek = next!("the cell list")?;
                if peek.eq_ignore_ascii_case("OFFSETS") {
                    next!("the offsets type")?;
                    let mut o = Vec::with_capacity(a.min(cap));
                    for _ in 0..a {
                        o.push(num(next!("an offset")?, "OFFSETS")?);
                    }
                    let kw = next!("CONNECTIVITY")?;
                    if !kw.eq_ignore_ascii_case("CONNECTIVITY") {
                        return err(format!("CONNECTIVITY expected after the offsets, found '{kw}'"));
                    }
                    next!("the connectivity type")?;
                    for _ in 0..b {
                        conn.push(num(next!("a node id")?, "CONNECTIVITY")?);
                    }
                    offsets = o.into_iter().skip(1).collect();
                    nc = Some(a.saturating_sub(1));
                } else {
                    let mut first = Some(peek);
                    let mut used = 0;
                    for c in 0..a {
                        let k = match first.take() {
                            Some(p) => count(p, "CELLS")?,
                            None => count(next!("a cell's node count")?, "CELLS")?,
                        };
                        used += k + 1;
                        if used > b {
                            return err(format!("cell {c}: the cell list is longer than the {b} entries CELLS gives"));
                        }
                        for _ in 0..k {
                            conn.push(num(next!("a node id")?, "CELLS")?);
                        }
                        offsets.push(conn.len() as f64);
                    }
                    nc = Some(a);
                }
            }
            "CELL_TYPES" => {
                let n = count(next!("the cell-type count")?, "CELL_TYPES")?;
                for _ in 0..n {
                    types.push(num(next!("a cell type")?, "CELL_TYPES")?);
                }
            }
            "CELL_DATA" => {
                let n = count(next!("the cell-data count")?, "CELL_DATA")?;
                if nc.is_some_and(|c| c != n) {
                    return err(format!("CELL_DATA {n} for {} cells", nc.unwrap_or(0)));
                }
                nc = Some(n);
            }
            "POINT_DATA" => {
                // Point data is not used: skip its arrays by reading the sections as they
                // come (their keywords are handled below and dropped).
                count(next!("the point-data count")?, "POINT_DATA")?;
                // Skip until the next CELL_DATA or the end.
                loop {
                    match tok.peek() {
                        None => break,
                        Some(w) if w.eq_ignore_ascii_case("CELL_DATA") => break,
                        _ => {
                            tok.next();
                        }
                    }
                }
            }
            "SCALARS" => {
                let name = next!("the array name")?.to_string();
                next!("the array type")?;
                let n = nc.ok_or(ReadError(format!("SCALARS {name} before CELL_DATA")))?;
                let mut w = next!("LOOKUP_TABLE or the values")?;
                let mut comps = 1;
                if let Ok(k) = w.parse::<usize>() {
                    comps = k.max(1);
                    w = next!("LOOKUP_TABLE")?;
                }
                if w.eq_ignore_ascii_case("LOOKUP_TABLE") {
                    next!("the lookup table name")?;
                } else {
                    return err(format!("SCALARS {name}: LOOKUP_TABLE expected, found '{w}'"));
                }
                let mut v = Vec::with_capacity(n.saturating_mul(comps).min(cap));
                for _ in 0..n.saturating_mul(comps) {
                    v.push(num(next!("a cell value")?, &name)?);
                }
                cell_arrays.push((name, v.into_iter().step_by(comps).collect()));
            }
            "FIELD" => {
                next!("the field name")?;
                let k = count(next!("the field's array count")?, "FIELD")?;
                for _ in 0..k {
                    let name = next!("the array name")?.to_string();
                    let comps = count(next!("the component count")?, &name)?.max(1);
                    let tuples = count(next!("the tuple count")?, &name)?;
                    next!("the array type")?;
                    let mut v = Vec::with_capacity(tuples.saturating_mul(comps).min(cap));
                    for _ in 0..tuples.saturating_mul(comps) {
                        v.push(num(next!("a value")?, &name)?);
                    }
                    if nc == Some(tuples) {
                        cell_arrays.push((name, v.into_iter().step_by(comps).collect()));
                    }
                }
            }
            "METADATA" => {
                // Informational blocks end at an empty line; their words are skipped until
                // the next section keyword.
                while let Some(w) = tok.peek() {
                    if ["CELL_DATA", "POINT_DATA", "CELLS", "CELL_TYPES", "POINTS", "FIELD", "SCALARS"]
                        .iter()
                        .any(|k| w.eq_ignore_ascii_case(k))
                    {
                        break;
                    }
                    tok.next();
                }
            }
            other => return err(format!("unexpected '{other}' in the legacy file")),
        }
        t = next!("a section");
    }
    if !seen_dataset {
        return err("no DATASET UNSTRUCTURED_GRID line");
    }
    let nc = nc.unwrap_or(0);
    if types.len() != nc {
        return err(format!("CELL_TYPES gives {} types for {nc} cells", types.len()));
    }
    for (name, v) in &cell_arrays {
        if v.len() != nc {
            return err(format!("cell array '{name}' holds {} values for {nc} cells", v.len()));
        }
    }
    assemble(xyz, conn, offsets, types, cell_arrays, nc)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_legacy_file_in_the_classic_and_the_5x_cell_layouts() {
        let classic = "# vtk DataFile Version 4.2\nt\nASCII\nDATASET UNSTRUCTURED_GRID\nPOINTS 4 double\n0 0 0 1 0 0 1 1 0 0 1 0\nCELLS 3 11\n3 0 1 2\n3 0 2 3\n2 0 1\nCELL_TYPES 3\n5 5 3\nCELL_DATA 3\nSCALARS region int 1\nLOOKUP_TABLE default\n1 2 7\n";
        let g = read_grid(classic.as_bytes()).unwrap();
        assert_eq!(g.points.len(), 4);
        assert_eq!(g.cell(1), &[0, 2, 3]);
        assert_eq!(g.cell(2), &[0, 1]);
        assert_eq!(g.cell_array("region").unwrap(), &[1.0, 2.0, 7.0]);
        let v5 = "# vtk DataFile Version 5.1\nt\nASCII\nDATASET UNSTRUCTURED_GRID\nPOINTS 4 double\n0 0 0 1 0 0 1 1 0 0 1 0\nCELLS 4 8\nOFFSETS vtktypeint64\n0 3 6 8\nCONNECTIVITY vtktypeint64\n0 1 2 0 2 3 0 1\nCELL_TYPES 3\n5 5 3\nCELL_DATA 3\nFIELD FieldData 1\nregion 1 3 int\n1 2 7\n";
        assert_eq!(read_grid(v5.as_bytes()).unwrap(), g);
    }

    /// A one-triangle VTU with inline binary arrays, the UInt32 header encoded with the data
    /// (meshio's way) or on its own (VTK's way).
    fn tiny_vtu(separate: bool) -> String {
        let b64 = base64::engine::general_purpose::STANDARD;
        let arr = |data: Vec<u8>| {
            let head = (data.len() as u32).to_le_bytes();
            if separate {
                format!("{}{}", b64.encode(head), b64.encode(&data))
            } else {
                b64.encode([head.to_vec(), data].concat())
            }
        };
        let pts: Vec<u8> =
            [0.0f64, 0.0, 0.0, 1.0, 0.0, 0.0, 0.0, 1.0, 0.0].iter().flat_map(|v| v.to_le_bytes()).collect();
        let ints = |v: &[i32]| v.iter().flat_map(|x| x.to_le_bytes()).collect::<Vec<u8>>();
        format!(
            r#"<?xml version="1.0"?><VTKFile type="UnstructuredGrid" version="1.0" byte_order="LittleEndian"><UnstructuredGrid><Piece NumberOfPoints="3" NumberOfCells="1"><Points><DataArray type="Float64" NumberOfComponents="3" format="binary">{}</DataArray></Points><Cells><DataArray type="Int32" Name="connectivity" format="binary">{}</DataArray><DataArray type="Int32" Name="offsets" format="binary">{}</DataArray><DataArray type="UInt8" Name="types" format="binary">{}</DataArray></Cells><CellData><DataArray type="Int32" Name="region" format="binary">{}</DataArray></CellData></Piece></UnstructuredGrid></VTKFile>"#,
            arr(pts),
            arr(ints(&[0, 1, 2])),
            arr(ints(&[3])),
            arr(vec![5]),
            arr(ints(&[4]))
        )
    }

    #[test]
    fn inline_base64_with_the_header_joint_or_separate() {
        for separate in [false, true] {
            let g = read_grid(tiny_vtu(separate).as_bytes()).unwrap();
            assert_eq!(g.points[1], [1.0, 0.0, 0.0], "separate {separate}");
            assert_eq!(g.cell(0), &[0, 1, 2]);
            assert_eq!(g.types, vec![5]);
            assert_eq!(g.cell_array("region").unwrap(), &[4.0]);
        }
    }

    #[test]
    fn out_of_range_ids_and_short_arrays_are_named() {
        let bad = "# vtk DataFile Version 4.2\nt\nASCII\nDATASET UNSTRUCTURED_GRID\nPOINTS 3 double\n0 0 0 1 0 0 1 1 0\nCELLS 1 4\n3 0 1 5\nCELL_TYPES 1\n5\n";
        let e = read_grid(bad.as_bytes()).unwrap_err().0;
        assert!(e.contains("cell 0") && e.contains("node id 5"), "{e}");
        let short = "# vtk DataFile Version 4.2\nt\nASCII\nDATASET UNSTRUCTURED_GRID\nPOINTS 3 double\n0 0 0 1 0";
        let e = read_grid(short.as_bytes()).unwrap_err().0;
        assert!(e.contains("ends"), "{e}");
    }

    #[test]
    fn long_base64_decodes_in_parallel_pieces_as_in_one() {
        // Texts longer than two pieces take the parallel path: the bytes must equal the
        // base64 crate's own decoding of the whole text (lengths with 0, 1 and 2 padding
        // characters, after a prefix), and padding inside the text is refused.
        use base64::Engine;
        let b64 = base64::engine::general_purpose::STANDARD;
        for len in [9 << 20, (9 << 20) + 1, (9 << 20) + 2] {
            let bytes: Vec<u8> = (0..len).map(|i: usize| (i.wrapping_mul(2_654_435_761) >> 13) as u8).collect();
            let text = b64.encode(&bytes);
            assert!(text.len() > 2 << 22);
            let got = decode_base64(text.as_bytes(), vec![7, 8]).unwrap();
            assert_eq!(&got[..2], &[7, 8]);
            assert!(got[2..] == bytes[..], "length {len}");
        }
        let mut text = b64.encode(vec![1u8; 9 << 20]).into_bytes();
        text[4 << 20] = b'=';
        text[(4 << 20) + 1] = b'=';
        assert!(decode_base64(&text, Vec::new()).is_err());
    }
}
