//! Electrostatic solve: assembly of −∇·(ε∇V) = 0 on P1/P2 triangles, planar or
//! axisymmetric, conductors at fixed potential eliminated, floating conductors as one
//! shared unknown each, sparse Cholesky (faer).
//!
//! # Algorithm
//! The weak form ∫ ε ∇V·∇v w dA = 0 with w = 1 (planar, per metre of depth) or w = 2πr
//! (axisymmetric; no division by r anywhere, the axis is a natural boundary) is assembled
//! element by element with the rule of `space` exact for straight elements (degree 2 for
//! P1 axisymmetric, degree 4 for P2). Nodes on a conductor at fixed potential are
//! eliminated (their known values move to the right-hand side, no penalty); all nodes of a
//! floating conductor share one unknown whose right-hand side is the conductor's net
//! charge, which makes its total flux equal that charge. The reduced matrix is symmetric
//! positive definite when every connected part of the domain touches a fixed potential, and
//! is factorised by faer's sparse Cholesky.
//!
//! Conductor charges are the reactions Qᵢ = Σ_{n ∈ conductor i} (K·V)ₙ of the full
//! stiffness matrix; the stored energy is W = ½·VᵀKV.
//!
//! # References
//! - P. P. Silvester, R. L. Ferrari, *Finite Elements for Electrical Engineers*, 3rd ed.,
//!   Cambridge University Press 1996, ch. 2–3 (the electrostatic functional and assembly).
//! - Y. Chen, T. A. Davis, W. W. Hager, S. Rajamanickam, "Algorithm 887: CHOLMOD,
//!   supernodal sparse Cholesky factorization and update/downdate", ACM TOMS 35 (2008) 22
//!   (the supernodal method faer implements).

use crate::error::SolveError;
use crate::estimate::PrimalRecovery;
use crate::fields::RegionPeak;
use crate::ordering::nested_dissection;
use crate::problem::{ConductorSpec, Problem};
use crate::space::{Element, P1, P2, QUAD_DEG2, QUAD_DEG4};
use faer::dyn_stack::{MemBuffer, MemStack};
use faer::linalg::cholesky::llt::factor::LltError as NumericLltError;
use faer::perm::PermRef;
use faer::sparse::linalg::cholesky::{factorize_symbolic_cholesky, LltRef, SymbolicCholesky, SymmetricOrdering};
use faer::sparse::{SparseColMat, SymbolicSparseColMat, Triplet};
use faer::{Conj, Mat, Par, Side};
use mesher::{EdgeTag, Mesh, Symmetry, Xy};
use rayon::prelude::*;
use std::collections::HashMap;
use std::time::Instant;

mod assembly;
mod derived;
mod factor;

pub use assembly::check_contacts;
use assembly::*;
use derived::*;
use factor::*;

/// Permittivity of free space, F/m (CODATA 2018: 8.8541878128e-12).
pub const EPSILON_0: f64 = 8.854_187_812_8e-12;

/// The solved field.
#[derive(Clone, Debug)]
pub struct Solution {
    /// Potential at every mesh node, volts.
    pub potential: Vec<f64>,
    /// Potential of every conductor, volts (solved for floating ones).
    pub conductor_potentials: Vec<f64>,
    /// Net charge on every conductor: C, or C/m in planar models.
    pub conductor_charges: Vec<f64>,
    /// Stored energy ½·VᵀKV: J, or J/m in planar models.
    pub energy: f64,
    /// Number of unknowns of the reduced system.
    pub num_unknowns: usize,
    /// Wall-clock seconds of each step.
    pub timings: SolveTimings,
}

/// Wall-clock seconds of the steps of a solve.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct SolveTimings {
    /// Element matrices, triplets and the sparse matrix.
    pub assembly_s: f64,
    /// Ordering, symbolic and numeric factorisation (the sum of the next three).
    pub factor_s: f64,
    /// Nested-dissection ordering.
    pub ordering_s: f64,
    /// Symbolic factorisation.
    pub symbolic_s: f64,
    /// Numeric factorisation.
    pub numeric_s: f64,
    /// Forward and backward substitution.
    pub solve_s: f64,
    /// Potentials, reaction charges and energy.
    pub post_s: f64,
}

