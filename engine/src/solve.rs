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

/// What one chunk of elements contributes: matrix triplets, and (terminal, row, value)
/// couplings to held nodes.
type ChunkEntries = (Vec<Triplet<usize, usize, f64>>, Vec<(u32, u32, f64)>, Vec<(u32, f64)>);

/// Where each mesh node's value comes from.
#[derive(Clone, Copy, Debug, PartialEq)]
enum Dof {
    /// An unknown of the reduced system.
    Free(u32),
    /// Held by terminal `t` (a fixed conductor, or the outer boundary as the last terminal).
    Held(u32),
}

/// The reduced system of one mesh and one choice of which conductors are fixed: the matrix
/// does not depend on the potentials, so every load case and every capacitance column
/// reuses one factorisation.
struct System {
    dof: Vec<Dof>,
    /// Conductor of each node, if the node is on a conductor's surface.
    node_conductor: Vec<Option<u32>>,
    /// Free unknown of each floating conductor.
    floating_dof: Vec<Option<u32>>,
    /// Terminal index of each fixed conductor; the outer boundary (if held) is terminal
    /// `num_terminals − 1`.
    terminal_of: Vec<Option<u32>>,
    num_terminals: usize,
    /// Terminal of the outer boundary, if it is held at a potential.
    outer_terminal: Option<u32>,
    /// Lower triangle of the reduced matrix.
    matrix: SparseColMat<usize, f64>,
    /// For each terminal t, K_fd·1_t: the right-hand side contribution per volt on it.
    coupling: Vec<Vec<f64>>,
    /// A position per unknown for the ordering (None for floating conductors).
    positions: Vec<Option<[f64; 2]>>,
    /// Space-charge load ∫ρφ w dA per unknown, if any region carries space charge.
    load: Option<Vec<f64>>,
}

