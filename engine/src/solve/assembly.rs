//! Assembly: the reduced system of a mesh (unknowns, held nodes, floating conductors), the
//! element matrices, the open-boundary term, and the right-hand side of a load case.
//!
//! # References
//! - P. P. Silvester, R. L. Ferrari, *Finite Elements for Electrical Engineers*, 3rd ed.,
//!   Cambridge University Press 1996, ch. 2–4 (element matrices, assembly, elimination of
//!   prescribed potentials).
//! - O. C. Zienkiewicz, R. L. Taylor, J. Z. Zhu, *The Finite Element Method: Its Basis and
//!   Fundamentals*, 7th ed., Butterworth-Heinemann 2013, ch. 5–6 (isoparametric elements and
//!   their quadrature).
//! - E. M. Freeman, D. A. Lowther, "A novel mapping technique for open boundary finite
//!   element solutions to Poisson's equation", IEEE Trans. Magn. 24 (1988) 2934–2936 (the
//!   mapped exterior disc of the open boundary; see `mesher/src/exterior.rs`).

use super::*;
use crate::StretchCondition;

/// What one chunk of elements contributes: matrix triplets, and (terminal, row, value)
/// couplings to held nodes.
pub(super) type ChunkEntries = (Vec<Triplet<usize, usize, f64>>, Vec<(u32, u32, f64)>, Vec<(u32, f64)>);

/// Where each mesh node's value comes from.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(super) enum Dof {
    /// An unknown of the reduced system.
    Free(u32),
    /// Held by terminal `t` (a fixed conductor, or the outer boundary as the last terminal).
    Held(u32),
}

/// The reduced system of one mesh and one choice of which conductors are fixed: the matrix
/// does not depend on the potentials, so every load case and every capacitance column
/// reuses one factorisation.
pub(super) struct System {
    pub(super) dof: Vec<Dof>,
    /// Conductor of each node, if the node is on a conductor's surface.
    pub(super) node_conductor: Vec<Option<u32>>,
    /// Free unknown of each floating conductor.
    pub(super) floating_dof: Vec<Option<u32>>,
    /// Terminal index of each fixed conductor; the outer boundary (if held) is terminal
    /// `num_terminals − 1`.
    pub(super) terminal_of: Vec<Option<u32>>,
    pub(super) num_terminals: usize,
    /// Terminal of the outer boundary, if it is held at a potential.
    pub(super) outer_terminal: Option<u32>,
    /// Lower triangle of the reduced matrix.
    pub(super) matrix: SparseColMat<usize, f64>,
    /// For each terminal t, K_fd·1_t: the right-hand side contribution per volt on it.
    pub(super) coupling: Vec<Vec<f64>>,
    /// A position per unknown for the ordering (None for floating conductors).
    pub(super) positions: Vec<Option<[f64; 2]>>,
    /// Space-charge load ∫ρφ w dA per unknown, if any region carries space charge.
    pub(super) load: Option<Vec<f64>>,
    /// The potential of each node held by the outer terminal (NaN elsewhere): the outer
    /// boundary's, a potential function's, or a held stretch's.
    pub(super) outer_value: Vec<f64>,
}

impl System {
    pub(super) fn assemble(mesh: &Mesh, problem: &Problem) -> Result<System, SolveError> {
        problem.check(mesh)?;
        let n = mesh.nodes.len();
        let nc = mesh.conductor_names.len();
        let BoundaryNodes { node_conductor, node_outer, outer_value } = boundary_nodes(mesh, problem)?;
        let mut terminal_of: Vec<Option<u32>> = vec![None; nc];
        let mut num_terminals = 0u32;
        for (c, spec) in problem.conductors.iter().enumerate() {
            if let ConductorSpec::Fixed { .. } = spec {
                terminal_of[c] = Some(num_terminals);
                num_terminals += 1;
            }
        }
        let outer_terminal = problem.outer_held().then(|| {
            num_terminals += 1;
            num_terminals - 1
        });
        // With a varying outer boundary (a potential function, or held stretches) the outer
        // terminal's coupling column holds K·g (g the nodal boundary values) instead of
        // K·1, and its "potential" is 1.
        let varying = problem.outer_varying();
        let held_weight = |h: u32, node: u32| -> f64 {
            match outer_terminal {
                Some(t) if t == h && varying => outer_value[node as usize],
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
            outer_value,
        })
    }

    pub(super) fn num_unknowns(&self) -> usize {
        self.matrix.nrows()
    }
}