/// The reduced linear system in plain arrays, for inspection and for comparing solvers on
/// the very same matrix (the `debug matrix` command and the solve benchmark).
#[derive(Clone, Debug)]
pub struct ReducedSystem {
    /// Number of unknowns.
    pub num_unknowns: usize,
    /// Lower triangle (row ≥ column) in compressed sparse columns: column pointers.
    pub col_ptr: Vec<usize>,
    /// Row index of each stored entry.
    pub row_idx: Vec<usize>,
    /// Value of each stored entry, F (F/m planar).
    pub values: Vec<f64>,
    /// Right-hand side of the problem's load case, C (C/m planar).
    pub rhs: Vec<f64>,
    /// Position of each unknown (None for a floating conductor's shared potential), for
    /// geometric orderings.
    pub positions: Vec<Option<[f64; 2]>>,
}

/// Assembles the reduced system of a problem without solving it.
///
/// # Errors
/// As [`solve`] (everything but factorisation failures).
pub fn reduced_system(mesh: &Mesh, problem: &Problem) -> Result<ReducedSystem, SolveError> {
    let system = System::assemble(mesh, problem)?;
    let m = system.num_unknowns();
    let mut rhs = vec![0.0; m];
    case_rhs(&system, problem, &mut rhs, true);
    let a = system.matrix.as_ref();
    Ok(ReducedSystem {
        num_unknowns: m,
        col_ptr: a.symbolic().col_ptr().to_vec(),
        row_idx: a.symbolic().row_idx().to_vec(),
        values: a.val().to_vec(),
        rhs,
        positions: system.positions.clone(),
    })
}

/// The geometric nested-dissection ordering the solver uses, for a [`ReducedSystem`]:
/// (new position → unknown, unknown → new position).
pub fn solver_ordering(system: &ReducedSystem) -> (Vec<usize>, Vec<usize>) {
    nested_dissection(&system.col_ptr, &system.row_idx, &system.positions)
}

/// Solves the problem on the mesh.
///
/// # Errors
/// [`SolveError`] for a region without permittivity, a conductor the problem does not
/// describe, no fixed potential anywhere, a part cut off from every fixed potential, or a
/// factorisation failure.
pub fn solve(mesh: &Mesh, problem: &Problem) -> Result<Solution, SolveError> {
    Ok(solve_cases(mesh, problem, false)?.solution)
}

/// [`solve`] and [`capacitance_matrix`] from one assembly and one factorisation (the
/// matrix does not depend on the potentials): the load case and one capacitance column per
/// fixed conductor are solved together as right-hand sides.
///
/// # Errors
/// As [`solve`].
pub fn solve_with_capacitance(mesh: &Mesh, problem: &Problem) -> Result<(Solution, CapacitanceMatrix), SolveError> {
    let f = solve_cases(mesh, problem, true)?;
    Ok((f.solution, f.capacitance))
}

/// [`solve_with_capacitance`] that keeps the factorised system, so that further
/// right-hand sides (the dual problems of goal-oriented error estimates, see
/// [`crate::goal_estimates`]) cost a forward and back substitution each.
///
/// # Errors
/// As [`solve`].
pub fn solve_factored(mesh: &Mesh, problem: &Problem) -> Result<FactoredSolution, SolveError> {
    solve_cases(mesh, problem, true)
}

/// A solution with its capacitance matrix, the nodal potentials of every capacitance
/// column and the factorised system they came from.
pub struct FactoredSolution {
    /// The load case.
    pub solution: Solution,
    /// The Maxwell capacitance matrix of the fixed conductors.
    pub capacitance: CapacitanceMatrix,
    /// Nodal potentials of each capacitance column (conductor `capacitance.0[k]` at 1 V,
    /// the other fixed conductors and a held outer boundary at 0 V, floating conductors
    /// uncharged).
    pub columns: Vec<Vec<f64>>,
    system: System,
    factor: Option<Factor>,
    /// The load case's recovered gradient, made on first use (see [`Self::recovery`]).
    recovered: std::sync::OnceLock<PrimalRecovery>,
}

impl std::fmt::Debug for FactoredSolution {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("FactoredSolution")
            .field("solution", &self.solution)
            .field("capacitance", &self.capacitance)
            .field("unknowns", &self.system.num_unknowns())
            .finish_non_exhaustive()
    }
}

/// One dual problem: homogeneous (every fixed conductor and a held outer boundary at 0 V,
/// no space charge) except for the units asked for, plus a load per mesh node (the
/// consistent load ∫ g·∇φᵢ of a functional's derivative).
#[derive(Clone, Debug, Default)]
pub(crate) struct DualCase {
    /// This floating conductor carries a unit charge.
    pub unit_charge: Option<usize>,
    /// Load per mesh node (summed into the unknown the node belongs to; held nodes drop it).
    pub node_load: Option<Vec<f64>>,
}

