//! The physics of a model: permittivity per region, how each conductor is held, and the
//! outer boundary.

use crate::error::SolveError;
use mesher::Mesh;

/// How a conductor's potential is set.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum ConductorSpec {
    /// Held at a potential, volts.
    Fixed {
        /// Potential, V.
        potential_v: f64,
    },
    /// Floating: one unknown potential, given net charge (C, or C/m in planar models).
    Floating {
        /// Net charge.
        charge_c: f64,
    },
}

/// What the engine needs besides the mesh.
#[derive(Clone, Debug, Default)]
pub struct Problem {
    /// Relative permittivity per shape index (the mesh's region ids); entries for conductor
    /// shapes are ignored.
    pub permittivity: Vec<f64>,
    /// Optional anisotropic relative permittivity per shape index, [[εxx, εxy], [εyx, εyy]]
    /// in (x, y), i.e. (r, z) in axisymmetry; symmetric positive definite. When given it
    /// replaces the scalar in the assembly (the scalar still serves the corner analysis).
    /// Empty means none.
    pub tensor: Vec<Option<[[f64; 2]; 2]>>,
    /// Volume charge density per shape index, C/m³. Empty means none.
    pub charge_density: Vec<f64>,
    /// One entry per conductor of the mesh, in the mesh's conductor order.
    pub conductors: Vec<ConductorSpec>,
    /// Potential of the outer boundary, or `None` for zero normal flux.
    pub outer_potential_v: Option<f64>,
    /// A potential that varies along the outer boundary, V as a function of the position in
    /// metres (for verification against exact solutions with non-uniform boundary data).
    /// When given it holds the outer boundary and `outer_potential_v` is ignored; the
    /// capacitance matrix still takes the outer boundary at 0 V.
    pub outer_potential_fn: Option<fn([f64; 2]) -> f64>,
    /// A resource limit, not physics: the solve stops with
    /// [`SolveError::FactorOverBudget`] before the
    /// numeric factorisation if the factor's values alone would take more bytes than this
    /// (known exactly from the symbolic factorisation). `None`: no limit.
    pub memory_budget_bytes: Option<f64>,
}

impl Problem {
    /// Checks the problem against the mesh.
    ///
    /// # Errors
    /// A region without a valid permittivity, or a conductor count mismatch.
    pub fn check(&self, mesh: &Mesh) -> Result<(), SolveError> {
        if self.conductors.len() != mesh.conductor_names.len() {
            return Err(SolveError::ConductorMismatch {
                mesh: mesh.conductor_names.len(),
                problem: self.conductors.len(),
            });
        }
        let mut seen = vec![false; mesh.shape_names.len()];
        for &r in &mesh.regions {
            if seen[r as usize] {
                continue;
            }
            seen[r as usize] = true;
            let eps = self.permittivity.get(r as usize).copied().unwrap_or(f64::NAN);
            if !(eps.is_finite() && eps > 0.0) {
                return Err(SolveError::BadPermittivity { region: mesh.shape_names[r as usize].clone(), value: eps });
            }
        }
        for (r, t) in self.tensor.iter().enumerate() {
            if let Some(e) = t {
                let ok = e.iter().flatten().all(|v| v.is_finite())
                    && (e[0][1] - e[1][0]).abs() <= 1e-12 * (e[0][0].abs() + e[1][1].abs())
                    && e[0][0] > 0.0
                    && e[0][0] * e[1][1] - e[0][1] * e[1][0] > 0.0;
                if !ok {
                    let region = mesh.shape_names.get(r).cloned().unwrap_or_default();
                    return Err(SolveError::BadTensor { region, tensor: *e });
                }
            }
        }
        if let Some((r, &value)) = self.charge_density.iter().enumerate().find(|(_, v)| !v.is_finite()) {
            let region = mesh.shape_names.get(r).cloned().unwrap_or_default();
            return Err(SolveError::BadChargeDensity { region, value });
        }
        for (c, spec) in self.conductors.iter().enumerate() {
            let v = match *spec {
                ConductorSpec::Fixed { potential_v } => potential_v,
                ConductorSpec::Floating { charge_c } => charge_c,
            };
            if !v.is_finite() {
                return Err(SolveError::BadConductor { conductor: mesh.conductor_names[c].clone() });
            }
        }
        Ok(())
    }
}
