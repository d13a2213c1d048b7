//! `fieldgrade mesh`: mesh a model and report what was built.

use crate::plan;
use crate::results::mesh::{render_text, report_of};
use crate::results::picture::{mesh_picture, Mark, Part};
use crate::results::write::write_atomic;
use crate::CliError;
use crate::Result;
use std::path::PathBuf;

/// A validated `mesh` run.
#[derive(Debug)]
pub struct MeshRun {
    /// Model file.
    pub model: PathBuf,
    /// VTU output.
    pub out: Option<PathBuf>,
    /// SVG output.
    pub svg: Option<PathBuf>,
    /// Element order override.
    pub order: Option<u8>,
    /// JSON to stdout.
    pub json: bool,
    /// Memory budget, bytes (`--memory-limit`; default: see `budget`).
    pub memory_limit: Option<f64>,
    /// How `fields.vtu` (or the mesh VTU) is encoded.
    pub vtu: mesher::VtuEncoding,
}

/// Runs `fieldgrade mesh`.
///
/// # Errors
/// Model errors (as [`CliError::Model`]), meshing errors and I/O errors.
pub fn run(run: &MeshRun) -> Result<()> {
    let mut model = plan::load(&run.model).map_err(CliError::from)?;
    crate::plan::budget::prepare(&mut model, run.order, run.memory_limit, false);
    let out = crate::commands::first_mesh(&model)?;
    let mut rep = report_of(&model, &out.mesh, out.complete, out.reason.clone());
    rep.warnings.extend(out.warnings.iter().cloned());
    if let Some(p) = &run.out {
        write_atomic(p, |w| {
            let mut w = w;
            mesher::write_vtu(&out.mesh, &[], &[], run.vtu, &mut w)
        })?;
    }
    if let Some(p) = &run.svg {
        let part = Part::from_mesh(&out.mesh, &rep.regions, model.unit_m, model.unit);
        let marks: Vec<Mark> = (out.mesh.singular_points.iter().enumerate())
            .map(|(i, s)| Mark { label: format!("S{}", i + 1), at: s.at, singular: true })
            .collect();
        let title = format!("{}: {} triangles", model.name, out.mesh.num_triangles());
        let pic = mesh_picture(&part, &title, part.extent(), "mesh", &marks);
        write_atomic(p, |w| w.write_all(pic.svg.as_bytes()))?;
    }
    if std::env::var_os("FIELDGRADE_TIMINGS").is_some() {
        for (k, t) in &out.timings {
            eprintln!("{k:>16}: {t:.3} s");
        }
    }
    if run.json {
        println!("{}", serde_json::to_string_pretty(&rep)?);
    } else {
        print!("{}", render_text(&rep));
    }
    Ok(())
}