impl FactoredSolution {
    /// The recovered gradient of the load case (as solved) on `mesh`, with its quadrature
    /// and recovery plan: made once and shared by the error estimate, the peaks and the
    /// goal-oriented estimates of the mesh.
    ///
    /// # Panics
    /// If the solution does not belong to the mesh.
    #[track_caller]
    pub(crate) fn recovery(&self, mesh: &Mesh) -> &PrimalRecovery {
        assert_eq!(self.solution.potential.len(), mesh.nodes.len(), "solution and mesh do not match");
        self.recovered.get_or_init(|| PrimalRecovery::new(mesh, &self.solution.potential))
    }

    /// V and the recovered E at each point, one side per region containing it (the regions
    /// of [`crate::point_regions`]).
    pub fn point_values(&self, mesh: &Mesh, points: &[Xy]) -> Vec<Vec<crate::PointSide>> {
        let primal = self.recovery(mesh);
        let rec = primal.field(&self.solution.potential);
        crate::probe::point_values_with(mesh, &self.solution.potential, points, |t, xi, eta| {
            rec.fields_at(mesh, &primal.quad, t, xi, eta).0
        })
    }

    /// The peak |E| per region away from the given discs, as
    /// [`region_peaks_away_from`](crate::region_peaks_away_from) finds them, with the
    /// recovery shared by the mesh's other estimates.
    pub fn region_peaks_away_from(&self, mesh: &Mesh, discs: &[(Xy, f64)]) -> Vec<RegionPeak> {
        crate::fields::peaks_away_from_with(mesh, &self.solution, self.recovery(mesh), discs)
    }

    /// The local peaks of every region, as [`crate::local_peaks`] finds them, with the
    /// recovery shared by the mesh's other estimates.
    pub fn local_peaks(
        &self,
        mesh: &Mesh,
        discs: &[(Xy, f64)],
        per_region: usize,
        separation: f64,
    ) -> Vec<crate::LocalPeak> {
        crate::checks::peaks::local_peaks_with(mesh, &self.solution, self.recovery(mesh), discs, per_region, separation)
    }

    /// Starting points of field lines in `region`, as [`crate::field_line_starts`] finds them,
    /// with the recovery shared by the mesh's other estimates.
    pub fn field_line_starts(&self, mesh: &Mesh, region: u32, count: usize, separation: f64) -> Vec<Xy> {
        crate::checks::gas::field_line_starts_with(mesh, &self.solution, self.recovery(mesh), region, count, separation)
    }

    /// Field lines in `region`, as [`crate::trace_field_lines`] traces them, on the shared
    /// recovery.
    pub fn trace_field_lines(&self, mesh: &Mesh, region: u32, starts: &[Xy]) -> Vec<crate::FieldLine> {
        crate::checks::gas::trace_field_lines_with(mesh, &self.solution, self.recovery(mesh), region, starts)
    }

    /// The Maxwell capacitance matrix among all conductors, fixed and floating, each held as
    /// a terminal (a held outer boundary at 0 V), indexed by conductor: entry (i, j) is the
    /// charge on conductor i with conductor j at 1 V and every other at 0 V, F (F/m planar).
    ///
    /// From the kept factorisation, without a second one: with the floating conductors f
    /// uncharged the solve gave the reduced matrix C_red = C_xx − C_xf·C_ff⁻¹·C_fx of the
    /// fixed conductors x and, in each capacitance column, the floating potentials
    /// V_f = −C_ff⁻¹·C_fx·e_j; a unit charge on each floating conductor (one substitution
    /// each, the fixed ones at 0 V) gives the potential coefficients P_ff = C_ff⁻¹. Hence
    /// C_ff = P_ff⁻¹, C_fx = −C_ff·V_f and C_xx = C_red + C_xf·P_ff·C_fx (block elimination of
    /// the charge–potential relation Q = C·V).
    pub fn maxwell_matrix_all(&self, mesh: &Mesh, problem: &Problem) -> Vec<Vec<f64>> {
        let nc = problem.conductors.len();
        let (fixed, c_red) = &self.capacitance;
        let floats: Vec<usize> =
            (0..nc).filter(|&c| matches!(problem.conductors[c], ConductorSpec::Floating { .. })).collect();
        // A node on each conductor, to read its potential in a nodal field.
        let mut node_of = vec![None; nc];
        for e in &mesh.edges {
            if let mesher::EdgeTag::Conductor(c) = e.tag {
                node_of[c as usize].get_or_insert(e.nodes[0] as usize);
            }
        }
        let at = |field: &[f64], c: usize| node_of[c].map_or(f64::NAN, |v| field[v]);
        let mut full = vec![vec![0.0; nc]; nc];
        let nf = floats.len();
        if nf == 0 {
            for (r, &i) in fixed.iter().enumerate() {
                for (k, &j) in fixed.iter().enumerate() {
                    full[i][j] = c_red[r][k];
                }
            }
            return full;
        }
        let cases: Vec<DualCase> = floats.iter().map(|&k| DualCase { unit_charge: Some(k), node_load: None }).collect();
        let unit = self.solve_duals(problem, &cases);
        // P_ff[i][j]: potential of floating conductor i for a unit charge on j.
        let p: Vec<Vec<f64>> = floats.iter().map(|&i| (0..nf).map(|j| at(&unit[j], i)).collect()).collect();
        let c_ff = invert(&p);
        // C_fx (floats × fixed) = −C_ff·V_f, V_f the floating potentials of each column.
        let v_f: Vec<Vec<f64>> =
            (0..fixed.len()).map(|k| floats.iter().map(|&i| at(&self.columns[k], i)).collect()).collect();
        let c_fx: Vec<Vec<f64>> = (0..nf)
            .map(|i| (0..fixed.len()).map(|k| -(0..nf).map(|l| c_ff[i][l] * v_f[k][l]).sum::<f64>()).collect())
            .collect();
        for (r, &i) in fixed.iter().enumerate() {
            for (k, &j) in fixed.iter().enumerate() {
                // C_xf·P_ff·C_fx, C_xf = C_fxᵀ.
                let extra: f64 = (0..nf).map(|a| (0..nf).map(|b| c_fx[a][r] * p[a][b] * c_fx[b][k]).sum::<f64>()).sum();
                full[i][j] = c_red[r][k] + extra;
            }
        }
        for (a, &i) in floats.iter().enumerate() {
            for (b, &j) in floats.iter().enumerate() {
                full[i][j] = c_ff[a][b];
            }
            for (k, &j) in fixed.iter().enumerate() {
                full[i][j] = c_fx[a][k];
                full[j][i] = c_fx[a][k];
            }
        }
        full
    }

