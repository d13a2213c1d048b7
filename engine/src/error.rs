//! The engine's error type.

use std::fmt;

/// Why a solve cannot proceed.
#[derive(Clone, Debug, PartialEq)]
#[non_exhaustive]
pub enum SolveError {
    /// A region with triangles has no entry in the problem's permittivities.
    NoPermittivity {
        /// Region (shape) name.
        region: String,
    },
    /// The problem describes a different number of conductors than the mesh has.
    ConductorMismatch {
        /// Conductors in the mesh.
        mesh: usize,
        /// Conductors in the problem.
        problem: usize,
    },
    /// Nothing holds the potential: no conductor at a fixed potential and no outer
    /// boundary potential, so the potential is defined only up to a constant.
    NoPotentialReference,
    /// A result came out NaN or infinite (inputs so large that their products overflow).
    NonFinite {
        /// Which quantity, and where.
        quantity: String,
    },
    /// The factorisation would not fit in the memory budget (`Problem::memory_budget_bytes`).
    FactorOverBudget {
        /// Unknowns of the system.
        unknowns: usize,
        /// Bytes the factor's values need.
        bytes: f64,
        /// The budget.
        budget: f64,
    },
    /// The adaptive loop's first mesh already has more nodes than its budget of unknowns.
    FirstMeshOverBudget {
        /// Nodes of the first mesh.
        nodes: usize,
        /// The budget.
        max_unknowns: usize,
    },
    /// A part of the domain touches no fixed potential (for example a dielectric enclosed
    /// by a floating conductor), so its potential is undetermined.
    FloatingPart {
        /// A region in that part.
        region: String,
        /// A point in it, metres.
        at: [f64; 2],
    },
    /// The factorisation met a non-positive pivot: the matrix is not positive definite
    /// (inverted or degenerate elements, or permittivities spanning too many orders of
    /// magnitude for double precision).
    NotPositiveDefinite {
        /// The failing pivot (factor column, permuted order).
        pivot: usize,
        /// The mesh node of that unknown (None for a floating conductor's potential).
        node: Option<u32>,
    },
    /// A conductor touches the outer boundary, which is held at another potential (or the
    /// conductor floats): the nodes they share cannot hold both potentials.
    ConductorOnHeldBoundary {
        /// The conductor's name.
        conductor: String,
        /// A shared node, metres.
        at: [f64; 2],
        /// The conductor's potential (None: floating).
        conductor_v: Option<f64>,
        /// The boundary's potential at that node.
        boundary_v: f64,
    },
    /// Meshing failed (in the adaptive loop).
    Mesh(mesher::MeshError),
    /// The sparse factorisation failed (the reduced matrix is not positive definite).
    Factorisation {
        /// Detail from the factorisation.
        detail: String,
    },
}

impl fmt::Display for SolveError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            SolveError::NoPermittivity { region } => write!(f, "region '{region}' has no permittivity in the problem; give one for every dielectric shape"),
            SolveError::ConductorMismatch { mesh, problem } => write!(f, "the mesh has {mesh} conductors but the problem describes {problem}"),
            SolveError::NonFinite { quantity } => write!(f, "the computed {quantity} is not a finite number; the inputs' scale overflows double precision: check the potentials, charges, charge densities and permittivities for values far outside any real part"),
            SolveError::FactorOverBudget { unknowns, bytes, budget } => write!(f, "the factorisation of the {unknowns} unknowns would need {:.2} GB for its values alone, over the memory budget of {:.2} GB; coarsen the sizes in [mesh] or raise --memory-limit if the machine has the memory", bytes / 1e9, budget / 1e9),
            SolveError::FirstMeshOverBudget { nodes, max_unknowns } => write!(f, "the first mesh already has {nodes} nodes, more than the budget of {max_unknowns} unknowns for the adaptive loop; raise --max-unknowns (or --memory-limit) or coarsen the sizes in [mesh]"),
            SolveError::NoPotentialReference => write!(f, "no potential reference: hold at least one conductor at a fixed potential (potential_v) or give the outer boundary a potential"),
            SolveError::ConductorOnHeldBoundary { conductor, at, conductor_v, boundary_v } => write!(
                f,
                "conductor '{conductor}' touches the outer boundary at ({:.6e}, {:.6e}) m, which is held at {boundary_v} V, while the conductor {}: a point cannot hold two potentials; move the conductor off the boundary (a gap of dielectric between them), give it the boundary's potential, or make the outer boundary zero_flux if it is a symmetry plane",
                at[0],
                at[1],
                match conductor_v { Some(v) => format!("is at {v} V"), None => "floats".to_string() }
            ),
            SolveError::FloatingPart { region, at } => write!(f, "region '{region}' (near ({:.6e}, {:.6e}) m) is cut off from every fixed potential, so its potential is undetermined; connect it to an electrode through a dielectric, or hold an enclosing conductor at a potential", at[0], at[1]),
            SolveError::NotPositiveDefinite { pivot, node } => match node {
                Some(n) => write!(f, "the system matrix is not positive definite (pivot {pivot}, at mesh node {n}); check the elements and permittivities around that node, e.g. with `fieldgrade mesh --svg` and the fields.vtu node ids"),
                None => write!(f, "the system matrix is not positive definite (pivot {pivot}, at a floating conductor's potential); check that the floating conductor is surrounded by dielectric"),
            },
            SolveError::Mesh(e) => write!(f, "{e}"),
            SolveError::Factorisation { detail } => write!(f, "the system matrix could not be factorised ({detail}); a part of the domain may be cut off from every fixed potential, for example a dielectric region enclosed by floating conductors only"),
        }
    }
}

impl std::error::Error for SolveError {}
