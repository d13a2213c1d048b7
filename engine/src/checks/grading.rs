//! Condenser grading: a stack of conductive foils from the high-voltage conductor to the
//! earthed (tap) foil, its voltage division, partial capacitances, radial stress per layer
//! and axial stress per foil-end step.
//!
//! The foils form a series chain of capacitors (`../shared/TRADE.md` §3, after Kind & Kärner
//! 1985 and Küchler 2018, recalled from memory): with equal layer capacitances C_k the voltage
//! divides equally, ΔU_k = U/n; the layer between foils k−1 and k carries the radial stress
//! ΔU_k/d_k on average (d_k the shortest distance between the foils) and, in an ideal
//! cylindrical layer, ΔU_k/(r_{k−1}·ln(r_k/r_{k−1})) at its inner foil; where foil k ends a
//! step a_k short of foil k−1 the core surface carries the mean axial stress ΔU_k/a_k.

use super::gap::{electrode_distance, Electrode};
use crate::probe::{probe_line_with, TriangleGrid};
use crate::problem::Problem;
use crate::solve::FactoredSolution;
use mesher::{EdgeTag, Mesh, Xy};

/// One layer of the stack: between foils k−1 and k.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct GradingLayer {
    /// The voltage step ΔU_k = V_{k−1} − V_k, V.
    pub step_v: f64,
    /// The partial capacitance between the two foils, F (F/m planar): −C_{k−1,k} of the
    /// Maxwell matrix with every foil of the stack a terminal.
    pub partial_capacitance_f: f64,
    /// The shortest distance between the foils, metres, and its ends.
    pub distance_m: f64,
    /// See `distance_m`.
    pub from: Xy,
    /// See `distance_m`.
    pub to: Xy,
    /// The mean radial stress |ΔU_k|/d_k, V/m.
    pub mean_stress_v_per_m: f64,
    /// The largest |E| along the shortest path between the foils, V/m.
    pub max_stress_v_per_m: f64,
    /// The axial steps between the foils' ends at the upper and the lower end (y direction:
    /// the axis z in axisymmetry), metres, and the mean axial stress |ΔU_k|/a there, V/m; None
    /// where the inner foil does not reach beyond the outer one.
    pub end_steps: [Option<(f64, f64)>; 2],
}

/// The whole stack.
#[derive(Clone, Debug, PartialEq)]
pub struct GradingStack {
    /// The potential of each foil in stack order, V.
    pub potentials: Vec<f64>,
    /// The layers, from the high-voltage side.
    pub layers: Vec<GradingLayer>,
    /// The capacitance between the first and the last foil with the foils between them
    /// floating (for a bushing: C1, conductor to tap), F (F/m planar).
    pub series_capacitance_f: f64,
}

/// The grading of the stack `foils` (conductor indices, from the high-voltage side to the
/// earthed side, at least two) in the factorised solution `solved` of `problem` on `mesh`.
///
/// The partial capacitances come from the Maxwell matrix among all conductors, each a
/// terminal ([`FactoredSolution::maxwell_matrix_all`]: a substitution per floating conductor
/// with the kept factorisation); the series capacitance is its Schur complement on the first
/// and last foil (the foils between them carry no net charge, the other conductors at 0 V).
///
/// # Panics
/// If fewer than two foils are given or an index is out of range.
#[track_caller]
pub fn condenser_grading(mesh: &Mesh, problem: &Problem, solved: &FactoredSolution, foils: &[usize]) -> GradingStack {
    assert!(
        foils.len() >= 2 && foils.iter().all(|&f| f < problem.conductors.len()),
        "a stack of two or more conductors"
    );
    let sol = &solved.solution;
    let cmat = solved.maxwell_matrix_all(mesh, problem);
    let sub = |i: usize, j: usize| cmat[foils[i]][foils[j]];
    // Schur complement on the ends: C_ee − C_ei·C_ii⁻¹·C_ie, the inner foils floating.
    let n = foils.len();
    let inner: Vec<usize> = (1..n - 1).collect();
    let series_capacitance_f = {
        let a: Vec<Vec<f64>> = inner.iter().map(|&i| inner.iter().map(|&j| sub(i, j)).collect()).collect();
        let a_inv = crate::solve::invert(&a);
        // C_01 − Σ C_0i·(C_ii⁻¹)_ij·C_j1.
        let correction: f64 = inner
            .iter()
            .enumerate()
            .map(|(r, &i)| inner.iter().enumerate().map(|(c, &j)| sub(0, i) * a_inv[r][c] * sub(j, n - 1)).sum::<f64>())
            .sum();
        -(sub(0, n - 1) - correction)
    };
    let potentials: Vec<f64> = foils.iter().map(|&f| sol.conductor_potentials[f]).collect();
    // The upper and lower ends (largest and smallest y) of each foil's surface.
    let ends_of = |c: usize| {
        mesh.edges
            .iter()
            .filter(|e| e.tag == EdgeTag::Conductor(c as u32))
            .flat_map(|e| e.nodes)
            .map(|v| mesh.nodes[v as usize][1])
            .fold((f64::NEG_INFINITY, f64::INFINITY), |(hi, lo), y| (hi.max(y), lo.min(y)))
    };
    let grid = TriangleGrid::new(mesh);
    let mut layers = Vec::with_capacity(n - 1);
    for k in 1..n {
        let step_v = potentials[k - 1] - potentials[k];
        let gap =
            electrode_distance(mesh, Electrode::Conductor(foils[k - 1] as u32), Electrode::Conductor(foils[k] as u32));
        let (distance_m, from, to) = gap.map_or((f64::NAN, [0.0; 2], [0.0; 2]), |g| (g.distance, g.from, g.to));
        let max_stress_v_per_m = if distance_m.is_finite() {
            probe_line_with(&grid, mesh, sol, &[from, to], 41)
                .iter()
                .filter(|r| r.region.is_some())
                .map(|r| r.e[0].hypot(r.e[1]))
                .filter(|e| e.is_finite())
                .fold(0.0, f64::max)
        } else {
            f64::NAN
        };
        let (inner_top, inner_bottom) = ends_of(foils[k - 1]);
        let (outer_top, outer_bottom) = ends_of(foils[k]);
        let step = |a: f64| (a > 0.0 && a.is_finite()).then(|| (a, step_v.abs() / a));
        layers.push(GradingLayer {
            step_v,
            partial_capacitance_f: -sub(k - 1, k),
            distance_m,
            from,
            to,
            mean_stress_v_per_m: step_v.abs() / distance_m,
            max_stress_v_per_m,
            end_steps: [step(inner_top - outer_top), step(outer_bottom - inner_bottom)],
        });
    }
    GradingStack { potentials, layers, series_capacitance_f }
}