impl System {
    fn assemble(mesh: &Mesh, problem: &Problem) -> Result<System, SolveError> {
        problem.check(mesh)?;
        let n = mesh.nodes.len();
        let nc = mesh.conductor_names.len();
        // Nodes on each tagged edge, including P2 mid nodes. Only triangle edges whose two
        // ends both lie on tagged edges can be tagged, which skips the hash look-up for
        // nearly every edge of the mesh.
        let mut edge_tag: HashMap<(u32, u32), EdgeTag> = HashMap::with_capacity(mesh.edges.len());
        let mut on_tagged = vec![false; n];
        for e in &mesh.edges {
            let [a, b] = e.nodes;
            edge_tag.insert((a.min(b), a.max(b)), e.tag);
            on_tagged[a as usize] = true;
            on_tagged[b as usize] = true;
        }
        let mut node_conductor: Vec<Option<u32>> = vec![None; n];
        let mut node_outer = vec![false; n];
        for (t, tri) in mesh.triangles.iter().enumerate() {
            for k in 0..3 {
                let (a, b) = (tri[k], tri[(k + 1) % 3]);
                if !(on_tagged[a as usize] && on_tagged[b as usize]) {
                    continue;
                }
                let Some(tag) = edge_tag.get(&(a.min(b), a.max(b))) else { continue };
                let mid = if mesh.mid_nodes.is_empty() { None } else { Some(mesh.mid_nodes[t][k]) };
                for v in [Some(a), Some(b), mid].into_iter().flatten() {
                    match tag {
                        EdgeTag::Conductor(c) => node_conductor[v as usize] = Some(*c),
                        EdgeTag::Outer => node_outer[v as usize] = true,
                        _ => {}
                    }
                }
            }
        }
        let mut terminal_of: Vec<Option<u32>> = vec![None; nc];
        let mut num_terminals = 0u32;
        for (c, spec) in problem.conductors.iter().enumerate() {
            if let ConductorSpec::Fixed { .. } = spec {
                terminal_of[c] = Some(num_terminals);
                num_terminals += 1;
            }
        }
        let outer_terminal = (problem.outer_potential_v.is_some() || problem.outer_potential_fn.is_some()).then(|| {
            num_terminals += 1;
            num_terminals - 1
        });
        // With a boundary potential function the outer terminal's coupling column holds
        // K·g (g the nodal boundary values) instead of K·1, and its "potential" is 1.
        let held_weight = |h: u32, node: u32| -> f64 {
            match (problem.outer_potential_fn, outer_terminal) {
                (Some(g), Some(t)) if t == h => g(mesh.nodes[node as usize]),
                _ => 1.0,
            }
        };

        let mut next = 0u32;
        let mut floating_dof: Vec<Option<u32>> = vec![None; nc];
        let mut positions = Vec::new();
        for (fd, spec) in floating_dof.iter_mut().zip(&problem.conductors) {
            if let ConductorSpec::Floating { .. } = spec {
                *fd = Some(next);
                positions.push(None);
                next += 1;
            }
        }
        let mut dof = vec![Dof::Free(0); n];
        let mut used_terminal = vec![false; num_terminals as usize];
        for v in 0..n {
            dof[v] = match (node_conductor[v], node_outer[v], outer_terminal) {
                (Some(c), _, _) => match (terminal_of[c as usize], floating_dof[c as usize]) {
                    (Some(t), _) => Dof::Held(t),
                    (None, Some(d)) => Dof::Free(d),
                    (None, None) => unreachable!("a conductor is fixed or floating"),
                },
                (None, true, Some(t)) => Dof::Held(t),
                _ => {
                    positions.push(Some(mesh.nodes[v]));
                    next += 1;
                    Dof::Free(next - 1)
                }
            };
            if let Dof::Held(t) = dof[v] {
                used_terminal[t as usize] = true;
            }
        }
        if !used_terminal.iter().any(|&u| u) {
            return Err(SolveError::NoPotentialReference);
        }
        let m = next as usize;
        check_every_part_is_held(mesh, &dof, m)?;
        let axisym = mesh.symmetry == Symmetry::Axisymmetric;
        let p2 = mesh.order() == 2;
        // Element matrices in parallel: each chunk of triangles yields its own triplets and
        // its coupling entries to held nodes, merged afterwards (same sums in any order up
        // to round-off).
        let chunks: Vec<ChunkEntries> = (0..mesh.triangles.len())
            .collect::<Vec<usize>>()
            .par_chunks(4096)
            .map(|ts| {
                let mut trip = Vec::with_capacity(ts.len() * 21);
                let mut coup = Vec::new();
                let mut load = Vec::new();
                let mut ke = [[0.0; 6]; 6];
                let mut fe = [0.0; 6];
                for &t in ts {
                    let nodes = element(mesh, problem, axisym, p2, t, &mut ke, &mut fe);
                    for (i, &ni) in nodes.as_slice().iter().enumerate() {
                        let Dof::Free(ri) = dof[ni as usize] else { continue };
                        if fe[i] != 0.0 {
                            load.push((ri, fe[i]));
                        }
                        for (j, &nj) in nodes.as_slice().iter().enumerate() {
                            match dof[nj as usize] {
                                Dof::Free(cj) => {
                                    if ri >= cj {
                                        trip.push(Triplet::new(ri as usize, cj as usize, ke[i][j]));
                                    }
                                }
                                Dof::Held(h) => coup.push((h, ri, ke[i][j] * held_weight(h, nj))),
                            }
                        }
                    }
                }
                (trip, coup, load)
            })
            .collect();
        let mut coupling = vec![vec![0.0; m]; num_terminals as usize];
        let mut load = vec![0.0; m];
        for (_, c, l) in &chunks {
            for &(h, r, v) in c {
                coupling[h as usize][r as usize] += v;
            }
            for &(r, v) in l {
                load[r as usize] += v;
            }
        }
        let mut open_trip = Vec::new();
        for_each_open_boundary_term(mesh, problem, |nodes, mm| {
            for (i, &ni) in nodes.iter().enumerate() {
                let Dof::Free(ri) = dof[ni as usize] else { continue };
                for (j, &nj) in nodes.iter().enumerate() {
                    match dof[nj as usize] {
                        Dof::Free(cj) => {
                            if ri >= cj {
                                open_trip.push(Triplet::new(ri as usize, cj as usize, mm[i][j]));
                            }
                        }
                        Dof::Held(h) => coupling[h as usize][ri as usize] += mm[i][j] * held_weight(h, nj),
                    }
                }
            }
        });
        let matrix = lower_csc_from_triplets(
            m,
            chunks.iter().map(|c| c.0.as_slice()).chain(std::iter::once(open_trip.as_slice())),
        )?;
        let has_space_charge = problem.charge_density.iter().any(|&r| r != 0.0);
        Ok(System {
            dof,
            node_conductor,
            floating_dof,
            terminal_of,
            num_terminals: num_terminals as usize,
            outer_terminal,
            matrix,
            coupling,
            positions,
            load: if has_space_charge { Some(load) } else { None },
        })
    }