/// Every connected part of the unknowns must touch a held node, or the potential there is
/// defined only up to a constant and the matrix is singular. Union–find over the elements.
pub(super) fn check_every_part_is_held(mesh: &Mesh, dof: &[Dof], m: usize) -> Result<(), SolveError> {
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
pub(super) fn lower_csc_from_triplets<'a>(
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

/// Terminal potentials and floating charges of one load case.
pub(super) fn case_rhs(system: &System, problem: &Problem, rhs: &mut [f64], with_space_charge: bool) {
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
    let outer_scale = if problem.outer_varying() { Some(1.0) } else { problem.outer_potential_v };
    if let (Some(v0), Some(t)) = (outer_scale, system.outer_terminal) {
        for (r, k) in rhs.iter_mut().zip(&system.coupling[t as usize]) {
            *r -= v0 * k;
        }
    }
}

/// The open-boundary term of an axisymmetric model. With the Kelvin transform
/// U(x′) = (ρ/R)·V(x) of the exterior (ρ = |x − c|), the exterior energy is
/// ½ε[∫|∇′U|²dV′ + (1/R)∮U²dS] over the mapped ball and its sphere (verified on the
/// monopole and dipole fields by hand), so the mapped exterior carries an ordinary
/// Laplace stiffness plus this surface "mass" term on the circle, and U stays bounded at
/// the centre (infinity) without any condition there. Planar models need no term (the
/// 2-D inversion is conformal). Calls `f(nodes, M)` for every edge of the circle.
pub(super) fn for_each_open_boundary_term(mesh: &Mesh, problem: &Problem, mut f: impl FnMut(&[u32], &[[f64; 3]; 3])) {
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
pub(super) struct ElementNodes {
    pub(super) ids: [u32; 6],
    pub(super) len: usize,
}

impl ElementNodes {
    pub(super) fn as_slice(&self) -> &[u32] {
        &self.ids[..self.len]
    }
}

/// The stiffness matrix of triangle `t` into `ke` and its space-charge load into `fe`;
/// returns its nodes.
pub(super) fn element(
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
pub(super) fn for_each_element(
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
pub(super) fn element_matrix<const N: usize, E: Element<N>>(
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

/// Which conductor and which held outer value each node has.
struct BoundaryNodes {
    /// Conductor of each node on a conductor's surface (a boundary piece of one included).
    node_conductor: Vec<Option<u32>>,
    /// The node is held by the outer terminal.
    node_outer: Vec<bool>,
    /// Its value there (NaN elsewhere).
    outer_value: Vec<f64>,
}

/// The nodes on conductor surfaces and on the held outer boundary, with the check that a
/// conductor touching the held boundary is at its potential.
fn boundary_nodes(mesh: &Mesh, problem: &Problem) -> Result<BoundaryNodes, SolveError> {
    let n = mesh.nodes.len();
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
    let mut outer_value = vec![f64::NAN; n];
    // The stretch an outer edge belongs to: the first on whose curve both ends lie.
    let tol = 1e-9 * mesh.scale();
    let stretch_of = |a: u32, b: u32| {
        problem.boundary_stretches.iter().find(|s| {
            s.curve.distance(mesh.nodes[a as usize]).0 <= tol && s.curve.distance(mesh.nodes[b as usize]).0 <= tol
        })
    };
    let plain_outer = |p: [f64; 2]| -> Option<f64> {
        match problem.outer_potential_fn {
            Some(g) => Some(g(p)),
            None => problem.outer_potential_v,
        }
    };
    for (t, tri) in mesh.triangles.iter().enumerate() {
        for k in 0..3 {
            let (a, b) = (tri[k], tri[(k + 1) % 3]);
            if !(on_tagged[a as usize] && on_tagged[b as usize]) {
                continue;
            }
            let Some(tag) = edge_tag.get(&(a.min(b), a.max(b))) else { continue };
            let mid = if mesh.mid_nodes.is_empty() { None } else { Some(mesh.mid_nodes[t][k]) };
            let stretch = if *tag == EdgeTag::Outer { stretch_of(a, b) } else { None };
            for v in [Some(a), Some(b), mid].into_iter().flatten() {
                match tag {
                    EdgeTag::Conductor(c) => node_conductor[v as usize] = Some(*c),
                    EdgeTag::Outer => {
                        let p = mesh.nodes[v as usize];
                        // A conductor's stretch joins the conductor; a zero-flux one holds
                        // nothing; a held one its profile; the rest the outer boundary's.
                        let held = match stretch.map(|s| &s.condition) {
                            Some(&StretchCondition::Conductor(c)) => {
                                node_conductor[v as usize] = Some(c);
                                None
                            }
                            Some(_) => stretch.and_then(|s| s.potential_at(p)),
                            None => plain_outer(p),
                        };
                        if let Some(value) = held {
                            node_outer[v as usize] = true;
                            outer_value[v as usize] = value;
                        }
                    }
                    _ => {}
                }
            }
        }
    }
    // A conductor touching the held outer boundary must be at the boundary's potential.
    if problem.outer_held() {
        for v in (0..n).filter(|&v| node_outer[v]) {
            let Some(c) = node_conductor[v] else { continue };
            let p = mesh.nodes[v];
            let boundary_v = outer_value[v];
            let conductor_v = match problem.conductors[c as usize] {
                ConductorSpec::Fixed { potential_v } => Some(potential_v),
                ConductorSpec::Floating { .. } => None,
            };
            let agrees = conductor_v
                .is_some_and(|cv| (cv - boundary_v).abs() <= 1e-12 * cv.abs().max(boundary_v.abs()).max(1.0));
            if !agrees {
                return Err(SolveError::ConductorOnHeldBoundary {
                    conductor: mesh.conductor_names[c as usize].clone(),
                    at: p,
                    conductor_v,
                    boundary_v,
                });
            }
        }
    }
    Ok(BoundaryNodes { node_conductor, node_outer, outer_value })
}

/// Checks, before any assembly, that no conductor touches the held outer boundary (or a
/// held piece of it) at another potential, or floats there.
///
/// # Errors
/// [`SolveError::ConductorOnHeldBoundary`] naming the conductor and a shared node; the
/// errors of [`Problem::check`].
pub fn check_contacts(mesh: &Mesh, problem: &Problem) -> Result<(), SolveError> {
    problem.check(mesh)?;
    boundary_nodes(mesh, problem).map(|_| ())
}
