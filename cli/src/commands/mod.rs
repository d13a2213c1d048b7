//! Stage 2: the commands. Each takes the validated [`crate::plan::Plan`], drives the mesher
//! and the engine, and hands one results type to [`crate::results`]; none imports another.

pub mod args;
pub mod check;
pub mod debug;
pub mod mesh;
pub mod solve;

use crate::plan::Plan;
use crate::CliError;

/// The first mesh of a run: generated from the drawn shapes, or read from the `[import]`
/// file and checked.
#[derive(Debug)]
pub struct FirstMesh {
    /// The mesh.
    pub mesh: mesher::Mesh,
    /// False when the node budget stopped the refinement.
    pub complete: bool,
    /// Why it is incomplete, if it is.
    pub reason: Option<String>,
    /// What the import accepted with a change (reoriented cells, straightened edges).
    pub warnings: Vec<String>,
    /// Seconds per meshing stage.
    pub timings: Vec<(&'static str, f64)>,
}

/// Meshes the model or imports its mesh (at the order asked: a linear file is raised to P2
/// when the run asks for order 2; a quadratic file is refused for order 1).
///
/// # Errors
/// Meshing errors, and every error of reading and checking an imported file, as model
/// errors pointing at `[import] file`.
pub fn first_mesh(model: &Plan) -> Result<FirstMesh, CliError> {
    let Some(imp) = &model.import else {
        let out = mesher::generate(&model.geometry, &model.params).map_err(|e| CliError::from(model.mesh_error(&e)))?;
        // A conductor touching a held boundary at another potential is refused here,
        // before `mesh` writes anything, as touching conductors are.
        engine::check_contacts(&out.mesh, &crate::plan::problem::problem_of(model))
            .map_err(|e| CliError::from(model.solve_error(&e)))?;
        return Ok(FirstMesh {
            mesh: out.mesh,
            complete: out.complete,
            reason: out.reason,
            warnings: Vec::new(),
            timings: out.timings,
        });
    };
    let t0 = std::time::Instant::now();
    let file = imp.file.display().to_string();
    let bytes = std::fs::read(&imp.file)
        .map_err(|e| CliError::from(model.import_error(format!("cannot read the mesh file '{file}': {e}"))))?;
    let grid = mesher::read_grid(&bytes).map_err(|e| CliError::from(model.import_error(format!("'{file}': {e}"))))?;
    let t_read = t0.elapsed().as_secs_f64();
    let imported = mesher::import_mesh(&grid, &imp.spec)
        .map_err(|e| CliError::from(model.import_error(format!("'{file}': {e}"))))?;
    let mut mesh = imported.mesh;
    match (mesh.order(), model.params.order) {
        (1, 2) => mesh.make_order2(),
        (2, 1) => {
            return Err(CliError::from(model.import_error(format!(
                "'{file}' holds quadratic cells but the run asks for order 1: run with --order 2 (or set [mesh] order = 2), \
                 or write the mesh with linear cells"
            ))))
        }
        _ => {}
    }
    if mesh.num_vertices as usize > model.params.max_nodes {
        let note = model.budget_note.clone().unwrap_or_else(|| "raise [mesh] max_nodes".into());
        return Err(CliError::from(model.import_error(format!(
            "'{file}' has {} vertices, more than the node budget of {}: {note}",
            mesh.num_vertices, model.params.max_nodes
        ))));
    }
    // Singular points from the angles of the imported boundary (after the order is set:
    // exponents below the order are singular for the elements).
    let problem = crate::plan::problem::problem_of(model);
    mesh.singular_points =
        mesher::find_singular_points(&mesh, &problem.permittivity, model.outer_potential_v.is_some()).map_err(|e| {
            CliError::from(model.import_error(format!("'{file}': {}", e.message_in(model.unit_m, model.unit))))
        })?;
    engine::check_contacts(&mesh, &problem).map_err(|e| CliError::from(model.solve_error(&e)))?;
    let mut warnings: Vec<String> = imported.warnings.iter().map(|w| format!("imported mesh: {w}")).collect();
    if !mesh.singular_points.is_empty() {
        warnings.push(format!(
            "imported mesh: {} singular points found from the boundary angles; the imported mesh is not graded \
             towards them (one `solve` takes it as it is; `check` refines towards them)",
            mesh.singular_points.len()
        ));
    }
    Ok(FirstMesh {
        mesh,
        complete: true,
        reason: None,
        warnings,
        timings: vec![("read", t_read), ("import and validate", t0.elapsed().as_secs_f64() - t_read)],
    })
}