    fn num_unknowns(&self) -> usize {
        self.matrix.nrows()
    }
}

/// Every connected part of the unknowns must touch a held node, or the potential there is
/// defined only up to a constant and the matrix is singular. Union–find over the elements.
fn check_every_part_is_held(mesh: &Mesh, dof: &[Dof], m: usize) -> Result<(), SolveError> {
    let mut parent: Vec<u32> = (0..m as u32).collect();
    let mut held = vec![false; m];
    fn root(parent: &mut [u32], mut a: u32) -> u32 {
        while parent[a as usize] != a {
            parent[a as usize] = parent[parent[a as usize] as usize];
            a = parent[a as usize];
        }
        a
    }
    for (t, tri) in mesh.triangles.iter().enumerate() {
        let mut first: Option<u32> = None;
        let mut touches_held = false;
        let mids = if mesh.mid_nodes.is_empty() { [u32::MAX; 3] } else { mesh.mid_nodes[t] };
        for &v in tri.iter().chain(mids.iter()).filter(|&&v| v != u32::MAX) {
            match dof[v as usize] {
                Dof::Free(d) => match first {
                    None => first = Some(d),
                    Some(f) => {
                        let (ra, rb) = (root(&mut parent, f), root(&mut parent, d));
                        if ra != rb {
                            parent[ra as usize] = rb;
                            held[rb as usize] |= held[ra as usize];
                        }
                    }
                },
                Dof::Held(_) => touches_held = true,
            }
        }
        if let (Some(f), true) = (first, touches_held) {
            let r = root(&mut parent, f);
            held[r as usize] = true;
        }
    }
    for (t, tri) in mesh.triangles.iter().enumerate() {
        if let Dof::Free(d) = dof[tri[0] as usize] {
            let r = root(&mut parent, d);
            if !held[r as usize] {
                return Err(SolveError::FloatingPart {
                    region: mesh.shape_names[mesh.regions[t] as usize].clone(),
                    at: mesh.nodes[tri[0] as usize],
                });
            }
        }
    }
    Ok(())
}

/// Lower-triangle CSC matrix from (row ≥ col) triplets, duplicates summed: a counting sort
/// by column, then each (short) column sorted by row. Linear in the number of triplets
/// apart from the per-column sorts, and several times faster than a global sort.
fn lower_csc_from_triplets<'a>(
    m: usize,
    parts: impl Iterator<Item = &'a [Triplet<usize, usize, f64>]> + Clone,
) -> Result<SparseColMat<usize, f64>, SolveError> {
    let mut count = vec![0usize; m + 1];
    for part in parts.clone() {
        for t in part {
            count[t.col + 1] += 1;
        }
    }
    for j in 0..m {
        count[j + 1] += count[j];
    }
    let mut fill = count.clone();
    let mut entries = vec![(0usize, 0.0f64); count[m]];
    for part in parts {
        for t in part {
            entries[fill[t.col]] = (t.row, t.val);
            fill[t.col] += 1;
        }
    }
    let mut col_ptr = Vec::with_capacity(m + 1);
    let mut row_idx = Vec::with_capacity(entries.len() / 4);
    let mut values = Vec::with_capacity(entries.len() / 4);
    col_ptr.push(0);
    for j in 0..m {
        let col = &mut entries[count[j]..count[j + 1]];
        col.sort_unstable_by_key(|e| e.0);
        let mut k = 0;
        while k < col.len() {
            let (r, mut v) = col[k];
            k += 1;
            while k < col.len() && col[k].0 == r {
                v += col[k].1;
                k += 1;
            }
            row_idx.push(r);
            values.push(v);
        }
        col_ptr.push(row_idx.len());
    }
    // Sorted, duplicate-free rows within each column by construction.
    let symbolic = SymbolicSparseColMat::new_checked(m, m, col_ptr, None, row_idx);
    Ok(SparseColMat::new(symbolic, values))
}

