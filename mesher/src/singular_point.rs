//! The singular-point records a mesh carries: where each point is, what meets there, its
//! exponent, and how the mesh is graded towards it. Plain data: the analysis that finds
//! the points is `corners`, the audit that fills in the grading is `grading`, and neither
//! is needed to read a record (this module depends on the geometry's point type only).

use crate::geometry::Xy;

/// Exponents within this distance of an integer are treated as that integer (a smooth
/// solution, e.g. a straight boundary or a fillet joint, where round-off leaves θ₀ ≈ π).
pub(crate) const LAMBDA_TOL: f64 = 1e-6;

/// What kind of singular point this is.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum SingularKind {
    /// A conductor corner or edge facing a single dielectric.
    ConductorCorner,
    /// A conductor meets two or more dielectrics (a triple junction).
    TripleJunction,
    /// A corner of the outer (zero-flux) boundary or where an interface meets it.
    BoundaryCorner,
    /// Dielectrics of different permittivity meet at a corner away from any conductor.
    DielectricCorner,
    /// The free end of a thin electrode (a conductor of zero thickness), the field on both
    /// faces: λ = ½ in one dielectric.
    ThinEdge,
}

impl SingularKind {
    /// A short label for reports.
    pub fn label(&self) -> &'static str {
        match self {
            SingularKind::ConductorCorner => "conductor corner",
            SingularKind::TripleJunction => "triple junction",
            SingularKind::BoundaryCorner => "boundary corner",
            SingularKind::DielectricCorner => "dielectric corner",
            SingularKind::ThinEdge => "thin electrode edge",
        }
    }
}

/// One sector of a corner: its opening and its fill.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Sector {
    /// Opening angle, radians.
    pub angle: f64,
    /// Relative permittivity.
    pub permittivity: f64,
}

/// What bounds a run of dielectric sectors.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Wall {
    /// Fixed potential (a conductor): Dirichlet.
    Potential,
    /// Zero normal flux: Neumann.
    ZeroFlux,
}

/// A point where the field or its gradient is singular.
#[derive(Clone, Debug, PartialEq)]
pub struct SingularPoint {
    /// Location, metres.
    pub at: Xy,
    /// Kind of point.
    pub kind: SingularKind,
    /// Total opening angle of the dielectric run that gives the smallest exponent, radians.
    pub opening: f64,
    /// Singular exponent λ: the potential varies like r^λ, the field like r^(λ−1).
    pub lambda: f64,
    /// The dielectric regions (shape indices) around the point, in angular order.
    pub regions: Vec<u32>,
    /// The conductor at the point, if any.
    pub conductor: Option<u32>,
    /// On the axis of an axisymmetric model (a conical point; see the module docs).
    pub on_axis: bool,
    /// Polar angle (radians, about `at`) of the wall where the dielectric run begins,
    /// counter-clockwise; the run spans `opening` from there.
    pub start_angle: f64,
    /// The dielectric sectors of the run, counter-clockwise from `start_angle` (their
    /// angles sum to `opening`), with the permittivities the exponent was computed for.
    pub sectors: Vec<Sector>,
    /// The walls at the start and the end of the run (None for dielectrics all round).
    pub walls: Option<(Wall, Wall)>,
    /// How the mesh is graded towards the point: the law and what the finished mesh has
    /// there. None until the point is meshed (set on every point of a generated mesh).
    pub grading: Option<Grading>,
}

impl SingularPoint {
    /// True when the field itself is unbounded (λ < 1).
    pub fn is_field_singular(&self) -> bool {
        self.lambda < 1.0 - LAMBDA_TOL
    }
}

/// A point counts as graded when the longest mesh edge ending at it is at most this many
/// times the size the law asks for there. Delaunay refinement builds the first ring of
/// triangles around the point from boundary segments of the asked size and interior
/// vertices a little further out: 1.3–1.8 times the size was measured on the demo models.
pub const GRADED_WITHIN: f64 = 3.0;

/// Whether the mesh follows the grading towards a singular point.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[non_exhaustive]
pub enum GradingStatus {
    /// The elements at the point are within [`GRADED_WITHIN`] of the law's innermost size.
    Graded,
    /// Graded, but the law's innermost size is below the size floor (`min_size`): the
    /// elements at the point are held at the floor.
    AtFloor,
    /// Grading was turned off (`RefineParams::grade_corners = false`).
    Off,
    /// The node budget stopped the refinement before the elements at the point reached
    /// the law's size.
    BudgetReached,
    /// The elements at the point are larger than [`GRADED_WITHIN`] times the law's size for
    /// another reason (a mesher defect worth reporting).
    NotReached,
}

/// How the mesh is graded towards one singular point: the law asked for and what the
/// finished mesh has there.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Grading {
    /// h₀: the element size the other sources ask for at the point, metres (the size at the
    /// edge of the grading zone).
    pub outer_size_m: f64,
    /// R: radius of the grading zone, metres.
    pub radius_m: f64,
    /// μ = f·λ/p: the size falls like r^(1−μ) towards the point.
    pub mu: f64,
    /// The size the law asks for at the point: its innermost size r₀, or the size floor if
    /// that is larger, metres (with grading off: what it would ask for).
    pub target_m: f64,
    /// Longest edge of the finished mesh that ends at the point, metres.
    pub achieved_m: f64,
    /// The verdict.
    pub status: GradingStatus,
}

impl Grading {
    /// True unless the mesh is left ungraded at the point (grading off, budget, or missed).
    pub fn is_graded(&self) -> bool {
        matches!(self.status, GradingStatus::Graded | GradingStatus::AtFloor)
    }
}
