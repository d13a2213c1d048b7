//! `[import]`: a triangle mesh made elsewhere (`.vtu` in any encoding, legacy ASCII `.vtk`)
//! instead of drawn shapes — the file, the cell array holding region ids and boundary tags,
//! each region id mapped to a material or a conductor, each boundary tag to a conductor or the
//! outer boundary. Checked here: the file name, every id mapped once, every material and
//! conductor known; the file itself is read and checked by `mesher::read_grid` and
//! `mesher::import_mesh` when a command meshes.

use super::diag::ModelError;
use super::raw::RawModel;
use super::{Conductor, Ctx, Material};
use mesher::{BoundaryUse, ImportSpec, RegionUse, Symmetry};
use std::path::PathBuf;

/// A checked `[import]` table.
#[derive(Clone, Debug)]
pub struct ImportPlan {
    /// The mesh file, resolved against the model file's folder.
    pub file: PathBuf,
    /// How to read it.
    pub spec: ImportSpec,
    /// Material index of each dielectric region (by region index of `spec.region_names`).
    pub region_material: Vec<usize>,
    /// Byte span of the `file` value, for errors about the file.
    pub(super) file_span: std::ops::Range<usize>,
}

impl super::Plan {
    /// An error about the imported mesh file, pointing at `[import] file`.
    pub fn import_error(&self, msg: String) -> ModelError {
        let span = self.import.as_ref().map(|i| i.file_span.clone());
        ModelError::new(&self.path, &self.source, span, msg).key("import.file")
    }
}

/// `[import]`, when the model has one.
pub(super) fn import(
    cx: &Ctx<'_>,
    raw: &RawModel,
    materials: &[Material],
    conductors: &[Conductor],
    symmetry: Symmetry,
) -> Result<Option<ImportPlan>, ModelError> {
    let Some(t) = &raw.import else { return Ok(None) };
    if let Some(s) = raw.shape.first() {
        return Err(cx
            .err(s.span(), "a model either draws its shapes or imports a mesh, not both".into())
            .key("shape")
            .help("remove the [[shape]] tables, or the [import] table"));
    }
    let t = t.get_ref();
    let name = t.file.get_ref().trim();
    if name.is_empty() {
        return Err(cx.err(t.file.span(), "the mesh file name is empty".into()).key("import.file"));
    }
    let file = cx.path.parent().map(|d| d.join(name)).unwrap_or_else(|| PathBuf::from(name));
    let id_array = t.id_array.as_ref().map(|a| a.get_ref().clone()).unwrap_or_else(|| "region".into());
    let conductor = |n: &toml::Spanned<String>, key: String| {
        conductors.iter().position(|c| &c.name == n.get_ref()).map(|c| c as u32).ok_or_else(|| {
            cx.err(n.span(), format!("conductor '{}' is not defined", n.get_ref()))
                .key(key)
                .help("define it in a [[conductor]] table")
        })
    };
    let mut regions: Vec<(i64, RegionUse)> = Vec::new();
    let mut region_names: Vec<String> = Vec::new();
    let mut region_material: Vec<usize> = Vec::new();
    for (i, r) in t.region.iter().enumerate() {
        let key = |k: &str| format!("import.region[{i}].{k}");
        let r = r.get_ref();
        let id = *r.id.get_ref();
        if regions.iter().any(|o| o.0 == id) {
            return Err(cx
                .err(r.id.span(), format!("region id {id} is mapped twice"))
                .key(key("id"))
                .help("map each region id of the file once"));
        }
        let usage = match (&r.material, &r.conductor) {
            (Some(m), None) => {
                let k = materials.iter().position(|x| &x.name == m.get_ref()).ok_or_else(|| {
                    cx.err(m.span(), format!("material '{}' is not defined", m.get_ref()))
                        .key(key("material"))
                        .help("define it in a [[material]] table")
                })?;
                let name = r.name.as_ref().map(|n| n.get_ref().clone()).unwrap_or_else(|| format!("region {id}"));
                if region_names.contains(&name) {
                    return Err(cx
                        .err(r.id.span(), format!("two regions are named '{name}'"))
                        .key(key("name"))
                        .help("give each region its own name"));
                }
                region_names.push(name);
                region_material.push(k);
                RegionUse::Dielectric(region_names.len() as u32 - 1)
            }
            (None, Some(c)) => RegionUse::Conductor(conductor(c, key("conductor"))?),
            _ => {
                return Err(cx
                    .err(r.id.span(), format!("region id {id} needs exactly one of material or conductor"))
                    .key(key("material"))
                    .help("material = \"<name>\" for a dielectric, conductor = \"<name>\" for an electrode"))
            }
        };
        regions.push((id, usage));
    }
    let mut boundaries = Vec::new();
    for (i, b) in t.boundary.iter().enumerate() {
        let key = |k: &str| format!("import.boundary[{i}].{k}");
        let b = b.get_ref();
        let tag = *b.tag.get_ref();
        // Region ids and boundary tags share one cell array unless boundary_array names
        // another.
        let shared = t.boundary_array.is_none() && regions.iter().any(|o| o.0 == tag);
        if boundaries.iter().any(|o: &(i64, BoundaryUse)| o.0 == tag) || shared {
            return Err(cx
                .err(b.tag.span(), format!("id {tag} is mapped twice"))
                .key(key("tag"))
                .help("each id of a cell array means one thing (boundary_array = \"<name>\" reads the tags from another array)"));
        }
        let usage = match (&b.conductor, b.outer.as_ref().map(|o| *o.get_ref())) {
            (Some(c), None | Some(false)) => BoundaryUse::Conductor(conductor(c, key("conductor"))?),
            (None, Some(true)) => BoundaryUse::Outer,
            _ => {
                return Err(cx
                    .err(b.tag.span(), format!("boundary tag {tag} needs exactly one of conductor or outer = true"))
                    .key(key("conductor")))
            }
        };
        boundaries.push((tag, usage));
    }
    if region_names.is_empty() {
        return Err(cx
            .err(t.file.span(), "no region id is mapped to a material: there is nothing to solve".into())
            .key("import.region")
            .help("add [[import.region]] tables with id and material"));
    }
    let spec = ImportSpec {
        symmetry,
        unit_m: cx.unit_m,
        id_array,
        boundary_array: t.boundary_array.as_ref().map(|a| a.get_ref().clone()),
        regions,
        boundaries,
        region_names,
        conductor_names: conductors.iter().map(|c| c.name.clone()).collect(),
    };
    Ok(Some(ImportPlan { file, spec, region_material, file_span: t.file.span() }))
}