/// A Cholesky factorisation of a [`System`], with a nested-dissection ordering.
struct Factor {
    symbolic: SymbolicCholesky<usize>,
    values: Vec<f64>,
    /// Seconds: ordering, symbolic, numeric.
    laps: [f64; 3],
}

impl Factor {
    /// Orders (geometric nested dissection, [`nested_dissection`]), then factorises.
    fn new(system: &System, memory_budget_bytes: Option<f64>) -> Result<Factor, SolveError> {
        let m = system.num_unknowns();
        let a = system.matrix.as_ref();
        let t0 = Instant::now();
        let (fwd, inv) = nested_dissection(a.symbolic().col_ptr(), a.symbolic().row_idx(), &system.positions);
        let t1 = Instant::now();
        let ordering = SymmetricOrdering::Custom(PermRef::new_checked(&fwd, &inv, m));
        let symbolic = factorize_symbolic_cholesky(a.symbolic(), Side::Lower, ordering, Default::default())
            .map_err(|e| SolveError::Factorisation { detail: format!("{e:?}") })?;
        let t2 = Instant::now();
        let bytes = 8.0 * symbolic.len_val() as f64;
        if let Some(budget) = memory_budget_bytes.filter(|&b| bytes > b) {
            return Err(SolveError::FactorOverBudget { unknowns: m, bytes, budget });
        }
        let mut values = vec![0.0; symbolic.len_val()];
        let mut mem = MemBuffer::new(symbolic.factorize_numeric_llt_scratch::<f64>(Par::Seq, Default::default()));
        let numeric = symbolic.factorize_numeric_llt(
            &mut values,
            a,
            Side::Lower,
            Default::default(),
            Par::Seq,
            MemStack::new(&mut mem),
            Default::default(),
        );
        if let Err(e) = numeric {
            return Err(match e {
                NumericLltError::NonPositivePivot { index } => {
                    // The pivot counts factor columns (permuted order); map it back to an
                    // unknown and to a node of the mesh.
                    let pos = index.saturating_sub(1).min(m.saturating_sub(1));
                    let unknown = symbolic.perm().map(|p| p.arrays().0[pos]).unwrap_or(pos);
                    let at = system.dof.iter().position(|d| *d == Dof::Free(unknown as u32));
                    SolveError::NotPositiveDefinite { pivot: index, node: at.map(|v| v as u32) }
                }
            });
        }
        let laps = [(t1 - t0).as_secs_f64(), (t2 - t1).as_secs_f64(), t2.elapsed().as_secs_f64()];
        Ok(Factor { symbolic, values, laps })
    }

    /// Solves in place for every column of `rhs`.
    fn solve_in_place(&self, rhs: &mut Mat<f64>) {
        let llt = LltRef::new(&self.symbolic, &self.values);
        let mut mem = MemBuffer::new(self.symbolic.solve_in_place_scratch::<f64>(rhs.ncols(), Par::Seq));
        llt.solve_in_place_with_conj(Conj::No, rhs.as_mut(), Par::Seq, MemStack::new(&mut mem));
    }
}

