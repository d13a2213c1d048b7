//! Derived quantities: nodal potentials, reaction charges and energy of a solved case, and
//! the check that none of them is non-finite.
//!
//! # References
//! - I. Babuška, A. Miller, "The post-processing approach in the finite element method —
//!   Part 1: Calculation of displacements, stresses and other higher derivatives of the
//!   displacements", Int. J. Numer. Methods Eng. 20 (1984) 1085–1109,
//!   doi:10.1002/nme.1620200610 (a boundary flux extracted as the reaction of the stiffness
//!   matrix is of the energy's order of accuracy, not of the gradient's).
//! - P. P. Silvester, R. L. Ferrari, *Finite Elements for Electrical Engineers*, 3rd ed.,
//!   Cambridge University Press 1996, ch. 2 (the stored energy ½·VᵀKV).

use super::*;

/// No NaN or infinity leaves the solve: the first non-finite result, named.
pub(super) fn non_finite_check(mesh: &Mesh, sol: &Solution, cmat: &[Vec<f64>]) -> Result<(), SolveError> {
    let bad = |quantity: String| Err(SolveError::NonFinite { quantity });
    if let Some(v) = sol.potential.iter().position(|p| !p.is_finite()) {
        let at = mesh.nodes[v];
        return bad(format!("potential at node {v} ({:.6e}, {:.6e}) m", at[0], at[1]));
    }
    if !sol.energy.is_finite() {
        return bad("stored energy".into());
    }
    for (c, name) in mesh.conductor_names.iter().enumerate() {
        if !sol.conductor_charges[c].is_finite() {
            return bad(format!("charge of conductor '{name}'"));
        }
        if !sol.conductor_potentials[c].is_finite() {
            return bad(format!("potential of conductor '{name}'"));
        }
    }
    if cmat.iter().flatten().any(|c| !c.is_finite()) {
        return bad("capacitance matrix".into());
    }
    Ok(())
}

/// Nodal potentials, charges and energy from the reduced solution `x` of one case.
pub(super) fn finish(mesh: &Mesh, problem: &Problem, system: &System, x: &[f64], with_space_charge: bool) -> Solution {
    let n = mesh.nodes.len();
    let nc = mesh.conductor_names.len();
    let held_value = |t: u32| -> f64 {
        if system.outer_terminal == Some(t) {
            problem.outer_potential_v.unwrap_or(0.0)
        } else {
            let c = system.terminal_of.iter().position(|&x| x == Some(t)).unwrap();
            match problem.conductors[c] {
                ConductorSpec::Fixed { potential_v } => potential_v,
                ConductorSpec::Floating { .. } => unreachable!("terminals are fixed conductors"),
            }
        }
    };
    let terminal_values: Vec<f64> = (0..system.num_terminals as u32).map(held_value).collect();
    let potential: Vec<f64> = system
        .dof
        .iter()
        .enumerate()
        .map(|(v, d)| match *d {
            Dof::Free(i) => x[i as usize],
            Dof::Held(t) => match system.outer_terminal {
                Some(o) if o == t && problem.outer_varying() => system.outer_value[v],
                _ => terminal_values[t as usize],
            },
        })
        .collect();
    // Reactions and energy from the full element matrices.
    let axisym = mesh.symmetry == Symmetry::Axisymmetric;
    let mut residual = vec![0.0; n];
    let mut energy = 0.0;
    for_each_element(mesh, problem, axisym, mesh.order() == 2, |nodes, ke, fe| {
        for (i, &ni) in nodes.iter().enumerate() {
            // Induced charge: the reaction K·V minus the space charge carried by the node.
            let mut r = if with_space_charge { -fe[i] } else { 0.0 };
            for (j, &nj) in nodes.iter().enumerate() {
                r += ke[i][j] * potential[nj as usize];
            }
            residual[ni as usize] += r;
            let kv = r + if with_space_charge { fe[i] } else { 0.0 };
            energy += 0.5 * potential[ni as usize] * kv;
        }
    });
    for_each_open_boundary_term(mesh, problem, |nodes, mm| {
        for (i, &ni) in nodes.iter().enumerate() {
            let r: f64 = nodes.iter().enumerate().map(|(j, &nj)| mm[i][j] * potential[nj as usize]).sum();
            residual[ni as usize] += r;
            energy += 0.5 * potential[ni as usize] * r;
        }
    });
    let mut conductor_charges = vec![0.0; nc];
    for (r, c) in residual.iter().zip(&system.node_conductor) {
        if let Some(c) = c {
            conductor_charges[*c as usize] += r;
        }
    }
    let conductor_potentials = (0..nc)
        .map(|c| match problem.conductors[c] {
            ConductorSpec::Fixed { potential_v } => potential_v,
            ConductorSpec::Floating { .. } => x[system.floating_dof[c].unwrap() as usize],
        })
        .collect();
    Solution {
        potential,
        conductor_potentials,
        conductor_charges,
        energy,
        num_unknowns: system.num_unknowns(),
        timings: SolveTimings::default(),
    }
}