    /// Nodal potentials of each dual case, by the kept factorisation.
    pub(crate) fn solve_duals(&self, problem: &Problem, cases: &[DualCase]) -> Vec<Vec<f64>> {
        let m = self.system.num_unknowns();
        let mut homogeneous = problem.clone();
        for spec in homogeneous.conductors.iter_mut() {
            *spec = match spec {
                ConductorSpec::Fixed { .. } => ConductorSpec::Fixed { potential_v: 0.0 },
                ConductorSpec::Floating { .. } => ConductorSpec::Floating { charge_c: 0.0 },
            };
        }
        homogeneous.homogeneous_outer();
        let mut b = Mat::<f64>::zeros(m, cases.len());
        for (c, case) in cases.iter().enumerate() {
            let mut p = homogeneous.clone();
            if let Some(k) = case.unit_charge {
                p.conductors[k] = ConductorSpec::Floating { charge_c: 1.0 };
            }
            let mut col = vec![0.0; m];
            case_rhs(&self.system, &p, &mut col, false);
            if let Some(load) = &case.node_load {
                for (d, l) in self.system.dof.iter().zip(load) {
                    if let Dof::Free(i) = d {
                        col[*i as usize] += l;
                    }
                }
            }
            for (i, v) in col.iter().enumerate() {
                b[(i, c)] = *v;
            }
        }
        if let Some(f) = &self.factor {
            f.solve_in_place(&mut b);
        }
        // Only the potentials: a dual problem's charges and energy are not needed. Held
        // nodes are at 0 V in every dual case (its units are charges).
        (0..cases.len())
            .map(|c| {
                self.system
                    .dof
                    .iter()
                    .map(|d| match *d {
                        Dof::Free(i) => b[(i as usize, c)],
                        Dof::Held(_) => 0.0,
                    })
                    .collect()
            })
            .collect()
    }
}

/// The inverse of a small dense matrix by Gauss–Jordan elimination with partial pivoting
/// (the capacitance blocks of a few conductors; an empty matrix gives an empty inverse).
pub(crate) fn invert(a: &[Vec<f64>]) -> Vec<Vec<f64>> {
    let n = a.len();
    let mut m: Vec<Vec<f64>> = a
        .iter()
        .enumerate()
        .map(|(i, row)| row.iter().copied().chain((0..n).map(|j| if i == j { 1.0 } else { 0.0 })).collect())
        .collect();
    for col in 0..n {
        let piv = (col..n).max_by(|&x, &y| m[x][col].abs().total_cmp(&m[y][col].abs())).unwrap_or(col);
        m.swap(col, piv);
        let d = m[col][col];
        for v in m[col].iter_mut() {
            *v /= d;
        }
        let pivot_row = m[col].clone();
        for (r, row) in m.iter_mut().enumerate() {
            if r != col {
                let f = row[col];
                for (v, w) in row.iter_mut().zip(&pivot_row) {
                    *v -= f * w;
                }
            }
        }
    }
    m.into_iter().map(|row| row[n..].to_vec()).collect()
}

