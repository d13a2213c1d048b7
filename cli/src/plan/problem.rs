//! The engine's problem from the validated model: every material property from the
//! model's materials, the conductors' potentials and charges, the outer boundary and the
//! memory budget.

use crate::plan::{ConductorKind, Plan};
use engine::{ConductorSpec, Problem};
use mesher::OuterBoundary;

/// The engine's problem from the model.
pub fn problem_of(model: &Plan) -> Problem {
    // Every material property from the model's [[material]] table, through each shape's
    // material (conductor shapes have none: their entries are not read).
    let material = |m: &Option<usize>| m.map(|m| &model.materials[m]);
    let mut permittivity: Vec<f64> =
        model.shape_material.iter().map(|m| material(m).map_or(f64::NAN, |m| m.permittivity)).collect();
    let mut tensor: Vec<Option<[[f64; 2]; 2]>> =
        model.shape_material.iter().map(|m| material(m).and_then(|m| m.permittivity_tensor)).collect();
    if model.geometry.outer == OuterBoundary::Open {
        // The mapped exterior (the mesh's last region) is filled by the domain's material.
        permittivity.push(permittivity[0]);
        tensor.push(None);
    }
    Problem {
        permittivity,
        tensor,
        charge_density: model.shape_charge_density.clone(),
        conductors: model
            .conductors
            .iter()
            .map(|c| match c.kind {
                ConductorKind::Fixed { potential_v } => ConductorSpec::Fixed { potential_v },
                ConductorKind::Floating { charge_c } => ConductorSpec::Floating { charge_c },
            })
            .collect(),
        outer_potential_v: model.outer_potential_v,
        outer_potential_fn: None,
        boundary_stretches: model.boundary_pieces.iter().map(|b| b.stretch.clone()).collect(),
        memory_budget_bytes: Some(model.memory_budget_bytes),
    }
}
