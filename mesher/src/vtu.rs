//! Export of a mesh (and fields on it) as a VTK XML unstructured grid (`.vtu`, ASCII).
//!
//! The file holds the triangles (VTK type 5, or 22 for six-node quadratic triangles) and,
//! after them, every tagged boundary or interface edge as a line cell (type 3, or 21 for
//! three-node quadratic edges). Cell arrays: `region` (shape index, −1 on edge cells),
//! `edge_kind` (0 triangle, 1 outer boundary, 2 symmetry axis, 3 conductor surface,
//! 4 dielectric interface) and `edge_ref` (conductor index for conductor surfaces, the
//! first region for interfaces, −1 otherwise). Coordinates are written in metres.
//!
//! # References
//! Kitware, "VTK File Formats" (the XML `UnstructuredGrid` format), VTK User's Guide.

use crate::mesh::{EdgeTag, Mesh};
use std::collections::HashMap;
use std::io::{self, Write};

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

/// Writes `mesh` with optional node and triangle arrays as a `.vtu` document.
///
/// # Panics
/// If an array's length is not `components ×` the number of nodes (triangles).
///
/// # Errors
/// Any error of the writer.
#[track_caller]
pub fn write_vtu(mesh: &Mesh, nodes: &[NodeArray<'_>], cells: &[CellArray<'_>], w: &mut impl Write) -> io::Result<()> {
    for a in nodes {
        assert_eq!(a.values.len(), a.components * mesh.nodes.len(), "node array {} has the wrong length", a.name);
    }
    for a in cells {
        assert_eq!(a.values.len(), a.components * mesh.triangles.len(), "cell array {} has the wrong length", a.name);
    }
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
    writeln!(w, r#"<?xml version="1.0"?>"#)?;
    writeln!(w, r#"<VTKFile type="UnstructuredGrid" version="1.0" byte_order="LittleEndian" header_type="UInt64">"#)?;
    writeln!(w, "<UnstructuredGrid>")?;
    writeln!(w, r#"<Piece NumberOfPoints="{}" NumberOfCells="{}">"#, mesh.nodes.len(), nt + ne)?;
    writeln!(w, "<Points>")?;
    writeln!(w, r#"<DataArray type="Float64" NumberOfComponents="3" format="ascii">"#)?;
    for p in &mesh.nodes {
        writeln!(w, "{:e} {:e} 0", p[0], p[1])?;
    }
    writeln!(w, "</DataArray>\n</Points>")?;
    writeln!(w, "<Cells>")?;
    writeln!(w, r#"<DataArray type="Int64" Name="connectivity" format="ascii">"#)?;
    for (t, tri) in mesh.triangles.iter().enumerate() {
        if p2 {
            let m = mesh.mid_nodes[t];
            writeln!(w, "{} {} {} {} {} {}", tri[0], tri[1], tri[2], m[0], m[1], m[2])?;
        } else {
            writeln!(w, "{} {} {}", tri[0], tri[1], tri[2])?;
        }
    }
    for e in &mesh.edges {
        let [a, b] = e.nodes;
        if p2 {
            writeln!(w, "{a} {b} {}", mid_of[&(a.min(b), a.max(b))])?;
        } else {
            writeln!(w, "{a} {b}")?;
        }
    }
    writeln!(w, "</DataArray>")?;
    let (tn, en) = if p2 { (6, 3) } else { (3, 2) };
    let tri_end = nt as i64 * tn;
    let offsets = (1..=nt as i64).map(|k| k * tn).chain((1..=ne as i64).map(|k| tri_end + k * en));
    write_int_array(w, "Int64", "offsets", offsets)?;
    let (tt, et) = if p2 { (22, 21) } else { (5, 3) };
    let types = std::iter::repeat_n(tt, nt).chain(std::iter::repeat_n(et, ne));
    write_int_array(w, "UInt8", "types", types)?;
    writeln!(w, "</Cells>")?;
    writeln!(w, "<CellData>")?;
    let regions = mesh.regions.iter().map(|&r| r as i64).chain(std::iter::repeat_n(-1, ne));
    write_int_array(w, "Int32", "region", regions)?;
    let kinds = mesh.edges.iter().map(|e| match e.tag {
        EdgeTag::Outer => 1,
        EdgeTag::Axis => 2,
        EdgeTag::Conductor(_) => 3,
        EdgeTag::Interface(..) => 4,
    });
    write_int_array(w, "Int32", "edge_kind", std::iter::repeat_n(0, nt).chain(kinds))?;
    let refs = mesh.edges.iter().map(|e| match e.tag {
        EdgeTag::Conductor(c) => c as i64,
        EdgeTag::Interface(a, _) => a as i64,
        _ => -1,
    });
    write_int_array(w, "Int32", "edge_ref", std::iter::repeat_n(-1, nt).chain(refs))?;
    for a in cells {
        write_array(w, a.name, a.components, a.values, ne)?;
    }
    writeln!(w, "</CellData>")?;
    if !nodes.is_empty() {
        writeln!(w, "<PointData>")?;
        for a in nodes {
            write_array(w, a.name, a.components, a.values, 0)?;
        }
        writeln!(w, "</PointData>")?;
    }
    writeln!(w, "</Piece>\n</UnstructuredGrid>\n</VTKFile>")?;
    Ok(())
}

/// An integer data array, one value a line.
fn write_int_array(w: &mut impl Write, ty: &str, name: &str, values: impl Iterator<Item = i64>) -> io::Result<()> {
    writeln!(w, r#"<DataArray type="{ty}" Name="{name}" format="ascii">"#)?;
    for v in values {
        writeln!(w, "{v}")?;
    }
    writeln!(w, "</DataArray>")
}

/// A Float64 data array, followed by `pad` rows of NaN (for the edge cells after the
/// triangles).
fn write_array(w: &mut impl Write, name: &str, components: usize, values: &[f64], pad: usize) -> io::Result<()> {
    writeln!(w, r#"<DataArray type="Float64" Name="{name}" NumberOfComponents="{components}" format="ascii">"#)?;
    for v in values.chunks(components) {
        write_row(w, v)?;
    }
    let nan = vec![f64::NAN; components];
    for _ in 0..pad {
        write_row(w, &nan)?;
    }
    writeln!(w, "</DataArray>")
}

fn write_row(w: &mut impl Write, v: &[f64]) -> io::Result<()> {
    for (i, x) in v.iter().enumerate() {
        if i > 0 {
            write!(w, " ")?;
        }
        write!(w, "{x:e}")?;
    }
    writeln!(w)
}