/// Terminal potentials and floating charges of one load case.
fn case_rhs(system: &System, problem: &Problem, rhs: &mut [f64], with_space_charge: bool) {
    rhs.fill(0.0);
    if let (true, Some(load)) = (with_space_charge, &system.load) {
        rhs.copy_from_slice(load);
    }
    for (c, spec) in problem.conductors.iter().enumerate() {
        match (spec, system.terminal_of[c], system.floating_dof[c]) {
            (ConductorSpec::Fixed { potential_v }, Some(t), _) => {
                for (r, k) in rhs.iter_mut().zip(&system.coupling[t as usize]) {
                    *r -= potential_v * k;
                }
            }
            (ConductorSpec::Floating { charge_c }, _, Some(d)) => rhs[d as usize] += charge_c,
            _ => {}
        }
    }
    let outer_scale = if problem.outer_potential_fn.is_some() { Some(1.0) } else { problem.outer_potential_v };
    if let (Some(v0), Some(t)) = (outer_scale, system.outer_terminal) {
        for (r, k) in rhs.iter_mut().zip(&system.coupling[t as usize]) {
            *r -= v0 * k;
        }
    }
}

/// No NaN or infinity leaves the solve: the first non-finite result, named.
fn non_finite_check(mesh: &Mesh, sol: &Solution, cmat: &[Vec<f64>]) -> Result<(), SolveError> {
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
fn finish(mesh: &Mesh, problem: &Problem, system: &System, x: &[f64], with_space_charge: bool) -> Solution {
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
            Dof::Held(t) => match (problem.outer_potential_fn, system.outer_terminal) {
                (Some(g), Some(o)) if o == t => g(mesh.nodes[v]),
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

    /// The peak |E| per region away from the given discs, as
    /// [`region_peaks_away_from`](crate::region_peaks_away_from) finds them, with the
    /// recovery shared by the mesh's other estimates.
    pub fn region_peaks_away_from(&self, mesh: &Mesh, discs: &[(Xy, f64)]) -> Vec<RegionPeak> {
        crate::fields::peaks_away_from_with(mesh, &self.solution, self.recovery(mesh), discs)
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
        homogeneous.outer_potential_v =
            (problem.outer_potential_v.is_some() || problem.outer_potential_fn.is_some()).then_some(0.0);
        homogeneous.outer_potential_fn = None;
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
        p.outer_potential_v =
            (problem.outer_potential_v.is_some() || problem.outer_potential_fn.is_some()).then_some(0.0);
        p.outer_potential_fn = None;
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
    let column = |c: usize, out: &mut Vec<f64>| {
        for (i, v) in out.iter_mut().enumerate() {
            *v = b[(i, c)];
        }
    };
    column(0, &mut col);
    let mut sol = finish(mesh, problem, &system, &col, true);
    let mut columns = Vec::with_capacity(cases.len());
    let mut cmat = vec![vec![0.0; fixed.len()]; fixed.len()];
    for (c, p) in cases.iter().enumerate() {
        column(c + 1, &mut col);
        let s = finish(mesh, p, &system, &col, false);
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

/// The open-boundary term of an axisymmetric model. With the Kelvin transform
/// U(x′) = (ρ/R)·V(x) of the exterior (ρ = |x − c|), the exterior energy is
/// ½ε[∫|∇′U|²dV′ + (1/R)∮U²dS] over the mapped ball and its sphere (verified on the
/// monopole and dipole fields by hand), so the mapped exterior carries an ordinary
/// Laplace stiffness plus this surface "mass" term on the circle, and U stays bounded at
/// the centre (infinity) without any condition there. Planar models need no term (the
/// 2-D inversion is conformal). Calls `f(nodes, M)` for every edge of the circle.
fn for_each_open_boundary_term(mesh: &Mesh, problem: &Problem, mut f: impl FnMut(&[u32], &[[f64; 3]; 3])) {
    let Some(ext) = mesh.exterior else { return };
    if mesh.symmetry != Symmetry::Axisymmetric {
        return;
    }
    let eps = EPSILON_0 * problem.permittivity[ext.region as usize];
    // Mid nodes of the circle edges (P2), from the exterior triangles.
    let mut mid: HashMap<(u32, u32), u32> = HashMap::new();
    if !mesh.mid_nodes.is_empty() {
        for (t, tri) in mesh.triangles.iter().enumerate() {
            if mesh.regions[t] == ext.region {
                for k in 0..3 {
                    let (a, b) = (tri[k], tri[(k + 1) % 3]);
                    mid.insert((a.min(b), a.max(b)), mesh.mid_nodes[t][k]);
                }
            }
        }
    }
    // 3-point Gauss–Legendre rule on [0, 1], exact to degree 5.
    let g = [(0.5 - 0.5 * (0.6f64).sqrt(), 5.0 / 18.0), (0.5, 8.0 / 18.0), (0.5 + 0.5 * (0.6f64).sqrt(), 5.0 / 18.0)];
    for e in &mesh.edges {
        let EdgeTag::Interface(_, b) = e.tag else { continue };
        if b != ext.region {
            continue;
        }
        let [n0, n1] = e.nodes;
        let m = mid.get(&(n0.min(n1), n0.max(n1))).copied();
        let ids: Vec<u32> = match m {
            Some(m) => vec![n0, n1, m],
            None => vec![n0, n1],
        };
        let x: Vec<Xy> = ids.iter().map(|&i| mesh.nodes[i as usize]).collect();
        let mut mm = [[0.0; 3]; 3];
        for &(s, w) in &g {
            // 1-D Lagrange functions on the edge: ends at s = 0, 1, middle at s = ½.
            let (n, dn): (Vec<f64>, Vec<f64>) = if ids.len() == 3 {
                (
                    vec![(1.0 - s) * (1.0 - 2.0 * s), s * (2.0 * s - 1.0), 4.0 * s * (1.0 - s)],
                    vec![4.0 * s - 3.0, 4.0 * s - 1.0, 4.0 - 8.0 * s],
                )
            } else {
                (vec![1.0 - s, s], vec![-1.0, 1.0])
            };
            let (mut p, mut d) = ([0.0; 2], [0.0; 2]);
            for k in 0..ids.len() {
                p[0] += n[k] * x[k][0];
                p[1] += n[k] * x[k][1];
                d[0] += dn[k] * x[k][0];
                d[1] += dn[k] * x[k][1];
            }
            let weight = w * d[0].hypot(d[1]) * 2.0 * std::f64::consts::PI * p[0] * eps / ext.radius;
            for a in 0..ids.len() {
                for bb in 0..ids.len() {
                    mm[a][bb] += weight * n[a] * n[bb];
                }
            }
        }
        f(&ids, &mm);
    }
}

/// Node ids of an element (3 or 6).
struct ElementNodes {
    ids: [u32; 6],
    len: usize,
}

impl ElementNodes {
    fn as_slice(&self) -> &[u32] {
        &self.ids[..self.len]
    }
}

/// The stiffness matrix of triangle `t` into `ke` and its space-charge load into `fe`;
/// returns its nodes.
fn element(
    mesh: &Mesh,
    problem: &Problem,
    axisym: bool,
    p2: bool,
    t: usize,
    ke: &mut [[f64; 6]; 6],
    fe: &mut [f64; 6],
) -> ElementNodes {
    let tri = mesh.triangles[t];
    let r = mesh.regions[t] as usize;
    let eps = match problem.tensor.get(r).copied().flatten() {
        Some(e) => [[EPSILON_0 * e[0][0], EPSILON_0 * e[0][1]], [EPSILON_0 * e[1][0], EPSILON_0 * e[1][1]]],
        None => {
            let e = EPSILON_0 * problem.permittivity[r];
            [[e, 0.0], [0.0, e]]
        }
    };
    let rho = problem.charge_density.get(r).copied().unwrap_or(0.0);
    if p2 {
        let m = mesh.mid_nodes[t];
        let ids = [tri[0], tri[1], tri[2], m[0], m[1], m[2]];
        let x: [[f64; 2]; 6] = ids.map(|i| mesh.nodes[i as usize]);
        element_matrix::<6, P2>(&x, eps, rho, axisym, &QUAD_DEG4, ke, fe);
        ElementNodes { ids, len: 6 }
    } else {
        let x: [[f64; 2]; 3] = tri.map(|i| mesh.nodes[i as usize]);
        element_matrix::<3, P1>(&x, eps, rho, axisym, &QUAD_DEG2, ke, fe);
        ElementNodes { ids: [tri[0], tri[1], tri[2], 0, 0, 0], len: 3 }
    }
}

/// Calls `f(nodes, K_e, f_e)` for every element with its stiffness matrix
/// ∫∇φᵢ·ε∇φⱼ w dA and its space-charge load ∫ρφᵢ w dA.
fn for_each_element(
    mesh: &Mesh,
    problem: &Problem,
    axisym: bool,
    p2: bool,
    mut f: impl FnMut(&[u32], &[[f64; 6]; 6], &[f64; 6]),
) {
    let mut ke = [[0.0; 6]; 6];
    let mut fe = [0.0; 6];
    for t in 0..mesh.triangles.len() {
        let nodes = element(mesh, problem, axisym, p2, t, &mut ke, &mut fe);
        f(nodes.as_slice(), &ke, &fe);
    }
}

/// Isoparametric element stiffness, written into the top-left N×N block of `ke`.
fn element_matrix<const N: usize, E: Element<N>>(
    x: &[[f64; 2]; N],
    eps: [[f64; 2]; 2],
    rho: f64,
    axisym: bool,
    rule: &[(f64, f64, f64)],
    ke: &mut [[f64; 6]; 6],
    fe: &mut [f64; 6],
) {
    for row in ke.iter_mut() {
        *row = [0.0; 6];
    }
    *fe = [0.0; 6];
    for &(xi, eta, w) in rule {
        let g = E::gradients(xi, eta);
        // Jacobian J = Σ xᵢ ⊗ ∇̂φᵢ: columns ∂x/∂ξ, ∂x/∂η.
        let mut j = [[0.0; 2]; 2];
        for (xi_, gi) in x.iter().zip(g.iter()) {
            j[0][0] += xi_[0] * gi[0];
            j[0][1] += xi_[0] * gi[1];
            j[1][0] += xi_[1] * gi[0];
            j[1][1] += xi_[1] * gi[1];
        }
        let det = j[0][0] * j[1][1] - j[0][1] * j[1][0];
        // ∇φ = J⁻ᵀ ∇̂φ.
        let inv = [[j[1][1] / det, -j[1][0] / det], [-j[0][1] / det, j[0][0] / det]];
        let mut grad = [[0.0; 2]; N];
        for (gr, gi) in grad.iter_mut().zip(g.iter()) {
            *gr = [inv[0][0] * gi[0] + inv[0][1] * gi[1], inv[1][0] * gi[0] + inv[1][1] * gi[1]];
        }
        let mut weight = w * det.abs();
        let v = E::values(xi, eta);
        if axisym {
            let r: f64 = x.iter().zip(v.iter()).map(|(p, vi)| p[0] * vi).sum();
            weight *= 2.0 * std::f64::consts::PI * r;
        }
        for a in 0..N {
            // ε·∇φₐ (ε symmetric).
            let ea = [eps[0][0] * grad[a][0] + eps[0][1] * grad[a][1], eps[1][0] * grad[a][0] + eps[1][1] * grad[a][1]];
            for b in 0..=a {
                let k = weight * (ea[0] * grad[b][0] + ea[1] * grad[b][1]);
                ke[a][b] += k;
                if a != b {
                    ke[b][a] += k;
                }
            }
            if rho != 0.0 {
                fe[a] += weight * rho * v[a];
            }
        }
    }
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