/// Indices of the fixed conductors (row and column order) and the Maxwell capacitance
/// matrix, F (F/m planar).
pub type CapacitanceMatrix = (Vec<usize>, Vec<Vec<f64>>);

fn solve_cases(mesh: &Mesh, problem: &Problem, with_capacitance: bool) -> Result<FactoredSolution, SolveError> {
    let t0 = Instant::now();
    let system = System::assemble(mesh, problem)?;
    let mut timings = SolveTimings { assembly_s: t0.elapsed().as_secs_f64(), ..Default::default() };
    let m = system.num_unknowns();
    // Right-hand sides: the load case, then one column per fixed conductor at 1 V.
    let fixed: Vec<usize> = if with_capacitance {
        (0..problem.conductors.len()).filter(|&c| system.terminal_of[c].is_some()).collect()
    } else {
        Vec::new()
    };
    let mut cases = Vec::with_capacity(fixed.len());
    for &j in &fixed {
        let mut p = problem.clone();
        for (i, spec) in p.conductors.iter_mut().enumerate() {
            *spec = match spec {
                ConductorSpec::Fixed { .. } => ConductorSpec::Fixed { potential_v: if i == j { 1.0 } else { 0.0 } },
                ConductorSpec::Floating { .. } => ConductorSpec::Floating { charge_c: 0.0 },
            };
        }
        p.homogeneous_outer();
        cases.push(p);
    }
    let k = 1 + cases.len();
    let mut b = Mat::<f64>::zeros(m, k);
    let mut col = vec![0.0; m];
    for c in 0..k {
        if c == 0 {
            case_rhs(&system, problem, &mut col, true);
        } else {
            case_rhs(&system, &cases[c - 1], &mut col, false);
        }
        for (i, v) in col.iter().enumerate() {
            b[(i, c)] = *v;
        }
    }
    let mut factor = None;
    if m > 0 {
        let t1 = Instant::now();
        let f = Factor::new(&system, problem.memory_budget_bytes)?;
        timings.factor_s = t1.elapsed().as_secs_f64();
        [timings.ordering_s, timings.symbolic_s, timings.numeric_s] = f.laps;
        let t2 = Instant::now();
        f.solve_in_place(&mut b);
        timings.solve_s = t2.elapsed().as_secs_f64();
        factor = Some(f);
    }
    let t3 = Instant::now();
    // The load case and the capacitance columns are independent: finished side by side
    // (each `finish` is one sequential pass over the mesh).
    let column = |c: usize| -> Vec<f64> { (0..m).map(|i| b[(i, c)]).collect() };
    let (mut sol, finished) = rayon::join(
        || finish(mesh, problem, &system, &column(0), true),
        || {
            use rayon::prelude::*;
            cases
                .par_iter()
                .enumerate()
                .map(|(c, p)| finish(mesh, p, &system, &column(c + 1), false))
                .collect::<Vec<_>>()
        },
    );
    let mut columns = Vec::with_capacity(cases.len());
    let mut cmat = vec![vec![0.0; fixed.len()]; fixed.len()];
    for (c, s) in finished.into_iter().enumerate() {
        for (row, &i) in fixed.iter().enumerate() {
            cmat[row][c] = s.conductor_charges[i];
        }
        columns.push(s.potential);
    }
    timings.post_s = t3.elapsed().as_secs_f64();
    sol.timings = timings;
    non_finite_check(mesh, &sol, &cmat)?;
    Ok(FactoredSolution {
        solution: sol,
        capacitance: (fixed, cmat),
        columns,
        system,
        factor,
        recovered: std::sync::OnceLock::new(),
    })
}

/// Maxwell capacitance matrix among the conductors held at fixed potential: entry (i, j) is
/// the charge on conductor i when conductor j is at 1 V and every other fixed conductor
/// (and a potential outer boundary) is at 0 V; floating conductors keep their zero net
/// charge, so they are eliminated into the matrix. Returns the indices of the fixed
/// conductors (the matrix's row and column order) and the matrix, in F (F/m planar).
///
/// One factorisation, one right-hand side per fixed conductor.
///
/// # Errors
/// As [`solve`].
pub fn capacitance_matrix(mesh: &Mesh, problem: &Problem) -> Result<CapacitanceMatrix, SolveError> {
    Ok(solve_with_capacitance(mesh, problem)?.1)
}
