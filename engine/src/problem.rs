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

/// A stretch of the outer boundary with a condition of its own.
#[derive(Clone, Debug, PartialEq)]
pub struct BoundaryStretch {
    /// The stretch, metres; its ends are mesh vertices (`mesher::Geometry::boundary_pieces`).
    pub curve: mesher::Curve,
    /// What holds it.
    pub condition: StretchCondition,
}

/// The condition on a [`BoundaryStretch`].
#[derive(Clone, Debug, PartialEq)]
pub enum StretchCondition {
    /// Held at the potential of (arc length from the curve's start in metres, V) pairs,
    /// interpolated linearly and constant beyond the first and last (one pair: a constant
    /// potential).
    Potential(Vec<(f64, f64)>),
    /// Zero normal flux.
    ZeroFlux,
    /// Part of this conductor's surface (index into the mesh's conductors): held at its
    /// potential, fixed or floating, its charge counted with the conductor's.
    Conductor(u32),
}

impl BoundaryStretch {
    /// The potential at `p` (a point on the curve), if the stretch is held at a given
    /// potential (not a conductor's).
    pub fn potential_at(&self, p: [f64; 2]) -> Option<f64> {
        let StretchCondition::Potential(table) = &self.condition else { return None };
        let s = self.curve.distance(p).1 * self.curve.length();
        let (first, last) = (table.first()?, table.last()?);
        if s <= first.0 {
            return Some(first.1);
        }
        if s >= last.0 {
            return Some(last.1);
        }
        let k = table.partition_point(|e| e.0 <= s).clamp(1, table.len() - 1);
        let ((s0, v0), (s1, v1)) = (table[k - 1], table[k]);
        Some(if s1 > s0 { v0 + (v1 - v0) * (s - s0) / (s1 - s0) } else { v1 })
    }

    /// The wall the stretch makes for the corner analysis.
    pub fn wall(&self) -> mesher::Wall {
        match self.condition {
            StretchCondition::ZeroFlux => mesher::Wall::ZeroFlux,
            _ => mesher::Wall::Potential,
        }
    }
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
    /// Stretches of the outer boundary with a condition of their own (the rest of the
    /// outer boundary keeps `outer_potential_v` / `outer_potential_fn`, or zero flux). An
    /// outer edge belongs to the first stretch on whose curve both its ends lie.
    pub boundary_stretches: Vec<BoundaryStretch>,
    /// A resource limit, not physics: the solve stops with
    /// [`SolveError::FactorOverBudget`] before the
    /// numeric factorisation if the factor's values alone would take more bytes than this
    /// (known exactly from the symbolic factorisation). `None`: no limit.
    pub memory_budget_bytes: Option<f64>,
}

impl Problem {
    /// The held outer boundary's potential varies from node to node (a potential function
    /// or a held stretch): its terminal's coupling column then holds K·g for the nodal
    /// values g, and the terminal's "potential" is 1.
    pub(crate) fn outer_varying(&self) -> bool {
        self.outer_potential_fn.is_some()
            || self.boundary_stretches.iter().any(|b| matches!(b.condition, StretchCondition::Potential(_)))
    }

    /// Some part of the outer boundary is held at a potential.
    pub(crate) fn outer_held(&self) -> bool {
        self.outer_potential_v.is_some() || self.outer_varying()
    }

    /// The same problem with every boundary potential at 0 V (the stretches' and the outer
    /// boundary's), the shape of the system unchanged: for the capacitance columns and the
    /// dual problems, which reuse the factorisation.
    pub(crate) fn homogeneous_outer(&mut self) {
        self.outer_potential_v = self.outer_held().then_some(0.0);
        self.outer_potential_fn = None;
        self.boundary_stretches.clear();
    }

    /// Checks that the problem fits the mesh: one conductor entry per conductor of the mesh
    /// and a permittivity for every region that has triangles.
    ///
    /// The values themselves — permittivities finite and above zero, tensors symmetric
    /// positive definite, charge densities, potentials and charges finite and in range — are
    /// the caller's to check where they enter (the command line's validated plan,
    /// `cli/src/plan/`); here they are debug assertions. A value that slips through anyway
    /// cannot pass silently: a non-positive permittivity fails the Cholesky factorisation
    /// ([`SolveError::NotPositiveDefinite`]) and a non-finite one the results
    /// ([`SolveError::NonFinite`]).
    ///
    /// # Errors
    /// [`SolveError::ConductorMismatch`], or [`SolveError::NoPermittivity`] for a region with
    /// triangles and no entry in [`Problem::permittivity`].
    pub fn check(&self, mesh: &Mesh) -> Result<(), SolveError> {
        if self.conductors.len() != mesh.conductor_names.len() {
            return Err(SolveError::ConductorMismatch {
                mesh: mesh.conductor_names.len(),
                problem: self.conductors.len(),
            });
        }
        let mut seen = vec![false; mesh.shape_names.len()];
        for &r in &mesh.regions {
            if std::mem::replace(&mut seen[r as usize], true) {
                continue;
            }
            let Some(&eps) = self.permittivity.get(r as usize) else {
                return Err(SolveError::NoPermittivity { region: mesh.shape_names[r as usize].clone() });
            };
            debug_assert!(eps.is_finite() && eps > 0.0, "region {r}: permittivity {eps}");
        }
        debug_assert!(
            self.tensor.iter().flatten().all(|e| e.iter().flatten().all(|v| v.is_finite())
                && (e[0][1] - e[1][0]).abs() <= 1e-12 * (e[0][0].abs() + e[1][1].abs())
                && e[0][0] > 0.0
                && e[0][0] * e[1][1] - e[0][1] * e[1][0] > 0.0),
            "a permittivity tensor is not symmetric positive definite: {:?}",
            self.tensor
        );
        debug_assert!(self.charge_density.iter().all(|v| v.is_finite()), "{:?}", self.charge_density);
        debug_assert!(
            self.conductors.iter().all(|c| match *c {
                ConductorSpec::Fixed { potential_v } => potential_v.is_finite(),
                ConductorSpec::Floating { charge_c } => charge_c.is_finite(),
            }),
            "{:?}",
            self.conductors
        );
        Ok(())
    }
}
