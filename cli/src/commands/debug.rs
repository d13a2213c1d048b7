//! `fieldgrade debug matrix`: the reduced stiffness matrix and right-hand side of a model,
//! in Matrix Market format, for checking the assembly against another solver.

use crate::plan;
use crate::plan::problem::problem_of;
use crate::results::write::write_atomic;
use crate::CliError;
use crate::Result;

/// `fieldgrade debug matrix`: the reduced system in Matrix Market format.
///
/// # Errors
/// Model, meshing and assembly errors (as [`CliError::Model`]), I/O errors.
pub fn dump_matrix(
    model_path: &std::path::Path,
    out: &std::path::Path,
    order: Option<u8>,
    memory_limit: Option<f64>,
) -> Result<()> {
    let mut model = plan::load(model_path).map_err(CliError::from)?;
    crate::plan::budget::prepare(&mut model, order, memory_limit, false);
    let meshed = crate::commands::first_mesh(&model)?;
    let problem = problem_of(&model);
    let sys = engine::reduced_system(&meshed.mesh, &problem).map_err(|e| CliError::from(model.solve_error(&e)))?;
    let n = sys.num_unknowns;
    write_atomic(out, |w| {
        writeln!(w, "%%MatrixMarket matrix coordinate real symmetric")?;
        writeln!(w, "% fieldgrade reduced stiffness matrix of {} (lower triangle, F or F/m)", model.name)?;
        writeln!(w, "{n} {n} {}", sys.values.len())?;
        for j in 0..n {
            for k in sys.col_ptr[j]..sys.col_ptr[j + 1] {
                writeln!(w, "{} {} {:.17e}", sys.row_idx[k] + 1, j + 1, sys.values[k])?;
            }
        }
        Ok(())
    })?;
    let stem = out.file_stem().map(|s| s.to_string_lossy().into_owned()).unwrap_or_else(|| "matrix".into());
    let rhs_path = out.with_file_name(format!("{stem}_rhs.mtx"));
    write_atomic(&rhs_path, |w| {
        writeln!(w, "%%MatrixMarket matrix array real general")?;
        writeln!(w, "% fieldgrade right-hand side of {} (C or C/m)", model.name)?;
        writeln!(w, "{n} 1")?;
        for v in &sys.rhs {
            writeln!(w, "{v:.17e}")?;
        }
        Ok(())
    })?;
    println!("{n} unknowns, {} stored entries: {} and {}", sys.values.len(), out.display(), rhs_path.display());
    Ok(())
}
